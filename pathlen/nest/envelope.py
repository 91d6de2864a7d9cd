"""A polygon that provably holds a part's true outline, grown by half the spacing: what the nesting
engine sees.

Conventions: mm, (x, y) in the drawing's axes.  A contour is flattened with chords, and each
segment's chords come with a bound on how far the curve strays from them:

* elliptic arc c + u cos t + v sin t: the image of a unit-circle arc under the linear map [u v]; a
  unit arc of angle Δ stays within 1 − cos(Δ/2) of its chord, so the arc stays within
  σ_max·(1 − cos(Δ/2)) (σ_max the larger singular value of [u v]);
* (rational, positive weights) Bézier: each chord's piece is cut out exactly (de Casteljau in
  homogeneous coordinates) and the curve lies in the convex hull of the piece's control points
  (convex-hull property), so the control points' largest distance to the chord bounds it.

The curve between a chord's ends then lies in the stadium chord ⊕ disk(δ), a convex set, so the
true region lies in polygon ⊕ disk(δ).  The polygon may then be simplified (Douglas–Peucker keeps
every vertex within ε of the simplified boundary, the same argument again) and is grown by
δ + ε + gap/2 with mitred corners (a mitred offset holds the round one; GEOS clips over-long mitres
beyond the round offset, which tests check).  Two envelopes that do not overlap therefore keep the
true shapes at least ``gap`` apart.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import shapely
from shapely.geometry.polygon import orient

from pathlen.geometry import FloatArray, IntArray
from pathlen.segments import SegmentTable

#: Chord deviation aimed at when flattening curves (mm).
CHORD_TOL_MM = 0.02
#: Douglas–Peucker tolerance (mm) for rings with more than SIMPLIFY_ABOVE vertices.
SIMPLIFY_MM = 0.05
SIMPLIFY_ABOVE = 64
#: Extra growth (relative to the part's size) that absorbs the engine's single-precision rounding.
ENGINE_SAFETY = 4e-6
MAX_CHORDS = 4096


@dataclass(frozen=True)
class Ring:
    """A flattened closed contour: vertices ``[n, 2]`` (mm, not repeated at the end) and the largest
    distance (mm) of the true curve from the chords."""

    points: FloatArray
    deviation: float
    #: per chord (from vertex k to k + 1), its segment's position in ``rows``
    segment: IntArray | None = None


def flatten_contour(table: SegmentTable, rows: IntArray, forward: np.ndarray, tol: float = CHORD_TOL_MM) -> Ring:
    """Chords along the segments ``rows`` in cutting order (``forward``: along the parametrisation)."""
    pieces: list[FloatArray] = []
    deviation = 0.0
    for row, fwd in zip(np.asarray(rows).tolist(), np.asarray(forward).tolist(), strict=True):
        pts, dev = segment_chords(table, row, tol)
        if not fwd:
            pts = pts[::-1]
        pieces.append(pts[:-1])
        deviation = max(deviation, dev)
    ring = np.concatenate(pieces) if pieces else np.zeros((0, 2))
    owner = np.repeat(np.arange(len(pieces)), [len(p) for p in pieces])
    return Ring(ring, deviation, owner)


def segment_chords(table: SegmentTable, row: int, tol: float = CHORD_TOL_MM) -> tuple[FloatArray, float]:
    """Chord vertices ``[m + 1, 2]`` of one segment along its parametrisation, and the curve's largest
    distance from them (mm)."""
    lines = len(table.drawing.lines)
    if row < lines:
        return np.array([table.start[row, :2], table.end[row, :2]]), 0.0
    if row < lines + len(table.drawing.arcs):
        return _arc_chords(table, row - lines, tol)
    return _bezier_chords(table, row, tol)


def _arc_chords(table: SegmentTable, k: int, tol: float) -> tuple[FloatArray, float]:
    a = table.drawing.arcs
    u, v = a.u[k, :2], a.v[k, :2]
    sigma = float(np.linalg.svd(np.stack([u, v], axis=1), compute_uv=False)[0])
    span = float(a.t1[k] - a.t0[k])
    step = 2.0 * math.acos(max(-1.0, 1.0 - tol / sigma)) if sigma > 0 else span
    n = min(MAX_CHORDS, max(2, math.ceil(span / max(step, 1e-12))))
    t = np.linspace(a.t0[k], a.t1[k], n + 1)
    pts = a.center[k, :2] + np.outer(np.cos(t), u) + np.outer(np.sin(t), v)
    return pts, sigma * (1.0 - math.cos(span / n / 2.0))


def _bezier_chords(table: SegmentTable, row: int, tol: float) -> tuple[FloatArray, float]:
    key, local = table.locate(row)
    b = table.drawing.beziers[int(key[6:])]
    hom = np.concatenate([b.ctrl[local, :, :2] * b.weights[local, :, None], b.weights[local, :, None]], axis=1)
    n = 8
    while True:
        t = np.linspace(0.0, 1.0, n + 1)
        sub = _sub_curves(hom, t[:-1], t[1:])  # [n, d+1, 3] homogeneous
        pts = sub[:, :, :2] / sub[:, :, 2:]
        dev = float(_distance_to_chords(pts).max())
        if dev <= tol or n >= MAX_CHORDS:
            ends = np.concatenate([pts[:, 0], pts[-1:, -1]])
            return ends, dev
        n *= 4


def _sub_curves(hom: FloatArray, a: FloatArray, b: FloatArray) -> FloatArray:
    """Control points of the pieces [a_j, b_j] of one Bézier given in homogeneous form ``hom[d+1, k]``:
    de Casteljau at b (keep the left part), then at a / b on that (keep the right part)."""
    d = hom.shape[0] - 1
    n = len(a)
    left = np.empty((n, d + 1, hom.shape[1]))
    work = np.broadcast_to(hom, (n, d + 1, hom.shape[1])).copy()
    bb = b[:, None, None]
    for level in range(d + 1):  # left part of the split at b: first points of each level
        left[:, level] = work[:, 0]
        work = (1 - bb) * work[:, :-1] + bb * work[:, 1:]
    s = np.divide(a, b, out=np.zeros_like(a), where=b > 0)[:, None, None]
    right = np.empty_like(left)
    work = left
    for level in range(d + 1):  # right part of the split at s: last points of each level
        right[:, d - level] = work[:, -1]
        work = (1 - s) * work[:, :-1] + s * work[:, 1:]
    return right


def _distance_to_chords(pts: FloatArray) -> FloatArray:
    """Largest distance of each piece's control points ``pts[n, d+1, 2]`` to its chord segment."""
    p0, p1 = pts[:, :1], pts[:, -1:]
    d = p1 - p0
    dd = np.sum(d * d, axis=2)
    t = np.clip(np.divide(np.sum((pts - p0) * d, axis=2), dd, out=np.zeros(pts.shape[:2]), where=dd > 0), 0, 1)
    foot = p0 + t[..., None] * d
    return np.linalg.norm(pts - foot, axis=2).max(axis=1)


