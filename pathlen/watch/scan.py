"""Finding drawings in the inbox that are ready: a drawing's suffix, not a temporary name, not a link,
and size and modification time unchanged for the settle time."""

from __future__ import annotations

import os
import time
from dataclasses import dataclass
from pathlib import Path

from pathlen.importers import SUFFIXES

#: Names a copy in progress uses: never taken.
TEMPORARY_SUFFIXES = (".part", ".tmp", ".crdownload", ".partial", ".swp")


def is_temporary(name: str) -> bool:
    return name.startswith((".", "~$")) or name.lower().endswith(TEMPORARY_SUFFIXES)


@dataclass(frozen=True)
class Candidate:
    path: Path
    rel: str  # inbox-relative, with forward slashes
    size: int
    mtime_ns: int


def scan(inbox: Path) -> list[Candidate]:
    """Drawing files under ``inbox`` (links are not followed, folders starting with '.' skipped)."""
    out = []
    for root, dirs, files in os.walk(inbox, followlinks=False):
        dirs[:] = sorted(d for d in dirs if not d.startswith("."))
        for name in sorted(files):
            if is_temporary(name) or Path(name).suffix.lower() not in SUFFIXES:
                continue
            path = Path(root) / name
            try:
                st = path.lstat()
            except OSError:
                continue
            if not path.is_file() or path.is_symlink():
                continue
            out.append(Candidate(path, path.relative_to(inbox).as_posix(), st.st_size, st.st_mtime_ns))
    return out


class Settling:
    """Remembers each file's size and mtime; a file is ready once they stayed the same for ``settle`` s."""

    def __init__(self, settle: float) -> None:
        self.settle = settle
        self.state: dict[str, tuple[int, int, float]] = {}

    def ready(self, found: list[Candidate], now: float | None = None) -> tuple[list[Candidate], int]:
        """The stable candidates, and how many are still settling."""
        now = time.monotonic() if now is None else now
        ready, waiting = [], 0
        present = set()
        for c in found:
            present.add(c.rel)
            size, mtime, since = self.state.get(c.rel, (-1, -1, now))
            if (size, mtime) != (c.size, c.mtime_ns):
                self.state[c.rel] = (c.size, c.mtime_ns, now)
                waiting += 1
            elif now - since >= self.settle:
                ready.append(c)
            else:
                waiting += 1
        for gone in set(self.state) - present:
            del self.state[gone]
        return ready, waiting

    def forget(self, rel: str) -> None:
        self.state.pop(rel, None)
