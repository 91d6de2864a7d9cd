"""Near-linear neighbour search and connected components, numpy only.

:func:`close_pairs` hashes points into a grid of cells at least one tolerance wide, so two points
within the tolerance lie in the same or a neighbouring cell; each point looks at its own cell and,
when it lies within the tolerance of a face, at the "forward" neighbour cells across it (half of
the 26), so every pair is found once.  Work is proportional to
the number of points plus the candidate pairs in touching cells: near-linear for drawings, where
cells hold a handful of segment ends.  :func:`components` labels connected components by
hooking and pointer jumping (a few numpy passes, logarithmic in the component size).
"""

from __future__ import annotations

import itertools
from collections.abc import Callable, Iterator

import numpy as np
from numpy.typing import NDArray

from pathlen.geometry import FloatArray, IntArray, run_starts, take_rows

#: Up to this many points every pair is tested directly (no grid).
FEW_POINTS = 128
#: Most points in one cell before the grid falls back to cells one tolerance wide.
CROWDED = 32
#: Candidate pairs tested at a time (their distances' temporaries stay bounded).
PAIR_BATCH = 1 << 16


def _forward(d: int) -> IntArray:
    """The neighbour offsets in ``d`` dimensions that, with the cell itself, visit each touching pair once."""
    zero = (0,) * d
    return np.array([o for o in itertools.product((-1, 0, 1), repeat=d) if o > zero], dtype=np.int64).reshape(-1, d)


def close_pairs(points: FloatArray, tol: float, group: IntArray | None = None) -> IntArray:
    """Index pairs ``[k, 2]`` (i < j) of points at most ``tol`` apart, and in the same ``group``."""
    n = len(points)
    if n < 2:
        return np.zeros((0, 2), dtype=np.int64)
    group = np.zeros(n, dtype=np.int64) if group is None else np.asarray(group, dtype=np.int64)
    if n <= FEW_POINTS:  # every pair at once (an n x n table): cheaper than a grid for a small drawing
        squared = np.zeros((n, n))
        for axis in range(points.shape[1]):
            c = points[:, axis]
            squared += (c[:, None] - c[None, :]) ** 2
        i, j = np.nonzero(np.triu((squared <= tol * tol) & (group[:, None] == group[None, :]), 1))
        return np.stack([i, j], axis=1).astype(np.int64)
    grid = _Grid(points, tol, group)
    keys, order, width = grid.keys, grid.order, grid.width
    pts = grid.shifted(take_rows(points, order))  # in cell order
    cell = np.empty(pts.shape, dtype=grid.cell_type)
    for axis in range(pts.shape[1]):  # a column at a time: no [n, d] temporaries
        cell[:, axis] = np.floor(pts[:, axis] / width)
    margin = tol / width + 1e-9
    near_low, near_high = np.empty(pts.shape, dtype=bool), np.empty(pts.shape, dtype=bool)
    for axis in range(pts.shape[1]):
        where = pts[:, axis] / width - cell[:, axis]  # position inside the cell, 0 .. 1
        near_low[:, axis], near_high[:, axis] = where < margin, where > 1.0 - margin
    del where
    grp = group[order]

    def near(pairs: IntArray) -> IntArray:
        """Keep candidate pairs (positions in sorted order) within ``tol`` and in one group."""
        d = take_rows(pts, pairs[:, 0]) - take_rows(pts, pairs[:, 1])
        keep = (np.einsum("ij,ij->i", d, d) <= tol * tol) & (grp[pairs[:, 0]] == grp[pairs[:, 1]])
        return pairs[keep]

    def found_pairs(pairs: IntArray) -> IntArray:
        """The pairs within reach as point indices, lower first (:data:`PAIR_BATCH` candidates at a time)."""
        return np.concatenate([np.sort(order[near(pairs[k:k + PAIR_BATCH])], axis=1)
                               for k in range(0, max(len(pairs), 1), PAIR_BATCH)])

    found = [found_pairs(_pairs_in_same_cell(keys))]
    for off in _forward(cell.shape[1]):
        # only points within tol of the cell faces towards that neighbour can have a partner there
        mask = np.ones(n, dtype=bool)
        for axis, step in enumerate(off.tolist()):
            if step:
                mask &= near_high[:, axis] if step > 0 else near_low[:, axis]
        rows = np.flatnonzero(mask)
        probe = cell_keys(cell[rows] + off, grp[rows])
        lo = np.searchsorted(keys, probe, side="left")
        hi = np.searchsorted(keys, probe, side="right")
        found.append(found_pairs(expand_ranges(rows, lo, hi)))
    return np.concatenate(found)


