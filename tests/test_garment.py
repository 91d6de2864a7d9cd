"""Garment costing: thread by position against the published per-stitch formulas and a hand count,
matching over several edges, notches anywhere, true inward offsets, the fabric marker and bad input."""

import json
import math

import ezdxf
import numpy as np
import pytest
import shapely

from pathlen.cli import main
from pathlen.estimates.thread import STITCHES, StitchSettings, position_ratios
from tests.drawings import mm_dxf, seam_json

# The published per-stitch consumption formulas (thread per unit seam; T thickness, S stitches per
# unit length, W seam or cover width, one length unit), as tabulated by thread makers and reproduced
# in the "Sewing Thread Consumption Calculator" table (textiletechinsight.com): written out here on
# their own, independently of pathlen's split by thread position.
PUBLISHED = {
    101: lambda t, s, w: 3 + 2 * t * s,
    301: lambda t, s, w: 2 + 2 * t * s,
    401: lambda t, s, w: 4 + 2 * t * s,
    504: lambda t, s, w: 4 * s * (w + t) + 5,
    514: lambda t, s, w: 5 + 2 * s * (3 * t + 2 * w),
    516: lambda t, s, w: 2 * s * (2 * w + 3 * t) + 9,
    602: lambda t, s, w: 8 + s * (5 * w + 4 * t),
    605: lambda t, s, w: 10 + 2 * s * (2 * w + 3 * t),
    607: lambda t, s, w: 12 + 4 * s * (w + 2 * t),
}
THREADS = {101: 1, 301: 2, 401: 2, 504: 3, 514: 4, 516: 5, 602: 4, 605: 5, 607: 6}  # ISO 4915 stitch make-up


def pattern_dxf(tmp_path, pieces, name="pattern.dxf"):
    """A D6673-style pattern: per piece a block with the cut line on layer 1, optional sew line on 14,
    notches (short LINEs from the cut line inward) on layer 4 and the piece's texts."""
    doc = ezdxf.new("R2010", setup=False)
    doc.header["$INSUNITS"] = 4
    msp = doc.modelspace()
    for k, (piece, outline, sew, notches) in enumerate(pieces):
        blk = doc.blocks.new(f"B{k}")
        blk.add_lwpolyline(outline, close=True, dxfattribs={"layer": "1"})
        if sew:
            blk.add_lwpolyline(sew, close=True, dxfattribs={"layer": "14"})
        for (x, y), (dx, dy) in notches:
            blk.add_line((x, y), (x + dx, y + dy), dxfattribs={"layer": "4"})
        blk.add_text(f"Piece Name: {piece}", dxfattribs={"layer": "15", "height": 5}).set_placement((20, 20))
        msp.add_blockref(f"B{k}", (0, 1000 * k))
    path = tmp_path / name
    doc.saveas(path)
    return path


# ----- thread by position ---------------------------------------------------------------------------
@pytest.mark.parametrize("tsw", [(1.5, 0.4, 4.0), (0.6, 0.5, 3.0), (3.0, 0.25, 6.4), (1.0, 10 / 25.4, 5.0)])
@pytest.mark.parametrize("number", sorted(PUBLISHED))
def test_positions_sum_to_the_published_formula(number, tsw):
    t, s, w = tsw
    st = STITCHES[number]
    ratios = position_ratios(st, StitchSettings(s, t, w if st.uses_width() else None))
    assert sum(p.threads * r for p, r in ratios) == pytest.approx(PUBLISHED[number](t, s, w), rel=1e-12)
    assert sum(p.threads for p, _ in ratios) == THREADS[number]
    assert all(r > 0 for _, r in ratios)


def test_the_issue_settings_give_the_formula_values_not_the_old_ratios():
    # 10 stitches per inch, T = 1.5 mm, W = 4 mm, in inches (the formulas are unit-free):
    # 514 is 5 + 2·10·(3·0.059 + 2·0.157) ≈ 14.8, not the 18 recalled before
    s, t, w = 10.0, 1.5 / 25.4, 4.0 / 25.4
    ratio = STITCHES[514].ratio(s, t, w)
    assert ratio == pytest.approx(14.8, abs=0.1)
    assert STITCHES[602].ratio(s, t, 4.5 / 25.4) == pytest.approx(19.2, abs=0.1)


