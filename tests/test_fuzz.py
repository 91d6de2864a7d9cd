"""Bounded fuzzing of both importers: mutated drawings never escape as exceptions or internal messages.

Each example writes a mutated file and measures it in-process; whatever happens, the result is a
FileResult whose error (if any) is one plain line, never an internal exception's name.
"""

import math
import re

import ezdxf
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from pathlen.batch import MeasureSettings, measure_file

FUZZ = settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
#: small budgets so that no mutation can make one example slow
BOUNDED = MeasureSettings(max_segments=200_000)


def check(result):
    assert result.ok in (True, False)
    if not result.ok:
        assert result.error and "\n" not in result.error
        assert not result.error.startswith("unexpected"), result.error
    assert math.isfinite(result.length_mm) and math.isfinite(result.bound_mm)
    assert result.length_mm >= 0 and result.bound_mm >= 0


def base_dxf_pairs(tmp_path_factory):
    doc = ezdxf.new("R2013")
    doc.header["$INSUNITS"] = 4
    msp = doc.modelspace()
    msp.add_line((0, 0), (10, 0), dxfattribs={"layer": "CUT"})
    msp.add_circle((5, 5), 2)
    msp.add_arc((0, 0), 3, 10, 200)
    msp.add_ellipse((0, 0), (4, 0), 0.5, 0, 3)
    msp.add_lwpolyline([(0, 0, 0, 0, 0.5), (10, 0, 0, 0, 0), (10, 10, 0, 0, 0)], format="xyseb", close=True)
    msp.add_rational_spline([(0, 0), (1, 2), (3, 2), (4, 0)], [1, 0.5, 2, 1], degree=2)
    blk = doc.blocks.new("PART")
    blk.add_circle((0, 0), 1)
    msp.add_blockref("PART", (20, 20), dxfattribs={"xscale": 2, "row_count": 2, "column_count": 3,
                                                   "row_spacing": 5, "column_spacing": 5})
    path = tmp_path_factory.mktemp("fuzz") / "base.dxf"
    doc.saveas(path)
    lines = path.read_text().splitlines()
    return [(lines[i], lines[i + 1]) for i in range(0, len(lines) - 1, 2)]


@pytest.fixture(scope="module")
def dxf_pairs(tmp_path_factory):
    return base_dxf_pairs(tmp_path_factory)


VALUES = st.sampled_from(["", "nan", "inf", "-1e400", "1e308", "-0", "0", "1", "99999999999", "x", "\u0660",
                          "ENTITIES", "EOF", "SECTION", "ENDSEC", "INSERT", "PART", "SPLINE", "-5", "36"])


@FUZZ
@given(data=st.data())
def test_mutated_dxf_tag_streams(dxf_pairs, tmp_path, data):
    pairs = list(dxf_pairs)
    for _ in range(data.draw(st.integers(1, 6))):
        i = data.draw(st.integers(0, len(pairs) - 1))
        action = data.draw(st.sampled_from(["drop", "copy", "value", "code", "cut"]))
        if action == "drop":
            del pairs[i]
        elif action == "copy":
            pairs.insert(data.draw(st.integers(0, len(pairs))), pairs[i])
        elif action == "value":
            pairs[i] = (pairs[i][0], data.draw(VALUES))
        elif action == "code":
            pairs[i] = (data.draw(st.sampled_from(["0", "2", "8", "10", "40", "70", "71", "999", "1x", "-3"])),
                        pairs[i][1])
        else:
            pairs = pairs[:i]
        if len(pairs) < 2:
            break
    path = tmp_path / "mutant.dxf"
    path.write_text("\n".join(f"{c}\n{v}" for c, v in pairs) + "\n")
    check(measure_file(str(path), BOUNDED))


SVG_BASE = ('<svg xmlns="http://www.w3.org/2000/svg" xmlns:xlink="http://www.w3.org/1999/xlink" width="100mm" '
            'height="80mm" viewBox="0 0 100 80"><style>.c{stroke:red}</style><defs><g id="p"><circle r="2"/>'
            '</g></defs><g id="CUT" transform="translate(5 5) rotate(10)"><path class="c" d="M0 0 L10 0 '
            'C 20 0 20 10 10 10 Q 5 15 0 10 A 5 3 20 1 0 0 0 Z"/><rect x="20" y="20" width="10" height="5" '
            'rx="1"/><use href="#p" x="40" y="40"/><polygon points="0,0 5,0 5,5"/><ellipse cx="50" cy="50" '
            'rx="5" ry="2"/></g><line x1="0" y1="70" x2="90" y2="70" stroke="#00f"/></svg>')
