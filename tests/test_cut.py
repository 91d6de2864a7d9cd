"""pathlen cut: the time and cost model end to end, as a user runs it."""

import csv
import io
import json
import math
from pathlib import Path

import ezdxf
import numpy as np
import pytest

from pathlen.cli import main
from pathlen.estimates.cut import CutSettings, estimate_file, run_charges
from pathlen.profiles import read_profile_file

FIXTURES = Path(__file__).resolve().parent.parent / "fixtures"

PROFILE = """
[profile.ideal]
process = "laser"
material = "mild steel"
thickness_mm = 2.0
feed_mm_min = 1200.0
engrave_feed_mm_min = 6000.0
pierce_s = 0.7
rapid_mm_min = 30000.0
accel_mm_s2 = 1e12
rate_per_hour = 60.0
"""


@pytest.fixture
def plate(tmp_path):
    """A 100 x 50 mm plate with two holes of radius 5 mm and a 30 mm engraved line."""
    doc = ezdxf.new("R2010", setup=False)
    doc.header["$INSUNITS"] = 4
    msp = doc.modelspace()
    msp.add_lwpolyline([(0, 0), (100, 0), (100, 50), (0, 50)], close=True, dxfattribs={"layer": "CUT"})
    msp.add_circle((20, 25), 5, dxfattribs={"layer": "CUT"})
    msp.add_circle((80, 25), 5, dxfattribs={"layer": "CUT"})
    msp.add_line((35, 25), (65, 25), dxfattribs={"layer": "ENGRAVE"})
    path = tmp_path / "plate.dxf"
    doc.saveas(path)
    return path


@pytest.fixture
def profile_file(tmp_path):
    path = tmp_path / "shop.toml"
    path.write_text(PROFILE)
    return path


def profile(profile_file, **changes):
    text = profile_file.read_text()
    for key, value in changes.items():
        text += f"{key} = {value}\n"
    profile_file.write_text(text)
    return read_profile_file(profile_file)["ideal"]


def test_reduces_to_length_over_feed(plate, profile_file):
    # With no leads, no kerf and (nearly) unlimited acceleration the model must reduce to
    # cut_length/feed + pierces·pierce_s + rapid_length/rapid_speed (issue contract).
    p = profile(profile_file)
    r = estimate_file(str(plate), CutSettings(p, engrave=("ENGRAVE",)))
    assert r.ok, r.error
    assert r.pierces == 3 and (r.closed, r.open) == (3, 1)
    assert r.cut_length_mm == pytest.approx(300 + 2 * 2 * math.pi * 5, rel=1e-12)
    assert r.engrave_length_mm == pytest.approx(30.0, rel=1e-12)
    expected = (r.cut_length_mm / (1200 / 60) + 30.0 / (6000 / 60) + 3 * 0.7 + r.rapid_length_mm / (30000 / 60))
    assert r.time_s["total"] == pytest.approx(expected, rel=1e-9)
    assert abs(r.time_s["motion_losses"]) < 1e-6


def test_rapid_path_goes_through_every_pierce(plate, profile_file):
    # Home (0,0) -> holes first -> plate outline: the order must visit the holes before the outline
    # (at (0, 0)), so the rapid path is at least home -> nearer hole -> other hole -> outline start.
    r = estimate_file(str(plate), CutSettings(profile(profile_file), ignore=("ENGRAVE",)))
    hole_a, hole_b = (25.0, 25.0), (85.0, 25.0)  # circle start points (centre + r on the x axis)
    lower = math.dist((0, 0), hole_a) + math.dist(hole_a, hole_b) + math.dist(hole_b, (0, 0))
    assert r.rapid_length_mm == pytest.approx(lower, rel=1e-9)


def test_acceleration_adds_time_and_corners_slow_down(plate, profile_file):
    fast = estimate_file(str(plate), CutSettings(profile(profile_file), ignore=("ENGRAVE",)))
    text = profile_file.read_text().replace("accel_mm_s2 = 1e12", "accel_mm_s2 = 500.0")
    profile_file.write_text(text)
    slow = estimate_file(str(plate), CutSettings(read_profile_file(profile_file)["ideal"], ignore=("ENGRAVE",)))
    assert slow.time_s["motion_losses"] > 0.1
    assert slow.time_s["total"] > fast.time_s["total"] + 0.1
    assert slow.time_s["cutting"] == pytest.approx(fast.time_s["cutting"], rel=1e-12)


