"""One flat table of every segment of a measured drawing, for contours and motion estimates.

Rows follow the drawing's batches in a fixed order: lines, elliptic arcs, then Béziers by
increasing degree.  Each row has its end points and measured length and bound (mm).  Unit
tangents at both ends, sample points along a segment (for outlines, turning and curvature: never
for length), mid-parameter points, boxes holding each segment and the smallest radius of
curvature are computed on demand.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property
from math import comb
from typing import Any

import numpy as np
from numpy.typing import NDArray

from pathlen.geometry import Drawing, FloatArray, IntArray, take_rows
from pathlen.measure import Measurement

#: Sample points per segment in :meth:`SegmentTable.samples` (both ends included).
CURVE_SAMPLES = 17


@dataclass(frozen=True)
class SegmentTable:
    start: FloatArray  # [n, 3] mm
    end: FloatArray  # [n, 3]
    length: FloatArray  # [n] mm
    bound: FloatArray  # [n] mm
    entity: IntArray  # [n]
    drawing: Drawing

    def __len__(self) -> int:
        return len(self.entity)

    @cached_property
    def _offsets(self) -> list[tuple[str, int, int]]:
        """(batch key, first row, row count) in row order."""
        out = [("lines", 0, len(self.drawing.lines)), ("arcs", len(self.drawing.lines), len(self.drawing.arcs))]
        first = out[-1][1] + out[-1][2]
        for degree in sorted(self.drawing.beziers):
            out.append((f"bezier{degree}", first, len(self.drawing.beziers[degree])))
            first += out[-1][2]
        return out

    def locate(self, row: int) -> tuple[str, int]:
        """The batch of table row ``row`` ("lines", "arcs" or "bezier<degree>") and its index there."""
        for key, first, count in self._offsets:
            if first <= row < first + count:
                return key, row - first
        raise IndexError(row)

    def samples(self, rows: IntArray) -> FloatArray:
        """``[len(rows), CURVE_SAMPLES, 3]`` points at equal parameter steps (lines: equal steps too)."""
        return self.points_at(rows, np.linspace(0.0, 1.0, CURVE_SAMPLES))

    @cached_property
    def directions(self) -> tuple[FloatArray, FloatArray]:
        """``(start_dir, end_dir)``, each ``[n, 3]``: unit tangents at both ends, along the parametrisation."""
        start, end = np.zeros((len(self), 3)), np.zeros((len(self), 3))
        for key, first, count in self._offsets:
            part = slice(first, first + count)
            if key == "lines":
                b = self.drawing.lines
                start[part] = end[part] = _unit(b.p1 - b.p0)
            elif key == "arcs":
                b = self.drawing.arcs
                start[part] = _unit(-b.u * np.sin(b.t0)[:, None] + b.v * np.cos(b.t0)[:, None])
                end[part] = _unit(-b.u * np.sin(b.t1)[:, None] + b.v * np.cos(b.t1)[:, None])
            else:
                ctrl = self.drawing.beziers[int(key[6:])].ctrl
                start[part] = _first_nonzero(ctrl[:, 1:] - ctrl[:, :1])
                end[part] = _first_nonzero(ctrl[:, -1:] - ctrl[:, -2::-1])
        return start, end

    def travel_directions(self, rows: IntArray, forward: NDArray[np.bool_]) -> tuple[FloatArray, FloatArray]:
        """Unit tangents ``(entering, leaving)`` of ``rows`` cut forwards (True) or backwards, ``[k, 3]``."""
        start, end = take_rows(self.directions[0], rows), take_rows(self.directions[1], rows)
        fwd = np.asarray(forward)[:, None]
        return np.where(fwd, start, -end), np.where(fwd, end, -start)

    def travel_samples(self, rows: IntArray, forward: NDArray[np.bool_]) -> FloatArray:
        """:meth:`samples` of ``rows`` in the order they are cut (reversed where not forward)."""
        pts = self.samples(rows)
        return np.where(np.asarray(forward)[:, None, None], pts, pts[:, ::-1])

    @cached_property
    def middle(self) -> FloatArray:
        """``[n, 3]``: each segment's point at mid-parameter."""
        return self.points_at(np.arange(len(self)), np.array([0.5]))[:, 0]

    @cached_property
    def box(self) -> tuple[FloatArray, FloatArray]:
        """``(lo, hi)``, each ``[n, 3]``: a box holding each segment (exact for lines and for arcs, whose
        extremes inside the sweep are found in closed form; the control points for Béziers)."""
        lo, hi = np.empty((len(self), 3)), np.empty((len(self), 3))
        for key, first, count in self._offsets:
            part = slice(first, first + count)
            if key == "lines":
                b = self.drawing.lines
                lo[part], hi[part] = np.minimum(b.p0, b.p1), np.maximum(b.p0, b.p1)
            elif key == "arcs":
                lo[part], hi[part] = arc_boxes(self.drawing.arcs)
            else:
                ctrl = self.drawing.beziers[int(key[6:])].ctrl
                lo[part], hi[part] = ctrl[:, 0], ctrl[:, 0]
                for k in range(1, ctrl.shape[1]):  # elementwise: faster than a reduction over axis 1
                    np.minimum(lo[part], ctrl[:, k], out=lo[part])
                    np.maximum(hi[part], ctrl[:, k], out=hi[part])
        return lo, hi

    def points_at(self, rows: IntArray, t: FloatArray) -> FloatArray:
        """``[len(rows), len(t), 3]``: points at parameters ``t`` (0 .. 1 over each segment)."""
        rows = np.asarray(rows, dtype=np.int64)
        out = np.empty((len(rows), len(t), 3))
        for key, first, count in self._offsets:
            sel = np.flatnonzero((rows >= first) & (rows < first + count))
            if len(sel) == 0:
                continue
            local = rows[sel] - first
            if key == "lines":
                b = self.drawing.lines
                out[sel] = b.p0[local, None, :] + (b.p1 - b.p0)[local, None, :] * t[None, :, None]
            elif key == "arcs":
                b = self.drawing.arcs
                s = b.t0[local, None] + (b.t1 - b.t0)[local, None] * t[None, :]
                out[sel] = (b.center[local, None] + b.u[local, None] * np.cos(s)[..., None]
                            + b.v[local, None] * np.sin(s)[..., None])
            else:
                out[sel] = _bezier_points(self.drawing.beziers[int(key[6:])], local, t)
        return out

    def turning_pieces(self, rows: IntArray, forward: NDArray[np.bool_], samples: FloatArray | None = None
                       ) -> tuple[FloatArray, FloatArray, IntArray]:
        """The segments ``rows`` (cut forwards or not) as pieces of even turning, in cutting order.

        Returns ``(length, radius, first)``: per piece its length (mm, summing to the segment's
        measured length) and its mean radius of curvature, length over tangent turning (mm; inf for
        straight pieces), and per segment the index of its first piece.  A line is one straight
        piece; a curve is cut at its :data:`CURVE_SAMPLES` sample points, and a piece's turning is
        the mean of the chord turnings at its two ends (the end tangents count double), so a circle
        of radius r gives r on every piece and a slit's tip turns on the pieces around it.
        ``samples``: the rows' :meth:`travel_samples`, where the caller has them already.
        """
        rows = np.asarray(rows, dtype=np.int64)
        straight = rows < len(self.drawing.lines)
        curved = np.flatnonzero(~straight)
        k = CURVE_SAMPLES - 1
        count = np.where(straight, 1, k)
        first = np.cumsum(count) - count
        length = np.empty(int(count.sum()))
        radius = np.full(len(length), np.inf)
        length[first[straight]] = self.length[rows[straight]]
        if len(curved):
            pts = (self.travel_samples(rows[curved], np.asarray(forward)[curved]) if samples is None
                   else samples[curved])  # [m, k + 1, 3]
            chord = np.diff(pts, axis=1)
            chord_len = np.linalg.norm(chord, axis=2)
            d_in, d_out = self.travel_directions(rows[curved], np.asarray(forward)[curved])
            unit = np.divide(chord, chord_len[..., None], out=np.zeros_like(chord), where=chord_len[..., None] > 0)
            heads = np.concatenate([d_in[:, None], unit], axis=1)  # [m, k + 1]
            tails = np.concatenate([unit, d_out[:, None]], axis=1)
            turn = np.arccos(np.clip(np.einsum("mjc,mjc->mj", heads, tails), -1.0, 1.0))  # [m, k + 1]
            turn[:, 0] *= 2.0
            turn[:, -1] *= 2.0
            piece_turn = 0.5 * (turn[:, :-1] + turn[:, 1:])
            total = chord_len.sum(axis=1, keepdims=True)
            share = np.divide(chord_len, total, out=np.full_like(chord_len, 1.0 / k), where=total > 0)
            piece_len = share * self.length[rows[curved]][:, None]
            at = (first[curved][:, None] + np.arange(k)).ravel()
            length[at] = piece_len.ravel()
            with np.errstate(divide="ignore", invalid="ignore"):
                radius[at] = np.where((piece_turn > 0) & (piece_len > 0), piece_len / piece_turn, np.inf).ravel()
        return length, radius, first


