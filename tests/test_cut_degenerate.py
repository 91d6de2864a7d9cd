"""Cut estimates on degenerate sheets: thin slits, fine segments, stacks, shared corners."""

import itertools
import json
import math

import ezdxf
import numpy as np
import pytest
from scipy.integrate import quad

from pathlen.batch import measure_file
from pathlen.cli import main
from pathlen.estimates.cut import CutSettings, estimate_file
from pathlen.profiles import read_profile_file

PROFILE = """
[profile.slow]
process = "laser"
material = "mild steel"
thickness_mm = 1.0
feed_mm_min = 3000.0
pierce_s = 0.0
rapid_mm_min = 30000.0
accel_mm_s2 = 1000.0
corner_tolerance_mm = 0.05
rate_per_hour = 60.0
"""


@pytest.fixture
def slow(tmp_path):
    path = tmp_path / "shop.toml"
    path.write_text(PROFILE)
    return read_profile_file(path)["slow"]


def ellipse_dxf(tmp_path, a, ratio, name="slit.dxf"):
    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 4
    doc.modelspace().add_ellipse((0, 0), (a, 0), ratio)
    path = tmp_path / name
    doc.saveas(path)
    return str(path)


def curvature_limited_time(a, b, feed, accel, tol):
    """Lower bound (s) of cutting an ellipse: ∫ ds / min(F, √(A·max(ρ, δ))) along it, ρ the radius of
    curvature (a² sin² t + b² cos² t)^(3/2) / (ab) (classical); accelerating only adds time."""
    def integrand(t):
        speed = math.hypot(a * math.sin(t), b * math.cos(t))
        rho = speed**3 / (a * b) if b > 0 else 0.0
        return speed / min(feed, math.sqrt(accel * max(rho, tol)))
    return quad(integrand, 0, 2 * math.pi, limit=400, points=[0.0, math.pi])[0]


@pytest.mark.parametrize(("a", "ratio"), [(50.0, 0.01), (15.0, 1e-6), (15.0, 1e-200)])
def test_thin_ellipses_take_a_sensible_time(tmp_path, slow, a, ratio):
    result = estimate_file(ellipse_dxf(tmp_path, a, ratio), CutSettings(slow))
    assert result.ok, result.error
    feed = 3000.0 / 60.0
    b = a * ratio
    lower = curvature_limited_time(a, b, feed, 1000.0, 0.05)
    cutting = result.time_s["cutting"] + result.time_s["motion_losses"]
    assert all(math.isfinite(v) for v in (*result.time_s.values(), *result.cost.values()))
    assert cutting >= 0.9 * lower  # the pieces' mean radius may round the tip a little
    assert cutting <= 2.0 * lower + 2.0  # and nothing like the old 36 s of losses on 4 s of cutting


def test_svg_slit_of_zero_width_gives_finite_json(runner, tmp_path, slow):
    path = tmp_path / "slit.svg"
    path.write_text('<svg xmlns="http://www.w3.org/2000/svg" width="40mm" height="10mm" viewBox="0 0 40 10">'
                    '<ellipse cx="20" cy="5" rx="15" ry="1e-324"/></svg>')
    shop = tmp_path / "shop.toml"
    shop.write_text(PROFILE)
    res = runner.invoke(main, ["cut", str(path), "--profiles", str(shop), "--profile", "slow", "--format", "json"])

    def no_constants(name):
        raise AssertionError(f"{name} in the JSON report")

    doc = json.loads(res.stdout, parse_constant=no_constants)
    entry = doc["files"][0]
    assert entry["ok"], entry["error"]
    assert entry["time_s"]["total"] < 60


