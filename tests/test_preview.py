"""Preview pictures: exact curves in SVG (re-measured by pathlen itself), pixels where they belong in PNG."""

import json
import math
from pathlib import Path

import ezdxf
import numpy as np
import pytest

from pathlen.cli import main

FIXTURES = Path(__file__).resolve().parent.parent / "fixtures"


@pytest.mark.parametrize("name", ["kl101_bracket.dxf", "kl330_sign_panel.dxf", "kl412_lamp_panel.svg",
                                  "kl214_gasket.dxf"])
def test_svg_preview_remeasured_gives_the_same_length(runner, tmp_path, name):
    # the picture is exact: its "measured" group, read back by pathlen (sized in mm), has the drawing's length (to the
    # 1e-6 mm the coordinates are written with); lines, arcs, Béziers and conic arcs stay curves
    out = tmp_path / "p.svg"
    res = runner.invoke(main, ["preview", str(FIXTURES / name), "-o", str(out), "--real-size"])
    assert res.exit_code == 0, res.output
    back = json.loads(runner.invoke(main, ["measure", str(out), str(FIXTURES / name), "--format", "json"]).stdout)
    picture, drawing = back["files"][0]["layers"]["measured"]["length"], back["files"][1]["length"]
    assert picture == pytest.approx(drawing, rel=1e-8)


def png_pixels(path):
    import matplotlib.image as mpimg

    return (mpimg.imread(path)[:, :, :3] * 255).round().astype(int)


def colour_mask(img, hex_colour, tol=40):
    rgb = np.array([int(hex_colour[k:k + 2], 16) for k in (1, 3, 5)])
    return np.abs(img - rgb).sum(axis=2) <= tol


def test_png_square_lands_on_the_expected_pixels(runner, tmp_path):
    # a 100 mm square drawn at 1 mm per mm on paper and 150 dpi: its sides 100/25.4·150 = 590.6 px apart,
    # the left side after the 8 mm margin (0.06·100 + 2) at 47.2 px
    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 4
    doc.modelspace().add_lwpolyline([(0, 0), (100, 0), (100, 100), (0, 100)], close=True)
    doc.modelspace().add_line((20, 50), (60, 50))  # open
    doc.modelspace().add_line((60.2, 50), (80, 50))  # a 0.2 mm gap, under the 0.5 mm reported
    path = tmp_path / "square.dxf"
    doc.saveas(path)
    out = tmp_path / "square.png"
    res = runner.invoke(main, ["preview", str(path), "-o", str(out), "--dpi", "150"])
    assert res.exit_code == 0, res.output
    img = png_pixels(out)
    closed = colour_mask(img, "#0b6e6e")
    row = round((8 + 30) / 25.4 * 150)  # a row through the square's sides, away from the lines
    columns = np.flatnonzero(closed[row])
    assert abs(columns.min() - 8 / 25.4 * 150) <= 3 and abs(columns.max() - 108 / 25.4 * 150) <= 3
    assert colour_mask(img, "#d98c00").any()  # the open lines in amber
    assert colour_mask(img, "#7a3db8").any()  # the gap circled in violet
    assert img.shape[1] == pytest.approx(116 / 25.4 * 150, abs=2)


def test_preview_refuses_unknown_formats_and_names_bad_files(runner, tmp_path):
    assert runner.invoke(main, ["preview", str(FIXTURES / "kl101_bracket.dxf"), "-o", str(tmp_path / "x.bmp")]
                         ).exit_code == 2
    bad = tmp_path / "bad.dxf"
    bad.write_bytes(b"\x00")
    res = runner.invoke(main, ["preview", str(bad), "-o", str(tmp_path / "x.svg")])
    assert res.exit_code == 1 and "not a DXF file" in res.stderr


def test_names_from_drawings_are_text_in_the_svg(runner, tmp_path):
    svg = tmp_path / "hostile.svg"
    svg.write_text('<svg xmlns="http://www.w3.org/2000/svg" width="10mm" height="10mm" viewBox="0 0 10 10">'
                   '<line x2="5"/><text>&lt;script&gt;alert(1)&lt;/script&gt;</text></svg>')
    out = tmp_path / "p.svg"
    assert runner.invoke(main, ["preview", str(svg), "-o", str(out)]).exit_code == 0
    assert "<script" not in out.read_text()


