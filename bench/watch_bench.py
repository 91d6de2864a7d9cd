"""Benchmark: the folder service keeping up with arriving drawings (real processes, real files).

    python bench/watch_bench.py [--files 200] [--jobs 2]

Starts ``pathlen watch`` on a temporary inbox, then drops the demo drawings into it one after
another (each made distinct by a DXF comment or an XML comment, so that every one is a job of its
own), at about 20 files a second, and reports files per minute and the latency from a file's
arrival to its result (median and worst).
"""

from __future__ import annotations

import argparse
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

FIXTURES = Path(__file__).resolve().parent.parent / "fixtures"


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--files", type=int, default=200)
    ap.add_argument("--jobs", type=int, default=2)
    args = ap.parse_args()
    demo = sorted(p for p in FIXTURES.iterdir() if p.suffix in (".dxf", ".svg"))
    with tempfile.TemporaryDirectory() as tmp:
        inbox, outbox = Path(tmp) / "in", Path(tmp) / "out"
        inbox.mkdir()
        proc = subprocess.Popen([sys.executable, "-m", "pathlen", "watch", str(inbox), "--out", str(outbox),
                                 "--settle", "0.5", "--poll", "0.25", "--jobs", str(args.jobs)],
                                stderr=subprocess.DEVNULL)
        time.sleep(1.0)
        arrived: dict[str, float] = {}
        start = time.monotonic()
        for k in range(args.files):
            src = demo[k % len(demo)]
            name = f"{src.stem}_{k:04d}{src.suffix}"
            text = src.read_bytes()
            extra = f"999\nbench copy {k}\n".encode() if src.suffix == ".dxf" else f"<!-- copy {k} -->".encode()
            tmp_name = inbox / (name + ".part")
            tmp_name.write_bytes(extra + text if src.suffix == ".dxf" else text + extra)
            shutil.move(str(tmp_name), str(inbox / name))  # a finished copy appears under its name at once
            arrived[name] = time.time()
            time.sleep(0.05)
        results = outbox / "results"
        deadline = time.monotonic() + 600
        while time.monotonic() < deadline and len(list(results.glob("*.json"))) < args.files:
            time.sleep(0.1)
        elapsed = time.monotonic() - start
        proc.terminate()
        proc.wait(30)
        latency = [(results / f"{n}.measure.json").stat().st_mtime - t for n, t in arrived.items()
                   if (results / f"{n}.measure.json").exists()]
        print(f"{len(latency)} of {args.files} files answered in {elapsed:.1f} s with --jobs {args.jobs}: "
              f"{len(latency) / elapsed * 60:.0f} files per minute (arrival rate about 1200 per minute)")
        print(f"latency from arrival to result: median {statistics.median(latency):.2f} s, worst {max(latency):.2f} s "
              "(settle time 0.5 s included)")


if __name__ == "__main__":
    main()
