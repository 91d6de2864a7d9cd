"""Seams: sew lines by exact inward offset, edges, plans, matching and thread, against elementary
geometry, mpmath and hand computation."""

import math
from pathlib import Path

import mpmath as mp
import pytest

from pathlen.cli import main
from pathlen.estimates.sew_offset import CHORD_TOL_MM
from tests.drawings import mm_dxf, seam_json

FIXTURES = Path(__file__).resolve().parent.parent / "fixtures"


@pytest.mark.parametrize(("w", "h", "a"), [(400, 380, 10), (100, 50, 15), (30, 30, 6)])
def test_rectangle_sews_its_perimeter_less_8a(runner, tmp_path, w, h, a):
    # elementary geometry: the inner rectangle (W − 2a) x (H − 2a), perimeter 2(W + H) − 8a
    path = mm_dxf(tmp_path, lambda m: m.add_lwpolyline([(0, 0), (w, 0), (w, h), (0, h)], close=True))
    _, doc = seam_json(runner, path, "--allowance", a)
    piece = doc["files"][0]["pieces"][0]
    assert piece["sew_length"] == pytest.approx(2 * (w + h) - 8 * a, rel=1e-12)
    assert [e["length"] for e in piece["edges"]] == pytest.approx([w - 2 * a, h - 2 * a, w - 2 * a, h - 2 * a])


def test_circle_sews_the_circle_of_radius_r_minus_a(runner, tmp_path):
    # 2π(R − a): the offset of a circle is the concentric circle
    path = mm_dxf(tmp_path, lambda m: m.add_circle((50, 50), 40))
    _, doc = seam_json(runner, path, "--allowance", 12)
    assert doc["files"][0]["pieces"][0]["sew_length"] == pytest.approx(2 * math.pi * 28, rel=1e-12)


def test_clockwise_outline_and_its_edges_in_documented_order(runner, tmp_path):
    # the same rectangle drawn clockwise: edges still counter-clockwise from the lower-left corner
    path = mm_dxf(tmp_path, lambda m: m.add_lwpolyline([(0, 0), (0, 50), (100, 50), (100, 0)], close=True))
    _, doc = seam_json(runner, path, "--allowance", 5)
    assert [e["length"] for e in doc["files"][0]["pieces"][0]["edges"]] == pytest.approx([90, 40, 90, 40])


def test_curved_edge_offset_against_mpmath(runner, tmp_path):
    # a piece: the line (0,0)-(100,0) closed by a cubic arching over it, allowance a.  The true inward
    # offset is the line's offset y = a between the points where the cubic's offset curve
    # q(t) = r(t) + a·n(t) crosses it, and the offset curve between those parameters, of length
    # ∫(1 − aκ)|r′| dt (κ signed, the piece on the left).  (A plain mitre at the corners would assume
    # the offset curve runs straight near them: 0.22 mm too long here.)  Reference: mpmath.
    ctrl = [(100, 0), (110, 60), (-10, 60), (0, 0)]
    a = 4.0

    def build(m):
        m.add_line((0, 0), (100, 0))
        spline = m.add_spline()
        spline.dxf.degree = 3
        spline.control_points = [(*p, 0) for p in ctrl]
        spline.knots = [0, 0, 0, 0, 1, 1, 1, 1]

    path = mm_dxf(tmp_path, build)
    _, doc = seam_json(runner, path, "--allowance", a)
    mp.mp.dps = 30
    p = [mp.matrix([mp.mpf(x), mp.mpf(y)]) for x, y in ctrl]

    def r(t):
        return (1 - t) ** 3 * p[0] + 3 * (1 - t) ** 2 * t * p[1] + 3 * (1 - t) * t**2 * p[2] + t**3 * p[3]

    def d1(t):
        return 3 * (1 - t) ** 2 * (p[1] - p[0]) + 6 * (1 - t) * t * (p[2] - p[1]) + 3 * t**2 * (p[3] - p[2])

    def d2(t):
        return 6 * (1 - t) * (p[2] - 2 * p[1] + p[0]) + 6 * t * (p[3] - 2 * p[2] + p[1])

    def offset(t):
        v = d1(t)
        speed = mp.sqrt(v[0] ** 2 + v[1] ** 2)
        return r(t) + a * mp.matrix([-v[1], v[0]]) / speed

    def speed_less_curvature(t):
        v, acc = d1(t), d2(t)
        speed = mp.sqrt(v[0] ** 2 + v[1] ** 2)
        kappa = (v[0] * acc[1] - v[1] * acc[0]) / speed**3  # signed, left turns positive
        return (1 - a * kappa) * speed

    t0 = mp.findroot(lambda t: offset(t)[1] - a, mp.mpf("0.02"))
    t1 = mp.findroot(lambda t: offset(t)[1] - a, mp.mpf("0.98"))
    expected = (offset(t0)[0] - offset(t1)[0]) + mp.quad(speed_less_curvature, [t0, t1])
    # the two crossings are found on chords within CHORD_TOL_MM of the curve (the documented bound)
    assert doc["files"][0]["pieces"][0]["sew_length"] == pytest.approx(float(expected), abs=4 * CHORD_TOL_MM)
    assert abs(doc["files"][0]["pieces"][0]["sew_length"] - float(expected)) < 0.2  # a plain mitre is 0.22 off


