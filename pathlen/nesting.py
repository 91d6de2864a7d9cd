"""Which closed contours lie inside which, and kerf offsets of closed contours (shapely geometry).

Polygons here are built from the segment table's sample points: good for containment and for the
*change* of length under an offset, never for a length itself (lengths come from ``measure``).
"""

from __future__ import annotations

import numpy as np
import shapely

from pathlen.contours import Contour, ContourSet
from pathlen.geometry import IntArray, take_rows
from pathlen.proximity import cell_keys, expand_ranges
from pathlen.segments import SegmentTable

#: Segments per quarter circle of the round joins that shapely's buffer draws.
OFFSET_QUAD_SEGS = 64


def contour_polygon(table: SegmentTable, contour: Contour) -> shapely.Polygon:
    """The closed contour as a polygon through its sample points (x, y)."""
    ring = contour_outline(table, contour)
    return shapely.Polygon(ring).buffer(0) if len(ring) >= 4 else shapely.Polygon()


def contour_outline(table: SegmentTable, contour: Contour) -> np.ndarray:
    """The contour's sample points (x, y) in cutting order, a closed ring for a closed contour."""
    return table.travel_samples(contour.segments, contour.forward)[:, :, :2].reshape(-1, 2)


def _inside(point: np.ndarray, ring: np.ndarray) -> bool:
    """Crossing-number test: is ``point`` strictly inside the closed ring (points on it count as out)?"""
    a, b = ring[:-1], ring[1:]
    straddle = (a[:, 1] > point[1]) != (b[:, 1] > point[1])
    with np.errstate(divide="ignore", invalid="ignore"):
        x = a[:, 0] + (point[1] - a[:, 1]) * (b[:, 0] - a[:, 0]) / (b[:, 1] - a[:, 1])
    if np.any(straddle & (x == point[0])):
        return False
    return bool(np.count_nonzero(straddle & (x > point[0])) % 2)


def nesting_depth(table: SegmentTable, contours: ContourSet) -> tuple[IntArray, IntArray]:
    """For each contour: how many closed contours contain it, and the innermost one (-1: none).

    A contour is inside another when its start point lies strictly inside the other's outline
    (any layer).  Even depth: an outer profile; odd depth: a hole.  Bounding boxes (on a grid)
    pick the candidates; each candidate is settled by a crossing-number test on the outline.
    """
    n = len(contours)
    depth = np.zeros(n, dtype=np.int64)
    parent = np.full(n, -1, dtype=np.int64)
    closed = np.flatnonzero(contours.closed)
    if len(closed) == 0:
        return depth, parent
    seg_lo, seg_hi = table.box
    box_lo = np.minimum.reduceat(take_rows(seg_lo[:, :2], contours.steps), contours.first)  # per contour
    box_hi = np.maximum.reduceat(take_rows(seg_hi[:, :2], contours.steps), contours.first)
    box_size = (box_hi - box_lo).prod(axis=1)
    lo, hi = take_rows(box_lo, closed), take_rows(box_hi, closed)
    starts = contours.start[:, :2]
    point_i, box_j = points_in_boxes(starts, lo, hi)
    container = closed[box_j]
    keep = container != point_i
    point_i, container = point_i[keep], container[keep]
    hits = [_inside(starts[i], contour_outline(table, contours[j])) for i, j in
            zip(point_i.tolist(), container.tolist(), strict=True)]
    point_i, container = point_i[np.array(hits, dtype=bool)], container[np.array(hits, dtype=bool)]
    # a container is larger than what it holds: crossing outlines cannot hold each other (no cycles)
    bigger = box_size[container] > box_size[point_i]
    point_i, container = point_i[bigger], container[bigger]
    if len(point_i) == 0:
        return depth, parent
    np.add.at(depth, point_i, 1)
    pick = np.lexsort((-box_size[container], point_i))  # per contour, the smallest container last
    last = np.r_[point_i[pick][1:] != point_i[pick][:-1], True]
    parent[point_i[pick][last]] = container[pick][last]
    return depth, parent


#: Most grid cells one box may cover before the grid is made coarser.
MAX_CELLS_PER_BOX = 4096