@dataclass(frozen=True)
class Envelope:
    """The grown polygon: ``exterior [n, 2]`` (counter-clockwise) and the rings of its holes (the room
    left inside the part's holes for other parts' envelopes), mm."""

    exterior: FloatArray
    holes: tuple[FloatArray, ...]
    grown_by: float  # mm: how far it reaches beyond the flattened outline
    repaired: bool  # the outline crossed itself or a hole touched it: holes were given up


def part_envelope(outline: Ring, holes: list[Ring], gap: float) -> Envelope:
    """The envelope of a part whose flattened outline and holes are given (see the module notes)."""
    deviation = max([outline.deviation, *(h.deviation for h in holes)])
    poly = shapely.Polygon(outline.points, [h.points for h in holes if len(h.points) >= 3])
    repaired = False
    if not poly.is_valid:
        repaired = True
        poly = shapely.make_valid(shapely.Polygon(outline.points))
        poly = poly if poly.geom_type == "Polygon" else poly.convex_hull
    eps = 0.0
    if len(outline.points) > SIMPLIFY_ABOVE or any(len(h.points) > SIMPLIFY_ABOVE for h in holes):
        eps = SIMPLIFY_MM
        poly = shapely.simplify(poly, eps, preserve_topology=True)
    size = math.hypot(*(np.ptp(outline.points, axis=0))) if len(outline.points) else 0.0
    grow = deviation + eps + 0.5 * gap + ENGINE_SAFETY * max(size, 1.0)
    grown = shapely.buffer(poly, grow, join_style="mitre", mitre_limit=2.0)
    if grown.geom_type != "Polygon":
        grown = grown.convex_hull
    grown = orient(grown, sign=1.0)
    exterior = np.asarray(grown.exterior.coords)[:-1]
    inner = tuple(np.asarray(r.coords)[:-1] for r in grown.interiors)
    return Envelope(exterior, inner, grow, repaired)
