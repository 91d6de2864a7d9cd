"""Contours: segment ends joined within a tolerance, per layer; counted, chained in order, checked.

:func:`count_contours` counts connected pieces (fast, for ``measure``); :func:`chain_contours`
orders the segments of each contour for cutting; :func:`gap_warnings` and
:func:`duplicate_segments` find the two drawing faults that spoil a cut.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from pathlen.defaults import DEFAULT_JOIN_TOL_MM
from pathlen.geometry import Drawing, Entity, FloatArray, IntArray, keep_rows, run_starts, take_rows
from pathlen.proximity import close_pairs, components, nearest_partners
from pathlen.segments import SegmentTable, entity_layers, segment_endpoints, segment_midpoints

#: Open ends closer than this (mm) but beyond the join tolerance are reported as gaps.
DEFAULT_GAP_REPORT_MM = 0.5


@dataclass(frozen=True)
class ContourCount:
    closed: int
    open: int


def count_contours(drawing: Drawing, join_tol: float = DEFAULT_JOIN_TOL_MM) -> ContourCount:
    """Count closed and open contours.

    Segment ends closer than ``join_tol`` (mm) on the same layer are one node;
    a connected set of segments is one contour, closed when every node has an
    even number of segment ends (each segment can be traversed once in a loop).
    """
    return count_ends(segment_ends(drawing, join_tol), drawing.entities, join_tol)


def segment_ends(drawing: Drawing, join_tol: float = DEFAULT_JOIN_TOL_MM) -> list[np.ndarray]:
    """What counting contours needs of the drawing's own segments: ``[start, end, entity, shut]`` (start
    and end points ``[n, 3]`` mm, entity rows, whether each closes on itself within ``join_tol``), a
    zero-length line left out (it is no contour).  With these in hand the drawing's geometry can go
    before :func:`count_ends` runs."""
    start, end, ent = segment_endpoints(drawing)
    lines = drawing.lines
    real = np.ones(len(ent), dtype=bool)
    real[: len(lines)] = np.any(lines.p0 != lines.p1, axis=1)
    # only a segment whose ends meet may close on itself: the middles of those alone (a few whole circles
    # where a million segments would each make a middle and its temporaries); the test there is exact
    meets = real & ends_may_meet(start, end, join_tol)
    meet = np.flatnonzero(meets)
    shut = np.zeros(len(ent), dtype=bool)
    if len(meet):
        middle = segment_midpoints(keep_rows(drawing, meets))  # of those rows, in table order
        shut[meet] = closed_segments(take_rows(start, meet), take_rows(end, meet), middle, join_tol)
    if not real.all():
        start, end, ent, shut = start[real], end[real], ent[real], shut[real]
    return [start, end, ent, shut]


def ends_may_meet(start: FloatArray, end: FloatArray, tol: float) -> NDArray[np.bool_]:
    """Rows whose ends may lie within ``tol`` (mm) of each other: every row that does, and maybe a few
    more (a margin of a millionth over the rounding of the distance), a column at a time."""
    squared = np.zeros(len(start))
    for k in range(start.shape[1]):
        squared += (end[:, k] - start[:, k]) ** 2
    return squared <= (tol * (1.0 + 1e-6)) ** 2


def count_ends(ends: list[np.ndarray], entities: list[Entity], join_tol: float = DEFAULT_JOIN_TOL_MM
               ) -> ContourCount:
    """Closed and open contours of the segments ``ends`` (from :func:`segment_ends`) whose entity rows
    index ``entities``: see :func:`count_contours`.  ``ends`` is emptied, so each array goes as soon as
    it is used up."""
    start, end, ent, shut = ends
    ends.clear()
    points = np.concatenate([start[:, :2], end[:, :2]] if is_flat(start, end) else [start, end])
    del start, end
    return count_joined([points, ent, shut], entities, join_tol)


def is_flat(start: FloatArray, end: FloatArray) -> bool:
    """Whether every z of the segments' start and end points (``[n, 3]``) is zero: a flat drawing's ends are
    joined in x, y only."""
    return not (start[:, 2].any() or end[:, 2].any())


def count_joined(owned: list[np.ndarray], entities: list[Entity], join_tol: float = DEFAULT_JOIN_TOL_MM
                 ) -> ContourCount:
    """:func:`count_ends` of ``owned = [points, entity, shut]``: the n segments' start points followed by
    their end points (``[2n, 2]`` for a flat drawing, else ``[2n, 3]``, mm), their entity rows and
    closed-on-itself flags.  ``owned`` is emptied, each array let go as soon as it is used up."""
    points, ent, shut = owned
    owned.clear()
    n = len(ent)
    if n == 0:
        return ContourCount(0, 0)
    _, seg_layer = entity_layers(entities, ent)
    group = join_groups(seg_layer, ent, entities, shut)
    del seg_layer, ent
    if len(group) and group.max() < 2**31:  # group numbers in half the memory where they fit
        group = group.astype(np.int32)
    joined = [points, np.concatenate([group, group])]
    del points, group
    node = _join_nodes(joined, join_tol, shut)
    a, b = node[:n], node[n:]
    comp = components(node.max() + 1, a, b)
    degree = np.bincount(a, minlength=node.max() + 1) + np.bincount(b, minlength=node.max() + 1)
    used = degree > 0
    odd = np.zeros(node.max() + 1, dtype=bool)
    odd[comp[used & (degree % 2 == 1)]] = True
    roots = np.flatnonzero(used & (comp == np.arange(len(comp))))  # a piece's label is its smallest node
    closed = int(np.count_nonzero(~odd[roots]))
    return ContourCount(closed, len(roots) - closed)


@dataclass
class Contour:
    """Segments joined end to start, in cutting order."""

    segments: IntArray  # rows of the segment table
    forward: NDArray[np.bool_]  # True where a segment is cut along its parametrisation
    closed: bool
    layer: int  # index into the layer names
    length: float  # mm (measured)
    bound: float  # mm
    start: FloatArray  # [3] mm
    end: FloatArray  # [3] mm


@dataclass(frozen=True)
class ContourSet:
    """All contours of a drawing as flat arrays: contour k is ``steps[first[k] : first[k] + size[k]]``.

    Indexing and iterating give :class:`Contour` views; bulk work uses the arrays.
    """

    steps: IntArray  # segment table rows, contour after contour, in cutting order
    forward: NDArray[np.bool_]  # per step
    first: IntArray  # per contour: its first step
    size: IntArray  # per contour: its number of steps
    closed: NDArray[np.bool_]
    layer: IntArray
    length: FloatArray  # mm
    bound: FloatArray  # mm
    start: FloatArray  # [n, 3] mm
    end: FloatArray  # [n, 3] mm

    def __len__(self) -> int:
        return len(self.first)

    def __getitem__(self, k: int) -> Contour:
        a, m = int(self.first[k]), int(self.size[k])
        return Contour(self.steps[a:a + m], self.forward[a:a + m], bool(self.closed[k]), int(self.layer[k]),
                       float(self.length[k]), float(self.bound[k]), self.start[k], self.end[k])

    def __iter__(self) -> Iterator[Contour]:
        return (self[k] for k in range(len(self)))

    def run(self, c0: int, c1: int) -> ContourSet:
        """Contours ``c0 .. c1-1`` as a set of their own (views: their steps are consecutive)."""
        s0 = int(self.first[c0]) if c1 > c0 else 0
        s1 = int(self.first[c1 - 1] + self.size[c1 - 1]) if c1 > c0 else 0
        part = slice(c0, c1)
        return ContourSet(self.steps[s0:s1], self.forward[s0:s1], self.first[part] - s0, self.size[part],
                          self.closed[part], self.layer[part], self.length[part], self.bound[part], self.start[part],
                          self.end[part])

    def runs(self, steps: int) -> Iterator[tuple[int, int]]:
        """``(c0, c1)`` ranges of whole contours of about ``steps`` steps each (at least one contour)."""
        ends = self.first + self.size
        c0 = 0
        while c0 < len(self):
            c1 = max(int(np.searchsorted(ends, self.first[c0] + steps, side="right")), c0 + 1)
            yield c0, c1
            c0 = c1


def chain_contours(table: SegmentTable, layer: IntArray, join_tol: float = DEFAULT_JOIN_TOL_MM,
                   keep: NDArray[np.bool_] | None = None) -> ContourSet:
    """Chain the segments (rows where ``keep``) into contours, per layer, ordered by first row.

    Ends within ``join_tol`` (mm) on one layer meet at a node.  A connected piece whose nodes
    join at most two ends (the usual case: loops and open runs) is one contour, ordered by list
    ranking in numpy, starting from its lowest row cut forwards (an open run starts at the end
    behind that row).  A piece with a branch (three or more ends at a node) is walked: from each
    unused segment in row order the chain is extended forwards and backwards while the node has
    an unused segment, and the rest starts new chains.  A chain back at its first node is closed.
    """
    n = len(table)
    rows = np.flatnonzero(keep) if keep is not None else np.arange(n)
    if len(rows) == 0:
        none = np.zeros(0, dtype=np.int64)
        return ContourSet(none, none.astype(bool), none, none, none.astype(bool), none, np.zeros(0), np.zeros(0),
                          np.zeros((0, 3)), np.zeros((0, 3)))
    k = len(rows)
    start, end = take_rows(table.start, rows), take_rows(table.end, rows)
    shut = closed_segments(start, end, take_rows(table.middle, rows), join_tol)
    group = join_groups(layer[rows], table.entity[rows], table.drawing.entities, shut)
    node = _join_nodes([np.concatenate([start, end]), np.concatenate([group, group])], join_tol, shut)
    node_of = np.stack([node[:k], node[k:]], axis=1)  # [k, 2]: node at start, at end
    nodes = int(node.max()) + 1
    degree = np.bincount(node, minlength=nodes)
    piece = components(nodes, node_of[:, 0], node_of[:, 1])[node_of[:, 0]]  # per segment
    branched_piece = np.zeros(nodes, dtype=bool)
    branched_piece[piece[(degree[node_of] > 2).any(axis=1)]] = True
    branched = branched_piece[piece]
    key_a, local_a, fwd_a = _simple_chains(node_of, ~branched, piece)
    key_b, local_b, fwd_b = _walked_chains(node_of, branched)
    key, local, fwd = key_a, local_a, fwd_a
    if len(key_b):  # merge the two sorted lists: chains by first row, steps in their order
        key = np.concatenate([key_a, key_b])
        order = np.argsort(key, kind="stable")
        key, local, fwd = key[order], np.concatenate([local_a, local_b])[order], np.concatenate([fwd_a, fwd_b])[order]
    sizes = np.diff(np.append(np.flatnonzero(run_starts(key)), len(key)))
    return _contours_from_chains(table, layer, rows, node_of, local, fwd, sizes)


def join_nodes(points: FloatArray, groups: IntArray, tol: float, closed: NDArray[np.bool_] | None = None) -> IntArray:
    """Node number (not necessarily consecutive) of each end point; ``points`` (``[2n, 3]``, or ``[2n, 2]``
    for a flat drawing) are the starts of n segments followed by their ends, ``groups`` theirs (layer,
    or a closed loop of its own).

    Identical points (same group) are one place.  Within ``tol`` only loose places join: a place
    holding an odd number of ends (a dangling end) joins its nearest place in reach, so a chain of
    segments shorter than the tolerance is never folded together, and a segment's two ends never
    join each other (it would become a loop of its own) unless it is ``closed`` (a whole circle,
    say, whose ends differ by rounding).  Identical points are found by sorting a hash of their bits
    (-0.0 made +0.0 first); should two distinct points share a hash, all points are sorted by value.

    Memory: a few arrays of one number per point at a time (columns are hashed and compared one by
    one); the pairs within ``tol`` are searched among places, not points.
    """
    return _join_nodes([points, groups], tol, closed)


def _join_nodes(owned: list[np.ndarray], tol: float, closed: NDArray[np.bool_] | None = None) -> IntArray:
    """:func:`join_nodes` of ``owned = [points, groups]``, which it empties: once the places are known the
    points and groups go (only one point and group per place is kept), when the caller holds no other
    reference to them."""
    points, groups = owned
    owned.clear()
    n = len(points) // 2
    order, new = equal_rows([groups, *(points[:, k] for k in range(points.shape[1]))])
    first = order[new]  # one point of each place (index into points), places in sorted order
    places = len(first)
    place = np.empty(len(points), dtype=np.int32 if places < 2**31 else np.int64)
    counted = 0
    for a in range(0, len(order), ROW_RUN):  # place numbers a run at a time: no cumulative sum of every row
        run = np.cumsum(new[a:a + ROW_RUN], dtype=np.int64)
        place[order[a:a + ROW_RUN]] = run + (counted - 1)
        counted += int(run[-1])
    del order, new
    at, at_group = take_rows(points, first), groups[first]  # each place's point and group
    del points, groups, first
    loose = np.bincount(place, minlength=places) % 2 == 1
    shut = np.zeros(n, dtype=bool) if closed is None else closed
    src, dst = _nearest_partners(at, at_group, loose, place, shut, tol)
    del at, at_group
    label = components(places, np.concatenate((src, place[:n][shut])), np.concatenate((dst, place[n:][shut])))
    return label[place]


def equal_rows(columns: list[NDArray]) -> tuple[IntArray, NDArray[np.bool_]]:
    """Rows (one value of each column; equal lengths) sorted so that equal rows are neighbours:
    ``(order, new)``, ``new[k]`` True where row ``order[k]`` differs from the one before it.  Rows
    compare by value (-0.0 equals +0.0); equal rows come in no particular order.

    A hash of each row's bits is sorted (a column at a time: one number per row in memory at once);
    should two different rows share a hash, the rows are sorted by value instead.  (``np.unique``
    with ``axis=0`` sorts the rows as bytes: several times slower, and -0.0 is not +0.0 there.)"""
    key = _row_keys(columns)
    order = np.argsort(key)
    key.sort()  # in place: the sorted keys without a second array
    new = _differs_from_previous(columns, order)
    if np.any(new[1:] & (key[1:] == key[:-1])):  # different rows share a hash
        order = np.lexsort(columns[::-1])
        new = _differs_from_previous(columns, order)
    return order, new


#: Rows hashed or compared at a time (the temporaries of a step stay a few hundred kB).
ROW_RUN = 1 << 16


def _row_keys(columns: list[NDArray]) -> NDArray[np.uint64]:
    """A hash of each row's bits (-0.0 and +0.0 alike), :data:`ROW_RUN` rows at a time."""
    key = np.zeros(len(columns[0]), dtype=np.uint64)
    for a in range(0, len(key), ROW_RUN):
        run = key[a:a + ROW_RUN]
        for k, column in enumerate(columns):
            part = column[a:a + ROW_RUN]
            bits = (part + 0.0).view(np.uint64) if part.dtype == np.float64 else part.astype(np.uint64)
            run[:] = _mix(bits ^ _mix(run) if k else bits)  # -0.0 + 0.0 is +0.0; the first: _mix(0) is 0
    return key