def test_circle_pieces_have_the_circle_radius(tmp_path):
    # a circle of radius r: every piece's mean radius (length / turning) is r (classical)
    from pathlen.importers import read_drawing
    from pathlen.measure import measure
    from pathlen.segments import segment_table

    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 4
    doc.modelspace().add_circle((3, 4), 7.0)
    path = tmp_path / "c.dxf"
    doc.saveas(path)
    drawing = read_drawing(path)
    table = segment_table(drawing, measure(drawing))
    length, radius, first = table.turning_pieces(np.array([0]), np.array([True]))
    assert length.sum() == pytest.approx(2 * math.pi * 7.0, rel=1e-12)
    np.testing.assert_allclose(radius, 7.0, rtol=1e-12)
    assert first.tolist() == [0]


def lines_dxf(tmp_path, points, name, closed=False, as_polyline=False):
    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 4
    msp = doc.modelspace()
    if as_polyline:
        msp.add_lwpolyline(points, close=closed)
    else:
        pts = [*points, points[0]] if closed else points
        for a, b in itertools.pairwise(pts):
            msp.add_line(a, b)
    path = tmp_path / name
    doc.saveas(path)
    return str(path)


def test_segments_shorter_than_the_join_tolerance_stay_a_line(tmp_path, slow):
    # a 10 mm line drawn as 2,000 pieces of 0.005 mm (half the default 0.01 mm join tolerance)
    path = lines_dxf(tmp_path, [(k * 0.005, 0.0) for k in range(2001)], "fine.dxf")
    result = measure_file(path)
    assert (result.closed, result.open) == (0, 1)
    cut = estimate_file(path, CutSettings(slow, dedupe=True))
    assert (cut.closed, cut.open) == (0, 1)
    assert cut.cut_length_mm == pytest.approx(10.0, rel=1e-12)  # nothing taken for "drawn twice"
    assert not any("drawn twice" in w for w in cut.warnings)


def test_fine_circle_is_one_closed_contour_and_no_duplicates(tmp_path, slow):
    # a circle of radius 5 drawn as 10,000 chords: one closed contour, perimeter of the inscribed
    # 10,000-gon 2·n·r·sin(π/n) (classical), nothing "drawn twice"
    n = 10_000
    pts = [(5 * math.cos(2 * math.pi * k / n), 5 * math.sin(2 * math.pi * k / n)) for k in range(n)]
    path = lines_dxf(tmp_path, pts, "fine_circle.dxf", closed=True)
    cut = estimate_file(path, CutSettings(slow, dedupe=True))
    assert (cut.closed, cut.open) == (1, 0)
    assert cut.cut_length_mm == pytest.approx(2 * n * 5 * math.sin(math.pi / n), rel=1e-9)
    assert not any("drawn twice" in w for w in cut.warnings)


def test_triangles_sharing_a_corner_are_two_closed_contours(tmp_path, slow):
    # closed in the file (closed polyline flag, DXF reference LWPOLYLINE group 70 bit 1): each stays closed
    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 4
    msp = doc.modelspace()
    msp.add_lwpolyline([(0, 0), (10, 0), (5, 8)], close=True)
    msp.add_lwpolyline([(10, 0), (20, 0), (15, 8)], close=True)
    path = tmp_path / "bowtie.dxf"
    doc.saveas(path)
    counted = measure_file(str(path))
    assert (counted.closed, counted.open) == (2, 0)
    cut = estimate_file(str(path), CutSettings(slow))
    assert (cut.closed, cut.open, cut.pierces) == (2, 0, 2)


def test_svg_closed_subpaths_touching_at_a_vertex(tmp_path):
    path = tmp_path / "touch.svg"
    path.write_text('<svg xmlns="http://www.w3.org/2000/svg" width="40mm" height="20mm" viewBox="0 0 40 20">'
                    '<path d="M0 0 L10 0 L5 8 Z"/><path d="M10 0 L20 0 L15 8 Z"/>'
                    '<circle cx="25" cy="10" r="5"/><line x1="30" y1="10" x2="38" y2="10"/></svg>')
    result = measure_file(str(path))
    assert (result.closed, result.open) == (3, 1)  # the line touching the circle leaves it closed