def test_allowance_beyond_the_inner_radius_fails_that_piece_only(runner, tmp_path):
    def build(m):
        m.add_circle((0, 0), 5)
        m.add_lwpolyline([(50, 0), (150, 0), (150, 50), (50, 50)], close=True)

    path = mm_dxf(tmp_path, build)
    _, doc = seam_json(runner, path, "--allowance", 6)
    pieces = {p["name"]: p for p in doc["files"][0]["pieces"]}
    assert pieces["piece 1"]["error"] and "leaves no sew line" in pieces["piece 1"]["error"]
    assert pieces["piece 1"]["sew_length"] == 0
    assert pieces["piece 2"]["sew_length"] == pytest.approx(300 - 48, rel=1e-12)
    assert any("not sewn" in w for w in doc["files"][0]["warnings"])


def test_d6673_pattern_pieces_sizes_plan_and_matches(runner, tmp_path):
    # a D6673-style pattern built here with ezdxf by the demo's own script (blocks per piece and size,
    # layers 1, 4, 14, 15, piece texts): FRONT S is 400 x 380 with a bottom notch; allowance 10 mm
    import importlib.util

    spec = importlib.util.spec_from_file_location("make_fixtures", FIXTURES / "make_fixtures.py")
    make = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(make)
    pattern = tmp_path / "tote.dxf"
    make.tote_bag(pattern)
    res, doc = seam_json(runner, pattern, "--plan", FIXTURES / "kl610_tote_bag_seams.toml",
                         "--quantity", 50, "--cone", "5000m")
    assert res.exit_code == 0
    f = doc["files"][0]
    pieces = {(p["name"], p["size"]): p for p in f["pieces"]}
    front = pieces[("FRONT", "S")]
    assert [e["length"] for e in front["edges"]] == pytest.approx([190, 190, 360, 380, 360])
    assert front["notches"] == 1 and front["quantity"] == 1
    # sides and bottom (1100) with 301, and the top hem twin needle (2 x 380)
    assert front["sew_length"] == pytest.approx(1100 + 760)
    handle = pieces[("HANDLE", "S")]
    assert handle["quantity"] == 2
    assert handle["sew_length"] == pytest.approx(2 * (570 + 70))  # the drawn sew line wins over the allowance
    seam = handle["seams"][0]
    assert seam["stitch"] == 401
    # the published 401 formula 4 + 2TS (T, S in mm) at the shown T and S, times (1 + waste), in m
    assert seam["ratio"] == pytest.approx(4 + 2 * seam["thickness_mm"] * seam["spc"] / 10)
    assert seam["thread_length"] == pytest.approx(seam["length"] * seam["ratio"] * 1.125 / 1000)
    assert all(m["ok"] for m in f["matches"]) and len(f["matches"]) == 8
    assert set(f["sizes"]) == {"S", "M"}
    # every thread position runs from its own cones: whole cones per position and thread, summed
    positions = doc["total"]["positions"]
    assert {(p["stitch"], p["position"]) for p in positions} == {
        (301, "needle"), (301, "bobbin"), (401, "needle"), (401, "looper"), (504, "needle"), (504, "upper looper"),
        (504, "lower looper")}
    assert doc["total"]["cones"] == sum(p["threads"] * math.ceil(p["thread_length_per_thread"] / 5000)
                                        for p in positions)
    assert sum(p["threads"] * p["thread_length_per_thread"] for p in positions) == pytest.approx(
        doc["total"]["thread_length"])
    assert doc["units"] == {"length": "mm", "thread": "m"}


