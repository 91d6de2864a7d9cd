"""Which closed contours lie inside which, and kerf offsets of closed contours (shapely geometry).

Polygons here are built from the segment table's sample points: good for containment and for the
*change* of length under an offset, never for a length itself (lengths come from ``measure``).
"""

from __future__ import annotations

import numpy as np
import shapely

from pathlen.contours import Contour, ContourSet, equal_rows
from pathlen.geometry import IntArray, distinct, take_rows
from pathlen.proximity import cell_keys, expand_ranges
from pathlen.segments import CURVE_SAMPLES, SegmentTable

#: Segments per quarter circle of the round joins that shapely's buffer draws.
OFFSET_QUAD_SEGS = 64


def contour_polygon(table: SegmentTable, contour: Contour) -> shapely.Polygon:
    """The closed contour as a polygon through its sample points (x, y)."""
    ring = contour_outline(table, contour)
    return shapely.Polygon(ring).buffer(0) if len(ring) >= 4 else shapely.Polygon()


def contour_outline(table: SegmentTable, contour: Contour) -> np.ndarray:
    """The contour's sample points (x, y) in cutting order, a closed ring for a closed contour."""
    return table.travel_samples(contour.segments, contour.forward)[:, :, :2].reshape(-1, 2)


def nesting_depth(table: SegmentTable, contours: ContourSet) -> tuple[IntArray, IntArray]:
    """For each contour: how many closed contours contain it, and the innermost one (-1: none).

    A contour is inside another when its start point lies strictly inside the other's outline
    (any layer).  Even depth: an outer profile; odd depth: a hole.  Bounding boxes (on a grid)
    pick the candidates; each candidate is settled by a crossing-number test on the outline.
    Contours drawn more than once (the same box, start and closedness) are tested once for the
    class and counted once per copy: a stack of copies costs what one does.
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
    starts = contours.start[:, :2]
    order, new = equal_rows([contours.closed, *box_lo.T, *box_hi.T, *starts.T])
    rep = order[new]  # a contour of each class of equal boxes and starts
    cls = np.empty(len(order), dtype=np.int64)
    cls[order] = np.cumsum(new) - 1
    copies = np.diff(np.r_[np.flatnonzero(new), len(order)])
    shut = rep[contours.closed[rep]]  # one closed contour per class
    point_i, box_j = points_in_boxes(starts[rep], take_rows(box_lo, shut), take_rows(box_hi, shut))
    point_i, container = rep[point_i], shut[box_j]
    # a container is larger than what it holds: crossing outlines cannot hold each other (no cycles);
    # equal boxes (a part drawn twice) hold nothing of each other: settled before any outline test
    bigger = box_size[container] > box_size[point_i]
    point_i, container = point_i[bigger], container[bigger]
    hits = _starts_inside(table, contours, starts, point_i, container)
    point_i, container = point_i[hits], container[hits]
    if len(point_i) == 0:
        return depth, parent
    class_depth = np.zeros(len(rep), dtype=np.int64)
    np.add.at(class_depth, cls[point_i], copies[cls[container]])
    class_parent = np.full(len(rep), -1, dtype=np.int64)
    pick = np.lexsort((-box_size[container], point_i))  # per contour, the smallest container last
    last = np.r_[point_i[pick][1:] != point_i[pick][:-1], True]
    class_parent[cls[point_i[pick][last]]] = container[pick][last]
    return class_depth[cls], class_parent[cls]


#: Point-in-outline tests (pair x outline edge) per numpy pass.
EDGE_TESTS_PER_PASS = 4_000_000


def _starts_inside(table: SegmentTable, contours: ContourSet, starts: np.ndarray, point_i: IntArray,
                   container: IntArray) -> np.ndarray:
    """Per pair: is the start of contour ``point_i`` strictly inside the outline of contour ``container``?

    Crossing-number test against the outline's sample chords (points on the outline count as
    outside), every pair at once in passes of :data:`EDGE_TESTS_PER_PASS` edge tests.
    """
    if len(point_i) == 0:
        return np.zeros(0, dtype=bool)
    k = CURVE_SAMPLES - 1
    # outlines of the containers only (usually few of all contours), their steps gathered together
    holders, container = distinct(container, return_inverse=True)
    size = contours.size[holders]
    first = np.cumsum(size) - size
    _, rows = expand_ranges(np.zeros(len(holders), dtype=np.int64), contours.first[holders],
                            contours.first[holders] + size).T
    pts = table.travel_samples(contours.steps[rows], contours.forward[rows])[:, :, :2]
    del rows
    ax, ay = np.ascontiguousarray(pts[:, :-1, 0]).ravel(), np.ascontiguousarray(pts[:, :-1, 1]).ravel()
    bx, by = np.ascontiguousarray(pts[:, 1:, 0]).ravel(), np.ascontiguousarray(pts[:, 1:, 1]).ravel()
    del pts
    edge_lo, edge_n = k * first, k * size
    hits = np.zeros(len(point_i), dtype=bool)
    point_x, point_y = starts[point_i, 0], starts[point_i, 1]
    per_pair = edge_n[container]
    cuts = np.searchsorted(np.cumsum(per_pair), np.arange(EDGE_TESTS_PER_PASS, int(per_pair.sum()) + 1,
                                                          EDGE_TESTS_PER_PASS))
    for lo, hi in zip(np.r_[0, cuts], np.r_[cuts, len(point_i)], strict=True):
        if hi <= lo:
            continue
        first = edge_lo[container[lo:hi]]
        pair, edge = expand_ranges(np.arange(lo, hi), first, first + edge_n[container[lo:hi]]).T
        py = point_y[pair]
        straddle = np.flatnonzero((ay[edge] > py) != (by[edge] > py))  # most edges do not: the rest skip them
        pair, edge, py = pair[straddle], edge[straddle], py[straddle]
        px = point_x[pair]
        x = ax[edge] + (py - ay[edge]) * (bx[edge] - ax[edge]) / (by[edge] - ay[edge])
        crossings = np.bincount(pair - lo, weights=x > px, minlength=hi - lo)
        on = np.bincount(pair - lo, weights=x == px, minlength=hi - lo)
        hits[lo:hi] = (crossings.astype(np.int64) % 2 == 1) & (on == 0)
    return hits


#: Most grid cells one box may cover before the grid is made coarser.
MAX_CELLS_PER_BOX = 4096


def _grid_pairs(points: np.ndarray, origin: np.ndarray, size: float, first: IntArray, last: IntArray
                ) -> tuple[IntArray, IntArray]:
    """(box, point) candidates: points hashed into square cells of ``size``; each box (cells ``first``
    to ``last``) visits the cells it covers."""
    cell = np.floor((points - origin) / size).astype(np.int64)
    keys = cell_keys(cell, np.zeros(len(points), dtype=np.int64))
    order = np.argsort(keys)
    keys = keys[order]
    span = last - first + 1  # cells per axis
    count = span[:, 0] * span[:, 1]
    box, k = expand_ranges(np.arange(len(first)), np.zeros_like(count), count).T  # box, its k-th cell
    cells = np.stack([first[box, 0] + k % span[box, 0], first[box, 1] + k // span[box, 0]], axis=1)
    probe = cell_keys(cells, np.zeros(len(cells), dtype=np.int64))
    a = np.searchsorted(keys, probe, side="left")
    b = np.searchsorted(keys, probe, side="right")
    pairs = expand_ranges(box, a, b)  # (box, position in sorted points)
    return pairs[:, 0], order[pairs[:, 1]]


def points_in_boxes(points: np.ndarray, lo: np.ndarray, hi: np.ndarray) -> tuple[IntArray, IntArray]:
    """All (point, box) index pairs with the 2-D point inside the closed box ``[lo, hi]``.

    Points are hashed into square cells of the median box size; each box visits the cells it covers
    (few for typical parts).  A box that would cover more than :data:`MAX_CELLS_PER_BOX` cells (a
    sheet around everything) takes the points in its x-range from one sort instead, so the work does
    not depend on the largest box: near-linear in points + boxes + the candidates in wide boxes'
    x-ranges.
    """
    if len(points) == 0 or len(lo) == 0:
        return np.zeros(0, dtype=np.int64), np.zeros(0, dtype=np.int64)
    origin = np.minimum(points.min(axis=0), lo.min(axis=0))
    extent = hi - lo
    reach = float(max(points.max(axis=0).max(), hi.max()) - origin.min())
    size = max(float(np.median(extent.max(axis=1))), reach / 2**20, 1e-9)  # cell numbers stay small
    first = np.floor((lo - origin) / size)
    last = np.floor((hi - origin) / size)
    cover = (last[:, 0] - first[:, 0] + 1) * (last[:, 1] - first[:, 1] + 1)  # float: no overflow
    big = cover > MAX_CELLS_PER_BOX
    small = np.flatnonzero(~big)
    box_j, point_i = _grid_pairs(points, origin, size, first[small].astype(np.int64), last[small].astype(np.int64))
    box_j = small[box_j]
    if big.any():  # boxes over many cells: the points in their x-range, by one sort
        wide = np.flatnonzero(big)
        by_x = np.argsort(points[:, 0], kind="stable")
        xs = points[by_x, 0]
        a = np.searchsorted(xs, lo[wide, 0], side="left")
        b = np.searchsorted(xs, hi[wide, 0], side="right")
        pairs = expand_ranges(wide, a, b)
        box_j = np.concatenate([box_j, pairs[:, 0]])
        point_i = np.concatenate([point_i, by_x[pairs[:, 1]]])
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
    return float(outline_lengths(np.array([shape], dtype=object))[0])


def outline_lengths(shapes: np.ndarray) -> np.ndarray:
    """:func:`outline_length` of every geometry of an array (mm)."""
    parts, index = shapely.get_parts(shapes, return_index=True)
    lengths = shapely.length(shapely.get_exterior_ring(parts)) if len(parts) else np.zeros(0)
    return np.bincount(index, weights=lengths, minlength=len(shapes))


def _signed_angle(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Signed angle (rad, left turn positive) from directions ``a`` to ``b`` ([..., 2])."""
    cross = a[..., 0] * b[..., 1] - a[..., 1] * b[..., 0]
    dot = a[..., 0] * b[..., 0] + a[..., 1] * b[..., 1]
    return np.arctan2(cross, dot)


