"""One flat table of every segment of a measured drawing, for contours and motion estimates.

Rows follow the drawing's batches in a fixed order: lines, elliptic arcs, then Béziers by
increasing degree.  Each row has its end points, unit tangents at both ends (direction of the
parametrisation), measured length and bound (mm), smallest radius of curvature (mm; ``inf`` for
lines) and a few sample points along it, used for containment tests and kerf offsets only,
never for length.
"""

from __future__ import annotations

from dataclasses import dataclass
from math import comb

import numpy as np

from pathlen.geometry import Drawing, FloatArray, IntArray
from pathlen.measure import Measurement
from pathlen.measure.closed_forms import ellipse_frame

#: Sample points per curved segment (lines have their two end points).
CURVE_SAMPLES = 17


@dataclass(frozen=True)
class SegmentTable:
    start: FloatArray  # [n, 3] mm
    end: FloatArray  # [n, 3]
    start_dir: FloatArray  # [n, 3] unit tangent at the start, along the parametrisation
    end_dir: FloatArray  # [n, 3] unit tangent at the end
    length: FloatArray  # [n] mm
    bound: FloatArray  # [n] mm
    min_radius: FloatArray  # [n] mm, inf for straight segments
    entity: IntArray  # [n]
    samples: FloatArray  # [n, CURVE_SAMPLES, 3]: lines repeat their end point after the second sample

    def __len__(self) -> int:
        return len(self.entity)


def segment_table(drawing: Drawing, measured: Measurement) -> SegmentTable:
    """The flat table of ``drawing`` with lengths from ``measured``."""
    parts = [_lines(drawing, measured), _arcs(drawing, measured)]
    for degree in sorted(drawing.beziers):
        parts.append(_beziers(drawing, measured, degree))
    cols = list(zip(*parts, strict=True))
    return SegmentTable(*(np.concatenate(c) for c in cols))


def _unit(v: FloatArray) -> FloatArray:
    n = np.linalg.norm(v, axis=1, keepdims=True)
    return np.divide(v, n, out=np.zeros_like(v), where=n > 0)


def _lines(drawing: Drawing, measured: Measurement) -> tuple:
    b = drawing.lines
    d = _unit(b.p1 - b.p0)
    samples = np.repeat(b.p1[:, None, :], CURVE_SAMPLES, axis=1)
    samples[:, 0] = b.p0
    return (b.p0, b.p1, d, d, measured.lines.length, measured.lines.bound, np.full(len(b), np.inf), b.entity,
            samples)


def _arcs(drawing: Drawing, measured: Measurement) -> tuple:
    b = drawing.arcs
    a, m, _ = ellipse_frame(b.u, b.v)
    t = b.t0[:, None] + (b.t1 - b.t0)[:, None] * np.linspace(0.0, 1.0, CURVE_SAMPLES)[None, :]
    samples = (b.center[:, None, :] + b.u[:, None, :] * np.cos(t)[..., None] + b.v[:, None, :] * np.sin(t)[..., None])

    def tangent(s: FloatArray) -> FloatArray:
        return _unit(-b.u * np.sin(s)[:, None] + b.v * np.cos(s)[:, None])

    radius = a * (1.0 - m)  # b²/a: the smallest radius of curvature of the ellipse
    return (b.points(b.t0), b.points(b.t1), tangent(b.t0), tangent(b.t1), measured.arcs.length,
            measured.arcs.bound, radius, b.entity, samples)


def _beziers(drawing: Drawing, measured: Measurement, degree: int) -> tuple:
    b = drawing.beziers[degree]
    ctrl, w = b.ctrl, b.weights
    t = np.linspace(0.0, 1.0, CURVE_SAMPLES)
    basis = np.stack([comb(degree, i) * t**i * (1 - t) ** (degree - i) for i in range(degree + 1)], axis=1)
    hom = np.einsum("kj,nj,njc->nkc", basis, w, ctrl)
    samples = hom / np.einsum("kj,nj->nk", basis, w)[..., None]
    start_dir = _first_nonzero(ctrl[:, 1:] - ctrl[:, :1])
    end_dir = _first_nonzero(ctrl[:, -1:] - ctrl[:, -2::-1])
    return (ctrl[:, 0], ctrl[:, -1], start_dir, end_dir, measured.beziers[degree].length,
            measured.beziers[degree].bound, _sampled_min_radius(samples), b.entity, samples)


def _first_nonzero(diffs: FloatArray) -> FloatArray:
    """Unit direction of the first difference that is not zero (a repeated control point)."""
    norms = np.linalg.norm(diffs, axis=2)
    k = np.argmax(norms > 0, axis=1)
    return _unit(diffs[np.arange(len(diffs)), k])


def _sampled_min_radius(p: FloatArray) -> FloatArray:
    """Smallest circumradius of consecutive sample triples (inf where the samples are collinear)."""
    a = p[:, 1:-1] - p[:, :-2]
    c = p[:, 2:] - p[:, 1:-1]
    ac = p[:, 2:] - p[:, :-2]
    la, lc, lac = (np.linalg.norm(x, axis=2) for x in (a, c, ac))
    cross = np.linalg.norm(np.cross(a, c), axis=2)
    with np.errstate(divide="ignore", invalid="ignore"):
        r = np.where(cross > 1e-12 * la * lc, la * lc * lac / (2.0 * cross), np.inf)
    return r.min(axis=1) if r.shape[1] else np.full(len(p), np.inf)


def segment_layers(drawing: Drawing, table: SegmentTable) -> tuple[list[str], IntArray]:
    """Layer names (sorted) and each segment's index into them."""
    names = sorted({e.layer for e in drawing.entities})
    index = {n: i for i, n in enumerate(names)}
    of_entity = np.array([index[e.layer] for e in drawing.entities], dtype=np.int64)
    return names, of_entity[table.entity] if len(table) else np.zeros(0, dtype=np.int64)
