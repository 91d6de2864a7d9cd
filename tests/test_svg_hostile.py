"""Hostile and broken SVG files: each fails alone with one line, nothing leaks, the batch goes on."""

import json

import pytest

from pathlen.batch import measure_file
from pathlen.cli import main
from pathlen.importers import svg as svg_module

GOOD = '<svg xmlns="http://www.w3.org/2000/svg" width="10mm" height="10mm" viewBox="0 0 10 10"><line x2="10"/></svg>'


def check_fails(path, *words):
    result = measure_file(str(path))
    assert result.ok is False
    assert "\n" not in result.error and "Traceback" not in result.error
    for w in words:
        assert w in result.error
    return result


def test_billion_laughs_is_refused(tmp_path):
    # The classic entity-expansion bomb (10 levels of 10 references: 10^9 "lol"s if expanded).
    levels = ['<!ENTITY lol "lol">'] + [
        f'<!ENTITY lol{i} "{("&lol" + (str(i - 1) if i > 1 else "") + ";") * 10}">' for i in range(1, 10)]
    bomb = tmp_path / "bomb.svg"
    bomb.write_text(f'<?xml version="1.0"?><!DOCTYPE svg [{"".join(levels)}]>'
                    '<svg xmlns="http://www.w3.org/2000/svg"><text>&lol9;</text></svg>')
    check_fails(bomb, "unsafe XML", "lol6", "expands to more than")


INTERNAL_SUBSET = ('<!ENTITY ns_extend "http://example.org/Extensibility/1.0/">'
                   '<!ENTITY ns_vars "http://example.org/Variables/1.0/"><!ENTITY st "fill:none;stroke:#000;">')


@pytest.mark.parametrize("encoding", ["utf-8", "utf-16"])
def test_internal_entities_in_namespace_attributes_are_honoured(tmp_path, encoding):
    # XML 1.0 (4.4.2): a referenced internal entity is "included": its replacement text stands where the
    # reference was.  Older exports of drawing programs declare namespace URIs so; a 30-40-50 line is 50 mm.
    path = tmp_path / "entities.svg"
    path.write_bytes((f'<?xml version="1.0" encoding="{encoding}"?>'
                      '<!DOCTYPE svg PUBLIC "-//W3C//DTD SVG 1.1//EN" '
                      f'"http://www.w3.org/Graphics/SVG/1.1/DTD/svg11.dtd" [{INTERNAL_SUBSET}]>'
                      '<svg xmlns="http://www.w3.org/2000/svg" xmlns:x="&ns_extend;" xmlns:v="&ns_vars;" '
                      'width="100mm" height="100mm" viewBox="0 0 100 100">'
                      '<line x1="0" y1="0" x2="30" y2="40" style="&st;"/></svg>').encode(encoding))
    result = measure_file(str(path))
    assert result.ok, result.error
    assert result.length_mm == pytest.approx(50.0, rel=1e-12)


@pytest.mark.parametrize("encoding", ["utf-8", "utf-16"])
def test_wide_entity_expansion_is_refused(tmp_path, encoding):
    # no nesting, but 40,000 references to a 1,000-character entity: 40 million characters if expanded
    path = tmp_path / "wide.svg"
    path.write_bytes((f'<?xml version="1.0" encoding="{encoding}"?><!DOCTYPE svg [<!ENTITY w "{"w" * 1000}">]>'
                      '<svg xmlns="http://www.w3.org/2000/svg"><text>' + "&w;" * 40_000 + '</text></svg>'
                      ).encode(encoding))
    check_fails(path, "unsafe XML", "expand")


@pytest.mark.parametrize("subset, words", [
    ('<!ENTITY % p "x">', "parameter entities"),  # XML 1.0 (4.1): parameter entities shape the DTD itself
    ('<!ENTITY a "&b;"><!ENTITY b "x">', "before it is declared"),
    ('<!ENTITY pub PUBLIC "-//X//Y//EN" "http://example.org/y.txt">', "external resource"),
])
def test_entities_that_could_not_be_bounded_are_refused(tmp_path, subset, words):
    path = tmp_path / "odd.svg"
    path.write_text(f'<?xml version="1.0"?><!DOCTYPE svg [{subset}]><svg xmlns="http://www.w3.org/2000/svg">'
                    '<line x2="5"/></svg>')
    check_fails(path, "unsafe XML", words)


def test_external_entity_is_refused_and_never_read(tmp_path, runner):
    secret = tmp_path / "secret.txt"
    secret.write_text("TOP-SECRET-PASSPHRASE")
    xxe = tmp_path / "xxe.svg"
    xxe.write_text(f'<?xml version="1.0"?><!DOCTYPE svg [<!ENTITY leak SYSTEM "file://{secret}">]>'
                   '<svg xmlns="http://www.w3.org/2000/svg" id="&leak;"><g id="&leak;"><line x2="5"/></g></svg>')
    good = tmp_path / "good.svg"
    good.write_text(GOOD)
    for fmt in ("json", "csv", "table"):
        res = runner.invoke(main, ["measure", str(xxe), str(good), "--format", fmt])
        assert res.exit_code == 1
        assert "TOP-SECRET" not in res.output
    res = runner.invoke(main, ["measure", str(xxe), str(good), "--format", "json"])
    files = json.loads(res.stdout)["files"]
    assert files[0]["ok"] is False and "unsafe XML" in files[0]["error"]
    assert files[1]["ok"] is True and files[1]["length"] == pytest.approx(10.0)