def _differs_from_previous(columns: list[NDArray], order: IntArray) -> NDArray[np.bool_]:
    """In ``order``: True where a row differs from the one before it (the first row: True), :data:`ROW_RUN`
    rows at a time."""
    new = np.zeros(len(order), dtype=bool)
    new[:1] = True
    for a in range(0, len(order), ROW_RUN):
        rows = order[max(a - 1, 0):a + ROW_RUN]  # with the row before the run
        for column in columns:
            value = column[rows]  # (np.take would first copy a strided column whole)
            new[max(a, 1):a + ROW_RUN] |= value[1:] != value[:-1]
    return new


def _nearest_partners(at: FloatArray, at_group: IntArray, loose: NDArray[np.bool_], place: IntArray,
                      shut: NDArray[np.bool_], tol: float) -> tuple[IntArray, IntArray]:
    """Edges (loose place, its nearest allowed place within ``tol``, same group; ties: the lower place)
    among the places at points ``at`` of groups ``at_group``: a segment's own two places are never a
    pair, unless it is ``shut``."""
    none = np.zeros(0, dtype=np.int64)
    if not np.any(loose) or tol <= 0:
        return none, none
    n, places = len(shut), len(at)
    # a segment's own two ends never join: the place pairs it links (such a segment has a loose end)
    links = []
    for k in range(0, n, ROW_RUN):
        stop = min(k + ROW_RUN, n)
        a, b = place[k:stop].astype(np.int64), place[n + k:n + stop].astype(np.int64)
        mine = ~shut[k:stop] & (loose[a] | loose[b])
        a, b = a[mine], b[mine]
        links.append(np.minimum(a, b) * places + np.maximum(a, b))
    own = np.concatenate(links)
    del links
    own.sort()

    def refused(src: IntArray, dst: IntArray) -> NDArray[np.bool_]:
        return _sorted_contains(own, np.minimum(src, dst) * places + np.maximum(src, dst))

    return nearest_partners(at, tol, at_group, np.flatnonzero(loose), refused)


