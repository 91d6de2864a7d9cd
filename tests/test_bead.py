"""Sealant beads: section areas, volumes, packs, plans and the command, against elementary geometry."""

import json
import math

import ezdxf
import pytest

from pathlen.cli import main
from pathlen.errors import UsageError
from pathlen.estimates.bead import ML_PER_US_FL_OZ, Section, parse_pack, parse_section, sizing_warnings, whole_packs


@pytest.mark.parametrize(("spec", "area"), [
    ("rect:12x6", 72.0),  # w·d
    ("fillet:6x8", 24.0),  # right-angle triangle a·b/2
    ("cove:10", 100.0 * (1 - math.pi / 4)),  # square of side r less a quarter disc: r²(1 − π/4)
    ("round:8", math.pi * 64 / 4),  # πD²/4
])
def test_section_areas_by_elementary_geometry(spec, area):
    assert parse_section(spec).area_mm2 == pytest.approx(area, rel=1e-15)


@pytest.mark.parametrize("spec", ["rect:12", "cove:3x4", "square:5", "rect:0x5", "round:-2", "rect:axb", "round:inf",
                                  "fillet:6x"])
def test_bad_sections_are_usage_errors(spec):
    with pytest.raises(UsageError, match="bead section"):
        parse_section(spec)


def test_pack_sizes_and_the_us_fluid_ounce():
    # NIST Handbook 44, appendix C: 1 US fluid ounce = 29.5735295625 mL (exact)
    assert ML_PER_US_FL_OZ == 29.5735295625
    assert parse_pack("10.1floz") == pytest.approx(10.1 * 29.5735295625, rel=1e-15)
    assert parse_pack("600ml") == 600.0 and parse_pack("310") == 310.0
    with pytest.raises(UsageError):
        parse_pack("a bucket")


def test_pack_counts_at_the_boundaries():
    assert whole_packs(310.0, 310.0, 0.0) == 1  # exactly full: one pack
    assert whole_packs(311.0, 310.0, 0.0) == 2  # one ml over: two
    assert whole_packs(0.1 + 0.2 + 309.7, 310.0, 0.0) == 1  # rounding noise does not buy a pack
    assert whole_packs(300.0, 310.0, 10.0) == 2  # 330 ml with 10 % waste
    assert whole_packs(0.0, 310.0, 10.0) == 0


def test_sizing_rules_warn_never_change():
    # ASTM C1193 guide as summarised in detailing texts (shared/REFERENCES.md): width >= 6 mm,
    # depth about half the width, depth 6-13 mm
    assert sizing_warnings(Section("rect", 12, 6), "J") == []
    words = " ".join(sizing_warnings(Section("rect", 4, 4), "J"))
    assert "under the usual minimum of 6 mm" in words and "outside the usual 6-13 mm" in words
    assert "not about half" in " ".join(sizing_warnings(Section("rect", 20, 13), "J"))
    assert sizing_warnings(Section("fillet", 3, 3), "J") == []


@pytest.fixture
def wall(tmp_path):
    """A 1000 mm joint on PERIMETER and a circle of radius 50 mm on GLAZING."""
    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 4
    doc.layers.add("PERIMETER")
    doc.layers.add("GLAZING")
    doc.modelspace().add_line((0, 0), (1000, 0), dxfattribs={"layer": "PERIMETER"})
    doc.modelspace().add_circle((500, 500), 50, dxfattribs={"layer": "GLAZING"})
    path = tmp_path / "wall.dxf"
    doc.saveas(path)
    return path


def test_one_bead_on_everything(runner, wall):
    # volume by hand: (1000 + 2π·50) mm x 72 mm² (rect 12 x 6), 1 ml = 1000 mm³
    res = runner.invoke(main, ["bead", str(wall), "--bead", "rect:12x6", "--waste", "0", "--format", "json"])
    assert res.exit_code == 0, res.output
    doc = json.loads(res.stdout)
    assert doc["format"] == "pathlen-bead" and doc["version"] == 1 and doc["units"] == "mm"
    entry = doc["files"][0]
    length = 1000 + 2 * math.pi * 50
    assert entry["length"] == pytest.approx(length, rel=1e-12)
    assert entry["section_mm2"] == 72.0
    assert entry["volume_ml"] == pytest.approx(length * 72 / 1000, rel=1e-12)
    assert entry["packs"] == 1 and entry["backer_rod_length"] == pytest.approx(length, rel=1e-12)
    assert any("diisocyanates" in c for c in doc["cautions"])


