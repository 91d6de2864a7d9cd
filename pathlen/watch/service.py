"""The watch loop: find settled drawings, answer known ones from the ledger, run the rest in worker
processes under the per-file limits, deliver results, move originals, log.

Order of effects, so that a crash at any point loses nothing and writes nothing twice:

1. the ledger records the job as queued; a worker taking it marks it running (an attempt);
2. the ledger records the answer: done or failed (the content's own answer, remembered), or error (a
   limit, a dead worker, a vanished file, a lost cluster: reported, never remembered);
3. the ledger records the delivery's intent: the result or note file and the original's new place;
4. the result (or error note) is written atomically, then the summary line (once per delivery);
5. the original is moved (or, with ``--keep``, remembered as seen); the delivery is closed.

On start the service sweeps temporary files, queues jobs a crash left running and finishes every
delivery the ledger holds open.  One service per inbox and per ledger (locks the kernel drops when
the process dies).  SIGTERM or Ctrl-C: the file in hand goes back to the queue, not charged, and
the service stops.
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import signal
import sqlite3
import sys
import threading
import time
from dataclasses import dataclass, field
from pathlib import Path

from pathlen.atomic import write_atomic
from pathlen.batch import Limits, run_batch
from pathlen.watch.ledger import Delivery, Ledger, LedgerError, db_text, lock_inbox
from pathlen.watch.outputs import (
    append_summary,
    inside,
    log_value,
    move_unique,
    safe_relative,
    same_content,
    sweep_temporaries,
    unique,
)
from pathlen.watch.scan import Candidate, Settling, scan
from pathlen.watch.tasks import Task, headline

#: Times a file that failed while it was still being written to gets another settle period.
YOUNG_RETRIES = 2
#: Longest pause (s) after an operational fault (a full disk, a read-only folder) before trying again.
MAX_BACKOFF_S = 30.0


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


def content_hash(path: Path) -> str:
    """SHA-256 of a file, read in blocks (memory does not grow with the file)."""
    with path.open("rb") as fh:
        return hashlib.file_digest(fh, "sha256").hexdigest()


class _ClusterLost(Exception):
    """The Dask cluster stopped answering in the middle of a batch."""


class Service:
    def __init__(self, cfg: WatchConfig) -> None:
        check_folders(cfg.inbox, cfg.outbox)
        self.cfg = cfg
        try:
            cfg.outbox.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise LedgerError(f"cannot create the outbox {cfg.outbox}: {exc.strerror or exc}") from None
        self._inbox_lock = lock_inbox(cfg.inbox)
        self.ledger = Ledger(cfg.state / "ledger.sqlite")
        self.settling = Settling(cfg.settle_s)
        self.stop = threading.Event()
        self.wake = threading.Event()
        self.retries: dict[str, int] = {}
        self.backoff = 0.0
        self.client = None
        if cfg.scheduler:
            from pathlen.cluster import connect

            self.client = connect(cfg.scheduler)  # ClusterError when it cannot be reached

    # -- logging --------------------------------------------------------------------------
    def log(self, event: str, **fields: object) -> None:
        if self.cfg.log_json:
            line = json.dumps({"time": time.strftime("%Y-%m-%dT%H:%M:%S"), "event": event,
                               **{k: str(v) for k, v in fields.items()}})
        else:
            line = " ".join([time.strftime("%H:%M:%S"), event, *(f"{k}={log_value(v)}" for k, v in fields.items())])
        print(line, file=sys.stderr, flush=True)

    # -- the loop -------------------------------------------------------------------------
    def run(self) -> int:
        try:
            self.recover()
        except (OSError, sqlite3.Error) as exc:
            self._fault(exc, "finishing what the last run left")
        observer = self._observer() if self.cfg.events and not self.cfg.once else None
        for sig in (signal.SIGTERM, signal.SIGINT):
            signal.signal(sig, lambda *_: (self.stop.set(), self.wake.set()))
        self.log("watching", inbox=str(self.cfg.inbox), outbox=str(self.cfg.outbox),
                 tasks=",".join(f"{k or '*'}:{t.name}" for k, t in self.cfg.tasks.items()))
        try:
            while not self.stop.is_set():
                try:
                    busy, waiting = self._round()
                    self.backoff = 0.0
                except (OSError, sqlite3.Error) as exc:
                    self._fault(exc, "delivering results")
                    if self.cfg.once:
                        return 1
                    self.stop.wait(self.backoff)
                    continue
                if busy:
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

    def _fault(self, exc: BaseException, doing: str) -> None:
        """One line for an operational fault; the files stay in the inbox and are tried again later."""
        self.backoff = min(MAX_BACKOFF_S, max(self.cfg.poll_s, 2 * self.backoff))
        where = getattr(exc, "filename", None) or (self.ledger.path if isinstance(exc, sqlite3.Error) else "")
        reason = getattr(exc, "strerror", None) or str(exc) or type(exc).__name__
        self.log("fault", doing=doing, where=str(where), reason=reason,
                 action=f"files stay in the inbox; trying again in {self.backoff:g} s (check the folder's "
                        "permissions and free space)")

    def _round(self) -> tuple[bool, int]:
        ready, waiting = self.settling.ready([c for c in scan(self.cfg.inbox) if not self._seen(c)])
        if not ready:
            return False, waiting
        groups: dict[str, list[Candidate]] = {}
        for c in ready:
            groups.setdefault(self.folder_of(c), []).append(c)
        for folder, members in groups.items():
            self.process(members, self.cfg.tasks[folder])
        return True, waiting

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

    def _key(self, digest: str, task: Task) -> str:
        lim = self.cfg.limits
        return f"{digest}|{task.name}|{task.options_key}|timeout={lim.timeout_s:g}|memory={lim.max_memory_mb}"

    # -- start-up: finish what a crash left ------------------------------------------------
    def recover(self) -> None:
        swept = sweep_temporaries(self.cfg.outbox)
        if swept:
            self.log("swept", temporaries=swept)
        again, given_up = self.ledger.recover()
        for job in again:
            self.log("requeued", path=job.path, attempts=job.attempts)
        present = {db_text(c.rel): c for c in scan(self.cfg.inbox)}
        for job in given_up:
            c = present.get(job.path)
            if c is not None and self.ledger.open_delivery(c.rel, c.size, c.mtime_ns) is None:
                self.deliver(c, job.key, job.key.split("|", 1)[0], False, None, job.error, False,
                             self.cfg.tasks[self.folder_of(c)])
        for d in self.ledger.unfinished():
            job = self.ledger.job(d.key)
            c = present.get(d.path)
            if c is not None and (c.size, c.mtime_ns) != (d.size, d.mtime_ns):
                c = None  # a new file under the old name: it is taken as new
            src = c.path if c is not None else None
            self._complete(d, src, job.result if job else None, job.error if job else "failed",
                           None, job.task if job else "", d.path, d.key.split("|", 1)[0])
            self.log("finished", path=d.path, delivery=d.id)

    # -- one round ------------------------------------------------------------------------
    def process(self, ready: list[Candidate], task: Task) -> None:
        to_run: list[tuple[Candidate, str, str]] = []
        running: set[str] = set()
        twins: list[tuple[Candidate, str, str]] = []  # same content as a file run in this round: answered after
        for c in ready:
            if self.stop.is_set():
                return
            try:
                digest = content_hash(c.path)
            except OSError as exc:
                self.log("unreadable", path=c.rel, error=exc.strerror or str(exc))
                self.settling.forget(c.rel)
                continue
            key = self._key(digest, task)
            job = self.ledger.job(key)
            if key in running:
                twins.append((c, key, digest))
            elif job is not None and job.state in ("done", "failed"):
                self.deliver(c, key, digest, job.state == "done", job.result, job.error, True, task)
            else:
                self.ledger.queue(key, c.rel, task.name)
                to_run.append((c, key, digest))
                running.add(key)
        if to_run:
            self._run(to_run, task)
        for c, key, digest in twins:
            job = self.ledger.job(key)
            if job is not None and job.state in ("done", "failed") and not self.stop.is_set():
                self.deliver(c, key, digest, job.state == "done", job.result, job.error, True, task)
            else:
                self.settling.forget(c.rel)  # taken again in the next round

    def _batch(self, paths: list[str], task: Task, started: object, lost: list[str]) -> object:
        if self.client is not None:
            from pathlen.cluster import run_on_cluster

            return run_on_cluster(self.client, paths, task.settings, task.work, task.failed, self.cfg.limits, lost)
        return run_batch(paths, task.settings, self.cfg.jobs, task.work, task.failed, self.cfg.limits,
                         started=started, stop=self.stop)  # type: ignore[arg-type]

    def _cluster_down(self) -> bool:
        return self.client is not None and getattr(self.client, "status", "running") != "running"

    def _lose_cluster(self, reason: str) -> None:
        self.log("cluster-lost", scheduler=str(self.cfg.scheduler), error=reason[:200],
                 action="running on local workers from now on; the jobs in flight go back to the queue")
        from pathlen.cluster import quiet_cluster_logs

        quiet_cluster_logs()
        with contextlib.suppress(Exception):
            self.client.close()  # type: ignore[union-attr]
        self.client = None

    def _run(self, to_run: list[tuple[Candidate, str, str]], task: Task) -> None:
        """Run the jobs in worker processes and deliver each result as it finishes."""
        paths = [str(c.path) for c, _, _ in to_run]
        answered: set[int] = set()
        if self._cluster_down():
            self._lose_cluster("the scheduler does not answer")
        on_cluster = self.client is not None
        if on_cluster:  # the cluster does not say when a task starts: charged as it is sent
            for _, key, _ in to_run:
                self.ledger.start(key)
        try:
            lost: list[str] = []
            for i, result in self._batch(paths, task, lambda i: self.ledger.start(to_run[i][1]), lost):  # type: ignore
                if on_cluster and (lost or (not getattr(result, "ok", True) and self._cluster_down())):
                    raise _ClusterLost(lost[0] if lost else str(getattr(result, "error", "")))
                answered.add(i)
                self._answer(to_run[i], result, task)
                if self.stop.is_set():
                    break
        except (OSError, sqlite3.Error):
            raise
        except Exception as exc:  # a cluster that went away: carry on locally
            if not on_cluster:
                raise
            self._lose_cluster(str(exc).splitlines()[0] if str(exc) else type(exc).__name__)
        finally:
            for i, (c, key, _) in enumerate(to_run):
                if i not in answered:
                    self.ledger.release(key)  # back in the queue, the attempt not charged
                    self.settling.forget(c.rel)
            if self.stop.is_set() and len(answered) < len(to_run):
                self.log("stopping", requeued=len(to_run) - len(answered))

    def _answer(self, item: tuple[Candidate, str, str], result: object, task: Task) -> None:
        c, key, digest = item
        ok = bool(getattr(result, "ok", False))
        error = getattr(result, "error", None)
        environment = bool(getattr(result, "environment", False))
        if not ok and not c.path.exists():  # renamed or removed while queued: nothing to answer
            self.ledger.finish(key, "error", None, error)
            self.settling.forget(c.rel)
            self.log("vanished", path=c.rel, error=error)
            return
        if not ok and not environment and self._retry_later(c):
            self.ledger.finish(key, "error", None, error)
            self.log("retry", path=c.rel, error=error)
            self.settling.forget(c.rel)
            return
        text = json.dumps(task.document(result), indent=2) + "\n" if ok else None
        self.ledger.finish(key, "done" if ok else ("error" if environment else "failed"), text, error)
        table = task.csv(result) if self.cfg.csv and task.csv and ok else None
        self.deliver(c, key, digest, ok, text, error, False, task, table)

    def _retry_later(self, c: Candidate) -> bool:
        """A file that failed while it was written to recently gets another settle period (bounded)."""
        try:
            age = time.time() - c.path.stat().st_mtime
        except OSError:
            return False
        tries = self.retries.get(c.rel, 0)
        if age < 3 * self.cfg.settle_s and tries < YOUNG_RETRIES:
            self.retries[c.rel] = tries + 1
            return True
        return False

    # -- delivery -------------------------------------------------------------------------
    def deliver(self, c: Candidate, key: str, digest: str, ok: bool, text: str | None, error: str | None,
                answered: bool, task: Task, table: str | None = None) -> None:
        """Intent in the ledger, then result (or note) and summary line, then the original moved."""
        out = self.cfg.outbox
        d = self.ledger.open_delivery(c.rel, c.size, c.mtime_ns)
        if d is None:
            rel = safe_relative(c.rel)
            destination = None if self.cfg.keep else unique(inside(out, out / ("done" if ok else "failed") / rel))
            if ok:
                result = unique(inside(out, out / "results" / rel.parent / f"{rel.name}.{task.name}.json"))
            elif destination is not None:
                result = destination.with_name(destination.name + ".error.txt")
            else:
                result = unique(inside(out, out / "failed" / rel.parent / f"{rel.name}.error.txt"))
            d = self.ledger.intend(c.rel, c.size, c.mtime_ns, key, ok, str(result.relative_to(out)),
                                   str(destination.relative_to(out)) if destination else None)
        self._complete(d, c.path, text, error, table, task.name, c.rel, digest)
        self.settling.forget(c.rel)
        self.log("answered" if answered else ("done" if ok else "failed"), path=c.rel,
                 **({"error": error} if not ok else {}))

    def _complete(self, d: Delivery, src: Path | None, text: str | None, error: str | None, table: str | None,
                  task: str, rel: str, digest: str) -> None:
        """Steps 4 and 5 of a delivery; each is done again safely after a crash."""
        out = self.cfg.outbox
        result = out / d.result if d.result else None
        head = ""
        if d.ok and text is not None and result is not None:
            doc = json.loads(text)
            doc["source"] = {"inbox_path": db_text(rel), "sha256": digest,
                             "moved_to": d.destination, "kept": d.destination is None}
            head = headline(doc)
            full = json.dumps(doc, indent=2) + "\n"
            if not same_content(result, full):
                write_atomic(result, full)
            if table is not None:
                write_atomic(result.with_suffix(".csv"), table)
        elif result is not None:
            note = (error or "failed") + "\n"
            if not same_content(result, note):
                write_atomic(result, note)
        self.ledger.advance(d, "written")
        append_summary(out, {"time": time.strftime("%Y-%m-%dT%H:%M:%S"), "path": db_text(rel), "task": task,
                             "ok": str(d.ok).lower(), "error": "" if d.ok else (error or "failed"),
                             "result": d.result or "", "original": d.destination or "(kept in the inbox)",
                             "headline": head, "delivery": str(d.id)})
        if self.cfg.keep:
            if src is not None and src.exists():
                st = src.stat()
                self.ledger.mark_seen(rel, st.st_size, st.st_mtime_ns, d.key)
        elif src is not None and src.exists() and d.destination:
            target = out / d.destination
            move_unique(src, target, exact=not target.exists())
        self.ledger.advance(d, "moved")


def status(outbox: Path, state: Path | None = None, as_json: bool = False) -> str:
    """Counts by state, open deliveries and the last failures, from the ledger (read without locking)."""
    path = (state or outbox / ".pathlen") / "ledger.sqlite"
    if not path.exists():
        return json.dumps({"ledger": str(path), "exists": False}) if as_json else f"no ledger at {path}"
    ledger = Ledger(path, lock=False)
    try:
        counts = ledger.counts()
        open_deliveries = len(ledger.unfinished())
        failures = ledger.last_failures()
    finally:
        ledger.close()
    if as_json:
        return json.dumps({"ledger": str(path), "exists": True, "jobs": counts, "open_deliveries": open_deliveries,
                           "last_failures": [{"path": p, "error": e} for p, e in failures]}, indent=2)
    lines = [f"jobs: {', '.join(f'{k} {v}' for k, v in sorted(counts.items())) or 'none'}",
             f"deliveries left open by a crash: {open_deliveries}"]
    lines += [f"failed {p}: {e}" for p, e in failures]
    return "\n".join(lines)
