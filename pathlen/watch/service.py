"""The watch loop: find settled drawings, answer known ones from the ledger, run the rest in worker
processes under the per-file limits, write results atomically, move originals, log.

Order per job, so that a crash at any point loses nothing and writes nothing twice: the ledger
records the job as running; the worker measures; the ledger records the result; the result file is
written (skipped if an identical one is there); the original is moved.  On start, jobs a crash left
running are queued again; their files are still in the inbox, or their result is in the ledger.
"""

from __future__ import annotations

import hashlib
import json
import signal
import sys
import threading
import time
from dataclasses import dataclass, field
from pathlib import Path

from pathlen.batch import Limits, run_batch
from pathlen.watch.ledger import MAX_ATTEMPTS, Ledger
from pathlen.watch.outputs import append_summary, inside, move_unique, safe_relative, same_content, write_atomic
from pathlen.watch.scan import Candidate, Settling, scan
from pathlen.watch.tasks import Task


@dataclass(frozen=True)
class WatchConfig:
    inbox: Path
    outbox: Path
    state: Path
    #: the task per sub-folder of the inbox ("" for every other file)
    tasks: dict[str, Task]
    poll_s: float = 2.0
    settle_s: float = 2.0
    jobs: int = 1
    limits: Limits = field(default_factory=Limits)
    keep: bool = False
    once: bool = False
    events: bool = True
    log_json: bool = False
    csv: bool = False
    #: a Dask scheduler's address: jobs run on that cluster (its workers read the inbox at the same path)
    scheduler: str | None = None


def check_folders(inbox: Path, outbox: Path) -> None:
    """The inbox must exist, and inbox and outbox must not lie inside each other."""
    if not inbox.is_dir():
        raise ValueError(f"inbox {inbox} is not a folder")
    a, b = inbox.resolve(), outbox.resolve()
    if a == b or a in b.parents or b in a.parents:
        raise ValueError("the inbox and the outbox must not overlap")


