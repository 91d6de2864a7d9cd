"""One drawing file measured: lengths and bounds per layer and per stroke colour, contours counted,
warnings; the work a batch's worker does per file (:func:`pathlen.batch.measure_file`).  Loaded in the
worker: the parent of a batch starts without numpy and the measuring modules."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from pathlen.batch import FileResult, LayerTotal, MeasureSettings, give_back_heap, limit_phrase, stage
from pathlen.contour_tree import count_placed, visible_ends
from pathlen.contours import count_ends
from pathlen.geometry import Drawing
from pathlen.importers import read_drawing
from pathlen.instances import TooManySegments, segment_total
from pathlen.measure import measure


def measure_one(path: str, settings: MeasureSettings) -> FileResult:
    """The drawing at ``path`` measured (millimetres); raises for bad input (see :func:`pathlen.batch.measure_file`,
    which turns that into a failed result)."""
    with stage("reading the drawing"):
        drawing = read_drawing(Path(path), settings.import_options)
    total = segment_total(drawing)
    give_back_heap(total)
    with stage(f"measuring {total:,} segments"):
        result = measure(drawing, settings.rtol)
    entity_length, entity_bound, unconverged = result.entity_length, result.entity_bound, result.unconverged
    del result  # its lengths per segment are summed into the entities'
    give_back_heap(total)
    all_entities, recovered = drawing.entities, drawing.recovered
    warnings = list(drawing.warnings)
    shown = np.array([not e.hidden for e in all_entities], dtype=bool)
    warnings.extend(hidden_note(drawing, entity_length))
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
        warnings.append(f"contours not counted: writing out {total:,} segments needed more than "
                        f"{limit_phrase()}; lengths are exact all the same (--max-segments lowers the count tried)")
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


def hidden_note(drawing: Drawing, entity_length: np.ndarray) -> list[str]:
    """Warnings naming the layers switched off or frozen and the length left out on them (mm), and
    the length inside block references on frozen layers (hidden whatever their own layers)."""
    out = []
    frozen = [i for i, e in enumerate(drawing.entities) if e.hidden and e.frozen]
    hidden = [i for i, e in enumerate(drawing.entities) if e.hidden and not e.frozen]
    if hidden:
        names = sorted({drawing.entities[i].layer for i in hidden})
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