def test_lockstitch_by_hand_count(runner, tmp_path):
    # hand count: each of the two threads of a balanced lockstitch runs one stitch length N along the
    # seam and half the thickness down and back up where they interlace: N + T per stitch, so per mm
    # of seam (1 + T·S) each.  T = 2 mm, 5 stitches per cm (0.5 per mm): 2 + 2 = 4; waste 0 here
    path = mm_dxf(tmp_path, lambda m: m.add_lwpolyline([(0, 0), (120, 0), (120, 80), (0, 80)], close=True))
    _, doc = seam_json(runner, path, "--allowance", 10, "--spc", 5, "--thickness", 2, "--waste", 0)
    seam = doc["files"][0]["pieces"][0]["seams"][0]
    assert seam["length"] == pytest.approx(2 * (100 + 60))
    assert [p["ratio_per_thread"] for p in seam["positions"]] == pytest.approx([2.0, 2.0])
    assert seam["thread_length"] == pytest.approx(320 * 4.0 / 1000)
    assert (seam["spc"], seam["thickness_mm"], seam["width_mm"]) == (5.0, 2.0, None)


def test_density_and_width_change_every_formula_stitch(runner, tmp_path):
    path = mm_dxf(tmp_path, lambda m: m.add_circle((0, 0), 80))
    _, a = seam_json(runner, path, "--stitch", 514)
    _, b = seam_json(runner, path, "--stitch", 514, "--spi", 14, "--width", 6)
    sa, sb = a["files"][0]["pieces"][0]["seams"][0], b["files"][0]["pieces"][0]["seams"][0]
    assert sb["ratio"] > sa["ratio"]
    assert sb["ratio"] == pytest.approx(PUBLISHED[514](1.5, 14 / 25.4, 6.0))  # T at its stated default 1.5 mm
    assert sa["width_mm"] == STITCHES[514].width_mm and sb["width_mm"] == 6.0


def test_cones_per_position_for_an_overedge(runner, tmp_path):
    # 504: needle, upper and lower looper, each from its own cone; 200 garments of a 1 m square piece
    path = mm_dxf(tmp_path, lambda m: m.add_lwpolyline([(0, 0), (270, 0), (270, 270), (0, 270)], close=True))
    _, doc = seam_json(runner, path, "--stitch", 504, "--quantity", 200, "--cone", "100m", "--allowance", 10)
    rows = {p["position"]: p for p in doc["total"]["positions"]}
    assert set(rows) == {"needle", "upper looper", "lower looper"}
    seam = doc["files"][0]["pieces"][0]["seams"][0]
    for position in seam["positions"]:
        per_thread_m = position["thread_length_per_thread"] * 200
        assert rows[position["position"]]["thread_length_per_thread"] == pytest.approx(per_thread_m)
        assert rows[position["position"]]["cones"] == math.ceil(per_thread_m / 100)
    assert doc["total"]["cones"] == sum(r["cones"] for r in rows.values()) >= 3


# ----- matching, notches ----------------------------------------------------------------------------
def test_an_edge_matched_to_two_edges_compares_the_sums(runner, tmp_path):
    # a 380 mm side (sew line) sewn to two 190 mm edges of another piece (a notch between them)
    side = [(0, 0), (120, 0), (120, 400), (0, 400)]  # sew line 100 x 380 at 10 mm
    other = [(0, 0), (400, 0), (400, 120), (0, 120)]  # bottom sew line 380, split by a notch at x = 200
    path = pattern_dxf(tmp_path, [("SIDE", side, None, []), ("PANEL", other, None, [((200, 0), (0, 5))])])
    plan = tmp_path / "plan.toml"
    plan.write_text('[[seam]]\npiece = "SIDE"\nedges = [2]\nto = ["PANEL:1", "PANEL:2"]\n')
    _, doc = seam_json(runner, path, "--plan", plan)
    pieces = {p["name"]: p for p in doc["files"][0]["pieces"]}
    assert [e["length"] for e in pieces["PANEL"]["edges"]][:2] == pytest.approx([190, 190])
    match = doc["files"][0]["matches"][0]
    assert match["b"] == "PANEL:1 + PANEL:2"
    assert match["difference"] == pytest.approx(0, abs=1e-9) and match["ok"] is True


def test_a_notch_between_vertices_splits_the_edge_at_its_foot(runner, tmp_path):
    # a 300 x 200 rectangle with one LWPOLYLINE (no vertex mid-edge), notches at x = 120 on the bottom
    # and y = 50.4 on the right; allowance 10: the bottom sew line runs 10..290, split at 120
    outline = [(0, 0), (300, 0), (300, 200), (0, 200)]
    path = pattern_dxf(tmp_path, [("PANEL", outline, None, [((120, 0), (0, 6)), ((300, 50.4), (-6, 0))])])
    _, doc = seam_json(runner, path)
    edges = [e["length"] for e in doc["files"][0]["pieces"][0]["edges"]]
    assert edges == pytest.approx([110, 170, 40.4, 139.6, 280, 180])