def segment_turning(table: SegmentTable, contour: Contour) -> tuple[np.ndarray, np.ndarray]:
    """Per segment of the contour as traversed: the tangent turning along it (rad) and the turning
    at the corner after it (to the next segment; the last to the first), left turns positive.

    A segment's turning is the angle from its start tangent to its first sample chord, through
    every chord, to its end tangent: exact while the tangent turns less than half a turn between
    samples (true for the sample density of the table).  Corners include the last-to-first joint.
    """
    size = np.array([len(contour.segments)])
    return steps_turning(table, contour.segments, contour.forward, np.zeros(1, dtype=np.int64), size)


def steps_turning(table: SegmentTable, rows: IntArray, forward: np.ndarray, first: IntArray, size: IntArray,
                  samples: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray]:
    """:func:`segment_turning` for many contours at once: ``rows`` contour after contour, contour k
    being ``rows[first[k] : first[k] + size[k]]``; corners wrap round within each contour.
    ``samples``: the rows' travel samples, where the caller has them already."""
    pts = (table.travel_samples(rows, forward) if samples is None else samples)[:, :, :2]
    t_in, t_out = (d[:, :2] for d in table.travel_directions(rows, forward))
    chords = np.diff(pts, axis=1)
    steps = np.concatenate([t_in[:, None], chords, t_out[:, None]], axis=1)  # [k, samples + 1, 2]
    # a repeated sample (zero chord) has no direction: it keeps the one before it
    moving = np.linalg.norm(steps, axis=2) > 0
    moving[:, 0] = True
    last = np.maximum.accumulate(np.where(moving, np.arange(steps.shape[1]), 0), axis=1)
    steps = np.take_along_axis(steps, last[:, :, None], axis=1)
    smooth = _signed_angle(steps[:, :-1], steps[:, 1:]).sum(axis=1)
    nxt = np.arange(len(rows)) + 1
    ends = first + size - 1
    nxt[ends[size > 0]] = first[size > 0]  # the last step's corner is to its contour's first
    corners = _signed_angle(t_out, t_in[nxt]) if len(rows) else np.zeros(0)
    return smooth, corners


