"""The HTML report in a real headless browser (Chromium from the Debian packages; .ci/run installs it)."""

import json
import os
import re
import shutil
import subprocess
from pathlib import Path

import pytest

from pathlen.cli import main

FIXTURES = Path(__file__).resolve().parent.parent / "fixtures"
HOSTILE = "<script>document.title='owned'</script><img src=x onerror=alert(1)>"


def chromium() -> str:
    """The browser; in CI (.ci/run installs it) a missing one fails the test, elsewhere it is skipped."""
    for name in ("chromium", "chromium-browser", "google-chrome"):
        found = shutil.which(name)
        if found:
            return found
    if os.environ.get("CI"):
        pytest.fail("Chromium is missing: .ci/run installs it (apt-get install chromium)")
    pytest.skip("Chromium is not installed here (apt-get install chromium); CI installs it and runs this test")


def browse(html: Path, *flags: str) -> subprocess.CompletedProcess:
    return subprocess.run([chromium(), "--headless", "--no-sandbox", "--disable-gpu", "--enable-logging=stderr",
                           "--v=0", *flags, html.as_uri()], capture_output=True, text=True, timeout=120, check=False)


@pytest.fixture
def report(runner, tmp_path):
    hostile = tmp_path / "hostile.svg"
    hostile.write_text('<svg xmlns="http://www.w3.org/2000/svg" width="50mm" height="50mm" viewBox="0 0 50 50">'
                       f'<g id="{HOSTILE.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")}">'
                       '<rect width="40" height="30"/></g></svg>')
    page = tmp_path / "report.html"
    res = runner.invoke(main, ["measure", str(FIXTURES / "kl101_bracket.dxf"), str(FIXTURES / "kl412_lamp_panel.svg"),
                               str(hostile), "--report", str(page), "--format", "json"])
    assert res.exit_code == 0, res.output
    return page, json.loads(res.stdout)


def test_report_in_a_browser_shows_the_json_numbers_and_hostile_names_as_text(report):
    page, doc = report
    dom = browse(page, "--dump-dom")
    assert dom.returncode == 0, dom.stderr[-2000:]
    html = dom.stdout
    assert html.count("<h2>") == len(doc["files"]) + 1  # the whole job's table, then a section per file
    job = html.split('class="sortable job"')[1].split("</table>")[0]
    assert all(Path(f["path"]).name.replace("&", "&amp;").replace("<", "&lt;") in job for f in doc["files"])
    shown = [float(v) for v in re.findall(r'data-v="([^"]+)"', html)]
    for f in doc["files"]:
        for layer in f["layers"].values():
            assert layer["length"] in shown  # the exact JSON numbers stand behind the rounded ones
    assert "&lt;script&gt;document.title='owned'&lt;/script&gt;" in html  # the layer name, as text
    assert "<title>Path lengths</title>" in html  # no script ran
    assert "owned" not in html.split("<title>")[1].split("</title>")[0]
    console = [line for line in dom.stderr.splitlines() if "CONSOLE" in line or "Uncaught" in line]
    assert console == []


def test_report_screenshot_is_not_blank(report, tmp_path):
    page, _ = report
    shot = tmp_path / "shot.png"
    done = browse(page, f"--screenshot={shot}", "--window-size=1000,1400", "--hide-scrollbars")
    assert shot.exists(), done.stderr[-2000:]
    import matplotlib.image as mpimg

    img = mpimg.imread(shot)[:, :, :3]
    assert len({tuple(px) for px in (img[::20, ::20].reshape(-1, 3) * 255).round().astype(int)}) > 10


@pytest.mark.parametrize(("command", "extra", "words"), [
    ("cut", ["--profile", "steel-3mm-laser"], ["Cut estimate", "Machine time", "caution"]),
    ("bead", ["--bead", "rect:12x6"], ["Sealant beads", "Packs"]),
    ("seam", [], ["Seams and thread", "Thread (order)"]),
])
def test_every_estimate_writes_its_report(runner, tmp_path, command, extra, words):
    page = tmp_path / f"{command}.html"
    res = runner.invoke(main, [command, str(FIXTURES / "kl101_bracket.dxf"), *extra, "--report", str(page)])
    assert res.exit_code == 0, res.output
    html = page.read_text()
    for w in words:
        assert w in html
    assert "http://" not in html.replace('xmlns="http://www.w3.org/2000/svg"', "")  # nothing fetched


def test_a_file_name_that_is_not_utf8_and_control_characters_stay_valid(runner, tmp_path):
    # a file name with a byte that is not UTF-8 (decoded to a lone surrogate) and a layer name with a
    # control character: the JSON is printed, the report and the preview are valid documents
    import os
    import xml.etree.ElementTree as ET

    import ezdxf

    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 4
    doc.layers.add("CUT\x07")
    doc.modelspace().add_circle((0, 0), 10, dxfattribs={"layer": "CUT\x07"})
    name = os.fsdecode(b"part\xff.dxf")
    path = tmp_path / name
    doc.saveas(path)
    report = tmp_path / "r.html"
    res = runner.invoke(main, ["measure", str(path), "--format", "json", "--report", str(report)])
    assert res.exit_code == 0, res.output
    assert json.loads(res.stdout)["files"][0]["ok"]
    html = report.read_text(encoding="utf-8")
    assert "\ufffd" in html and "\x07" not in html
    out = tmp_path / "p.svg"
    assert runner.invoke(main, ["preview", str(path), "-o", str(out)]).exit_code == 0
    ET.fromstring(out.read_bytes())  # well-formed XML


def test_a_report_that_cannot_be_written_keeps_the_answer(runner, tmp_path, monkeypatch):
    import click

    import pathlen.cli.reading as reading

    real = reading.write_atomic

    def refuse(path, text):
        if str(path).endswith(".html"):
            raise click.FileError(str(path), hint="No space left on device")
        real(path, text)

    monkeypatch.setattr(reading, "write_atomic", refuse)
    res = runner.invoke(main, ["measure", str(FIXTURES / "kl101_bracket.dxf"), "--format", "json", "--report",
                               str(tmp_path / "r.html")])
    assert res.exit_code == 1
    assert json.loads(res.stdout)["files"][0]["ok"]
    assert "No space left on device" in res.stderr and "Traceback" not in res.output


def test_cut_report_shows_every_charge_and_they_add_up(runner, tmp_path):
    # money people sign: machine, consumables, setup and the minimum charge each on its own line, summing
    # to the total, with the price per part
    import re

    page = tmp_path / "cut.html"
    res = runner.invoke(main, ["cut", str(FIXTURES / "kl101_bracket.dxf"), "--profile", "steel-3mm-laser", "-q", "3",
                               "--report", str(page), "--format", "json"])
    assert res.exit_code == 0, res.output
    cost = json.loads(res.stdout)["total"]["cost"]
    html = page.read_text()
    shown = {}
    for label in ("Machine", "Consumables", "Setup, once", "Minimum charge", "Total", "Per part, 3 parts"):
        m = re.search(re.escape(label) + r" \([^)]*\)<b>([0-9,.]+)</b>", html)
        assert m, label
        shown[label] = float(m.group(1).replace(",", ""))
    assert shown["Total"] == pytest.approx(cost["total"], abs=0.005)
    parts = shown["Machine"] + shown["Consumables"] + shown["Setup, once"] + shown["Minimum charge"]
    assert parts == pytest.approx(shown["Total"], abs=0.02)  # rounded to cents each
    assert shown["Per part, 3 parts"] == pytest.approx(cost["total"] / 3, abs=0.005)
