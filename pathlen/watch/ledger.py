"""The job ledger: SQLite on local disk, WAL mode.

Jobs are keyed by the drawing's content hash, the task, its options and the limits, so an identical
file dropped again is answered from the ledger and a changed one is measured again.  Job states:
queued, running, done, failed (the content's own answer, remembered) and error (a failure of the
surroundings: a limit, a dead worker, a vanished file; never answered from the ledger).  An attempt
is charged when a worker takes the job, so a crash charges the job that was running and no other.

Deliveries record what the service is about to do with a file before it does it (intent), so that a
crash at any point is finished on the next start: result or note written, summary line written,
original moved.  The ledger folder is locked: one service per ledger.

Paths are stored as text that SQLite accepts whatever the file system allowed: a name that is not
UTF-8 (surrogate escapes in Python) is stored with backslash escapes (:func:`db_text`).
"""

from __future__ import annotations

import os
import sqlite3
import time
from dataclasses import dataclass
from pathlib import Path

from pathlen.errors import UsageError

#: Attempts after which a job that was running at every one of the service's deaths is given up (as an
#: error of the surroundings, not remembered for the content): the net under a file that kills the service.
MAX_ATTEMPTS = 10

SCHEMA = """
CREATE TABLE IF NOT EXISTS jobs (
    key TEXT PRIMARY KEY,          -- content hash | task | options | limits
    path TEXT NOT NULL,            -- inbox-relative path of the file that brought it
    task TEXT NOT NULL,
    state TEXT NOT NULL,           -- queued, running, done, failed, error
    attempts INTEGER NOT NULL DEFAULT 0,
    queued_at REAL, started_at REAL, finished_at REAL,
    result TEXT,                   -- the result document (JSON text)
    error TEXT
);
CREATE TABLE IF NOT EXISTS seen (  -- files taken from the inbox, so that a kept original is not taken again
    path TEXT NOT NULL, size INTEGER NOT NULL, mtime_ns INTEGER NOT NULL, key TEXT NOT NULL,
    PRIMARY KEY (path, size, mtime_ns)
);
CREATE TABLE IF NOT EXISTS deliveries (
    id INTEGER PRIMARY KEY AUTOINCREMENT,
    path TEXT NOT NULL,            -- inbox-relative
    size INTEGER NOT NULL, mtime_ns INTEGER NOT NULL,
    key TEXT NOT NULL,
    ok INTEGER NOT NULL,
    result TEXT,                   -- outbox-relative result file (ok) or error note (failed)
    destination TEXT,              -- outbox-relative place of the original; NULL when it is kept
    state TEXT NOT NULL,           -- intent, written, moved
    created REAL NOT NULL
);
CREATE INDEX IF NOT EXISTS deliveries_open ON deliveries (state);
"""


def db_text(text: str) -> str:
    """``text`` as SQLite can store it: lone surrogates (bytes of a name that is not UTF-8) escaped."""
    return text.encode("utf-8", "surrogateescape").decode("utf-8", "backslashreplace")


@dataclass
class Job:
    key: str
    path: str
    task: str
    state: str
    attempts: int
    result: str | None
    error: str | None


@dataclass
class Delivery:
    id: int
    path: str
    size: int
    mtime_ns: int
    key: str
    ok: bool
    result: str | None
    destination: str | None
    state: str


class LedgerError(UsageError):
    """The ledger cannot be used (damaged, locked, unwritable): one line, exit 2."""


