"""One drawing file measured: lengths and bounds per layer and per stroke colour, contours counted,
warnings; the work a batch's worker does per file (:func:`pathlen.batch.measure_file`).  Loaded in the
worker: the parent of a batch starts without numpy and the measuring modules."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from pathlen.batch import FileResult, LayerTotal, MeasureSettings, give_back_heap, limit_phrase, stage
from pathlen.contour_tree import count_placed, visible_ends
from pathlen.contours import ContourCount, count_ends, count_joined, is_flat
from pathlen.geometry import DrawingRuns, Entity
from pathlen.importers import read_drawing_or_runs
from pathlen.instances import TooManySegments, segment_total
from pathlen.measure import measure


def measure_one(path: str, settings: MeasureSettings, in_runs: bool = True) -> FileResult:
    """The drawing at ``path`` measured (millimetres); raises for bad input (see :func:`pathlen.batch.measure_file`,
    which turns that into a failed result).  A drawing its reader hands over in runs (``in_runs``: see
    :class:`~pathlen.geometry.DrawingRuns`) is measured run by run, keeping only per-entity sums and the
    segments' ends: the same result in a fraction of the memory."""
    with stage("reading the drawing"):
        drawing = read_drawing_or_runs(Path(path), settings.import_options, in_runs)
    if isinstance(drawing, DrawingRuns):
        return _measure_runs(path, drawing, settings)
    total = segment_total(drawing)
    give_back_heap(total)
    with stage(f"measuring {total:,} segments"):
        result = measure(drawing, settings.rtol)
    entity_length, entity_bound, unconverged = result.entity_length, result.entity_bound, result.unconverged
    del result  # its lengths per segment are summed into the entities'
    give_back_heap(total)
    all_entities, recovered = drawing.entities, drawing.recovered
    warnings = list(drawing.warnings)
    warnings.extend(hidden_note(all_entities, entity_length))
    try:
        if drawing.placements:
            contours = count_placed(drawing, settings.join_tol_mm, settings.max_segments)
        else:  # the segments' ends in hand, the drawing's geometry goes before counting's working arrays come
            ends = visible_ends(drawing, settings.join_tol_mm)
            del drawing
            give_back_heap(total)
            contours = count_ends(ends, all_entities, settings.join_tol_mm)
    except TooManySegments as exc:
        contours = None
        warnings.append(f"contours not counted: {exc}; lengths are exact all the same")
    except MemoryError:  # the lengths are in hand: keep them, say what is missing
        contours = None
        warnings.append(_not_counted(total))
    return _file_result(path, all_entities, entity_length, entity_bound, unconverged, contours, warnings, recovered)


def _measure_runs(path: str, drawing: DrawingRuns, settings: MeasureSettings) -> FileResult:
    """:func:`measure_one` of a drawing handed over in runs: each run measured, its lengths summed per
    entity and its visible segments' ends kept (x, y only while every z is zero), then the run let go;
    contours counted over all the ends at the end.  Entities that gave no segment are left out then."""
    length, bound, unconverged, total = np.zeros(0), np.zeros(0), 0, 0
    ends: list[list[np.ndarray]] = []  # per run: start points, end points, entity rows, closed flags
    with stage("reading and measuring the drawing"):
        for part in drawing.runs:
            total += part.segment_count()
            result = measure(part, settings.rtol)
            length, bound = _grown(length, len(part.entities)), _grown(bound, len(part.entities))
            length += result.entity_length  # one number per entity so far (the run's own are its last)
            bound += result.entity_bound
            unconverged += result.unconverged
            del result
            start, end, ent, shut = visible_ends(part, settings.join_tol_mm)
            del part
            ends.append([start[:, :2].copy(), end[:, :2].copy()] if is_flat(start, end) else [start, end])
            ends[-1] += [ent.astype(np.int32) if len(drawing.entities) < 2**31 else ent, shut]
            del start, end, ent, shut
            give_back_heap(total)
    used = drawing.used
    assert used is not None  # set by the reader once its last run has been taken
    entities = drawing.entities
    length, bound = _grown(length, len(entities)), _grown(bound, len(entities))
    renumber = None
    if not used.all():  # entities that gave no segment go, as a drawing read whole leaves them out
        renumber = np.cumsum(used) - 1
        entities = [e for e, u in zip(entities, used.tolist(), strict=True) if u]
        length, bound = length[used], bound[used]
    warnings = list(drawing.warnings)
    warnings.extend(hidden_note(entities, length))
    try:
        with stage(f"counting the contours of {total:,} segments"):
            contours = count_joined(_joined_ends(ends, renumber), entities, settings.join_tol_mm)
    except MemoryError:
        contours = None
        warnings.append(_not_counted(total))
    return _file_result(path, entities, length, bound, unconverged, contours, warnings, drawing.recovered)


