"""Command line: the ``pathlen`` group; one module per command, the shared reading options in
:mod:`pathlen.cli.reading`.  Commands are registered here, so no command module imports another."""

from __future__ import annotations

import click

from pathlen.cli.bead import bead
from pathlen.cli.cut import cut
from pathlen.cli.measure import measure
from pathlen.cli.nest import nest
from pathlen.cli.preview import preview
from pathlen.cli.profiles import profiles
from pathlen.cli.quote import quote
from pathlen.cli.seam import seam
from pathlen.cli.watch import watch


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(package_name="pathlen")
def main() -> None:
    """pathlen: exact path lengths from drawings, with error bounds."""


for _command in (measure, cut, seam, bead, nest, quote, preview, profiles, watch):
    main.add_command(_command)

__all__ = ["main"]
