"""Writing files so that a reader sees the old file or the whole new one, never a part: the one place every
command and the watch service write through."""

from __future__ import annotations

import contextlib
import os
import tempfile
from collections.abc import Callable
from pathlib import Path


def write_atomic(path: Path, text: str) -> None:
    """Write through a temporary file in the same folder, fsync, rename, fsync the folder: a reader
    sees the old file or the whole new one, never a part.  The file gets the usual permissions
    (0666 less the umask), not the temporary file's private ones."""
    def fill(tmp: Path) -> None:
        with open(tmp, "w", encoding="utf-8", newline="") as fh:
            fh.write(text)
            fh.flush()
            os.fsync(fh.fileno())

    _replace(path, fill, f".{path.name}.", ".tmp")


def write_file_atomic(path: Path, write: Callable[[Path], None]) -> None:
    """``write(temporary_path)`` (a picture renderer, say), then the same rename as :func:`write_atomic`:
    the file appears whole or not at all.  The temporary file keeps the target's suffix, so a writer
    that picks the format by suffix picks the right one."""
    _replace(path, write, f".{path.stem}.", f".tmp{path.suffix}")


def _replace(path: Path, fill: Callable[[Path], None], prefix: str, suffix: str) -> None:
    """Fill a new temporary file beside ``path``, give it the usual permissions, rename it over
    ``path`` and fsync the folder; on any failure the temporary file goes."""
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=prefix, suffix=suffix)
    os.close(fd)
    try:
        fill(Path(tmp))
        os.chmod(tmp, 0o666 & ~umask())
        os.replace(tmp, path)
    except BaseException:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        raise
    fsync_dir(path.parent)


def fsync_dir(folder: Path) -> None:
    with contextlib.suppress(OSError):
        fd = os.open(folder, os.O_RDONLY)
        try:
            os.fsync(fd)
        finally:
            os.close(fd)


def umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask
