"""The folder service with real files and real processes: no result lost, none written twice."""

import json
import os
import shutil
import signal
import subprocess
import sys
import threading
import time
from pathlib import Path

import ezdxf
import pytest

FIXTURES = Path(__file__).resolve().parent.parent / "fixtures"
GOOD = sorted(p for p in FIXTURES.iterdir() if p.suffix in (".dxf", ".svg"))


def service(inbox, outbox, *extra, wait=True, timeout=60):
    cmd = [sys.executable, "-m", "pathlen", "watch", str(inbox), "--out", str(outbox), "--settle", "0.2",
           "--poll", "0.05", *map(str, extra)]
    if wait:
        return subprocess.run(cmd, capture_output=True, text=True, timeout=timeout, check=False)
    return subprocess.Popen(cmd, stderr=subprocess.PIPE, text=True)


def fill(inbox, copies=3):
    """``copies`` of each demo drawing under distinct names (the later ones duplicates), two bad files."""
    names = []
    for k in range(copies):
        for p in GOOD:
            target = inbox / f"batch{k}" / p.name
            target.parent.mkdir(parents=True, exist_ok=True)
            shutil.copy(p, target)
            names.append(target.relative_to(inbox).as_posix())
    (inbox / "broken.dxf").write_bytes(b"\x00not a drawing\xff")
    (inbox / "empty.svg").write_text("")
    (inbox / "notes.txt").write_text("ignored: not a drawing")
    (inbox / "upload.dxf.part").write_text("ignored: a copy in progress")
    return names


def results(outbox):
    return sorted(p.relative_to(outbox / "results").as_posix() for p in (outbox / "results").rglob("*.json"))


