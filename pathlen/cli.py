"""Command line: ``pathlen measure PATH...``; ``cut`` and ``profiles`` live in :mod:`pathlen.cli_cut`."""

from __future__ import annotations

import io
import os
import sys
import tempfile
from collections.abc import Callable
from pathlib import Path
from typing import Any

import click
from rich.console import Console
from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeElapsedColumn

from pathlen.batch import FileResult, MeasureSettings, find_drawings, measure_file, run_batch
from pathlen.errors import PathlenError
from pathlen.export import OUTPUT_UNITS
from pathlen.export import csv as csv_out
from pathlen.export import json as json_out
from pathlen.export import table as table_out
from pathlen.geometry import MM_PER_UNIT
from pathlen.importers import ImportOptions
from pathlen.measure import DEFAULT_RTOL

DRAWING_UNITS = tuple(sorted(k for k in MM_PER_UNIT if k not in ("px", "pt", "pc", "q")))


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(package_name="pathlen")
def main() -> None:
    """pathlen: exact path lengths from drawings, with error bounds."""


def reading_options(paths_required: bool = True) -> Callable[[Callable[..., Any]], Callable[..., Any]]:
    """Options shared by every command that reads drawings."""
    return lambda f: _with_options(f, paths_required)


def _with_options(f: Callable[..., Any], paths_required: bool) -> Callable[..., Any]:
    options = [
        click.argument("paths", nargs=-1, required=paths_required),
        click.option("--format", "fmt", type=click.Choice(["table", "json", "csv"]), default="table",
                     show_default=True, help="Output format."),
        click.option("--output", "-o", type=click.Path(dir_okay=False, writable=True), default=None,
                     help="Write the report to this file instead of standard output."),
        click.option("--units", type=click.Choice(OUTPUT_UNITS), default="mm", show_default=True,
                     help="Units of every reported length."),
        click.option("--rtol", type=float, default=DEFAULT_RTOL, show_default=True,
                     help="Relative error target per segment."),
        click.option("--drawing-units", type=click.Choice(DRAWING_UNITS), default=None,
                     help="Units of DXF drawing coordinates, overriding $INSUNITS (unitless files are "
                          "otherwise taken as mm)."),
        click.option("--svg-dpi", type=click.FloatRange(min=1.0), default=None,
                     help="Pixels per inch of SVG files sized in px or not sized at all (default 96, the CSS "
                          "value; some drawing programs export at 72 or 90)."),
        click.option("--join-tol", type=float, default=0.01, show_default=True,
                     help="Distance in mm within which segment ends join into one contour."),
        click.option("--jobs", "-j", type=click.IntRange(min=0), default=1, show_default=True,
                     help="Worker processes (0: one per core)."),
    ]
    for option in reversed(options):
        f = option(f)
    return f


def check_reading_options(rtol: float, join_tol: float) -> None:
    if not 0 < rtol < 1:
        raise click.BadParameter("must lie between 0 and 1", param_hint="--rtol")
    if not join_tol >= 0:
        raise click.BadParameter("must not be negative", param_hint="--join-tol")


def drawing_files(paths: tuple[str, ...]) -> list[str]:
    try:
        return find_drawings(paths)
    except PathlenError as exc:
        raise click.UsageError(str(exc)) from None


@main.command()
@reading_options()
def measure(paths: tuple[str, ...], fmt: str, output: str | None, units: str, rtol: float,
            drawing_units: str | None, svg_dpi: float | None, join_tol: float, jobs: int) -> None:
    """Measure every path in the drawings PATHS (DXF or SVG files, or folders searched for them)."""
    check_reading_options(rtol, join_tol)
    files = drawing_files(paths)
    settings = MeasureSettings(rtol=rtol, join_tol_mm=join_tol,
                               import_options=ImportOptions(drawing_units, svg_dpi))
    results = collect(files, settings, jobs)
    emit(results, fmt, output, lambda console: table_out.render(results, units, console),
         lambda: json_out.render(results, units) if fmt == "json" else csv_out.render(results, units))


def emit(results: list[Any], fmt: str, output: str | None, table: Callable[[Console], None],
         text: Callable[[], str], cautions: list[str] | None = None) -> None:
    """Report a batch (errors and warnings on standard error) and exit 0, or 1 if a file failed."""
    err = Console(stderr=True, highlight=False, soft_wrap=True)
    for r in results:
        if not r.ok:
            err.print(f"[red]error[/red] {r.path}: {r.error}")
    if fmt == "table":
        if output:
            buf = io.StringIO()
            table(Console(file=buf, width=120, color_system=None))
            write_atomic(output, buf.getvalue())
        else:
            table(Console(soft_wrap=False))
    else:
        report = text()
        if output:
            write_atomic(output, report)
        else:
            click.echo(report, nl=False)
        for r in results:
            for w in r.warnings:
                err.print(f"warning {r.path}: {w}")
        for c in cautions or []:
            err.print(f"caution: {c}")
    sys.exit(1 if any(not r.ok for r in results) else 0)


def collect(files: list[str], settings: Any, jobs: int, work: Callable[[str, Any], Any] = measure_file,
            failed: Callable[..., Any] = FileResult, verb: str = "measuring") -> list[Any]:
    """Run the batch, with a progress bar when standard error is a terminal."""
    results: list[Any] = [None] * len(files)
    console = Console(stderr=True)
    batch = run_batch(files, settings, jobs, work, failed)
    if console.is_terminal and len(files) > 1:
        columns = (TextColumn(verb), BarColumn(), MofNCompleteColumn(), TimeElapsedColumn())
        with Progress(*columns, console=console, transient=True) as bar:
            task = bar.add_task(verb, total=len(files))
            for i, r in batch:
                results[i] = r
                bar.advance(task)
    else:
        for i, r in batch:
            results[i] = r
    return [r for r in results if r is not None]


def write_atomic(path: str, text: str) -> None:
    """Write ``text`` to ``path`` through a temporary file, so a crash leaves the old file."""
    target = Path(path)
    try:
        fd, tmp = tempfile.mkstemp(dir=target.parent or Path("."), prefix=f".{target.name}.", suffix=".tmp")
        with os.fdopen(fd, "w", encoding="utf-8", newline="") as fh:
            fh.write(text)
        os.replace(tmp, target)
    except OSError as exc:
        raise click.FileError(path, hint=exc.strerror or str(exc)) from None


from pathlen import cli_cut  # noqa: E402, F401 - registers the estimate commands on ``main``
