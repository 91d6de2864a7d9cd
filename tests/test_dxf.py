"""DXF import: every entity kind, blocks, OCS, units and bad files (drawings written with ezdxf)."""

import itertools
import math

import ezdxf
import mpmath as mp
import numpy as np
import pytest

from pathlen.batch import MeasureSettings, measure_file
from pathlen.importers import ImportOptions, read_drawing
from pathlen.instances import expand
from pathlen.measure import measure


def new_doc(units=4):
    doc = ezdxf.new("R2010", setup=False)
    doc.header["$INSUNITS"] = units
    return doc


def measured(doc, tmp_path, name="t.dxf", **opts):
    path = tmp_path / name
    doc.saveas(path)
    drawing = read_drawing(path, ImportOptions(**opts))
    return expand(drawing), measure(drawing)  # copies measured as instances, written out for geometry checks


def test_line_arc_circle(tmp_path):
    doc = new_doc()
    msp = doc.modelspace()
    msp.add_line((0, 0), (30, 40))  # 50 (3-4-5 triangle)
    msp.add_circle((0, 0), 10)  # 2·pi·10
    msp.add_arc((5, 5), 4, 30, 120)  # 4 · 90° in radians
    msp.add_arc((5, 5), 2, 300, 60)  # crosses 0°: 120° span
    _, m = measured(doc, tmp_path)
    expected = 50 + 20 * math.pi + 4 * math.pi / 2 + 2 * 2 * math.pi / 3
    assert m.length == pytest.approx(expected, rel=1e-13)
    assert m.error_bound < 1e-9 * expected


def test_ellipse_full_and_partial(tmp_path):
    doc = new_doc()
    msp = doc.modelspace()
    msp.add_ellipse((0, 0), major_axis=(0, 5), ratio=0.4)  # full, a = 5, b = 2
    msp.add_ellipse((0, 0), major_axis=(5, 0), ratio=0.4, start_param=0, end_param=math.pi / 2)
    _, m = measured(doc, tmp_path)
    mp.mp.dps = 30
    full = 4 * 5 * mp.ellipe(1 - mp.mpf("0.4") ** 2)  # perimeter = 4a·E(m), m = 1 - b²/a²
    assert abs(m.length - float(full * 5 / 4)) <= m.error_bound + 1e-12


def test_lwpolyline_bulges_against_bulge_formula(tmp_path):
    # bulge b = tan(θ/4): an arc over chord c has radius c(1+b²)/(4|b|) and angle 4·atan|b|,
    # so its length is c(1+b²)·atan|b|/|b|  (derived from the DXF bulge definition)
    b1, b2 = 0.4, -1.0
    doc = new_doc()
    doc.modelspace().add_lwpolyline([(0, 0, b1), (10, 0, 0), (10, 5, b2), (0, 5, 0)], format="xyb", close=True)
    drawing, m = measured(doc, tmp_path)

    def arc(c, b):
        return c * (1 + b * b) * math.atan(abs(b)) / abs(b)

    expected = arc(10, b1) + 5 + arc(10, b2) + 5
    assert m.length == pytest.approx(expected, rel=1e-13)
    assert len(drawing.arcs) == 2
    # the arcs start and end at the vertices they join (direction kept)
    start = drawing.arcs.points(drawing.arcs.t0)
    end = drawing.arcs.points(drawing.arcs.t1)
    np.testing.assert_allclose(start[0], [0, 0, 0], atol=1e-12)
    np.testing.assert_allclose(end[0], [10, 0, 0], atol=1e-12)
    np.testing.assert_allclose(end[1], [0, 5, 0], atol=1e-12)


def test_polyline_2d_and_3d(tmp_path):
    doc = new_doc()
    msp = doc.modelspace()
    msp.add_polyline3d([(0, 0, 0), (1, 2, 2), (1, 2, 5)])  # 3 + 3
    msp.add_polyline2d([(0, 0), (4, 0), (4, 3)], close=True)  # 3-4-5 triangle: 12
    _, m = measured(doc, tmp_path)
    assert m.length == pytest.approx(18.0, rel=1e-14)


