"""Contour chaining, gaps, duplicates, nesting and exact kerf offsets."""

import itertools
import math

import mpmath as mp
import numpy as np
import pytest
import shapely

from pathlen.containment import kerf_length_change, nesting_depth
from pathlen.contours import chain_contours, count_contours, duplicate_segments, gap_warnings
from pathlen.geometry import SegmentCollector
from pathlen.measure import measure
from pathlen.segments import segment_layers, segment_table


def build(shapes):
    """shapes: list of (layer, kind, data) with kind line/polyline/arc/bezier."""
    c = SegmentCollector()
    for layer, kind, data in shapes:
        e = c.entity(layer, str(len(c.entities)), kind)
        if kind == "polyline":
            c.add_polyline([(*p, 0.0) for p in data], e)
        elif kind == "arc":
            (cx, cy), (ux, uy), (vx, vy), t0, t1 = data
            c.add_arc((cx, cy, 0), (ux, uy, 0), (vx, vy, 0), t0, t1, e)
        elif kind == "bezier":
            c.add_bezier([(*p, 0.0) for p in data], None, e)
    d = c.drawing()
    table = segment_table(d, measure(d))
    names, layer = segment_layers(d, table)
    return d, table, names, layer


def square(x, y, s, reverse=False):
    pts = [(x, y), (x + s, y), (x + s, y + s), (x, y + s), (x, y)]
    return pts[::-1] if reverse else pts


def circle(cx, cy, r):
    return ((cx, cy), (r, 0), (0, r), 0.0, 2 * math.pi)


def test_reversed_segments_chain_into_one_closed_contour():
    # The four sides of a square drawn as separate lines, two of them backwards.
    sides = [[(0, 0), (10, 0)], [(10, 10), (10, 0)], [(10, 10), (0, 10)], [(0, 0), (0, 10)]]
    _, table, _names, layer = build([("CUT", "polyline", s) for s in sides])
    contours = chain_contours(table, layer)
    assert len(contours) == 1 and contours[0].closed
    assert contours[0].length == pytest.approx(40.0)
    assert sorted(contours[0].segments.tolist()) == [0, 1, 2, 3]
    assert contours[0].forward.tolist().count(False) == 2


@pytest.mark.parametrize("tol", [0.0, 0.01])
def test_identical_ends_are_one_place_whatever_the_tolerance(tol):
    # Ends at the same point meet there with no tolerance at all: a square drawn as four lines is one
    # closed contour (every vertex joins two ends: even degree, Euler), and so is a bow-tie of two
    # triangles sharing a vertex (four ends there); a lone line is one open contour
    sides = [[(0, 0), (10, 0)], [(10, 10), (10, 0)], [(10, 10), (0, 10)], [(0, 0), (0, 10)]]
    bow = [[(20, 0), (25, 5)], [(25, 5), (20, 10)], [(20, 10), (20, 0)],
           [(25, 5), (30, 0)], [(30, 0), (30, 10)], [(30, 10), (25, 5)]]
    counted = count_contours(build([("CUT", "polyline", s) for s in sides + bow + [[(40, 0), (41, 0)]]])[0], tol)
    assert (counted.closed, counted.open) == (2, 1)


def test_negative_zero_is_the_same_point():
    # IEEE 754 (section 5.11): -0 compares equal to +0, so a vertex written (-0.0, 0.0) by one line and
    # (0.0, 0.0) by another is one point.  Two triangles meeting there (four ends at the origin) are one
    # closed network; told apart by their bits they were two.
    left = [[(0.0, 0.0), (1.0, 0.0)], [(1.0, 0.0), (1.0, 1.0)], [(1.0, 1.0), (0.0, 0.0)]]
    right = [[(-0.0, 0.0), (-1.0, 0.0)], [(-1.0, 0.0), (-1.0, -1.0)], [(-1.0, -1.0), (-0.0, 0.0)]]
    apart = [[(10.0 + k, 10.0), (10.0 + k, 10.5)] for k in range(50)]  # 50 open runs elsewhere, in between
    counted = count_contours(build([("CUT", "polyline", s) for s in left + right + apart])[0], 0.01)
    assert (counted.closed, counted.open) == (1, 50)


