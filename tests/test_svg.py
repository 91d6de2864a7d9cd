"""SVG import: geometry, units, transforms, use/symbol, layers and colours, each against an outside reference."""

import math

import mpmath as mp
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from svgpathtools import parse_path as reference_parse_path

from pathlen.batch import measure_file
from pathlen.importers import ImportOptions, read_drawing
from pathlen.importers.svg_segments import endpoint_to_centre
from pathlen.measure import measure
from tests.reference import ellipse_arc_length

MM_DOC = 'width="100mm" height="100mm" viewBox="0 0 100 100"'  # one user unit = 1 mm


def svg(tmp_path, body, attrs=MM_DOC, name="t.svg", **opts):
    path = tmp_path / name
    path.write_text(f'<svg xmlns="http://www.w3.org/2000/svg" xmlns:xlink="http://www.w3.org/1999/xlink" '
                    f'{attrs}>{body}</svg>')
    drawing = read_drawing(path, ImportOptions(**opts))
    return drawing, measure(drawing)


def close(result, expected, rel=1e-12):
    assert result.length == pytest.approx(float(expected), rel=rel, abs=1e-12)
    assert abs(result.length - float(expected)) <= result.error_bound + 1e-12 * abs(float(expected))


# --- path data ---------------------------------------------------------------------------------

PATHS = [
    "M10 10 L 30 10 40 30 H 50 V 60 Z",
    "m10 10 l20 0 10 20 h10 v30 z m5 5 10 0",  # relative, implicit line-tos after m
    "M10 80 C 40 10, 65 10, 95 80 S 150 150, 180 80",  # smooth cubic reflection
    "M10 80 Q 52.5 10, 95 80 T 180 80 t 30 0",  # smooth quadratic reflection, chained
    "M10 10 c1-2-3 4 5.5.5 s-1e1 2E+0 3 4",  # numbers without separators
    "M80 80 A 45 45, 0, 0, 0, 125 125 L 125 80 Z",
    "M230 80 A 45 45, 0, 1, 0, 275 125 L 275 80 Z",
    "M10 315 L 110 215 A 30 50 0 0 1 162.55 162.45 L 172.55 152.45 A 30 50 -45 0 1 215.1 109.9 L 315 10",
    "M0 0 a25 25 -30 01 50 -25",  # compact arc flags
    "M1 1 S 5 5 10 1 T 20 20",  # S and T with nothing to reflect: first control point at the current point
]


@pytest.mark.parametrize("d", PATHS)
def test_path_length_matches_svgpathtools(tmp_path, d):
    # Reference: svgpathtools (independent parser and arc conversion), lengths integrated to 1e-12.
    _, result = svg(tmp_path, f'<path d="{d}"/>', attrs='width="1000px" height="1000px"', svg_dpi=25.4)
    expected = sum(seg.length(error=1e-13) for seg in reference_parse_path(d))
    assert result.length == pytest.approx(expected, rel=1e-9)


def test_closepath_returns_to_subpath_start(tmp_path):
    # SVG 1.1, 8.3.3: Z draws a straight line back to the start of the current subpath.
    drawing, result = svg(tmp_path, '<path d="M0 0 H30 V40 Z"/>')
    close(result, 30 + 40 + 50)  # 3-4-5 triangle
    assert len(drawing.lines) == 3


def test_bad_path_data_is_kept_up_to_the_error(tmp_path):
    # SVG 1.1, F.2 error processing: render the path up to the command in error.
    drawing, result = svg(tmp_path, '<path id="p" d="M0 0 H10 V10 L 5 x 7"/>')
    close(result, 20)
    assert any("<path> p" in w for w in drawing.warnings)


def test_semicircle_with_too_small_radii(tmp_path):
    # SVG 1.1, F.6.6: radii too small are scaled up until the arc just fits: a semicircle, length πr.
    _, result = svg(tmp_path, '<path d="M10 50 A 1 1 0 0 1 90 50"/>')
    close(result, 40 * math.pi)


