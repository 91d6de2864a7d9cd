"""Measure a :class:`~pathlen.geometry.Drawing`: arc length and error bound per segment."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from pathlen.geometry import Drawing, FloatArray, IntArray
from pathlen.measure.bezier import bezier_lengths
from pathlen.measure.closed_forms import line_lengths
from pathlen.measure.ellipse import arc_lengths

#: Default relative tolerance per segment.
DEFAULT_RTOL = 1e-9


@dataclass
class SegmentLengths:
    """Lengths (mm) and absolute error bounds (mm) of one batch, row-aligned with it."""

    length: FloatArray
    bound: FloatArray
    entity: IntArray


@dataclass
class Measurement:
    """Measured drawing: per-batch lengths and per-entity totals, millimetres."""

    lines: SegmentLengths
    arcs: SegmentLengths
    beziers: dict[int, SegmentLengths]
    entity_length: FloatArray
    entity_bound: FloatArray
    unconverged: int

    @property
    def length(self) -> float:
        return float(np.sum(self.entity_length))

    @property
    def error_bound(self) -> float:
        return float(np.sum(self.entity_bound))


def measure(drawing: Drawing, rtol: float = DEFAULT_RTOL) -> Measurement:
    """Measure every segment of ``drawing`` to relative tolerance ``rtol``."""
    if not 0 < rtol < 1:
        raise ValueError("rtol must lie between 0 and 1")
    lines = SegmentLengths(*line_lengths(drawing.lines.p0, drawing.lines.p1), drawing.lines.entity)
    a_len, a_bound, unconverged = arc_lengths(drawing.arcs, rtol)
    arcs = SegmentLengths(a_len, a_bound, drawing.arcs.entity)
    beziers = {}
    for degree, batch in drawing.beziers.items():
        b_len, b_bound, u = bezier_lengths(batch, rtol)
        beziers[degree] = SegmentLengths(b_len, b_bound, batch.entity)
        unconverged += u
    n = len(drawing.entities)
    length = np.zeros(n)
    bound = np.zeros(n)
    for part in (lines, arcs, *beziers.values()):
        length += np.bincount(part.entity, weights=part.length, minlength=n)
        bound += np.bincount(part.entity, weights=part.bound, minlength=n)
    return Measurement(lines, arcs, beziers, length, bound, unconverged)
