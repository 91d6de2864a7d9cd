"""The bulk DXF reader against ezdxf's document model: the same drawing from the same file.

Reference: ezdxf (a general-purpose DXF library) read through pathlen's ezdxf reader, which the rest
of the suite checks against closed forms.  Files come from three places: every DXF the rest of the
suite read (recorded by tests/conftest.py), random drawings written by ezdxf (hypothesis), and
damaged copies of those, where both paths must take the same decision.
"""

from __future__ import annotations

import math
from pathlib import Path

import ezdxf
import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from pathlen.errors import InputError
from pathlen.importers.dxf import read_bulk, read_dxf
from pathlen.importers.dxf_ezdxf import read_dxf as read_with_ezdxf
from tests.conftest import DXF_RECORD
from tests.dxf_compare import assert_same_drawing, compare_readers

FIXTURES = Path(__file__).parent.parent / "fixtures"

coord = st.floats(-500, 500, allow_nan=False, allow_infinity=False)
point = st.tuples(coord, coord)
extrusion = st.sampled_from([(0, 0, 1), (0, 0, -1), (0.3, -0.2, 0.9), (0.001, 0.002, 1.0), (1, 0, 0)])


@st.composite
def drawings(draw) -> tuple[str, int]:
    """A random R2010 or R12 drawing of every kind pathlen measures, with blocks, layers and paper space."""
    version = draw(st.sampled_from(["R2010", "R2000", "R12"]))
    doc = ezdxf.new(version)
    units = draw(st.sampled_from([0, 1, 4, 6]))
    if version != "R12":
        doc.header["$INSUNITS"] = units
    for name, off, frozen in (("CUT", False, False), ("ETCH", True, False), ("NOTES", False, True)):
        layer = doc.layers.add(name)
        if off:
            layer.off()
        if frozen:
            layer.freeze()
    block = doc.blocks.new(name=draw(st.sampled_from(["HOLE", "Slot 6", "tab"])), base_point=(*draw(point), 0))
    _add_entities(draw, block, version, depth=0)
    nested = doc.blocks.new(name="ASSEMBLY")
    nested.add_blockref(block.name, draw(point), dxfattribs={"layer": "0"})
    nested.add_line((0, 0), (10, 0), dxfattribs={"layer": "0"})
    msp = doc.modelspace()
    _add_entities(draw, msp, version, depth=1)
    for _ in range(draw(st.integers(0, 3))):
        ref = msp.add_blockref(draw(st.sampled_from([block.name, block.name.upper(), "ASSEMBLY"])), draw(point),
                               dxfattribs={"layer": draw(st.sampled_from(["0", "CUT", "ETCH"])),
                                           "rotation": draw(st.floats(-400, 400)),
                                           "xscale": draw(st.sampled_from([1, 2, -1, 0.5])),
                                           "yscale": draw(st.sampled_from([1, 3, -1])),
                                           "extrusion": draw(extrusion)})
        if version != "R12" and draw(st.booleans()):
            ref.dxf.row_count, ref.dxf.column_count = draw(st.integers(1, 3)), draw(st.integers(1, 3))
            ref.dxf.row_spacing, ref.dxf.column_spacing = draw(st.sampled_from([0, 7.5])), 12.0
    doc.layout("Layout1").add_line((0, 0), (99, 99))  # paper space: not measured
    return doc, version


