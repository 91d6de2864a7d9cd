"""Faults a shop server meets, with real processes and temporary folders: crashes at any point, stops,
orphaned workers, a second service, failures of the surroundings, odd names, full disks, damaged
ledgers, and bad service values.  Every test leaves no process behind."""

import csv
import json
import os
import random
import shutil
import signal
import sqlite3
import subprocess
import sys
import time
from pathlib import Path

import pytest

FIXTURES = Path(__file__).resolve().parent.parent / "fixtures"
GOOD = sorted(p for p in FIXTURES.iterdir() if p.suffix == ".dxf")
PY = sys.executable


def watch(inbox, outbox, *extra, wait=True, timeout=120, capture=False):
    cmd = [PY, "-m", "pathlen", "watch", str(inbox), "--out", str(outbox), "--settle", "0", "--poll", "0.05",
           "--no-events", *map(str, extra)]
    if wait:
        return subprocess.run(cmd, capture_output=True, text=True, timeout=timeout, check=False)
    return subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE if capture else subprocess.DEVNULL,
                            text=True, start_new_session=True)


def slow_svg(path: Path, segments: int = 400_000) -> Path:
    """A drawing that takes a few seconds to measure (many cubic pieces)."""
    with path.open("w") as f:
        f.write('<svg xmlns="http://www.w3.org/2000/svg" width="1000mm" height="1000mm" viewBox="0 0 1000 1000">')
        for k in range(0, segments, 1000):
            d = " ".join(f"C {i % 997} {i * 7 % 991} {i * 3 % 983} {i * 11 % 977} {i * 5 % 971} {i * 13 % 967}"
                         for i in range(k, k + 1000))
            f.write(f'<path d="M 0 0 {d}"/>')
        f.write("</svg>")
    return path


def children_of(pid: int) -> list[int]:
    """Every living process whose parent chain reaches ``pid`` (from /proc)."""
    parent = {}
    for entry in os.listdir("/proc"):
        if entry.isdigit():
            try:
                with open(f"/proc/{entry}/stat") as fh:
                    fields = fh.read().rsplit(")", 1)[1].split()
                if fields[0] != "Z":
                    parent[int(entry)] = int(fields[1])
            except OSError:
                continue
    found, frontier = [], {pid}
    while frontier:
        nxt = {p for p, pp in parent.items() if pp in frontier}
        found += sorted(nxt)
        frontier = nxt
    return found


def alive(pid: int) -> bool:
    try:
        with open(f"/proc/{pid}/stat") as fh:
            return fh.read().rsplit(")", 1)[1].split()[0] != "Z"
    except OSError:
        return False


def summary_rows(outbox: Path) -> list[dict]:
    rows = []
    for f in sorted(outbox.glob("summary-*.csv")):
        with f.open(newline="", encoding="utf-8") as fh:
            rows += list(csv.DictReader(fh))
    return rows


def stop(proc):
    if proc.poll() is None:
        os.killpg(proc.pid, signal.SIGKILL)
    proc.wait(30)