def test_points_whose_hashes_collide_are_still_told_apart(monkeypatch):
    # identical points are found by hashing their bits; if every hash were the same, the count must not
    # change (distinct points sorted by value instead): unit squares meeting corner to corner along a
    # diagonal, as separate lines, are one closed network (2 or 4 ends at every corner), plus a lone line
    import pathlen.contours as contours_module

    sides = []
    for k in range(6):
        a, b, c, d = (k, k), (k + 1, k), (k + 1, k + 1), (k, k + 1)
        sides += [[a, b], [b, c], [c, d], [d, a]]
    shapes = [("CUT", "polyline", s) for s in sides] + [("CUT", "polyline", [(10, 10), (11, 12)])]
    expected = count_contours(build(shapes)[0], 0.01)
    assert (expected.closed, expected.open) == (1, 1)
    monkeypatch.setattr(contours_module, "_mix", lambda x: np.zeros_like(x))
    assert count_contours(build(shapes)[0], 0.01) == expected


def test_gaps_below_and_above_the_tolerance():
    below = [[(0, 0), (10, 0), (10, 10)], [(10, 10.005), (0, 10), (0, 0)]]  # 0.005 mm: joined at 0.01
    above = [[(20, 0), (30, 0), (30, 10)], [(30, 10.2), (20, 10), (20, 0)]]  # 0.2 mm: a gap
    _, table, names, layer = build([("CUT", "polyline", s) for s in below + above])
    contours = chain_contours(table, layer, 0.01)
    assert sorted(c.closed for c in contours) == [False, True]
    warnings = gap_warnings(contours, names, 0.01, 0.5)
    assert len(warnings) == 1 and "0.2000 mm" in warnings[0] and "'CUT'" in warnings[0]
    assert count_contours(build([("CUT", "polyline", s) for s in below + above])[0], 0.01).closed == 1


def test_layers_do_not_join():
    _, table, _, layer = build([("A", "polyline", [(0, 0), (5, 0)]), ("B", "polyline", [(5, 0), (5, 5)])])
    assert len(chain_contours(table, layer)) == 2


def test_branch_point_splits_chains():
    # A "T": three segments meet at one node; chains stop where no unused segment is left.
    tee = [[(0, 0), (5, 0)], [(5, 0), (10, 0)], [(5, 0), (5, 5)]]
    _, table, _, layer = build([("CUT", "polyline", s) for s in tee])
    contours = chain_contours(table, layer)
    assert sum(len(c.segments) for c in contours) == 3 and len(contours) == 2
    assert not any(c.closed for c in contours)


def test_duplicates_found_either_way_round():
    shapes = [("CUT", "polyline", [(0, 0), (10, 0)]), ("CUT", "polyline", [(10, 0), (0, 0)]),
              ("CUT", "arc", circle(5, 5, 2)), ("CUT", "arc", circle(5, 5, 2)),
              ("ENGRAVE", "polyline", [(0, 0), (10, 0)]),  # another layer: not a duplicate
              ("CUT", "polyline", [(0, 1), (10, 1)])]
    _, table, _, layer = build(shapes)
    dup = duplicate_segments(table, layer)
    assert sorted(dup.tolist()) == [1, 5]  # rows: lines 0, 1, 2 (ENGRAVE), 3, then the arcs 4, 5
    assert table.length[dup].sum() == pytest.approx(10 + 4 * math.pi)


def test_a_stack_of_copies_keeps_its_first_row():
    # 300 copies of one line among others: the first drawn is cut, the other 299 are the duplicates
    shapes = [("CUT", "polyline", [(0, 0), (10, 0)])] * 300 + [("CUT", "polyline", [(0, k + 1), (10, k + 1)])
                                                              for k in range(100)]
    _, table, _, layer = build(shapes)
    assert sorted(duplicate_segments(table, layer).tolist()) == list(range(1, 300))


def test_nesting_depth_and_parent():
    shapes = [("CUT", "polyline", square(0, 0, 100)), ("CUT", "polyline", square(10, 10, 50)),
              ("CUT", "polyline", square(20, 20, 10)), ("CUT", "arc", circle(80, 80, 5)),
              ("CUT", "polyline", square(200, 0, 10))]
    _, table, _, layer = build(shapes)
    contours = chain_contours(table, layer)
    depth, parent = nesting_depth(table, contours)
    by_start = {tuple(np.round(c.start[:2], 6)): k for k, c in enumerate(contours)}
    outer, mid, inner = by_start[(0, 0)], by_start[(10, 10)], by_start[(20, 20)]
    hole = by_start[(85, 80)]
    assert depth[outer] == 0 and depth[mid] == 1 and depth[inner] == 2 and depth[hole] == 1
    assert parent[inner] == mid and parent[mid] == outer and parent[hole] == outer
    assert parent[by_start[(200, 0)]] == -1