def test_splines_control_point_rational_and_fit_point(tmp_path):
    doc = new_doc()
    msp = doc.modelspace()
    w = math.sqrt(0.5)
    # rational quadratic quarter circle (conic form): length pi·r/2 exactly
    msp.add_rational_spline([(7, 0), (7, 7), (0, 7)], [1, w, 1], degree=2)
    # a clamped uniform cubic spline: compare with scipy evaluation + mpmath below
    msp.add_open_spline([(0, 0), (1, 2), (3, 2), (4, 0), (6, 1)], degree=3)
    _drawing, m = measured(doc, tmp_path)
    quarter = m.entity_length[0]
    assert abs(quarter - 7 * math.pi / 2) <= m.entity_bound[0]
    # reference for the open spline: mpmath quadrature of the speed of scipy's B-spline
    from scipy.interpolate import BSpline

    ent = doc.modelspace().query("SPLINE")[1]
    bs = BSpline(np.array(ent.knots), np.array(ent.control_points), 3)
    d = bs.derivative()
    mp.mp.dps = 20
    spans = sorted(set(ent.knots))
    ref = sum(mp.quad(lambda t: mp.sqrt(sum(float(x) ** 2 for x in d(float(t)))), [a, b])
              for a, b in itertools.pairwise(spans))
    assert abs(m.entity_length[1] - float(ref)) <= 1e-9 * float(ref)


def test_fit_point_spline_warns(tmp_path):
    doc = new_doc()
    doc.modelspace().add_spline([(0, 0), (1, 1), (2, 0), (3, 1)])
    drawing, m = measured(doc, tmp_path)
    assert any("fit points" in w for w in drawing.warnings)
    assert m.length > math.dist((0, 0), (3, 1))  # longer than its chord (Gravesen 1997)


def test_nested_inserts_with_nonuniform_scale_rotation_and_layer_zero(tmp_path):
    doc = new_doc()
    doc.layers.add("CUT")
    inner = doc.blocks.new("INNER")
    inner.add_circle((0, 0), 1.0)  # layer 0: inherits
    inner.add_line((0, 0), (1, 0), dxfattribs={"layer": "MARK"})
    outer = doc.blocks.new("OUTER", base_point=(5, 5))
    outer.add_blockref("INNER", (5, 5), dxfattribs={"xscale": 2.0, "yscale": 1.0})
    msp = doc.modelspace()
    msp.add_blockref("OUTER", (100, 0), dxfattribs={"layer": "CUT", "xscale": 1.5, "yscale": 1.5, "rotation": 30})
    drawing, m = measured(doc, tmp_path)
    # the circle becomes an ellipse with semi-axes 3 and 1.5: perimeter 4·3·E(1 - 1.5²/3²)
    mp.mp.dps = 30
    ellipse = 4 * 3 * mp.ellipe(1 - (mp.mpf(1.5) / 3) ** 2)
    layers = {e.layer for e in drawing.entities}
    assert layers == {"CUT", "MARK"}
    cut = sum(m.entity_length[i] for i, e in enumerate(drawing.entities) if e.layer == "CUT")
    mark = sum(m.entity_length[i] for i, e in enumerate(drawing.entities) if e.layer == "MARK")
    assert abs(cut - float(ellipse)) <= 1e-9 * float(ellipse)
    assert mark == pytest.approx(3.0, rel=1e-14)  # 1 · 2 (x-scale) · 1.5
    # base point handling: inner origin lands at insert point (100, 0)
    np.testing.assert_allclose(drawing.arcs.center[0], [100, 0, 0], atol=1e-12)


def test_minsert_counts_every_grid_cell(tmp_path):
    doc = new_doc()
    blk = doc.blocks.new("HOLE")
    blk.add_circle((0, 0), 2)
    doc.modelspace().add_blockref("HOLE", (0, 0)).grid(size=(3, 4), spacing=(10, 10))
    _, m = measured(doc, tmp_path)
    assert m.length == pytest.approx(12 * 4 * math.pi, rel=1e-13)


