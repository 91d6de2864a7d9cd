"""Batches on a Dask cluster: a real scheduler and two worker processes on the loopback interface.

Reference: the local batch (pathlen's own worker processes), which the rest of the suite checks
against closed forms; a cluster run must give the same JSON document, file for file.
"""

from __future__ import annotations

import contextlib
import json
import os
import shutil
import signal
from pathlib import Path

import pytest
from distributed import Client, LocalCluster

from pathlen.batch import FileResult, Limits, MeasureSettings, measure_file
from pathlen.cli import main
from pathlen.cluster import run_on_cluster

FIXTURES = Path(__file__).parent.parent / "fixtures"


@pytest.fixture(scope="module")
def cluster():
    with LocalCluster(n_workers=2, threads_per_worker=1, processes=True, host="127.0.0.1",
                      dashboard_address=None) as local:
        yield local


@pytest.fixture
def batch(tmp_path: Path) -> Path:
    """The demo drawings, twice over, with a damaged DXF, a text file posing as SVG and an empty DXF."""
    for k in range(2):
        for f in FIXTURES.glob("*.*"):
            if f.suffix in (".dxf", ".svg"):
                shutil.copy(f, tmp_path / f"{k}_{f.name}")
    (tmp_path / "broken.dxf").write_text("  0\nSECTION\n  2\nENTITIES\n  0\nLINE\n 10\n")
    (tmp_path / "notes.svg").write_text("these are not the drawings you are looking for")
    (tmp_path / "empty.dxf").write_bytes(b"")
    return tmp_path


def _document(runner, args: list[str]) -> tuple[int, dict]:
    res = runner.invoke(main, args)
    return res.exit_code, json.loads(res.stdout)


def test_cluster_batch_gives_the_local_json(runner, cluster, batch: Path) -> None:
    files = sorted(str(p) for p in batch.iterdir())
    local_code, local = _document(runner, ["measure", "--format", "json", *files])
    remote_code, remote = _document(runner, ["measure", "--format", "json", "--scheduler", cluster.scheduler_address,
                                             *files])
    assert local_code == remote_code == 1  # the bad files fail, the others are measured
    assert remote == local
    failed = [f["path"] for f in remote["files"] if not f["ok"]]
    assert sorted(Path(p).name for p in failed) == ["broken.dxf", "empty.dxf", "notes.svg"]


def test_cut_on_the_cluster_matches_local(runner, cluster, batch: Path) -> None:
    files = sorted(str(p) for p in batch.glob("*kl101*"))
    args = ["cut", "--profile", "steel-3mm-laser", "--format", "json"]
    local = _document(runner, [*args, *files])
    remote = _document(runner, [*args, "--scheduler", cluster.scheduler_address, *files])
    assert local[0] == 0
    assert remote == local


def test_killed_worker_every_file_answered_once(cluster, batch: Path) -> None:
    files = sorted(str(p) for p in batch.iterdir()) * 3
    settings = MeasureSettings()
    expected = {i: measure_file(p, settings) for i, p in enumerate(files)}
    with Client(cluster.scheduler_address, set_as_default=False) as client:
        results = {}
        killed = False
        for i, result in run_on_cluster(client, files, settings, measure_file, FileResult, Limits()):
            assert i not in results  # answered once
            results[i] = result
            if not killed:
                pids = client.run(os.getpid)
                os.kill(next(iter(pids.values())), signal.SIGKILL)  # one worker dies mid-batch
                killed = True
    assert killed and sorted(results) == list(range(len(files)))
    for i, result in results.items():
        assert (result.ok, result.error, result.length_mm) == (expected[i].ok, expected[i].error,
                                                                expected[i].length_mm), files[i]


def test_unreachable_scheduler_is_a_usage_error(runner) -> None:
    res = runner.invoke(main, ["measure", "--scheduler", "tcp://127.0.0.1:9", str(FIXTURES / "kl101_bracket.dxf")])
    assert res.exit_code == 2
    assert "cannot reach the Dask scheduler" in res.output


