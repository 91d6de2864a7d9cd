"""Per-contour facts of a cut, for all contours at once: outline polygons, small holes, the kerf
offset's length change and the time to cut each contour from rest to rest.

Units: mm, s.  Arrays run over the contours of a :class:`~pathlen.contours.ContourSet`; the work is
array operations over all steps (segments in cutting order) and all motion pieces, and shapely's
vectorised functions over all closed outlines, never a Python loop per contour.  The numbers are
those of the per-contour definitions in :mod:`pathlen.containment` (polygons from the sample
points, the exact turning formula checked against shapely's offset) and
:mod:`pathlen.estimates.kinematics` (a test checks the batched planner against the sequential one).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import shapely

from pathlen.containment import OFFSET_QUAD_SEGS, kerf_changes_from_turning, outline_lengths, steps_turning
from pathlen.contours import ContourSet
from pathlen.estimates.kinematics import corner_speed, sequences_time
from pathlen.geometry import FloatArray, IntArray
from pathlen.segments import SegmentTable

#: Trouble codes of the kerf offset, per contour.
TROUBLE = ("", "narrow", "rough", "crossing")


@dataclass
class Walk:
    """The contours' steps with what several facts need: their travel samples ``[m, k, 3]`` and their
    motion pieces (:meth:`~pathlen.segments.SegmentTable.turning_pieces`)."""

    contour: IntArray  # per step
    samples: FloatArray
    piece_length: FloatArray
    piece_radius: FloatArray
    piece_first: IntArray  # per step, its first piece


def walk(table: SegmentTable, contours: ContourSet) -> Walk:
    samples = table.travel_samples(contours.steps, contours.forward)
    length, radius, first = table.turning_pieces(contours.steps, contours.forward, samples)
    return Walk(np.repeat(np.arange(len(contours)), contours.size), samples, length, radius, first)


@dataclass
class Outlines:
    """Closed contours' outlines: validity, area and perimeter of the sample polygon (mm², mm)."""

    polygon: np.ndarray  # shapely geometries, None for open contours
    valid: np.ndarray  # a single polygon (not crossing itself)
    area: FloatArray
    perimeter: FloatArray


def outlines(table: SegmentTable, contours: ContourSet, w: Walk) -> Outlines:
    """Every closed contour as the polygon through its sample points, each joint once (mended by a zero
    buffer where it crosses itself, as :func:`pathlen.containment.contour_polygon` does)."""
    n = len(contours)
    polygon = np.full(n, None, dtype=object)
    valid = np.zeros(n, dtype=bool)
    area, perimeter = np.zeros(n), np.zeros(n)
    closed = np.flatnonzero(contours.closed & (contours.size > 0))
    if len(closed) == 0:
        return Outlines(polygon, valid, area, perimeter)
    mask = contours.closed[w.contour]
    # each step from its second sample on: its first is the previous step's last (joined within the
    # tolerance; two copies a rounding apart would make a spike that crosses itself)
    pts = w.samples[mask][:, 1:, :2]
    ring = np.searchsorted(closed, np.repeat(w.contour[mask], pts.shape[1]))
    polys = shapely.polygons(shapely.linearrings(pts.reshape(-1, 2), indices=ring))
    mended = polys.copy()
    broken = ~shapely.is_valid(polys)
    if broken.any():
        mended[broken] = shapely.buffer(polys[broken], 0)
    polygon[closed] = mended
    valid[closed] = shapely.get_type_id(mended) == 3  # a single Polygon
    area[closed] = shapely.area(mended)
    perimeter[closed] = shapely.length(mended)
    return Outlines(polygon, valid, area, perimeter)


