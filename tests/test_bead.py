"""Sealant beads: section areas, volumes, packs, plans and the command, against elementary geometry."""

import json
import math

import ezdxf
import pytest

from pathlen.cli import main
from pathlen.errors import UsageError
from pathlen.estimates.bead import ML_PER_US_FL_OZ, parse_pack, parse_section, whole_packs
from pathlen.estimates.joint_design import size_warnings


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
    # ASTM C1193 guide as recalled (# from memory): the usual 6 x 6, 10 x 10 and 12 x 12 joints pass
    for w in (6.35, 10.0, 12.0):
        assert size_warnings(w, w, "J") == []
    words = " ".join(size_warnings(4, 4, "J"))
    assert "under the minimum of 6.35 mm" in words
    assert "about half the width" in " ".join(size_warnings(20, 13, "J"))


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
    assert doc["format"] == "pathlen-bead" and doc["version"] == 2 and doc["units"]["volume"] == "ml"
    entry = doc["files"][0]
    length = 1000 + 2 * math.pi * 50
    assert entry["length"] == pytest.approx(length, rel=1e-12)
    assert entry["layers"]["(all)"]["section_area"] == 72.0
    assert entry["volume"] == pytest.approx(length * 72 / 1000, rel=1e-12)
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
    assert perimeter["volume"] == pytest.approx(1000 * 72 / 1000, rel=1e-12)
    assert glazing["length"] == pytest.approx(2 * 2 * math.pi * 50, rel=1e-12)  # both faces
    assert glazing["volume"] == pytest.approx(2 * 2 * math.pi * 50 * 18 / 1000, rel=1e-12)
    assert glazing["backer_rod_length"] == 0 and perimeter["backer_rod_diameter"] == 15.0  # 1.25 x 12 in stock
    volume = perimeter["volume"] + glazing["volume"]
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
    ("joint = 5\n", "joint must be [[joint]] tables, not 5"),
    ('[[joint]]\nlayer = "A"\nsection = "rect:1e200x1e200"\n', "at most 1000 mm"),
    ('[[joint]]\nlayer = "A"\nsection = "rect:12x6"\nproduct = "X"\n', "product 'X' is not a [[product]]"),
    ('[[product]]\nname = "X"\npack = "600ml"\nmovement_class = 30\n[[joint]]\nlayer = "A"\nsection = "rect:12x6"\n',
     "movement_class 30 is not an ISO 11600 class"),
    ('[[product]]\nname = "X"\npack = "bucket"\n[[joint]]\nlayer = "A"\nsection = "rect:12x6"\n', "pack size"),
    ('[[product]]\nname = "X"\npack = "600ml"\nprice = nan\n[[joint]]\nlayer = "A"\nsection = "rect:12x6"\n',
     "price"),
    ('[[joint]]\nlayer = "A"\nsection = "rect:12x6"\npanel_length = 3000\nmaterial = "wood"\ndelta_t = 70\n',
     "material 'wood'"),
    ('[[joint]]\nlayer = "A"\nsection = "rect:12x6"\npanel_length = 3000\nalpha = inf\ndelta_t = 70\n', "alpha"),
    ('[[joint]]\nlayer = "A"\nsection = "rect:12x6"\nmovement = 3\nmovement_class = "high"\n', "movement_class"),
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
    assert rows[0].startswith("record,path,joint,section,sides,product,length_mm,section_mm²,volume_ml,packs")
    # three frames: perimeters 2(1200 + 1500)·2 + 2(900 + 600), glazing 60 mm inside, both faces
    perimeter = 2 * (1200 + 1500) * 2 + 2 * (900 + 600)
    glazing = 2 * (2 * (1080 + 1380) * 2 + 2 * (780 + 480))
    values = {r.split(",")[2]: float(r.split(",")[6]) for r in rows[1:] if r.startswith("joint,")}
    assert values == pytest.approx({"PERIMETER": perimeter, "GLAZING": glazing}, rel=1e-12)


# ----- joint design (ASTM C1193 guide as recalled, # from memory), movement, products, rod --------------
@pytest.mark.parametrize(("width", "depth", "words"), [
    (6.35, 6.35, None),  # the minimum width, depth = width
    (6.0, 6.0, "under the minimum of 6.35 mm"),
    (12.7, 12.7, None),  # top of the 1:1 band
    (12.7, 6.35, "should equal the width"),
    (12.8, 6.4, None),  # the half-width band begins
    (12.8, 12.8, "about half the width"),
    (25.4, 12.7, None),  # top of the half-width band
    (25.5, 12.7, None),  # the capped band begins: 1/2 to 5/8 in deep
    (40.0, 13.0, None),
    (40.0, 20.0, "12.7 to 15.9 mm"),
    (50.8, 15.875, None),  # top of the capped band
    (50.9, 15.0, "consult the sealant maker"),
    (100.0, 15.0, "consult the sealant maker"),
])
def test_joint_size_rules_at_the_band_edges(width, depth, words):
    found = size_warnings(width, depth, "PERIMETER")
    if words is None:
        assert found == []
    else:
        assert len(found) == 1 and words in found[0] and "PERIMETER" in found[0]