def _add_entities(draw, space, version: str, depth: int) -> None:
    layer = st.sampled_from(["0", "CUT", "ETCH", "NOTES"])
    for kind in draw(st.lists(st.sampled_from(["line", "circle", "arc", "ellipse", "lw", "poly2d", "poly3d",
                                               "spline", "fit", "text", "point"]), min_size=1, max_size=9)):
        attribs = {"layer": draw(layer)}
        if kind == "line":
            space.add_line(draw(point), draw(point), dxfattribs=attribs)
        elif kind == "circle":
            space.add_circle(draw(point), draw(st.floats(0.01, 100)),
                             dxfattribs={**attribs, "extrusion": draw(extrusion)})
        elif kind == "arc":
            angles = st.floats(-720, 720)
            space.add_arc(draw(point), draw(st.floats(0.01, 100)), draw(angles), draw(angles),
                          dxfattribs={**attribs, "extrusion": draw(extrusion)})
        elif kind == "ellipse" and version != "R12":
            start = draw(st.floats(0, 2 * math.pi))
            end = draw(st.one_of(st.just(start + 2 * math.pi), st.floats(-7, 7)))
            space.add_ellipse(draw(point), major_axis=(draw(st.floats(1, 50)), draw(coord), 0),
                              ratio=draw(st.floats(0.05, 1)), start_param=start, end_param=end, dxfattribs=attribs)
        elif kind == "lw" and version != "R12":
            pts = draw(st.lists(st.tuples(coord, coord, st.sampled_from([0, 0, 0.5, -1, 2.5])), min_size=2, max_size=6))
            space.add_lwpolyline(pts, format="xyb", close=draw(st.booleans()),
                                 dxfattribs={**attribs, "elevation": draw(coord), "extrusion": draw(extrusion)})
        elif kind == "poly2d":
            pts = draw(st.lists(point, min_size=2, max_size=5))
            pl = space.add_polyline2d(pts, close=draw(st.booleans()),
                                      dxfattribs={**attribs, "extrusion": draw(extrusion)})
            for v in pl.vertices:
                v.dxf.bulge = draw(st.sampled_from([0, 0.3, -0.7]))
        elif kind == "poly3d":
            pts = draw(st.lists(st.tuples(coord, coord, coord), min_size=2, max_size=5))
            space.add_polyline3d(pts, close=draw(st.booleans()), dxfattribs=attribs)
        elif kind == "spline" and version != "R12":
            count = draw(st.integers(4, 9))
            pts = [(*draw(point), 0) for _ in range(count)]
            if draw(st.booleans()):
                space.add_rational_spline(pts, [draw(st.floats(0.2, 5)) for _ in pts], degree=3, dxfattribs=attribs)
            else:
                space.add_open_spline(pts, degree=draw(st.integers(1, 3)), dxfattribs=attribs)
        elif kind == "fit" and version != "R12":
            xs = draw(st.lists(st.integers(-50, 50), min_size=3, max_size=6, unique=True))
            # distinct fit points: a curve ezdxf can fit
            pts = [(10.0 * x, draw(st.integers(-50, 50)) * 7.0, 0) for x in sorted(xs)]
            spline = space.add_spline(pts, dxfattribs=attribs)
            if draw(st.booleans()):
                spline.dxf.start_tangent, spline.dxf.end_tangent = (1, 0, 0), (0, 1, 0)
        elif kind == "text":
            space.add_text("KL-330 <panel>", dxfattribs=attribs)
        elif kind == "point":
            space.add_point(draw(point), dxfattribs=attribs)


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(drawing=drawings(), hidden=st.booleans())
def test_random_drawings_read_the_same(tmp_path: Path, drawing, hidden: bool) -> None:
    doc, _version = drawing
    path = tmp_path / "random.dxf"
    doc.saveas(path)
    assert compare_readers(path, hidden_layers=hidden, require_bulk=True)


MUTATIONS = ["truncate", "swap", "code", "junk", "value", "drop", "twice"]


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(drawing=drawings(), cut=st.floats(0.05, 0.999), mutation=st.sampled_from(MUTATIONS),
       seed=st.integers(0, 10**6))
