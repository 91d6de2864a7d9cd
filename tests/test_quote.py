"""pathlen quote: orders priced by hand-checkable rules; every charge a line, the lines add up."""

import csv
import io
import json
import re
import shutil
import subprocess
from decimal import ROUND_HALF_UP, Decimal
from pathlib import Path

import ezdxf
import pytest

from pathlen.cli import main

# a profile with round numbers: 60 per hour is 1 per minute; rapids so fast they cost nothing
PROFILE = """
[profile.plain-laser]
process = "laser"
material = "test steel"
thickness_mm = 2.0
feed_mm_min = 1000.0
pierce_s = 1.0
rapid_mm_min = 1e12
accel_mm_s2 = 1e12
kerf_mm = 0.0
rate_per_hour = 60.0
setup_min = 10.0
minimum_charge = 0.0
currency = "EUR"
"""


def rect(tmp_path, w, h, name):
    doc = ezdxf.new("R2010")
    doc.header["$INSUNITS"] = 4
    doc.modelspace().add_lwpolyline([(0, 0), (w, 0), (w, h), (0, h)], close=True)
    doc.saveas(tmp_path / name)
    return tmp_path / name


def order(tmp_path, lines, sheet="{ width_mm = 1000, length_mm = 1000, price = 100.0 }", extra=""):
    text = 'customer = "Test"\nreference = "T-1"\n' + extra + (
        f'[material.m]\nname = "test steel"\nthickness_mm = 2\nsheets = [{sheet}]\n')
    for file, quantity in lines:
        text += f'[[part]]\nfile = "{file}"\nquantity = {quantity}\nprofile = "plain-laser"\n'
    path = tmp_path / "order.toml"
    path.write_text(text)
    return path


def run(runner, tmp_path, order_path, *args):
    profiles = tmp_path / "profiles.toml"
    profiles.write_text(PROFILE)
    result = runner.invoke(main, ["quote", str(order_path), "--profiles", str(profiles), "--time", "1", "--seed", "1",
                                  "--margin", "0", *map(str, args), "--format", "json"])
    assert result.exit_code in (0, 1), result.output
    return result.exit_code, json.loads(result.stdout)


def cents(x):
    return Decimal(str(x)).quantize(Decimal("0.01"), rounding=ROUND_HALF_UP)


def test_two_drawings_of_one_material_share_one_setup_and_the_lines_add_up(runner, tmp_path):
    a, b = rect(tmp_path, 100, 50, "a.dxf"), rect(tmp_path, 60, 60, "b.dxf")
    code, doc = run(runner, tmp_path, order(tmp_path, [(a.name, 3), (b.name, 2)]))
    assert code == 0
    [r] = doc["runs"]
    assert r["setup_s"] == 600.0 and r["setup_cost"] == pytest.approx(10.0)  # 10 min at 1 per minute, once
    lines = doc["lines"]
    assert sum(ln["cost"]["setup_share"] for ln in lines) == pytest.approx(10.0)
    assert sum(ln["cost"]["material_share"] for ln in lines) == pytest.approx(100.0)  # one sheet, charged whole
    # hand computation of line 1: 300 mm at 1000 mm/min is 18 s, one pierce 1 s: 19 s = 0.3167 per part
    cutting_each = (300 / 1000 * 60 + 1.0) / 60
    assert lines[0]["cost"]["cutting"] == pytest.approx(3 * cutting_each, rel=1e-6)
    area_a, area_b = 3 * 100 * 50, 2 * 60 * 60
    assert lines[0]["cost"]["material_share"] == pytest.approx(100 * area_a / (area_a + area_b))
    for ln in lines:
        raw = sum(ln["cost"].values())
        assert Decimal(ln["unit_price"]) == cents(raw / ln["quantity"])
        assert Decimal(ln["line_total"]) == Decimal(ln["unit_price"]) * ln["quantity"]
    t = doc["total"]
    assert Decimal(t["subtotal"]) == sum(Decimal(ln["line_total"]) for ln in lines)
    assert Decimal(t["total"]) == Decimal(t["subtotal"]) + Decimal(t["minimum_charge"]) + Decimal(t["tax"])