def test_watch_hands_its_jobs_to_the_cluster(cluster, tmp_path: Path) -> None:
    """The watch service with --scheduler: every drawing answered once, the same result files as a local run."""
    import subprocess
    import sys

    runs = {}
    for name, extra in (("local", []), ("cluster", ["--scheduler", cluster.scheduler_address])):
        inbox, outbox = tmp_path / name / "in", tmp_path / name / "out"
        inbox.mkdir(parents=True)
        for f in FIXTURES.glob("*.*"):
            if f.suffix in (".dxf", ".svg"):
                shutil.copy(f, inbox / f.name)
        (inbox / "broken.dxf").write_bytes(b"\x00not a drawing\xff")
        done = subprocess.run([sys.executable, "-m", "pathlen", "watch", str(inbox), "--out", str(outbox), "--once",
                               "--settle", "0.2", "--poll", "0.05", "--no-events", *extra],
                              capture_output=True, text=True, timeout=120, check=False)
        assert done.returncode == 0, done.stderr
        runs[name] = {p.relative_to(outbox).as_posix(): json.loads(p.read_text())["files"][0]
                      for p in (outbox / "results").rglob("*.json")}
        runs[name + " files"] = sorted(p.relative_to(outbox).as_posix() for p in outbox.rglob("*")
                                       if ".pathlen" not in p.parts and p.is_file() and p.suffix != ".csv")
    assert runs["cluster files"] == runs["local files"]  # results, error notes, originals moved alike
    assert any("broken.dxf" in f for f in runs["cluster files"])
    assert sorted(runs["cluster"]) == sorted(runs["local"])
    assert len(runs["cluster"]) == len([f for f in FIXTURES.iterdir() if f.suffix in (".dxf", ".svg")])
    for key, local in runs["local"].items():
        remote = runs["cluster"][key]
        assert (remote["ok"], remote["error"], remote.get("length")) == (local["ok"], local["error"],
                                                                         local.get("length")), key


def test_limits_per_file_hold_on_the_cluster(cluster, tmp_path: Path) -> None:
    """A stalled file, a dying one and a memory hog fail alone on the cluster as they do locally
    (tests/test_batch_limits.py), and the workers' kept child processes carry on."""
    from tests.drawings import line_dxf
    from tests.test_batch_limits import flaky_work

    good = str(line_dxf(tmp_path / "good.dxf"))
    paths = [good, "stall.dxf", good, "die.dxf", good, "hog.dxf", good, good]
    with Client(cluster.scheduler_address, set_as_default=False) as client:
        results = dict(run_on_cluster(client, paths, MeasureSettings(), flaky_work, FileResult,
                                      Limits(timeout_s=2.0, max_memory_mb=512)))
    assert sorted(results) == list(range(len(paths)))
    for i in (0, 2, 4, 6, 7):
        assert results[i].ok and results[i].length_mm == 10.0
    assert results[1].error == "stopped after 2 s: the time limit per file (--timeout)"
    assert "died with signal SIGKILL" in results[3].error
    assert results[5].error == "needed more than the memory limit of 512 MB per file (--max-memory)"


def test_watch_carries_on_locally_when_the_scheduler_dies(tmp_path: Path) -> None:
    """A scheduler that goes away: one line, the jobs in flight queued again, every file answered locally."""
    import signal
    import subprocess
    import sys
    import time

    inbox, outbox = tmp_path / "in", tmp_path / "out"
    inbox.mkdir()
    drawings = sorted(f for f in FIXTURES.iterdir() if f.suffix == ".dxf")
    shutil.copy(drawings[0], inbox / "first.dxf")
    own = LocalCluster(n_workers=1, threads_per_worker=1, processes=True, host="127.0.0.1", dashboard_address=":0")
    proc = subprocess.Popen([sys.executable, "-m", "pathlen", "watch", str(inbox), "--out", str(outbox), "--settle",
                             "0", "--poll", "0.1", "--no-events", "--scheduler", own.scheduler_address],
                            stderr=subprocess.PIPE, text=True)
    try:
        deadline = time.monotonic() + 60
        while time.monotonic() < deadline and not (outbox / "results" / "first.dxf.measure.json").exists():
            time.sleep(0.1)
        own.close()
        for f in drawings[1:]:
            shutil.copy(f, inbox / f.name)
        deadline = time.monotonic() + 90
        while time.monotonic() < deadline and len(list((outbox / "results").glob("*.json"))) < len(drawings):
            time.sleep(0.2)
    finally:
        proc.send_signal(signal.SIGTERM)
        _, err = proc.communicate(timeout=60)
    assert len(list((outbox / "results").glob("*.json"))) == len(drawings)
    assert not (outbox / "failed").exists()
    assert "cluster-lost" in err and "Traceback" not in err