def test_damaged_files_take_the_same_decision(tmp_path: Path, drawing, cut: float, mutation: str, seed: int) -> None:
    """Whatever the bulk path decides (read, decline, refuse), the result is the ezdxf path's."""
    doc, _version = drawing
    path = tmp_path / "damaged.dxf"
    doc.saveas(path)
    lines = path.read_text().splitlines()
    k = int(cut * (len(lines) - 2))
    if mutation == "truncate":
        lines = lines[:k]
    elif mutation == "swap":
        lines[k], lines[k + 1] = lines[k + 1], lines[k]
    elif mutation == "code":
        lines[k - k % 2] = str(seed % 1100)
    else:
        lines.insert(k, "§junk")
    path.write_text("\n".join(lines) + "\n")
    auto, reference = _outcome(read_dxf, path), _outcome(read_with_ezdxf, path)
    if isinstance(reference, str) or isinstance(auto, str):
        assert auto == reference
    else:
        assert_same_drawing(auto, reference, mutation)


def _outcome(reader, path: Path):
    try:
        return reader(path)
    except InputError as exc:
        return str(exc)


def test_shipped_drawings_are_read_by_the_bulk_reader() -> None:
    """Every demo DXF goes the fast way and gives ezdxf's drawing."""
    shipped = sorted(FIXTURES.rglob("*.dxf"))
    assert shipped
    for path in shipped:
        assert compare_readers(path, require_bulk=True)


def test_binary_and_unknown_kinds_go_to_ezdxf(tmp_path: Path) -> None:
    doc = ezdxf.new("R2010", units=4)
    doc.modelspace().add_line((0, 0), (3, 4))
    binary = tmp_path / "binary.dxf"
    doc.saveas(binary, fmt="bin")
    assert read_bulk(binary) is None
    assert math.isclose(read_dxf(binary).lines.p1[0][1], 4.0)
    doc.modelspace().add_mline([(0, 0), (10, 0)])
    text = tmp_path / "mline.dxf"
    doc.saveas(text)
    assert read_bulk(text) is None  # MLINE: not a kind the bulk reader knows, read by ezdxf's reader
    assert read_dxf(text).skipped["MLINE"] == 0


def test_every_dxf_the_suite_read() -> None:
    """Runs last (tests/conftest.py): every DXF file any other test read, through both readers."""
    recorded = sorted(DXF_RECORD.glob("*.dxf"))
    if len(recorded) < 20:
        pytest.skip("run with the whole suite: only the other tests' files are checked here")
    taken = sum(compare_readers(path) for path in recorded)
    assert taken > 0, "the bulk reader took none of the files"  # many recorded files are damaged on purpose


def test_environment_can_rule_the_bulk_reader_out(monkeypatch) -> None:
    """README: PATHLEN_DXF_READER=ezdxf reads every file through ezdxf."""
    import pathlen.importers.dxf as dxf_module

    def refuse(*_args, **_kwargs):
        raise AssertionError("the bulk reader was used")

    monkeypatch.setattr(dxf_module, "read_bulk", refuse)
    monkeypatch.setenv("PATHLEN_DXF_READER", "ezdxf")
    drawing = read_dxf(FIXTURES / "kl101_bracket.dxf")
    assert len(drawing.entities) > 0
    monkeypatch.delenv("PATHLEN_DXF_READER")
    with pytest.raises(AssertionError, match="bulk reader was used"):
        read_dxf(FIXTURES / "kl101_bracket.dxf")


REST_KINDS = ["DICTIONARY", "LAYOUT", "MATERIAL", "MLINESTYLE", "DICTIONARYVAR", "XRECORD", "VISUALSTYLE",
              "ACDBPLACEHOLDER", "TABLESTYLE", "FOOBAR", "LINE", "BLOCK_RECORD", "STYLE", "CLASS"]


@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(drawing=drawings(), edits=st.lists(st.tuples(st.sampled_from(["kind", "handle", "delete", "twice", "value"]),
                                                      st.integers(0, 10**6)), min_size=1, max_size=3))