def kerf_changes(table: SegmentTable, contours: ContourSet, w: Walk, out: Outlines, outward: FloatArray,
                 wanted: np.ndarray) -> tuple[FloatArray, IntArray]:
    """Length change (mm) of the contours ``wanted`` (closed ones) offset by ``outward`` mm (negative:
    inwards), and a trouble code per contour (index into :data:`TROUBLE`).

    The exact turning formula (:func:`pathlen.containment.kerf_length_change`) is checked against
    shapely's round-joined offset of the sample polygon; where they disagree by more than the
    sampling explains, the offset crosses itself and shapely's figure is used; an inward offset that
    leaves nothing is a hole narrower than the kerf (no offset); a contour crossing itself has no
    inside to offset towards (no offset)."""
    n = len(contours)
    change = np.zeros(n)
    trouble = np.zeros(n, dtype=np.int64)
    todo = wanted & contours.closed
    trouble[todo & ~out.valid] = TROUBLE.index("crossing")
    todo &= out.valid
    if not todo.any():
        return change, trouble
    exact, suspect = _exact_changes(table, contours, w, outward)
    k = np.flatnonzero(todo & suspect)
    change[todo] = exact[todo]
    if len(k) == 0:
        return change, trouble
    polys = out.polygon[k]
    moved = shapely.buffer(polys, outward[k], quad_segs=OFFSET_QUAD_SEGS, join_style="round")
    empty = shapely.is_empty(moved) & ~shapely.is_empty(polys)
    rough = outline_lengths(moved) - outline_lengths(polys)
    rough = np.where(shapely.is_empty(polys), 0.0, rough)
    allowed = 0.05 * np.abs(outward[k]) * (2 * math.pi + contours.size[k])
    differ = np.abs(exact[k] - rough) > allowed
    change[k] = np.where(empty, 0.0, np.where(differ, rough, exact[k]))
    trouble[k] = np.where(empty, TROUBLE.index("narrow"), np.where(differ, TROUBLE.index("rough"), 0))
    return change, trouble


def _exact_changes(table: SegmentTable, contours: ContourSet, w: Walk, outward: FloatArray
                   ) -> tuple[FloatArray, np.ndarray]:
    """Per contour, the exact kerf length change of the turning formula (see
    :func:`pathlen.containment.kerf_length_change`), valid while the offset does not cross itself,
    and whether it might cross itself (then shapely's offset decides).

    It cannot, for a contour whose every segment is longer than the mitres at its ends need
    (4|d|(1 + tan|φ₁|/2 + tan|φ₂|/2)), whose curves have radii above 2|d| (and whose Bézier pieces
    turn by under 150° each, so they cannot come back to themselves), whose corners turn by less
    than 170°, whose box is at least 4|d| across, and whose segments that are not neighbours keep
    their boxes more than 2|d| apart.  Anything else is "suspect"."""
    n = len(contours)
    smooth, corners = steps_turning(table, contours.steps, contours.forward, contours.first, contours.size,
                                    w.samples)
    cid = w.contour
    exact = kerf_changes_from_turning(smooth, corners, cid, outward)
    d = np.abs(outward)
    dd = d[cid]
    # suspects: local features
    rows = contours.steps
    seg_len = table.length[rows]
    prev_corner = np.roll(corners, 1)
    prev_corner[contours.first[contours.size > 0]] = corners[(contours.first + contours.size - 1)[contours.size > 0]]
    half = np.tan(np.minimum(np.abs(corners), 3.0) / 2.0) + np.tan(np.minimum(np.abs(prev_corner), 3.0) / 2.0)
    bezier = rows >= len(table.drawing.lines) + len(table.drawing.arcs)  # arcs are convex: radius decides
    local = (seg_len <= 4.0 * dd * (1.0 + half)) | (bezier & (np.abs(smooth) > math.radians(150))) \
        | (np.abs(corners) > math.radians(170))
    radius, pfirst = w.piece_radius, w.piece_first
    tight = radius < 2.0 * np.repeat(dd, np.diff(np.r_[pfirst, len(radius)]))
    local |= np.add.reduceat(tight.astype(np.int64), pfirst) > 0 if len(pfirst) else np.zeros(0, dtype=bool)
    suspect = np.bincount(cid, weights=local.astype(float), minlength=n) > 0
    lo, hi = table.box
    lo, hi = lo[rows, :2], hi[rows, :2]
    c_lo = np.full((n, 2), np.inf)
    c_hi = np.full((n, 2), -np.inf)
    np.minimum.at(c_lo, cid, lo)
    np.maximum.at(c_hi, cid, hi)
    suspect |= ((c_hi - c_lo).min(axis=1) < 4.0 * d) & (contours.size > 0)
    # segments of one contour, not neighbours, whose boxes come within 2|d|: only in contours of four
    # segments or more (in fewer, every two are neighbours) not already suspect
    look = np.flatnonzero((contours.size[cid] >= 4) & ~suspect[cid])
    grow = dd[look]  # both boxes grown by |d|: they meet where the segments' boxes come within 2|d|
    boxes = shapely.box(lo[look, 0] - grow, lo[look, 1] - grow, hi[look, 0] + grow, hi[look, 1] + grow)
    i, j = shapely.STRtree(boxes).query(boxes, predicate="intersects")
    i, j = look[i], look[j]
    same = (cid[i] == cid[j]) & (i < j)
    i, j = i[same], j[same]
    gap = j - i
    wrap = contours.size[cid[i]] - gap
    apart = (gap > 1) & (wrap > 1)
    suspect[cid[i[apart]]] = True
    return exact, suspect


