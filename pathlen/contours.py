"""Chain segments into contours: endpoints joined within a tolerance, per layer."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from pathlen.geometry import Drawing, FloatArray, IntArray
from pathlen.proximity import close_pairs, components

#: Default join tolerance in millimetres.
DEFAULT_JOIN_TOL_MM = 0.01


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