def test_minimum_charge_and_tax_are_lines_in_every_format(runner, tmp_path):
    a = rect(tmp_path, 20, 20, "a.dxf")
    path = order(tmp_path, [(a.name, 1)], extra="[shop]\ncurrency = \"EUR\"\nminimum_order = 250\ntax_rate_pct = 20\n")
    code, doc = run(runner, tmp_path, path)
    assert code == 0
    t = doc["total"]
    subtotal = Decimal(t["subtotal"])
    assert subtotal < 250 and Decimal(t["minimum_charge"]) == 250 - subtotal
    assert Decimal(t["tax"]) == cents(Decimal(250) * Decimal("0.2"))  # 20 % of the order after the minimum
    assert Decimal(t["total"]) == Decimal("300.00")
    assert [c["charge"] for c in doc["charges"]] == ["lines", "minimum order charge", "tax 20 %"]
    profiles = tmp_path / "profiles.toml"
    rows = list(csv.reader(io.StringIO(runner.invoke(main, ["quote", str(path), "--profiles", str(profiles),
                                                            "--time", "1", "--format", "csv"]).stdout)))
    assert [r[0] for r in rows[1:]] == ["line 1", "minimum order charge", "tax 20 %", "total"]
    assert sum(Decimal(r[11]) for r in rows[1:-1]) == Decimal(rows[-1][11]) == Decimal("300.00")
    words = " ".join(runner.invoke(main, ["quote", str(path), "--profiles", str(profiles), "--time", "1"],
                                   env={"COLUMNS": "160"}).stdout.split())
    assert "Minimum order charge" in words and "300.00" in words


def test_price_breaks_fall_and_reach_the_part_cost_plus_material(runner, tmp_path):
    # one drawing: at quantity Q the unit price is cutting + (setup + the one sheet) / Q (all fit one sheet)
    a = rect(tmp_path, 40, 40, "a.dxf")
    code, doc = run(runner, tmp_path, order(tmp_path, [(a.name, 5)]), "--quantities", "1,10,100,400")
    assert code == 0
    [line] = doc["lines"]
    cutting_each = line["cost"]["cutting"] / line["quantity"]
    breaks = {int(q): Decimal(v) for q, v in line["price_breaks"].items()}
    assert breaks[1] > breaks[10] > breaks[100] > breaks[400]
    for q, unit in breaks.items():
        assert unit == cents(cutting_each + (10.0 + 100.0) / q)  # setup 10 and one sheet of 100, amortised


def test_material_per_sheet_and_by_used_area(runner, tmp_path):
    a = rect(tmp_path, 300, 300, "a.dxf")
    code, doc = run(runner, tmp_path, order(tmp_path, [(a.name, 6)],
                                            sheet="{ width_mm = 620, length_mm = 620, price = 80.0 }"))
    assert code == 0
    [r] = doc["runs"]
    assert len(r["sheets"]) == 2 and r["material_cost"] == pytest.approx(2 * 80.0)  # 4 on a sheet: 2 sheets, whole
    used = order(tmp_path, [(a.name, 6)], sheet="{ width_mm = 620, length_mm = 620, price = 80.0 }")
    used.write_text(used.read_text().replace('thickness_mm = 2\n', 'thickness_mm = 2\ncharge = "used"\n'
                                             'remnant_pct = 25\n'))
    code, doc = run(runner, tmp_path, used)
    [r] = doc["runs"]
    last = r["sheets"][-1]
    share = last["used_length"] / last["length"]
    assert last["charged"] == pytest.approx(80 * share + 80 * (1 - share) * 0.25, abs=1e-4)
    assert r["material_cost"] == pytest.approx(80.0 + last["charged"], abs=1e-4)


