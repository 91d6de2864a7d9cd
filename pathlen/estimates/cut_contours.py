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

from pathlen.containment import OFFSET_QUAD_SEGS, steps_turning
from pathlen.contours import ContourSet
from pathlen.estimates.kinematics import corner_speed, sequences_time
from pathlen.geometry import FloatArray, IntArray
from pathlen.segments import SegmentTable

#: Trouble codes of the kerf offset, per contour.
TROUBLE = ("", "narrow", "rough", "crossing")


@dataclass
class Outlines:
    """Closed contours' outlines: validity, area and perimeter of the sample polygon (mm², mm)."""

    polygon: np.ndarray  # shapely geometries, None for open contours
    valid: np.ndarray  # a single polygon (not crossing itself)
    area: FloatArray
    perimeter: FloatArray


def outlines(table: SegmentTable, contours: ContourSet) -> Outlines:
    """Every closed contour as the polygon through its sample points (mended by a zero buffer, as
    :func:`pathlen.containment.contour_polygon` does)."""
    n = len(contours)
    polygon = np.full(n, None, dtype=object)
    valid = np.zeros(n, dtype=bool)
    area, perimeter = np.zeros(n), np.zeros(n)
    closed = np.flatnonzero(contours.closed & (contours.size > 0))
    if len(closed) == 0:
        return Outlines(polygon, valid, area, perimeter)
    cid = np.repeat(np.arange(n), contours.size)
    mask = contours.closed[cid]
    pts = table.travel_samples(contours.steps[mask], contours.forward[mask])[:, :, :2]
    ring = np.searchsorted(closed, np.repeat(cid[mask], pts.shape[1]))
    polys = shapely.polygons(shapely.linearrings(pts.reshape(-1, 2), indices=ring))
    mended = shapely.buffer(polys, 0)
    polygon[closed] = mended
    valid[closed] = shapely.get_type_id(mended) == 3  # a single Polygon
    area[closed] = shapely.area(mended)
    perimeter[closed] = shapely.length(mended)
    return Outlines(polygon, valid, area, perimeter)


def kerf_changes(table: SegmentTable, contours: ContourSet, out: Outlines, outward: FloatArray,
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
    exact = _exact_changes(table, contours, outward)
    k = np.flatnonzero(todo)
    polys = out.polygon[k]
    moved = shapely.buffer(polys, outward[k], quad_segs=OFFSET_QUAD_SEGS, join_style="round")
    empty = shapely.is_empty(moved) & ~shapely.is_empty(polys)
    rough = _outline_lengths(moved) - _outline_lengths(polys)
    rough = np.where(shapely.is_empty(polys), 0.0, rough)
    allowed = 0.05 * np.abs(outward[k]) * (2 * math.pi + contours.size[k])
    differ = np.abs(exact[k] - rough) > allowed
    change[k] = np.where(empty, 0.0, np.where(differ, rough, exact[k]))
    trouble[k] = np.where(empty, TROUBLE.index("narrow"), np.where(differ, TROUBLE.index("rough"), 0))
    return change, trouble


def _outline_lengths(shapes: np.ndarray) -> FloatArray:
    """Per geometry, the total length of its polygons' exteriors (mm)."""
    parts, index = shapely.get_parts(shapes, return_index=True)
    lengths = shapely.length(shapely.get_exterior_ring(parts)) if len(parts) else np.zeros(0)
    return np.bincount(index, weights=lengths, minlength=len(shapes))


def _exact_changes(table: SegmentTable, contours: ContourSet, outward: FloatArray) -> FloatArray:
    """Per contour, the exact kerf length change of the turning formula (see
    :func:`pathlen.containment.kerf_length_change`), valid while the offset does not cross itself."""
    smooth, corners = steps_turning(table, contours.steps, contours.forward, contours.first, contours.size)
    cid = np.repeat(np.arange(len(contours)), contours.size)
    total = np.bincount(cid, weights=smooth + corners, minlength=len(contours))
    side = np.where(total != 0, np.sign(total), 1.0)  # +1 counter-clockwise
    d = np.abs(outward)
    sign = np.where(outward > 0, side, -side)[cid]
    k, phi = sign * smooth, sign * corners
    dd = d[cid]
    joins = np.where(phi > 0, dd * phi, -2.0 * dd * np.tan(np.abs(phi) / 2.0))
    return np.bincount(cid, weights=dd * k + joins, minlength=len(contours))


def motion_times(table: SegmentTable, contours: ContourSet, feed: FloatArray, lead_in: FloatArray,
                 lead_out: FloatArray, change: FloatArray, accel: float, corner_tolerance: float) -> FloatArray:
    """Per contour, the time (s) to cut it from rest to rest at ``feed`` (mm/s): its motion pieces
    (scaled to the kerf-changed length), arcs limited to √(a·r), corners to :func:`corner_speed`,
    and straight tangent leads before and after (lengths 0: none)."""
    n = len(contours)
    if n == 0:
        return np.zeros(0)
    steps, fwd = contours.steps, contours.forward
    cid = np.repeat(np.arange(n), contours.size)
    length, radius, pfirst = table.turning_pieces(steps, fwd)
    count = np.diff(np.r_[pfirst, len(length)])
    piece_step = np.repeat(np.arange(len(steps)), count)
    piece_c = cid[piece_step]
    scale = np.where(contours.length > 0, (contours.length + change) / np.where(contours.length > 0,
                                                                                contours.length, 1.0), 1.0)
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
