"""DXF rules from the DXF reference: $INSUNITS codes, hidden layers, library messages."""

import math

import ezdxf
import pytest

from pathlen.batch import MeasureSettings, measure_file
from pathlen.importers import ImportOptions
from tests.drawings import line_dxf

# DXF reference, HEADER section, $INSUNITS: the code list.  Lengths in mm from the definitions:
# SI prefixes; 1 in = 25.4 mm (international yard and pound, 1959); astronomical unit
# 149 597 870 700 m (IAU 2012 resolution B2); light year = c × Julian year = 9 460 730 472 580 800 m
# (IAU); parsec = 648000/π au (IAU 2015 resolution B2); US survey foot = 1200/3937 m (NIST SP 811,
# appendix B.6), survey inch = 1/12, yard = 3, mile = 5280 survey feet.
SURVEY_FT = 1_200_000 / 3937
INSUNITS_MM = {
    1: 25.4, 2: 304.8, 3: 1_609_344.0, 4: 1.0, 5: 10.0, 6: 1000.0, 7: 1e6, 8: 25.4e-6, 9: 0.0254,
    10: 914.4, 11: 1e-7, 12: 1e-6, 13: 1e-3, 14: 100.0, 15: 1e4, 16: 1e5, 17: 1e12,
    18: 149_597_870_700_000.0, 19: 9_460_730_472_580_800_000.0, 20: 149_597_870_700_000.0 * 648_000 / math.pi,
    21: SURVEY_FT, 22: SURVEY_FT / 12, 23: SURVEY_FT * 3, 24: SURVEY_FT * 5280,
}


@pytest.mark.parametrize(("code", "mm"), sorted(INSUNITS_MM.items()))
def test_every_insunits_code_has_its_factor(tmp_path, code, mm):
    doc = ezdxf.new()
    doc.header["$INSUNITS"] = code
    doc.modelspace().add_line((0, 0), (1e-3, 0))  # small enough that a parsec stays finite
    path = tmp_path / f"u{code}.dxf"
    doc.saveas(path)
    result = measure_file(str(path), MeasureSettings(join_tol_mm=1e-30))
    expected = 1e-3 * mm
    if expected > 1e9:  # beyond 1000 km a coordinate is taken as broken: the line is left out, named
        assert result.ok and result.length_mm == 0 and any("absurdly large" in w for w in result.warnings)
    else:
        assert result.ok and result.length_mm == pytest.approx(expected, rel=1e-15)
        assert not any("taken as mm" in w for w in result.warnings)


def test_us_survey_foot_is_not_the_international_foot(tmp_path):
    result = measure_file(str(line_dxf(tmp_path / "survey.dxf", 1000.0, insunits=21)))
    assert result.length_mm == pytest.approx(1000 * 1_200_000 / 3937, rel=1e-15)
    assert result.length_mm - 1000 * 304.8 == pytest.approx(0.6096, rel=1e-5)  # about 2 ppm more


def hidden_doc(tmp_path):
    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 4
    doc.layers.add("CUT")
    doc.layers.add("NOTES").off()
    doc.layers.add("OLD").freeze()
    msp = doc.modelspace()
    msp.add_line((0, 0), (10, 0), dxfattribs={"layer": "CUT"})
    msp.add_line((0, 0), (100, 0), dxfattribs={"layer": "NOTES"})
    msp.add_circle((0, 0), 1, dxfattribs={"layer": "OLD"})
    blk = doc.blocks.new("TAG")
    blk.add_line((0, 0), (5, 0))  # layer 0: takes the INSERT's layer
    msp.add_blockref("TAG", (0, 0), dxfattribs={"layer": "NOTES"})
    msp.add_blockref("TAG", (0, 10), dxfattribs={"layer": "CUT"})
    path = tmp_path / "hidden.dxf"
    doc.saveas(path)
    return path


def test_layers_off_or_frozen_are_left_out_and_named(tmp_path):
    # DXF reference, LAYER table: a negative colour number means the layer is off; flag 1, frozen
    result = measure_file(str(hidden_doc(tmp_path)))
    assert result.ok
    assert result.length_mm == pytest.approx(10 + 5, rel=1e-15)
    assert set(result.layers) == {"CUT"}
    note = next(w for w in result.warnings if "off or frozen" in w)
    assert "'NOTES'" in note and "'OLD'" in note
    assert f"{100 + 5 + 2 * math.pi:.3f} mm" in note  # circle 2πr left out, and the block copy on NOTES
    assert (result.closed, result.open) == (0, 2)


