"""Benchmark: chaining and ordering contours against measuring them, on the same drawing, in one run.

    python bench/cut_bench.py [--contours 20000]

Builds two sheets of small closed parts, five segments each, in shuffled order: parts of two
lines, one circular arc and two cubic Béziers (half drawn backwards), and blobs of five cubic
Béziers; on each it times:

1. measuring every segment (``pathlen.measure``);
2. the flat segment table (end points, tangents, samples);
3. chaining segments into contours (grid-hash neighbour search, then a linear walk);
4. nesting (which contour lies in which) and the cutting order (Hilbert or nearest-neighbour
   start, 2-opt), with the rapid length against the file order's.
"""

from __future__ import annotations

import argparse
import math
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from pathlen.containment import nesting_depth
from pathlen.contours import chain_contours
from pathlen.estimates.tour import plan_tour, tour_length
from pathlen.geometry import Beziers, Drawing, EllipticArcs, Entity, Lines
from pathlen.measure import measure
from pathlen.segments import segment_layers, segment_table


def sheet(parts: int, seed: int = 3) -> Drawing:
    """``parts`` closed parts of 5 segments on a jittered grid, in random order, half reversed."""
    rng = np.random.default_rng(seed)
    cols = math.ceil(math.sqrt(parts * 2))
    k = np.arange(parts)
    origin = np.stack([(k % cols) * 30.0, (k // cols) * 30.0, np.zeros(parts)], axis=1)
    origin[:, :2] += rng.uniform(0, 5, (parts, 2))
    # outline: (0,0) -line-> (20,0) -cubic-> (20,12) -arc (r 4, centre (16,12)) -> (12,12) ... closed
    p = lambda x, y: origin + np.array([x, y, 0.0])  # noqa: E731
    a, b, c, d, e = p(0, 0), p(20, 0), p(20, 12), p(12, 12), p(0, 15)
    lines = Lines(np.concatenate([a, e]), np.concatenate([b, a]), np.concatenate([k, k]))
    arcs = EllipticArcs(p(16, 12), np.tile([4.0, 0, 0], (parts, 1)), np.tile([0, 4.0, 0], (parts, 1)),
                        np.zeros(parts), np.full(parts, math.pi), k.copy())
    ctrl = np.stack([np.stack([b, p(24, 3), p(18, 8), c], axis=1), np.stack([d, p(8, 20), p(4, 9), e], axis=1)])
    ctrl = ctrl.reshape(-1, 4, 3)
    flip = rng.random(len(ctrl)) < 0.5
    ctrl[flip] = ctrl[flip, ::-1]
    beziers = {3: Beziers(ctrl, np.ones((len(ctrl), 4)), np.concatenate([k, k]))}
    order = rng.permutation(parts)  # the file lists the parts in no useful order
    remap = np.empty(parts, dtype=np.int64)
    remap[order] = k
    lines = Lines(lines.p0, lines.p1, remap[lines.entity])
    arcs = EllipticArcs(arcs.center, arcs.u, arcs.v, arcs.t0, arcs.t1, remap[arcs.entity])
    beziers = {3: Beziers(ctrl, beziers[3].weights, remap[beziers[3].entity])}
    return Drawing(lines, arcs, beziers, [Entity("CUT", str(i), "PART") for i in range(parts)])


def curved_sheet(parts: int, seed: int = 4) -> Drawing:
    """``parts`` closed blobs of five cubic Béziers each (lettering, organic outlines), in random order."""
    rng = np.random.default_rng(seed)
    cols = math.ceil(math.sqrt(parts * 2))
    k = np.arange(parts)
    origin = np.stack([(k % cols) * 30.0, (k // cols) * 30.0, np.zeros(parts)], axis=1)
    angle = np.linspace(0, 2 * math.pi, 6)[:5]
    corner = np.stack([10 * np.cos(angle), 10 * np.sin(angle), np.zeros(5)], axis=1)
    ctrl = np.empty((parts, 5, 4, 3))
    for s in range(5):
        a, b = corner[s], corner[(s + 1) % 5]
        bulge = rng.uniform(2, 6, (parts, 1)) * np.array([-(b - a)[1], (b - a)[0], 0.0]) / 10
        ctrl[:, s] = np.stack([origin + a, origin + a + (b - a) / 3 + bulge, origin + a + 2 * (b - a) / 3 + bulge,
                               origin + b], axis=1)
    ctrl = ctrl.reshape(-1, 4, 3)
    entity = rng.permutation(parts)[np.repeat(k, 5)]
    none = np.zeros((0, 3))
    return Drawing(Lines(none, none, np.zeros(0, dtype=np.int64)),
                   EllipticArcs(none, none, none, np.zeros(0), np.zeros(0), np.zeros(0, dtype=np.int64)),
                   {3: Beziers(ctrl, np.ones((len(ctrl), 4)), entity)},
                   [Entity("CUT", str(i), "BLOB") for i in range(parts)])


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--contours", type=int, default=20_000)
    args = ap.parse_args()
    for name, make in (("mixed parts (lines, arcs, cubics)", sheet), ("curved blobs (cubics only)", curved_sheet)):
        print(f"\n== {name}")
        run(make(args.contours))


def run(drawing: Drawing) -> None:
    print(f"{len(drawing.entities):,} contours, {drawing.segment_count():,} segments")
    t0 = time.perf_counter()
    measured = measure(drawing)
    t1 = time.perf_counter()
    table = segment_table(drawing, measured)
    _, layer = segment_layers(drawing, table)
    t2 = time.perf_counter()
    contours = chain_contours(table, layer)
    t3 = time.perf_counter()
    _depth, parent = nesting_depth(table, contours)
    t4 = time.perf_counter()
    start, closed = contours.start[:, :2], contours.closed
    tour = plan_tour(start, contours.end[:, :2], closed, parent)
    t5 = time.perf_counter()
    naive = tour_length(start, np.arange(len(contours)), np.zeros(2))
    print(f"measure                       {t1 - t0:7.3f} s")
    print(f"segment table                 {t2 - t1:7.3f} s")
    print(f"chain into contours           {t3 - t2:7.3f} s   ({len(contours):,} contours, "
          f"{int(closed.sum()):,} closed)")
    print(f"nesting                       {t4 - t3:7.3f} s")
    print(f"cutting order                 {t5 - t4:7.3f} s   rapids {tour.rapid_length / 1000:,.1f} m "
          f"(file order {naive / 1000:,.1f} m)")
    print(f"chain + order (incl. table, nesting) {t5 - t1:7.3f} s  vs  measure {t1 - t0:7.3f} s")


if __name__ == "__main__":
    main()