def test_a_notch_on_the_cut_line_splits_a_drawn_sew_line(runner, tmp_path):
    outline = [(0, 0), (300, 0), (300, 200), (0, 200)]
    sew = [(15, 15), (285, 15), (285, 185), (15, 185)]
    path = pattern_dxf(tmp_path, [("PANEL", outline, sew, [((100, 0), (0, 5))])])
    _, doc = seam_json(runner, path)
    edges = [e["length"] for e in doc["files"][0]["pieces"][0]["edges"]]
    assert edges == pytest.approx([85, 185, 170, 270, 170])
    assert not doc["files"][0]["warnings"]


# ----- offsets that degenerate ----------------------------------------------------------------------
def test_rounded_rectangle_with_allowance_above_its_corner_radius_sews_the_sharp_rectangle(runner, tmp_path):
    # corner radius 8 < allowance 12: the arcs' offsets collapse and the straight sides' offsets meet
    # in sharp corners; elementary geometry: the rectangle (W − 2a) x (H − 2a), perimeter 2(W + H) − 8a
    w, h, r, a = 200.0, 100.0, 8.0, 12.0
    b = math.tan(math.pi / 8)  # bulge of a quarter arc

    def build(m):
        m.add_lwpolyline([(r, 0, 0), (w - r, 0, b), (w, r, 0), (w, h - r, b), (w - r, h, 0), (r, h, b),
                          (0, h - r, 0), (0, r, b)], format="xyb", close=True)

    _, doc = seam_json(runner, mm_dxf(tmp_path, build), "--allowance", a)
    piece = doc["files"][0]["pieces"][0]
    assert piece["error"] is None
    assert piece["sew_length"] == pytest.approx(2 * (w + h) - 8 * a, rel=1e-9)
    assert [e["length"] for e in piece["edges"]] == pytest.approx([w - 2 * a, h - 2 * a, w - 2 * a, h - 2 * a])


def test_dumbbell_with_a_narrow_neck_sews_two_loops(runner, tmp_path):
    # two 100 mm squares joined by a neck 15 mm wide, allowance 10 (> 7.5): the neck has no sew line;
    # each square sews the 80 mm square inside it (mitred erosion): 2 x 320 = 640 mm
    outline = [(0, 0), (100, 0), (100, 42.5), (150, 42.5), (150, 0), (250, 0), (250, 100), (150, 100),
               (150, 57.5), (100, 57.5), (100, 100), (0, 100)]
    _, doc = seam_json(runner, mm_dxf(tmp_path, lambda m: m.add_lwpolyline(outline, close=True)),
                       "--allowance", 10)
    piece = doc["files"][0]["pieces"][0]
    assert piece["sew_length"] == pytest.approx(640.0, rel=1e-9)
    assert piece["sew_line_loops"] == 2
    assert any("2 loops" in w for w in doc["files"][0]["warnings"])
    # with a 5 mm allowance the neck is wide enough: the ordinary mitred offset, 2(W + H) − 8a less
    # the neck's reflex corners, which each lengthen both sides by a·tan(45°)
    _, doc = seam_json(runner, mm_dxf(tmp_path, lambda m: m.add_lwpolyline(outline, close=True), "b.dxf"),
                       "--allowance", 5)
    perimeter = sum(math.dist(outline[k], outline[(k + 1) % len(outline)]) for k in range(len(outline)))
    convex, reflex = 8, 4
    assert doc["files"][0]["pieces"][0]["sew_length"] == pytest.approx(perimeter - 2 * 5 * convex + 2 * 5 * reflex)


def test_a_figure_eight_outline_is_not_a_piece(runner, tmp_path):
    eight = [(0, 0), (100, 100), (200, 0), (200, 100), (100, 0), (0, 100)]
    _, doc = seam_json(runner, mm_dxf(tmp_path, lambda m: m.add_lwpolyline(eight, close=True)),
                       "--allowance", 10)
    piece = doc["files"][0]["pieces"][0]
    assert piece["sew_length"] == 0 and "crosses or touches itself" in piece["error"]


