"""Limits per file in a batch: a stalled file, a memory hog and a dying worker fail alone."""

import json
import math
import os
import signal
import time

import ezdxf
import pytest

from pathlen.batch import FileResult, Limits, MeasureSettings, measure_file, one_line_failure, run_batch
from pathlen.cli import main
from tests.drawings import line_dxf


def flaky_work(path: str, settings: MeasureSettings) -> FileResult:
    """Measures real files; 'stall' sleeps in C, 'die' is killed as the out-of-memory killer would."""
    name = os.path.basename(path)
    if name == "stall.dxf":
        time.sleep(3600)
    if name == "die.dxf":
        os.kill(os.getpid(), signal.SIGKILL)
    if name == "hog.dxf":
        return one_line_failure(path, lambda: bytearray(8 * 1024**3), FileResult)
    return measure_file(path, settings)


@pytest.fixture
def good(tmp_path):
    return str(line_dxf(tmp_path / "good.dxf"))


@pytest.mark.parametrize("jobs", [1, 2])
def test_stalled_dying_and_hungry_files_fail_alone(good, jobs):
    paths = [good, "stall.dxf", good, "die.dxf", good, "hog.dxf", good]
    start = time.monotonic()
    results = dict(run_batch(paths, MeasureSettings(), jobs, flaky_work, FileResult,
                             Limits(timeout_s=2.0, max_memory_mb=512)))
    elapsed = time.monotonic() - start
    assert sorted(results) == list(range(len(paths)))
    for i in (0, 2, 4, 6):
        assert results[i].ok and results[i].length_mm == 10.0
    assert results[1].error == "stopped after 2 s: the time limit per file (--timeout)"
    assert "died with signal SIGKILL" in results[3].error
    assert results[5].error == "needed more than the memory limit of 512 MB per file (--max-memory)"
    assert elapsed < 2.0 + 10.0  # the timeout plus a few seconds for the rest


def test_memory_limit_stops_a_real_drawing(runner, good, tmp_path):
    # 4 million circles by one MINSERT: written out for the contour count, far beyond 300 MB
    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 4
    doc.blocks.new("HOLE").add_circle((0, 0), 1.0)
    doc.modelspace().add_blockref("HOLE", (0, 0), dxfattribs={
        "row_count": 2000, "column_count": 2000, "row_spacing": 3.0, "column_spacing": 3.0})
    big = tmp_path / "big.dxf"
    doc.saveas(big)
    res = runner.invoke(main, ["measure", good, str(big), "--max-memory", "300", "--format", "json"])
    assert res.exit_code == 0
    files = {os.path.basename(f["path"]): f for f in json.loads(res.stdout)["files"]}
    assert files["good.dxf"]["ok"]
    # measure keeps the exact length (measured as instances) and says the contours could not be counted
    assert files["big.dxf"]["ok"] and files["big.dxf"]["contours"] == {"closed": None, "open": None}
    assert files["big.dxf"]["length"] == pytest.approx(4e6 * 2 * math.pi, rel=1e-12)  # circle 2πr
    assert any("needed more than the memory limit of 300 MB per file (--max-memory)" in w
               for w in files["big.dxf"]["warnings"])
    # the cut estimate needs the copies: there the file fails, naming the limit
    res = runner.invoke(main, ["cut", good, str(big), "--profile", "steel-3mm-laser", "--max-memory", "300",
                               "--format", "json"])
    assert res.exit_code == 1
    files = {os.path.basename(f["path"]): f for f in json.loads(res.stdout)["files"]}
    assert files["good.dxf"]["ok"]
    assert files["big.dxf"]["error"] == ("needed more than the memory limit of 300 MB per file (--max-memory) "
                                         "while reading the drawing")  # the step named


def test_heap_handed_back_after_steps_on_big_drawings_only(monkeypatch):
    # malloc_trim after a step on a drawing of BIG_DRAWING_SEGMENTS segments or more, never on a small
    # one (a small file's batch would pay the call for nothing)
    import pathlen.batch as batch

    calls = []
    monkeypatch.setattr(batch, "_call_glibc", lambda name, *args: calls.append((name, args)))
    batch.give_back_heap(batch.BIG_DRAWING_SEGMENTS - 1)
    batch.give_back_heap(batch.BIG_DRAWING_SEGMENTS)
    assert calls == [("malloc_trim", (0,))]


def marking_work(path: str, settings: MeasureSettings) -> FileResult:
    """Measures the file after leaving a mark beside it: shows when a worker took it."""
    with open(path + ".taken", "w"):
        pass
    return measure_file(path, settings)


@pytest.mark.parametrize("jobs", [1, 2])
def test_workers_take_their_first_files_before_the_results_are_asked_for(tmp_path, jobs):
    # run_batch hands each worker its first file before it returns: the caller's own start-up (the
    # report's libraries) overlaps the work; every file is still answered once, in the queue's order
    paths = [str(line_dxf(tmp_path / f"part{i}.dxf")) for i in range(3)]
    told: list[int] = []
    batch = run_batch(paths, MeasureSettings(), jobs, marking_work, FileResult, started=told.append)
    assert told == list(range(jobs))
    deadline = time.monotonic() + 30.0
    while not all(os.path.exists(p + ".taken") for p in paths[:jobs]) and time.monotonic() < deadline:
        time.sleep(0.01)
    assert all(os.path.exists(p + ".taken") for p in paths[:jobs])  # taken without a result asked for
    assert not os.path.exists(paths[2] + ".taken")
    results = dict(batch)
    assert sorted(results) == [0, 1, 2] and told == [0, 1, 2]
    assert all(r.ok and r.length_mm == 10.0 for r in results.values())
