"""Contours: segment ends joined within a tolerance, per layer; counted, chained in order, checked.

:func:`count_contours` counts connected pieces (fast, for ``measure``); :func:`chain_contours`
orders the segments of each contour for cutting; :func:`gap_warnings` and
:func:`duplicate_segments` find the two drawing faults that spoil a cut.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from pathlen.geometry import Drawing, FloatArray, IntArray
from pathlen.proximity import close_pairs, components
from pathlen.segments import SegmentTable

#: Default join tolerance in millimetres.
DEFAULT_JOIN_TOL_MM = 0.01
#: Open ends closer than this (mm) but beyond the join tolerance are reported as gaps.
DEFAULT_GAP_REPORT_MM = 0.5


@dataclass(frozen=True)
class ContourCount:
    closed: int
    open: int


def segment_endpoints(drawing: Drawing) -> tuple[FloatArray, FloatArray, IntArray]:
    """Start points, end points and entity index of every segment (all kinds)."""
    arcs = drawing.arcs
    starts = [drawing.lines.p0, arcs.points(arcs.t0)]
    ends = [drawing.lines.p1, arcs.points(arcs.t1)]
    ents = [drawing.lines.entity, arcs.entity]
    for b in drawing.beziers.values():
        starts.append(b.ctrl[:, 0])
        ends.append(b.ctrl[:, -1])
        ents.append(b.entity)
    return np.concatenate(starts), np.concatenate(ends), np.concatenate(ents)


def count_contours(drawing: Drawing, join_tol: float = DEFAULT_JOIN_TOL_MM) -> ContourCount:
    """Count closed and open contours.

    Segment ends closer than ``join_tol`` (mm) on the same layer are one node;
    a connected set of segments is one contour, closed when every node has an
    even number of segment ends (each segment can be traversed once in a loop).
    """
    start, end, ent = segment_endpoints(drawing)
    n = len(ent)
    if n == 0:
        return ContourCount(0, 0)
    layer_names = {e.layer for e in drawing.entities}
    layer_id = {name: i for i, name in enumerate(sorted(layer_names))}
    seg_layer = np.array([layer_id[drawing.entities[i].layer] for i in range(len(drawing.entities))],
                         dtype=np.int64)[ent]
    points = np.concatenate([start, end])
    point_layer = np.concatenate([seg_layer, seg_layer])
    pairs = close_pairs(points, join_tol, point_layer)
    _, node = np.unique(components(2 * n, pairs[:, 0], pairs[:, 1]), return_inverse=True)
    a, b = node[:n], node[n:]
    comp = components(node.max() + 1, a, b)
    degree = np.bincount(a, minlength=node.max() + 1) + np.bincount(b, minlength=node.max() + 1)
    used = degree > 0
    odd = np.zeros(node.max() + 1, dtype=bool)
    odd[comp[used & (degree % 2 == 1)]] = True
    roots = np.unique(comp[used])
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


def chain_contours(table: SegmentTable, layer: IntArray, join_tol: float = DEFAULT_JOIN_TOL_MM,
                   keep: NDArray[np.bool_] | None = None) -> list[Contour]:
    """Chain the segments (rows where ``keep``) into contours, per layer.

    Ends within ``join_tol`` (mm) on one layer meet at a node.  From each unused segment, in row
    order, the chain is extended forwards and backwards through nodes, taking either direction of
    a segment; a chain that comes back to its first node is closed.  Where more than two ends
    meet (a branch), a chain stops when the node has no unused segment, and the rest starts new
    chains.  Time is linear in the number of segments.
    """
    n = len(table)
    rows = np.flatnonzero(keep) if keep is not None else np.arange(n)
    if len(rows) == 0:
        return []
    points = np.concatenate([table.start[rows], table.end[rows]])
    groups = np.concatenate([layer[rows], layer[rows]])
    pairs = close_pairs(points, join_tol, groups)
    _, node = np.unique(components(len(points), pairs[:, 0], pairs[:, 1]), return_inverse=True)
    k = len(rows)
    node_of = np.stack([node[:k], node[k:]], axis=1)  # [k, 2]: node at start, at end
    ends = np.argsort(node_of.ravel(), kind="stable")  # end ids (2 * i + which) grouped by node
    ptr = np.searchsorted(node_of.ravel()[ends], np.arange(node.max() + 2))
    ends_l, ptr_l, node_l = ends.tolist(), ptr.tolist(), node_of.tolist()
    used = bytearray(k)

    def walk(at: int) -> list[tuple[int, bool]]:
        path = []
        while True:
            for e in ends_l[ptr_l[at]:ptr_l[at + 1]]:
                if not used[e >> 1]:
                    break
            else:
                return path
            i, which = e >> 1, e & 1
            used[i] = 1
            path.append((i, which == 0))  # entered at its start: cut forwards
            at = node_l[i][1 - which]

    contours = []
    for i in range(k):
        if used[i]:
            continue
        used[i] = 1
        ahead = walk(node_l[i][1])
        behind = walk(node_l[i][0]) if not ahead or node_l[ahead[-1][0]][ahead[-1][1]] != node_l[i][0] else []
        chain = [(j, not f) for j, f in reversed(behind)] + [(i, True)] + ahead
        idx = np.array([rows[j] for j, _ in chain])
        fwd = np.array([f for _, f in chain])
        first_node = node_l[chain[0][0]][0 if chain[0][1] else 1]
        last_node = node_l[chain[-1][0]][1 if chain[-1][1] else 0]
        start = table.start[idx[0]] if fwd[0] else table.end[idx[0]]
        end = table.end[idx[-1]] if fwd[-1] else table.start[idx[-1]]
        contours.append(Contour(idx, fwd, first_node == last_node, int(layer[idx[0]]),
                                float(table.length[idx].sum()), float(table.bound[idx].sum()), start, end))
    return contours


def gap_warnings(contours: list[Contour], layer_names: list[str], join_tol: float,
                 gap_tol: float = DEFAULT_GAP_REPORT_MM) -> list[str]:
    """Open contour ends closer than ``gap_tol`` but not joined: the usual cause of a part that will not cut clean."""
    open_ = [c for c in contours if not c.closed]
    if len(open_) == 0 or gap_tol <= join_tol:
        return []
    points = np.array([p for c in open_ for p in (c.start, c.end)])
    groups = np.repeat([c.layer for c in open_], 2)
    pairs = close_pairs(points, gap_tol, groups)
    d = np.linalg.norm(points[pairs[:, 0]] - points[pairs[:, 1]], axis=1)
    near = d > join_tol  # including the two ends of one nearly closed contour
    if not near.any():
        return []
    worst = int(np.argmax(np.where(near, d, -1.0)))
    p = points[pairs[worst, 0]]
    count = int(near.sum())
    return [f"{count} gap{'s' if count != 1 else ''} between contour ends wider than the join tolerance "
            f"({join_tol:g} mm) and under {gap_tol:g} mm; widest {d[worst]:.4f} mm at "
            f"({p[0]:.3f}, {p[1]:.3f}) mm on layer {layer_names[int(groups[pairs[worst, 0]])]!r}"]


def duplicate_segments(table: SegmentTable, layer: IntArray, tol: float = DEFAULT_JOIN_TOL_MM) -> IntArray:
    """Rows that repeat an earlier row's geometry on the same layer (same ends either way round, same
    middle point and length within ``tol`` mm): the first of each group is kept, the rest returned."""
    if len(table) < 2:
        return np.zeros(0, dtype=np.int64)
    middle = table.samples[:, table.samples.shape[1] // 2]
    lines = ~np.isfinite(table.min_radius) & np.all(table.samples[:, 2:] == table.end[:, None], axis=(1, 2))
    middle = np.where(lines[:, None], 0.5 * (table.start + table.end), middle)
    pairs = close_pairs(middle, tol, layer)
    a, b = pairs[:, 0], pairs[:, 1]

    def near(p: FloatArray, q: FloatArray) -> NDArray[np.bool_]:
        return np.linalg.norm(p - q, axis=1) <= tol

    same_way = near(table.start[a], table.start[b]) & near(table.end[a], table.end[b])
    other_way = near(table.start[a], table.end[b]) & near(table.end[a], table.start[b])
    same = (same_way | other_way) & (np.abs(table.length[a] - table.length[b]) <= tol)
    label = components(len(table), a[same], b[same])
    return np.flatnonzero(label != np.arange(len(table)))