def _sorted_contains(sorted_keys: IntArray, keys: IntArray) -> NDArray[np.bool_]:
    """Whether each of ``keys`` is in ``sorted_keys`` (ascending): a binary search, no hash table."""
    if len(sorted_keys) == 0:
        return np.zeros(len(keys), dtype=bool)
    at = np.minimum(np.searchsorted(sorted_keys, keys), len(sorted_keys) - 1)
    return sorted_keys[at] == keys


#: The splitmix64 finalizer's shifts and multipliers (see :func:`_mix`).
_SHIFT_27, _SHIFT_30, _SHIFT_31 = np.uint64(27), np.uint64(30), np.uint64(31)
_MIX_1, _MIX_2 = np.uint64(0xBF58476D1CE4E5B9), np.uint64(0x94D049BB133111EB)


def _mix(x: NDArray[np.uint64]) -> NDArray[np.uint64]:
    """The splitmix64 finalizer (Steele, Lea and Flood, 2014): every input bit moves every output bit,
    so round coordinates, whose low mantissa bits are all zero, still hash apart."""
    x = (x ^ (x >> _SHIFT_30)) * _MIX_1  # arrays of unsigned integers wrap silently (scalars would warn)
    x = (x ^ (x >> _SHIFT_27)) * _MIX_2
    return x ^ (x >> _SHIFT_31)


