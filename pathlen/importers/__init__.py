"""Importers: drawing files -> :class:`~pathlen.geometry.Drawing` (millimetres)."""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from pathlen.errors import InputError
from pathlen.geometry import Drawing, keep_entities
from pathlen.instances import definitions

#: Coordinates beyond this many millimetres (1,000 km) are taken as a broken file.
MAX_COORDINATE_MM = 1.0e9


@dataclass(frozen=True)
class ImportOptions:
    """Options every importer understands."""

    drawing_units: str | None = None  # DXF: overrides $INSUNITS
    svg_dpi: float | None = None  # SVG sized in px or not sized: px per inch (None: 96, with a warning)
    recover: bool = False  # DXF: measure what structural recovery can read of a damaged file
    hidden_layers: bool = False  # DXF: measure layers that are off or frozen too
    svg_language: str | None = None  # SVG systemLanguage: the user's language (None: from the environment)


#: The module that reads each file kind (imported on first use: a batch of DXF files never loads the SVG reader).
READERS = {".dxf": "pathlen.importers.dxf", ".svg": "pathlen.importers.svg"}
#: File kinds read.
SUFFIXES = tuple(READERS)


def load_readers(suffixes: Iterable[str]) -> None:
    """Import the readers of the file kinds ``suffixes`` now (others are ignored): a worker does this
    before its first file comes, beside the parent's own start."""
    from importlib import import_module

    for suffix in suffixes:
        if suffix in READERS:
            import_module(READERS[suffix])


def read_drawing(path: Path, options: ImportOptions = ImportOptions()) -> Drawing:
    """Read any supported file and check its geometry; raises :class:`InputError`."""
    suffix = path.suffix.lower()
    if suffix in SUFFIXES:
        check_regular_file(path)
    if suffix == ".dxf":
        from pathlen.importers.dxf import read_dxf

        drawing = read_dxf(path, options.drawing_units, options.recover, options.hidden_layers)
    elif suffix == ".svg":
        from pathlen.importers.svg import read_svg

        drawing = read_svg(path, options.svg_dpi, options.svg_language)
    else:
        raise InputError(f"unsupported file type {suffix or '(none)'!r}: expected {' or '.join(SUFFIXES)}")
    return finish_drawing(drawing)


def finish_drawing(drawing: Drawing) -> Drawing:
    """What every importer's drawing goes through: geometry checked, entities not measured counted."""
    check_geometry(drawing)
    for kind, count in sorted(drawing.skipped.items()):
        drawing.warnings.append(f"{count} {kind} entit{'y' if count == 1 else 'ies'} not measured")
    return drawing


def check_regular_file(path: Path) -> None:
    """Refuse what is not a regular file (a dangling link, a FIFO or device, a folder), saying which."""
    if path.is_symlink() and not path.exists():
        raise InputError("broken symbolic link: the file it points to does not exist")
    if not path.exists():
        raise InputError("no such file")
    if not path.is_file():
        raise InputError("not a regular file (a folder, pipe or device)")


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
        bad = _bad_entities(d)
        if bad.any():
            bad_names.extend(_describe(d, i) for i in np.flatnonzero(bad)[:1])
            bad_names.extend([""] * (int(bad.sum()) - 1))
            _drop_own(d, ~bad)
        finite = [p for p in d.placements if np.all(np.isfinite(p.matrices))]
        if len(finite) < len(d.placements):
            bad_names.append("a block or <use> placement with a non-finite transformation")
            d.placements = finite
    if bad_names:
        more = len(bad_names) - 1
        drawing.warnings.append(f"{bad_names[0]}: not measured" + (f" (and {more} more like it)" if more else ""))


def _describe(drawing: Drawing, i: int) -> str:
    e = drawing.entities[i]
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
            with np.errstate(invalid="ignore"):
                rows = ~np.all(np.isfinite(a) & (np.abs(a) <= MAX_COORDINATE_MM), axis=1)
            bad[entity[rows]] = True
    return bad


def _drop_own(drawing: Drawing, keep: np.ndarray) -> None:
    """Drop, in place, the drawing's own segments of entities not kept (placements stay)."""
    kept = keep_entities(drawing, keep)
    drawing.lines, drawing.arcs, drawing.beziers = kept.lines, kept.arcs, kept.beziers