def test_zero_radius_arc_is_a_line(tmp_path):
    # SVG 1.1, F.6.2: rx = 0 or ry = 0 -> a straight line; equal endpoints -> the arc is omitted.
    _, result = svg(tmp_path, '<path d="M0 0 A 0 5 0 0 1 30 40 A 5 5 0 0 1 30 40"/>')
    close(result, 50)


arc_rows = st.tuples(
    st.floats(-50, 50), st.floats(-50, 50), st.floats(0.5, 40), st.floats(0.5, 40), st.floats(-360, 360),
    st.sampled_from([0, 1]), st.sampled_from([0, 1]), st.floats(-50, 50), st.floats(-50, 50),
)


@settings(max_examples=200, deadline=None)
@given(arc_rows)
def test_arc_conversion_meets_the_spec_conditions(row):
    # SVG 1.1, F.6.4: the centre form must start and end at the given points, lie on an ellipse with
    # the (corrected) radii rotated by phi, sweep more than 180° exactly when large-arc is 1, and run
    # in the positive-angle direction exactly when sweep is 1.
    x1, y1, rx, ry, phi, large, sweep, x2, y2 = row
    if math.hypot(x2 - x1, y2 - y1) < 1e-3:
        return
    c, u, v, t0, t1 = (a[0] for a in endpoint_to_centre(np.array([row], dtype=float)))
    p = lambda t: c + u * math.cos(t) + v * math.sin(t)  # noqa: E731
    scale = max(1.0, rx, ry, abs(x1), abs(y1), abs(x2), abs(y2))
    assert np.allclose(p(t0), [x1, y1], atol=1e-9 * scale)
    assert np.allclose(p(t1), [x2, y2], atol=1e-9 * scale)
    # every point lies on the ellipse of radii (rx, ry)·g rotated by phi, g = max(1, √Λ) (F.6.6: radii
    # only ever grow, both by the same factor)
    angle = math.radians(phi)
    cs, sn = math.cos(angle), math.sin(angle)
    x1p = cs * (x1 - x2) / 2 + sn * (y1 - y2) / 2
    y1p = -sn * (x1 - x2) / 2 + cs * (y1 - y2) / 2
    g = max(1.0, math.sqrt((x1p / rx) ** 2 + (y1p / ry) ** 2))
    for t in np.linspace(t0, t1, 7):
        dx, dy = p(t) - c
        xr, yr = cs * dx + sn * dy, -sn * dx + cs * dy
        assert (xr / (rx * g)) ** 2 + (yr / (ry * g)) ** 2 == pytest.approx(1.0, rel=1e-8)
    span = t1 - t0
    if abs(span - math.pi) > 1e-6:  # exactly 180° satisfies both flags
        assert (span > math.pi) == bool(large)
    tangent = -u * math.sin(t0) + v * math.cos(t0)
    radial = p(t0) - c
    turning = radial[0] * tangent[1] - radial[1] * tangent[0]  # > 0: angle increases (y down: clockwise)
    assert (turning > 0) == bool(sweep)


# --- shapes --------------------------------------------------------------------------------------

def test_basic_shapes(tmp_path):
    # Classical results: circle 2πr; square 4s; regular hexagon 6s; 3-4-5 triangle; polyline open.
    hexagon = " ".join(f"{50 + 10 * math.cos(k * math.pi / 3)},{50 + 10 * math.sin(k * math.pi / 3)}"
                       for k in range(6))
    body = (f'<circle cx="50" cy="50" r="7"/><rect x="1" y="1" width="5" height="5"/>'
            f'<polygon points="{hexagon}"/><line x1="0" y1="0" x2="3" y2="4"/>'
            f'<polyline points="0,0 0,10 10,10"/>')
    drawing, result = svg(tmp_path, body)
    close(result, 2 * math.pi * 7 + 20 + 60 + 5 + 20)
    assert [e.kind for e in drawing.entities] == ["circle", "rect", "polygon", "line", "polyline"]


