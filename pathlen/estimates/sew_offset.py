"""The true inward offset of a closed cut line: which parts of each segment's offset survive.

Conventions: mm; the contour walked counter-clockwise, inward to the left.  The sew line at
allowance ``a`` is the boundary of the mitred erosion of the piece: the piece less every point
nearer than ``a`` to its cut line, with sharp (mitred) corners where the cut line turns right
(as a pattern's cut line is drawn from its sew line).  It may split into several loops (a
dumbbell whose neck is narrower than 2a) or vanish; where ``a`` exceeds the radius of a convex curve,
that curve's offset collapses and its neighbours' offsets meet.

Method: the contour is flattened into chords (:func:`pathlen.nest.envelope.flatten_contour`,
deviation below :data:`CHORD_TOL_MM`).  The part of the piece nearer than ``a`` to the cut line is
the union of convex regions: each chord's band (the chord and its inward translate by ``a``) and,
where the walk turns right, the kite between the two bands up to the mitre point.  The sew line is
the boundary of the piece less that union (shapely's mitred inward buffer gives the same region;
a test checks it): the parts of each band's inner edge (with the kite's edge where the walk turns
right) that lie inside the piece and inside no region, found by clipping every candidate against
the regions near it (Cyrus–Beck, all pairs at once).  Where pieces lie on one line (mitre
extensions meeting across a narrow neck) the boundary counts once.

Lengths stay exact on curves: a segment none of whose chords changed keeps its exact offset length
(the closed form of :mod:`pathlen.estimates.seam`); a changed segment keeps its exact length less
what its chords lost (or plus what they gained: an offset turned back on itself lets its neighbours
run on to meet), measured on the chords.  Where offsets cross, the crossing is found on the chords,
within about :data:`CHORD_TOL_MM` of the true one, so a trimmed sew line is exact to a few
micrometres per crossing.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import shapely

from pathlen.geometry import FloatArray, IntArray
from pathlen.nest.envelope import Ring, flatten_contour
from pathlen.segments import SegmentTable

#: Largest distance (mm) of a curve from the chords standing for it here.
CHORD_TOL_MM = 0.002
#: Reflex corners sharper than this are mitred no further than MITRE_LIMIT · a from the corner.
MITRE_LIMIT = 100.0


@dataclass
class Trim:
    """What survives of each segment's offset (segments in walking order)."""

    removed: FloatArray  # per segment, the length its exact offset loses (mm; see trim_offset)
    kept: FloatArray  # per segment, the surviving length on the chords (mm)
    trimmed: np.ndarray  # per segment, True where any chord's offset changed (trimmed or run on)
    chord_segment: IntArray  # per chord, its segment's position in the walk
    chord_kept: FloatArray  # per chord, its surviving length (mm)
    ring: FloatArray  # [n, 2] the chord vertices (mm)
    paths: list[FloatArray]  # the surviving offset as polylines (mm), for pictures
    piece_start: FloatArray  # [n, 2] per chord, where its raw offset starts (mm)
    piece_unit: FloatArray  # [n, 2] per chord, its direction
    piece_length: FloatArray  # per chord, its raw offset's signed length (mm)

    @property
    def vanished(self) -> bool:
        return not bool(self.kept.sum() > 0)