def one_contour(shapes):
    _, table, _, layer = build(shapes)
    contours = chain_contours(table, layer)
    assert len(contours) == 1 and contours[0].closed
    return table, contours[0]


@pytest.mark.parametrize("shape", [
    [("CUT", "arc", circle(0, 0, 7))],
    [("CUT", "polyline", [(0, 0), (40, 0), (40, 20), (0, 20), (0, 0)])],
    [("CUT", "polyline", [(math.cos(k * math.pi / 3) * 9, math.sin(k * math.pi / 3) * 9) for k in range(7)][::-1])],
    [("CUT", "arc", ((0, 0), (12, 0), (0, 5), 0, 2 * math.pi))],
    [("CUT", "polyline", [(4, 0), (36, 0)]), ("CUT", "arc", ((36, 4), (0, -4), (4, 0), 0, math.pi / 2)),
     ("CUT", "polyline", [(40, 4), (40, 16)]), ("CUT", "arc", ((36, 16), (4, 0), (0, 4), 0, math.pi / 2)),
     ("CUT", "polyline", [(36, 20), (4, 20)]), ("CUT", "arc", ((4, 16), (0, 4), (-4, 0), 0, math.pi / 2)),
     ("CUT", "polyline", [(0, 16), (0, 4)]), ("CUT", "arc", ((4, 4), (-4, 0), (0, -4), 0, math.pi / 2))],
])
@pytest.mark.parametrize("kerf", [0.1, 0.3])
def test_steiner_outward_offset_of_convex_contours(shape, kerf):
    # Steiner's formula: offsetting a closed convex curve outwards by k/2 adds 2π·k/2 = π·k to its length,
    # whichever way round it is drawn.
    table, contour = one_contour(shape)
    assert kerf_length_change(table, contour, kerf / 2) == pytest.approx(math.pi * kerf, rel=1e-12)


def test_inward_offsets_by_hand():
    # A circle of radius r offset inwards by d has length 2π(r - d); a square of side s becomes a square of
    # side s - 2d (its corners stay sharp): -8d.
    table, contour = one_contour([("CUT", "arc", circle(0, 0, 5))])
    assert kerf_length_change(table, contour, -0.2) == pytest.approx(-2 * math.pi * 0.2, rel=1e-12)
    table, contour = one_contour([("CUT", "polyline", square(0, 0, 30, reverse=True))])
    assert kerf_length_change(table, contour, -0.2) == pytest.approx(-8 * 0.2, rel=1e-12)


def test_concave_outline_against_shapely():
    # An L-shaped plate: five convex corners gain quarter-circle joins, the inside corner loses 2d
    # (geometry by hand); checked also against shapely's round-join buffer of the exact polygon.
    d = 0.25
    pts = [(0, 0), (60, 0), (60, 20), (20, 20), (20, 50), (0, 50), (0, 0)]
    table, contour = one_contour([("CUT", "polyline", pts)])
    by_hand = 5 * (math.pi / 2) * d - 2 * d
    assert kerf_length_change(table, contour, d) == pytest.approx(by_hand, rel=1e-12)
    poly = shapely.Polygon(pts)
    ref = poly.buffer(d, quad_segs=4096).exterior.length - poly.exterior.length
    assert by_hand == pytest.approx(ref, rel=1e-6)


def test_offset_of_an_ellipse_against_mpmath():
    # The outward offset of an ellipse (a smooth convex curve) at distance d has length P + 2πd, P the
    # perimeter 4 a E(1 - b²/a²) (mpmath.ellipe): the turning formula must agree with Steiner here too.
    a, b, d = 30.0, 10.0, 1.5
    table, contour = one_contour([("CUT", "arc", ((0, 0), (a, 0), (0, b), 0, 2 * math.pi))])
    assert contour.length == pytest.approx(float(4 * a * mp.ellipe(1 - (b / a) ** 2)), rel=1e-12)
    assert kerf_length_change(table, contour, d) == pytest.approx(2 * math.pi * d, rel=1e-12)


