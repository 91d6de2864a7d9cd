"""Damaged, odd and hostile input found by attacking the importers: each case keeps its rule.

Rules come from the SVG 2 specification (path data grammar 9.3.9, error handling 9.5.4 and
appendix "implementation notes" for arcs), CSS Syntax (numbers) and the DXF reference.
"""

import math
import os
import struct

import ezdxf
import mpmath as mp
import pytest

from pathlen.batch import find_drawings, measure_file
from tests.drawings import line_dxf

MM_DOC = 'width="100mm" height="100mm" viewBox="0 0 100 100"'


def svg_file(tmp_path, body, attrs=MM_DOC, name="t.svg"):
    path = tmp_path / name
    path.write_text(f'<svg xmlns="http://www.w3.org/2000/svg" {attrs}>{body}</svg>', encoding="utf-8")
    return str(path)


def test_near_straight_bulge_is_measured_not_refused(tmp_path):
    # bulge b = tan(θ/4) on chord c: arc length c(1 + b²)·atan(b)/b (derived: r = c(1+b²)/(4b), θ = 4 atan b)
    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 4
    doc.modelspace().add_lwpolyline([(0, 0, 0, 0, 1e-8), (100, 0, 0, 0, 0)], format="xyseb")
    path = tmp_path / "bulge.dxf"
    doc.saveas(path)
    result = measure_file(str(path))
    mp.mp.dps = 40
    b, c = mp.mpf("1e-8"), mp.mpf(100)
    expected = c * (1 + b * b) * mp.atan(b) / b
    assert result.ok, result.error
    assert abs(result.length_mm - float(expected)) <= max(result.bound_mm, 1e-12 * 100)


def test_arc_of_huge_radius_is_measured_not_refused(tmp_path):
    # circular arc through two points 10 apart with r = 1e12: length 2r·asin(c/2r) (plane geometry)
    result = measure_file(svg_file(tmp_path, '<path d="M 0 0 A 1e12 1e12 0 0 1 10 0"/>'))
    mp.mp.dps = 40
    r = mp.mpf("1e12")
    expected = 2 * r * mp.asin(5 / r)
    assert result.ok, result.error
    assert result.length_mm == pytest.approx(float(expected), rel=1e-9)


def test_tiny_arc_radii_are_scaled_up(tmp_path):
    # SVG 2 implementation notes (out-of-range radii): radii too small are scaled up until the arc
    # fits: equal radii give the half circle on the chord, length π·c/2
    result = measure_file(svg_file(tmp_path, '<path d="M 0 0 A 1e-300 1e-300 0 0 1 10 0"/>'))
    assert result.ok, result.error
    assert result.length_mm == pytest.approx(5 * math.pi, rel=1e-12)


@pytest.mark.parametrize("data", ["M 0 0 L 10 0 L INF 0", "M 0 0 L 10 0 L 1e400 0", "M 0 0 L 10 0 L NaN 5",
                                  "M 0 0 L 10 0 L 1_0 0", "M 0 0 L 10 0 L \u0661\u0660 0"])
def test_path_data_is_used_up_to_the_first_number_the_grammar_refuses(tmp_path, data):
    # SVG 2, 9.5.4: path data is rendered up to (not including) the command with the error; numbers
    # follow the grammar (ASCII digits, no underscores, no INF/NaN) and must fit a double
    result = measure_file(svg_file(tmp_path, f'<path d="{data}"/>'))
    assert result.ok, result.error
    assert result.length_mm == pytest.approx(10.0, rel=1e-14)
    assert any("path measured up to there" in w or "without its" in w for w in result.warnings)


def test_overflowing_transform_is_ignored_and_the_element_drawn(tmp_path):
    # SVG 2 / CSS: an invalid value is ignored (the attribute takes its initial value, none)
    result = measure_file(svg_file(tmp_path, '<line x2="10" transform="rotate(1e400)"/>'))
    assert result.ok and result.length_mm == pytest.approx(10.0, rel=1e-14)
    assert any("out of range" in w and "transform ignored" in w for w in result.warnings)


def test_percentage_height_without_viewbox_is_read(tmp_path):
    result = measure_file(svg_file(tmp_path, '<line x2="96"/>', attrs='width="100mm" height="50%"'))
    assert result.ok, result.error
    assert result.length_mm == pytest.approx(25.4, rel=1e-14)  # 96 px = 1 in (CSS Values and Units)


def test_root_in_a_foreign_namespace_fails_by_name(tmp_path):
    path = tmp_path / "ns.svg"
    path.write_text('<svg xmlns="http://example.com/not-svg" width="10mm" height="10mm"><line x2="5"/></svg>')
    result = measure_file(str(path))
    assert not result.ok and "not SVG's" in result.error


def test_drawing_with_nothing_measurable_says_so(tmp_path):
    result = measure_file(svg_file(tmp_path, "<text>only words</text>"))
    assert result.ok and result.length_mm == 0
    assert any(w.startswith("nothing measurable") for w in result.warnings)


def test_polyline_without_vertices_is_named(tmp_path):
    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 4
    doc.modelspace().add_polyline2d([])
    doc.modelspace().add_line((0, 0), (1, 0))
    path = tmp_path / "empty_poly.dxf"
    doc.saveas(path)
    result = measure_file(str(path))
    assert result.ok and any("POLYLINE" in w and "0 vertices" in w for w in result.warnings)