def test_quantity_setup_and_cost(plate, profile_file):
    p = profile(profile_file, setup_min=12.0, consumables_per_pierce=0.5, minimum_charge=1000.0)
    one = estimate_file(str(plate), CutSettings(p, ignore=("ENGRAVE",)))
    ten = estimate_file(str(plate), CutSettings(p, quantity=10, ignore=("ENGRAVE",)))
    assert ten.time_s["total"] == pytest.approx(10 * one.part_time_s, rel=1e-12)
    assert ten.cost["machine"] == pytest.approx(10 * one.part_time_s * 60.0 / 3600, rel=1e-12)
    assert ten.cost["consumables"] == pytest.approx(10 * 3 * 0.5, rel=1e-12)
    run = run_charges([ten], p)
    assert run["setup"] == pytest.approx(12.0, rel=1e-12)  # 12 min at 60 per hour, once for the run
    assert run["time_s"] == pytest.approx(10 * one.part_time_s + 720.0, rel=1e-12)
    # the minimum charge is the amount that lifts the run to it: its own line, and the lines add up
    assert run["minimum_charge"] == pytest.approx(1000.0 - ten.cost["machine"] - 15.0 - 12.0, rel=1e-12)
    assert run["machine"] + run["consumables"] + run["setup"] + run["minimum_charge"] == pytest.approx(1000.0)
    assert run["total"] == pytest.approx(1000.0)


def test_one_setup_per_run_and_a_visible_minimum_charge(runner, plate, profile_file, tmp_path):
    # three drawings cut together with one profile: one setup; the minimum charge a line in every format
    p = profile(profile_file, setup_min=12.0, minimum_charge=500.0)
    copies = []
    for k in range(3):
        copies.append(tmp_path / f"copy{k}.dxf")
        copies[-1].write_bytes(plate.read_bytes())
    args = ["cut", *map(str, copies), "--profiles", str(profile_file), "--profile", p.name, "--ignore", "ENGRAVE"]
    doc = json.loads(runner.invoke(main, [*args, "--format", "json"]).stdout)
    cost = doc["total"]["cost"]
    assert cost["setup"] == pytest.approx(12.0, rel=1e-12)  # once, not three times
    assert cost["minimum_charge"] > 0
    assert cost["machine"] + cost["consumables"] + cost["setup"] + cost["minimum_charge"] == pytest.approx(500.0)
    assert sum(f["cost"]["total"] for f in doc["files"]) + cost["setup"] + cost["minimum_charge"] == \
        pytest.approx(cost["total"])
    rows = list(csv.DictReader(io.StringIO(runner.invoke(main, [*args, "--format", "csv"]).stdout)))
    assert [r["path"] for r in rows[3:]] == ["(setup, once for the run)", "(minimum charge: amount to reach it)",
                                              "(total)"]
    assert sum(float(r["cost_total"]) for r in rows[:-1]) == pytest.approx(float(rows[-1]["cost_total"]))
    words = " ".join(runner.invoke(main, args).stdout.split())  # the table folds long cells
    assert "│ Minimum │" in words and "│ Setup, │" in words and "the minimum charge line adds" in words


def test_kerf_offset_and_leads(plate, profile_file):
    # Outline outwards (+π·k, Steiner for a convex outline), each round hole inwards (-π·k); leads add length.
    p = profile(profile_file, kerf_mm=0.3, kerf_offset="true", lead_in_mm=2.0, lead_out_mm=1.0)
    r = estimate_file(str(plate), CutSettings(p, ignore=("ENGRAVE",)))
    assert r.kerf_change_mm == pytest.approx(math.pi * 0.3 * (1 - 2), rel=1e-12)
    assert r.lead_length_mm == pytest.approx(3 * 3.0)
    assert r.cut_length_mm == pytest.approx(300 + 20 * math.pi - 0.3 * math.pi + 9.0, rel=1e-12)


def test_duplicates_cut_once_with_dedupe(tmp_path, profile_file):
    doc = ezdxf.new("R2010", setup=False)
    doc.header["$INSUNITS"] = 4
    msp = doc.modelspace()
    msp.add_circle((10, 10), 4)
    msp.add_circle((10, 10), 4)  # drawn twice
    path = tmp_path / "twice.dxf"
    doc.saveas(path)
    p = profile(profile_file)
    twice = estimate_file(str(path), CutSettings(p))
    once = estimate_file(str(path), CutSettings(p, dedupe=True))
    # each circle drawn is closed in the file: two closed contours, two pierces (circle 2πr each)
    assert twice.cut_length_mm == pytest.approx(2 * 8 * math.pi + 2 * (p.lead_in_mm + p.lead_out_mm))
    assert twice.pierces == 2
    assert once.cut_length_mm == pytest.approx(8 * math.pi) and once.pierces == 1
    assert any("drawn twice" in w for w in twice.warnings + once.warnings)


