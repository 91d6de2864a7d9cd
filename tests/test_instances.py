"""Instances (blocks, MINSERT, <use>) measured once per definition against their copies written out."""

import math
import resource
import time

import ezdxf
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from pathlen.batch import measure_file
from pathlen.geometry import SegmentCollector, affine
from pathlen.importers import read_drawing
from pathlen.instances import TooManySegments, expand, segment_total
from pathlen.measure import measure


def random_definition(rng, layer):
    coll = SegmentCollector()
    for k in range(rng.integers(1, 4)):
        e = coll.entity(layer if k else "0", f"h{k}", "X")
        coll.add_line(rng.normal(size=3) * [5, 5, 0], rng.normal(size=3) * [5, 5, 0], e)
        coll.add_arc(rng.normal(size=3) * [5, 5, 0], (2.0, 0.5, 0.0), (-0.3, 1.0, 0.0), 0.2, 0.2 + 5 * rng.random(), e)
        coll.add_bezier(rng.normal(size=(4, 3)) * [5, 5, 0], None, e)
    return coll


def random_map(rng, kind):
    angle = rng.uniform(0, 2 * math.pi)
    rot = np.array([[math.cos(angle), -math.sin(angle), 0], [math.sin(angle), math.cos(angle), 0], [0, 0, 1]])
    if kind == "similarity":
        lin = rot * rng.uniform(0.1, 3) * np.diag([rng.choice([-1, 1]), 1, 1])
    elif kind == "skew":
        lin = rot @ np.array([[1, rng.uniform(-2, 2), 0], [0, 1, 0], [0, 0, 1]])
    else:
        lin = rot @ np.diag([rng.uniform(0.2, 3), rng.uniform(0.2, 3), 1])
    return affine(lin, tuple(rng.normal(size=2) * 50))


@settings(max_examples=25, deadline=None)
@given(st.integers(0, 2**32 - 1))
def test_instanced_lengths_equal_written_out_copies(seed):
    # Reference: the same tree with every copy written out as segments of its own (arc length is a
    # property of each copy's curve; grouping copies must not change any entity's total)
    rng = np.random.default_rng(seed)
    deepest = random_definition(rng, "L3").drawing()
    middle = random_definition(rng, "L2")
    for _ in range(rng.integers(1, 4)):
        middle.add_placement(deepest, random_map(rng, rng.choice(["similarity", "skew", "stretch"])), "d",
                             lambda lay: "MID" if lay == "0" else lay, "d/")
    middle_d = middle.drawing()
    top = random_definition(rng, "L1")
    for k in range(rng.integers(1, 4)):
        top.add_placement(middle_d, random_map(rng, rng.choice(["similarity", "skew", "stretch"])), ("m", k % 2),
                          lambda lay, k=k: f"TOP{k % 2}" if lay == "0" else lay, "m/")
    drawing = top.drawing()
    instanced = measure(drawing)
    flat = measure(expand(drawing))
    np.testing.assert_allclose(instanced.entity_length, flat.entity_length, rtol=1e-12, atol=1e-12)
    assert instanced.error_bound <= 1e-9 * instanced.length + 1e-12


def minsert_doc(rows, cols, radius=2.0, rotation=30.0):
    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 4
    blk = doc.blocks.new("HOLE")
    blk.add_circle((0, 0), radius)
    doc.modelspace().add_blockref("HOLE", (10, 20), dxfattribs={
        "row_count": rows, "column_count": cols, "row_spacing": 7.0, "column_spacing": 5.0, "rotation": rotation})
    return doc


def test_minsert_grid_copies_sit_where_ezdxf_puts_them(tmp_path):
    # ezdxf's multi_insert() yields one virtual INSERT per grid cell (DXF reference, INSERT groups 70/71/44/45)
    doc = minsert_doc(3, 2)
    path = tmp_path / "grid.dxf"
    doc.saveas(path)
    flat = expand(read_drawing(path))
    insert = doc.modelspace()[0]
    expected = sorted(tuple(np.round(v.dxf.insert.xyz, 9)) for v in insert.multi_insert())
    assert sorted(tuple(np.round(c, 9)) for c in flat.arcs.center) == expected