@pytest.mark.parametrize("tail, expected", [("", (2, 0)), (" M30 0 L38 0", (2, 1)), (" m30 0 l8 0", (2, 1))])
def test_svg_closed_subpaths_of_one_path_touching_at_a_vertex(tmp_path, slow, tail, expected):
    # SVG 2, 9.3.4 (closepath): "Z" ends the current subpath; each subpath is a figure of its own, so two
    # closed subpaths of one <path> that share a vertex are two closed contours (a bow-tie of two
    # triangles), whether or not a last open subpath follows (a relative moveto starts from the subpath's
    # start, SVG 2 9.3.3)
    path = tmp_path / "touch.svg"
    path.write_text('<svg xmlns="http://www.w3.org/2000/svg" width="40mm" height="20mm" viewBox="0 0 40 20">'
                    f'<path d="M0 0 L10 0 L5 8 Z M10 0 L20 0 L15 8 Z{tail}" fill="none" stroke="black"/></svg>')
    result = measure_file(str(path))
    assert (result.closed, result.open) == expected
    assert result.layers[""].count == 1  # still one drawn path
    side = math.hypot(5, 8)
    assert result.length_mm == pytest.approx(2 * (10 + 2 * side) + (8 if tail else 0), rel=1e-12)
    cut = estimate_file(str(path), CutSettings(slow))
    assert (cut.closed, cut.open, cut.pierces) == (*expected, expected[0] + expected[1])


def test_svg_closed_subpaths_touching_inside_a_use_copy(tmp_path):
    # the same bow-tie drawn twice through <use> (SVG 2, 5.6): two closed contours per copy, two paths counted
    path = tmp_path / "touch.svg"
    path.write_text('<svg xmlns="http://www.w3.org/2000/svg" xmlns:xlink="http://www.w3.org/1999/xlink" '
                    'width="40mm" height="40mm" viewBox="0 0 40 40"><defs><path id="bow" '
                    'd="M0 0 L10 0 L5 8 Z M10 0 L20 0 L15 8 Z M30 0 L38 0" fill="none" stroke="black"/></defs>'
                    '<use xlink:href="#bow"/><use xlink:href="#bow" y="20"/></svg>')
    result = measure_file(str(path))
    assert (result.closed, result.open) == (4, 2)
    assert result.layers[""].count == 2


def test_stacks_and_stars_are_handled_in_reasonable_time(tmp_path, slow):
    # 1,000 copies of one circle, and 1,000 lines through one point: bounded work, honest counts
    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 4
    msp = doc.modelspace()
    for _ in range(1000):
        msp.add_circle((0, 0), 5)
    for k in range(1000):
        a = 2 * math.pi * k / 1000
        msp.add_line((100, 0), (100 + 50 * math.cos(a), 50 * math.sin(a)))
    path = tmp_path / "stack.dxf"
    doc.saveas(path)
    cut = estimate_file(str(path), CutSettings(slow))
    assert cut.ok and cut.closed == 1000 and cut.pierces == 1000 + 500
    assert any("999 segments drawn twice" in w for w in cut.warnings)
    once = estimate_file(str(path), CutSettings(slow, dedupe=True))
    assert once.closed == 1


@pytest.mark.parametrize("ry", ["5e-324", "1e-200"])
def test_svg_ellipse_with_a_denormal_radius_is_a_slit_cut_in_sensible_time(tmp_path, slow, ry):
    # a 120 mm slit drawn as an ellipse with a vanishing radius: its tips are corners of the slit, so the
    # time is about its 240 mm at the feed (3000 mm/min: 4.8 s), never minutes of crawling round a tip
    path = tmp_path / "slit.svg"
    path.write_text('<svg xmlns="http://www.w3.org/2000/svg" width="200mm" height="100mm" viewBox="0 0 200 100">'
                    f'<ellipse cx="100" cy="50" rx="60" ry="{ry}" stroke="black" fill="none"/></svg>')
    result = estimate_file(str(path), CutSettings(slow))
    assert result.ok, result.error
    moving = result.time_s["cutting"] + result.time_s["motion_losses"]
    assert 240 / 50 <= moving <= 2 * 240 / 50 + 2.0