def trim_offset(table: SegmentTable, rows: IntArray, forward: np.ndarray, a: float, flat: Ring | None = None
                ) -> Trim:
    """The surviving parts of the inward offset by ``a`` mm of the counter-clockwise walk ``rows``
    (``flat``: the walk's chords at :data:`CHORD_TOL_MM`, where the caller has them already)."""
    flat = flat if flat is not None else flatten_contour(table, rows, forward, CHORD_TOL_MM)
    ring, owner = flat.points, flat.segment
    assert owner is not None
    nseg = len(np.asarray(rows))
    d = np.roll(ring, -1, axis=0) - ring  # chord c: ring[c] -> ring[c + 1]
    length = np.hypot(d[:, 0], d[:, 1])
    unit = d / np.where(length > 0, length, 1.0)[:, None]
    normal = np.stack([-unit[:, 1], unit[:, 0]], axis=1)  # inward (left of a counter-clockwise walk)
    prev = np.roll(normal, 1, axis=0)  # the chord ending at vertex v is v - 1
    cos_half2 = np.maximum(1.0 + np.sum(prev * normal, axis=1), 2.0 / MITRE_LIMIT**2)
    mitre = ring + a * (prev + normal) / cos_half2[:, None]  # at vertex v, on both chords' offsets
    # along chord c's offset line (s from the point level with its start): the mitres sit at h_start and
    # length - h_end (h > 0 where the walk turns left); the candidate runs over the chord and on to the
    # mitre where the walk turns right (the kite's edge)
    h_start = np.sum((mitre - ring) * unit, axis=1)
    h_end = -np.sum((np.roll(mitre, -1, axis=0) - np.roll(ring, -1, axis=0)) * unit, axis=1)
    s0, s1 = np.minimum(0.0, h_start), np.maximum(length, length - h_end)
    base = ring + a * normal
    start, end = base + s0[:, None] * unit, base + s1[:, None] * unit
    direction = length - h_start - h_end  # mitre to mitre, signed: negative where it turns back on itself
    intervals = _region_intervals(ring, normal, mitre, start, end, a)
    polygon = shapely.Polygon(ring)
    whole = (shapely.contains_xy(polygon, *start.T) & shapely.contains_xy(polygon, *end.T)
             & shapely.contains_xy(polygon, *((start + end) / 2).T))
    kept_pieces: dict[int, list[tuple[float, float]]] = {}
    for c in range(len(ring)):
        pieces = _complement(intervals.get(c, []))
        if len(pieces) != 1 or pieces[0] != (0.0, 1.0) or not whole[c]:
            pieces = [(t0, t1) for t0, t1 in pieces
                      if shapely.contains_xy(polygon, *(start[c] + (t0 + t1) / 2 * (end[c] - start[c])))]
        kept_pieces[c] = pieces
    _drop_doubles(kept_pieces, start, end, a)
    span = s1 - s0
    tol = 1e-9 * max(float(np.abs(ring).max()), a, 1.0)
    for c, pieces in kept_pieces.items():  # slivers where a candidate touches a region's corner
        kept_pieces[c] = [(t0, t1) for t0, t1 in pieces if (t1 - t0) * span[c] > tol]
    kept_c = np.zeros(len(ring))
    start_moved = np.zeros(len(ring), dtype=bool)
    end_moved = np.zeros(len(ring), dtype=bool)
    paths: list[FloatArray] = []
    current: list[FloatArray] = []
    for c in range(len(ring)):
        pieces = kept_pieces[c]
        kept_c[c] = span[c] * sum(t1 - t0 for t0, t1 in pieces)
        first_s = s0[c] + pieces[0][0] * span[c] if pieces else math.inf
        last_s = s0[c] + pieces[-1][1] * span[c] if pieces else -math.inf
        start_moved[c] = abs(first_s - h_start[c]) > tol
        end_moved[c] = abs(last_s - (length[c] - h_end[c])) > tol
        for t0, t1 in pieces:
            p0, p1 = start[c] + t0 * (end[c] - start[c]), start[c] + t1 * (end[c] - start[c])
            if current and np.hypot(*(current[-1] - p0)) > tol:
                current = _close(paths, current)
            if not current:
                current.append(p0)
            current.append(p1)
    _close(paths, current)
    if len(paths) > 1 and np.allclose(paths[0][0], paths[-1][-1]):
        paths[0] = np.concatenate([paths.pop(), paths[0][1:]])
    trimmed_c = start_moved | end_moved | (np.abs(kept_c - np.maximum(direction, 0.0)) > tol)
    kept = np.bincount(owner, weights=kept_c, minlength=nseg)
    trimmed = np.bincount(owner, weights=trimmed_c.astype(float), minlength=nseg) > 0
    lost = np.bincount(owner, weights=direction - kept_c, minlength=nseg)
    shift_start, shift_end = _joint_shifts(table, rows, forward, ring, owner, unit, a)
    first = np.flatnonzero(np.r_[True, owner[1:] != owner[:-1]])
    last = np.r_[first[1:], len(ring)] - 1
    removed = lost + np.where(start_moved[first], shift_start, 0.0) + np.where(end_moved[last], shift_end, 0.0)
    mitre_start = base + h_start[:, None] * unit
    return Trim(removed, kept, trimmed, owner, kept_c, ring, paths, mitre_start, unit, direction)


