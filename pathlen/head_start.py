"""A batch's first worker, forked as the ``pathlen`` program starts (before numpy and the command's
modules load in the parent): it loads numpy, the readers and the measuring modules itself while the
parent loads its own, on the other core, and waits for the batch to hand it its work
(:func:`pathlen.batch.run_batch` takes it instead of forking one).  Unused (a usage error, ``--help``,
a batch sent to a cluster) it ends with the program, the way every worker does.

This module loads nothing heavy: the program imports it before numpy."""

from __future__ import annotations

import os
from typing import Any

#: Suffixes of the drawings a worker can read (as :data:`pathlen.importers.SUFFIXES`: a test holds them
#: equal; that module loads more than the program's start should).
DRAWING_SUFFIXES = (".dxf", ".svg")

#: The worker started and not yet taken: ``(process, connection)``.
_waiting: list[tuple[Any, Any]] = []


def start(args: list[str]) -> None:
    """Fork the first worker for a batch command given ``args`` (what follows the command's name), unless
    the command will not run a batch here (see :func:`reader_kinds`)."""
    kinds = reader_kinds(args)
    if not kinds:
        return
    import multiprocessing

    ctx = multiprocessing.get_context("fork")
    conn, child = ctx.Pipe()
    process = ctx.Process(target=_child, args=(child, conn, os.getpid(), kinds), daemon=True)
    process.start()
    child.close()
    _waiting.append((process, conn))


def reader_kinds(args: list[str]) -> tuple[str, ...]:
    """The drawing suffixes whose readers a head-start worker for ``args`` loads: those of the files
    given, every one for a folder; none (no worker) when help is asked for, a cluster is named or no
    drawing is given."""
    if any(a in ("-h", "--help") or a.startswith("--scheduler") for a in args):
        return ()
    kinds = {os.path.splitext(a)[1].lower() for a in args} & set(DRAWING_SUFFIXES)
    if any(os.path.isdir(a) for a in args if not a.startswith("-")):
        kinds = set(DRAWING_SUFFIXES)
    return tuple(sorted(kinds))


def take() -> tuple[Any, Any] | None:
    """The worker started by :func:`start`, once (``None`` if there is none or it has ended)."""
    while _waiting:
        process, conn = _waiting.pop()
        if process.is_alive():
            return process, conn
        conn.close()
    return None


def _child(conn: Any, parent_end: Any, parent: int, kinds: tuple[str, ...]) -> None:
    """The forked worker: load what every batch needs, wait for the batch's work and settings, then be
    an ordinary worker (:func:`pathlen.batch.serve_adopted`).  Until then SIGTERM ends it (the
    interpreter's exit ends an untaken worker that way); Ctrl-C is the parent's to handle."""
    import signal

    signal.signal(signal.SIGINT, signal.SIG_IGN)
    parent_end.close()
    from pathlen import batch

    batch.serve_adopted(conn, parent, kinds)
