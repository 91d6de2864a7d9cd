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

import numpy as np

from pathlen.geometry import FloatArray, IntArray, take_rows

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
    origin = points.min(axis=0)
    span = points.max(axis=0) - origin
    axes = np.flatnonzero(span > 0)  # coordinates that vary (a flat drawing has two)
    pts = (points[:, axes] - origin[axes]) if len(axes) else np.zeros((n, 1))
    # cells sized to the spacing; crowded cells: fall back to cells one tolerance wide, but never so
    # narrow that cell numbers leave int64 (a tolerance far below the coordinates' rounding)
    floor = float(span.max()) * 2.0**-50 if len(axes) else 0.0
    for width in (max(_cell_width(span[axes], n, tol), floor), max(tol if tol > 0 else 1.0, floor)):
        # int32 cell numbers where they fit (half the memory): pts / width is at most span / width
        small = len(axes) == 0 or float(span[axes].max()) / width < 2.0**31 - 2
        cell = np.empty(pts.shape, dtype=np.int32 if small else np.int64)
        for axis in range(pts.shape[1]):  # a column at a time: no [n, d] temporaries
            cell[:, axis] = np.floor(pts[:, axis] / width)
        keys = cell_keys(cell, group)
        order = np.argsort(keys, kind="stable")
        keys = keys[order]
        if width <= tol or np.diff(np.flatnonzero(np.r_[True, keys[1:] != keys[:-1], True])).max() <= CROWDED:
            break
    # one array reordered at a time (the unordered one freed before the next): the peak stays low
    cell = take_rows(cell, order)
    pts = take_rows(pts, order)
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
    starts = np.flatnonzero(np.r_[True, keys[1:] != keys[:-1]])
    sizes = np.diff(np.r_[starts, len(keys)])
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
    """Component label (the smallest member index) of each of ``n`` items joined by edges a[k]-b[k]."""
    parent = np.arange(n)
    a = np.asarray(a, dtype=np.int64)
    b = np.asarray(b, dtype=np.int64)
    while True:
        pa, pb = parent[a], parent[b]
        differ = pa != pb
        if not differ.any():
            return parent
        lo, hi = np.minimum(pa, pb)[differ], np.maximum(pa, pb)[differ]
        np.minimum.at(parent, hi, lo)
        while True:  # pointer jumping until every item points at its root
            grand = parent[parent]
            if np.array_equal(grand, parent):
                break
            parent = grand