def test_cli_json_contract_and_cautions(runner, plate, profile_file, tmp_path):
    bad = tmp_path / "broken.dxf"
    bad.write_text("not a drawing")
    res = runner.invoke(main, ["cut", str(plate), str(bad), "--profile", "ideal", "--profiles", str(profile_file),
                               "--engrave", "ENGRAVE", "--quantity", "4", "--format", "json"])
    assert res.exit_code == 1, res.output
    doc = json.loads(res.stdout)
    assert doc["format"] == "pathlen-cut" and doc["version"] == 1 and doc["units"] == "mm"
    assert any("hydrogen cyanide" in c for c in doc["cautions"])
    assert any("not instructions" in c for c in doc["cautions"])
    good, failed = doc["files"]
    assert failed["ok"] is False and failed["error"]
    assert good["contours"] == {"closed": 3, "open": 1} and good["pierces"] == 3 and good["quantity"] == 4
    assert set(good["time_s"]) == {"total", "cutting", "piercing", "rapids", "motion_losses"}
    assert set(good["cost"]) == {"total", "machine", "consumables"}
    assert doc["total"]["pierces"] == 12 and doc["total"]["failed"] == 1
    assert doc["total"]["time_s"]["total"] == pytest.approx(good["time_s"]["total"] + doc["total"]["time_s"]["setup"])


def test_cli_csv_and_table(runner, plate, profile_file):
    res = runner.invoke(main, ["cut", str(plate), "--profile", "ideal", "--profiles", str(profile_file),
                               "--ignore", "ENGRAVE", "--format", "csv", "--units", "in"])
    assert res.exit_code == 0, res.output
    rows = list(csv.DictReader(io.StringIO(res.stdout)))
    assert len(rows) == 4 and rows[0]["ok"] == "true" and rows[0]["pierces"] == "3"  # the file, then the charges
    assert [r["path"] for r in rows[1:]] == ["(setup, once for the run)", "(minimum charge: amount to reach it)",
                                             "(total)"]
    assert float(rows[0]["cut_length_in"]) == pytest.approx((300 + 20 * math.pi) / 25.4, rel=1e-12)
    res = runner.invoke(main, ["cut", str(plate), "--profile", "ideal", "--profiles", str(profile_file),
                               "--ignore", "ENGRAVE"])
    assert res.exit_code == 0 and "caution" in res.output and "Cut estimate" in res.output


def test_cli_usage_errors(runner, plate, profile_file):
    assert runner.invoke(main, ["cut", str(plate)]).exit_code == 2  # no profile
    assert runner.invoke(main, ["cut", str(plate), "--profile", "nope"]).exit_code == 2
    res = runner.invoke(main, ["cut", str(plate), "--profile", "steel-6mm-plasma", "--engrave", "ENGRAVE"])
    assert res.exit_code == 2 and "engrave_feed_mm_min" in res.output


def test_pvc_caution(runner, plate, profile_file):
    text = profile_file.read_text().replace('material = "mild steel"', 'material = "PVC foam board"')
    profile_file.write_text(text)
    res = runner.invoke(main, ["cut", str(plate), "--profile", "ideal", "--profiles", str(profile_file),
                               "--format", "json", "--ignore", "ENGRAVE"])
    assert any(c.startswith("DO NOT laser-cut PVC") for c in json.loads(res.stdout)["cautions"])


def test_calibrate_writes_back(runner, tmp_path):
    jet = tmp_path / "jet.toml"
    jet.write_text("""[profile.alu-jet]
process = "waterjet"
material = "aluminium"
thickness_mm = 10.0
pressure_mpa = 380.0
orifice_mm = 0.33
focus_tube_mm = 1.02
abrasive_kg_min = 0.4
machinability = 215.0
quality = 3.0
pierce_s = 8.0
rapid_mm_min = 10000.0
accel_mm_s2 = 1000.0
rate_per_hour = 120.0
""")
    res = runner.invoke(main, ["cut", "--profile", "alu-jet", "--profiles", str(jet), "--calibrate", "250",
                               "--test-thickness", "8", "--test-quality", "2"])
    assert res.exit_code == 0, res.output
    from pathlen.estimates.cut import cutting_feed_mm_min  # the profile's own speed after calibration
    from pathlen.estimates.waterjet import WaterjetInputs, waterjet_feed_mm_min

    v = read_profile_file(jet)["alu-jet"].values
    assert v["machinability"] != 215.0
    inputs = WaterjetInputs(v["pressure_mpa"], v["orifice_mm"], v["focus_tube_mm"], v["abrasive_kg_min"],
                            v["machinability"])
    assert waterjet_feed_mm_min(inputs, 8.0, 2.0) == pytest.approx(250.0, rel=1e-5)  # written to 6 digits
    assert cutting_feed_mm_min(read_profile_file(jet)["alu-jet"]) > 0
    builtin = runner.invoke(main, ["cut", "--profile", "aluminium-10mm-waterjet", "--calibrate", "250"])
    assert builtin.exit_code == 2 and "built in" in builtin.output