def join_groups(layer: IntArray, entity: IntArray, entities: list, shut: NDArray[np.bool_]) -> IntArray:
    """Which ends may join: ends of one layer, except that a segment closed on itself is a group of
    its own and the segments of an entity closed in the file (:attr:`Entity.loop`) join only among
    themselves: closed stays closed, whatever touches it."""
    loop = np.array([e.loop for e in entities], dtype=bool)[entity] if len(entity) else np.zeros(0, dtype=bool)
    top = int(layer.max()) + 1 if len(layer) else 0
    group = np.array(layer, dtype=np.int64)  # changed in place: one array of the segments' size at a time
    group[loop] = top + entity[loop]
    closed = np.flatnonzero(shut)
    group[closed] = top + len(entities) + closed
    return group


def closed_segments(start: FloatArray, end: FloatArray, middle: FloatArray, tol: float) -> NDArray[np.bool_]:
    """Segments that close on themselves: ends within ``tol`` while the middle is farther (a whole
    circle or ellipse; a segment shorter than the tolerance is not one)."""
    return (np.linalg.norm(end - start, axis=1) <= tol) & (np.linalg.norm(middle - start, axis=1) > tol)


def _simple_chains(node_of: IntArray, simple: NDArray[np.bool_], piece: IntArray
                   ) -> tuple[IntArray, IntArray, NDArray[np.bool_]]:
    """Chains of the pieces without branches: (chain key = lowest row, segment, forward) per step.

    Segment i is entered at end e = 2i (its start: cut forwards) or 2i + 1; the next entry after
    entering at e is the other end at the node where ``e ^ 1`` lies.  Loops are cut open just
    before their lowest row entered forwards (and the reverse copy before it entered backwards);
    Wyllie's list ranking (pointer doubling, log2 of the longest run rounds) then gives each entry
    its distance to the end of its run, and the run that holds the forward entry is the chain.
    """
    seg = np.flatnonzero(simple)
    if len(seg) == 0:
        return np.zeros(0, dtype=np.int64), np.zeros(0, dtype=np.int64), np.zeros(0, dtype=bool)
    k = len(node_of)
    ends = np.concatenate((2 * seg, 2 * seg + 1))
    at = node_of.ravel()[ends]
    # at most two ends per node here: the smaller and the larger end id at each node are partners
    low_end = np.full(int(at.max()) + 1, 2 * k, dtype=np.int64)
    high_end = np.full(int(at.max()) + 1, -1, dtype=np.int64)
    np.minimum.at(low_end, at, ends)
    np.maximum.at(high_end, at, ends)
    partner = np.full(2 * k, -1, dtype=np.int64)
    pair = low_end[at] != high_end[at]
    partner[ends[pair]] = np.where(ends[pair] == low_end[at[pair]], high_end[at[pair]], low_end[at[pair]])
    succ = np.full(2 * k, -1, dtype=np.int64)
    succ[ends] = partner[ends ^ 1]
    low = np.full(int(piece.max()) + 1, k, dtype=np.int64)
    np.minimum.at(low, piece[seg], seg)
    is_head = np.zeros(k, dtype=bool)
    is_head[low[piece[seg]]] = True
    heads = np.flatnonzero(is_head)  # the lowest row of each piece, ascending
    start = 2 * heads
    loop = _is_loop(piece, heads, partner, ends)
    succ[partner[start[loop]] ^ 1] = -1  # open each loop just before its start ...
    succ[partner[start[loop] + 1] ^ 1] = -1  # ... and its reverse copy before the start entered backwards
    ptr = np.where(succ >= 0, succ, np.arange(2 * k))
    dist = (succ >= 0).astype(np.int64)
    while True:  # every run is now open: log2(longest run) rounds
        jump = ptr[ptr]
        if np.array_equal(jump, ptr):
            break
        dist = dist + dist[ptr]
        ptr = jump
    # the chain of head h is the run through entry 2h: place each of its entries by distance to the end
    chain_of_terminal = np.full(2 * k, -1, dtype=np.int64)
    chain_of_terminal[ptr[start]] = np.arange(len(heads))
    member = ends[chain_of_terminal[ptr[ends]] >= 0]
    chain = chain_of_terminal[ptr[member]]
    size = np.bincount(chain, minlength=len(heads))
    place = (np.cumsum(size) - size)[chain] + (size[chain] - 1 - dist[member])
    steps = np.empty(len(member), dtype=np.int64)
    steps[place] = member
    return np.repeat(heads, size), steps >> 1, (steps & 1) == 0