def kerf_length_change(table: SegmentTable, contour: Contour, outward: float) -> float:
    """Exact change of length (mm) of a closed contour offset by ``outward`` mm (negative: inwards).

    With the contour traversed so that it turns left overall (counter-clockwise), an outward offset
    by d is an offset to its right: smooth parts change by d ∫κ ds (their turning), a corner that
    turns left by φ gains a round join of length d φ, and a corner that turns right by φ loses
    2 d tan(φ/2) where the two offset sides meet.  (Steiner: a convex contour grows by 2π d.)
    Valid while the offset curve does not cross itself (features larger than d).
    """
    smooth, corners = segment_turning(table, contour)
    one = np.zeros(len(smooth), dtype=np.int64)
    return float(kerf_changes_from_turning(smooth, corners, one, np.array([outward], dtype=float))[0])


def kerf_changes_from_turning(smooth: np.ndarray, corners: np.ndarray, contour_of_step: IntArray,
                              outward: np.ndarray) -> np.ndarray:
    """:func:`kerf_length_change` of many closed contours at once, from their steps' turning
    (:func:`steps_turning`): ``contour_of_step`` numbers each step's contour, ``outward`` is per
    contour (mm, negative: inwards)."""
    n = len(outward)
    total = np.bincount(contour_of_step, weights=smooth + corners, minlength=n)
    side = np.where(total != 0, np.sign(total), 1.0)  # +1 counter-clockwise
    d = np.abs(outward)[contour_of_step]
    sign = np.where(outward > 0, side, -side)[contour_of_step]  # turning as seen by an offset to the right
    k, phi = sign * smooth, sign * corners
    joins = np.where(phi > 0, d * phi, -2.0 * d * np.tan(np.abs(phi) / 2.0))
    return np.bincount(contour_of_step, weights=d * k + joins, minlength=n)
