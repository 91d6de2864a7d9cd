"""The ``pathlen`` program (the console script): the command line of :mod:`pathlen.cli`, started and ended
for speed.  This module loads neither click nor numpy: a batch command's first worker is forked before
them (:mod:`pathlen.head_start`) and loads numpy and the measuring modules while this process loads
click, the command and rich."""

from __future__ import annotations

import os
import sys

from pathlen import one_blas_thread_environment

#: Commands after which the ``pathlen`` program ends at once (see :func:`run`): batches whose workers are
#: stopped and whose files are closed by the time the command returns.
QUICK_EXIT = frozenset({"measure", "cut", "seam", "bead"})


def run() -> None:
    """The ``pathlen`` program: :func:`pathlen.cli.main`.  For a :data:`QUICK_EXIT` command the batch's
    first worker is forked first, and after it, whatever its exit status, the output is flushed and the
    process ends at once (``os._exit``), skipping the interpreter's teardown of numpy, rich and the rest:
    about 40 ms, a sixth of a small file's whole run.  An error that is not an exit (a bug's traceback)
    and every other command end the usual way, and so does ``python -m pathlen`` (for profilers and
    coverage, which finish their work at exit)."""
    one_blas_thread_environment()  # before a worker is forked: it loads numpy
    quick = len(sys.argv) > 1 and sys.argv[1] in QUICK_EXIT
    if quick and "numpy" not in sys.modules:
        from pathlen import head_start

        head_start.start(sys.argv[2:])
    from pathlen.cli import main

    try:
        main()
    except SystemExit as exc:
        if not quick:
            raise
        code = exc.code
    else:  # pragma: no cover - click's main always ends in SystemExit
        code = 0
    if isinstance(code, str):  # sys.exit("message"): printed, status 1, as the interpreter does
        print(code, file=sys.stderr)
        code = 1
    status = 0 if code is None else int(code)
    for stream in (sys.stdout, sys.stderr):
        try:
            stream.flush()
        except (OSError, ValueError):  # a closed pipe (| head): the interpreter's own status for it
            status = status or 120
    os._exit(status)
