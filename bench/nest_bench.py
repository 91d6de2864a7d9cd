"""Nesting density on the ESICUP irregular strip-packing instances, as a user meets it.

Each instance (../shared/nesting-benchmarks/*.json: strip height, pieces with demand and allowed
orientations) is written as one DXF per piece and an order file, then nested by a fresh
``pathlen nest ORDER --roll H --time T`` process; its reported utilisation (exact part area / roll
width x used length) is compared with the best published density for the instance (the record
layouts listed in ../shared/nesting-benchmarks/README.md: sparrow's records, 20-minute runs on 16
cores; instances from the ESICUP collection, also in the OR-Datasets repository, 2D-Irregular).
Instances are scaled so that the strip is 1000 mm wide; the spacing is 0.001 mm (pathlen needs a
gap above zero), which changes no density at three decimals.

    python bench/nest_bench.py [--time 60] [INSTANCE ...]
"""

from __future__ import annotations

import argparse
import json
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import ezdxf

SHARED = Path(__file__).resolve().parents[2] / "shared" / "nesting-benchmarks"
#: Best published densities (README of the shared folder: record layouts of the sparrow repository).
RECORDS = {"dagli": 0.90172, "fu": 0.92396, "jakobs2": 0.87717, "mao": 0.86867, "shapes0": 0.69978,
           "shapes1": 0.76719}
STRIP_MM = 1000.0


def write_instance(data: dict, folder: Path) -> tuple[Path, float]:
    scale = STRIP_MM / float(data["strip_height"])
    lines = []
    for item in data["items"]:
        pts = [(x * scale, y * scale) for x, y in item["shape"]["data"]]
        if pts[0] == pts[-1]:
            pts = pts[:-1]
        doc = ezdxf.new("R2010")
        doc.header["$INSUNITS"] = 4
        doc.modelspace().add_lwpolyline(pts, close=True)
        name = f"item_{item['id']}.dxf"
        doc.saveas(folder / name)
        turns = item.get("allowed_orientations")
        rotations = '"any"' if turns is None else "[" + ", ".join(f"{float(a):g}" for a in (turns or [0.0])) + "]"
        lines.append(f'[[part]]\nfile = "{name}"\nquantity = {item["demand"]}\nrotations = {rotations}\n')
    order = folder / "order.toml"
    order.write_text("\n".join(lines))
    return order, scale


def run(name: str, seconds: float) -> dict:
    data = json.loads((SHARED / f"{name}.json").read_text())
    folder = Path(tempfile.mkdtemp(prefix=f"nest-{name}-"))
    try:
        order, _ = write_instance(data, folder)
        exe = shutil.which("pathlen") or sys.exit("install pathlen first (pip install -e .)")
        started = time.monotonic()
        out = subprocess.run([exe, "nest", str(order), "--roll", f"{STRIP_MM:g}", "--gap", "0.001",
                              "--time", f"{seconds:g}", "--format", "json"], capture_output=True, text=True,
                             check=False)
        wall = time.monotonic() - started
        doc = json.loads(out.stdout)
        return {"name": name, "density": doc["utilisation"], "record": RECORDS.get(name),
                "copies": doc["total"]["copies"], "unplaced": doc["total"]["unplaced"], "wall_s": wall}
    finally:
        shutil.rmtree(folder, ignore_errors=True)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--time", type=float, default=60.0)
    ap.add_argument("names", nargs="*", default=sorted(RECORDS))
    args = ap.parse_args()
    print(f"pathlen nest --time {args.time:g}, fresh process per instance, strip {STRIP_MM:g} mm")
    print(f"{'instance':10} {'copies':>6} {'density':>8} {'record':>8} {'ratio':>6} {'wall s':>7}")
    ratios = []
    for name in args.names:
        r = run(name, args.time)
        ratio = r["density"] / r["record"] if r["record"] else float("nan")
        ratios.append(ratio)
        print(f"{name:10} {r['copies']:>6} {r['density']:>8.4f} {r['record']:>8.4f} {ratio:>6.3f} {r['wall_s']:>7.1f}"
              + (f"  ({r['unplaced']} unplaced)" if r["unplaced"] else ""), flush=True)
    print(f"mean ratio {sum(ratios) / len(ratios):.3f}, lowest {min(ratios):.3f} (goal: mean >= 0.95, none < 0.92)")


if __name__ == "__main__":
    main()