def test_the_rest_check_never_vouches_for_what_ezdxf_objects_to(tmp_path: Path, drawing, edits) -> None:
    """The bulk reader's structural check of header, tables, blocks and objects (pathlen.importers.dxf_rest)
    spares ezdxf's loading only for files ezdxf loads silently: damage aimed at the links ezdxf follows
    (object kinds, handles, dictionary entries) is either caught or left to ezdxf."""
    from pathlen.importers.dxf_bulk import read_plain
    from pathlen.importers.dxf_ezdxf import loads_silently
    from pathlen.importers.dxf_tags import NotPlain

    doc, _version = drawing
    path = tmp_path / "linked.dxf"
    doc.saveas(path)
    lines = path.read_text().splitlines()
    tags = [[lines[i].strip(), lines[i + 1]] for i in range(0, len(lines) - 1, 2)]
    handles = [v for c, v in tags if c == "5"]
    for edit, seed in edits:
        # aimed at the OBJECTS section (R12 files have none: the whole file then) and at the link codes
        objects = next((i for i, (c, v) in enumerate(tags) if (c, v) == ("2", "OBJECTS")), 0)
        k = objects + seed % (len(tags) - objects)
        if edit == "kind":
            at = [i for i, (c, _) in enumerate(tags) if c == "0" and i > objects] or [0]
            tags[at[seed % len(at)]][1] = REST_KINDS[seed % len(REST_KINDS)]
        elif edit == "handle":
            at = [i for i, (c, _) in enumerate(tags) if c in ("5", "330", "340", "350", "360")]
            tags[at[seed % len(at)]][1] = [*handles, "FFFF", "0"][seed % (len(handles) + 2)]
        elif edit == "delete":
            del tags[k]
        elif edit == "twice":
            tags.insert(k, list(tags[k]))
        else:
            tags[k][1] = ["0", "1", "-1", "abc", ""][seed % 5]
    data = "".join(f"{c}\n{v}\n" for c, v in tags).encode()
    try:
        plain = read_plain(data, keep_rest=True)
    except (NotPlain, IndexError, ValueError, TypeError, KeyError, ZeroDivisionError, OverflowError):
        return  # declined: ezdxf reads it
    if plain.rest_checked:
        assert loads_silently(plain.rest)


def test_a_file_the_bulk_reader_takes_whole_never_imports_ezdxf(tmp_path: Path) -> None:
    """README: a plain file is read without loading ezdxf at all (start-up time of small files)."""
    import subprocess
    import sys

    doc = ezdxf.new("R2010", units=4)
    for k in range(40):
        doc.modelspace().add_line((k, 0), (k, 10))
    path = tmp_path / "tiny.dxf"
    doc.saveas(path)
    probe = ("import sys; from pathlen.batch import measure_file; r = measure_file(sys.argv[1]); "
             "print(r.ok, r.length_mm, 'ezdxf' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", probe, str(path)], capture_output=True, text=True, timeout=120)
    assert out.stdout.split() == ["True", "400.0", "False"], out.stderr


@pytest.mark.parametrize(("values", "plain"), [
    ("10\n1.0\n20\n2.0\n30\n3.0", True),  # a point with z (DXF reference: header 3-D point, codes 10 20 30)
    ("10\n1.0\n20\n2.0", True),  # a 2-D point
    ("70\n1", True),  # one value
    ("70\n1\n71\n2", False),  # two values that are no point
    ("10\n1.0\n30\n3.0", False),  # x then z: no y
    ("10\n1.0\n20\n2.0\n40\n3.0", False),  # x, y, then a third that is not z
    ("11\n1.0\n21\n2.0\n31\n3.0", True),  # another point code
])
def test_header_variables_take_one_value_or_one_point(values, plain):
    # the bulk reader takes a header it reads as ezdxf does: "9 $NAME" then one value or a point's
    # x, y (and z); anything else is left to ezdxf
    from pathlen.importers.dxf_layout import _check_header
    from pathlen.importers.dxf_tags import NotPlain, parse_tags

    def check() -> None:
        tags = parse_tags(f"9\n$INSBASE\n{values}\n9\n$ANGBASE\n50\n0.0\n0\nEOF\n".encode())
        _check_header(tags, 0, len(tags))  # the table ends before EOF

    if plain:
        check()
    else:
        with pytest.raises(NotPlain):  # x then z fails sooner, as any point without its y
            check()