SNIPPETS = ["1e400", "NaN", "-", "<", ">", "&", "&amp;", '"', "#p", "<use href='#CUT'/>", "<use href='#p'/>",
            "<g id='p'>", "</g>", "scale(0)", "matrix(1 2 3)", "display:none", "%", "em", "\u0661", "_", "Z",
            "A", "a1 1 0 011 1", "<!--", "-->", "<![CDATA[", "]]>", "xmlns='x'", "<svg>", "</svg>", " ",
            "<marker id='m' orient='auto' viewBox='0 0 1 1'><path d='M0 0 L1 1'/></marker>",
            " marker-end='url(#m)' marker-mid='url(#m)'", " style='marker:url(#CUT)'", "<switch>", "</switch>",
            " systemLanguage='en,de'", " requiredExtensions=''", " style='font-size:1e400px'", " x='2em' r='5vw'",
            " style='transform:rotate(1e400deg) scale(0)'", " style='transform-origin:left 1e400px'"]


@FUZZ
@given(data=st.data())
def test_mutated_svg_documents(tmp_path, data):
    path = tmp_path / "mutant.svg"
    path.write_text(mutated_svg(data, SVG_BASE, SNIPPETS), encoding="utf-8")
    check(measure_file(str(path), BOUNDED))


def mutated_svg(data, text: str, snippets: list[str]) -> str:
    """``text`` after 1-5 drawn mutations: a snippet inserted, a few characters deleted, a number replaced."""
    for _ in range(data.draw(st.integers(1, 5))):
        i = data.draw(st.integers(0, len(text)))
        action = data.draw(st.sampled_from(["insert", "delete", "replace-number"]))
        if action == "insert":
            text = text[:i] + data.draw(st.sampled_from(snippets)) + text[i:]
        elif action == "delete":
            text = text[:i] + text[i + data.draw(st.integers(1, 12)):]
        else:
            numbers = list(re.finditer(r"[0-9.]+", text))
            if numbers:
                m = numbers[data.draw(st.integers(0, len(numbers) - 1))]
                text = text[:m.start()] + data.draw(st.sampled_from(["1e400", "0", "-1", "1e-300", "1e12", "inf"])) \
                    + text[m.end():]
    return text


SVG_PATHS_ONLY = ('<svg xmlns="http://www.w3.org/2000/svg" width="100mm" height="80mm" viewBox="0 0 100 80">'
                  '<g id="CUT" transform="translate(5 5) rotate(10)"><path d="M0 0 L10 0 C 20 0 20 10 10 10 Q 5 15 '
                  '0 10 A 5 3 20 1 0 0 0 Z M 30 0 h 5 v 5"/><path d="M10 10 l 5 5 a 3 3 0 0 1 6 0"/>'
                  '<rect x="20" y="20" width="10" height="5" rx="1"/><path d="M21 25 L 40 40"/></g>'
                  '<g id="ENGRAVE"><path d="M0 70 L 90 70 M 0 0 Q 1 1 2 0 T 4 0"/><circle cx="50" cy="50" r="3"/>'
                  '<path d="M50 53 L 60 60 L 50.004 53"/></g></svg>')


@FUZZ
@given(data=st.data())
def test_mutated_svg_measured_in_runs_as_read_whole(tmp_path, data, monkeypatch):
    # Differential: a document without placements, mutated, measured run by run (a few paths a run) gives
    # what it gives read whole: the same result to the last bit, or the same one-line refusal.
    import pathlen.importers.svg as svg
    from pathlen.errors import InputError
    from pathlen.file_measure import measure_one

    path = tmp_path / "mutant.svg"
    path.write_text(mutated_svg(data, SVG_PATHS_ONLY, SNIPPETS[:24]), encoding="utf-8")
    monkeypatch.setattr(svg, "RUN_CHARS", data.draw(st.sampled_from([1, 20, 60])))
    outcomes = []
    for in_runs in (False, True):
        try:
            outcomes.append(measure_one(str(path), BOUNDED, in_runs=in_runs))
        except InputError as exc:
            outcomes.append(str(exc))
    assert outcomes[0] == outcomes[1]