def test_plan_allowance_per_piece_and_svg_colours(runner, tmp_path):
    # a red square (cut) and a blue square drawn 5 mm inside it (its sew line), selected by colour
    svg = tmp_path / "pieces.svg"
    svg.write_text('<svg xmlns="http://www.w3.org/2000/svg" width="300mm" height="100mm" viewBox="0 0 300 100">'
                   '<rect width="100" height="100" stroke="#ff0000"/><rect x="5" y="5" width="90" height="90" '
                   'stroke="#0000ff"/><rect x="150" width="60" height="60" stroke="#ff0000"/></svg>')
    plan = tmp_path / "plan.toml"
    plan.write_text('allowance = { "piece 2" = 15 }\n[[seam]]\npiece = "piece 1"\n[[seam]]\npiece = "piece 2"\n')
    _, doc = seam_json(runner, svg, "--cut-layer", "#ff0000", "--sew-layer", "#0000ff", "--plan", plan)
    pieces = {p["name"]: p for p in doc["files"][0]["pieces"]}
    assert pieces["piece 1"]["sew_length"] == pytest.approx(360.0)  # the drawn sew line, 4 x 90
    assert pieces["piece 2"]["sew_length"] == pytest.approx(240.0 - 8 * 15)  # perimeter − 8a, a from the plan


def test_mismatched_edges_are_flagged(runner, tmp_path):
    def build(m):
        m.add_lwpolyline([(0, 0), (100, 0), (100, 50), (0, 50)], close=True)
        m.add_lwpolyline([(200, 0), (305, 0), (305, 50), (200, 50)], close=True)

    path = mm_dxf(tmp_path, build)
    plan = tmp_path / "plan.toml"
    plan.write_text('tolerance_pct = 2\n[[seam]]\npiece = "piece 1"\nedges = [1]\nto = "piece 2:1"\n')
    _, doc = seam_json(runner, path, "--plan", plan)
    match = doc["files"][0]["matches"][0]
    assert match["difference"] == pytest.approx(-5.0) and match["ease_pct"] == pytest.approx(-5 / 85 * 100)
    assert match["ok"] is False
    assert any("differ by" in w for w in doc["files"][0]["warnings"])


@pytest.mark.parametrize(("text", "words"), [
    ("", "no [[seam]] tables"),
    ('[[seam]]\npiece = "A"\nstitch = 999\n', "unknown stitch type"),
    ('[[seam]]\npiece = "A"\nedges = [0]\n', "edges must be"),
    ('[[seam]]\npiece = "A"\nto = "B:1"\n', "names its own edges"),
    ('[[seam]]\npiece = "A"\nedges = [1]\nto = "B"\n', "PIECE:EDGE"),
    ('[[seam]]\npiece = "A"\nspc = 4\nspi = 10\n', "spc or spi"),
    ('[[seam]]\npiece = "A"\nrows = 0\n', "rows must be"),
    ('[[seam]]\npiece = "A"\ncolour = "red"\n', "unknown key"),
])
def test_bad_plans_are_one_line_usage_errors(runner, tmp_path, text, words):
    path = mm_dxf(tmp_path, lambda m: m.add_circle((0, 0), 50))
    plan = tmp_path / "plan.toml"
    plan.write_text(text)
    res = runner.invoke(main, ["seam", str(path), "--plan", str(plan)])
    assert res.exit_code == 2 and words in res.output


def test_unknown_stitch_and_both_densities_are_usage_errors(runner, tmp_path):
    path = mm_dxf(tmp_path, lambda m: m.add_circle((0, 0), 50))
    assert runner.invoke(main, ["seam", str(path), "--stitch", "999"]).exit_code == 2
    assert runner.invoke(main, ["seam", str(path), "--spc", "4", "--spi", "10"]).exit_code == 2
