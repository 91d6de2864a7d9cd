"""`pathlen cut` against `pathlen measure` on big mixed drawings, as a user meets them: fresh processes.

The drawing: lines, circles, arcs, bulged LWPOLYLINEs whose bulges are near zero (1e-6, 1e-7: arcs of
a huge radius, which once gave whole-circle bounding boxes kilometres wide) and cubic splines, in a
3.8 m square.  For each size: wall time and peak memory (the largest process, /usr/bin/time) of
``pathlen measure --format json`` and ``pathlen cut --profile steel-3mm-laser --format json``, the
ratio, and cut's extra cost per contour.

Run: python bench/cut_scale_bench.py [--entities 100000 1000000]
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
import tempfile
from pathlib import Path

import numpy as np

PATHLEN = str(Path(sys.executable).parent / "pathlen")


def write_drawing(path: Path, entities: int) -> None:
    import ezdxf

    rng = np.random.default_rng(3)
    doc = ezdxf.new("R2010", setup=False)
    doc.header["$INSUNITS"] = 4
    msp = doc.modelspace()
    for x, y in rng.uniform(0, 3800, size=(entities // 5, 2)):
        msp.add_line((x, y), (x + 5, y + 3))
        msp.add_circle((x, y), 2.5)
        msp.add_arc((x, y), 4.0, 10, 200)
        msp.add_lwpolyline([(x, y, 1e-6), (x + 4, y, 0), (x + 4, y + 4, 1e-7)], format="xyb", close=True)
        msp.add_open_spline([(x, y), (x + 1, y + 3), (x + 3, y - 1), (x + 5, y + 2)], degree=3)
    doc.saveas(path)


def run(cmd: list[str]) -> tuple[float, float, str]:
    """Wall seconds, peak RSS (MB of 10^6 bytes, as the file size) and stdout of a fresh process."""
    out = subprocess.run(["/usr/bin/time", "-f", "%e %M", *cmd], capture_output=True, text=True, check=False)
    wall, kb = out.stderr.strip().splitlines()[-1].split()
    return float(wall), int(kb) * 1024 / 1e6, out.stdout


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--entities", type=int, nargs="+", default=[100_000])
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        for n in args.entities:
            path = Path(tmp) / f"mixed{n}.dxf"
            write_drawing(path, n)
            size_mb = path.stat().st_size / 1e6
            m_wall, m_peak, _ = run([PATHLEN, "measure", "--format", "json", str(path)])
            c_wall, c_peak, text = run([PATHLEN, "cut", "--profile", "steel-3mm-laser", "--format", "json",
                                        "--max-memory", "16000", "--timeout", "3600", str(path)])
            entry = json.loads(text)["files"][0]
            contours = entry["contours"]["closed"] + entry["contours"]["open"] if entry.get("ok") else 0
            print(f"{n:,} entities ({size_mb:.1f} MB), {contours:,} contours; fresh processes")
            print(f"  pathlen measure  {m_wall:7.2f} s  peak {m_peak:7.0f} MB ({m_peak / size_mb:4.1f}x the file)")
            print(f"  pathlen cut      {c_wall:7.2f} s  peak {c_peak:7.0f} MB ({c_peak / size_mb:4.1f}x the file)"
                  f"  ok={entry.get('ok')} {entry.get('error') or ''}")
            extra = (c_wall - m_wall) / max(contours, 1) * 1000
            print(f"  cut / measure    {c_wall / m_wall:7.2f}x;  cut's extra cost {extra:.3f} ms per contour")


if __name__ == "__main__":
    main()