def test_movement_worked_example():
    # a 3 m aluminium panel over a 70 K range, α = 23e-6/K (EN 1999-1-1, 3.2.5), a ±25 % sealant
    # (ISO 11600 class 25): movement 3000 x 23e-6 x 70 = 4.83 mm, minimum width 4.83 / 0.25 = 19.32 mm
    from pathlen.estimates.joint_design import Movement, expansion, minimum_width, movement_warning, thermal_movement

    alpha, source = expansion("Aluminum", "J")
    assert alpha == 23e-6 and "EN 1999-1-1" in source
    movement = thermal_movement(3000, alpha, 70)
    assert movement == pytest.approx(4.83, rel=1e-12)
    assert minimum_width(movement, 25) == pytest.approx(19.32, rel=1e-12)
    m = Movement(movement, "panel")
    assert "needs at least 19.3 mm" in movement_warning(15, m, 25, "J")
    assert movement_warning(19.4, m, 25, "J") is None


def test_movement_check_from_a_plan(runner, wall, tmp_path):
    plan = tmp_path / "plan.toml"
    plan.write_text('[[product]]\nname = "S25"\npack = "600ml"\nmovement_class = 25\n'
                    '[[joint]]\nlayer = "PERIMETER"\nsection = "rect:15x8"\nproduct = "S25"\n'
                    'panel_length = 3000\nmaterial = "aluminium"\ndelta_t = 70\n'
                    '[[joint]]\nlayer = "GLAZING"\nsection = "rect:20x10"\nproduct = "S25"\nmovement = 4.83\n')
    res = runner.invoke(main, ["bead", str(wall), "--plan", str(plan), "--format", "json"])
    entry = json.loads(res.stdout)["files"][0]
    assert entry["layers"]["PERIMETER"]["min_width_mm"] == pytest.approx(19.32)
    assert sum("too narrow" in w for w in entry["warnings"]) == 1
    assert any("PERIMETER" in w and "needs at least 19.3 mm" in w for w in entry["warnings"])


@pytest.mark.parametrize(("pack", "sections", "volumes", "packs", "prices"), [
    # two round beads (πD²/4 x length, by hand) that fit one 20 ml pack each, and one together
    (20, ("round:4.9", "round:1"), (1000 * math.pi * 4.9**2 / 4 / 1000, 2 * math.pi * 50 * math.pi / 4 / 1000),
     (1, 1), (3, 5)),
    # a 8 x 8 joint of 1000 mm (64 ml: 4 packs of 18 ml) and a thin bead (0.99 ml: 1 pack): 4 + 1 = 5
    (18, ("rect:8x8", "round:2"), (64.0, 2 * math.pi * 50 * math.pi * 4 / 4 / 1000), (4, 1), (2, 7)),
])
def test_products_are_never_pooled(runner, wall, tmp_path, pack, sections, volumes, packs, prices):
    # each product rounds up on its own; pooled, the volumes would take fewer packs
    plan = tmp_path / "plan.toml"
    plan.write_text(f'[[product]]\nname = "A"\npack = "{pack}ml"\nprice = {prices[0]}\n'
                    f'[[product]]\nname = "B"\npack = "{pack}ml"\nprice = {prices[1]}\n'
                    f'[[joint]]\nlayer = "PERIMETER"\nsection = "{sections[0]}"\nproduct = "A"\n'
                    f'[[joint]]\nlayer = "GLAZING"\nsection = "{sections[1]}"\nproduct = "B"\n')
    res = runner.invoke(main, ["bead", str(wall), "--plan", str(plan), "--waste", "0", "--format", "json"])
    t = json.loads(res.stdout)["total"]
    assert [p["volume"] for p in t["products"]] == pytest.approx(list(volumes), rel=1e-12)
    assert [p["packs"] for p in t["products"]] == [math.ceil(v / pack) for v in volumes] == list(packs)
    assert t["packs"] == sum(packs) > math.ceil(sum(volumes) / pack)  # pooled would say fewer
    assert t["cost"] == pytest.approx(packs[0] * prices[0] + packs[1] * prices[1])