def _grown(a: np.ndarray, n: int) -> np.ndarray:
    """``a`` with zeros after it up to length ``n`` (itself when it is that long)."""
    return a if len(a) >= n else np.concatenate([a, np.zeros(n - len(a))])


def _joined_ends(ends: list[list[np.ndarray]], renumber: np.ndarray | None) -> list[np.ndarray]:
    """The runs' ends as :func:`~pathlen.contours.count_joined` takes them (``[points, entity, shut]``), entity
    rows renumbered; each run's arrays go as they are copied (``ends`` is emptied)."""
    n = sum(len(run[2]) for run in ends)
    width = max((run[0].shape[1] for run in ends), default=2)
    points = np.zeros((2 * n, width))
    entity = np.empty(n, dtype=np.int32 if all(run[2].dtype == np.int32 for run in ends) else np.int64)
    shut = np.empty(n, dtype=bool)
    row = 0
    while ends:
        start, end, ent, closed = ends.pop(0)
        k = len(ent)
        points[row:row + k, :start.shape[1]] = start
        points[n + row:n + row + k, :end.shape[1]] = end
        entity[row:row + k] = ent if renumber is None else renumber[ent]
        shut[row:row + k] = closed
        row += k
        del start, end, ent, closed
        give_back_heap(n)  # the run's arrays, freed between live blocks, leave the process
    return [points, entity, shut]


def _not_counted(total: int) -> str:
    return (f"contours not counted: writing out {total:,} segments needed more than {limit_phrase()}; lengths "
            "are exact all the same (--max-segments lowers the count tried)")


def _file_result(path: str, all_entities: list[Entity], entity_length: np.ndarray, entity_bound: np.ndarray,
                 unconverged: int, contours: ContourCount | None, warnings: list[str], recovered: bool) -> FileResult:
    """The file's totals from per-entity lengths and bounds (mm) of ``all_entities``, hidden ones left out."""
    shown = np.array([not e.hidden for e in all_entities], dtype=bool)
    entities = [e for e, s in zip(all_entities, shown.tolist(), strict=True) if s]
    length, bound = entity_length[shown], entity_bound[shown]
    copies = [e.copies for e in entities]
    layers = totals_by([e.layer for e in entities], length, bound, copies)
    colors = totals_by([e.color for e in entities], length, bound, copies)
    colors.pop("", None)
    if not entities:
        warnings.append("nothing measurable in this drawing: no lines, arcs or curves where they are drawn")
    if unconverged:
        warnings.append(f"{unconverged} integration intervals did not reach the tolerance; "
                        "their error is included in the bound")
    return FileResult(
        path, ok=True, length_mm=float(np.sum(length)), bound_mm=float(np.sum(bound)), layers=layers, colors=colors,
        closed=contours.closed if contours else 0, open=contours.open if contours else 0,
        contours_counted=contours is not None, recovered=recovered, warnings=warnings,
    )


def hidden_note(entities: list[Entity], entity_length: np.ndarray) -> list[str]:
    """Warnings naming the layers switched off or frozen and the length left out on them (mm), and
    the length inside block references on frozen layers (hidden whatever their own layers)."""
    out = []
    frozen = [i for i, e in enumerate(entities) if e.hidden and e.frozen]
    hidden = [i for i, e in enumerate(entities) if e.hidden and not e.frozen]
    if hidden:
        names = sorted({entities[i].layer for i in hidden})
        left_out = float(np.sum(entity_length[hidden]))
        shown = ", ".join(repr(n) for n in names[:10]) + (f" and {len(names) - 10} more" if len(names) > 10 else "")
        out.append(f"layer{'s' if len(names) > 1 else ''} {shown} off or frozen: {left_out:.3f} mm on "
                   f"{'them' if len(names) > 1 else 'it'} not measured (--hidden-layers includes them)")
    if frozen:
        out.append(f"{float(np.sum(entity_length[frozen])):.3f} mm inside block references on frozen layers not "
                   "measured (a frozen INSERT hides its whole block; --hidden-layers includes it)")
    return out


def totals_by(keys: list[str], length: np.ndarray, bound: np.ndarray, copies: list[int]) -> dict[str, LayerTotal]:
    """Per-key sums of entity lengths, bounds and counts (each entity counted ``copies`` times), keys sorted.
    Keys are numbered through a dict as they come (a few layers or colours among a million entities: 4x
    faster than ``np.unique`` on an object array, which sorts them all), sums per number by ``bincount``."""
    number: dict[str, int] = {}
    index = np.fromiter((number.setdefault(k, len(number)) for k in keys), dtype=np.int64, count=len(keys))
    lengths = np.bincount(index, weights=length, minlength=len(number))
    bounds = np.bincount(index, weights=bound, minlength=len(number))
    counts = np.bincount(index, weights=np.array(copies, dtype=float), minlength=len(number))
    return {k: LayerTotal(float(lengths[i]), float(bounds[i]), int(counts[i])) for k, i in sorted(number.items())}