def test_minsert_of_a_million_circles_costs_about_one_circle(tmp_path):
    # circle 2πr (classical), a million copies by translation
    path = tmp_path / "million.dxf"
    minsert_doc(1000, 1000).saveas(path)
    before = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    start = time.perf_counter()
    result = measure_file(str(path))
    elapsed = time.perf_counter() - start
    assert result.ok
    assert result.length_mm == pytest.approx(1e6 * 2 * math.pi * 2.0, rel=1e-12)
    assert result.layers["0"].count == 10**6
    assert result.contours_counted and result.closed == 10**6  # 1e6 arcs: under the 10M limit, written out
    grown_mb = (resource.getrusage(resource.RUSAGE_SELF).ru_maxrss - before) / 1024
    assert grown_mb < 1500, grown_mb  # generous: the copies are written out once for the contour count
    assert elapsed < 60


def test_expansion_limit_names_the_count(tmp_path):
    path = tmp_path / "grid.dxf"
    minsert_doc(100, 100).saveas(path)
    drawing = read_drawing(path)
    assert segment_total(drawing) == 10_000
    with pytest.raises(TooManySegments, match="10,000 segments, over the limit of 9,999"):
        expand(drawing, 9_999)
    assert len(expand(drawing, 10_000).arcs) == 10_000


def test_nested_inserts_six_deep_ten_wide(tmp_path):
    # 10^6 copies of a 1-unit line (mm): measured once, exactly 10^6 mm (contours: written out)
    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 4
    doc.blocks.new("B0").add_line((0, 0), (1, 0))
    for level in range(1, 7):
        blk = doc.blocks.new(f"B{level}")
        for k in range(10):
            blk.add_blockref(f"B{level - 1}", (0, 2 * k * 10 ** (level - 1)))  # every copy in its own place
    doc.modelspace().add_blockref("B6", (0, 0))
    path = tmp_path / "deep.dxf"
    doc.saveas(path)
    start = time.perf_counter()
    result = measure_file(str(path))
    assert result.ok and result.length_mm == 1e6
    assert result.layers["0"].count == 10**6
    assert result.open == 10**6
    assert time.perf_counter() - start < 30


def _written_out_count(drawing):
    from pathlen.contours import count_contours
    from pathlen.geometry import keep_entities

    shown = np.array([not e.hidden for e in drawing.entities], dtype=bool)
    return count_contours(keep_entities(expand(drawing), shown))


def _lattice_definition(rng, layer):
    """Lines and quarter arcs between points of a unit lattice: copies moved by lattice maps share ends."""
    coll = SegmentCollector()
    for k in range(rng.integers(1, 5)):
        e = coll.entity(layer if k % 2 else "0", f"h{k}", "X")
        a = np.r_[rng.integers(0, 4, size=2), 0].astype(float)
        b = np.r_[rng.integers(0, 4, size=2), 0].astype(float)
        if np.any(a != b):
            coll.add_line(a, b, e)
        else:  # a quarter circle of radius 1 from a to a + (1, 1)
            coll.add_arc(a + np.array([1.0, 0.0, 0.0]), (-1.0, 0.0, 0.0), (0.0, 1.0, 0.0), 0.0, math.pi / 2, e)
    return coll


def _lattice_map(rng):
    """A lattice symmetry (quarter turns, mirror, integer shift) or, now and then, a scaling by 2 or 1/2."""
    turns = int(rng.integers(0, 4))
    c, s = [1, 0, -1, 0][turns], [0, 1, 0, -1][turns]
    lin = np.array([[c, -s, 0], [s, c, 0], [0, 0, 1]], dtype=float) @ np.diag([rng.choice([-1, 1]), 1, 1])
    if rng.random() < 0.25:
        lin = lin * rng.choice([0.5, 2.0])
    return affine(lin, tuple(float(v) for v in rng.integers(-4, 5, size=2)))