def points_in_boxes(points: np.ndarray, lo: np.ndarray, hi: np.ndarray) -> tuple[IntArray, IntArray]:
    """All (point, box) index pairs with the 2-D point inside the closed box ``[lo, hi]``.

    Points are hashed into square cells about the median box size; each box visits the cells it
    covers (few for typical parts; a sheet-sized box visits many, so the cell grows when a box
    would cover more than :data:`MAX_CELLS_PER_BOX`).  Work is near-linear in points + boxes + pairs.
    """
    if len(points) == 0 or len(lo) == 0:
        return np.zeros(0, dtype=np.int64), np.zeros(0, dtype=np.int64)
    origin = np.minimum(points.min(axis=0), lo.min(axis=0))
    extent = hi - lo
    size = max(float(np.median(extent.max(axis=1))), 1e-9)
    size = max(size, float(extent.max()) / np.sqrt(MAX_CELLS_PER_BOX))
    cell = np.floor((points - origin) / size).astype(np.int64)
    none = np.zeros(len(points), dtype=np.int64)
    keys = cell_keys(cell, none)
    order = np.argsort(keys)
    keys = keys[order]
    first = np.floor((lo - origin) / size).astype(np.int64)
    last = np.floor((hi - origin) / size).astype(np.int64)
    span = last - first + 1  # cells per axis
    count = span[:, 0] * span[:, 1]
    box, k = expand_ranges(np.arange(len(lo)), np.zeros_like(count), count).T  # box, its k-th cell
    cells = np.stack([first[box, 0] + k % span[box, 0], first[box, 1] + k // span[box, 0]], axis=1)
    probe = cell_keys(cells, np.zeros(len(cells), dtype=np.int64))
    a = np.searchsorted(keys, probe, side="left")
    b = np.searchsorted(keys, probe, side="right")
    pairs = expand_ranges(box, a, b)  # (box, position in sorted points)
    box_j, point_i = pairs[:, 0], order[pairs[:, 1]]
    p = take_rows(points, point_i)
    inside = np.all((p >= take_rows(lo, box_j)) & (p <= take_rows(hi, box_j)), axis=1)
    return point_i[inside], box_j[inside]


def offset_length_change(polygon: shapely.Polygon, distance: float) -> float | None:
    """Change of perimeter (mm) when the contour is offset by ``distance`` (mm; > 0 outwards).

    Computed as the difference of two perimeters of the same sampled polygon, so the sampling
    error of the contour largely cancels.  Round joins: the tool centre goes round every corner of
    material on the scrap side and the offset curves meet sharp where material is concave.  None
    when the inward offset leaves nothing (a hole narrower than the kerf).
    """
    if distance == 0 or polygon.is_empty:
        return 0.0
    moved = polygon.buffer(distance, quad_segs=OFFSET_QUAD_SEGS, join_style="round")
    if moved.is_empty:
        return None
    return outline_length(moved) - outline_length(polygon)


def outline_length(shape: shapely.Geometry) -> float:
    """Total length of the outer boundaries of a polygon or of the parts of a multipolygon (mm)."""
    parts = shape.geoms if hasattr(shape, "geoms") else [shape]
    return float(sum(g.exterior.length for g in parts if not g.is_empty))


def _signed_angle(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Signed angle (rad, left turn positive) from directions ``a`` to ``b`` ([..., 2])."""
    cross = a[..., 0] * b[..., 1] - a[..., 1] * b[..., 0]
    dot = a[..., 0] * b[..., 0] + a[..., 1] * b[..., 1]
    return np.arctan2(cross, dot)


def contour_turning(table: SegmentTable, contour: Contour) -> tuple[float, np.ndarray]:
    """Total tangent turning along the smooth parts (rad) and the turning at each corner, for the
    closed contour as traversed (left turns positive).

    A segment's turning is the angle from its start tangent to its first sample chord, through
    every chord, to its end tangent: exact while the tangent turns less than half a turn between
    samples (true for the sample density of the table).  Corners include the last-to-first joint.
    """
    idx, fwd = contour.segments, contour.forward
    pts = table.travel_samples(idx, fwd)[:, :, :2]
    t_in, t_out = (d[:, :2] for d in table.travel_directions(idx, fwd))
    chords = np.diff(pts, axis=1)
    moving = np.linalg.norm(chords, axis=2) > 0
    smooth = 0.0
    for k in range(len(idx)):  # per segment: tangent, chords (skipping repeated samples), tangent
        steps = np.vstack([t_in[k][None, :], chords[k][moving[k]], t_out[k][None, :]])
        smooth += float(_signed_angle(steps[:-1], steps[1:]).sum())
    corners = _signed_angle(t_out, np.roll(t_in, -1, axis=0))
    return smooth, corners


def kerf_length_change(table: SegmentTable, contour: Contour, outward: float) -> float:
    """Exact change of length (mm) of a closed contour offset by ``outward`` mm (negative: inwards).

    With the contour traversed so that it turns left overall (counter-clockwise), an outward offset
    by d is an offset to its right: smooth parts change by d ∫κ ds (their turning), a corner that
    turns left by φ gains a round join of length d φ, and a corner that turns right by φ loses
    2 d tan(φ/2) where the two offset sides meet.  (Steiner: a convex contour grows by 2π d.)
    Valid while the offset curve does not cross itself (features larger than d).
    """
    smooth, corners = contour_turning(table, contour)
    total = smooth + float(corners.sum())
    side = np.sign(total) if total != 0 else 1.0  # +1 counter-clockwise
    d = abs(outward)
    sign = side if outward > 0 else -side  # turning as seen by an offset to the right
    k, phi = sign * smooth, sign * corners
    joins = np.where(phi > 0, d * phi, -2.0 * d * np.tan(np.abs(phi) / 2.0))
    return float(d * k + joins.sum())
