"""Benchmark: cut estimates on degenerate sheets against measuring the same file, fresh processes.

    python bench/degenerate_bench.py

Writes four SVG drawings (mm) and runs ``pathlen measure`` and ``pathlen cut`` on each in a new
process, reporting wall time and peak memory (``/usr/bin/time``'s maximum resident set, the
worker included) side by side:

1. one closed contour of 100,000 line segments (a circle of radius 50 mm);
2. 5,000 copies of one circle, drawn on top of each other;
3. 2,000 concentric circles;
4. 5,000 lines through one point.
"""

from __future__ import annotations

import json
import math
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HEAD = '<svg xmlns="http://www.w3.org/2000/svg" width="300mm" height="300mm" viewBox="-150 -150 300 300">'


def single_contour(n: int = 100_000) -> str:
    pts = " ".join(f"{50 * math.cos(2 * math.pi * k / n):.9f},{50 * math.sin(2 * math.pi * k / n):.9f}"
                   for k in range(n))
    return f'{HEAD}<polygon points="{pts}"/></svg>'


def coincident(n: int = 5_000) -> str:
    return HEAD + '<circle r="5"/>' * n + "</svg>"


def concentric(n: int = 2_000) -> str:
    return HEAD + "".join(f'<circle r="{1 + 0.05 * k:.3f}"/>' for k in range(n)) + "</svg>"


def star(n: int = 5_000) -> str:
    ends = ((50 * math.cos(2 * math.pi * k / n), 50 * math.sin(2 * math.pi * k / n)) for k in range(n))
    lines = "".join(f'<line x2="{x:.6f}" y2="{y:.6f}"/>' for x, y in ends)
    return HEAD + lines + "</svg>"


def run(*args: str) -> tuple[float, float, dict]:
    cmd = ["/usr/bin/time", "-f", "%M", sys.executable, "-m", "pathlen", *args, "--format", "json"]
    start = time.perf_counter()
    done = subprocess.run(cmd, capture_output=True, text=True, check=False)
    wall = time.perf_counter() - start
    return wall, float(done.stderr.strip().splitlines()[-1]) / 1024, json.loads(done.stdout)


def main() -> None:
    cases = [("100,000-segment closed contour", single_contour), ("5,000 coincident circles", coincident),
             ("2,000 concentric circles", concentric), ("5,000 lines through one point", star)]
    print(f"{'drawing':34} {'measure s':>9} {'MB':>6} {'cut s':>7} {'MB':>6}  contours closed/open (cut)")
    with tempfile.TemporaryDirectory() as tmp:
        for label, make in cases:
            path = Path(tmp) / "sheet.svg"
            path.write_text(make())
            m_wall, m_mb, _ = run("measure", str(path))
            c_wall, c_mb, report = run("cut", str(path), "--profile", "steel-3mm-laser")
            entry = report["files"][0]
            counts = f"{entry['contours']['closed']}/{entry['contours']['open']}" if entry["ok"] else entry["error"]
            print(f"{label:34} {m_wall:9.2f} {m_mb:6.0f} {c_wall:7.2f} {c_mb:6.0f}  {counts}")


if __name__ == "__main__":
    main()
