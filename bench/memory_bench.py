"""Peak memory of `pathlen measure` and `pathlen cut` against the file's size and a plain alternative.

Fresh processes, side by side on the same files:

- DXF: the mixed drawing of ``bench/cut_scale_bench.py`` (lines, circles, arcs, near-straight bulges,
  splines); ``pathlen measure``, ``pathlen cut`` and, as the plain alternative, ``ezdxf.readfile``
  alone (reading only: no lengths).
- SVG: the mixed paths of ``bench/svg_bench.py`` (L, C, Q, A); ``pathlen measure`` and svgpathtools
  (``svg2paths`` and every segment's ``length()``).

Peak is the largest process's resident set (``/usr/bin/time -f %M``, kB); the ratio is peak bytes over
file bytes (the issue's goals: measure <= 5x, cut <= 8x).

Run: python bench/memory_bench.py [--entities 1000000] [--segments 1000000]
"""

from __future__ import annotations

import argparse
import subprocess
import sys
import tempfile
from pathlib import Path

from cut_scale_bench import PATHLEN, write_drawing
from svg_bench import SVGPATHTOOLS_SCRIPT, write_svg


def peak(cmd: list[str]) -> tuple[float, int]:
    """Wall seconds and peak resident bytes of a fresh process (which must succeed)."""
    out = subprocess.run(["/usr/bin/time", "-f", "%e %M", *cmd], capture_output=True, text=True, check=False)
    if out.returncode != 0:
        raise SystemExit(f"{cmd[0]} failed: {out.stderr.strip()[-400:]}")
    wall, kb = out.stderr.strip().splitlines()[-1].split()
    return float(wall), int(kb) * 1024


def report(name: str, size: int, wall: float, peak_bytes: int) -> None:
    print(f"  {name:34s} {wall:7.2f} s  peak {peak_bytes / 1e6:7.0f} MB  {peak_bytes / size:5.2f}x the file")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--entities", type=int, default=1_000_000)
    ap.add_argument("--segments", type=int, default=1_000_000)
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        dxf, svg = Path(tmp) / "mixed.dxf", Path(tmp) / "mixed.svg"
        write_drawing(dxf, args.entities)
        size = dxf.stat().st_size
        print(f"DXF: {args.entities:,} entities, {size / 1e6:.1f} MB")
        report("pathlen measure", size, *peak([PATHLEN, "measure", "--format", "json", str(dxf)]))
        report("pathlen cut", size, *peak([PATHLEN, "cut", "--profile", "steel-3mm-laser", "--format", "json",
                                           "--max-memory", "16000", "--timeout", "3600", str(dxf)]))
        report("ezdxf.readfile (reading only)", size,
               *peak([sys.executable, "-c", "import sys, ezdxf; ezdxf.readfile(sys.argv[1])", str(dxf)]))
        dxf.unlink()
        write_svg(svg, args.segments, 100)
        size = svg.stat().st_size
        print(f"SVG: {args.segments:,} segments, {size / 1e6:.1f} MB")
        report("pathlen measure", size, *peak([PATHLEN, "measure", "--format", "json", str(svg)]))
        report("svgpathtools svg2paths + length()", size, *peak([sys.executable, "-c", SVGPATHTOOLS_SCRIPT, str(svg)]))


if __name__ == "__main__":
    main()