class Service:
    def __init__(self, cfg: WatchConfig) -> None:
        check_folders(cfg.inbox, cfg.outbox)
        self.cfg = cfg
        cfg.outbox.mkdir(parents=True, exist_ok=True)
        self.ledger = Ledger(cfg.state / "ledger.sqlite")
        self.settling = Settling(cfg.settle_s)
        self.stop = threading.Event()
        self.wake = threading.Event()
        self.retries: dict[str, int] = {}
        self.client = None
        if cfg.scheduler:
            from pathlen.cluster import connect

            self.client = connect(cfg.scheduler)  # ClusterError when it cannot be reached

    # -- logging --------------------------------------------------------------------------
    def log(self, event: str, **fields: object) -> None:
        if self.cfg.log_json:
            line = json.dumps({"time": time.strftime("%Y-%m-%dT%H:%M:%S"), "event": event, **fields})
        else:
            line = " ".join([time.strftime("%H:%M:%S"), event, *(f"{k}={v}" for k, v in fields.items())])
        print(line, file=sys.stderr, flush=True)

    # -- the loop -------------------------------------------------------------------------
    def run(self) -> int:
        for job in self.ledger.recover():
            self.log("requeued", path=job.path, attempts=job.attempts)
        observer = self._observer() if self.cfg.events and not self.cfg.once else None
        for sig in (signal.SIGTERM, signal.SIGINT):
            signal.signal(sig, lambda *_: (self.stop.set(), self.wake.set()))
        self.log("watching", inbox=str(self.cfg.inbox), outbox=str(self.cfg.outbox),
                 tasks=",".join(f"{k or '*'}:{t.name}" for k, t in self.cfg.tasks.items()))
        try:
            while not self.stop.is_set():
                ready, waiting = self.settling.ready([c for c in scan(self.cfg.inbox) if not self._seen(c)])
                if ready:
                    groups: dict[str, list[Candidate]] = {}
                    for c in ready:
                        groups.setdefault(self.folder_of(c), []).append(c)
                    for folder, members in groups.items():
                        self.process(members, self.cfg.tasks[folder])
                    continue
                if self.cfg.once and waiting == 0:
                    break
                self.wake.wait(min(self.cfg.poll_s, self.cfg.settle_s / 2) if waiting else self.cfg.poll_s)
                self.wake.clear()
        finally:
            if observer is not None:
                observer.stop()
                observer.join(5)
            self.ledger.close()
            if self.client is not None:
                self.client.close()
        self.log("stopped")
        return 0

    def _observer(self) -> object | None:
        """Change events wake the loop early (where the file system delivers them); polling stays the net."""
        try:
            from watchdog.events import FileSystemEventHandler
            from watchdog.observers import Observer
        except ImportError:
            return None
        wake = self.wake

        class Handler(FileSystemEventHandler):
            def on_any_event(self, event: object) -> None:
                wake.set()

        observer = Observer()
        observer.schedule(Handler(), str(self.cfg.inbox), recursive=True)
        observer.start()
        return observer

    def folder_of(self, c: Candidate) -> str:
        """The service-file folder a file belongs to ("" for the default task)."""
        head, sep, _ = c.rel.partition("/")
        return head if sep and head in self.cfg.tasks else ""

    def _seen(self, c: Candidate) -> bool:
        return self.cfg.keep and self.ledger.seen(c.rel, c.size, c.mtime_ns)

    # -- one round ------------------------------------------------------------------------
    def process(self, ready: list[Candidate], task: Task) -> None:
        to_run: list[tuple[Candidate, str]] = []
        running: set[str] = set()
        twins: list[tuple[Candidate, str]] = []  # same content as a file run in this round: answered after it
        for c in ready:
            if self.stop.is_set():
                return
            try:
                digest = hashlib.sha256(c.path.read_bytes()).hexdigest()
            except OSError as exc:
                self.log("unreadable", path=c.rel, error=exc.strerror or str(exc))
                self.settling.forget(c.rel)
                continue
            key = f"{digest}|{task.name}|{task.options_key}"
            job = self.ledger.job(key)
            if key in running:
                twins.append((c, key))
            elif job is not None and job.state in ("done", "failed"):
                self.deliver(c, key, job.state == "done", job.result, job.error, True, task)
            else:
                self.ledger.start(key, c.rel, task.name)
                to_run.append((c, key))
                running.add(key)
        if to_run:
            self._run(to_run, task)
        for c, key in twins:
            job = self.ledger.job(key)
            if job is not None and job.state in ("done", "failed") and not self.stop.is_set():
                self.deliver(c, key, job.state == "done", job.result, job.error, True, task)
            else:
                self.settling.forget(c.rel)  # taken again in the next round

    def _run(self, to_run: list[tuple[Candidate, str]], task: Task) -> None:
        """Run the jobs in worker processes and deliver each result as it finishes."""
        paths = [str(c.path) for c, _ in to_run]
        if self.client is not None:
            from pathlen.cluster import run_on_cluster

            batch = run_on_cluster(self.client, paths, task.settings, task.work, task.failed, self.cfg.limits)
        else:
            batch = run_batch(paths, task.settings, self.cfg.jobs, task.work, task.failed, self.cfg.limits)
        for i, result in batch:
            c, key = to_run[i]
            if not result.ok and self._retry_later(c):
                self.ledger.finish(key, False, None, None)
                self.ledger.db.execute("UPDATE jobs SET state = 'queued' WHERE key = ?", (key,))
                self.log("retry", path=c.rel, error=result.error)
                self.settling.forget(c.rel)
                continue
            text = json.dumps(task.document(result), indent=2) + "\n"
            self.ledger.finish(key, result.ok, text if result.ok else None, result.error)
            table = task.csv(result) if self.cfg.csv and task.csv and result.ok else None
            self.deliver(c, key, result.ok, text if result.ok else None, result.error, False, task, table)
            if self.stop.is_set():  # the rest stay queued in the ledger and their files in the inbox
                for _, other in to_run:
                    self.ledger.db.execute("UPDATE jobs SET state = 'queued' WHERE key = ? AND state = 'running'",
                                           (other,))
                self.log("stopping", requeued="the jobs not finished")
                break

    def _retry_later(self, c: Candidate) -> bool:
        """A file that failed while it was written to recently gets another settle period (bounded)."""
        try:
            age = time.time() - c.path.stat().st_mtime
        except OSError:
            return False
        tries = self.retries.get(c.rel, 0)
        if age < 3 * self.cfg.settle_s and tries < MAX_ATTEMPTS - 1:
            self.retries[c.rel] = tries + 1
            return True
        return False

    def deliver(self, c: Candidate, key: str, ok: bool, text: str | None, error: str | None, answered: bool,
                task_of: Task, table: str | None = None) -> None:
        """Result (or error note) into the outbox, the original moved (or kept), the summary line."""
        out = self.cfg.outbox
        rel = safe_relative(c.rel)
        task = task_of.name
        result_path = None
        if ok and text is not None:
            result_path = inside(out, out / "results" / rel.parent / f"{rel.name}.{task}.json")
            if not same_content(result_path, text):
                write_atomic(result_path, text)
            if table is not None:
                write_atomic(result_path.with_suffix(".csv"), table)
            destination = out / "done" / rel
        else:
            destination = out / "failed" / rel
        if self.cfg.keep:
            self.ledger.mark_seen(c.rel, c.size, c.mtime_ns, key)
        elif c.path.exists():
            moved = move_unique(c.path, inside(out, destination))
            if not ok:
                write_atomic(moved.with_name(moved.name + ".error.txt"), (error or "failed") + "\n")
        elif not ok:
            note = inside(out, destination.with_name(destination.name + ".error.txt"))
            write_atomic(note, (error or "failed") + "\n")
        self.settling.forget(c.rel)
        append_summary(out, {"time": time.strftime("%Y-%m-%dT%H:%M:%S"), "path": c.rel, "task": task,
                             "ok": str(ok).lower(), "error": error or "",
                             "result": str(result_path.relative_to(out)) if result_path else ""})
        self.log("answered" if answered else ("done" if ok else "failed"), path=c.rel,
                 **({"error": error} if not ok else {}))


def status(outbox: Path, state: Path | None = None) -> str:
    """Counts by state and the last failures, from the ledger."""
    path = (state or outbox / ".pathlen") / "ledger.sqlite"
    if not path.exists():
        return f"no ledger at {path}"
    ledger = Ledger(path)
    try:
        counts = ledger.counts()
        lines = [f"jobs: {', '.join(f'{k} {v}' for k, v in sorted(counts.items())) or 'none'}"]
        for p, e in ledger.last_failures():
            lines.append(f"failed {p}: {e}")
        return "\n".join(lines)
    finally:
        ledger.close()