class Ledger:
    def __init__(self, path: Path, lock: bool = True) -> None:
        self.path = path
        self._lock_fd: int | None = None
        try:
            path.parent.mkdir(parents=True, exist_ok=True)
            if lock:
                self._lock_fd = _lock(path.parent / "service.lock", f"the ledger {path}")
            self.db = sqlite3.connect(str(path), timeout=10, isolation_level=None)
            self.db.execute("PRAGMA journal_mode=WAL")
            self.db.execute("PRAGMA synchronous=FULL")
            self.db.executescript(SCHEMA)
            self.db.execute("SELECT COUNT(*) FROM jobs").fetchone()
        except sqlite3.DatabaseError as exc:
            self._unlock()
            text = str(exc)
            if "locked" in text:
                raise LedgerError(f"the ledger {path} is locked by another process ({text}); stop it or give "
                                  "--state another folder") from None
            raise LedgerError(f"the ledger {path} is damaged ({text}); move it aside (the service starts a new "
                              "one and answers every file afresh)") from None
        except OSError as exc:
            self._unlock()
            raise LedgerError(f"cannot open the ledger in {path.parent}: {exc.strerror or exc}") from None

    def _unlock(self) -> None:
        if self._lock_fd is not None:
            os.close(self._lock_fd)
            self._lock_fd = None

    def close(self) -> None:
        self.db.close()
        self._unlock()

    # -- jobs -------------------------------------------------------------------------------
    def job(self, key: str) -> Job | None:
        row = self.db.execute("SELECT key, path, task, state, attempts, result, error FROM jobs WHERE key = ?",
                              (key,)).fetchone()
        return Job(*row) if row else None

    def queue(self, key: str, path: str, task: str) -> None:
        """Record the job as waiting for a worker (no attempt charged)."""
        now = time.time()
        self.db.execute(
            "INSERT INTO jobs (key, path, task, state, attempts, queued_at) VALUES (?, ?, ?, 'queued', 0, ?) "
            "ON CONFLICT(key) DO UPDATE SET state = 'queued', path = excluded.path, queued_at = excluded.queued_at",
            (key, db_text(path), task, now))

    def start(self, key: str) -> None:
        """A worker took the job: running, one more attempt."""
        self.db.execute("UPDATE jobs SET state = 'running', attempts = attempts + 1, started_at = ? WHERE key = ?",
                        (time.time(), key))

    def release(self, key: str) -> None:
        """Put a running job back in the queue without charging the attempt (the service was stopped)."""
        self.db.execute("UPDATE jobs SET state = 'queued', attempts = MAX(attempts - 1, 0) WHERE key = ? AND "
                        "state = 'running'", (key,))

    def finish(self, key: str, state: str, result: str | None, error: str | None) -> None:
        """``state``: done, failed (the content's answer) or error (not remembered as the answer)."""
        self.db.execute("UPDATE jobs SET state = ?, finished_at = ?, result = ?, error = ? WHERE key = ?",
                        (state, time.time(), result, error, key))

    def recover(self) -> tuple[list[Job], list[Job]]:
        """Jobs a crash left running: (queued again, given up after :data:`MAX_ATTEMPTS` attempts)."""
        rows = self.db.execute("SELECT key, path, task, state, attempts, result, error FROM jobs "
                               "WHERE state = 'running'").fetchall()
        again, given_up = [], []
        for row in rows:
            job = Job(*row)
            if job.attempts >= MAX_ATTEMPTS:
                job.error = (f"stopped {job.attempts} times while it was being measured (the service or its worker "
                             "was killed each time); drop the file again to retry")
                self.finish(job.key, "error", None, job.error)
                given_up.append(job)
            else:
                self.db.execute("UPDATE jobs SET state = 'queued' WHERE key = ?", (job.key,))
                again.append(job)
        return again, given_up

    # -- deliveries -------------------------------------------------------------------------
    def open_delivery(self, path: str, size: int, mtime_ns: int) -> Delivery | None:
        """An unfinished delivery of this very file (same path, size and time), if a crash left one."""
        row = self.db.execute("SELECT id, path, size, mtime_ns, key, ok, result, destination, state FROM deliveries "
                              "WHERE path = ? AND size = ? AND mtime_ns = ? AND state != 'moved' ORDER BY id DESC",
                              (db_text(path), size, mtime_ns)).fetchone()
        return Delivery(*row[:5], bool(row[5]), *row[6:]) if row else None

    def intend(self, path: str, size: int, mtime_ns: int, key: str, ok: bool, result: str | None,
               destination: str | None) -> Delivery:
        cur = self.db.execute("INSERT INTO deliveries (path, size, mtime_ns, key, ok, result, destination, state, "
                              "created) VALUES (?, ?, ?, ?, ?, ?, ?, 'intent', ?)",
                              (db_text(path), size, mtime_ns, key, int(ok), result, destination, time.time()))
        return Delivery(int(cur.lastrowid or 0), db_text(path), size, mtime_ns, key, ok, result, destination,
                        "intent")

    def advance(self, delivery: Delivery, state: str) -> None:
        self.db.execute("UPDATE deliveries SET state = ? WHERE id = ?", (state, delivery.id))
        delivery.state = state

    def unfinished(self) -> list[Delivery]:
        rows = self.db.execute("SELECT id, path, size, mtime_ns, key, ok, result, destination, state FROM deliveries "
                               "WHERE state != 'moved' ORDER BY id").fetchall()
        return [Delivery(*r[:5], bool(r[5]), *r[6:]) for r in rows]

    # -- kept originals and the admin view ----------------------------------------------------
    def seen(self, path: str, size: int, mtime_ns: int) -> bool:
        return self.db.execute("SELECT 1 FROM seen WHERE path = ? AND size = ? AND mtime_ns = ?",
                               (db_text(path), size, mtime_ns)).fetchone() is not None

    def mark_seen(self, path: str, size: int, mtime_ns: int, key: str) -> None:
        self.db.execute("INSERT OR IGNORE INTO seen VALUES (?, ?, ?, ?)", (db_text(path), size, mtime_ns, key))

    def counts(self) -> dict[str, int]:
        return dict(self.db.execute("SELECT state, COUNT(*) FROM jobs GROUP BY state").fetchall())

    def last_failures(self, n: int = 10) -> list[tuple[str, str]]:
        return self.db.execute("SELECT path, error FROM jobs WHERE state IN ('failed', 'error') "
                               "ORDER BY finished_at DESC LIMIT ?", (n,)).fetchall()


def _lock(path: Path, what: str) -> int:
    """An exclusive lock held for the process's life (released by the kernel when it ends, even on kill -9);
    a usage error naming the holder when another process has it."""
    import fcntl

    fd = os.open(path, os.O_RDWR | os.O_CREAT, 0o644)
    try:
        fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
    except OSError:
        holder = os.read(fd, 64).decode("ascii", "replace").strip() or "?"
        os.close(fd)
        raise LedgerError(f"another pathlen watch (pid {holder}) is already serving {what}; stop it first, or "
                          "give this one another --out or --state") from None
    os.ftruncate(fd, 0)
    os.write(fd, f"{os.getpid()}\n".encode())
    return fd


def lock_inbox(inbox: Path) -> int:
    """One service per inbox: an exclusive lock on the inbox folder itself (nothing is written into it)."""
    import fcntl

    try:
        fd = os.open(inbox, os.O_RDONLY | os.O_DIRECTORY)
    except OSError as exc:
        raise LedgerError(f"cannot open the inbox {inbox}: {exc.strerror or exc}") from None
    try:
        fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
    except OSError:
        os.close(fd)
        raise LedgerError(f"another pathlen watch is already serving the inbox {inbox}; stop it first") from None
    return fd