# -- crashes ---------------------------------------------------------------------------------------------
def test_kill_9_campaign_loses_nothing_and_writes_nothing_twice(tmp_path):
    """30 random kill -9 of the service mid-batch: afterwards every file answered exactly once, every failed
    original with its note and summary line, no temporary file, no attempt charged to a job never run."""
    rng = random.Random(4915)
    kills = 0
    for session in range(6):
        inbox, outbox = tmp_path / f"in{session}", tmp_path / f"out{session}"
        inbox.mkdir()
        names = []
        for k in range(10):
            src = GOOD[k % len(GOOD)]
            name = f"job{k}-{src.name}"
            data = src.read_bytes() + f"\n999\nvariant {session}-{k}\n".encode()  # distinct content per file
            (inbox / name).write_bytes(data)
            names.append(name)
        (inbox / "bad1.dxf").write_bytes(b"\x00 no drawing")
        (inbox / "bad2.svg").write_text("<svg")
        for _ in range(5):
            proc = watch(inbox, outbox, "--jobs", "2", wait=False)
            time.sleep(rng.uniform(0.4, 1.6))
            os.killpg(proc.pid, signal.SIGKILL)
            proc.wait(30)
            kills += 1
        done = watch(inbox, outbox, "--once")
        assert done.returncode == 0, done.stderr
        assert sorted(p.name for p in inbox.iterdir()) == []
        results = sorted(p.name for p in (outbox / "results").iterdir())
        assert results == sorted(f"{n}.measure.json" for n in names)
        assert sorted(p.name for p in (outbox / "done").iterdir()) == sorted(names)
        assert sorted(p.name for p in (outbox / "failed").iterdir()) == [
            "bad1.dxf", "bad1.dxf.error.txt", "bad2.svg", "bad2.svg.error.txt"]
        rows = summary_rows(outbox)
        assert sorted(r["path"] for r in rows) == sorted([*names, "bad1.dxf", "bad2.svg"])  # once each
        assert not [p for p in outbox.rglob("*.tmp")]
        db = sqlite3.connect(outbox / ".pathlen" / "ledger.sqlite")
        attempts = [a for (a,) in db.execute("SELECT attempts FROM jobs")]
        db.close()
        assert sum(attempts) <= len(names) + 2 + 2 * 5  # at most the two workers' jobs per kill more than one
    assert kills == 30


def test_open_delivery_is_finished_on_start(tmp_path):
    """A crash right after the ledger recorded a bad file's delivery: the restart writes the note and the
    summary line once and then moves the original."""
    inbox, outbox = tmp_path / "in", tmp_path / "out"
    inbox.mkdir()
    (inbox / "bad.dxf").write_bytes(b"\x00 no drawing")
    first = watch(inbox, outbox, "--once")
    assert first.returncode == 0
    # put the world back as it was just after the intent: original in the inbox, nothing written
    shutil.move(outbox / "failed" / "bad.dxf", inbox / "bad.dxf")
    os.utime(inbox / "bad.dxf", ns=(0, 0))
    (outbox / "failed" / "bad.dxf.error.txt").unlink()
    for f in outbox.glob("summary-*.csv"):
        f.unlink()
    db = sqlite3.connect(outbox / ".pathlen" / "ledger.sqlite")
    db.execute("UPDATE deliveries SET state = 'intent', size = ?, mtime_ns = 0", ((inbox / "bad.dxf").stat().st_size,))
    db.commit()
    db.close()
    (outbox / "results").mkdir(exist_ok=True)
    (outbox / "results" / ".x.dxf.measure.json.ab12cd.tmp").write_text("torn")
    again = watch(inbox, outbox, "--once")
    assert again.returncode == 0, again.stderr
    assert "finished" in again.stderr and "swept" in again.stderr
    assert (outbox / "failed" / "bad.dxf.error.txt").read_text().strip()
    assert not (inbox / "bad.dxf").exists()
    assert [r["path"] for r in summary_rows(outbox)] == ["bad.dxf"]
    assert not list(outbox.rglob("*.tmp"))


# -- stop, orphans, a second service -------------------------------------------------------------------------
def test_sigterm_to_the_group_requeues_the_file_in_hand(tmp_path):
    inbox, outbox = tmp_path / "in", tmp_path / "out"
    inbox.mkdir()
    slow_svg(inbox / "slow.svg")
    proc = watch(inbox, outbox, wait=False, capture=True)
    deadline = time.monotonic() + 30
    while time.monotonic() < deadline and len(children_of(proc.pid)) < 1:
        time.sleep(0.05)
    time.sleep(1.0)
    os.killpg(proc.pid, signal.SIGTERM)  # what a service manager sends on stop
    _, err = proc.communicate(timeout=30)
    assert proc.returncode == 0, err
    assert (inbox / "slow.svg").exists() and not (outbox / "failed").exists()
    db = sqlite3.connect(outbox / ".pathlen" / "ledger.sqlite")
    assert db.execute("SELECT state, attempts FROM jobs").fetchall() == [("queued", 0)]
    db.close()
    done = watch(inbox, outbox, "--once")
    assert done.returncode == 0 and (outbox / "results" / "slow.svg.measure.json").exists()


