"""Files the service writes: results (atomically), moved originals (never overwriting), error notes, the
daily summary.  Every path stays inside the outbox: relative names are cleaned part by part."""

from __future__ import annotations

import contextlib
import csv
import io
import os
import re
import shutil
import tempfile
import time
from pathlib import Path, PurePosixPath

_UNSAFE = re.compile(r"[^A-Za-z0-9._ ()+=,@-]")
SUMMARY_FIELDS = ("time", "path", "task", "ok", "error", "result")


def safe_relative(rel: str) -> Path:
    """An inbox-relative path cleaned for the outbox: no absolute parts, no '..', odd characters replaced."""
    parts = []
    for part in PurePosixPath(rel.replace("\\", "/")).parts:
        if part in ("", ".", "..", "/"):
            continue
        cleaned = _UNSAFE.sub("_", part).lstrip(".") or "_"
        parts.append(cleaned[:200])
    return Path(*parts) if parts else Path("_")


def inside(base: Path, target: Path) -> Path:
    """``target`` if it lies inside ``base`` (after resolving), else an error: nothing escapes the outbox."""
    resolved = target.resolve()
    if resolved != base.resolve() and base.resolve() not in resolved.parents:
        raise ValueError(f"{target} would lie outside {base}")
    return target


def write_atomic(path: Path, text: str) -> None:
    """Write through a temporary file in the same folder, fsync, rename, fsync the folder: a reader
    sees the old file or the whole new one, never a part.  The file gets the usual permissions
    (0666 less the umask), not the temporary file's private ones."""
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".tmp")
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="") as fh:
            fh.write(text)
            fh.flush()
            os.fsync(fh.fileno())
        os.chmod(tmp, 0o666 & ~_umask())
        os.replace(tmp, path)
    except BaseException:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        raise
    _fsync_dir(path.parent)


def _fsync_dir(folder: Path) -> None:
    with contextlib.suppress(OSError):
        fd = os.open(folder, os.O_RDONLY)
        try:
            os.fsync(fd)
        finally:
            os.close(fd)


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def same_content(path: Path, text: str) -> bool:
    try:
        return path.read_text(encoding="utf-8") == text
    except (OSError, UnicodeDecodeError):
        return False


def unique(path: Path) -> Path:
    """``path``, or ``name (2).ext``, ``name (3).ext`` ... where it is taken: names are never overwritten."""
    if not path.exists():
        return path
    for k in range(2, 100_000):
        candidate = path.with_name(f"{path.stem} ({k}){path.suffix}")
        if not candidate.exists():
            return candidate
    raise OSError(f"no free name for {path}")


def move_unique(src: Path, dest: Path) -> Path:
    """Move ``src`` to ``dest`` (a free name beside it if taken), across file systems too."""
    dest.parent.mkdir(parents=True, exist_ok=True)
    target = unique(dest)
    try:
        os.rename(src, target)
    except OSError:
        shutil.move(str(src), str(target))
    _fsync_dir(target.parent)
    return target


def append_summary(outbox: Path, row: dict[str, str]) -> None:
    """One line in today's ``summary-YYYY-MM-DD.csv`` (header on the first line of the day)."""
    path = outbox / f"summary-{time.strftime('%Y-%m-%d')}.csv"
    buf = io.StringIO()
    writer = csv.DictWriter(buf, fieldnames=SUMMARY_FIELDS, lineterminator="\n")
    new = not path.exists()
    if new:
        writer.writeheader()
    writer.writerow(row)
    with path.open("a", encoding="utf-8", newline="") as fh:
        fh.write(buf.getvalue())
        fh.flush()
        os.fsync(fh.fileno())
