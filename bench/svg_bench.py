"""Benchmark: measuring an SVG with pathlen against the script a user would otherwise write.

    python bench/svg_bench.py [--segments 100000] [--per-path 100]

Writes an SVG of mixed path segments (L, C, Q, A; absolute and relative) in one run and times,
as whole processes on the same file:

1. ``pathlen measure FILE --format json``;
2. ``svgpathtools.svg2paths(FILE)`` and the sum of every segment's ``.length()``.

Both totals are printed; they must agree (svgpathtools is right on this file: no transforms,
viewBox equal to the size in px).  Also prints where pathlen's time goes (import, measure) and
the peak memory of the pathlen process.
"""

from __future__ import annotations

import argparse
import json
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

SVGPATHTOOLS_SCRIPT = """
import sys
from svgpathtools import svg2paths
paths, _ = svg2paths(sys.argv[1])
print(repr(float(sum(seg.length() for p in paths for seg in p))))
"""


def write_svg(path: Path, segments: int, per_path: int, seed: int = 7) -> None:
    """Mixed segments in paths of ``per_path``; 1 user unit = 1 px (a 2000 px square)."""
    rng = np.random.default_rng(seed)
    out = ['<svg xmlns="http://www.w3.org/2000/svg" width="2000" height="2000" viewBox="0 0 2000 2000">']
    made = 0
    while made < segments:
        n = min(per_path, segments - made)
        x, y = rng.uniform(200, 1800, 2)
        d = [f"M{x:.3f} {y:.3f}"]
        for k in rng.integers(0, 4, n):
            p = rng.uniform(-40, 40, 6)
            if k == 0:
                d.append(f"l{p[0]:.3f} {p[1]:.3f}")
            elif k == 1:
                d.append("c" + " ".join(f"{v:.3f}" for v in p))
            elif k == 2:
                d.append("q" + " ".join(f"{v:.3f}" for v in p[:4]))
            else:
                rx, ry = rng.uniform(5, 40, 2)
                d.append(f"a{rx:.3f} {ry:.3f} {rng.uniform(0, 90):.1f} {rng.integers(0, 2)} {rng.integers(0, 2)} "
                         f"{p[0]:.3f} {p[1]:.3f}")
        out.append(f'<path d="{" ".join(d)}" fill="none" stroke="#000"/>')
        made += n
    out.append("</svg>")
    path.write_text("\n".join(out))


def timed(cmd: list[str]) -> tuple[float, str]:
    t = time.perf_counter()
    done = subprocess.run(cmd, capture_output=True, text=True, check=True)
    return time.perf_counter() - t, done.stdout


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--segments", type=int, default=100_000)
    ap.add_argument("--per-path", type=int, default=100)
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        svg = Path(tmp) / "bench.svg"
        write_svg(svg, args.segments, args.per_path)
        print(f"{args.segments:,} segments in paths of {args.per_path}, file {svg.stat().st_size / 1e6:.1f} MB")

        from pathlen.importers import ImportOptions, read_drawing
        from pathlen.measure import measure

        t0 = time.perf_counter()
        drawing = read_drawing(svg, ImportOptions(svg_dpi=25.4))  # 1 px = 1 mm, to compare with svgpathtools
        t1 = time.perf_counter()
        result = measure(drawing)
        t2 = time.perf_counter()
        print(f"in-process: import {t1 - t0:.3f} s, measure {t2 - t1:.3f} s")

        t_ours, out = timed([sys.executable, "-m", "pathlen", "measure", str(svg), "--format", "json",
                             "--svg-dpi", "25.4"])
        ours = json.loads(out)["total"]
        peak_mb = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024  # Linux: kB
        t_ref, out = timed([sys.executable, "-c", SVGPATHTOOLS_SCRIPT, str(svg)])
        ref = float(out)
        print(f"{'method (whole process)':34s} {'wall s':>8s}  {'total length':>22s}")
        print(f"{'pathlen measure':34s} {t_ours:8.2f}  {ours['length']:22.12f} ± {ours['error_bound']:.1e}")
        print(f"{'svgpathtools svg2paths + length()':34s} {t_ref:8.2f}  {ref:22.12f}")
        print(f"pathlen peak memory {peak_mb:.0f} MB ({peak_mb * 2**20 / svg.stat().st_size:.0f}x "
              f"the file size)")
        print(f"speed-up {t_ref / t_ours:.1f}x; totals differ by {abs(ref - ours['length']) / ref:.1e} relative "
              f"(pathlen in-process total {result.length:.12f})")


if __name__ == "__main__":
    main()
