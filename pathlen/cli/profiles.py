"""``pathlen profiles``: list the process profiles and check them."""

from __future__ import annotations

from pathlib import Path

import click
from rich.console import Console
from rich.table import Table

from pathlen.cli.profile_files import profiles_or_exit
from pathlen.export import plain
from pathlen.profiles import BUILTIN


@click.command()
@click.option("--profiles", "profile_files", multiple=True, type=click.Path(dir_okay=False),
              help="A TOML file of your own profiles to check and list (repeatable).")
def profiles(profile_files: tuple[str, ...]) -> None:
    """List the process profiles and check them (one line per problem, exit status 2)."""
    from pathlen.estimates.cut import cutting_feed_mm_min

    known = profiles_or_exit(profile_files)
    table = Table(title="Process profiles")
    table.add_column("Name", no_wrap=True)
    for name, justify in (("Process", "left"), ("Material", "left"), ("Thickness (mm)", "right"),
                          ("Feed (mm/min)", "right"), ("Rate per hour", "right"), ("From", "left")):
        table.add_column(name, justify=justify, overflow="fold")  # type: ignore[arg-type]
    for p in known.values():
        v = p.values
        feed = cutting_feed_mm_min(p)
        origin = "built in" if Path(p.source).resolve() == BUILTIN.resolve() else p.source
        table.add_row(plain(p.name), plain(v["process"]), plain(v["material"]), f"{v['thickness_mm']:g}",
                      f"{feed:,.0f}" + (" (model)" if p.uses_waterjet_model else ""),
                      plain(f"{v['rate_per_hour']:g} {v['currency']}".strip()), plain(origin))
    Console(soft_wrap=False).print(table)