class _Frame:
    """Where the points lie: ``shifted(p)`` gives the varying coordinates of ``p`` less the points' least
    (one column of zeros when none varies)."""

    def __init__(self, points: FloatArray) -> None:
        self.origin = points.min(axis=0)
        self.span = points.max(axis=0) - self.origin
        self.axes = np.flatnonzero(self.span > 0)  # coordinates that vary (a flat drawing has two)

    def shifted(self, points: FloatArray) -> FloatArray:
        """``points``' varying coordinates less the frame's origin."""
        return (points[:, self.axes] - self.origin[self.axes]) if len(self.axes) else np.zeros((len(points), 1))


class _Grid(_Frame):
    """Points hashed into cells at least ``tol`` wide (with their group): ``keys`` sorted and ``order`` the
    points in that order (a cell's points in their own order when ``stable``).  A point's cell is
    ``floor(shifted(point) / width)``: its varying coordinates
    less the least, over the width (``cell_type`` holds every cell number).  Memory: the keys and the
    order (the keys are made :data:`GRID_RUN` points at a time)."""

    def __init__(self, points: FloatArray, tol: float, group: IntArray, stable: bool = True) -> None:
        super().__init__(points)
        n, span = len(points), self.span
        # cells sized to the spacing; crowded cells: fall back to cells one tolerance wide, but never so
        # narrow that cell numbers leave int64 (a tolerance far below the coordinates' rounding)
        floor = float(span.max()) * 2.0**-50 if len(self.axes) else 0.0
        for width in (max(_cell_width(span[self.axes], n, tol), floor), max(tol if tol > 0 else 1.0, floor)):
            # int32 cell numbers where they fit (half the memory): pts / width is at most span / width
            small = len(self.axes) == 0 or float(span[self.axes].max()) / width < 2.0**31 - 2
            self.cell_type = np.int32 if small else np.int64
            self.keys = np.empty(n, dtype=np.uint64)
            for a in range(0, n, GRID_RUN):
                cell = np.floor(self.shifted(points[a:a + GRID_RUN]) / width).astype(self.cell_type)
                self.keys[a:a + GRID_RUN] = cell_keys(cell, group[a:a + GRID_RUN])
            self.order = np.argsort(self.keys, kind="stable" if stable else None)
            if not stable and n < 2**31:  # positions in half the memory where they fit (kept as they are
                # for close_pairs, whose pairs come out of them as int64)
                self.order = self.order.astype(np.int32)
            self.keys.sort()  # in place: the same sorted keys without a second array
            # no cell holds more than CROWDED points: the keys (sorted) never equal the one CROWDED places on
            if width <= tol or len(self.keys) <= CROWDED or not np.any(self.keys[CROWDED:] == self.keys[:-CROWDED]):
                break
        self.width = width


#: Points whose cell keys are made at a time.
GRID_RUN = 1 << 16
#: Queries of :func:`nearest_partners` looked up at a time.
QUERY_BATCH = 1 << 14