def arc_boxes(arcs: Any) -> tuple[FloatArray, FloatArray]:
    """Tight boxes ``[n, 3]`` of elliptic arcs c + u cos t + v sin t, t from t0 to t1: each coordinate
    is extreme at the ends or where u_k sin t = v_k cos t, t = atan2(v_k, u_k) (+ π), if inside the
    sweep."""
    t0, t1 = arcs.t0[:, None], arcs.t1[:, None]
    turn = np.arctan2(arcs.v, arcs.u)  # [n, 3]: where each coordinate is extreme
    first = t0 + np.mod(turn - t0, np.pi)  # the first such angle at or after t0
    cand = np.concatenate([t0, t1, first, first + np.pi], axis=1)  # [n, 8]
    inside = cand <= t1 + 1e-15
    cand = np.where(inside, cand, t0)
    pts = (arcs.center[:, None, :] + arcs.u[:, None, :] * np.cos(cand)[..., None]
           + arcs.v[:, None, :] * np.sin(cand)[..., None])  # [n, 8, 3]
    pad = 1e-12 * (np.abs(arcs.center) + np.abs(arcs.u) + np.abs(arcs.v))  # rounding of the extremes
    return pts.min(axis=1) - pad, pts.max(axis=1) + pad


def segment_endpoints(drawing: Drawing) -> tuple[FloatArray, FloatArray, IntArray]:
    """Start points, end points and entity index of every segment, in table row order."""
    arcs = drawing.arcs
    starts = [drawing.lines.p0, arcs.points(arcs.t0)]
    ends = [drawing.lines.p1, arcs.points(arcs.t1)]
    ents = [drawing.lines.entity, arcs.entity]
    for degree in sorted(drawing.beziers):
        b = drawing.beziers[degree]
        starts.append(b.ctrl[:, 0])
        ends.append(b.ctrl[:, -1])
        ents.append(b.entity)
    return np.concatenate(starts), np.concatenate(ends), np.concatenate(ents)