def _is_loop(piece: IntArray, heads: IntArray, partner: IntArray, ends: IntArray) -> NDArray:
    """Whether each head's piece is a loop (no end without a partner at its node)."""
    loose = np.zeros(int(piece.max()) + 1, dtype=bool)
    loose[piece[ends[partner[ends] < 0] >> 1]] = True
    return ~loose[piece[heads]]


def _walked_chains(node_of: IntArray, branched: NDArray[np.bool_]) -> tuple[IntArray, IntArray, NDArray[np.bool_]]:
    """Chains through pieces with branches, walked greedily in row order (see :func:`chain_contours`)."""
    seg = np.flatnonzero(branched)
    if len(seg) == 0:
        return np.zeros(0, dtype=np.int64), np.zeros(0, dtype=np.int64), np.zeros(0, dtype=bool)
    ends = np.concatenate((2 * seg, 2 * seg + 1))
    ends = ends[np.argsort(node_of.ravel()[ends], kind="stable")]
    at = node_of.ravel()[ends]
    ptr = np.searchsorted(at, np.arange(int(node_of.max()) + 2))
    ends_l, ptr_l, node_l = ends.tolist(), ptr.tolist(), node_of.tolist()
    cursor = ptr_l[:]  # per node: the first end not yet known to be used (each end passed once: linear)
    used = bytearray(len(node_of))

    def walk(at: int) -> list[tuple[int, bool]]:
        path = []
        while True:
            k, stop = cursor[at], ptr_l[at + 1]
            while k < stop and used[ends_l[k] >> 1]:
                k += 1
            cursor[at] = k
            if k == stop:
                return path
            e = ends_l[k]
            i, which = e >> 1, e & 1
            used[i] = 1
            path.append((i, which == 0))  # entered at its start: cut forwards
            at = node_l[i][1 - which]

    keys, steps = [], []
    for i in seg.tolist():
        if used[i]:
            continue
        used[i] = 1
        ahead = walk(node_l[i][1])
        behind = walk(node_l[i][0]) if not ahead or node_l[ahead[-1][0]][ahead[-1][1]] != node_l[i][0] else []
        chain = [(j, not f) for j, f in reversed(behind)] + [(i, True)] + ahead
        keys += [i] * len(chain)
        steps += chain
    return (np.array(keys, dtype=np.int64), np.array([j for j, _ in steps], dtype=np.int64),
            np.array([f for _, f in steps], dtype=bool))


