"""Per-layer and per-colour totals of a file's entities (pathlen.file_measure.totals_by)."""

import random

import numpy as np

from pathlen.batch import LayerTotal
from pathlen.file_measure import totals_by


def _reference(keys, length, bound, copies):
    """The sums written out one entity at a time, in the entities' order, keys sorted."""
    out: dict[str, list] = {}
    for k, a, b, c in zip(keys, length.tolist(), bound.tolist(), copies, strict=True):
        row = out.setdefault(k, [0.0, 0.0, 0])
        row[0] += a
        row[1] += b
        row[2] += c
    return {k: LayerTotal(*out[k]) for k in sorted(out)}


def test_totals_by_key_equal_a_plain_loop_and_come_sorted():
    rng = random.Random(7)
    names = ["0", "CUT", "ENGRAVE", "Layer 10", "Layer 9", "ÄUSSERE", "", "#ff0000", "a b"]
    for n in (0, 1, 40, 5000):
        keys = [rng.choice(names) for _ in range(n)]
        length = np.array([rng.uniform(0.0, 1e4) for _ in range(n)])
        bound = length * 1e-12
        copies = [rng.choice([1, 1, 1, 4, 0]) for _ in range(n)]
        got = totals_by(keys, length, bound, copies)
        assert got == _reference(keys, length, bound, copies)
        assert list(got) == sorted(got)


# --- a drawing measured run by run gives what the drawing read whole gives --------------------------------

_PARTS = [
    '<path d="M0 0 L10 0 L10 10 Z M20 0 h5 v5 z M40 0 l3 3"/>',  # closed and open subpaths
    '<path d="M10 10 C 12 14 16 14 18 10 S 24 6 26 10"/>',  # continues a contour drawn before
    '<path d="M26 10 Q 28 14 30 10 T 34 10 A 5 3 30 0 1 44 12"/>',
    '<path d="M44 12.004 L 50 12"/>',  # a loose end within the join tolerance of the one before
    '<path d=""/>',  # an empty path: no entity
    '<path d="M0 0 L 1e300 0"/>',  # absurd coordinates: left out with a warning
    '<path d="M0 0 L 5 5 L"/>',  # a bad path: drawn up to the error, one warning per text
    '<rect x="60" y="0" width="10" height="5" rx="1"/><circle cx="80" cy="5" r="3"/>',
    '<polyline points="0 20 5 25 10 20"/><polygon points="20 20 25 25 30 20"/><line x1="0" y1="30" x2="9" y2="30"/>',
    '<ellipse cx="50" cy="30" rx="6" ry="2"/><text x="0" y="0">not measured</text>',
    '<path d="M0 0 A 10 10 0 1 1 0.0001 0"/>',  # nearly whole circle
    '<path d="M1 1 L 2 2" style="display:none"/>',
]


def _document(copies: int) -> str:
    body = ['<g id="cut">']
    for k in range(copies):  # the same texts again and again: later runs parse them again
        body.extend(_PARTS[:10])
        body.append(f'<path d="M{k} 50 l 1 1 l 1 -1"/>')
    body.append('</g><g id="engrave" transform="translate(100 0) scale(2)">')
    body.extend(_PARTS[10:])
    body.append("</g>")
    return ('<svg xmlns="http://www.w3.org/2000/svg" width="200mm" height="100mm" viewBox="0 0 200 100">'
            + "".join(body) + "</svg>")


def test_a_drawing_measured_in_runs_equals_it_read_whole(tmp_path, monkeypatch):
    import pathlen.importers.svg as svg
    from pathlen.batch import MeasureSettings
    from pathlen.file_measure import measure_one
    from pathlen.geometry import DrawingRuns
    from pathlen.importers import read_drawing_or_runs

    path = tmp_path / "runs.svg"
    path.write_text(_document(12))
    settings = MeasureSettings()
    whole = measure_one(str(path), settings, in_runs=False)
    for chars in (svg.RUN_CHARS, 300, 40):
        monkeypatch.setattr(svg, "RUN_CHARS", chars)
        runs = read_drawing_or_runs(path, settings.import_options)
        assert isinstance(runs, DrawingRuns)
        taken = sum(1 for _ in runs.runs)
        assert taken >= (1 if chars == svg.RUN_CHARS else 10)
        # every number and message the same, to the last bit (each entity's segments lie in one run)
        assert measure_one(str(path), settings) == whole
    assert whole.contours_counted and whole.closed > 0 and whole.open > 0
    assert any("not measured" in w and "absurdly large" in w for w in whole.warnings)
    assert sum("<path>" in w for w in whole.warnings) == 1  # the bad text warns once, whichever run it is in


def test_a_drawing_with_placements_is_read_whole(tmp_path):
    from pathlen.batch import MeasureSettings
    from pathlen.geometry import Drawing
    from pathlen.importers import read_drawing_or_runs

    path = tmp_path / "use.svg"
    path.write_text('<svg xmlns="http://www.w3.org/2000/svg" xmlns:xlink="http://www.w3.org/1999/xlink">'
                    '<path id="p" d="M0 0 L 10 0"/><use xlink:href="#p" x="5"/></svg>')
    assert isinstance(read_drawing_or_runs(path, MeasureSettings().import_options), Drawing)


def test_the_segment_limit_stops_a_drawing_read_in_runs_as_read_whole(tmp_path, monkeypatch):
    # The SVG reader refuses a document of more than MAX_SEGMENTS segments (paths and shapes together);
    # read run by run the count grows across runs and the same refusal comes.
    import pytest

    import pathlen.importers.svg as svg
    from pathlen.batch import MeasureSettings, measure_file
    from pathlen.errors import InputError
    from pathlen.file_measure import measure_one

    path = tmp_path / "many.svg"
    path.write_text(_document(12))
    monkeypatch.setattr(svg, "RUN_CHARS", 200)
    settings = MeasureSettings()
    total = measure_one(str(path), settings)
    assert total.ok
    monkeypatch.setattr(svg, "MAX_SEGMENTS", 150)  # a few runs fit, the document does not
    for in_runs in (False, True):
        with pytest.raises(InputError, match="more than 150 segments"):
            measure_one(str(path), settings, in_runs=in_runs)
    failed = measure_file(str(path), settings)
    assert not failed.ok and "more than 150 segments" in failed.error
