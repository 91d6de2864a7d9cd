"""Command line: the ``pathlen`` group; one module per command, the shared reading options in
:mod:`pathlen.cli.reading`.  A command's module is imported only when the command runs (or its own
help is asked for), so ``pathlen --help`` starts without numpy; the group lists each command with
its one-line summary from :data:`COMMANDS` (a test holds them equal to the commands' own).  The
``pathlen`` program (:mod:`pathlen.program`) runs :func:`main`; so does ``python -m pathlen``."""

from __future__ import annotations

import importlib

import click

from pathlen import one_blas_thread_environment

one_blas_thread_environment()

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


__all__ = ["COMMANDS", "main"]
