"""Near-linear neighbour search and connected components, numpy only.

:func:`close_pairs` hashes points into a grid of cells one tolerance wide, so two points within
the tolerance lie in the same or a neighbouring cell; each point looks only at its own and the 13
"forward" neighbour cells (half of the 26), so every pair is found once.  Work is proportional to
the number of points plus the candidate pairs in touching cells: near-linear for drawings, where
cells hold a handful of segment ends.  :func:`components` labels connected components by
hooking and pointer jumping (a few numpy passes, logarithmic in the component size).
"""

from __future__ import annotations

import itertools

import numpy as np

from pathlen.geometry import FloatArray, IntArray

#: the 13 neighbour offsets that, with the cell itself, visit each touching pair of cells once
_FORWARD = np.array([o for o in itertools.product((-1, 0, 1), repeat=3) if o > (0, 0, 0)], dtype=np.int64)


def close_pairs(points: FloatArray, tol: float, group: IntArray | None = None) -> IntArray:
    """Index pairs ``[k, 2]`` (i < j) of points at most ``tol`` apart, and in the same ``group``."""
    n = len(points)
    if n < 2:
        return np.zeros((0, 2), dtype=np.int64)
    group = np.zeros(n, dtype=np.int64) if group is None else np.asarray(group, dtype=np.int64)
    width = tol if tol > 0 else 1.0
    cell = np.floor((points - points.min(axis=0)) / width).astype(np.int64)
    keys = _cell_keys(cell, group)
    order = np.argsort(keys, kind="stable")
    keys, cell, grp = keys[order], cell[order], group[order]
    sorted_points = points[order]

    def near(pairs: IntArray) -> IntArray:
        """Keep candidate pairs (positions in sorted order) within ``tol`` and in one group."""
        d = sorted_points[pairs[:, 0]] - sorted_points[pairs[:, 1]]
        keep = (np.einsum("ij,ij->i", d, d) <= tol * tol) & (grp[pairs[:, 0]] == grp[pairs[:, 1]])
        return pairs[keep]

    found = [near(_pairs_in_same_cell(keys))]
    flat = not cell[:, 2].any()  # a 2-D drawing: neighbours above and below are empty
    rows = np.arange(n)
    for off in _FORWARD[_FORWARD[:, 2] == 0] if flat else _FORWARD:
        probe = _cell_keys(cell + off, grp)
        lo = np.searchsorted(keys, probe, side="left")
        hi = np.searchsorted(keys, probe, side="right")
        found.append(near(_expand(rows, lo, hi)))
    return np.sort(order[np.concatenate(found)], axis=1)


def _cell_keys(cell: IntArray, group: IntArray) -> np.ndarray:
    """One integer per (group, cell): exact while the grid spans under 2**20 cells per axis.

    Larger grids and the group fold in as a hash; a collision only adds candidate pairs, which
    the distance and group tests remove, so results stay exact.
    """
    c = (cell & 0xFFFFF).astype(np.uint64)
    mixed = group.astype(np.uint64) * np.uint64(0x9E3779B97F4A7C15)
    return mixed ^ (c[:, 0] << np.uint64(40)) ^ (c[:, 1] << np.uint64(20)) ^ c[:, 2]


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


def _expand(rows: IntArray, lo: IntArray, hi: IntArray) -> IntArray:
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