def test_cut_order_matches_the_cut_estimate(runner, tmp_path):
    # the pierces numbered in the picture are the cut estimate's, and its dashed rapids add up to the
    # estimate's rapid length (the same plan, drawn)
    import re

    out = tmp_path / "order.svg"
    drawing = FIXTURES / "kl101_bracket.dxf"
    assert runner.invoke(main, ["preview", str(drawing), "-o", str(out), "--profile", "steel-3mm-laser"]).exit_code == 0
    svg = out.read_text()
    numbers = [int(n) for n in re.findall(r">(\d+)</text>", svg)]
    cut = json.loads(runner.invoke(main, ["cut", str(drawing), "--profile", "steel-3mm-laser", "--format", "json"]
                                   ).stdout)["files"][0]
    assert numbers == list(range(1, cut["pierces"] + 1))
    legs = re.search(r'class="rapid" d="([^"]+)"', svg).group(1)
    values = [float(v) for v in re.findall(r"-?\d+\.\d+", legs)]
    rapid = sum(math.dist(values[k:k + 2], values[k + 2:k + 4]) for k in range(0, len(values), 4))
    assert rapid == pytest.approx(cut["rapid_length"], rel=1e-6)


def test_seam_edges_are_numbered_as_the_seam_command_numbers_them(runner, tmp_path):
    out = tmp_path / "tote.svg"
    pattern = FIXTURES / "kl610_tote_bag.dxf"
    assert runner.invoke(main, ["preview", str(pattern), "-o", str(out), "--seam"]).exit_code == 0
    import re

    labels = re.findall(r'class="label"[^>]*>([^<]+)</text>', out.read_text())
    seam = json.loads(runner.invoke(main, ["seam", str(pattern), "--format", "json"]).stdout)["files"][0]
    expected = [f"{p['name']}:{e['index']}" for p in seam["pieces"] for e in p["edges"]]
    assert labels == expected


def test_layers_off_are_ghosted_not_measured(runner, tmp_path):
    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 4
    doc.layers.add("NOTES").off()
    doc.modelspace().add_circle((0, 0), 10)
    doc.modelspace().add_line((-20, -20), (20, 20), dxfattribs={"layer": "NOTES"})
    path = tmp_path / "ghost.dxf"
    doc.saveas(path)
    out = tmp_path / "ghost.svg"
    assert runner.invoke(main, ["preview", str(path), "-o", str(out), "--real-size"]).exit_code == 0
    svg = out.read_text()
    assert 'class="ghost"' in svg and "not measured (layer off or frozen)" in svg
    back = json.loads(runner.invoke(main, ["measure", str(out), "--format", "json"]).stdout)["files"][0]
    assert back["layers"]["measured"]["length"] == pytest.approx(2 * math.pi * 10, rel=1e-8)  # the circle only


def test_preview_heading_legend_and_wrapped_notes(runner, tmp_path):
    # the picture says what it shows: file, measured length and contours; a legend line for each thing
    # drawn besides the paths (pierce order with --profile); notes wrap inside the picture
    import re

    out = tmp_path / "sign.svg"
    res = runner.invoke(main, ["preview", str(FIXTURES / "kl330_sign_panel.dxf"), "-o", str(out), "--profile",
                               "steel-3mm-laser"])
    assert res.exit_code == 0, res.output
    svg = out.read_text()
    heading = re.search(r'class="heading"[^>]*>([^<]+)<', svg).group(1)
    measured = json.loads(runner.invoke(main, ["measure", str(FIXTURES / "kl330_sign_panel.dxf"), "--format",
                                               "json"]).stdout)["files"][0]
    assert "kl330_sign_panel.dxf" in heading and f"{measured['length']:,.3f} mm" in heading
    assert f"{measured['contours']['closed']} closed" in heading
    assert "pierce order (numbers) and rapid moves (dashed)" in svg
    import html

    notes = [html.unescape(n) for n in re.findall(r'fill="#777777">([^<]+)<', svg)]
    assert len(notes) >= 2 and "which may differ from the drawing program's" in " ".join(notes)  # wrapped, whole
    assert max(len(n) for n in notes) < len(" ".join(notes))


def test_the_svg_fits_the_window_unless_real_size_is_asked(runner, tmp_path):
    # SVG 2, 8.2: an outermost svg without width/height takes its container's size (auto), the viewBox
    # keeps the proportions; --real-size gives it mm sizes, so that measuring it again gives the lengths
    import xml.etree.ElementTree as ET

    fit, real = tmp_path / "fit.svg", tmp_path / "real.svg"
    for out, extra in ((fit, []), (real, ["--real-size"])):
        res = runner.invoke(main, ["preview", str(FIXTURES / "kl101_bracket.dxf"), "-o", str(out), *extra])
        assert res.exit_code == 0, res.output
    a, b = ET.fromstring(fit.read_text()), ET.fromstring(real.read_text())
    assert a.get("width") == "100%" and a.get("height") is None and a.get("viewBox") == b.get("viewBox")
    assert b.get("width").endswith("mm") and b.get("height").endswith("mm")