def test_a_piece_narrower_than_twice_the_allowance_fails_alone(runner, tmp_path):
    def build(m):
        m.add_lwpolyline([(0, 0), (300, 0), (300, 15), (0, 15)], close=True)  # a 15 mm strip
        m.add_lwpolyline([(0, 100), (100, 100), (100, 200), (0, 200)], close=True)

    _, doc = seam_json(runner, mm_dxf(tmp_path, build), "--allowance", 10)
    pieces = {p["name"]: p for p in doc["files"][0]["pieces"]}
    assert "leaves no sew line" in pieces["piece 1"]["error"]
    assert pieces["piece 2"]["sew_length"] == pytest.approx(400 - 80)


# ----- fabric by marker -----------------------------------------------------------------------------
def test_marker_efficiency_overlaps_and_fabric_per_garment(runner, tmp_path):
    # an unsized pattern: a 300 x 200 body, a 120 x 80 pocket and a disc of radius 60; three garments
    def build(m):
        m.add_lwpolyline([(0, 0), (300, 0), (300, 200), (0, 200)], close=True)
        m.add_lwpolyline([(400, 0), (520, 0), (520, 80), (400, 80)], close=True)
        m.add_circle((700, 100), 60)

    path = mm_dxf(tmp_path, build)
    _, doc = seam_json(runner, path, "--marker", "--fabric-width", "450", "--ratio", "3", "--marker-time", 2,
                       "--seed", 1, "--gsm", 200)
    m = doc["markers"][0]
    areas = [300 * 200, 120 * 80, math.pi * 60**2]  # exact areas (πr² for the disc)
    assert m["pieces_laid"] == 9 and m["pieces_unplaced"] == 0 and m["garments"] == 3
    assert m["pieces_area_m2"] == pytest.approx(3 * sum(areas) / 1e6, rel=1e-9)
    assert m["efficiency"] == pytest.approx(3 * sum(areas) / (450 * m["length_m"] * 1000), rel=1e-9)
    per = m["per_garment"]
    assert per["length_m"] == pytest.approx(m["length_m"] / 3)
    assert per["area_m2"] == pytest.approx(0.45 * m["length_m"] / 3)
    assert per["mass_g"] == pytest.approx(per["area_m2"] * 200)
    shapes = []
    for p in m["placements"]:
        assert p["rotation_deg"] in (0.0, 180.0)  # the grain line kept
        k = p["piece"]
        if k == "piece 3":
            ring = [(700 + 60 * math.cos(t), 100 + 60 * math.sin(t)) for t in np.linspace(0, 2 * math.pi, 721)]
        else:
            ring = [(0, 0), (300, 0), (300, 200), (0, 200)] if k == "piece 1" else [(400, 0), (520, 0), (520, 80),
                                                                                     (400, 80)]
        pts = np.array(ring) @ _matrix(p["rotation_deg"], p["mirrored"]).T + np.array(p["offset"])
        shapes.append(shapely.Polygon(pts))
        assert pts[:, 1].min() >= -1e-6 and pts[:, 1].max() <= 450 + 1e-6
        assert pts[:, 0].max() <= m["length_m"] * 1000 + 1e-6
    for i in range(len(shapes)):
        for j in range(i + 1, len(shapes)):
            assert shapes[i].intersection(shapes[j]).area < 1e-6


def _matrix(deg, mirrored):
    a = math.radians(deg)
    r = np.array([[math.cos(a), -math.sin(a)], [math.sin(a), math.cos(a)]])
    return r @ np.diag([1.0, -1.0]) if mirrored else r


def test_marker_of_the_demo_pattern_by_size_with_the_plan_table(runner, tmp_path):
    import importlib.util
    from pathlib import Path

    fixtures = Path(__file__).resolve().parent.parent / "fixtures"
    spec = importlib.util.spec_from_file_location("make_fixtures", fixtures / "make_fixtures.py")
    make = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(make)
    pattern = tmp_path / "tote.dxf"
    make.tote_bag(pattern)
    plan = tmp_path / "plan.toml"
    plan.write_text('[[seam]]\npiece = "POCKET"\n[marker]\nfabric_width = 1500\nratio = { S = 1, M = 2 }\n'
                    'mirrored = ["HANDLE"]\n')
    picture = tmp_path / "marker.svg"
    _, doc = seam_json(runner, pattern, "--plan", plan, "--marker-time", 2, "--seed", 3, "--marker-picture", picture)
    m = doc["markers"][0]
    # per size: FRONT, BACK, POCKET once and HANDLE twice; S once and M twice: 5 + 10 copies
    assert m["garments"] == 3 and m["pieces_laid"] == 15
    s_area = 2 * 400 * 380 + 180 * 150 + 2 * 600 * 100
    m_area = 2 * 440 * 418 + 198 * 165 + 2 * 660 * 100
    assert m["pieces_area_m2"] == pytest.approx((s_area + 2 * m_area) / 1e6, rel=1e-9)
    assert sum(p["mirrored"] for p in m["placements"]) == 3  # half of each size's handle pairs
    text = picture.read_text()
    assert text.startswith("<svg") and "HANDLE" in text