def test_texts_cut_out_one_by_one_equal_those_gathered_at_once():
    # a few values are cut out one by one, many in one gather: the same texts either way (trailing zero
    # bytes dropped), and text that is not ASCII refused either way
    from pathlen.importers.dxf_tags import FEW_TEXTS, NotPlain, parse_tags

    names = [f"L{k}" + "x" * (k % 7) + ("\0" if k % 5 == 0 else "") for k in range(3 * FEW_TEXTS)]
    text = "".join(f"8\n{name}\n" for name in names) + "0\nEOF\n"
    tags = parse_tags(text.encode())
    index = np.arange(len(names))
    expected = [n.rstrip("\0") for n in names]
    assert tags.texts(index) == expected
    assert tags.texts(index[:FEW_TEXTS]) == expected[:FEW_TEXTS]
    assert tags.raw_texts(index[:FEW_TEXTS]).tolist() == tags.raw_texts(index)[:FEW_TEXTS].tolist()
    bad = parse_tags("8\nL\xe9\n0\nEOF\n".encode("latin-1"))
    for index in (np.array([0]), np.zeros(FEW_TEXTS + 1, dtype=np.int64)):
        with pytest.raises(NotPlain):
            bad.texts(index)


@settings(max_examples=300, deadline=None)
@given(st.lists(st.binary(max_size=8).map(lambda b: bytes(b" 0123456789+-_a\t"[x % 16] for x in b)), max_size=40))
def test_group_code_lines_read_as_spaces_then_digits(lines):
    # DXF reference (Group codes): a group code line holds an integer; read here as optional leading
    # spaces, then digits, at most CODE_WIDTH characters; anything else (a sign, an underscore, a tab,
    # a letter, spaces after the digits, an empty line) is no code (-1).  Reference: Python's own
    # int() on the lines that rule admits.
    from pathlen.importers.dxf_tags import CODE_WIDTH, MAX_GROUP_CODE, PADDING, NotPlain, _group_codes

    data = bytearray(b"\n".join(lines) + b"\n" + bytes(PADDING))
    starts = np.cumsum([0] + [len(line) + 1 for line in lines[:-1]]).astype(np.int64)
    ends = starts + np.array([len(line) for line in lines], dtype=np.int64)
    expected = [int(t) if 0 < len(t) <= CODE_WIDTH and t.lstrip(b" ").isdigit() else -1 for t in lines]
    if max(expected, default=-1) > MAX_GROUP_CODE:  # beyond the codes the reference lists: refused
        with pytest.raises(NotPlain):
            _group_codes(data, starts[: len(lines)], ends)
    else:
        assert _group_codes(data, starts[: len(lines)], ends).tolist() == expected


def test_texts_from_the_whole_file_equal_those_decoded_one_by_one():
    # a small ASCII file keeps its text whole and cuts values from it; the same texts as decoding each
    # value (trailing zero bytes dropped by texts, kept by text, as before)
    from pathlen.importers.dxf_tags import parse_tags

    text = "".join(f"8\nL{k}{chr(0) if k % 3 == 0 else ''}\n" for k in range(40)) + "0\nEOF\n"
    whole = parse_tags(text.encode())
    assert whole.ascii_text is not None
    each = parse_tags(text.encode())
    each.ascii_text = None
    index = np.arange(40)
    assert whole.texts(index) == each.texts(index) == [f"L{k}" for k in range(40)]
    assert [whole.text(i) for i in range(40)] == [each.text(i) for i in range(40)]
    assert parse_tags("8\nL\xe9\n0\nEOF\n".encode("latin-1")).ascii_text is None  # not ASCII: decoded per value