def _contours_from_chains(table: SegmentTable, layer: IntArray, rows: IntArray, node_of: IntArray,
                          local: IntArray, fwd: NDArray[np.bool_], sizes: IntArray) -> ContourSet:
    """The contour set for chains given as flat steps (local index, forward) and chain sizes."""
    first = np.cumsum(sizes) - sizes
    last = first + sizes - 1
    seg = rows[local]
    start_node = np.where(fwd[first], node_of[local[first], 0], node_of[local[first], 1])
    end_node = np.where(fwd[last], node_of[local[last], 1], node_of[local[last], 0])
    return ContourSet(
        steps=seg, forward=fwd, first=first, size=sizes, closed=start_node == end_node, layer=layer[seg[first]],
        length=np.add.reduceat(table.length[seg], first), bound=np.add.reduceat(table.bound[seg], first),
        start=np.where(fwd[first, None], take_rows(table.start, seg[first]), take_rows(table.end, seg[first])),
        end=np.where(fwd[last, None], take_rows(table.end, seg[last]), take_rows(table.start, seg[last])),
    )


def gap_points(contours: ContourSet, join_tol: float, gap_tol: float = DEFAULT_GAP_REPORT_MM
               ) -> tuple[FloatArray, FloatArray, IntArray]:
    """Gaps between open contour ends: closer than ``gap_tol`` but not joined.  Returns the middle of
    each gap ``[k, 3]`` (mm), its width (mm) and its layer index."""
    open_ = np.flatnonzero(~contours.closed)
    none = (np.zeros((0, 3)), np.zeros(0), np.zeros(0, dtype=np.int64))
    if len(open_) == 0 or gap_tol <= join_tol:
        return none
    points = np.stack([contours.start[open_], contours.end[open_]], axis=1).reshape(-1, 3)
    groups = np.repeat(contours.layer[open_], 2)
    pairs = close_pairs(points, gap_tol, groups)
    d = np.linalg.norm(points[pairs[:, 0]] - points[pairs[:, 1]], axis=1)
    near = d > join_tol  # including the two ends of one nearly closed contour
    pairs, d = pairs[near], d[near]
    return 0.5 * (points[pairs[:, 0]] + points[pairs[:, 1]]), d, groups[pairs[:, 0]]