def test_marker_ratio_naming_a_missing_size_fails_that_file(runner, tmp_path):
    path = mm_dxf(tmp_path, lambda m: m.add_circle((0, 0), 50))
    _, doc = seam_json(runner, path, "--fabric-width", "1500", "--ratio", "XL:1", "--marker-time", 1, code=(1,))
    assert "size 'XL'" in doc["files"][0]["error"]


# ----- bad input --------------------------------------------------------------------------------------
@pytest.mark.parametrize(("args", "words"), [
    (["--stitch", "999"], "999"),
    (["--spc", "0"], "spc"),
    (["--spc", "31"], "spc"),
    (["--spc", "inf"], "spc"),
    (["--thickness", "-1"], "thickness"),
    (["--width", "nan"], "width"),
    (["--allowance", "nan"], "finite"),
    (["--allowance", "inf"], "allowance"),
    (["--waste", "nan"], "finite"),
    (["--marker"], "fabric width"),
    (["--fabric-width", "wide"], "fabric-width"),
    (["--fabric-width", "1500", "--ratio", "S:x"], "ratio"),
    (["--marker-picture", "m.svg"], "--marker"),
])
def test_bad_options_are_one_line_usage_errors(runner, tmp_path, args, words):
    path = mm_dxf(tmp_path, lambda m: m.add_circle((0, 0), 50))
    res = runner.invoke(main, ["seam", str(path), *args])
    assert res.exit_code == 2, res.output
    assert words in res.output and "Traceback" not in res.output


@pytest.mark.parametrize(("text", "words"), [
    ("seam = 5\n", "seam must be [[seam]] tables, not 5"),
    ('[[seam]]\npiece = "A"\nstitch = [301]\n', "unknown stitch type [301]"),
    ("allowance = { A = inf }\n[[seam]]\npiece = \"A\"\n", "finite"),
    ('[[seam]]\npiece = "A"\nspc = 40\n', "spc"),
    ('[[seam]]\npiece = "A"\nthickness = 0\n', "thickness"),
    ('[[seam]]\npiece = "A"\nedges = [1]\nto = ["B:1", "C"]\n', "PIECE:EDGE"),
    ('[marker]\nratio = { S = -1 }\n', "ratio of size 'S'"),
    ('[marker]\nrotations = { A = "sideways" }\n', "rotations of 'A'"),
    ("a = " + "[" * 3000 + "]" * 3000 + "\n", "seam plan"),
])
def test_bad_plans_are_one_line_usage_errors(runner, tmp_path, text, words):
    path = mm_dxf(tmp_path, lambda m: m.add_circle((0, 0), 50))
    plan = tmp_path / "plan.toml"
    plan.write_text(text)
    res = runner.invoke(main, ["seam", str(path), "--plan", str(plan)])
    assert res.exit_code == 2, res.output
    assert words in res.output and "Traceback" not in res.output
    assert len([line for line in res.output.splitlines() if line.startswith("Error")]) == 1


# ----- pictures ---------------------------------------------------------------------------------------
def test_seam_picture_draws_sew_lines_notches_and_matches(runner, tmp_path):
    import re
    from pathlib import Path

    fixtures = Path(__file__).resolve().parent.parent / "fixtures"
    pattern, plan = fixtures / "kl610_tote_bag.dxf", fixtures / "kl610_tote_bag_seams.toml"
    out = tmp_path / "tote.svg"
    res = runner.invoke(main, ["preview", str(pattern), "-o", str(out), "--seam", "--plan", str(plan)])
    assert res.exit_code == 0, res.output
    svg = out.read_text()
    _, doc = seam_json(runner, pattern, "--plan", plan)
    pieces = doc["files"][0]["pieces"]
    # the dashed sew lines are the computed ones (pieces without a drawn sew line), as long as reported
    d = re.search(r'class="sew" d="([^"]+)"', svg).group(1)
    drawn = 0.0
    for part in d.split("M ")[1:]:
        pts = np.array([[float(v) for v in xy.split()] for xy in part.split(" L ")])
        drawn += float(np.hypot(*np.diff(pts, axis=0).T).sum())
    computed = sum(p["sew_line_length"] for p in pieces if p["name"] != "HANDLE")
    assert drawn == pytest.approx(computed, rel=1e-9)
    assert svg.count('class="notch"') == sum(p["notches"] for p in pieces)
    assert svg.count('class="match"') == len(doc["files"][0]["matches"]) == 8
    assert 'paint-order="stroke"' in svg  # edge numbers on a halo


