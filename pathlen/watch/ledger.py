"""The job ledger: SQLite on local disk, WAL mode, one row per job.

A job is keyed by the drawing's content hash, the task and its options, so an identical file dropped
again is answered from the ledger and a changed one is measured again.  States: queued, running,
done, failed.  A job left running by a crash is queued again on start, up to :data:`MAX_ATTEMPTS`.
"""

from __future__ import annotations

import sqlite3
import time
from dataclasses import dataclass
from pathlib import Path

MAX_ATTEMPTS = 3

SCHEMA = """
CREATE TABLE IF NOT EXISTS jobs (
    key TEXT PRIMARY KEY,          -- content hash | task | options
    path TEXT NOT NULL,            -- inbox-relative path of the file that brought it
    task TEXT NOT NULL,
    state TEXT NOT NULL,           -- queued, running, done, failed
    attempts INTEGER NOT NULL DEFAULT 0,
    queued_at REAL, started_at REAL, finished_at REAL,
    result TEXT,                   -- the result document (JSON text)
    error TEXT
);
CREATE TABLE IF NOT EXISTS seen (  -- files taken from the inbox, so that a kept original is not taken again
    path TEXT NOT NULL, size INTEGER NOT NULL, mtime_ns INTEGER NOT NULL, key TEXT NOT NULL,
    PRIMARY KEY (path, size, mtime_ns)
);
"""


@dataclass
class Job:
    key: str
    path: str
    task: str
    state: str
    attempts: int
    result: str | None
    error: str | None


class Ledger:
    def __init__(self, path: Path) -> None:
        path.parent.mkdir(parents=True, exist_ok=True)
        self.db = sqlite3.connect(str(path), timeout=30, isolation_level=None)
        self.db.execute("PRAGMA journal_mode=WAL")
        self.db.execute("PRAGMA synchronous=FULL")
        self.db.executescript(SCHEMA)

    def close(self) -> None:
        self.db.close()

    def job(self, key: str) -> Job | None:
        row = self.db.execute("SELECT key, path, task, state, attempts, result, error FROM jobs WHERE key = ?",
                              (key,)).fetchone()
        return Job(*row) if row else None

    def start(self, key: str, path: str, task: str) -> None:
        """Record the job as running (one more attempt)."""
        now = time.time()
        self.db.execute(
            "INSERT INTO jobs (key, path, task, state, attempts, queued_at, started_at) VALUES (?, ?, ?, 'running', 1,"
            " ?, ?) ON CONFLICT(key) DO UPDATE SET state = 'running', attempts = attempts + 1, started_at = ?,"
            " path = excluded.path", (key, path, task, now, now, now))

    def finish(self, key: str, ok: bool, result: str | None, error: str | None) -> None:
        self.db.execute("UPDATE jobs SET state = ?, finished_at = ?, result = ?, error = ? WHERE key = ?",
                        ("done" if ok else "failed", time.time(), result, error, key))

    def recover(self) -> list[Job]:
        """Jobs a crash left running: queued again, or failed after :data:`MAX_ATTEMPTS` attempts."""
        rows = self.db.execute("SELECT key, path, task, state, attempts, result, error FROM jobs "
                               "WHERE state = 'running'").fetchall()
        out = []
        for row in rows:
            job = Job(*row)
            if job.attempts >= MAX_ATTEMPTS:
                self.finish(job.key, False, None, f"stopped {job.attempts} times while running (crashes?)")
            else:
                self.db.execute("UPDATE jobs SET state = 'queued' WHERE key = ?", (job.key,))
                out.append(job)
        return out

    def seen(self, path: str, size: int, mtime_ns: int) -> bool:
        return self.db.execute("SELECT 1 FROM seen WHERE path = ? AND size = ? AND mtime_ns = ?",
                               (path, size, mtime_ns)).fetchone() is not None

    def mark_seen(self, path: str, size: int, mtime_ns: int, key: str) -> None:
        self.db.execute("INSERT OR IGNORE INTO seen VALUES (?, ?, ?, ?)", (path, size, mtime_ns, key))

    def counts(self) -> dict[str, int]:
        return dict(self.db.execute("SELECT state, COUNT(*) FROM jobs GROUP BY state").fetchall())

    def last_failures(self, n: int = 10) -> list[tuple[str, str]]:
        return self.db.execute("SELECT path, error FROM jobs WHERE state = 'failed' ORDER BY finished_at DESC "
                               "LIMIT ?", (n,)).fetchall()