@pytest.mark.parametrize("text", ["<svg xmlns='http://www.w3.org/2000/svg'><g></svg>", "<svg", "\x00\x01binary",
                                  "just words"])
def test_malformed_xml(tmp_path, text):
    path = tmp_path / "bad.svg"
    path.write_text(text)
    check_fails(path, "XML")


def test_not_svg_and_empty(tmp_path):
    html = tmp_path / "page.svg"
    html.write_text("<html><body/></html>")
    check_fails(html, "not an SVG file", "<html>")
    empty = tmp_path / "empty.svg"
    empty.write_text("")
    check_fails(empty, "empty file")
    check_fails(tmp_path / "missing.svg", "no such file")


def test_deep_nesting_is_refused(tmp_path):
    deep = tmp_path / "deep.svg"
    deep.write_text('<svg xmlns="http://www.w3.org/2000/svg">' + "<g>" * 10_000 + '<line x2="1"/>' + "</g>" * 10_000
                    + "</svg>")
    check_fails(deep, "nested more than")


def test_deep_but_allowed_nesting_is_measured(tmp_path):
    depth = svg_module.MAX_DEPTH - 3
    ok = tmp_path / "ok.svg"
    ok.write_text('<svg xmlns="http://www.w3.org/2000/svg" width="10mm" height="10mm" viewBox="0 0 10 10">'
                  + "<g>" * depth + '<line x2="3"/>' + "</g>" * depth + "</svg>")
    assert measure_file(str(ok)).length_mm == pytest.approx(3.0)


def test_huge_file_is_refused_before_reading(tmp_path):
    # A sparse 200 MB file: refused on its size, so nothing is read into memory.
    big = tmp_path / "big.svg"
    with big.open("wb") as f:
        f.truncate(200 * 1024 * 1024)
    check_fails(big, "refused", "MB")


def test_use_bomb_is_measured_exactly_as_instances(tmp_path):
    # <use> of <use>: every level multiplies the copies (10 levels of 10 -> 10^10 copies of a 1 mm line).
    # Each copy is a translation, and arc length is invariant under translation: the total is exactly
    # 10^10 mm, found by measuring the line once, without writing out a copy.
    levels = ['<g id="u0"><line x2="1"/></g>'] + [
        f'<g id="u{i}">' + "".join(f'<use href="#u{i - 1}" x="{k}"/>' for k in range(10)) + "</g>"
        for i in range(1, 11)]
    bomb = tmp_path / "usebomb.svg"
    bomb.write_text('<svg xmlns="http://www.w3.org/2000/svg" width="10mm" height="10mm" viewBox="0 0 10 10">'
                    f'<defs>{"".join(levels)}</defs><use href="#u10"/></svg>')
    result = measure_file(str(bomb))
    assert result.ok
    assert abs(result.length_mm - 1e10) <= max(result.bound_mm, 4e-16 * 1e10)  # mm per px rounds in the last bit
    assert result.layers["u10"].count == 10**10
    assert not result.contours_counted
    # every level's ten copies touch end to end, so they must be written out to count contours: at the
    # 8th level that is 10^8 segments, past the 10^7 limit
    assert any("copies that may touch one another written out: 100,000,000 segments, over the limit" in w
               for w in result.warnings)


def test_pathological_path_data_is_linear(tmp_path):
    # A long run of digits then junk would make a backtracking number pattern explode; here it must not.
    path = tmp_path / "redos.svg"
    path.write_text('<svg xmlns="http://www.w3.org/2000/svg" width="1mm" height="1mm"><path d="M0 0 L'
                    + "1" * 20_000 + ' x"/><line x2="1"/></svg>')
    result = measure_file(str(path))
    assert result.ok and any("path" in w for w in result.warnings)


@pytest.mark.parametrize(("attrs", "words"), [
    ('width="10mm" height="10mm" viewBox="0 0 0 10"', ("viewBox",)),
    ('width="0mm" height="10mm"', ("zero or negative",)),
    ('width="10furlongs" height="10mm"', ("unit",)),
])
def test_bad_root_sizes(tmp_path, attrs, words):
    path = tmp_path / "size.svg"
    path.write_text(f'<svg xmlns="http://www.w3.org/2000/svg" {attrs}><line x2="1"/></svg>')
    check_fails(path, *words)


def test_absurd_coordinates_spoil_their_element_only(tmp_path):
    path = tmp_path / "far.svg"
    path.write_text('<svg xmlns="http://www.w3.org/2000/svg" width="1mm" height="1mm" viewBox="0 0 1 1">'
                    '<line id="far" x2="1e300"/><line x2="3"/></svg>')
    result = measure_file(str(path))
    assert result.ok and result.length_mm == pytest.approx(3.0, rel=1e-15)
    assert any(w.startswith("line #far on layer '' has non-finite or absurdly large") for w in result.warnings)


def test_unknown_declared_encoding(tmp_path):
    # Found by fuzzing: an XML declaration naming an encoding Python does not know.
    path = tmp_path / "enc.svg"
    path.write_text('<?xml version="1.0" encoding="UF-8"?><svg xmlns="http://www.w3.org/2000/svg"/>')
    check_fails(path, "XML", "UF-8")
