"""Cutting order: which contour next, so the head travels little and holes come before their part.

Each contour is entered at its pierce point and left at its last point (the same point for a
closed contour; an open contour may be cut either way round).  The order starts at ``home`` and
is built by nearest neighbour among the contours that are *ready* (every contour inside them is
done: holes before the outer profile, or a part falls out before its holes are cut), then
improved by 2-opt (reverse a stretch of the order when that shortens it and keeps every hole
before its container) until no move helps.  Long jobs use a window of the nearest few positions,
so a pass costs ``O(n · window)``.  The file's own order is kept when it is valid and shorter.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.spatial import cKDTree

from pathlen.geometry import FloatArray, IntArray, take_rows
from pathlen.proximity import expand_ranges

#: Largest number of contours for which 2-opt compares every pair of positions.
FULL_2OPT = 400
#: Positions compared by windowed 2-opt on longer jobs.
WINDOW = 6
#: Most rounds of windowed 2-opt on longer jobs (each applies every non-overlapping improving move).
WINDOW_ROUNDS = 40
#: Long jobs stop 2-opt when a round shortens the rapids by less than this fraction.
SETTLED = 1e-3
#: Largest job started by nearest neighbour; longer ones start from a Hilbert-curve order,
#: which costs O(n log n) instead of a k-d tree query per contour.
NEAREST_NEIGHBOUR_MAX = 4000


@dataclass(frozen=True)
class Tour:
    order: IntArray  # contour indices in cutting order
    reverse: np.ndarray  # per contour (indexed by contour): cut from its end to its start
    rapid_moves: FloatArray  # length of each rapid move, mm (home to first pierce, then between contours)

    @property
    def rapid_length(self) -> float:
        return float(self.rapid_moves.sum())


def plan_tour(start: FloatArray, end: FloatArray, closed: np.ndarray, parent: IntArray,
              home: tuple[float, float] = (0.0, 0.0)) -> Tour:
    """Order contours (2-D points ``start``/``end`` [n, 2], ``parent`` = innermost container or -1)."""
    n = len(start)
    home_pt = np.asarray(home, dtype=float)
    if n == 0:
        return Tour(np.zeros(0, dtype=np.int64), np.zeros(0, dtype=bool), np.zeros(0))
    if n <= NEAREST_NEIGHBOUR_MAX:
        order = _nearest_neighbour(start, parent, home_pt)
    else:
        order = _holes_first(_hilbert_order(start), parent)
    order = _two_opt(start, order, parent, home_pt)
    best = _orient(start, end, closed, order, home_pt)
    file_order = np.arange(n)
    if _valid(file_order, parent):
        naive = _orient(start, end, closed, file_order, home_pt)
        if naive.rapid_length < best.rapid_length:
            best = naive
    return best


def tour_length(points: FloatArray, order: IntArray, home: FloatArray) -> float:
    """Open path from ``home`` through ``points[order]`` (mm)."""
    path = np.vstack([home[None, :], take_rows(points, order)])
    return float(np.linalg.norm(np.diff(path, axis=0), axis=1).sum())


def _children_count(parent: IntArray) -> IntArray:
    n = len(parent)
    return np.bincount(parent[parent >= 0], minlength=n) if n else np.zeros(0, dtype=np.int64)


def _valid(order: IntArray, parent: IntArray) -> bool:
    pos = np.empty(len(order), dtype=np.int64)
    pos[order] = np.arange(len(order))
    has = parent >= 0
    return bool(np.all(pos[has] < pos[parent[has]]))


def _nearest_neighbour(points: FloatArray, parent: IntArray, home: FloatArray) -> IntArray:
    """Greedy: from the current point, the nearest contour that is ready (a k-d tree, lazily skipping)."""
    n = len(points)
    tree = cKDTree(points)
    waiting = _children_count(parent).tolist()
    parent_l = parent.tolist()
    done = bytearray(n)
    order: list[int] = []
    at = home
    while len(order) < n:
        k = 8
        pick = -1
        while pick < 0:
            _, idx = tree.query(at, k=min(k, n))
            for i in np.atleast_1d(idx).tolist():
                if i < n and not done[i] and waiting[i] == 0:
                    pick = i
                    break
            if pick < 0:
                if k >= n:  # nothing ready near: the first ready one anywhere (any left, if none is ready)
                    pick = next((i for i in range(n) if not done[i] and waiting[i] == 0),
                                next(i for i in range(n) if not done[i]))
                k *= 4
        done[pick] = 1
        order.append(pick)
        if parent_l[pick] >= 0:
            waiting[parent_l[pick]] -= 1
        at = points[pick]
    return np.array(order, dtype=np.int64)


def _hilbert_order(points: FloatArray, bits: int = 16) -> IntArray:
    """Points sorted along a Hilbert curve over their bounding box (nearby points stay nearby)."""
    lo = points.min(axis=0)
    span = max(float((points.max(axis=0) - lo).max()), 1e-300)
    side = 1 << bits
    x = np.minimum(((points[:, 0] - lo[0]) / span * (side - 1)).astype(np.int64), side - 1)
    y = np.minimum(((points[:, 1] - lo[1]) / span * (side - 1)).astype(np.int64), side - 1)
    d = np.zeros(len(points), dtype=np.int64)
    s = side >> 1
    while s > 0:  # the classic bit-by-bit index, vectorised over all points
        rx = (x & s) > 0
        ry = (y & s) > 0
        d += s * s * ((3 * rx) ^ ry)
        flip = ~ry
        swap_x = np.where(flip & rx, s - 1 - x, x)
        swap_y = np.where(flip & rx, s - 1 - y, y)
        x, y = np.where(flip, swap_y, swap_x), np.where(flip, swap_x, swap_y)
        s >>= 1
    return np.argsort(d, kind="stable")


def _holes_first(order: IntArray, parent: IntArray) -> IntArray:
    """``order`` with each container moved to just after its last remaining hole."""
    if not (parent >= 0).any():
        return order
    waiting = _children_count(parent).tolist()
    parent_l = parent.tolist()
    held = bytearray(len(order))
    out: list[int] = []
    for i in order.tolist():
        if waiting[i]:
            held[i] = 1
            continue
        while i >= 0:
            out.append(i)
            p = parent_l[i]
            if p < 0:
                break
            waiting[p] -= 1
            i = p if (waiting[p] == 0 and held[p]) else -1
    return np.array(out, dtype=np.int64)


def _two_opt(points: FloatArray, order: IntArray, parent: IntArray, home: FloatArray) -> IntArray:
    """Reverse stretches of the order while that shortens the open path and keeps holes first.

    Path position 0 is home and position k the k-th contour; reversing positions i+1 .. j swaps
    the edges (i, i+1) and (j, j+1) for (i, j) and (i+1, j+1) (no edge after the last position).
    Every round scores the moves of the positions still in play at once and applies the best
    ones that do not overlap; only positions near an applied move stay in play for the next round.
    """
    n = len(order)
    if n < 3:
        return order
    width = n if n <= FULL_2OPT else WINDOW
    rounds = 10 * n if n <= FULL_2OPT else WINDOW_ROUNDS
    order = order.copy()
    nested = bool((parent >= 0).any())
    in_play = np.ones(n - 1, dtype=bool)
    steps = np.arange(2, width + 1)[None, :]
    for _ in range(rounds):
        i = np.flatnonzero(in_play)
        if len(i) == 0:
            break
        px = np.r_[home[0], points[order, 0]]
        py = np.r_[home[1], points[order, 1]]
        edge = np.hypot(np.diff(px), np.diff(py))
        j = i[:, None] + steps
        valid = j <= n
        jc = np.minimum(j, n)
        after = np.minimum(j + 1, n)
        ic, i1 = i[:, None], i[:, None] + 1
        new = np.hypot(px[jc] - px[ic], py[jc] - py[ic]) + np.where(
            j < n, np.hypot(px[after] - px[i1], py[after] - py[i1]), 0.0)
        old = edge[ic] + np.where(j < n, edge[np.minimum(j, n - 1)], 0.0)
        delta = np.where(valid, new - old, 0.0)
        best = np.argmin(delta, axis=1)
        gain = delta[np.arange(len(i)), best]
        good = np.flatnonzero(gain < -1e-9 * (1.0 + edge[i]))
        in_play[:] = False
        ranked = good[np.argsort(gain[good])]
        starts, stops = i[ranked], j[ranked, best[ranked]]
        # moves that apply do not overlap, so each one's stretch holds what it held before the round
        if nested:
            keep = _stretches_keep_holes_first(order, parent, starts, stops)
            ranked, starts, stops = ranked[keep], starts[keep], stops[keep]
        kept = _first_come_disjoint(starts, stops + 2)
        ranked, starts, stops = ranked[kept], starts[kept], stops[kept]
        move, at = expand_ranges(np.arange(len(starts)), starts, stops).T
        order[starts[move] + stops[move] - 1 - at] = order[at]  # each stretch reversed
        move, at = expand_ranges(np.arange(len(starts)), np.maximum(starts - width - 1, 0),
                                 np.minimum(stops + 2, n - 1)).T
        in_play[at] = True
        saved = -float(np.cumsum(gain[ranked])[-1]) if len(ranked) else 0.0  # in rank order, as one by one
        if saved == 0.0 or (n > FULL_2OPT and saved < SETTLED * float(edge.sum())):
            break
    return order


def _first_come_disjoint(lo: IntArray, hi: IntArray) -> IntArray:
    """Of spans ``[lo[k], hi[k])`` listed best first, those a pass in that order keeps when it keeps each
    span that meets none kept before it (indices, ascending).

    Found in rounds, all spans at once: a span still open that is the first listed at each of its
    positions among those open is kept (the pass would keep it: every earlier span meeting it was
    dropped), and every open span meeting a kept one is dropped.  Rounds: the longest chain of
    ever earlier meeting spans, a few."""
    count = len(lo)
    kept = np.zeros(count, dtype=bool)
    span, at = expand_ranges(np.arange(count), lo, hi).T
    size = int(hi.max(initial=0)) + 1
    while len(span):
        first = np.full(size, count)
        np.minimum.at(first, at, span)
        beaten = np.zeros(count, dtype=bool)
        beaten[span[first[at] != span]] = True
        win = ~beaten[span]
        kept[span[win]] = True
        covered = np.zeros(size, dtype=bool)
        covered[at[win]] = True
        gone = np.zeros(count, dtype=bool)
        gone[span[covered[at]]] = True
        span, at = span[~gone[span]], at[~gone[span]]
    return np.flatnonzero(kept)


def _stretches_keep_holes_first(order: IntArray, parent: IntArray, starts: IntArray, stops: IntArray
                                ) -> np.ndarray:
    """Per move: reversing positions ``starts[k] .. stops[k] - 1`` of ``order`` is allowed when no contour
    there has its container there too (all moves at once)."""
    position = np.empty(len(order), dtype=np.int64)
    position[order] = np.arange(len(order))
    move, at = expand_ranges(np.arange(len(starts)), starts, stops).T
    holder = parent[order[at]]
    where = position[np.maximum(holder, 0)]
    inside = (holder >= 0) & (where >= starts[move]) & (where < stops[move])
    return np.bincount(move, weights=inside, minlength=len(starts)) == 0


def _orient(start: FloatArray, end: FloatArray, closed: np.ndarray, order: IntArray, home: FloatArray) -> Tour:
    """Choose, in order, which way round to cut each open contour (the nearer end first; on a tie,
    forwards).

    A closed contour is left where it was entered, so each run of open contours after one (or
    after home) is a chain of its own: the k-th open contour of every run is decided in one
    vectorised step, k = 0, 1, … (as many steps as the longest run).  Moves are measured in the
    plane (x, y), whether or not every contour is closed."""
    reverse = np.zeros(len(start), dtype=bool)
    first, last = take_rows(start[:, :2], order), take_rows(end[:, :2], order)  # in cutting order
    shut = closed[order]
    position = np.arange(len(order))
    rank = position - np.maximum.accumulate(np.where(shut, position, -1)) - 1  # place in its run of open ones
    open_at = np.flatnonzero(~shut)
    open_at = open_at[np.argsort(rank[open_at], kind="stable")]
    exit_at = first.copy()  # where the head is after each contour (closed: where it went in)
    backwards = np.zeros(len(order), dtype=bool)
    home_xy = np.asarray(home[:2], dtype=float)
    done = 0
    for count in np.bincount(rank[open_at]).tolist():
        p = open_at[done:done + count]
        done += count
        here = np.where((p > 0)[:, None], exit_at[np.maximum(p - 1, 0)], home_xy)
        back = _distance(last[p], here) < _distance(first[p], here)
        backwards[p] = back
        exit_at[p] = np.where(back[:, None], first[p], last[p])
    here = np.vstack([home_xy[None, :], exit_at[:-1]])
    reverse[order] = backwards
    return Tour(order, reverse, _distance(np.where(backwards[:, None], last, first), here))


def _distance(a: FloatArray, b: FloatArray) -> FloatArray:
    """Plane distance between rows of ``a`` and ``b`` (x, y)."""
    return np.hypot(a[:, 0] - b[:, 0], a[:, 1] - b[:, 1])