def test_rounded_rect(tmp_path):
    # Geometry: straight sides shortened by the radii plus one whole ellipse of semi-axes rx, ry, whose
    # perimeter is 4 a E(1 - b²/a²) (complete elliptic integral of the second kind, mpmath.ellipe).
    _, result = svg(tmp_path, '<rect x="10" y="10" width="60" height="30" rx="8" ry="5"/>')
    mp.mp.dps = 30
    ellipse = 4 * 8 * mp.ellipe(1 - (5 / 8) ** 2)
    close(result, 2 * (60 - 16) + 2 * (30 - 10) + ellipse)


def test_rounded_rect_radius_rules(tmp_path):
    # SVG 1.1, 9.2 (and SVG 2, 10.2): a missing ry takes rx's value, then each radius is clamped to half
    # the width/height: rx 50 -> 20, ry 50 -> 5; the sides vanish and the outline is one whole ellipse
    # (4 a E(1 - b²/a²), mpmath.ellipe).
    _, result = svg(tmp_path, '<rect width="40" height="10" rx="50"/>')
    mp.mp.dps = 30
    close(result, 4 * 20 * mp.ellipe(1 - (5 / 20) ** 2))


def test_ellipse_perimeter(tmp_path):
    # Perimeter = 4 a E(m), m = 1 - b²/a² (mpmath.ellipe, parameter convention m = k²).
    _, result = svg(tmp_path, '<ellipse cx="50" cy="50" rx="30" ry="12"/>')
    mp.mp.dps = 30
    close(result, 4 * 30 * mp.ellipe(1 - (12 / 30) ** 2))


# --- transforms ----------------------------------------------------------------------------------

def test_circle_under_nonuniform_scale_is_an_exact_ellipse(tmp_path):
    # scale(2,1) turns a circle of radius r into an ellipse with a = 2r, b = r: 4a E(1 - b²/a²) (mpmath).
    drawing, result = svg(tmp_path, '<circle cx="10" cy="10" r="5" transform="scale(2,1)"/>')
    mp.mp.dps = 30
    close(result, 4 * 10 * mp.ellipe(1 - 0.25))
    assert len(drawing.arcs) == 1 and not drawing.beziers  # kept as an elliptic arc, not flattened


def test_skewed_circle(tmp_path):
    # skewX(30) maps the circle to c + M(r,0) cos t + M(0,r) sin t; reference: mpmath quadrature of its speed.
    _, result = svg(tmp_path, '<circle cx="20" cy="20" r="6" transform="skewX(30)"/>')
    k = math.tan(math.radians(30))
    close(result, ellipse_arc_length([6, 0, 0], [6 * k, 6, 0], 0, 2 * math.pi), rel=1e-10)


def matrix(a, b, c, d, e, f):
    return np.array([[a, c, e], [b, d, f], [0, 0, 1]], dtype=float)


def test_nested_groups_with_every_transform_kind(tmp_path):
    # SVG 1.1, 7.4-7.6: transform lists compose left to right, nested groups outer first.  The
    # reference matrix is built here with numpy from the spec's matrix forms.
    t, s, r = math.radians(25), math.radians(10), math.radians(-15)
    outer = (matrix(1, 0, 0, 1, 5, 7) @ matrix(1.5, 0, 0, 0.5, 0, 0))
    rot_c = matrix(1, 0, 0, 1, 3, 4) @ matrix(math.cos(t), math.sin(t), -math.sin(t), math.cos(t), 0, 0) \
        @ matrix(1, 0, 0, 1, -3, -4)
    inner = rot_c @ matrix(1, 0, math.tan(s), 1, 0, 0) @ matrix(1, math.tan(r), 0, 1, 0, 0) \
        @ matrix(0.9, 0.1, -0.2, 1.1, 2, -1)
    body = ('<g transform="translate(5,7) scale(1.5,0.5)"><g transform="rotate(25 3 4) skewX(10), skewY(-15) '
            'matrix(0.9 0.1 -0.2 1.1 2 -1)"><circle cx="4" cy="5" r="3"/><line x1="0" y1="0" x2="10" y2="2"/>'
            '</g></g>')
    _, result = svg(tmp_path, body)
    m = (outer @ inner)[:2, :2]
    circle = ellipse_arc_length([*(m @ [3, 0]), 0], [*(m @ [0, 3]), 0], 0, 2 * math.pi)
    line = np.linalg.norm(m @ [10, 2])
    close(result, circle + line, rel=1e-10)