def test_piece_names_are_data_in_pictures_and_reports(runner, tmp_path):
    name = '<script>alert(1)</script>&"'
    path = pattern_dxf(tmp_path, [(name, [(0, 0), (200, 0), (200, 100), (0, 100)], None, [])])
    out = tmp_path / "p.svg"
    assert runner.invoke(main, ["preview", str(path), "-o", str(out), "--seam"]).exit_code == 0
    svg = out.read_text()
    assert "<script>" not in svg and "&lt;script&gt;" in svg
    picture = tmp_path / "m.svg"
    _, doc = seam_json(runner, path, "--fabric-width", "500", "--marker-time", 1, "--seed", 1,
                       "--marker-picture", picture)
    assert doc["files"][0]["pieces"][0]["name"] == name
    assert "<script>" not in picture.read_text()


def test_the_service_runs_seams_with_the_command_line_settings(tmp_path):
    # a watch folder task with S, T, W, waste and cone gives the same document as the command line
    from click.testing import CliRunner

    from pathlen.errors import UsageError
    from pathlen.watch.tasks import build_task

    path = mm_dxf(tmp_path, lambda m: m.add_lwpolyline([(0, 0), (300, 0), (300, 200), (0, 200)], close=True))
    task = build_task("seam", {"stitch": 504, "spi": 12, "thickness": 1.2, "width": 5, "waste": 10,
                               "cone": 2000, "quantity": 30})
    served = task.document(task.work(str(path), task.settings))
    res = CliRunner().invoke(main, ["seam", str(path), "--stitch", "504", "--spi", "12", "--thickness", "1.2",
                                    "--width", "5", "--waste", "10", "--cone", "2000m", "-q", "30",
                                    "--format", "json"])
    cli = json.loads(res.stdout)
    assert served["total"] == cli["total"] and served["files"][0]["pieces"] == cli["files"][0]["pieces"]
    for bad, key in (({"spc": 0}, "spc"), ({"thickness": float("inf")}, "thickness"), ({"cone": -1}, "cone"),
                     ({"stitch": 999}, "999")):
        with pytest.raises(UsageError, match=key):
            build_task("seam", bad)


@pytest.mark.parametrize("seed", range(8))
def test_straight_edged_offsets_agree_with_geos_erosion(tmp_path, seed):
    # property check against a general-purpose geometry library: for straight-edged pieces the sew line
    # is the boundary of GEOS's inward buffer with mitred joins (shapely), whatever its topology
    from pathlib import Path

    from pathlen.contours import chain_contours
    from pathlen.estimates.seam import sew_line
    from pathlen.importers import read_drawing
    from pathlen.measure import measure
    from pathlen.segments import segment_layers, segment_table

    rng = np.random.default_rng(seed)
    angles = np.sort(rng.uniform(0, 2 * np.pi, 14))
    radii = rng.uniform(25, 110, 14)
    ring = np.stack([radii * np.cos(angles), radii * np.sin(angles)], axis=1)
    polygon = shapely.Polygon(ring)
    assert polygon.is_valid
    path = mm_dxf(tmp_path, lambda m: m.add_lwpolyline(ring.tolist(), close=True), f"star{seed}.dxf")
    drawing = read_drawing(Path(path))
    table = segment_table(drawing, measure(drawing))
    _, layer = segment_layers(drawing, table)
    contour = chain_contours(table, layer, 0.01, np.ones(len(table), dtype=bool))[0]
    for a in (4.0, 12.0, 22.0):
        eroded = polygon.buffer(-a, join_style="mitre", mitre_limit=100.0)
        if eroded.is_empty:
            continue
        parts = getattr(eroded, "geoms", [eroded])
        expected = sum(p.exterior.length for p in parts)
        line = sew_line(table, contour, a, [])
        assert line.length_mm == pytest.approx(expected, rel=1e-9, abs=1e-7), a
        assert line.loops == len(parts)