def gap_warnings(contours: ContourSet, layer_names: list[str], join_tol: float,
                 gap_tol: float = DEFAULT_GAP_REPORT_MM) -> list[str]:
    """Open contour ends closer than ``gap_tol`` but not joined: the usual cause of a part that will not cut clean."""
    middle, width, layer = gap_points(contours, join_tol, gap_tol)
    if len(width) == 0:
        return []
    worst = int(np.argmax(width))
    p = middle[worst]
    count = len(width)
    return [f"{count} gap{'s' if count != 1 else ''} between contour ends wider than the join tolerance "
            f"({join_tol:g} mm) and under {gap_tol:g} mm; widest {width[worst]:.4f} mm at "
            f"({p[0]:.3f}, {p[1]:.3f}) mm on layer {layer_names[int(layer[worst])]!r}"]


def duplicate_segments(table: SegmentTable, layer: IntArray, tol: float = DEFAULT_JOIN_TOL_MM) -> IntArray:
    """Rows that repeat an earlier row's geometry on the same layer (same ends either way round, same
    middle point and length within ``tol`` mm, and within a quarter of the shorter one's length, so
    that neighbours in a chain of segments shorter than the tolerance are not taken for copies):
    the first of each group is kept, the rest returned."""
    if len(table) < 2:
        return np.zeros(0, dtype=np.int64)
    middle = table.middle
    # exact copies first (ends in either order, middle, layer): a stack of copies is one row below
    flip = _lexically_less(table.end, table.start)
    lo = np.where(flip[:, None], table.end, table.start)
    hi = np.where(flip[:, None], table.start, table.end)
    order, new = equal_rows([layer, *lo.T, *hi.T, *middle.T])
    del lo, hi
    rep = order[new]  # a row of each exact class (the components below keep each class's lowest row)
    cls = np.empty(len(order), dtype=np.int64)
    cls[order] = np.cumsum(new) - 1
    rep_of = rep[cls]
    sub = np.sort(rep)
    pairs = close_pairs(middle[sub], tol, layer[sub])
    a, b = sub[pairs[:, 0]], sub[pairs[:, 1]]

    reach = np.minimum(tol, 0.25 * np.minimum(table.length[a], table.length[b]))

    def near(p: FloatArray, q: FloatArray) -> NDArray[np.bool_]:
        return np.linalg.norm(p - q, axis=1) <= reach

    same_way = near(table.start[a], table.start[b]) & near(table.end[a], table.end[b])
    other_way = near(table.start[a], table.end[b]) & near(table.end[a], table.start[b])
    same = (same_way | other_way) & near(middle[a], middle[b]) & (np.abs(table.length[a] - table.length[b]) <= reach)
    label = components(len(table), np.r_[a[same], np.arange(len(table))], np.r_[b[same], rep_of])
    return np.flatnonzero(label != np.arange(len(table)))