def test_a_part_too_big_and_a_missing_file_fail_their_lines(runner, tmp_path):
    small, big = rect(tmp_path, 50, 50, "small.dxf"), rect(tmp_path, 3000, 50, "big.dxf")
    code, doc = run(runner, tmp_path, order(tmp_path, [(small.name, 2), (big.name, 1), ("gone.dxf", 1)]))
    assert code == 1
    ok = [ln["ok"] for ln in doc["lines"]]
    assert ok == [True, False, False]
    assert "does not fit" in doc["lines"][1]["error"] and "3000.0 x 50.0 mm" in doc["lines"][1]["error"]
    assert Decimal(doc["total"]["subtotal"]) == Decimal(doc["lines"][0]["line_total"])


@pytest.mark.parametrize("change, words", [
    (('profile = "plain-laser"', 'profile = "nope"'), "no profile 'nope'"),
    (('name = "test steel"', 'name = "other"'), "no [material] table for profile"),
    (("price = 100.0", "price = nan"), "price"),
    (("quantity = 1", "quantity = -1"), "quantity"),
])
def test_bad_orders_are_one_line_exit_2(runner, tmp_path, change, words):
    a = rect(tmp_path, 20, 20, "a.dxf")
    path = order(tmp_path, [(a.name, 1)])
    path.write_text(path.read_text().replace(*change))
    profiles = tmp_path / "profiles.toml"
    profiles.write_text(PROFILE)
    result = runner.invoke(main, ["quote", str(path), "--profiles", str(profiles)])
    assert result.exit_code == 2 and words in result.output and "order.toml" in result.output
    assert "Traceback" not in result.output


def _chromium():
    for name in ("chromium", "chromium-browser", "google-chrome"):
        if shutil.which(name):
            return shutil.which(name)
    import os

    if os.environ.get("CI"):
        pytest.fail("Chromium is missing: .ci/run installs it (apt-get install chromium)")
    pytest.skip("Chromium is not installed here (apt-get install chromium); CI installs it and runs this test")


def test_quote_document_renders_and_prints_on_a4(runner, tmp_path):
    browser = _chromium()
    demo = Path(__file__).resolve().parent.parent / "fixtures" / "kl_quote_order.toml"
    page, pdf = tmp_path / "quote.html", tmp_path / "quote.pdf"
    result = runner.invoke(main, ["quote", str(demo), "--time", "1", "--document", str(page), "--pdf", str(pdf),
                                  "--quantities", "1,10"])
    assert result.exit_code == 0, result.output
    html = page.read_text()
    assert "Minimum order charge" in html and "valid until" in html and "<svg" in html and "caution" in html
    assert "http" not in html.replace('xmlns="http://www.w3.org/2000/svg"', "")  # self-contained: nothing fetched
    data = pdf.read_bytes()
    assert data.startswith(b"%PDF")
    boxes = {tuple(round(float(x)) for x in m.groups()) for m in re.finditer(
        rb"/MediaBox\s*\[\s*0\s+0\s+([\d.]+)\s+([\d.]+)\s*\]", data)}
    assert boxes == {(596, 842)} or boxes == {(595, 842)}  # A4 in points (ISO 216: 210 x 297 mm)
    # no cut-off: at the printable width of A4 (180 mm at 96 px per inch) nothing overflows sideways
    probe = tmp_path / "probe.html"
    probe.write_text(html.replace("</body>", "<script>document.body.setAttribute('data-overflow', "
                                              "String(document.documentElement.scrollWidth > "
                                              "document.documentElement.clientWidth));</script></body>"))
    dom = subprocess.run([browser, "--headless", "--no-sandbox", "--disable-gpu", "--window-size=680,1000",
                          "--dump-dom", probe.as_uri()], capture_output=True, text=True, timeout=120, check=False)
    assert 'data-overflow="false"' in dom.stdout, dom.stderr[-500:]