# --- units ---------------------------------------------------------------------------------------

def test_document_in_mm_with_viewbox(tmp_path):
    # 100 mm wide showing 200 user units: 0.5 mm per unit.
    _, result = svg(tmp_path, '<line x1="0" y1="0" x2="200" y2="0"/>', 'width="100mm" height="50mm" '
                    'viewBox="0 0 200 100"')
    close(result, 100)


@pytest.mark.parametrize(("par", "sx", "sy"), [("xMidYMid meet", 0.5, 0.5), ("xMinYMax slice", 1.0, 1.0),
                                                ("none", 0.5, 1.0), ("", 0.5, 0.5)])
def test_preserve_aspect_ratio_scales(tmp_path, par, sx, sy):
    # SVG 2, 8.2: meet takes the smaller ratio, slice the larger, none stretches each axis (100/200, 100/100).
    _, result = svg(tmp_path, '<path d="M0 0 H10 M0 0 V10"/>',
                    f'width="100mm" height="100mm" viewBox="0 0 200 100" preserveAspectRatio="{par}"')
    close(result, 10 * sx + 10 * sy)


def test_px_document_at_96_per_inch_with_warning(tmp_path):
    # CSS Values and Units: 1in = 96px = 25.4mm.
    drawing, result = svg(tmp_path, '<line x1="0" y1="0" x2="96" y2="0"/>', 'width="200px" height="100px"')
    close(result, 25.4)
    assert any("96 px per inch" in w for w in drawing.warnings)


def test_svg_dpi_override(tmp_path):
    drawing, result = svg(tmp_path, '<line x1="0" y1="0" x2="72" y2="0"/>', 'width="200" height="100"',
                          svg_dpi=72)
    close(result, 25.4)
    assert not any("px per inch" in w for w in drawing.warnings)


@pytest.mark.parametrize(("length", "mm"), [("1in", 25.4), ("2.54cm", 25.4), ("72pt", 25.4), ("6pc", 25.4),
                                             ("100Q", 25.0), ("96px", 25.4)])
def test_css_absolute_units_in_attributes(tmp_path, length, mm):
    # CSS Values and Units Level 3, 5.2: 1in = 2.54cm = 96px = 72pt = 6pc; 1Q = 0.25mm.
    _, result = svg(tmp_path, f'<line x1="0" y1="0" x2="{length}" y2="0"/>', 'width="10in" height="10in"')
    close(result, mm)


# --- use, layers, colours, what is not measured --------------------------------------------------

def test_use_of_symbol_with_viewbox(tmp_path):
    # A symbol with viewBox 0 0 10 10 placed at width 20: everything doubles (circle 2π·10).
    body = ('<defs><symbol id="hole" viewBox="0 0 10 10"><circle cx="5" cy="5" r="5"/></symbol></defs>'
            '<use href="#hole" x="10" y="10" width="20" height="20"/>'
            '<use xlink:href="#hole" x="40" y="10" width="20" height="20" transform="scale(0.5)"/>')
    _, result = svg(tmp_path, body)
    close(result, 2 * math.pi * 10 + 2 * math.pi * 5)


def test_use_of_element_and_group_with_offsets(tmp_path):
    body = ('<g id="CUT"><rect id="r" width="10" height="5"/></g>'
            '<g id="COPIES"><use href="#r" x="20"/><use href="#CUT" y="20"/></g>')
    drawing, result = svg(tmp_path, body)
    close(result, 90)
    assert [e.layer for e in drawing.entities] == ["CUT", "COPIES", "COPIES"]