def test_negative_scale_and_ocs_arcs(tmp_path):
    doc = new_doc()
    msp = doc.modelspace()
    # OCS extrusion (0, 0, -1) mirrors the arc; its length is unchanged (DXF reference, OCS)
    msp.add_arc((3, 0), 2, 0, 90, dxfattribs={"extrusion": (0, 0, -1)})
    blk = doc.blocks.new("A")
    blk.add_arc((0, 0), 5, 0, 180)
    msp.add_blockref("A", (0, 0), dxfattribs={"xscale": -1})
    drawing, m = measured(doc, tmp_path)
    assert m.length == pytest.approx(2 * math.pi / 2 + 5 * math.pi, rel=1e-13)
    # mirrored OCS: centre (3, 0) in OCS is (-3, 0) in WCS
    np.testing.assert_allclose(drawing.arcs.center[0], [-3, 0, 0], atol=1e-12)


@pytest.mark.parametrize(("code", "factor"), [(1, 25.4), (2, 304.8), (5, 10.0), (6, 1000.0), (4, 1.0)])
def test_insunits(tmp_path, code, factor):
    # $INSUNITS codes from the DXF reference; inch = 25.4 mm exactly
    doc = new_doc(code)
    doc.modelspace().add_line((0, 0), (1, 0))
    _, m = measured(doc, tmp_path)
    assert m.length == factor


def test_unitless_warns_and_override(tmp_path):
    doc = new_doc(0)
    doc.modelspace().add_line((0, 0), (2, 0))
    drawing, m = measured(doc, tmp_path)
    assert m.length == 2.0 and any("no units" in w for w in drawing.warnings)
    drawing, m = measured(doc, tmp_path, drawing_units="in")
    assert m.length == 50.8


def test_unsupported_entities_are_counted(tmp_path):
    doc = new_doc()
    msp = doc.modelspace()
    msp.add_text("A")
    msp.add_text("B")
    msp.add_point((0, 0))
    msp.add_mtext("C")
    msp.add_line((0, 0), (1, 0))
    drawing, _ = measured(doc, tmp_path)
    assert "2 TEXT entities not measured" in drawing.warnings
    assert "1 POINT entity not measured" in drawing.warnings
    assert "1 MTEXT entity not measured" in drawing.warnings


@pytest.mark.parametrize("chain", [["SELF"], ["A", "B"], ["A", "B", "C"]])
def test_block_cycle_fails_the_file_naming_the_chain(tmp_path, chain):
    # DXF reference (BLOCK): a block may not reference itself, directly or through other blocks
    doc = new_doc()
    for name, nxt in zip(chain, [*chain[1:], chain[0]], strict=True):
        blk = doc.blocks.new(name)
        blk.add_line((0, 0), (1, 0))
        blk.add_blockref(nxt, (2, 0))
    doc.modelspace().add_blockref(chain[0], (0, 0))
    path = tmp_path / "cycle.dxf"
    doc.saveas(path)
    result = measure_file(str(path))
    assert not result.ok
    steps = [f"{a!r} inserts {b!r}" for a, b in zip(chain, [*chain[1:], chain[0]], strict=True)]
    assert result.error == f"block cycle: {', '.join(steps)}; a block cannot contain itself"


@pytest.mark.parametrize("content", [b"", b"\x00\x01\x02\xff" * 100, b"0\nSECTION\n2\nENTITIES\n0\nLINE\n10\n",
                                     b"hello, this is not a drawing\n"])
def test_bad_files_fail_with_one_line(tmp_path, content):
    path = tmp_path / "bad.dxf"
    path.write_bytes(content)
    result = measure_file(str(path))
    assert not result.ok
    if content.startswith(b"0\nSECTION"):  # truncated DXF: refused by default, read with --recover
        assert result.error.startswith("DXF damaged: ")
        assert result.error.endswith("--recover measures what can be read")
        recovered = measure_file(str(path), MeasureSettings(import_options=ImportOptions(recover=True)))
        assert recovered.ok and recovered.length_mm == 0.0 and recovered.recovered
        assert any("structural recovery" in w for w in recovered.warnings)
    else:
        assert result.error == ("empty file" if not content else "not a DXF file (no DXF structure found)")