@pytest.mark.parametrize("address", ["tcp://nohost:notaport", "queue-host", "tcp://host:99999", "http://host:8786"])
def test_a_malformed_scheduler_address_is_one_line_at_once(address) -> None:
    # refused before any connection is tried: no wait for a timeout, no client left to complain later
    import subprocess
    import sys
    import time

    start = time.monotonic()
    res = subprocess.run([sys.executable, "-m", "pathlen", "measure", "--scheduler", address,
                          str(FIXTURES / "kl101_bracket.dxf")], capture_output=True, text=True, timeout=60)
    assert res.returncode == 2
    assert "is not a scheduler address" in res.stderr and "Traceback" not in res.stderr
    assert time.monotonic() - start < 15  # far below the 20 s a client's clean-up used to take


def _free_port() -> int:
    import socket

    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@pytest.fixture
def own_cluster(tmp_path: Path):
    """A scheduler and one worker in processes of their own (each its own process group), so a test can
    kill or freeze the scheduler; both are killed at the end, whatever state they are in."""
    import subprocess
    import sys
    import time

    address = f"tcp://127.0.0.1:{_free_port()}"
    quiet = {"stdout": subprocess.DEVNULL, "stderr": subprocess.DEVNULL, "start_new_session": True}
    scheduler = subprocess.Popen([sys.executable, "-m", "dask", "scheduler", "--host", "127.0.0.1", "--port",
                                  address.rsplit(":", 1)[1], "--no-dashboard"], **quiet)
    worker = subprocess.Popen([sys.executable, "-m", "dask", "worker", address, "--nworkers", "1", "--nthreads", "1",
                               "--no-dashboard"], cwd=tmp_path, **quiet)
    try:
        with Client(address, timeout=60, set_as_default=False) as client:
            client.wait_for_workers(1, timeout=60)
        time.sleep(0.5)
        yield address, scheduler
    finally:
        for proc in (worker, scheduler):
            with contextlib.suppress(ProcessLookupError):
                os.killpg(proc.pid, signal.SIGKILL)  # SIGKILL ends a stopped process too
            proc.wait(timeout=30)


def _slow_batch(folder: Path, count: int) -> list[str]:
    """SVG files of 150,000 cubic pieces each: a few seconds apiece, so a batch is still running when its
    scheduler is stopped."""
    import random

    rng = random.Random(3)
    d = " ".join(f"M{rng.uniform(0, 900):.2f},{rng.uniform(0, 900):.2f} c1,2 3,4 5,1" for _ in range(150_000))
    text = ('<svg xmlns="http://www.w3.org/2000/svg" width="1000mm" height="1000mm" viewBox="0 0 1000 1000">'
            f'<path d="{d}" stroke="black" fill="none"/></svg>')
    names = []
    for k in range(count):
        (folder / f"panel_{k}.svg").write_text(text)
        names.append(str(folder / f"panel_{k}.svg"))
    return names


@pytest.mark.parametrize("fault", ["kill", "freeze"])
def test_a_scheduler_lost_mid_batch_is_one_line_in_bounded_time(own_cluster, tmp_path: Path, fault: str) -> None:
    # killed: the batch ends at once; frozen (SIGSTOP): no file finishes for --timeout plus the stated grace
    # (30 s), then it ends.  Either way one line says so, every file not answered is named as not measured,
    # the files answered keep their answers, and no traceback from the cluster library reaches the user.
    import subprocess
    import sys
    import time

    from pathlen.cluster import STALL_GRACE_S

    address, scheduler = own_cluster
    files = _slow_batch(tmp_path, 8)
    start = time.monotonic()
    proc = subprocess.Popen([sys.executable, "-m", "pathlen", "measure", "--scheduler", address, "--timeout", "2",
                             "--format", "json", *files], stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    try:
        time.sleep(2.0)
        os.kill(scheduler.pid, signal.SIGKILL if fault == "kill" else signal.SIGSTOP)
        out, err = proc.communicate(timeout=2 + STALL_GRACE_S + 60)
    finally:
        if proc.poll() is None:
            proc.kill()
            proc.communicate()
    took = time.monotonic() - start
    assert proc.returncode == 1
    assert "Traceback" not in err
    cause = "went away mid-batch" if fault == "kill" else "no file finished on the cluster for 32 s"
    summary = [line for line in err.splitlines() if line.startswith("error cluster:")]
    assert len(summary) == 1 and cause in summary[0]
    files_out = json.loads(out)["files"]
    assert [f["path"] for f in files_out] == files
    missed = [f for f in files_out if not f["ok"]]
    assert missed and all(f["error"].startswith("not measured: ") and cause in f["error"] for f in missed)
    assert summary[0].endswith(f"{len(missed)} files not measured")
    assert took < (30 if fault == "kill" else 2 + STALL_GRACE_S + 30)