@pytest.mark.parametrize("command", ["watch", "measure"])
def test_workers_die_with_their_parent(tmp_path, command):
    inbox = tmp_path / "in"
    inbox.mkdir()
    slow = slow_svg(inbox / "slow.svg", 1_500_000)
    if command == "watch":
        proc = watch(inbox, tmp_path / "out", wait=False)
    else:
        proc = subprocess.Popen([PY, "-m", "pathlen", "measure", str(slow)], stdout=subprocess.DEVNULL,
                                stderr=subprocess.DEVNULL, start_new_session=True)
    deadline = time.monotonic() + 30
    workers: list[int] = []
    while time.monotonic() < deadline and not workers:
        workers = children_of(proc.pid)
        time.sleep(0.05)
    assert workers
    proc.kill()  # the parent alone, as a script's timeout does
    proc.wait(30)
    deadline = time.monotonic() + 5
    while time.monotonic() < deadline and any(alive(w) for w in workers):
        time.sleep(0.05)
    try:
        assert not any(alive(w) for w in workers)
    finally:
        for w in workers:
            if alive(w):
                os.kill(w, signal.SIGKILL)


def test_a_second_service_on_the_same_inbox_or_ledger_is_refused(tmp_path):
    inbox, outbox = tmp_path / "in", tmp_path / "out"
    inbox.mkdir()
    first = watch(inbox, outbox, wait=False)
    try:
        time.sleep(1.5)
        second = watch(inbox, tmp_path / "other", "--once")
        assert second.returncode == 2 and "already serving the inbox" in second.stderr
        other_inbox = tmp_path / "in2"
        other_inbox.mkdir()
        third = watch(other_inbox, outbox, "--once")
        assert third.returncode == 2 and "already serving the ledger" in third.stderr
        assert "Traceback" not in second.stderr + third.stderr
    finally:
        stop(first)


# -- what is remembered ------------------------------------------------------------------------------------
def test_a_limit_failure_is_not_remembered_for_the_content(tmp_path):
    inbox, outbox = tmp_path / "in", tmp_path / "out"
    inbox.mkdir()
    slow_svg(inbox / "slow.svg", 200_000)
    shutil.copy(inbox / "slow.svg", tmp_path / "copy.svg")
    short = watch(inbox, outbox, "--once", "--timeout", "0.3")
    assert short.returncode == 0
    assert "time limit" in (outbox / "failed" / "slow.svg.error.txt").read_text()
    shutil.copy(tmp_path / "copy.svg", inbox / "again.svg")
    again = watch(inbox, outbox, "--once", "--timeout", "0.3")
    assert "answered" not in again.stderr  # measured again, not answered from the ledger
    shutil.copy(tmp_path / "copy.svg", inbox / "third.svg")
    long = watch(inbox, outbox, "--once")
    assert (outbox / "results" / "third.svg.measure.json").exists(), long.stderr


def test_hashing_reads_in_blocks(tmp_path):
    import tracemalloc

    from pathlen.watch.service import content_hash

    big = tmp_path / "big.dxf"
    with big.open("wb") as fh:
        fh.truncate(300 * 1024 * 1024)  # sparse: 300 MB of zeros
    tracemalloc.start()
    content_hash(big)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    assert peak < 8 * 1024 * 1024