def test_damaged_section_name_is_refused(tmp_path):
    path = line_dxf(tmp_path / "damaged.dxf", insunits=None)
    text = path.read_text()
    path.write_text(text.replace("ENTITIES", "ENTTIES", 1))
    result = measure_file(str(path))
    assert not result.ok and result.error.startswith("DXF damaged: unknown section 'ENTTIES'")


def test_truncated_binary_dxf_gets_a_plain_reason(tmp_path):
    doc = ezdxf.new()
    doc.modelspace().add_line((0, 0), (10, 0))
    path = tmp_path / "binary.dxf"
    doc.saveas(path, fmt="bin")
    path.write_bytes(path.read_bytes()[:5000])
    result = measure_file(str(path))
    assert not result.ok
    assert result.error.startswith("DXF damaged:") and "unexpected" not in result.error
    assert "unpack" not in result.error and "Error" not in result.error


def test_same_entities_with_and_without_a_header(tmp_path):
    # DXF reference: the HEADER section is optional; without $INSUNITS a drawing is unitless (mm here,
    # with a warning), never the metres of a template header; entity group codes are all honoured
    doc = ezdxf.new("R2013")
    doc.header["$INSUNITS"] = 0
    msp = doc.modelspace()
    msp.add_lwpolyline([(0, 0), (10, 0), (10, 10)], close=True, dxfattribs={"layer": "CUT"})
    msp.add_rational_spline([(0, 0), (1, 2), (3, 2), (4, 0)], [1, 0.5, 2, 1], degree=2)
    full = tmp_path / "full.dxf"
    doc.saveas(full)
    text = full.read_text()
    start = text.index("  0\nSECTION\n  2\nENTITIES\n")
    end = text.index("  0\nENDSEC\n", start) + len("  0\nENDSEC\n")
    bare = tmp_path / "bare.dxf"
    bare.write_text(text[start:end] + "  0\nEOF\n")
    crlf = tmp_path / "bare_crlf.dxf"  # the same bytes with CRLF line ends (the DXF reference allows both)
    crlf.write_bytes((text[start:end] + "  0\nEOF\n").replace("\n", "\r\n").encode())
    a, b, c = measure_file(str(full)), measure_file(str(bare)), measure_file(str(crlf))
    assert a.ok and b.ok and c.ok, (a.error, b.error, c.error)
    assert b.length_mm == pytest.approx(a.length_mm, rel=1e-15)
    assert c.length_mm == b.length_mm and (c.closed, c.open) == (b.closed, b.open)
    assert {k: v.length_mm for k, v in b.layers.items()} == pytest.approx({k: v.length_mm for k, v in a.layers.items()})
    assert (b.closed, b.open) == (a.closed, a.open)
    assert any("no units" in w for w in b.warnings)


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="no named pipes on this system")
def test_folder_scan_reports_pipes_and_dangling_links(tmp_path):
    os.mkfifo(tmp_path / "pipe.svg")
    os.symlink(tmp_path / "gone.dxf", tmp_path / "link.dxf")
    found = find_drawings([str(tmp_path)])
    assert sorted(os.path.basename(f) for f in found) == ["link.dxf", "pipe.svg"]
    errors = {os.path.basename(f): measure_file(f).error for f in found}
    assert errors == {"link.dxf": "broken symbolic link: the file it points to does not exist",
                      "pipe.svg": "not a regular file (a folder, pipe or device)"}


def test_struct_is_what_binary_dxf_truncation_raises():
    # guard for the test above: the reason must not depend on struct's message text
    with pytest.raises(struct.error):
        struct.unpack_from("<d", b"\x00")


def test_an_insert_without_a_block_name_is_named_in_the_drawings_terms(tmp_path):
    # DXF reference: INSERT group code 2 is the block name; without it the reference places nothing
    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 4
    doc.blocks.new("PART").add_line((0, 0), (5, 0))
    msp = doc.modelspace()
    msp.add_line((0, 0), (10, 0))
    msp.add_blockref("PART", (20, 0))
    path = tmp_path / "noname.dxf"
    doc.saveas(path)
    text = path.read_text()
    at = text.index("\n  2\nPART\n", text.index("INSERT\n"))
    path.write_text(text[:at] + text[at + len("\n  2\nPART"):])
    result = measure_file(str(path))
    assert result.ok and result.length_mm == pytest.approx(10.0)
    assert any("names no block (group code 2 missing)" in w for w in result.warnings)
    assert not any("NoneType" in w for w in result.warnings)


@pytest.mark.parametrize(("edit", "words"), [
    (lambda t: t.replace("12.5\n", "12,5\n"), "numbers written with decimal commas (line"),
    (lambda t: t.replace(" 10\n0.0\n 20\n0.0\n", " 20\n0.0\n 10\n0.0\n", 1), "coordinates are missing or out of order"),
    (lambda t: t.replace(" 11\n12.5\n", " 21\n12.5\n", 1), "group code 21 given twice in LINE"),  # 11 changed to 21
])
def test_damage_is_named_by_what_was_found(tmp_path, edit, words):
    # DXF reference: numbers use a decimal point; a point's x, y, z are group codes 10, 20, 30 in order
    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 4
    doc.modelspace().add_line((0, 0), (12.5, 3.25))
    path = tmp_path / "line.dxf"
    doc.saveas(path)
    path.write_text(edit(path.read_text()))
    result = measure_file(str(path))
    assert not result.ok and words in result.error and "truncated" not in result.error
