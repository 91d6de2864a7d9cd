"""SVG 2 and CSS rules on small files: error handling, CSS transform, conditional processing,
display and visibility, relative units.  Each test names the clause it follows."""

import math

import numpy as np
import pytest

from pathlen.batch import MeasureSettings, measure_file
from pathlen.importers import ImportOptions

MM_DOC = 'width="100mm" height="100mm" viewBox="0 0 100 100"'  # 1 user unit = 1 mm


def measure(tmp_path, body, attrs=MM_DOC, language="en"):
    path = tmp_path / "t.svg"
    path.write_text(f'<svg xmlns="http://www.w3.org/2000/svg" {attrs}>{body}</svg>', encoding="utf-8")
    return measure_file(str(path), MeasureSettings(import_options=ImportOptions(svg_language=language)))


# -- error handling (SVG 2, 19.2 "error processing"; 9.5.4 path data; 10.2 points) --------------------
def test_invalid_attribute_value_takes_its_initial_value(tmp_path):
    # x="inherit" is not a length: x falls back to 0 and the rect is drawn (perimeter 2·(10 + 5))
    r = measure(tmp_path, '<rect x="inherit" y="2" width="10" height="5"/>')
    assert r.length_mm == pytest.approx(30.0, rel=1e-14)
    assert any("initial value used" in w for w in r.warnings)


def test_points_are_used_up_to_the_first_bad_token(tmp_path):
    r = measure(tmp_path, '<polyline points="0,0 10,0 10,10 oops 20,20"/>')
    assert r.length_mm == pytest.approx(20.0, rel=1e-14)
    assert any("drawn up to there" in w for w in r.warnings)


def test_path_data_is_used_up_to_the_error(tmp_path):
    r = measure(tmp_path, '<path d="M0 0 L10 0 L10 10 X 5 5 L 0 0"/>')
    assert r.length_mm == pytest.approx(20.0, rel=1e-14)


# -- the CSS transform property (CSS Transforms 1; SVG 2, 8.5 "the transform property") ---------------
def test_css_transform_in_a_rule_wins_over_the_attribute(tmp_path):
    body = ('<style>.big { transform: scale(3) }</style>'
            '<line class="big" x2="10" transform="scale(2)"/>')
    assert measure(tmp_path, body).length_mm == pytest.approx(30.0, rel=1e-14)


def test_css_transform_in_style_with_units_and_commas(tmp_path):
    # the functions act on the shape right to left (CSS Transforms 1, 7): scaleX(2) first doubles a line
    # along x, then rotation and translation keep its length (rigid motions); a line along y keeps 10
    body = '<line x2="10" style="transform: translate(5px, 3mm) rotate(0.25turn) scaleX(2)"/>'
    assert measure(tmp_path, body).length_mm == pytest.approx(20.0, rel=1e-14)
    body = '<line y2="10" style="transform: rotate(90deg) scaleX(2)"/>'
    assert measure(tmp_path, body).length_mm == pytest.approx(10.0, rel=1e-14)


def test_transform_origin_moves_the_fixed_point_not_the_length(tmp_path):
    # an origin changes where the shape goes, never its length; a circle under scale(2) has 2·2πr
    body = '<circle r="5" style="transform: scale(2); transform-origin: 50% 50%"/>'
    assert measure(tmp_path, body).length_mm == pytest.approx(2 * 2 * math.pi * 5, rel=1e-13)


def test_invalid_css_transform_is_ignored(tmp_path):
    r = measure(tmp_path, '<line x2="10" style="transform: wobble(3)"/>')
    assert r.length_mm == pytest.approx(10.0, rel=1e-14)
    assert any("transform ignored" in w for w in r.warnings)


# -- conditional processing (SVG 2, 5.8) ----------------------------------------------------------------
SWITCH = ('<switch>'
          '<foo><line x2="1"/></foo>'  # unknown element: skipped
          '<line systemLanguage="de-CH, fr" x2="2"/>'
          '<line requiredExtensions="http://example.com/ext" x2="3"/>'
          '<line systemLanguage="en" x2="4"/>'
          '<line x2="5"/>'
          '</switch>')


@pytest.mark.parametrize(("language", "expected"), [("de", 2), ("fr", 2), ("en", 4), ("en-US", 5), ("it", 5)])
def test_switch_draws_its_first_child_whose_conditions_hold(tmp_path, language, expected):
    # systemLanguage: true when the user's language equals a listed tag or a prefix of one followed by "-"
    # ("de" matches "de-CH"; "en-US" does not match "en"); requiredExtensions: no extension is supported
    r = measure(tmp_path, SWITCH, language=language)
    assert r.length_mm == pytest.approx(expected, rel=1e-14)
    assert any(f"user language {language!r}" in w for w in r.warnings)


def test_false_conditions_outside_a_switch_hide_the_element(tmp_path):
    r = measure(tmp_path, '<line systemLanguage="fr" x2="7"/><line x2="3"/><g requiredExtensions=""><line x2="9"/></g>')
    assert r.length_mm == pytest.approx(3.0, rel=1e-14)


# -- display and visibility (SVG 2, 15.3 and 15.4) ------------------------------------------------------
def test_display_none_on_the_root_hides_everything(tmp_path):
    r = measure(tmp_path, '<line x2="7"/>', attrs=MM_DOC + ' display="none"')
    assert r.length_mm == 0
    assert any("display none" in w for w in r.warnings)