@pytest.mark.parametrize(("body", "expected"), [
    # two groups using each other: both <use> elements are in the cycle; only g#a's own line is drawn
    ('<g id="a"><line x2="5"/><use href="#b"/></g><g id="b"><use href="#a"/></g>', 5),
    # a <use> of its own ancestor; the line is drawn once where it stands
    ('<g id="a"><line x2="5"/><g><use href="#a" x="10"/></g></g>', 5),
    # a <use> of itself
    ('<line x2="5"/><use id="u" href="#u"/>', 5),
    # a <use> outside the cycle still draws its target; the target's circular <use> draws nothing
    ('<defs><g id="a"><line x2="5"/><use href="#b"/></g><g id="b"><use href="#a"/></g></defs>'
     '<use href="#a"/><use href="#a" y="3"/>', 10),
])
def test_circular_use_is_not_rendered(tmp_path, body, expected):
    # SVG 2, 5.6 (the 'use' element): a reference to the element itself or an ancestor, directly or
    # through other <use> elements, is a circular reference error: that <use> is not rendered
    drawing, result = svg(tmp_path, body)
    assert any("circular reference" in w for w in drawing.warnings)
    assert result.length == pytest.approx(expected, rel=1e-15)


def test_layers_are_outermost_group_ids(tmp_path):
    body = ('<g id="OUTER"><g id="INNER"><line x2="10"/></g></g><line x2="5"/>'
            '<g><line x2="1"/></g>')
    drawing, _ = svg(tmp_path, body)
    assert [e.layer for e in drawing.entities] == ["OUTER", "", ""]


def test_stroke_colours(tmp_path):
    # CSS Color Module Level 4: #rgb expands by digit doubling; named colours; rgb() percentages;
    # currentColor takes the color property; stroke inherits; the style attribute beats the attribute.
    body = ('<style>.engrave { stroke: BLUE } #special { stroke: #123456 }</style>'
            '<g stroke="#F00"><line x2="1"/><line x2="2" stroke="rgb(0%, 100%, 0%)"/></g>'
            '<line x2="4" class="engrave"/><line id="special" class="engrave" x2="8"/>'
            '<line x2="16" color="orange" stroke="currentColor"/><line x2="32"/>'
            '<line x2="64" stroke="red" style="stroke: #00ff00"/>')
    path = tmp_path / "c.svg"
    path.write_text(f'<svg xmlns="http://www.w3.org/2000/svg" {MM_DOC}>{body}</svg>')
    result = measure_file(str(path))
    colours = {k: round(v.length_mm) for k, v in result.colors.items()}
    assert colours == {"#ff0000": 1, "#00ff00": 2 + 64, "#0000ff": 4, "#123456": 8, "#ffa500": 16, "none": 32}


def test_not_measured_elements_are_counted(tmp_path):
    body = ('<text>label</text><image href="x.png"/><line x2="1" display="none"/>'
            '<g style="display:none"><line x2="1"/><circle r="3"/></g><line x2="1" visibility="hidden"/>'
            '<g visibility="hidden"><line x2="7" visibility="visible"/></g>'
            '<defs><circle id="c" r="2"/><circle id="unused" r="3"/></defs><use href="#c"/>'
            '<clipPath><rect width="5" height="5"/></clipPath><line x2="2"/>')
    drawing, result = svg(tmp_path, body)
    close(result, 7 + 2 * math.pi * 2 + 2)
    text = " | ".join(drawing.warnings)
    assert "1 <text> element not measured" in text
    assert "1 <image> element not measured" in text
    assert "4 hidden shapes" in text
    assert "1 shape in <defs>/<symbol> never used" in text


# --- the two path parsers agree ------------------------------------------------------------------

coordinate = st.floats(-500, 500, allow_nan=False).map(lambda v: round(v, 3))
command = st.one_of(
    st.tuples(st.sampled_from("MmLlTt"), st.lists(coordinate, min_size=2, max_size=6)),
    st.tuples(st.sampled_from("HhVv"), st.lists(coordinate, min_size=1, max_size=3)),
    st.tuples(st.sampled_from("CcSsQq"), st.lists(coordinate, min_size=12, max_size=12)),
    st.tuples(st.sampled_from("Aa"), st.tuples(st.floats(0, 50), st.floats(0, 50), st.floats(-180, 180),
                                                 st.sampled_from([0, 1]), st.sampled_from([0, 1]), coordinate,
                                                 coordinate).map(list)),
    st.tuples(st.sampled_from("Zz"), st.just([])),
)