def test_once_with_200_files_bad_ones_duplicates_and_a_slow_copy(tmp_path):
    inbox, outbox = tmp_path / "in", tmp_path / "out"
    inbox.mkdir()
    names = fill(inbox, copies=33)  # 198 good files (6 distinct contents) and 2 bad ones
    slow = inbox / "slow" / "bracket.dxf"
    slow.parent.mkdir()
    data = (FIXTURES / "kl101_bracket.dxf").read_bytes()

    def copy_slowly():
        with slow.open("wb") as fh:
            for k in range(0, len(data), len(data) // 5 + 1):
                fh.write(data[k:k + len(data) // 5 + 1])
                fh.flush()
                time.sleep(0.12)

    writer = threading.Thread(target=copy_slowly)
    writer.start()
    done = service(inbox, outbox, "--once", "--jobs", "2")
    writer.join()
    assert done.returncode == 0, done.stderr
    expected = sorted(f"{n}.measure.json" for n in [*names, "slow/bracket.dxf"])
    assert results(outbox) == expected  # every good file exactly one result, the slow copy whole
    for name in expected:
        doc = json.loads((outbox / "results" / name).read_text())
        assert doc["files"][0]["ok"] is True
    assert json.loads((outbox / "results" / "slow/bracket.dxf.measure.json").read_text())["files"][0]["length"] == \
        pytest.approx(json.loads((outbox / "results" / "batch0/kl101_bracket.dxf.measure.json").read_text())
                      ["files"][0]["length"])
    assert (outbox / "failed" / "broken.dxf.error.txt").read_text().strip()
    assert (outbox / "failed" / "empty.svg.error.txt").read_text().strip() == "empty file"
    assert done.stderr.count("answered") >= len(GOOD)  # the duplicates came from the ledger
    assert sorted(p.name for p in inbox.rglob("*") if p.is_file()) == ["notes.txt", "upload.dxf.part"]
    summary = next(outbox.glob("summary-*.csv")).read_text().splitlines()
    assert len(summary) == 1 + len(expected) + 2
    status = subprocess.run([sys.executable, "-m", "pathlen", "watch", "--status", str(outbox)],
                            capture_output=True, text=True, check=True).stdout
    assert "failed 2" in status and "broken.dxf" in status


def test_kill_9_in_the_middle_loses_nothing_and_repeats_nothing(tmp_path):
    inbox, outbox = tmp_path / "in", tmp_path / "out"
    inbox.mkdir()
    names = []
    for k in range(40):  # distinct contents: every file is a job of its own
        doc = ezdxf.new()
        doc.header["$INSUNITS"] = 4
        doc.modelspace().add_circle((0, 0), 1 + k)
        path = inbox / f"part{k:02d}.dxf"
        doc.saveas(path)
        names.append(path.name)
    torn: list[str] = []
    stop = threading.Event()

    def reader():  # no half-written result may ever be visible under its own name
        while not stop.is_set():
            for p in (outbox / "results").glob("*.json") if (outbox / "results").exists() else []:
                try:
                    json.loads(p.read_text())
                except FileNotFoundError:
                    continue
                except json.JSONDecodeError:
                    torn.append(p.name)
            time.sleep(0.005)

    watcher = threading.Thread(target=reader)
    watcher.start()
    proc = service(inbox, outbox, "--no-events", wait=False)
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline and len(results(outbox) if (outbox / "results").exists() else []) < 10:
        time.sleep(0.02)
    proc.send_signal(signal.SIGKILL)
    proc.wait()
    proc.stderr.close()
    assert 10 <= len(results(outbox)) < 40  # killed in the middle
    again = service(inbox, outbox, "--once")
    stop.set()
    watcher.join()
    assert again.returncode == 0, again.stderr
    assert results(outbox) == sorted(f"{n}.measure.json" for n in names)
    assert sorted(p.name for p in (outbox / "done").iterdir()) == sorted(names)  # no "(2)" copies
    assert not any(inbox.iterdir())
    assert torn == []


def test_a_drawing_past_the_memory_limit_fails_alone(tmp_path):
    inbox, outbox = tmp_path / "in", tmp_path / "out"
    inbox.mkdir()
    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 4
    doc.blocks.new("HOLE").add_circle((0, 0), 1.0)
    doc.modelspace().add_blockref("HOLE", (0, 0), dxfattribs={
        "row_count": 2000, "column_count": 2000, "row_spacing": 3.0, "column_spacing": 3.0})
    doc.saveas(inbox / "huge.dxf")
    shutil.copy(FIXTURES / "kl101_bracket.dxf", inbox / "bracket.dxf")
    done = service(inbox, outbox, "--once", "--task", "cut", "--profile", "steel-3mm-laser", "--max-memory", "300")
    assert done.returncode == 0, done.stderr
    assert results(outbox) == ["bracket.dxf.cut.json"]
    assert "memory limit of 300 MB" in (outbox / "failed" / "huge.dxf.error.txt").read_text()


def test_polling_service_answers_files_dropped_later_and_stops_on_sigterm(tmp_path):
    inbox, outbox = tmp_path / "in", tmp_path / "out"
    inbox.mkdir()
    proc = service(inbox, outbox, "--no-events", "--keep", wait=False)
    time.sleep(0.5)
    odd = inbox / "Kunde [A] ünïcode.dxf"
    shutil.copy(FIXTURES / "kl214_gasket.dxf", odd)
    deadline = time.monotonic() + 30
    while time.monotonic() < deadline and not ((outbox / "results").exists() and results(outbox)):
        time.sleep(0.05)
    proc.send_signal(signal.SIGTERM)
    _, err = proc.communicate(timeout=30)
    assert proc.returncode == 0, err
    # a safe name inside the outbox, with a short hash of the real name (cleaning lost characters)
    [name] = results(outbox)
    assert name.startswith("Kunde _A_ _n_code~") and name.endswith(".dxf.measure.json")
    assert odd.exists()  # --keep leaves the original, and the ledger remembers it


def test_inbox_and_outbox_must_not_overlap(tmp_path):
    (tmp_path / "in").mkdir()
    done = service(tmp_path / "in", tmp_path / "in" / "out", "--once")
    assert done.returncode == 2 and "overlap" in done.stderr
    assert os.path.exists(tmp_path / "in")


def test_service_file_maps_folders_to_tasks_and_csv(tmp_path):
    inbox, outbox = tmp_path / "in", tmp_path / "out"
    (inbox / "steel-3mm").mkdir(parents=True)
    (inbox / "sealing").mkdir()
    shutil.copy(FIXTURES / "kl101_bracket.dxf", inbox / "steel-3mm" / "bracket.dxf")
    shutil.copy(FIXTURES / "kl520_office_windows.dxf", inbox / "sealing" / "windows.dxf")
    shutil.copy(FIXTURES / "kl214_gasket.dxf", inbox / "gasket.dxf")
    config = tmp_path / "service.toml"
    config.write_text('[folder."steel-3mm"]\ntask = "cut"\nprofile = "steel-3mm-laser"\n\n'
                      '[folder."sealing"]\ntask = "bead"\nbead = "rect:12x6"\n')
    done = service(inbox, outbox, "--once", "--config", config, "--csv")
    assert done.returncode == 0, done.stderr
    assert set(results(outbox)) == {"gasket.dxf.measure.json", "steel-3mm/bracket.dxf.cut.json",
                                    "sealing/windows.dxf.bead.json"}
    cut = json.loads((outbox / "results" / "steel-3mm" / "bracket.dxf.cut.json").read_text())
    assert cut["format"] == "pathlen-cut"
    assert (outbox / "results" / "sealing" / "windows.dxf.bead.csv").read_text().startswith("record,path,joint,section")
    bad = tmp_path / "bad.toml"
    bad.write_text('[folder."x"]\ntask = "cut"\n')
    refused = service(inbox, outbox, "--once", "--config", bad)
    assert refused.returncode == 2 and "needs profile" in refused.stderr