@pytest.mark.parametrize("seed", range(8))
def test_chains_of_shuffled_reversed_loops_and_runs(seed):
    # Random closed polygons and open runs, their segments shuffled and half of them drawn backwards:
    # every loop must come back as one closed contour and every run as one open contour, each step
    # starting where the previous one ended (checked here directly on the geometry).
    rng = np.random.default_rng(seed)
    shapes, truth = [], []
    for k in range(int(rng.integers(1, 12))):
        m = int(rng.integers(1, 7))
        closed = bool(rng.random() < 0.6) and m >= 2
        centre = rng.uniform(0, 500, 2) + 1000 * k
        pts = [tuple(centre + rng.uniform(-20, 20, 2)) for _ in range(m + 1)]
        if closed:
            pts[-1] = pts[0]
        truth.append((closed, m))
        for a, b in itertools.pairwise(pts):
            shapes.append([b, a] if rng.random() < 0.5 else [a, b])
    order = rng.permutation(len(shapes))
    _, table, _, layer = build([("CUT", "polyline", shapes[i]) for i in order])
    contours = chain_contours(table, layer)
    assert sorted(np.concatenate([c.segments for c in contours]).tolist()) == list(range(len(shapes)))
    assert sorted((c.closed, len(c.segments)) for c in contours) == sorted(truth)
    for c in contours:
        a = np.where(c.forward[:, None], table.start[c.segments], table.end[c.segments])
        b = np.where(c.forward[:, None], table.end[c.segments], table.start[c.segments])
        assert np.allclose(a[1:], b[:-1])
        assert np.allclose(a[0], c.start) and np.allclose(b[-1], c.end)
        assert c.closed == bool(np.allclose(c.start, c.end))


def test_overlapping_collinear_lines():
    # Two lines on y = 5 covering [0, 10] and [6, 20] overlap by 4 mm; a third covering [2, 3] lies inside
    # the first (1 mm more); a line on y = 6 and one on another layer do not count (geometry by hand).
    from pathlen.contours import overlapping_lines

    shapes = [("CUT", "polyline", [(0, 5), (10, 5)]), ("CUT", "polyline", [(20, 5), (6, 5)]),
              ("CUT", "polyline", [(2, 5), (3, 5)]), ("CUT", "polyline", [(0, 6), (10, 6)]),
              ("MARK", "polyline", [(0, 5), (10, 5)])]
    _, table, _, layer = build(shapes)
    count, length = overlapping_lines(table, layer, np.arange(len(table)))
    assert count == 2 and length == pytest.approx(4.0 + 1.0)


def test_points_in_boxes_against_brute_force():
    # Reference: the direct test of every point against every box (numpy broadcasting), including a box as
    # large as the whole field, degenerate boxes and points on box edges.
    from pathlen.containment import points_in_boxes

    rng = np.random.default_rng(4)
    pts = rng.uniform(0, 1000, (3000, 2))
    lo = rng.uniform(0, 1000, (800, 2))
    hi = lo + rng.uniform(0, 40, (800, 2))
    lo = np.vstack([lo, [[0, 0], [500, 500]]])
    hi = np.vstack([hi, [[1000, 1000], [500, 500]]])
    pts = np.vstack([pts, [[500, 500]], lo[:5]])  # on corners
    i, j = points_in_boxes(pts, lo, hi)
    inside = np.all((pts[:, None, :] >= lo[None]) & (pts[:, None, :] <= hi[None]), axis=2)
    assert sorted(zip(i.tolist(), j.tolist(), strict=True)) == sorted(zip(*np.nonzero(inside), strict=True))


def test_points_in_boxes_agrees_with_brute_force_whatever_the_largest_box():
    # a sheet-sized box and one 3.5 km wide (a near-straight bulge's old whole-circle box) among
    # small ones: the pairs are exactly the brute-force pairs
    import numpy as np

    from pathlen.containment import points_in_boxes

    rng = np.random.default_rng(7)
    pts = rng.uniform(0, 1000, (5000, 2))
    lo = rng.uniform(0, 990, (2000, 2))
    hi = lo + rng.uniform(0, 10, (2000, 2))
    lo = np.vstack([lo, [[-5, -5]], [[0, 0]], [[100, 100]]])
    hi = np.vstack([hi, [[2000, 2000]], [[3.5e6, 3]], [[100, 100]]])
    i, j = points_in_boxes(pts, lo, hi)
    bi, bj = np.nonzero(((pts[:, None, :] >= lo[None]) & (pts[:, None, :] <= hi[None])).all(axis=2))
    assert sorted(zip(i.tolist(), j.tolist(), strict=True)) == sorted(zip(bi.tolist(), bj.tolist(), strict=True))