def test_nan_and_absurd_coordinates_spoil_their_entity_not_the_file(tmp_path):
    # an invalid value is an error of its element: the rest of the drawing is still measured
    doc = new_doc()
    doc.modelspace().add_line((0, 0), (1e13, 0))
    doc.modelspace().add_line((0, 0), (7, 0))
    doc.saveas(tmp_path / "far.dxf")
    far = measure_file(str(tmp_path / "far.dxf"))
    assert far.ok and far.length_mm == 7.0
    assert any("absurdly large" in w and "not measured" in w for w in far.warnings)
    text = (tmp_path / "far.dxf").read_text().replace("10000000000000.0", "nan")
    (tmp_path / "nan.dxf").write_text(text)
    result = measure_file(str(tmp_path / "nan.dxf"))
    assert result.ok and result.length_mm == 7.0
    assert any("LINE #" in w and "non-finite" in w for w in result.warnings)


def test_missing_file(tmp_path):
    result = measure_file(str(tmp_path / "nope.dxf"))
    assert not result.ok and result.error == "no such file"


def test_contours_closed_and_open(tmp_path):
    doc = new_doc()
    msp = doc.modelspace()
    msp.add_lwpolyline([(0, 0), (10, 0), (10, 10)], close=True)  # closed triangle
    msp.add_line((20, 0), (30, 0))  # open
    # a square from four lines drawn in mixed directions, ends within the join tolerance
    for a, b in [((40, 0), (50, 0)), ((50, 10), (50, 0)), ((50, 10), (40, 10.005)), ((40, 0), (40, 10))]:
        msp.add_line(a, b)
    msp.add_circle((0, 50), 3)
    doc.saveas(tmp_path / "c.dxf")
    r = measure_file(str(tmp_path / "c.dxf"))
    assert (r.closed, r.open) == (3, 1)


def test_infinite_integer_group_value(tmp_path):
    # Found by fuzzing: an integer group code whose value reads as "inf" made the DXF reader overflow.
    path = tmp_path / "inf.dxf"
    doc = new_doc()
    doc.modelspace().add_line((0, 0), (1, 0))
    doc.saveas(path)
    text = path.read_text().replace("\n 70\n", "\n 70\ninf\n 71\n", 1)  # an int group with an absurd value
    path.write_text(text)
    result = measure_file(str(path))
    assert result.ok or (result.error and not result.error.startswith("unexpected"))


def test_entities_marked_invisible_are_not_measured(tmp_path):
    # DXF reference, common group codes for entities: 60 = object visibility (0 visible, 1 invisible);
    # CAD programs do not draw invisible entities (a dynamic block's hidden states), an invisible INSERT
    # hides the whole block reference
    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 4
    msp = doc.modelspace()
    msp.add_line((0, 0), (10, 0))
    msp.add_line((0, 0), (0, 7)).dxf.invisible = 1
    block = doc.blocks.new("STATES")
    block.add_circle((0, 0), 1).dxf.invisible = 1
    block.add_line((0, 0), (3, 0))
    msp.add_blockref("STATES", (50, 50))
    msp.add_blockref("STATES", (80, 80)).dxf.invisible = 1
    path = tmp_path / "states.dxf"
    doc.saveas(path)
    entry = measure_file(str(path), MeasureSettings())
    assert entry.ok and entry.length_mm == pytest.approx(10 + 3)
    words = " ".join(entry.warnings)
    assert "1 invisible LINE entity not measured" in words and "invisible INSERT" in words


def test_mline_and_helix_are_measured(tmp_path):
    # MLINE: the lines of its elements as ezdxf (a general-purpose DXF library) draws them; HELIX: the
    # spline it carries, against the classical helix length n·√((2πr)² + p²) (the spline approximates it)
    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 4
    msp = doc.modelspace()
    mline = msp.add_mline([(0, 0), (10, 0), (10, 10)])
    reference = sum(v.dxf.start.distance(v.dxf.end) for v in mline.virtual_entities())
    path = tmp_path / "mline.dxf"
    doc.saveas(path)
    got = measure_file(str(path))
    assert got.ok and got.length_mm == pytest.approx(reference, rel=1e-12)
    assert not any("MLINE" in w for w in got.warnings)
    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 4
    doc.modelspace().add_helix(5, 2, 3)
    path = tmp_path / "helix.dxf"
    doc.saveas(path)
    got = measure_file(str(path))
    assert got.ok and got.length_mm == pytest.approx(3 * math.sqrt((2 * math.pi * 5) ** 2 + 2**2), rel=1e-3)
