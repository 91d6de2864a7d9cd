"""Files the service writes: results (atomically), moved originals (never overwriting), error notes, the
daily summary.  Every path stays inside the outbox: relative names are cleaned part by part."""

from __future__ import annotations

import contextlib
import csv
import hashlib
import io
import json
import os
import re
import shutil
import tempfile
import time
from pathlib import Path, PurePosixPath

from pathlen.atomic import fsync_dir as _fsync_dir

_UNSAFE = re.compile(r"[^A-Za-z0-9._ ()+=,@-]")
SUMMARY_FIELDS = ("time", "path", "task", "ok", "error", "result", "original", "headline", "delivery")
#: Longest name part kept in the outbox (with room for a hash and the task's suffix).
NAME_LIMIT = 180


def safe_relative(rel: str) -> Path:
    """An inbox-relative path cleaned for the outbox: no absolute parts, no '..', odd characters replaced.
    Where cleaning loses something (other characters, a long name cut short), a short hash of the part as
    it was is added, so that two names never clean to one (``Blech-Ä`` and ``Blech-Ö``)."""
    parts = []
    for part in PurePosixPath(rel.replace("\\", "/")).parts:
        if part in ("", ".", "..", "/"):
            continue
        cleaned = _UNSAFE.sub("_", part).lstrip(".") or "_"
        if cleaned != part or len(cleaned) > NAME_LIMIT:
            digest = hashlib.sha256(part.encode("utf-8", "surrogateescape")).hexdigest()[:8]
            stem, dot, suffix = cleaned.rpartition(".")
            short = cleaned[:NAME_LIMIT]
            cleaned = (f"{stem[:NAME_LIMIT]}~{digest}.{suffix}" if dot and stem and len(suffix) <= 8
                       else f"{short}~{digest}")
        parts.append(cleaned)
    return Path(*parts) if parts else Path("_")


def log_value(value: object) -> str:
    """A log field that cannot break its line: control characters, spaces, quotes and bytes of a name
    that is not UTF-8 are escaped (JSON string form)."""
    text = str(value)
    if text and all(c.isprintable() and not c.isspace() and c not in "\"=" for c in text) and text.isascii():
        return text
    return json.dumps(text.encode("utf-8", "surrogateescape").decode("utf-8", "backslashreplace"))


def sweep_temporaries(outbox: Path) -> int:
    """Remove the temporary files a crash left behind (``.NAME.XXXX.tmp`` of :func:`write_atomic` and
    :func:`move_unique`); how many."""
    count = 0
    for root, _dirs, files in os.walk(outbox):
        for name in files:
            if name.startswith(".") and name.endswith(".tmp") and _TEMP.match(name):
                with contextlib.suppress(OSError):
                    os.unlink(os.path.join(root, name))
                    count += 1
    return count


_TEMP = re.compile(r"^\..+\.[A-Za-z0-9_]{6,}\.tmp$")


def inside(base: Path, target: Path) -> Path:
    """``target`` if it lies inside ``base`` (after resolving), else an error: nothing escapes the outbox."""
    resolved = target.resolve()
    if resolved != base.resolve() and base.resolve() not in resolved.parents:
        raise ValueError(f"{target} would lie outside {base}")
    return target


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


def move_unique(src: Path, dest: Path, exact: bool = False) -> Path:
    """Move ``src`` to ``dest`` (a free name beside it if taken, unless ``exact``), across file systems too:
    there the copy goes to a temporary name, is flushed and renamed into place before ``src`` is removed,
    so a full disk leaves the original whole and no torn copy."""
    dest.parent.mkdir(parents=True, exist_ok=True)
    target = dest if exact else unique(dest)
    try:
        os.rename(src, target)
    except OSError as exc:
        import errno

        if exc.errno != errno.EXDEV:
            raise
        fd, tmp = tempfile.mkstemp(dir=target.parent, prefix=f".{target.name}.", suffix=".tmp")
        os.close(fd)
        try:
            shutil.copy2(src, tmp)
            with open(tmp, "rb") as fh:
                os.fsync(fh.fileno())
            os.replace(tmp, target)
        except BaseException:
            with contextlib.suppress(OSError):
                os.unlink(tmp)
            raise
        os.unlink(src)
    _fsync_dir(target.parent)
    return target


def summary_path(outbox: Path, day: str | None = None) -> Path:
    return outbox / f"summary-{day or time.strftime('%Y-%m-%d')}.csv"


def append_summary(outbox: Path, row: dict[str, str]) -> None:
    """One line in today's ``summary-YYYY-MM-DD.csv`` (header on the first line of the day); a line for a
    ``delivery`` that is already there (a crash came after it was written) is not written again."""
    path = summary_path(outbox)
    delivery = str(row.get("delivery", ""))
    if delivery and _has_delivery(path, delivery):
        return
    buf = io.StringIO()
    writer = csv.DictWriter(buf, fieldnames=SUMMARY_FIELDS, lineterminator="\n")
    new = not path.exists()
    if new:
        writer.writeheader()
    writer.writerow({k: str(v).encode("utf-8", "surrogateescape").decode("utf-8", "backslashreplace")
                     for k, v in row.items()})
    with path.open("a", encoding="utf-8", newline="") as fh:
        fh.write(buf.getvalue())
        fh.flush()
        os.fsync(fh.fileno())


def _has_delivery(path: Path, delivery: str) -> bool:
    """Whether the summary's last lines hold this delivery (lines end with the delivery number)."""
    try:
        with path.open("rb") as fh:
            fh.seek(0, os.SEEK_END)
            fh.seek(max(0, fh.tell() - 65536))
            tail = fh.read().decode("utf-8", "replace").splitlines()
    except OSError:
        return False
    return any(line.rstrip("\r").endswith("," + delivery) for line in tail[-200:])
