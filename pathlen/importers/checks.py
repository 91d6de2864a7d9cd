"""What every reader's drawing goes through before it is measured: coordinates checked (an invalid value
spoils its element, not the file), entities not measured counted."""

from __future__ import annotations

from collections.abc import Iterator

import numpy as np

from pathlen.geometry import Drawing, DrawingRuns, Entity, IntArray, keep_entities
from pathlen.instances import definitions

#: Coordinates beyond this many millimetres (1,000 km) are taken as a broken file.
MAX_COORDINATE_MM = 1.0e9


def finish_drawing(drawing: Drawing) -> Drawing:
    """What every importer's drawing goes through: geometry checked, entities not measured counted."""
    check_geometry(drawing)
    for kind, count in sorted(drawing.skipped.items()):
        drawing.warnings.append(f"{count} {kind} entit{'y' if count == 1 else 'ies'} not measured")
    return drawing


def check_geometry(drawing: Drawing) -> None:
    """Leave out entities with non-finite or absurdly large coordinates, with a warning naming the first:
    an invalid value spoils its element, not the file.

    What is checked is what the file gave: end points and control points, and for arcs their
    start, middle and end points and finite axes, never a derived centre (a nearly straight bulge
    has its centre far away, legitimately).  Every definition placed by the drawing is checked
    once; a placement with a non-finite map is dropped.
    """
    bad_names: list[str] = []
    for d in definitions(drawing):
        bad_names.extend(bad_entity_names(d.entities, drop_bad_entities(d)))
        finite = [p for p in d.placements if np.all(np.isfinite(p.matrices))]
        if len(finite) < len(d.placements):
            bad_names.append("a block or <use> placement with a non-finite transformation")
            d.placements = finite
    drawing.warnings.extend(_bad_geometry_warning(bad_names))


def finish_runs(drawing: DrawingRuns) -> DrawingRuns:
    """:func:`finish_drawing` for a drawing handed over in runs: each run checked as it is taken, the
    warning (naming the first bad entity of the whole drawing) added once every run has been."""
    runs = drawing.runs

    def checked() -> Iterator[Drawing]:
        bad = []
        for part in runs:
            bad.append(drop_bad_entities(part))
            yield part
        found = np.sort(np.concatenate(bad)) if bad else np.zeros(0, dtype=np.int64)
        drawing.warnings.extend(_bad_geometry_warning(bad_entity_names(drawing.entities, found)))

    drawing.runs = checked()
    return drawing


def drop_bad_entities(drawing: Drawing) -> IntArray:
    """Entity rows (ascending) with a non-finite or absurd coordinate in their own segments; those
    entities' own segments are dropped in place (placements stay)."""
    bad = _bad_entities(drawing)
    if bad.any():
        _drop_own(drawing, ~bad)
    return np.flatnonzero(bad)


def bad_entity_names(entities: list[Entity], bad: IntArray) -> list[str]:
    """One entry per bad entity row (``bad`` ascending): the first described, the others ""."""
    return [_describe(entities[int(i)]) for i in bad[:1]] + [""] * max(len(bad) - 1, 0)


def _bad_geometry_warning(bad_names: list[str]) -> list[str]:
    if not bad_names:
        return []
    more = len(bad_names) - 1
    return [f"{bad_names[0]}: not measured" + (f" (and {more} more like it)" if more else "")]


def _describe(e: Entity) -> str:
    return f"{e.kind} #{e.handle} on layer {e.layer!r} has non-finite or absurdly large (over 1000 km) coordinates"


def _bad_entities(drawing: Drawing) -> np.ndarray:
    """Per entity row: does any of its own segments hold a non-finite or absurd coordinate?"""
    arcs = drawing.arcs
    finite_axes = np.isfinite(arcs.u).all(axis=1) & np.isfinite(arcs.v).all(axis=1)
    t0, t1 = np.where(finite_axes, arcs.t0, 0.0), np.where(finite_axes, arcs.t1, 0.0)
    with np.errstate(invalid="ignore", over="ignore"):
        arc_points = [arcs.points(t0), arcs.points((t0 + t1) / 2.0), arcs.points(t1)]
    arrays = [
        (drawing.lines.entity, (drawing.lines.p0, drawing.lines.p1)),
        (arcs.entity, (*arc_points, np.where(finite_axes, 0.0, np.nan)[:, None],
                       arcs.t0[:, None], arcs.t1[:, None])),
        *((b.entity, (b.ctrl.reshape(len(b), -1), b.weights)) for b in drawing.beziers.values()),
    ]
    bad = np.zeros(len(drawing.entities), dtype=bool)
    for entity, parts in arrays:
        for a in parts:
            if len(a) == 0 or np.abs(a).max() <= MAX_COORDINATE_MM:  # all finite and in range (NaN fails)
                continue
            with np.errstate(invalid="ignore"):
                rows = ~np.all(np.isfinite(a) & (np.abs(a) <= MAX_COORDINATE_MM), axis=1)
            bad[entity[rows]] = True
    return bad


def _drop_own(drawing: Drawing, keep: np.ndarray) -> None:
    """Drop, in place, the drawing's own segments of entities not kept (placements stay)."""
    kept = keep_entities(drawing, keep)
    drawing.lines, drawing.arcs, drawing.beziers = kept.lines, kept.arcs, kept.beziers