def test_a_header_variable_is_a_group_9_tag_with_exactly_that_name():
    # DXF reference (HEADER section): a variable is named by group code 9; the same bytes as another
    # tag's value, or as part of a longer name, are not that variable
    from pathlen.importers.dxf_layout import header_variable
    from pathlen.importers.dxf_tags import parse_tags

    tags = parse_tags(b"9\n$INSUNITSX\n70\n1\n1\n$INSUNITS\n9\n$INSUNITS\n70\n4\n0\nEOF\n")
    assert header_variable(tags, 0, len(tags), b"$INSUNITS") == [3]  # not tag 0 (longer) nor 2 (group 1)
    assert header_variable(tags, 0, 3, b"$INSUNITS") == []  # outside the range asked for
    assert header_variable(tags, 3, 3, b"$INSUNITS") == []


@pytest.mark.parametrize("entry, plain", [
    ("0\nLAYER\n5\n10\n100\nAcDbSymbolTableRecord\n100\nAcDbLayerTableRecord\n2\nCUT\n70\n0\n", True),
    ("0\nLAYER\n5\n10\n2\nCUT\n70\n0\n", True),  # R12 form: no markers
    ("0\nLAYER\n5\n10\n100\nAcDbSymbolTableRecord\n100\nAcDbLayerTableRecord\n70\n0\n", False),  # no name
    ("0\nLAYER\n5\n10\n100\nAcDbSymbolTableRecord\n2\nCUT\n70\n0\n", False),  # one marker
    ("0\nLAYER\n5\n10\n100\nAcDbSymbolTableRecord\n2\nCUT\n100\nAcDbLayerTableRecord\n70\n0\n", False),  # name first
])
def test_table_entries_need_a_name_after_their_two_subclass_markers(entry, plain):
    # DXF reference (TABLES section, common symbol table group codes): an entry's name (group 2) belongs to
    # the table's own subclass, after AcDbSymbolTableRecord; R12 entries carry no markers.  Anything
    # else is left to ezdxf, whichever entry of the table it is (here the second of two).
    from pathlen.importers.dxf_layout import layout
    from pathlen.importers.dxf_tags import NotPlain, parse_tags

    good = "0\nLAYER\n5\nF\n100\nAcDbSymbolTableRecord\n100\nAcDbLayerTableRecord\n2\n0\n70\n0\n"
    text = ("0\nSECTION\n2\nHEADER\n9\n$ACADVER\n1\nAC1024\n0\nENDSEC\n0\nSECTION\n2\nTABLES\n0\nTABLE\n2\nLAYER\n"
            f"{good}{entry}0\nENDTAB\n0\nENDSEC\n0\nEOF\n")
    tags = parse_tags(text.encode())
    if plain:
        assert len(layout(tags).layer_entries) == 2
    else:
        with pytest.raises(NotPlain, match="LAYER table entry"):
            layout(tags)


def test_reading_a_dxf_leaves_no_reference_cycles(tmp_path: Path) -> None:
    # README (Big drawings and big batches): a small file's reading makes no reference cycles, so its
    # arrays go as soon as it is read and measured, not at the next garbage collection.  Python's
    # collector reports the unreachable objects it finds (gc.collect's return value).
    import gc

    doc = ezdxf.new("R2010")
    block = doc.blocks.new("KL_WASHER")
    block.add_circle((0, 0), 4)
    msp = doc.modelspace()
    msp.add_line((0, 0), (30, 0))
    msp.add_blockref("KL_WASHER", (10, 10))
    path = tmp_path / "kl_plate.dxf"
    doc.saveas(path)
    assert read_bulk(path) is not None  # the bulk reader takes it
    read_dxf(path)
    gc.collect()
    gc.disable()
    try:
        drawing = read_dxf(path)
        del drawing
        assert gc.collect() == 0
    finally:
        gc.enable()