def segment_midpoints(drawing: Drawing) -> FloatArray:
    """Each segment's point at mid-parameter, in table row order."""
    arcs = drawing.arcs
    mids = [0.5 * (drawing.lines.p0 + drawing.lines.p1), arcs.points(0.5 * (arcs.t0 + arcs.t1))]
    half = np.array([0.5])
    for degree in sorted(drawing.beziers):
        b = drawing.beziers[degree]
        mids.append(_bezier_points(b, np.arange(len(b)), half)[:, 0])
    return np.concatenate(mids)


def segment_table(drawing: Drawing, measured: Measurement) -> SegmentTable:
    """The flat table of ``drawing`` with lengths from ``measured``."""
    start, end, entity = segment_endpoints(drawing)
    parts = [measured.lines, measured.arcs, *(measured.beziers[d] for d in sorted(drawing.beziers))]
    return SegmentTable(start, end, np.concatenate([p.length for p in parts]),
                        np.concatenate([p.bound for p in parts]), entity, drawing)


def _unit(v: FloatArray) -> FloatArray:
    n = np.linalg.norm(v, axis=1, keepdims=True)
    return np.divide(v, n, out=np.zeros_like(v), where=n > 0)


def _bezier_points(b: object, rows: IntArray, t: FloatArray) -> FloatArray:
    """Points of (rational) Bézier rows at parameters ``t``: [len(rows), len(t), 3]."""
    ctrl, w = b.ctrl[rows], b.weights[rows]  # type: ignore[attr-defined]
    degree = ctrl.shape[1] - 1
    basis = np.stack([comb(degree, i) * t**i * (1 - t) ** (degree - i) for i in range(degree + 1)], axis=1)
    mix = basis[None, :, :] * w[:, None, :]  # [n, len(t), degree + 1]
    return (mix @ ctrl) / mix.sum(axis=2)[..., None]


def _first_nonzero(diffs: FloatArray) -> FloatArray:
    """Unit direction of the first difference that is not zero (a repeated control point)."""
    norms = np.linalg.norm(diffs, axis=2)
    k = np.argmax(norms > 0, axis=1)
    return _unit(diffs[np.arange(len(diffs)), k])


def segment_layers(drawing: Drawing, table: SegmentTable | IntArray) -> tuple[list[str], IntArray]:
    """Layer names (sorted) and each segment's index into them; ``table`` may also be the segments'
    entity indices."""
    entity = table.entity if isinstance(table, SegmentTable) else np.asarray(table, dtype=np.int64)
    return entity_layers(drawing.entities, entity)


def entity_layers(entities: list[Any], entity: IntArray) -> tuple[list[str], IntArray]:
    """Layer names (sorted) of ``entities`` and the index into them of each of the rows ``entity``."""
    names = sorted({e.layer for e in entities})
    index = {n: i for i, n in enumerate(names)}
    of_entity = np.array([index[e.layer] for e in entities], dtype=np.int64)
    return names, of_entity[entity] if len(entity) else np.zeros(0, dtype=np.int64)