def test_visibility_hidden_parent_with_a_visible_child(tmp_path):
    body = '<g visibility="hidden"><line x2="7"/><line x2="3" visibility="visible"/></g>'
    assert measure(tmp_path, body).length_mm == pytest.approx(3.0, rel=1e-14)


# -- relative units (CSS Values 4: em, ex = 0.5em when the x-height is unknown, rem, vw, vh, vmin, vmax) --
@pytest.mark.parametrize(("length", "expected"), [
    ("2em", 32.0),  # font-size initial value medium = 16 px
    ("2ex", 16.0),
    ("1rem", 20.0),  # the root's font size (20 px below)
    ("10vw", 20.0),  # 1vw = 1% of the root viewport width (200 user units below)
    ("10vh", 10.0),
    ("10vmin", 10.0),
    ("10vmax", 20.0),
])
def test_relative_units(tmp_path, length, expected):
    attrs = 'width="200mm" height="100mm" viewBox="0 0 200 100" style="font-size: 20px"'
    body = f'<g style="font-size: 16px"><line x2="{length}"/></g>'
    assert measure(tmp_path, body, attrs=attrs).length_mm == pytest.approx(expected, rel=1e-14)


def test_em_follows_the_inherited_font_size(tmp_path):
    body = '<g font-size="10"><g font-size="150%"><line x2="2em"/></g></g>'
    assert measure(tmp_path, body).length_mm == pytest.approx(30.0, rel=1e-14)


# -- markers (SVG 2, 11.6): drawn geometry, measured with the element they decorate -------------------
MARKERS = ('<defs><marker id="arrow" viewBox="0 0 10 10" refX="5" refY="5" markerWidth="6" markerHeight="6" '
           'orient="auto-start-reverse"><path d="M 0 0 L 10 5 L 0 10 z"/></marker>'
           '<marker id="dot" markerUnits="userSpaceOnUse" markerWidth="4" markerHeight="4" refX="2" refY="2">'
           '<circle cx="2" cy="2" r="2"/></marker></defs>'
           '<g id="CUT"><polyline points="10,10 50,10 50,50" stroke="red" stroke-width="2" '
           'marker-start="url(#arrow)" marker-mid="url(#dot)" marker-end="url(#arrow)"/></g>')


def test_marker_lengths_scale_with_viewbox_and_stroke_width(tmp_path):
    # the arrow: a triangle of sides √125, √125, 10 in a 10 x 10 viewBox shown at 6 x 6 (scale 0.6) and
    # multiplied by the stroke width 2 (markerUnits strokeWidth); the dot: a circle of r 2 in user units
    # (2πr); the polyline: 40 + 40
    arrow = (2 * math.sqrt(125) + 10) * 0.6 * 2
    r = measure(tmp_path, MARKERS)
    assert r.length_mm == pytest.approx(80 + 2 * arrow + 2 * math.pi * 2, rel=1e-12)
    assert set(r.layers) == {"CUT"} and set(r.colors) == {"#ff0000"}  # under the element's layer and colour
    assert any("3 markers" in w for w in r.warnings)


def test_markers_sit_on_the_vertices_and_turn_with_the_path(tmp_path):
    from pathlen.importers import read_drawing
    from pathlen.instances import expand

    path = tmp_path / "m.svg"
    path.write_text(f'<svg xmlns="http://www.w3.org/2000/svg" {MM_DOC}>{MARKERS}</svg>')
    flat = expand(read_drawing(path, ImportOptions(svg_language="en")))
    tips = {tuple(np.round(p, 9)) for p in np.concatenate([flat.lines.p0, flat.lines.p1])[:, :2]}
    # the arrow's tip (10, 5) lies 5 x 0.6 x 2 = 6 ahead of its reference point along the path: at the end
    # (50, 50), heading down, it is at (50, 56); at the start, turned round (auto-start-reverse), at (4, 10)
    assert (50.0, 56.0) in tips and (4.0, 10.0) in tips
    np.testing.assert_allclose(flat.arcs.center[:, :2], [[50.0, 10.0]], atol=1e-12)  # the dot on the mid vertex


def test_transform_on_a_symbol_applies_as_svg_2_says(tmp_path):
    # SVG 1.1 gives <symbol> no transform attribute; SVG 2 (5.5, the 'symbol' element) lets the transform
    # property apply to it.  pathlen follows SVG 2: the line of 5 is drawn scaled by 2.
    body = '<defs><symbol id="s" transform="scale(2)"><line x2="5"/></symbol></defs><use href="#s"/>'
    assert measure(tmp_path, body).length_mm == pytest.approx(10.0, rel=1e-14)


def test_markers_on_a_path_as_on_the_polyline_it_draws(tmp_path):
    # SVG 2, 11.6.1: path is a markable element; the same vertices drawn by a path and by a polyline carry
    # the same markers (and the marker's content is no unused shape in <defs>)
    as_path = MARKERS.replace('<polyline points="10,10 50,10 50,50"', '<path d="M10 10 L50 10 L50 50"')
    a, b = measure(tmp_path, MARKERS), measure(tmp_path, as_path)
    assert b.length_mm == pytest.approx(a.length_mm, rel=1e-12)
    assert any("3 markers" in w for w in b.warnings)
    assert not any("defs" in w for w in b.warnings)