def nearest_partners(points: FloatArray, tol: float, group: IntArray, query: IntArray,
                     refused: Callable[[IntArray, IntArray], NDArray[np.bool_]] | None = None
                     ) -> tuple[IntArray, IntArray]:
    """Each point of ``query`` (indices into ``points``) with its nearest other point at most ``tol`` away
    in the same ``group`` (ties: the lower index), pairs ``refused(src, dst)`` left out: ``(src, dst)``
    for the queries that have one, in no particular order (int32 where the indices fit).  The same pairs
    within reach as :func:`close_pairs`, each point's nearest by the Euclidean distance of its full
    coordinates.  Up to :data:`FEW_POINTS` points every query is paired with every point (no grid).

    Memory: the grid (cell keys and order, two numbers per point) and, whatever the crowding, at
    most :data:`PAIR_BATCH` candidate pairs at a time; no list of every pair within reach."""
    index = np.int32 if len(points) < 2**31 else np.int64
    none = np.zeros(0, dtype=index)
    if len(points) < 2 or len(query) == 0:
        return none, none
    group = np.asarray(group)
    if len(points) <= FEW_POINTS:
        query = np.asarray(query)
        best_dist, best = np.full(len(query), np.inf), np.full(len(query), -1, dtype=np.int64)
        frame = _Frame(points)
        pts = frame.shifted(points)
        squared = np.zeros((len(query), len(points)))
        for axis in range(pts.shape[1]):
            squared += (pts[query, axis][:, None] - pts[None, :, axis]) ** 2
        # a table of every query and point; _take_nearest's own test decides on the pairs (a hair) within reach
        local, dst = np.nonzero(squared <= (tol * (1.0 + 1e-9)) ** 2)
        _take_nearest(points, frame, tol, group, query, local, dst, refused, best_dist, best)
        has = best >= 0
        return query[has].astype(index), best[has].astype(index)
    grid = _Grid(points, tol, group, stable=False)  # a cell's order does not matter here (ties go by index)
    width, keys, order = grid.width, grid.keys, grid.order
    margin = tol / width + 1e-9
    dims = max(len(grid.axes), 1)
    asked = np.zeros(len(points), dtype=bool)
    asked[query] = True
    query = order[asked[order]]  # in cell order: each batch's probes fall close together in the sorted keys
    del asked
    src_out, dst_out, found = np.empty(len(query), dtype=index), np.empty(len(query), dtype=index), 0
    for q0 in range(0, len(query), QUERY_BATCH):
        src_all = query[q0:q0 + QUERY_BATCH]
        best_dist, best = np.full(len(src_all), np.inf), np.full(len(src_all), -1, dtype=np.int64)
        pts = grid.shifted(take_rows(points, src_all))
        cell = np.floor(pts / width).astype(np.int64)
        where = pts / width - cell  # position inside the cell, 0 .. 1
        near_low, near_high = where < margin, where > 1.0 - margin
        src_group = group[src_all]
        for off in itertools.product((-1, 0, 1), repeat=dims):
            # only queries within tol of the cell faces towards a neighbour can have a partner there
            mask = np.ones(len(src_all), dtype=bool)
            for axis, step in enumerate(off):
                if step:
                    mask &= near_high[:, axis] if step > 0 else near_low[:, axis]
            rows = np.flatnonzero(mask)
            probe = cell_keys(cell[rows] + np.array(off), src_group[rows])
            lo = np.searchsorted(keys, probe, side="left")
            hi = np.searchsorted(keys, probe, side="right")
            for part in _bounded_runs(lo, hi, PAIR_BATCH):
                pairs = expand_ranges(rows[part], lo[part], hi[part])
                _take_nearest(points, grid, tol, group, src_all, pairs[:, 0], order[pairs[:, 1]], refused, best_dist,
                              best)
        has = best >= 0
        k = int(np.count_nonzero(has))
        src_out[found:found + k], dst_out[found:found + k] = src_all[has], best[has]
        found += k
    return src_out[:found], dst_out[:found]


def _take_nearest(points: FloatArray, frame: _Frame, tol: float, group: IntArray, src_all: IntArray, local: IntArray,
                  dst: IntArray, refused: Callable[[IntArray, IntArray], NDArray[np.bool_]] | None,
                  best_dist: FloatArray, best: IntArray) -> None:
    """Of the candidate pairs (query ``src_all[local]``, point ``dst``), those within ``tol`` (in the frame's
    shifted coordinates, as :func:`close_pairs` tests), in one group, not a point with itself and not
    refused; each query's nearest of them taken into ``best_dist``, ``best`` (by ``local``)."""
    src = src_all[local]
    d = frame.shifted(take_rows(points, src)) - frame.shifted(take_rows(points, dst))
    keep = (np.einsum("ij,ij->i", d, d) <= tol * tol) & (group[dst] == group[src]) & (dst != src)
    if refused is not None:
        keep[keep] = ~refused(src[keep], dst[keep])
    local, src, dst = local[keep], src[keep], dst[keep]
    dist = np.linalg.norm(take_rows(points, src) - take_rows(points, dst), axis=1)
    _keep_nearest(best_dist, best, local, dist, dst)