def test_joint_without_a_product_uses_the_command_line_pack_with_a_warning(runner, wall, tmp_path):
    plan = tmp_path / "plan.toml"
    plan.write_text('[[product]]\nname = "A"\npack = "600ml"\nprimer_ml_per_m = 5\n'
                    '[[joint]]\nlayer = "PERIMETER"\nsection = "rect:12x12"\nproduct = "A"\n'
                    '[[joint]]\nlayer = "GLAZING"\nsection = "fillet:6x6"\n')
    res = runner.invoke(main, ["bead", str(wall), "--plan", str(plan), "--pack", "310ml", "--format", "json"])
    doc = json.loads(res.stdout)
    products = {p["product"]: p for p in doc["total"]["products"]}
    assert products[None]["pack"] == 310 and products["A"]["pack"] == 600
    assert products["A"]["primer"] == pytest.approx(5.0)  # 1 m at 5 ml/m
    assert any("GLAZING: no product named" in w for w in doc["files"][0]["warnings"])


@pytest.mark.parametrize(("width", "series", "rod"), [
    (12.0, "mm", 15.0),  # 1.25 x 12 = 15: a stock size exactly
    (13.0, "mm", 20.0),  # 16.25: the next stock size up
    (4.0, "mm", 6.0),
    (12.7, "in", 0.625 * 25.4),  # 1/2 in joint: 5/8 in rod
    (38.1, "in", 2.0 * 25.4),  # 1-1/2 in joint: 1.875 in, so 2 in
    (45.0, "mm", None),  # over the table
])
def test_backer_rod_from_stock_sizes(width, series, rod):
    # stock diameters as commonly stocked (common practice, shared/REFERENCES.md), about 25 % over the width
    from pathlen.estimates.joint_design import rod_diameter

    assert rod_diameter(width, series) == (pytest.approx(rod) if rod is not None else None)


def test_inch_units_throughout(runner, wall):
    res = runner.invoke(main, ["bead", str(wall), "--bead", "rect:12.7x12.7", "--units", "in", "--waste", "0",
                               "--format", "json"])
    doc = json.loads(res.stdout)
    assert doc["units"] == {"length": "in", "volume": "fl oz", "section": "in²", "diameter": "in"}
    line = doc["files"][0]["layers"]["(all)"]
    length_mm = 1000 + 2 * math.pi * 50
    assert line["length"] == pytest.approx(length_mm / 25.4)
    assert line["section_area"] == pytest.approx(0.25)  # 1/2 x 1/2 in
    assert line["volume"] == pytest.approx(length_mm * 12.7**2 / 1000 / ML_PER_US_FL_OZ)
    assert line["backer_rod_diameter"] == pytest.approx(0.625)


@pytest.mark.parametrize(("args", "words"), [
    (["--waste", "nan"], "finite"),
    (["--gun-speed", "1e-320"], "gun-speed"),
    (["--pack-change-s", "inf"], "pack-change-s"),
    (["--pack-price", "nan"], "finite"),
])
def test_bad_numbers_are_usage_errors(runner, wall, args, words):
    res = runner.invoke(main, ["bead", str(wall), "--bead", "rect:12x12", *args])
    assert res.exit_code == 2 and words in res.output and "Traceback" not in res.output


def test_picture_colours_each_joint_and_greys_the_rest(runner, tmp_path):
    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 4
    for name in ("PERIMETER", "GLAZING & CO", "NOTES"):
        doc.layers.add(name)
    msp = doc.modelspace()
    msp.add_line((0, 0), (1000, 0), dxfattribs={"layer": "PERIMETER"})
    msp.add_circle((500, 500), 50, dxfattribs={"layer": "GLAZING & CO"})
    msp.add_line((0, 100), (100, 100), dxfattribs={"layer": "NOTES"})
    path = tmp_path / "wall.dxf"
    doc.saveas(path)
    plan = tmp_path / "plan.toml"
    plan.write_text('[[product]]\nname = "S25"\npack = "600ml"\n[[joint]]\nlayer = "PERIMETER"\n'
                    'section = "rect:12x12"\nproduct = "S25"\n[[joint]]\nlayer = "GLAZING & CO"\n'
                    'section = "fillet:6x6"\nproduct = "S25"\n')
    out = tmp_path / "beads.svg"
    res = runner.invoke(main, ["bead", str(path), "--plan", str(plan), "--picture", str(out)])
    assert res.exit_code == 0, res.output
    svg = out.read_text()
    assert svg.count('class="joint0"') == svg.count('class="joint1"') == svg.count('class="unsealed"') == 1
    assert "PERIMETER: rect:12x12, S25" in svg and "GLAZING &amp; CO: fillet:6x6, S25" in svg
    assert "GLAZING & CO" not in svg and "not sealed" in svg
    # the joint's paths, measured again, are the joint's length
    back = json.loads(runner.invoke(main, ["measure", str(out), "--format", "json"]).stdout)["files"][0]
    assert back["layers"]["measured"]["length"] == pytest.approx(1000 + 2 * math.pi * 50 + 100, rel=1e-8)