def test_overlapping_lines_cut_once_with_dedupe(tmp_path, profile_file):
    # A 40 mm line drawn again as a 25 mm piece over its middle: 15 mm ... 65 mm cut with the overlap
    # counted twice, 40 mm once with --dedupe (geometry by hand).
    doc = ezdxf.new("R2010", setup=False)
    doc.header["$INSUNITS"] = 4
    doc.modelspace().add_line((0, 0), (40, 0))
    doc.modelspace().add_line((10, 0), (35, 0))
    path = tmp_path / "overlap.dxf"
    doc.saveas(path)
    p = profile(profile_file)
    plain = estimate_file(str(path), CutSettings(p))
    once = estimate_file(str(path), CutSettings(p, dedupe=True))
    assert plain.cut_length_mm == pytest.approx(65.0) and once.cut_length_mm == pytest.approx(40.0)
    assert once.time_s["cutting"] == pytest.approx(plain.time_s["cutting"] - 25.0 / 20.0, rel=1e-12)
    assert any("overlap" in w for w in plain.warnings)


def test_awkward_drawings_are_estimated(tmp_path, profile_file):
    # Found by fuzzing: self-crossing outlines (no inside to offset towards), zero-length segments (nothing to
    # pierce), and random crossing contours whose start points lie inside each other (no valid holes-first
    # order unless containers are strictly larger) must all be estimated, not fail.
    import random

    rng = random.Random(5)

    def r():
        return f"{rng.uniform(-50, 150):.3f}"

    paths = "".join(f'<path d="M{r()} {r()} L {r()} {r()} Q {r()} {r()} {r()} {r()} A 5 3 30 1 0 {r()} {r()} z"/>'
                    for _ in range(60))
    svg = tmp_path / "awkward.svg"
    svg.write_text('<svg xmlns="http://www.w3.org/2000/svg" width="100mm" height="100mm" viewBox="0 0 100 100">'
                   f'{paths}<path d="M0 0 L10 0 L10 10 L0 0 L-10 0 L-10 -10 Z"/>'
                   '<line x1="3" y1="3" x2="3" y2="3"/><path d="M1 1 A 0 0 0 0 1 1 1 L 1 1 Z"/></svg>')
    p = profile(profile_file, kerf_mm=0.2, kerf_offset="true")
    r = estimate_file(str(svg), CutSettings(p))
    assert r.ok, r.error
    assert r.pierces == 61 and r.closed == 61
    assert any("cross themselves" in w for w in r.warnings)


def test_cut_on_a_process_pool(runner, plate, profile_file, tmp_path):
    # --jobs 2 sends the settings (with the profile) to worker processes: they must arrive intact.
    second = tmp_path / "copy.dxf"
    second.write_bytes(plate.read_bytes())
    res = runner.invoke(main, ["cut", str(plate), str(second), "--profile", "ideal", "--profiles", str(profile_file),
                               "--ignore", "ENGRAVE", "--format", "json", "--jobs", "2"])
    assert res.exit_code == 0, res.output
    files = json.loads(res.stdout)["files"]
    assert [f["ok"] for f in files] == [True, True] and files[0]["pierces"] == files[1]["pierces"] == 3