def test_a_plan_by_layer_with_two_sides(runner, wall, tmp_path):
    plan = tmp_path / "plan.toml"
    plan.write_text('[[joint]]\nlayer = "PERIMETER"\nsection = "rect:12x6"\n\n'
                    '[[joint]]\nlayer = "GLAZING"\nsection = "fillet:6x6"\nsides = 2\n')
    res = runner.invoke(main, ["bead", str(wall), "--plan", str(plan), "--pack", "600ml", "--gun-speed", "10",
                               "--pack-change-s", "60", "--pack-price", "12.5", "--format", "json"])
    assert res.exit_code == 0, res.output
    entry = json.loads(res.stdout)["files"][0]
    perimeter, glazing = entry["layers"]["PERIMETER"], entry["layers"]["GLAZING"]
    assert perimeter["volume_ml"] == pytest.approx(1000 * 72 / 1000, rel=1e-12)
    assert glazing["length"] == pytest.approx(2 * 2 * math.pi * 50, rel=1e-12)  # both faces
    assert glazing["volume_ml"] == pytest.approx(2 * 2 * math.pi * 50 * 18 / 1000, rel=1e-12)
    assert glazing["backer_rod_length"] == 0 and perimeter["backer_rod_diameter_mm"] == 15.0
    volume = perimeter["volume_ml"] + glazing["volume_ml"]
    assert entry["packs"] == math.ceil(volume * 1.1 / 600)  # default waste 10 %
    assert entry["time_s"] == pytest.approx((1000 + 4 * math.pi * 50) / 10 + entry["packs"] * 60, rel=1e-12)
    assert entry["cost"] == pytest.approx(entry["packs"] * 12.5)


@pytest.mark.parametrize(("text", "words"), [
    ("", "no [[joint]] tables"),
    ('[[joint]]\nlayer = "A"\nsection = "oval:3"\n', "bead section"),
    ('[[joint]]\nsection = "rect:12x6"\n', "either layer or color"),
    ('[[joint]]\nlayer = "A"\ncolor = "#ff0000"\nsection = "rect:12x6"\n', "either layer or color"),
    ('[[joint]]\nlayer = "A"\nsection = "rect:12x6"\nsides = 3\n', "sides must be 1 or 2"),
    ('[[joint]]\nlayer = "A"\nsection = "rect:12x6"\nwidth = 3\n', "unknown key 'width'"),
    ("[beads]\n", "unknown table"),
    ("not toml [", "not valid TOML"),
])
def test_bad_plans_are_one_line_usage_errors(runner, wall, tmp_path, text, words):
    plan = tmp_path / "plan.toml"
    plan.write_text(text)
    res = runner.invoke(main, ["bead", str(wall), "--plan", str(plan)])
    assert res.exit_code == 2 and words in res.output


def test_bead_or_plan_is_required(runner, wall):
    assert runner.invoke(main, ["bead", str(wall)]).exit_code == 2
    assert runner.invoke(main, ["bead", str(wall), "--bead", "rect:5"]).exit_code == 2


def test_demo_window_wall_and_csv(runner):
    from pathlib import Path

    fixtures = Path(__file__).resolve().parent.parent / "fixtures"
    res = runner.invoke(main, ["bead", str(fixtures / "kl520_office_windows.dxf"), "--plan",
                               str(fixtures / "kl520_office_windows_beads.toml"), "--format", "csv"])
    assert res.exit_code == 0, res.output
    rows = res.stdout.splitlines()
    assert rows[0].startswith("path,joint,section,sides,length_mm,section_mm2,volume_ml,packs")
    # three frames: perimeters 2(1200 + 1500)·2 + 2(900 + 600), glazing 60 mm inside, both faces
    perimeter = 2 * (1200 + 1500) * 2 + 2 * (900 + 600)
    glazing = 2 * (2 * (1080 + 1380) * 2 + 2 * (780 + 480))
    values = {r.split(",")[1]: float(r.split(",")[4]) for r in rows[1:]}
    assert values == pytest.approx({"PERIMETER": perimeter, "GLAZING": glazing}, rel=1e-12)
