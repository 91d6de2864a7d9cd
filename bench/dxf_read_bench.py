"""Big DXF files and big batches, measured the way a user meets them: fresh processes, side by side.

1. A 100,000-entity DXF (lines, circles, arcs, bulged LWPOLYLINEs, splines): wall time and peak memory
   of ``pathlen measure --format json`` against ``ezdxf.readfile`` alone, and start-up on a tiny file.
2. Files per minute on a Dask LocalCluster of 1 and 2 worker processes, against the local batch, and
   a simulation of 16 workers from the measured per-file time and the scheduler's cost per file.

Run: python bench/dxf_read_bench.py  (needs pip install -e '.[bench]')
"""

from __future__ import annotations

import resource
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).parent))
from measure_bench import write_big_dxf

FIXTURES = Path(__file__).parent.parent / "fixtures"
PATHLEN = [str(Path(sys.executable).parent / "pathlen")]  # the command installed beside this Python


def fresh(cmd: list[str]) -> tuple[float, float]:
    """Wall seconds and peak RSS (MB, the largest process of the command) of a fresh process."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    t = time.perf_counter()
    subprocess.run(cmd, check=False, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    wall = time.perf_counter() - t
    peak = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    return wall, max(peak, before) / 1024.0


def dxf_part(tmp: Path) -> None:
    big = tmp / "big.dxf"
    write_big_dxf(big, 100_000)
    size_mb = big.stat().st_size / 1e6
    rows = [
        ("ezdxf.readfile alone", [sys.executable, "-c", "import ezdxf, sys; ezdxf.readfile(sys.argv[1])", str(big)]),
        ("pathlen measure --format json", [*PATHLEN, "measure", "--format", "json", str(big)]),
        ("pathlen's ezdxf reader, read only", [sys.executable, "-c", "import sys, pathlib; from pathlen.importers."
                                               "dxf_ezdxf import read_dxf; read_dxf(pathlib.Path(sys.argv[1]))",
                                               str(big)]),
    ]
    print(f"DXF of 100,000 entities, {size_mb:.1f} MB; fresh processes, best of 3")
    base = None
    for name, cmd in rows:
        runs = [fresh(cmd) for _ in range(3)]
        wall = min(r[0] for r in runs)
        peak = runs[-1][1]
        base = base or wall
        print(f"  {name:36s} {wall:6.2f} s  {wall / base:5.2f}x readfile")
    # peak memory needs a process of its own per command: RUSAGE_CHILDREN keeps the largest so far
    for name, cmd in rows[1:2]:
        out = subprocess.run(["/usr/bin/time", "-f", "%M", *cmd], capture_output=True, text=True, check=False)
        peak = int(out.stderr.strip().splitlines()[-1]) / 1024.0
        print(f"  peak memory of {name}: {peak:.0f} MB = {peak / size_mb:.1f}x the file")
    tiny = FIXTURES / "kl101_bracket.dxf"
    wall = min(fresh([*PATHLEN, "measure", str(tiny)])[0] for _ in range(5))
    imp = min(fresh([sys.executable, "-c", "pass"])[0] for _ in range(5))
    print(f"  start-up: pathlen measure on a tiny DXF {wall:.2f} s (python doing nothing: {imp:.2f} s)")


def cluster_part(tmp: Path) -> None:
    import operator

    from distributed import Client, LocalCluster, as_completed

    from pathlen.batch import FileResult, Limits, MeasureSettings, measure_file, run_batch
    from pathlen.cluster import run_on_cluster

    files = []
    for k in range(40):
        for f in FIXTURES.glob("*.dxf"):
            files.append(str(shutil.copy(f, tmp / f"{k}_{f.name}")))
    settings = MeasureSettings()
    t = time.perf_counter()
    list(run_batch(files, settings, 1, measure_file, FileResult, Limits()))
    local1 = time.perf_counter() - t
    print(f"\n{len(files)} demo DXF files; files per minute")
    print(f"  local batch, 1 worker process   {len(files) / local1 * 60:8.0f}")
    per_file = local1 / len(files)
    extra = {}
    for workers in (1, 2):
        with LocalCluster(n_workers=workers, threads_per_worker=1, processes=True, host="127.0.0.1",
                          dashboard_address=None) as cluster, Client(cluster.scheduler_address) as client:
            list(run_on_cluster(client, files[:4], settings, measure_file, FileResult, Limits()))  # warm up
            t = time.perf_counter()
            list(run_on_cluster(client, files, settings, measure_file, FileResult, Limits()))
            wall = time.perf_counter() - t
            extra[workers] = wall * workers / len(files) - per_file
            if workers == 2:  # the scheduler's own cost per task: tasks that do nothing
                tasks = 2000
                t = time.perf_counter()
                for _ in as_completed(client.map(operator.neg, range(tasks), pure=False)):
                    pass
                per_task = (time.perf_counter() - t) / tasks
        print(f"  Dask, {workers} worker process{'es' if workers > 1 else ''}       {len(files) / wall * 60:8.0f}")
    cost = max(extra[1], 0.0)
    print(f"  per file: {per_file * 1000:.1f} ms of work; on the cluster {cost * 1000:.1f} ms more per file and "
          f"worker; the scheduler {per_task * 1000:.2f} ms per task (2,000 empty tasks)")
    # simulation from those measurements: W workers each take per_file + cost per file; the scheduler
    # hands out one task per per_task seconds at most
    for workers in (4, 8, 16):
        rate = min(workers / (per_file + cost), 1.0 / per_task) * 60
        print(f"  simulated {workers:2d} workers             {rate:8.0f}")


def main() -> None:
    with tempfile.TemporaryDirectory() as tmp:
        if "--cluster-only" not in sys.argv:
            dxf_part(Path(tmp))
        cluster_part(Path(tmp))


if __name__ == "__main__":
    main()
