"""Benchmark: bounded work on hostile drawings, each as a fresh ``pathlen measure`` process.

    python bench/limits_bench.py

For each drawing it runs ``pathlen measure FILE --format json`` in a new process and reports wall
time, peak memory (``/usr/bin/time``'s maximum resident set, the worker included) and the
length.  Instanced files are run twice, side by side: measured as instances only
(``--max-segments 1``: contours not counted) and with every copy written out for the contour
count (the default limit of 10 million segments), which is what expansion costs.

Files: an SVG ``<use>`` tree 10 levels deep and 10 wide (10^10 copies of a 1 mm line) and the
same tree 6 levels deep (10^6); a MINSERT of 1000 x 1000 circles; nested INSERTs 7 deep, 10 wide;
one SPLINE of degree 36; a DXF of 100,000 mixed entities (lines, arcs, circles, splines).
"""

from __future__ import annotations

import json
import math
import subprocess
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

import ezdxf
import numpy as np


def use_tree(path: Path, levels: int) -> float:
    parts = ['<g id="u0"><line x2="1"/></g>'] + [
        f'<g id="u{i}">' + "".join(f'<use href="#u{i - 1}" x="{k}"/>' for k in range(10)) + "</g>"
        for i in range(1, levels + 1)]
    path.write_text('<svg xmlns="http://www.w3.org/2000/svg" width="10mm" height="10mm" viewBox="0 0 10 10">'
                    f'<defs>{"".join(parts)}</defs><use href="#u{levels}"/></svg>')
    return 10.0 ** levels


def minsert(path: Path) -> float:
    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 4
    doc.blocks.new("HOLE").add_circle((0, 0), 2.0)
    doc.modelspace().add_blockref("HOLE", (0, 0), dxfattribs={
        "row_count": 1000, "column_count": 1000, "row_spacing": 5.0, "column_spacing": 5.0})
    doc.saveas(path)
    return 1e6 * 2 * math.pi * 2.0


def nested_inserts(path: Path, levels: int = 7) -> float:
    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 4
    doc.blocks.new("B0").add_line((0, 0), (1, 0))
    for level in range(1, levels + 1):
        blk = doc.blocks.new(f"B{level}")
        for k in range(10):
            blk.add_blockref(f"B{level - 1}", (0, 2 * k * 10 ** (level - 1)))
    doc.modelspace().add_blockref(f"B{levels}", (0, 0))
    doc.saveas(path)
    return 10.0 ** levels


def high_degree_spline(path: Path, degree: int = 36, points: int = 60) -> float:
    rng = np.random.default_rng(0)
    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 4
    pts = np.cumsum(rng.normal(size=(points, 3)) * [10, 10, 0], axis=0)
    knots = np.concatenate([np.zeros(degree + 1), np.linspace(0, 1, points - degree + 1)[1:-1], np.ones(degree + 1)])
    spline = doc.modelspace().add_spline()
    spline.dxf.degree = degree
    spline.control_points = pts.tolist()
    spline.knots = knots.tolist()
    doc.saveas(path)
    return math.nan


def big_dxf(path: Path, entities: int = 100_000) -> float:
    rng = np.random.default_rng(1)
    doc = ezdxf.new("R2010", setup=False)
    doc.header["$INSUNITS"] = 4
    msp = doc.modelspace()
    for _k in range(entities // 4):
        x, y = rng.uniform(0, 1000, 2)
        msp.add_line((x, y), (x + 5, y + 3))
        msp.add_arc((x, y), 2.0, 10, 200)
        msp.add_circle((x, y), 1.5)
        msp.add_spline([(x, y), (x + 1, y + 2), (x + 3, y + 2), (x + 4, y)])
    doc.saveas(path)
    return math.nan


def run(path: Path, *options: str) -> tuple[float, float, dict]:
    """Wall seconds, peak resident MB and the JSON report of a fresh ``pathlen measure``."""
    cmd = ["/usr/bin/time", "-f", "%M", sys.executable, "-m", "pathlen", "measure", str(path), "--format", "json",
           *options]
    start = time.perf_counter()
    done = subprocess.run(cmd, capture_output=True, text=True, check=False)
    wall = time.perf_counter() - start
    peak_kb = float(done.stderr.strip().splitlines()[-1])
    return wall, peak_kb / 1024, json.loads(done.stdout)


def main() -> None:
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        cases = [
            ("SVG <use> tree 10 x 10 (1e10 copies)", "tree10.svg", lambda p: use_tree(p, 10), True),
            ("SVG <use> tree 6 x 10 (1e6 copies)", "tree6.svg", lambda p: use_tree(p, 6), True),
            ("MINSERT 1000 x 1000 circles", "minsert.dxf", minsert, True),
            ("nested INSERT 7 x 10 (1e7 copies)", "nested.dxf", nested_inserts, True),
            ("SPLINE of degree 36", "degree36.dxf", high_degree_spline, False),
            ("DXF of 100,000 entities", "big.dxf", big_dxf, False),
        ]
        print(f"{'drawing':40} {'run':26} {'wall s':>8} {'peak MB':>8} {'length mm':>22}  note")
        for label, name, make, instanced in cases:
            path = folder / name
            expected = make(path)
            size = path.stat().st_size / 1e6
            runs = [("instances only", ("--max-segments", "1")), ("copies written out", ())] if instanced \
                else [("default", ())]
            for how, options in runs:
                wall, peak, report = run(path, *options)
                entry = report["files"][0]
                check = "" if math.isnan(expected) else f"exact {expected:.6g}"
                note = entry["error"] or ("contours not counted" if entry["contours"]["closed"] is None
                                          else f"contours {entry['contours']['closed']}/{entry['contours']['open']}")
                print(f"{label:40} {how:26} {wall:8.2f} {peak:8.0f} {entry['length']:22.6f}  {note}; {check}"
                      f" ({size:.2f} MB file)")


if __name__ == "__main__":
    main()