def path_text(commands):
    out = []
    for c, nums in commands:
        k = {"M": 2, "L": 2, "T": 2, "H": 1, "V": 1, "C": 6, "S": 4, "Q": 4, "A": 7, "Z": 1}[c.upper()]
        nums = nums[: len(nums) // k * k] if c.upper() != "Z" else []
        out.append(c + " " + " ".join(f"{v:g}" for v in nums))
    return " ".join(out)


@settings(max_examples=150, deadline=None)
@given(st.lists(st.lists(command, min_size=1, max_size=12), min_size=1, max_size=4))
def test_fast_and_careful_parsers_agree(subpaths):
    # The careful parser is a direct transcription of the SVG path grammar (SVG 1.1, 8.3); the batched
    # parser must give the same segments, path by path, for well-formed data.
    from pathlen.importers.svg_path import parse_careful, parse_many
    from pathlen.importers.svg_segments import ROW_WIDTH, RawSegments

    texts = [path_text([("M", [1.5, 2.5]), *cmds]) for cmds in subpaths]
    rows, ok = parse_many(texts)
    assert ok.all()
    for p, d in enumerate(texts):
        careful = RawSegments()
        assert parse_careful(d, careful) is None
        for kind, width in ROW_WIDTH.items():
            # each row with its subpath number (moveto count from 0) as one more column
            expected = np.c_[np.frombuffer(careful.rows[kind]).reshape(-1, width), np.asarray(careful.entity[kind])]
            mine = rows[kind][1] == p if kind in rows else np.zeros(0, dtype=bool)
            got = np.c_[rows[kind][0][mine], rows[kind][2][mine]] if kind in rows else np.zeros((0, width + 1))
            np.testing.assert_allclose(np.sort(got, axis=0), np.sort(expected, axis=0), rtol=1e-12, atol=1e-9)


def test_segments_converted_in_runs_equal_one_pass(tmp_path, monkeypatch):
    # rows are mapped and arcs converted a run at a time: runs of 2 give the drawing of one pass
    # (lines, arcs in endpoint form, circles and ellipses, quadratic and cubic pieces, under transforms)
    from pathlib import Path

    import pathlen.importers.svg_segments as svg_segments

    svg = tmp_path / "runs.svg"
    svg.write_text(
        '<svg xmlns="http://www.w3.org/2000/svg" width="100mm" height="80mm" viewBox="0 0 100 80">'
        '<g transform="rotate(30 50 40) scale(1.5 0.8)"><path d="M1 2 L5 6 Q7 1 9 4 C10 12 14 3 18 9 '
        'A6 4 20 0 1 25 8 A3 3 0 1 0 31 8 L40 2 Z" fill="none" stroke="black"/>'
        '<circle cx="20" cy="30" r="5"/><ellipse cx="60" cy="30" rx="8" ry="3"/></g>'
        '<path d="M60 60 a10 5 45 1 1 12 3 q4 4 8 0 t8 0 c2 2 4 2 6 0 s4 -2 6 0" transform="skewX(12)"/>'
        '<line x1="3" y1="70" x2="30" y2="75"/></svg>')
    fixture = Path(__file__).resolve().parent.parent / "fixtures" / "kl412_lamp_panel.svg"
    for path in (svg, fixture):
        whole = read_drawing(path)
        monkeypatch.setattr(svg_segments, "CONVERT_RUN", 2)
        runs = read_drawing(path)
        monkeypatch.undo()
        assert len(whole.arcs) > 2 and len(whole.lines) > 2
        for a, b in ((whole.lines, runs.lines), (whole.arcs, runs.arcs),
                     *((whole.beziers[d], runs.beziers[d]) for d in whole.beziers)):
            for name in vars(a):
                np.testing.assert_array_equal(getattr(a, name), getattr(b, name))