def test_svg_colours_select_operations(runner):
    # The demo lamp panel: red strokes are cut (6 closed contours), blue ones engraved (3 open waves).
    from pathlib import Path

    panel = Path(__file__).resolve().parent.parent / "fixtures" / "kl412_lamp_panel.svg"
    res = runner.invoke(main, ["cut", str(panel), "--profile", "acrylic-3mm-laser", "--engrave", "#0000ff",
                               "--format", "json"])
    assert res.exit_code == 0, res.output
    f = json.loads(res.stdout)["files"][0]
    assert f["pierces"] == 6 and f["contours"] == {"closed": 6, "open": 3}
    measured = json.loads(runner.invoke(main, ["measure", str(panel), "--format", "json"]).stdout)["files"][0]
    assert f["engrave_length"] == pytest.approx(measured["colors"]["#0000ff"]["length"], rel=1e-12)
    ignored = runner.invoke(main, ["cut", str(panel), "--profile", "acrylic-3mm-laser", "--ignore", "#0000ff",
                                   "--format", "json"])
    g = json.loads(ignored.stdout)["files"][0]
    assert g["contours"] == {"closed": 6, "open": 0} and g["engrave_length"] == 0.0


def test_batched_kerf_changes_match_the_per_contour_definitions(tmp_path):
    # every closed contour of the demo drawings: the batched kerf change and its trouble code equal
    # the per-contour exact formula checked against shapely's offset of the contour polygon
    from pathlen.contours import chain_contours
    from pathlen.importers import read_drawing
    from pathlen.instances import expand
    from pathlen.measure import measure
    from pathlen.segments import segment_layers, segment_table

    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 4
    m = doc.modelspace()
    # features smaller than the offset: a slot 0.25 mm wide, a 0.2 mm strip, a 0.1 mm step between sharp
    # corners, a spline that comes back within 0.2 mm of itself, a slit-like spike
    m.add_lwpolyline([(0, 0), (20, 0), (20, 10), (10.125, 10), (10.125, 2), (9.875, 2), (9.875, 10), (0, 10)],
                     close=True)
    m.add_lwpolyline([(30, 0), (35, 0), (35, 0.2), (30, 0.2)], close=True)
    m.add_lwpolyline([(40, 0), (50, 0), (50, 5), (45.1, 5), (45.1, 5.1), (45, 5.1), (45, 5), (40, 5)], close=True)
    spline = m.add_spline()
    spline.dxf.degree = 3
    spline.control_points = [(60, 0, 0), (80, 20, 0), (40, 20, 0), (60.2, 0.1, 0)]
    spline.knots = [0, 0, 0, 0, 1, 1, 1, 1]
    m.add_line((60.2, 0.1), (60, 0))
    m.add_lwpolyline([(70, 0), (90, 0.3), (70, 0.6), (72, 0.3)], close=True)
    doc.saveas(tmp_path / "small.dxf")
    for path in [FIXTURES / name for name in ("kl101_bracket.dxf", "kl214_gasket.dxf", "kl330_sign_panel.dxf",
                                              "kl412_lamp_panel.svg")] + [tmp_path / "small.dxf"]:
        drawing = expand(read_drawing(path))
        table = segment_table(drawing, measure(drawing))
        _, layer = segment_layers(drawing, table)
        contours = chain_contours(table, layer)
        for outward in (np.where(np.arange(len(contours)) % 2 == 0, 0.15, -0.15),
                        np.where(np.arange(len(contours)) % 2 == 0, -0.15, 0.15)):
            _compare_kerf(table, contours, outward)


def _compare_kerf(table, contours, outward):
    from pathlen.containment import contour_polygon, kerf_length_change, offset_length_change
    from pathlen.estimates.cut_contours import TROUBLE, kerf_changes, outlines, walk

    w = walk(table, contours)
    change, trouble = kerf_changes(table, contours, w, outlines(table, contours, w), outward, contours.closed.copy())
    for k in np.flatnonzero(contours.closed).tolist():
        c = contours[k]
        polygon = contour_polygon(table, c)
        if polygon.geom_type != "Polygon":
            assert TROUBLE[trouble[k]] == "crossing"
            continue
        rough = offset_length_change(polygon, outward[k])
        exact = kerf_length_change(table, c, outward[k])
        if rough is None:
            assert TROUBLE[trouble[k]] == "narrow" and change[k] == 0
        elif abs(exact - rough) > 0.05 * 0.15 * (2 * math.pi + len(c.segments)):
            assert TROUBLE[trouble[k]] == "rough" and change[k] == pytest.approx(rough, rel=1e-9, abs=1e-12)
        else:
            assert TROUBLE[trouble[k]] == "" and change[k] == pytest.approx(exact, rel=1e-9, abs=1e-12)