# -- names -------------------------------------------------------------------------------------------------
def test_names_never_share_a_result(tmp_path):
    inbox, outbox = tmp_path / "in", tmp_path / "out"
    inbox.mkdir()
    names = ["Blech-Ä.dxf", "Blech-Ö.dxf", "part#1.dxf", "part_1.dxf", "x" * 230 + "a.dxf", "x" * 230 + "b.dxf"]
    for k, n in enumerate(names):
        (inbox / n).write_bytes(GOOD[k % len(GOOD)].read_bytes())
    raw = os.fsencode(inbox) + b"/Blech-\xc4-latin1.dxf"  # not UTF-8
    with open(raw, "wb") as fh:
        fh.write(GOOD[0].read_bytes())
    (inbox / "line\nbreak.dxf").write_bytes(GOOD[1].read_bytes())
    done = watch(inbox, outbox, "--once")
    assert done.returncode == 0, done.stderr
    results = list((outbox / "results").iterdir())
    assert len(results) == 8 and len({p.name for p in results}) == 8
    assert not list(inbox.iterdir())
    for line in done.stderr.splitlines():  # one event per line: a newline in a name cannot forge one
        assert line[:2].isdigit(), line
    assert len([r for r in summary_rows(outbox) if r["ok"] == "true"]) == 8
    # the same name again with new content: a new version beside the old result
    (inbox / "part_1.dxf").write_bytes(GOOD[2].read_bytes())
    again = watch(inbox, outbox, "--once")
    assert again.returncode == 0
    versions = sorted(p.name for p in (outbox / "results").iterdir() if p.name.startswith("part_1.dxf"))
    assert versions == ["part_1.dxf.measure (2).json", "part_1.dxf.measure.json"]
    doc = json.loads((outbox / "results" / "part_1.dxf.measure (2).json").read_text())
    assert doc["source"]["moved_to"] == "done/part_1 (2).dxf" and len(doc["source"]["sha256"]) == 64


# -- operational faults: one line, keep serving --------------------------------------------------------------
def test_damaged_ledger_is_one_line(tmp_path):
    inbox, outbox = tmp_path / "in", tmp_path / "out"
    inbox.mkdir()
    (outbox / ".pathlen").mkdir(parents=True)
    (outbox / ".pathlen" / "ledger.sqlite").write_bytes(b"this is not a database" * 100)
    done = watch(inbox, outbox, "--once")
    assert done.returncode == 2
    assert "damaged" in done.stderr and "move it aside" in done.stderr and "Traceback" not in done.stderr


def test_unwritable_results_folder_keeps_the_files(tmp_path):
    inbox, outbox = tmp_path / "in", tmp_path / "out"
    inbox.mkdir()
    outbox.mkdir()
    (outbox / "results").write_text("a file where the results folder should be")
    shutil.copy(GOOD[0], inbox / "a.dxf")
    done = watch(inbox, outbox, "--once")
    assert done.returncode == 1
    assert "fault" in done.stderr and "Traceback" not in done.stderr
    assert (inbox / "a.dxf").exists()  # nothing lost: the original stays for the next run
    (outbox / "results").unlink()
    again = watch(inbox, outbox, "--once")
    assert again.returncode == 0 and (outbox / "results" / "a.dxf.measure.json").exists()
    assert [r["path"] for r in summary_rows(outbox)] == ["a.dxf"]


@pytest.mark.skipif(os.geteuid() != 0, reason="mounting a small tmpfs needs root (CI runs as root)")
def test_full_disk_is_one_line_and_nothing_is_torn(tmp_path):
    outbox = tmp_path / "out"
    outbox.mkdir()
    mounted = subprocess.run(["mount", "-t", "tmpfs", "-o", "size=256k", "tmpfs", str(outbox)],
                             capture_output=True, check=False)
    if mounted.returncode != 0:
        pytest.skip(f"cannot mount a tmpfs here: {mounted.stderr.decode().strip()}")
    try:
        inbox = tmp_path / "in"
        inbox.mkdir()
        (inbox / "big.dxf").write_bytes(GOOD[-1].read_bytes() + b"\n999\n" + b"x" * 400_000 + b"\n")
        done = watch(inbox, outbox, "--once")
        assert "Traceback" not in done.stderr
        assert (inbox / "big.dxf").exists() or (outbox / "failed" / "big.dxf").exists()
        assert not [p for p in outbox.rglob("*.tmp")]
    finally:
        subprocess.run(["umount", str(outbox)], check=False)