def test_hidden_layers_flag_measures_them(tmp_path):
    result = measure_file(str(hidden_doc(tmp_path)),
                          MeasureSettings(import_options=ImportOptions(hidden_layers=True)))
    assert result.length_mm == pytest.approx(10 + 100 + 2 * math.pi + 5 + 5, rel=1e-15)
    assert not any("off or frozen" in w for w in result.warnings)


def test_library_log_lines_become_warnings(tmp_path, capfd):
    # ezdxf reports some problems only through Python logging (here: tags outside a section); they belong to
    # the file's warnings, not as bare lines on standard error
    path = line_dxf(tmp_path / "logged.dxf")
    text = path.read_text()
    path.write_text(text.replace("  0\nENDSEC\n", "  0\nENDSEC\n  0\nSTRAY\n", 1))
    result = measure_file(str(path))
    assert result.ok and result.length_mm == 10.0
    assert any(w.startswith("DXF reader: ") and "outside a SECTION" in w for w in result.warnings)
    captured = capfd.readouterr()
    assert "outside a SECTION" not in captured.err


def test_a_frozen_insert_hides_its_whole_block_an_off_one_its_layer_0_content(tmp_path):
    # DXF reference and CAD practice: entities of a block on layer 0 take the INSERT's layer; freezing
    # the INSERT's layer hides the whole reference, switching it off hides only what is drawn on it
    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 4
    doc.layers.add("FROZEN").freeze()
    doc.layers.add("OFF").off()
    doc.layers.add("PARTS")
    block = doc.blocks.new("B")
    block.add_line((0, 0), (10, 0), dxfattribs={"layer": "0"})
    block.add_line((0, 0), (0, 7), dxfattribs={"layer": "PARTS"})
    msp = doc.modelspace()
    msp.add_blockref("B", (0, 0), dxfattribs={"layer": "FROZEN"})
    msp.add_blockref("B", (50, 0), dxfattribs={"layer": "OFF"})
    msp.add_blockref("B", (100, 0), dxfattribs={"layer": "PARTS"})
    path = tmp_path / "frozen.dxf"
    doc.saveas(path)
    result = measure_file(str(path))
    assert result.length_mm == pytest.approx(7 + 17)
    assert any("inside block references on frozen layers" in w and "17.000 mm" in w for w in result.warnings)
    everything = measure_file(str(path), MeasureSettings(import_options=ImportOptions(hidden_layers=True)))
    assert everything.length_mm == pytest.approx(3 * 17)


def _r12_binary_dxf(path, header_tags):
    """A binary DXF as the DXF reference describes it for files without $ACADVER (R12 and before): the
    22-byte sentinel "AutoCAD Binary DXF" CR LF SUB NUL, then tags of a one-byte group code and a value:
    strings NUL-terminated, reals 8-byte IEEE little-endian, 16-bit integers 2 bytes little-endian."""
    import struct

    def tag(code, value):
        if isinstance(value, str):
            return bytes([code]) + value.encode("ascii") + b"\x00"
        if isinstance(value, float):
            return bytes([code]) + struct.pack("<d", value)
        return bytes([code]) + struct.pack("<h", value)

    tags = [*header_tags, (0, "SECTION"), (2, "ENTITIES"), (0, "LINE"), (8, "0"), (10, 0.0), (20, 0.0), (30, 0.0),
            (11, 300.0), (21, 400.0), (31, 0.0), (0, "ENDSEC"), (0, "EOF")]
    path.write_bytes(b"AutoCAD Binary DXF\r\n\x1a\x00" + b"".join(tag(c, v) for c, v in tags))
    return path


@pytest.mark.parametrize(("header", "mm", "warned"), [
    ([], 500.0, True),  # no HEADER section: unitless, taken as mm with the warning (as for a text file)
    ([(0, "SECTION"), (2, "HEADER"), (9, "$INSUNITS"), (70, 4), (0, "ENDSEC")], 500.0, False),  # 4 = mm
    ([(0, "SECTION"), (2, "HEADER"), (9, "$INSUNITS"), (70, 1), (0, "ENDSEC")], 500.0 * 25.4, False),  # 1 = in
])
def test_binary_dxf_units_with_and_without_a_header(tmp_path, header, mm, warned):
    # a 300-400-500 line: a header-less binary file was read as metres (a new drawing's default header)
    result = measure_file(str(_r12_binary_dxf(tmp_path / "bin.dxf", header)))
    assert result.ok, result.error
    assert result.length_mm == pytest.approx(mm, rel=1e-15)
    assert any("no units" in w for w in result.warnings) == warned