@settings(max_examples=60, deadline=None)
@given(st.integers(0, 2**32 - 1))
def test_contours_counted_through_the_tree_equal_written_out_copies(seed):
    # Reference: the copies written out and counted as one drawing.  Lattice pieces under lattice maps:
    # many copies share ends with others or with the drawing's own segments, some are far apart, some
    # are scaled (a scaled copy may join differently and is written out).
    from pathlen.contour_tree import count_placed

    rng = np.random.default_rng(seed)
    far = float(rng.choice([1.0, 100.0]))
    deepest = _lattice_definition(rng, "L3").drawing()
    middle = _lattice_definition(rng, "L2")
    for _ in range(rng.integers(1, 5)):
        m = _lattice_map(rng)
        m[:2, 3] *= far
        middle.add_placement(deepest, m, "d", lambda lay: "MID" if lay == "0" else lay, "d/")
    middle_d = middle.drawing()
    top = _lattice_definition(rng, "L1")
    for k in range(rng.integers(1, 5)):
        m = _lattice_map(rng)
        m[:2, 3] *= far
        top.add_placement(middle_d, m, ("m", k % 2), lambda lay, k=k: f"TOP{k % 2}" if lay == "0" else lay, "m/")
    drawing = top.drawing()
    assert count_placed(drawing, 0.01, 10**7) == _written_out_count(drawing)


def test_copies_that_share_edges_join_and_scaled_copies_close_a_gap(tmp_path):
    # squares of four lines, side 10, in a row 10 apart: neighbours share an edge, so the row is one
    # network, not separate squares; a square with a 0.015 mm gap (over the 0.01 mm join tolerance) is
    # open, and closed when a copy scales it by 1/2 (the gap becomes 0.0075 mm)
    from pathlen.contour_tree import count_placed

    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 4
    square = doc.blocks.new("SQ")
    for a, b in (((0, 0), (10, 0)), ((10, 0), (10, 10)), ((10, 10), (0, 10)), ((0, 10), (0, 0))):
        square.add_line(a, b)
    gapped = doc.blocks.new("GAP")
    for a, b in (((0, 0), (10, 0)), ((10, 0), (10, 10)), ((10, 10), (0, 10)), ((0, 10), (0, 0.015))):
        gapped.add_line(a, b)
    msp = doc.modelspace()
    for k in range(4):
        msp.add_blockref("SQ", (10 * k, 0))  # touching neighbours
    msp.add_blockref("SQ", (100, 100))  # alone
    msp.add_blockref("GAP", (200, 0))  # open
    msp.add_blockref("GAP", (300, 0), dxfattribs={"xscale": 0.5, "yscale": 0.5})  # closed by scaling
    path = tmp_path / "row.dxf"
    doc.saveas(path)
    drawing = read_drawing(path)
    counted = count_placed(drawing, 0.01, 10**7)
    assert counted == _written_out_count(drawing)
    assert counted.open == 1
    assert counted.closed == 1 + 1 + 1  # the row as one closed network, the lone square, the scaled gap


def test_a_tree_of_ten_million_disjoint_copies_is_counted(tmp_path):
    # 7 levels of 10 copies of (a circle, a line): 10^7 closed and 10^7 open contours by construction,
    # counted once per block instead of 2 x 10^7 written-out segments (which the segment limit refuses)
    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 4
    leaf = doc.blocks.new("B0")
    leaf.add_circle((0, 0), 0.25)
    leaf.add_line((0.5, 0), (0.9, 0))
    for level in range(1, 8):
        blk = doc.blocks.new(f"B{level}")
        for k in range(10):
            blk.add_blockref(f"B{level - 1}", (0, 2 * k * 10 ** (level - 1)) if level % 2 else
                             (2 * k * 10 ** (level - 1), 0))
    doc.modelspace().add_blockref("B7", (0, 0))
    path = tmp_path / "tree.dxf"
    doc.saveas(path)
    start = time.perf_counter()
    result = measure_file(str(path))
    assert result.ok and result.contours_counted, result.warnings
    assert (result.closed, result.open) == (10**7, 10**7)
    assert result.length_mm == pytest.approx(10**7 * (2 * math.pi * 0.25 + 0.4), rel=1e-12)  # circle 2πr
    assert time.perf_counter() - start < 60  # a hang guard, not a timing: it was 17 s and 4 GB, then refused