# -- parity with the commands ----------------------------------------------------------------------------
def test_cut_task_takes_the_commands_options(tmp_path):
    inbox, outbox = tmp_path / "in", tmp_path / "out"
    (inbox / "laser").mkdir(parents=True)
    shutil.copy(FIXTURES / "kl101_bracket.dxf", inbox / "laser" / "bracket.dxf")
    config = tmp_path / "service.toml"
    config.write_text('[folder."laser"]\ntask = "cut"\nprofile = "steel-3mm-laser"\nengrave = ["ENGRAVE"]\n'
                      "quantity = 4\n")
    done = watch(inbox, outbox, "--once", "--config", config)
    assert done.returncode == 0, done.stderr
    served = json.loads((outbox / "results" / "laser" / "bracket.dxf.cut.json").read_text())
    cli = subprocess.run([PY, "-m", "pathlen", "cut", str(FIXTURES / "kl101_bracket.dxf"), "--profile",
                          "steel-3mm-laser", "--engrave", "ENGRAVE", "-q", "4", "--format", "json"],
                         capture_output=True, text=True, check=True)
    direct = json.loads(cli.stdout)
    for key in ("pierces", "cut_length", "engrave_length", "quantity"):
        assert served["files"][0][key] == direct["files"][0][key]
    assert served["total"]["cost"] == direct["total"]["cost"]
    assert served["source"]["moved_to"] == "done/laser/bracket.dxf"
    assert "cost" in summary_rows(outbox)[0]["headline"]


@pytest.mark.parametrize("body, words", [
    ('[folder."x"]\ntask = 5\n', "task must be one of"),
    ('folder = 5\n', "folder must be tables"),
    ('[folder."x"]\ntask = "cut"\nprofile = "steel-3mm-laser"\nquantity = nan\n', "quantity"),
    ('[folder."x"]\ntask = "cut"\nprofile = "steel-3mm-laser"\nlayers = 5\n', "layers"),
    ('[folder."x"]\ntask = "seam"\nstitch = [301]\n', "stitch"),
    ('[folder."x"]\ntask = "bead"\nbead = "rect:12x6"\nwaste = inf\n', "waste"),
    ('[folder."x"]\ntask = "measure"\nprofile = "a"\n', "not an option"),
    ('a = ' + "[" * 3000 + "]" * 3000 + "\n", "nested too deeply"),
])
def test_bad_service_values_are_one_line(tmp_path, body, words):
    inbox = tmp_path / "in"
    inbox.mkdir()
    config = tmp_path / "service.toml"
    config.write_text(body)
    done = watch(inbox, tmp_path / "out", "--once", "--config", config)
    assert done.returncode == 2
    assert words in done.stderr and "service.toml" in done.stderr and "Traceback" not in done.stderr


@pytest.mark.parametrize("plan, words", [("seam = 5\n", "seam must be"),
                                         ('[[seam]]\npiece = "A"\nstitch = [301]\n', "stitch"),
                                         ('[[seam]]\npiece = "A"\nspc = inf\n', "spc")])
def test_bad_seam_plan_values_are_one_line(tmp_path, plan, words):
    from click.testing import CliRunner

    from pathlen.cli import main

    path = tmp_path / "plan.toml"
    path.write_text(plan)
    result = CliRunner().invoke(main, ["seam", str(FIXTURES / "kl610_tote_bag.dxf"), "--plan", str(path)])
    assert result.exit_code == 2 and words in result.output and "Traceback" not in result.output


def test_bad_bead_plan_value_is_one_line(tmp_path):
    from click.testing import CliRunner

    from pathlen.cli import main

    path = tmp_path / "plan.toml"
    path.write_text("joint = 5\n")
    result = CliRunner().invoke(main, ["bead", str(FIXTURES / "kl520_office_windows.dxf"), "--plan", str(path)])
    assert result.exit_code == 2 and "joint must be" in result.output


def test_no_process_is_left_behind():
    """Runs last of the whole suite (conftest orders it): nothing the suite started is still running."""
    import multiprocessing.resource_tracker as rt

    tracker = getattr(rt, "_resource_tracker", None)
    if tracker is not None and hasattr(tracker, "_stop"):
        tracker._stop()  # multiprocessing's own helper, started by any pool in this process
    deadline = time.monotonic() + 10
    while time.monotonic() < deadline and children_of(os.getpid()):
        time.sleep(0.1)
    assert children_of(os.getpid()) == []