def test_outline_of_near_straight_bulges_needs_no_mending(tmp_path, monkeypatch):
    # a right triangle (legs 4 mm: area 8 mm², perimeter 8 + 4√2 mm) closed by two bulges of 1e-6 and
    # 1e-7: their arcs' ends round apart from the line's by ~1e-9 mm; each joint is one outline vertex,
    # so the polygon is simple as drawn (a zero buffer, which would mend a spike, is never needed)
    import shapely

    from pathlen.contours import chain_contours
    from pathlen.estimates.cut_contours import outlines, walk
    from pathlen.importers import read_drawing
    from pathlen.measure import measure
    from pathlen.segments import segment_layers, segment_table

    doc = ezdxf.new("R2010", setup=False)
    doc.header["$INSUNITS"] = 4  # millimetres
    doc.modelspace().add_lwpolyline([(3800, 2500, 1e-6), (3804, 2500, 0), (3804, 2504, 1e-7)], format="xyb",
                                    close=True)
    doc.saveas(tmp_path / "triangle.dxf")
    drawing = read_drawing(tmp_path / "triangle.dxf")
    table = segment_table(drawing, measure(drawing))
    contours = chain_contours(table, segment_layers(drawing, table)[1])
    monkeypatch.setattr(shapely, "buffer", lambda *a, **k: pytest.fail("outline mended by a buffer"))
    out = outlines(table, contours, walk(table, contours))
    assert out.valid.tolist() == [True]
    assert out.area[0] == pytest.approx(8.0, rel=1e-5)  # the bulges add under 1e-5 mm²
    assert out.perimeter[0] == pytest.approx(8.0 + 4.0 * math.sqrt(2.0), rel=1e-6)


def test_running_out_of_memory_names_the_step(monkeypatch):
    # a file that runs out of memory says which step it was in, not only that it was big
    import pathlen.estimates.cut as cut_module
    from pathlen.profiles import load_profiles

    def exhausted(*args, **kwargs):
        raise MemoryError

    monkeypatch.setattr(cut_module, "nesting_depth", exhausted)
    result = estimate_file(str(FIXTURES / "kl101_bracket.dxf"), CutSettings(load_profiles()["steel-3mm-laser"]))
    assert not result.ok
    assert result.error.startswith("needed more than") and "while finding which of" in result.error
    assert "contours lie inside which" in result.error


@pytest.mark.parametrize("run_steps", [1, 7])
def test_contours_estimated_in_runs_equal_one_pass(monkeypatch, tmp_path, profile_file, run_steps):
    # cut works through the contours in runs of about CUT_RUN_STEPS steps (bounded memory): the estimate
    # must not depend on where the runs are cut (run_steps 1: every contour alone)
    from pathlen.estimates import cut as cut_module

    doc = ezdxf.new("R2010", setup=False)
    doc.header["$INSUNITS"] = 4
    msp = doc.modelspace()
    for k in range(12):  # closed and open contours of several kinds and sizes, small holes among them
        x = 30.0 * k
        msp.add_lwpolyline([(x, 0, 0.4), (x + 10, 0, 0), (x + 10, 8, -0.3), (x, 8 + k, 0)], format="xyb", close=True)
        msp.add_circle((x + 5, 4), 0.5 + k / 8)
        msp.add_line((x, 30), (x + 4 + k, 33))
        msp.add_spline([(x, 40), (x + 3, 45), (x + 6, 38), (x + 9, 44)])
    doc.saveas(tmp_path / "parts.dxf")
    profile_file.write_text(PROFILE.replace("accel_mm_s2 = 1e12", "accel_mm_s2 = 2000.0"))
    settings = CutSettings(profile(profile_file, kerf_mm=0.3, kerf_offset="true", lead_in_mm=2.0,
                                   small_hole_ratio=1.0))
    monkeypatch.setattr(cut_module, "CUT_RUN_STEPS", run_steps)
    runs = estimate_file(str(tmp_path / "parts.dxf"), settings)
    monkeypatch.setattr(cut_module, "CUT_RUN_STEPS", 1 << 40)
    whole = estimate_file(str(tmp_path / "parts.dxf"), settings)
    assert whole.ok and whole.closed == 24 and whole.open == 24 and whole.pierces == 48
    assert whole.kerf_change_mm != 0 and any("small holes" in w for w in whole.warnings)
    assert whole.warnings == runs.warnings
    for field in ("cut_length_mm", "kerf_change_mm", "lead_length_mm", "rapid_length_mm", "part_time_s", "pierces"):
        assert getattr(runs, field) == pytest.approx(getattr(whole, field), rel=1e-12), field
    assert runs.time_s == pytest.approx(whole.time_s, rel=1e-12) and runs.cost == pytest.approx(whole.cost, rel=1e-12)
