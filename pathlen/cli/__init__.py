"""Command line: the ``pathlen`` group; one module per command, the shared reading options in
:mod:`pathlen.cli.reading`.  A command's module is imported only when the command runs (or its own
help is asked for), so ``pathlen --help`` starts without numpy; the group lists each command with
its one-line summary from :data:`COMMANDS` (a test holds them equal to the commands' own)."""

from __future__ import annotations

import importlib
import os
import sys

import click

from pathlen import BLAS_THREAD_VARIABLES

if "numpy" not in sys.modules:
    # one BLAS thread, read by the library as numpy loads it (see pathlen.batch.single_blas_thread): the
    # workers then skip threadpoolctl's import and library scan (~5 ms of every run's start)
    for _variable in BLAS_THREAD_VARIABLES:
        os.environ.setdefault(_variable, "1")

#: name -> (module, one-line summary as ``pathlen --help`` shows it)
COMMANDS: dict[str, tuple[str, str]] = {
    "measure": ("pathlen.cli.measure", "Measure every path in the drawings PATHS..."),
    "cut": ("pathlen.cli.cut", "Estimate cutting time and cost of the..."),
    "seam": ("pathlen.cli.seam", "Seam lengths of the pattern pieces in..."),
    "bead": ("pathlen.cli.bead", "Sealant for the joints drawn in PATHS:..."),
    "nest": ("pathlen.cli.nest", "Place the parts of an order (ORDER.toml)..."),
    "quote": ("pathlen.cli.quote", "Price the order ORDER.toml: parts nested..."),
    "preview": ("pathlen.cli.preview", "Draw the drawing PATH as pathlen measured..."),
    "profiles": ("pathlen.cli.profiles", "List the process profiles and check them..."),
    "watch": ("pathlen.cli.watch", "Measure or estimate every drawing dropped..."),
}


class _Commands(click.Group):
    """A group that imports a command's module when the command is used."""

    def list_commands(self, ctx: click.Context) -> list[str]:
        return list(COMMANDS)

    def get_command(self, ctx: click.Context, name: str) -> click.Command | None:
        if name not in COMMANDS:
            return None
        return getattr(importlib.import_module(COMMANDS[name][0]), name)

    def format_commands(self, ctx: click.Context, formatter: click.HelpFormatter) -> None:
        with formatter.section("Commands"):
            formatter.write_dl([(name, summary) for name, (_, summary) in COMMANDS.items()])


@click.group(cls=_Commands, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(package_name="pathlen")
def main() -> None:
    """pathlen: exact path lengths from drawings, with error bounds."""


#: Commands after which the ``pathlen`` program ends at once (see :func:`run`): batches whose workers are
#: stopped and whose files are closed by the time the command returns.
QUICK_EXIT = frozenset({"measure", "cut", "seam", "bead"})


def run() -> None:
    """The ``pathlen`` program: :func:`main`; after a :data:`QUICK_EXIT` command, whatever its exit status,
    the output is flushed and the process ends at once (``os._exit``), skipping the interpreter's teardown
    of numpy, rich and the rest: about 40 ms, a sixth of a small file's whole run.  An error that is not
    an exit (a bug's traceback) and every other command end the usual way, and so does
    ``python -m pathlen`` (for profilers and coverage, which finish their work at exit)."""
    quick = len(sys.argv) > 1 and sys.argv[1] in QUICK_EXIT
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


__all__ = ["COMMANDS", "QUICK_EXIT", "main", "run"]