def test_arc_boxes_are_tight_and_hold_the_arc():
    # the extremes inside the sweep, checked against dense samples of the arc
    import numpy as np

    from pathlen.geometry import EllipticArcs
    from pathlen.segments import arc_boxes

    rng = np.random.default_rng(3)
    n = 200
    t0 = rng.uniform(-7, 7, n)
    arcs = EllipticArcs(center=rng.uniform(-50, 50, (n, 3)) * [1, 1, 0], u=rng.uniform(-30, 30, (n, 3)) * [1, 1, 0],
                    v=rng.uniform(-30, 30, (n, 3)) * [1, 1, 0], t0=t0, t1=t0 + rng.uniform(1e-6, 2 * np.pi, n),
                    entity=np.zeros(n, dtype=np.int64))
    lo, hi = arc_boxes(arcs)
    t = arcs.t0[:, None] + (arcs.t1 - arcs.t0)[:, None] * np.linspace(0, 1, 20001)[None]
    pts = arcs.center[:, None] + arcs.u[:, None] * np.cos(t)[..., None] + arcs.v[:, None] * np.sin(t)[..., None]
    assert np.all(pts.min(axis=1) >= lo - 1e-9) and np.all(pts.max(axis=1) <= hi + 1e-9)
    assert np.allclose(pts.min(axis=1), lo, atol=1e-5) and np.allclose(pts.max(axis=1), hi, atol=1e-5)


@pytest.mark.parametrize("name", ["kl101_bracket.dxf", "kl214_gasket.dxf", "kl330_sign_panel.dxf",
                                  "kl412_lamp_panel.svg"])
def test_flat_drawing_joined_in_the_plane_counts_as_lifted_off_it(name):
    # a flat drawing's ends are joined in x, y only; the same drawing lifted to z = 5 mm is joined in
    # 3-D: the z differences are all zero, so the contours are the same
    from pathlib import Path

    from pathlen.geometry import affine
    from pathlen.importers import read_drawing
    from pathlen.instances import expand

    drawing = expand(read_drawing(Path(__file__).resolve().parent.parent / "fixtures" / name))
    lifted = drawing.transformed(affine(np.eye(3), (0.0, 0.0, 5.0)))
    assert not np.any(drawing.lines.p0[:, 2]) and np.all(lifted.lines.p0[:, 2] == 5.0)
    assert count_contours(drawing, 0.01) == count_contours(lifted, 0.01)


def test_segments_closed_on_themselves_found_from_the_middles_of_those_whose_ends_meet():
    # segment_ends takes middles only of segments whose ends meet (keep_rows); the closed ones must be those the
    # definition gives with every segment's middle (ends within the tolerance, middle beyond it): whole
    # circles, a closed cubic loop, a closed arc shorter than the tolerance (not closed), ends 0.0099 and
    # 0.0101 mm apart (at the 0.01 mm tolerance), a zero-length line (left out), on the fixtures too
    from pathlib import Path

    from pathlen.contours import closed_segments, segment_ends
    from pathlen.geometry import keep_rows
    from pathlen.importers import read_drawing
    from pathlen.instances import expand
    from pathlen.segments import segment_endpoints, segment_midpoints

    tol = 0.01
    crafted = build([("A", "arc", circle(0, 0, 5)), ("A", "arc", ((20, 0), (0.001, 0), (0, 0.001), 0.0, 2 * math.pi)),
                     ("A", "bezier", [(0, 0), (10, 10), (-10, 10), (0, 0)]),
                     ("A", "bezier", [(0, 0), (10, 10), (-10, 10), (0.0099, 0)]),
                     ("A", "bezier", [(0, 0), (10, 10), (-10, 10), (0.0101, 0)]),
                     ("A", "polyline", [(3, 3), (3, 3), (4, 4)]), ("B", "arc", circle(7, 7, 1))])[0]
    fixtures = Path(__file__).resolve().parent.parent / "fixtures"
    drawings = [crafted] + [expand(read_drawing(fixtures / name)) for name in
                            ("kl101_bracket.dxf", "kl214_gasket.dxf", "kl412_lamp_panel.svg")]
    for drawing in drawings:
        start, end, _ = segment_endpoints(drawing)
        middle = segment_midpoints(drawing)
        real = np.ones(len(start), dtype=bool)
        real[: len(drawing.lines)] = np.any(drawing.lines.p0 != drawing.lines.p1, axis=1)
        expected = closed_segments(start[real], end[real], middle[real], tol)
        got = segment_ends(drawing, tol)[3]
        assert np.array_equal(got, expected)
        rows = np.arange(len(start)) % 3 == 1  # the middles of some rows, as segment_ends takes them
        assert np.array_equal(segment_midpoints(keep_rows(drawing, rows)), middle[rows])
    # rows: the line (3,3)-(4,4), then the arcs (circle, tiny circle, circle on B), then the cubics
    assert segment_ends(crafted, tol)[3].tolist() == [False, True, False, True, True, True, False]
