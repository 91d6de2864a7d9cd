"""Benchmark: the folder service keeping up with arriving drawings (real processes, real files).

    python bench/watch_bench.py [--files 200] [--jobs 2]
    python bench/watch_bench.py --load [--files 1000] [--jobs 2]

Starts ``pathlen watch`` on a temporary inbox, then drops the demo drawings into it one after
another (each made distinct by a DXF comment or an XML comment, so that every one is a job of its
own), at about 20 files a second, and reports files per minute and the latency from a file's
arrival to its result (median and worst).

With ``--load``: the files are dropped at once and one ``pathlen watch --once`` run answers them (wall
time and the service process's own peak memory, VmHWM, its workers not counted); then a 1 GB file
(sparse, zeros) among a few drawings shows the service's peak memory with a huge input (the content
hash reads in blocks).  Goals (issue 27): 1,000 files in under 60 s with the service under 150 MB; the
1 GB input keeps it under 150 MB.
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


def distinct(src: Path, k: int) -> bytes:
    """The drawing made a job of its own: a DXF comment (group 999) before it, an XML comment after an SVG."""
    text = src.read_bytes()
    if src.suffix == ".dxf":
        return f"999\nbench copy {k}\n".encode() + text
    return text + f"<!-- copy {k} -->".encode()


def run_service(inbox: Path, outbox: Path, jobs: int) -> tuple[float, float, int]:
    """Wall seconds, peak memory of the service process (MB), exit status."""
    start = time.monotonic()
    proc = subprocess.Popen([sys.executable, "-m", "pathlen", "watch", str(inbox), "--out", str(outbox), "--once",
                             "--settle", "0", "--poll", "0.05", "--no-events", "--jobs", str(jobs)],
                            stderr=subprocess.DEVNULL)
    peak = 0
    while proc.poll() is None:
        try:
            with open(f"/proc/{proc.pid}/status") as fh:
                for line in fh:
                    if line.startswith("VmHWM:"):
                        peak = max(peak, int(line.split()[1]))
        except OSError:
            pass
        time.sleep(0.05)
    return time.monotonic() - start, peak / 1024, proc.returncode


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--files", type=int, default=None, help="default 200 (1000 with --load)")
    ap.add_argument("--jobs", type=int, default=2)
    ap.add_argument("--load", action="store_true", help="all files at once, and a 1 GB file")
    args = ap.parse_args()
    args.files = args.files or (1000 if args.load else 200)
    if args.load:
        load(args)
        return
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
            tmp_name = inbox / (name + ".part")
            tmp_name.write_bytes(distinct(src, k))
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


def load(args: argparse.Namespace) -> None:
    demo = sorted(p for p in FIXTURES.iterdir() if p.suffix in (".dxf", ".svg"))
    with tempfile.TemporaryDirectory() as tmp:
        inbox, outbox = Path(tmp) / "in", Path(tmp) / "out"
        inbox.mkdir()
        for k in range(args.files):
            src = demo[k % len(demo)]
            (inbox / f"copy{k:05d}{src.suffix}").write_bytes(distinct(src, k))
        wall, peak, code = run_service(inbox, outbox, args.jobs)
        answered = len(list((outbox / "results").rglob("*.json")))
        print(f"{args.files} files, --jobs {args.jobs}: {wall:.1f} s wall ({args.files / wall * 60:.0f} files/min), "
              f"service peak {peak:.0f} MB, {answered} results, exit {code}  (goal: < 60 s, < 150 MB)")
    with tempfile.TemporaryDirectory() as tmp:
        inbox, outbox = Path(tmp) / "in", Path(tmp) / "out"
        inbox.mkdir()
        with (inbox / "huge.dxf").open("wb") as fh:
            fh.truncate(1024**3)
        for k, src in enumerate(demo[:3]):
            (inbox / f"small{k}{src.suffix}").write_bytes(src.read_bytes())
        wall, peak, code = run_service(inbox, outbox, args.jobs)
        note = next(iter((outbox / "failed").glob("huge.dxf.error.txt")), None)
        print(f"1 GB input: {wall:.1f} s, service peak {peak:.0f} MB, exit {code}; huge.dxf: "
              f"{note.read_text().strip() if note else 'measured'}  (goal: < 150 MB)")



if __name__ == "__main__":
    main()