def _bounded_runs(lo: IntArray, hi: IntArray, limit: int) -> Iterator[slice]:
    """Consecutive slices of the ranges ``[lo, hi)`` holding at most ``limit`` items together (at least one range)."""
    total = np.cumsum(hi - lo)
    start = 0
    while start < len(lo):
        before = int(total[start - 1]) if start else 0
        stop = max(int(np.searchsorted(total, before + limit, side="right")), start + 1)
        yield slice(start, stop)
        start = stop


def _keep_nearest(best_dist: FloatArray, best: IntArray, at: IntArray, dist: FloatArray, dst: IntArray) -> None:
    """Where ``dist`` (to ``dst``) beats ``best_dist[at]`` (ties: the lower ``dst``), take it, in place."""
    if len(at) == 0:
        return
    pick = np.lexsort((dst, dist, at))
    first = pick[run_starts(at[pick])]
    at, dist, dst = at[first], dist[first], dst[first]
    better = (dist < best_dist[at]) | ((dist == best_dist[at]) & (dst < best[at]))
    best_dist[at[better]], best[at[better]] = dist[better], dst[better]


def _cell_width(span: FloatArray, n: int, tol: float) -> float:
    """A cell a quarter of the mean spacing of ``n`` points over ``span`` (at least ``tol``, at most
    256 ``tol``): few points share a cell, and only points within ``tol`` of a face look across it."""
    if len(span) == 0:
        return tol if tol > 0 else 1.0
    spacing = float(np.prod(span) / n) ** (1.0 / len(span))
    if tol <= 0:
        return max(spacing / 4.0, 1e-300)
    return max(tol, min(spacing / 4.0, 256.0 * tol))


def cell_keys(cell: IntArray, group: IntArray) -> np.ndarray:
    """One integer per (group, cell): exact while the grid spans under 2**21 cells per axis.

    Larger grids and the group fold in as a hash; a collision only adds candidate pairs, which
    the distance and group tests remove, so results stay exact.
    """
    key = group.astype(np.uint64) * np.uint64(0x9E3779B97F4A7C15)
    for axis in range(cell.shape[1]):
        key ^= (cell[:, axis] & 0x1FFFFF).astype(np.uint64) << np.uint64(21 * axis)
    return key


def _pairs_in_same_cell(keys: IntArray) -> IntArray:
    """Pairs (i, j), i < j, of positions with equal keys (``keys`` sorted)."""
    starts = np.flatnonzero(run_starts(keys))
    sizes = np.diff(np.append(starts, len(keys)))
    out = []
    for size in np.unique(sizes[sizes > 1]):
        firsts = starts[sizes == size]
        i, j = np.triu_indices(size, k=1)
        out.append(np.stack([(firsts[:, None] + i).ravel(), (firsts[:, None] + j).ravel()], axis=1))
    return np.concatenate(out) if out else np.zeros((0, 2), dtype=np.int64)


def expand_ranges(rows: IntArray, lo: IntArray, hi: IntArray) -> IntArray:
    """All pairs (rows[k], m) for m in [lo[k], hi[k])."""
    count = hi - lo
    total = int(count.sum())
    if total == 0:
        return np.zeros((0, 2), dtype=np.int64)
    first = np.repeat(rows, count)
    offsets = np.arange(total) - np.repeat(np.cumsum(count) - count, count)
    return np.stack([first, np.repeat(lo, count) + offsets], axis=1)


def components(n: int, a: IntArray, b: IntArray) -> IntArray:
    """Component label (the smallest member index) of each of ``n`` items joined by edges a[k]-b[k]; int32
    labels (half the memory of every pass) while ``n`` fits."""
    kind = np.int32 if n < 2**31 else np.int64
    parent = np.arange(n, dtype=kind)
    a = np.asarray(a, dtype=kind)
    b = np.asarray(b, dtype=kind)
    while True:
        joined = False
        for k in range(0, len(a), GRID_RUN):  # edges hooked a run at a time: their temporaries stay small
            pa, pb = parent[a[k:k + GRID_RUN]], parent[b[k:k + GRID_RUN]]
            differ = pa != pb
            if differ.any():
                joined = True
                np.minimum.at(parent, np.maximum(pa, pb)[differ], np.minimum(pa, pb)[differ])
        if not joined:
            return parent
        while True:  # pointer jumping until every item points at its root
            grand = parent[parent]
            if np.array_equal(grand, parent):
                break
            parent = grand
