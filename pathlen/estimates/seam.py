"""Seams of pattern pieces: sew lines (drawn, or the cut line offset inward by the allowance), their
edges, and the seams a plan sews on them.

Units: mm, radians.  A sew line offset from the cut line by the allowance ``a`` is exact: with the
piece walked counter-clockwise, a smooth stretch that turns by τ shortens by ``a·τ`` (its offset
has length ∫(1 − aκ) ds), and a corner that turns by φ is mitred: each side ends at the mitre
point, shorter by ``a·tan(φ/2)`` at a convex corner (φ > 0), longer by ``a·tan(|φ|/2)`` at a
concave one.  A rectangle W × H sews (W − 2a)(H − 2a) round, its perimeter less 8a; a circle of
radius R sews 2π(R − a).  Where the offset meets itself (an allowance beyond a convex curve's
radius, a neck narrower than 2a) the sew line is the boundary of the true inward offset region
(:mod:`pathlen.estimates.sew_offset`): it may lose curves, split into loops, or vanish (an error
for that piece only).

Edges: the sew line is split at corners (turning more than :data:`CORNER_DEG`), and at the foot of
every notch or turn point within :data:`MARK_SNAP_MM` of the line split (or of the cut line, when
a drawn sew line is split).  Edges are numbered from 1 counter-clockwise, starting at the split
nearest the piece's lower-left (smallest x + y).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

from pathlen.containment import segment_turning
from pathlen.contours import Contour
from pathlen.errors import InputError
from pathlen.estimates.sew_offset import CHORD_TOL_MM, trim_offset
from pathlen.nest.envelope import flatten_contour
from pathlen.segments import SegmentTable

#: A vertex whose direction changes by more than this (degrees) ends an edge.
CORNER_DEG = 20.0
#: Notches and turn points further than this (mm) from the line split nothing.
MARK_SNAP_MM = 1.0
#: A split this close (relative, along a segment) to a vertex is taken at the vertex.
_AT_VERTEX = 1e-9


@dataclass
class SewLine:
    """A piece's sew line: its total length and its edges' lengths (mm), numbered as documented."""

    length_mm: float
    edges: list[float]
    unsnapped_marks: int = 0
    #: per edge, the rows of the segment table it runs along (for pictures)
    edge_rows: list[list[int]] = field(default_factory=list)
    #: the sew line as polylines (mm) where it is an offset of the cut line (for pictures)
    paths: list[np.ndarray] = field(default_factory=list)
    #: loops of the sew line (an offset may split the piece in several)
    loops: int = 1
    #: the feet of the marks that split edges (x, y in mm) and the line's direction there, for pictures
    feet: list[tuple[float, float, float, float]] = field(default_factory=list)


def sew_line(table: SegmentTable, outline: Contour, allowance: float, marks: list[tuple[float, float]],
             cut: Contour | None = None) -> SewLine:
    """The sew line of the closed line ``outline`` offset inward by ``allowance`` mm (0: the line
    itself), split into edges at corners and at the feet of ``marks`` (x, y in mm) on it; ``cut``, the
    cut line around a drawn sew line, lets marks on the cut line split the sew line too."""
    contour = _counter_clockwise(table, outline)
    idx, fwd = contour.segments, contour.forward
    flat = flatten_contour(table, idx, fwd, CHORD_TOL_MM)
    _check_simple(flat.points)
    smooth, corners = segment_turning(table, contour)
    lengths = table.length[idx].astype(float)
    a = float(allowance)
    # corner k joins segment k to k + 1: mitre change a·tan(φ/2) off each side (negative: longer)
    half = a * np.tan(np.clip(corners, -math.pi + 1e-9, math.pi - 1e-9) / 2.0)
    sew = lengths - a * smooth - half - np.roll(half, 1)
    ring, owner = flat.points, flat.segment
    chords = np.diff(np.vstack([ring, ring[:1]]), axis=0)
    weights = np.hypot(*chords.T)
    pieces = (ring, chords / np.where(weights > 0, weights, 1.0)[:, None], weights)  # start, unit, length
    paths: list[np.ndarray] = []
    loops = 1
    if a > 0:
        trim = trim_offset(table, idx, fwd, a, flat)
        if trim.vanished:
            raise InputError(f"allowance {a:g} mm leaves no sew line: the piece is nowhere wider than {2 * a:g} mm")
        sew = np.where(trim.trimmed, np.where(trim.kept > 0, np.maximum(sew - trim.removed, 0.0), 0.0), sew)
        ring, owner, weights = trim.ring, trim.chord_segment, trim.chord_kept
        pieces = (trim.piece_start, trim.piece_unit, trim.piece_length)
        paths = trim.paths
        loops = _loops(flat.points, a)
    n = len(idx)
    starts = table.travel_samples(idx, fwd)[:, 0, :2]
    splits: dict[float, tuple[float, float]] = {}
    split = np.abs(np.roll(corners, 1)) > math.radians(CORNER_DEG)
    if a > 0:
        _corners_of_vanished(split, sew <= 0, smooth, corners)
    for k in np.flatnonzero(split).tolist():
        splits[float(k)] = (float(starts[k, 0]), float(starts[k, 1]))
    unsnapped = 0
    cut_ring = flatten_contour(table, cut.segments, cut.forward, CHORD_TOL_MM).points if cut is not None else None
    feet = []
    for mark in marks:
        at = _foot(ring, owner, weights, pieces, np.asarray(mark, dtype=float), cut_ring)
        if at is None:
            unsnapped += 1
            continue
        position, point, chord = at
        if position - math.floor(position) < _AT_VERTEX or math.ceil(position) - position < _AT_VERTEX:
            position = float(round(position) % n)
            point = (float(starts[int(position), 0]), float(starts[int(position), 1]))
        splits.setdefault(position, point)
        along = pieces[1][chord]
        feet.append((point[0], point[1], float(along[0]), float(along[1])))
    total = float(sew.sum())
    if not splits:
        return SewLine(total, [total], unsnapped, [idx.tolist()], paths, loops, feet)
    cum = np.concatenate([[0.0], np.cumsum(sew)])
    order = sorted(splits)
    first = min(range(len(order)), key=lambda i: (splits[order[i]][0] + splits[order[i]][1], i))
    order = order[first:] + order[:first]

    def along(position: float) -> float:
        k = int(position)
        return float(cum[k] + (position - k) * sew[k])

    edges, rows = [], []
    for i, p in enumerate(order):
        q = order[(i + 1) % len(order)]
        length = along(q) - along(p)
        if length < 0 or (len(order) == 1):
            length += total
        edges.append(length)
        k0, k1 = int(p), (math.ceil(q) if q > p else math.ceil(q) + n)
        rows.append([int(idx[k % n]) for k in range(k0, max(k1, k0 + 1))])
    return SewLine(total, edges, unsnapped, rows, paths, loops, feet)


def _corners_of_vanished(split: np.ndarray, gone: np.ndarray, smooth: np.ndarray, corners: np.ndarray) -> None:
    """Where segments' offsets vanish (a curve tighter than the allowance), their neighbours' offsets
    meet in a corner: the run's splits move to the segment after it, kept if the run turns more than
    CORNER_DEG in all (vertex k starts segment k; corner k follows segment k)."""
    n = len(gone)
    if not gone.any() or gone.all():
        return
    k = int(np.flatnonzero(~gone)[0])
    for step in range(1, n + 1):
        i = (k + step) % n
        if not gone[i] or gone[i - 1]:
            continue
        turning, j = float(corners[i - 1]), i
        while gone[j % n]:
            turning += float(smooth[j % n] + corners[j % n])
            split[j % n] = False
            j += 1
        split[j % n] = abs(turning) > math.radians(CORNER_DEG)


def _counter_clockwise(table: SegmentTable, outline: Contour) -> Contour:
    smooth, corners = segment_turning(table, outline)
    if float(smooth.sum() + corners.sum()) >= 0:
        return outline
    return replace(outline, segments=outline.segments[::-1].copy(), forward=~outline.forward[::-1])


def _check_simple(ring: np.ndarray) -> None:
    import shapely

    polygon = shapely.Polygon(ring)
    if not polygon.is_valid:
        reason = shapely.is_valid_reason(polygon)
        where = reason[reason.find("[") + 1:reason.find("]")].split() if "[" in reason else []
        near = f" near ({float(where[0]):.1f}, {float(where[1]):.1f}) mm" if len(where) == 2 else ""
        raise InputError(f"the line crosses or touches itself{near}: not a piece outline")


def _loops(ring: np.ndarray, a: float) -> int:
    """How many loops the inward offset region has (its topology, from GEOS)."""
    import shapely

    region = shapely.Polygon(ring).buffer(-a, join_style="mitre", mitre_limit=100.0)
    return len(getattr(region, "geoms", [region])) if not region.is_empty else 0


def _foot(ring: np.ndarray, owner: np.ndarray, weights: np.ndarray, pieces: tuple[np.ndarray, ...],
          mark: np.ndarray, cut_ring: np.ndarray | None) -> tuple[float, tuple[float, float], int] | None:
    """Where a mark splits the line: (segment position k + fraction of its sew length, the foot point,
    the chord),
    or None when the mark is further than MARK_SNAP_MM from the line (and from ``cut_ring``).  The
    foot on a chord maps to the point level with it on the chord's offset (``pieces``: per chord the
    offset's start, direction and length), whose share of the chord's kept length ``weights`` counts."""
    dist, chord, t, foot = _nearest_on_ring(ring, mark)
    if dist > MARK_SNAP_MM:
        if cut_ring is None or _nearest_on_ring(cut_ring, mark)[0] > MARK_SNAP_MM:
            return None
    k = int(owner[chord])
    mine = np.flatnonzero(owner == k)
    w = weights[mine]
    start, unit, length = pieces
    along = float(np.dot(foot - start[chord], unit[chord]))
    share = min(max(along / length[chord], 0.0), 1.0) if length[chord] > 0 else t
    before = float(w[mine < chord].sum() + share * weights[chord])
    whole = float(w.sum())
    fraction = before / whole if whole > 0 else 0.0
    return k + min(max(fraction, 0.0), 1.0 - 1e-12), (float(foot[0]), float(foot[1])), chord


def _nearest_on_ring(ring: np.ndarray, p: np.ndarray) -> tuple[float, int, float, np.ndarray]:
    """Distance from ``p`` to the closed polyline ``ring``, the nearest chord, the parameter on it and the foot."""
    a, b = ring, np.roll(ring, -1, axis=0)
    d = b - a
    dd = np.sum(d * d, axis=1)
    t = np.clip(np.divide(np.sum((p - a) * d, axis=1), dd, out=np.zeros(len(a)), where=dd > 0), 0.0, 1.0)
    foot = a + t[:, None] * d
    dist = np.hypot(*(foot - p).T)
    c = int(np.argmin(dist))
    return float(dist[c]), c, float(t[c]), foot[c]