def _joint_shifts(table: SegmentTable, rows: IntArray, forward: np.ndarray, ring: FloatArray, owner: IntArray,
                  unit: FloatArray, a: float) -> tuple[FloatArray, FloatArray]:
    """Per segment, how much longer its first and last chord's raw offset is when a joint's mitre is
    shared as the exact offset shares it, than on the chords.

    On the chords, a joint's mitre a·tan(φ/2) on each side comes from the turning φ between the two
    chords meeting there; the exact offset takes a·tan(φ₀/2) on each side for the true corner φ₀ and
    leaves each curve the turning between its chord and its own end tangent (its a·τ).  Where a piece
    keeps its end at a joint the two agree in sum; where the end is trimmed away, the difference is
    the exact offset's and is added to what the segment loses."""
    first = np.flatnonzero(np.r_[True, owner[1:] != owner[:-1]])
    last = np.r_[first[1:], len(ring)] - 1
    t_in, t_out = (d[:, :2] for d in table.travel_directions(rows, forward))
    prev_t_out = np.roll(t_out, 1, axis=0)
    chord_in, chord_out = unit[first], unit[last]
    prev_chord_out = np.roll(chord_out, 1, axis=0)
    corner = _angle(prev_t_out, t_in)  # the exact corner before each segment
    chords = _angle(prev_chord_out, chord_in)  # the chords' turning there
    theta_out = _angle(t_in, chord_in)  # from the segment's start tangent to its first chord
    theta_in = _angle(prev_chord_out, prev_t_out)  # from the previous segment's last chord to its end tangent
    h = a * np.tan(np.clip(chords, -3.1, 3.1) / 2.0)
    exact = a * np.tan(np.clip(corner, -3.1, 3.1) / 2.0)
    shift_start = h - (exact + a * theta_out)
    shift_end_of_prev = h - (exact + a * theta_in)  # for the segment before each joint
    return shift_start, np.roll(shift_end_of_prev, -1)


def _angle(u: FloatArray, v: FloatArray) -> FloatArray:
    """Signed angle from directions ``u`` to ``v`` (rad, left turns positive)."""
    return np.arctan2(u[:, 0] * v[:, 1] - u[:, 1] * v[:, 0], np.sum(u * v, axis=1))


def _drop_doubles(kept: dict[int, list[tuple[float, float]]], start: FloatArray, end: FloatArray, a: float) -> None:
    """Where two surviving pieces lie on one line (at a neck narrower than 2a between right-angled
    corners, the mitre extensions of both sides meet on one line and overlap), the boundary counts once: the overlap
    is dropped from the later piece when they run the same way, from both when they run opposite
    ways (the region lies on both sides: no boundary there)."""
    items = [(c, t0, t1) for c, pieces in kept.items() for t0, t1 in pieces if t1 > t0]
    if len(items) < 2:
        return
    chord = np.array([x[0] for x in items])
    t0 = np.array([x[1] for x in items])[:, None]
    t1 = np.array([x[2] for x in items])[:, None]
    p0 = start[chord] + t0 * (end[chord] - start[chord])
    p1 = start[chord] + t1 * (end[chord] - start[chord])
    tree = shapely.STRtree(shapely.linestrings(np.stack([p0, p1], axis=1)))
    i, j = tree.query(shapely.linestrings(np.stack([p0, p1], axis=1)), predicate="intersects")
    pair = i < j
    i, j = i[pair], j[pair]
    if len(i) == 0:
        return
    d = p1 - p0
    length = np.hypot(d[:, 0], d[:, 1])
    u = d / np.where(length > 0, length, 1.0)[:, None]
    tol = 1e-9 * max(float(np.abs(start).max()), a, 1.0)
    cross_dir = u[i, 0] * u[j, 1] - u[i, 1] * u[j, 0]
    w = p0[j] - p0[i]
    cross_off = u[i, 0] * w[:, 1] - u[i, 1] * w[:, 0]
    line = (np.abs(cross_dir) < 1e-9) & (np.abs(cross_off) < tol)
    drops: dict[int, list[tuple[float, float]]] = {}
    for a_, b_ in zip(i[line].tolist(), j[line].tolist(), strict=True):
        s0 = float(np.dot(p0[b_] - p0[a_], u[a_]))
        s1 = float(np.dot(p1[b_] - p0[a_], u[a_]))
        lo, hi = max(0.0, min(s0, s1)), min(float(length[a_]), max(s0, s1))
        if hi - lo <= tol:
            continue
        same = float(np.dot(u[a_], u[b_])) > 0
        for k in ((b_,) if same else (a_, b_)):
            # the overlap in piece k's own parameter (0..1 along the piece), then in its chord's t
            r0 = float(np.dot(p0[a_] + lo * u[a_] - p0[k], u[k])) / float(length[k])
            r1 = float(np.dot(p0[a_] + hi * u[a_] - p0[k], u[k])) / float(length[k])
            r0, r1 = sorted((max(0.0, r0), min(1.0, r1)))
            span = float(t1[k, 0] - t0[k, 0])
            drops.setdefault(k, []).append((float(t0[k, 0]) + r0 * span, float(t0[k, 0]) + r1 * span))
    for k, cuts in drops.items():
        c, lo_t, hi_t = items[k]
        rest = [(lo_t + (hi_t - lo_t) * x0, lo_t + (hi_t - lo_t) * x1)
                for x0, x1 in _complement([((q0 - lo_t) / (hi_t - lo_t), (q1 - lo_t) / (hi_t - lo_t))
                                           for q0, q1 in cuts])]
        pieces = [p for p in kept[c] if p != (lo_t, hi_t)] + [r for r in rest if r[1] > r[0]]
        kept[c] = sorted(pieces)