def _lexically_less(p: FloatArray, q: FloatArray) -> NDArray[np.bool_]:
    """Row-wise: is point ``p`` before ``q`` comparing x, then y, then z?"""
    less = p[:, 2] < q[:, 2]
    for axis in (1, 0):
        less = (p[:, axis] < q[:, axis]) | ((p[:, axis] == q[:, axis]) & less)
    return less


def overlapping_lines(table: SegmentTable, layer: IntArray, rows: IntArray, tol: float = DEFAULT_JOIN_TOL_MM
                      ) -> tuple[int, float]:
    """Straight segments (among ``rows``) lying on one line on one layer and overlapping: how many
    overlaps and their total length (mm), counted once (pass rows without exact duplicates to count
    only partial overlaps).

    Lines are grouped by direction (to 1e-6 rad) and distance from the origin (to ``tol``); within
    a group the covered intervals along the line are merged.  Lines that are collinear only within
    the tolerance but fall either side of a rounding boundary are not caught.
    """
    straight = rows[rows < len(table.drawing.lines)]  # the line batch comes first in the table
    if len(straight) < 2:
        return 0, 0.0
    p0, p1 = table.start[straight, :2], table.end[straight, :2]
    d = p1 - p0
    theta = np.mod(np.arctan2(d[:, 1], d[:, 0]), np.pi)
    unit = np.stack([np.cos(theta), np.sin(theta)], axis=1)
    offset = p0[:, 0] * -unit[:, 1] + p0[:, 1] * unit[:, 0]
    group = np.stack([layer[straight], np.round(theta / 1e-6), np.round(offset / max(tol, 1e-9))], axis=1)
    a = np.einsum("ij,ij->i", p0, unit)
    b = np.einsum("ij,ij->i", p1, unit)
    lo, hi = np.minimum(a, b), np.maximum(a, b)
    order = np.lexsort((lo, group[:, 2], group[:, 1], group[:, 0]))
    g, lo, hi = group[order], lo[order], hi[order]
    same = np.r_[False, np.all(g[1:] == g[:-1], axis=1)]
    starts = np.flatnonzero(~same)
    reach = _running_max_per_group(hi, starts)  # the furthest end so far along each line
    prev_reach = np.r_[-np.inf, reach[:-1]]
    overlap = np.where(same, np.clip(np.minimum(prev_reach, hi) - lo, 0.0, None), 0.0)
    hits = overlap > tol
    return int(hits.sum()), float(overlap[hits].sum())


def _running_max_per_group(values: FloatArray, starts: IntArray) -> FloatArray:
    """Running maximum of ``values`` that restarts at each index in ``starts``."""
    out = values.copy()
    bounds = np.r_[starts, len(values)]
    many = np.flatnonzero(np.diff(bounds) > 1)
    for a, b in zip(bounds[many].tolist(), bounds[many + 1].tolist(), strict=True):
        out[a:b] = np.maximum.accumulate(values[a:b])
    return out