def motion_times(table: SegmentTable, contours: ContourSet, w: Walk, feed: FloatArray, lead_in: FloatArray,
                 lead_out: FloatArray, change: FloatArray, accel: float, corner_tolerance: float) -> FloatArray:
    """Per contour, the time (s) to cut it from rest to rest at ``feed`` (mm/s): its motion pieces
    (scaled to the kerf-changed length), arcs limited to √(a·r), corners to :func:`corner_speed`,
    and straight tangent leads before and after (lengths 0: none)."""
    steps, fwd, cid = contours.steps, contours.forward, w.contour
    length, radius, pfirst, c_length = w.piece_length, w.piece_radius, w.piece_first, contours.length
    n = len(c_length)
    if n == 0:
        return np.zeros(0)
    count = np.diff(np.r_[pfirst, len(length)])
    piece_step = np.repeat(np.arange(len(steps)), count)
    piece_c = cid[piece_step]
    scale = np.where(c_length > 0, (c_length + change) / np.where(c_length > 0, c_length, 1.0), 1.0)
    length = length * scale[piece_c]
    top = np.minimum(feed[piece_c], np.sqrt(accel * np.maximum(radius, corner_tolerance)))
    d_in, d_out = table.travel_directions(steps, fwd)
    corner = np.full(len(length), math.inf)
    joint = np.flatnonzero(np.r_[False, cid[1:] == cid[:-1]])  # steps after another of their contour
    if len(joint):
        corner[pfirst[joint]] = corner_speed(d_out[joint - 1], d_in[joint], accel, corner_tolerance)
    # each contour's moves: lead-in, its pieces, lead-out
    has_in, has_out = lead_in > 0, lead_out > 0
    pieces_per = np.bincount(piece_c, minlength=n)
    size = pieces_per + has_in + has_out
    first = np.r_[0, np.cumsum(size)[:-1]]
    total = int(size.sum())
    m_len, m_top, m_corner = np.zeros(total), np.zeros(total), np.full(total, math.inf)
    within = np.arange(len(length)) - np.repeat(np.r_[0, np.cumsum(pieces_per)[:-1]], pieces_per)
    at = first[piece_c] + has_in[piece_c] + within
    m_len[at], m_top[at], m_corner[at] = length, top, corner
    lead_c = np.flatnonzero(has_in)
    m_len[first[lead_c]], m_top[first[lead_c]] = lead_in[lead_c], feed[lead_c]
    lead_c = np.flatnonzero(has_out)
    last = first[lead_c] + size[lead_c] - 1
    m_len[last], m_top[last] = lead_out[lead_c], feed[lead_c]
    return sequences_time(m_len, m_top, m_corner, first, size, accel)