def _close(paths: list[FloatArray], current: list[FloatArray]) -> list[FloatArray]:
    if len(current) > 1 and np.ptp(np.asarray(current), axis=0).max() > 0:
        paths.append(np.asarray(current))
    return []


def _complement(removed: list[tuple[float, float]]) -> list[tuple[float, float]]:
    """[0, 1] less the union of ``removed`` intervals, as sorted intervals."""
    out, at = [], 0.0
    for t0, t1 in sorted(removed):
        if t0 > at:
            out.append((at, t0))
        at = max(at, t1)
    if at < 1.0:
        out.append((at, 1.0))
    return out


def _regions(ring: FloatArray, normal: FloatArray, mitre: FloatArray, a: float) -> tuple[FloatArray, IntArray]:
    """The convex regions an offset may not enter, as quadrilaterals ``[m, 4, 2]`` (counter-clockwise),
    and for each the chord it belongs to (-1 for a corner): every chord's band (the chord and its
    inward translate by ``a``) and, at every reflex corner, the kite between the two bands up to the
    mitre point.  Their union is the part of the piece nearer than ``a`` to the cut line, with mitred
    (not round) corners where the cut line turns right."""
    nxt = np.roll(ring, -1, axis=0)
    bands = np.stack([ring, nxt, nxt + a * normal, ring + a * normal], axis=1)
    prev = np.roll(normal, 1, axis=0)
    turn = prev[:, 0] * normal[:, 1] - prev[:, 1] * normal[:, 0]  # < 0: the walk turns right (reflex)
    reflex = np.flatnonzero(turn < -1e-12)
    kites = np.stack([ring[reflex], ring[reflex] + a * normal[reflex], mitre[reflex],
                      ring[reflex] + a * prev[reflex]], axis=1)
    quads = np.concatenate([bands, kites])
    area = np.sum(quads[:, :, 0] * np.roll(quads[:, :, 1], -1, axis=1)
                  - np.roll(quads[:, :, 0], -1, axis=1) * quads[:, :, 1], axis=1)
    quads[area < 0] = quads[area < 0, ::-1]
    owner = np.r_[np.arange(len(ring)), np.full(len(reflex), -1)]
    return quads, owner


def _region_intervals(ring: FloatArray, normal: FloatArray, mitre: FloatArray, start: FloatArray, end: FloatArray,
                     a: float) -> dict[int, list[tuple[float, float]]]:
    """Per chord, the parameter intervals of its candidate (t in [0, 1] from ``start`` to ``end``) inside
    the open regions of :func:`_regions` (its own band excepted)."""
    out: dict[int, list[tuple[float, float]]] = {}
    live = np.arange(len(ring))
    quads, region_chord = _regions(ring, normal, mitre, a)
    lo, hi = quads.min(axis=1), quads.max(axis=1)
    tree = shapely.STRtree(shapely.box(lo[:, 0], lo[:, 1], hi[:, 0], hi[:, 1]))
    qi, j = tree.query(shapely.linestrings(np.stack([start[live], end[live]], axis=1)), predicate="intersects")
    c = live[qi]
    keep = region_chord[j] != c
    c, j = c[keep], j[keep]
    if len(c) == 0:
        return out
    # Cyrus–Beck: p(t) = start + t (end - start) is strictly inside quad j where it is left of every edge
    q = quads[j]
    edge = np.roll(q, -1, axis=1) - q
    nrm = np.stack([edge[:, :, 1], -edge[:, :, 0]], axis=2)  # outward normals of a counter-clockwise quad
    p0, dp = start[c], end[c] - start[c]
    scale = np.linalg.norm(nrm, axis=2) * max(float(np.abs(ring).max()), a, 1.0)
    num = np.einsum("kpc,kpc->kp", nrm, q) - np.einsum("kpc,kc->kp", nrm, p0) - 1e-12 * scale
    den = np.einsum("kpc,kc->kp", nrm, dp)
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = num / den
    t_lo = np.maximum(0.0, np.where(den < 0, ratio, -np.inf).max(axis=1))
    t_hi = np.minimum(1.0, np.where(den > 0, ratio, np.inf).min(axis=1))
    blocked = ((den == 0) & (num <= 0)).any(axis=1)
    hit = (t_hi > t_lo) & ~blocked
    for ci, a0, a1 in zip(c[hit].tolist(), t_lo[hit].tolist(), t_hi[hit].tolist(), strict=True):
        out.setdefault(ci, []).append((a0, a1))
    return out
