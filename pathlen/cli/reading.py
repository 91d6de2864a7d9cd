"""What every command that reads drawings shares: the reading options, the batch with progress, and the report
(standard output or a file written atomically, errors and warnings on standard error, the exit status)."""

from __future__ import annotations

import contextlib
import functools
import io
import math
import sys
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

import click

from pathlen.batch import (
    DEFAULT_MAX_MEMORY_MB,
    DEFAULT_TIMEOUT_S,
    FileResult,
    Limits,
    find_drawings,
    measure_file,
    run_batch,
)
from pathlen.defaults import DEFAULT_MAX_SEGMENTS, DEFAULT_RTOL
from pathlen.errors import PathlenError
from pathlen.export import OUTPUT_UNITS, load_rich, plain
from pathlen.importers import ImportOptions
from pathlen.units import MM_PER_UNIT

if TYPE_CHECKING:
    from rich.console import Console

#: Seconds to wait for a cluster's scheduler to take leave at the end of a batch.
CLOSE_TIMEOUT_S = 5.0
DRAWING_UNITS = tuple(sorted(k for k in MM_PER_UNIT if k not in ("px", "pt", "pc", "q")))


@dataclass(frozen=True)
class Reading:
    """The options every command that reads drawings shares (see :func:`reading_options`)."""

    paths: tuple[str, ...]
    fmt: str
    output: str | None
    units: str
    rtol: float
    join_tol: float
    jobs: int
    import_options: ImportOptions
    max_segments: int
    limits: Limits
    strict: bool
    report: str | None = None
    scheduler: str | None = None  # Dask scheduler address: run the batch on that cluster

    def files(self) -> list[str]:
        """The drawing files named or found in folders; a usage error when there are none."""
        return drawing_files(self.paths)


def finite_number(ctx: click.Context, param: click.Parameter, value: float | None) -> float | None:
    if value is not None and not math.isfinite(value):
        raise click.BadParameter("must be a finite number")
    return value


def reading_options(paths_required: bool = True, units: tuple[str, ...] = OUTPUT_UNITS
                    ) -> Callable[[Callable[..., Any]], Callable[..., Any]]:
    """Options shared by every command that reads drawings, handed to the command as ``reading``;
    ``units`` are the length units the command reports in (the first is the default)."""
    def decorate(f: Callable[..., Any]) -> Callable[..., Any]:
        @functools.wraps(f)
        def command(**kwargs: Any) -> Any:
            reading = _reading(**{k: kwargs.pop(k) for k in _READING_KEYS})
            return f(reading=reading, **kwargs)

        for option in reversed(_reading_options(paths_required, units)):
            command = option(command)
        return command

    return decorate


_READING_KEYS = ("paths", "fmt", "output", "units", "rtol", "drawing_units", "svg_dpi", "join_tol", "jobs",
                 "max_segments", "timeout", "max_memory", "strict", "recover", "hidden_layers", "svg_language",
                 "report", "scheduler")


Decorator = Callable[[Callable[..., Any]], Callable[..., Any]]


def _reading_options(paths_required: bool, units: tuple[str, ...]) -> list[Decorator]:
    return [
        click.argument("paths", nargs=-1, required=paths_required),
        click.option("--format", "fmt", type=click.Choice(["table", "json", "csv"]), default="table",
                     show_default=True, help="Output format."),
        click.option("--output", "-o", type=click.Path(dir_okay=False, writable=True), default=None,
                     help="Write the report to this file instead of standard output."),
        click.option("--units", type=click.Choice(units), default=units[0], show_default=True,
                     help="Units of every reported length."),
        click.option("--rtol", type=float, default=DEFAULT_RTOL, show_default=True,
                     help="Relative error target per segment."),
        click.option("--drawing-units", type=click.Choice(DRAWING_UNITS), default=None,
                     help="Units of DXF drawing coordinates, overriding $INSUNITS (unitless files are "
                          "otherwise taken as mm)."),
        click.option("--svg-dpi", type=click.FloatRange(min=1.0), default=None, callback=finite_number,
                     help="Pixels per inch of SVG files sized in px or not sized at all (default 96, the CSS "
                          "value; some drawing programs export at 72 or 90)."),
        click.option("--join-tol", type=float, default=0.01, show_default=True, callback=finite_number,
                     help="Distance in mm within which segment ends join into one contour."),
        click.option("--jobs", "-j", type=click.IntRange(min=0), default=1, show_default=True,
                     help="Worker processes (0: one per core)."),
        click.option("--max-segments", type=click.IntRange(min=1), default=DEFAULT_MAX_SEGMENTS, show_default=True,
                     help="Most segments a drawing's block and <use> copies are written out to, for contours and "
                          "cut order (lengths never need it)."),
        click.option("--timeout", type=click.FloatRange(min=0, min_open=True), default=DEFAULT_TIMEOUT_S,
                     show_default=True, callback=finite_number,
                     help="Seconds one file may take; past it the file fails."),
        click.option("--max-memory", type=click.IntRange(min=64), default=DEFAULT_MAX_MEMORY_MB, show_default=True,
                     metavar="MB", help="Memory one file may take (MB); past it the file fails."),
        click.option("--strict", is_flag=True, help="Fail a file on any warning (for automated pipelines)."),
        click.option("--recover", is_flag=True,
                     help="Measure what can be read of a damaged DXF file (refused by default)."),
        click.option("--svg-language", metavar="TAG", default=None,
                     help="The user's language for SVG systemLanguage conditions (a language tag such as en or "
                          "de-CH; default from the environment, named in the report when used)."),
        click.option("--report", type=click.Path(dir_okay=False), default=None, metavar="FILE.html",
                     help="Also write a one-file HTML report (totals, tables, pictures, cautions)."),
        click.option("--scheduler", metavar="tcp://HOST:8786", default=None,
                     help="Run the batch on a Dask cluster (pip install 'pathlen[cluster]'); its workers read the "
                          "files from a folder shared at the same path."),
        click.option("--hidden-layers", is_flag=True,
                     help="Measure DXF layers that are switched off or frozen too (left out by default)."),
    ]


def _reading(paths: tuple[str, ...], fmt: str, output: str | None, units: str, rtol: float, drawing_units: str | None,
             svg_dpi: float | None, join_tol: float, jobs: int, max_segments: int, timeout: float, max_memory: int,
             strict: bool, recover: bool, hidden_layers: bool, svg_language: str | None, report: str | None,
             scheduler: str | None) -> Reading:
    if not 0 < rtol < 1:
        raise click.BadParameter("must lie between 0 and 1", param_hint="--rtol")
    if not join_tol >= 0:
        raise click.BadParameter("must not be negative", param_hint="--join-tol")
    for name, target in (("--output", output), ("--report", report)):
        if target is not None and not (Path(target).parent or Path(".")).is_dir():
            raise click.BadParameter(f"folder {str(Path(target).parent)!r} does not exist", param_hint=name)
    return Reading(paths, fmt, output, units, rtol, join_tol, jobs,
                   ImportOptions(drawing_units, svg_dpi, recover, hidden_layers, svg_language), max_segments,
                   Limits(timeout, max_memory), strict, report, scheduler)


def drawing_files(paths: tuple[str, ...]) -> list[str]:
    try:
        return find_drawings(paths)
    except PathlenError as exc:
        raise click.UsageError(str(exc)) from None


def emit(results: list[Any], fmt: str, output: str | None, table: Callable[[Console], None],
         text: Callable[[], str], cautions: list[str] | None = None, report: str | None = None,
         document: Callable[[], dict[str, Any]] | None = None, figures: list[tuple[str, str]] | None = None,
         failed: bool = False) -> None:
    """Report a batch (errors and warnings on standard error), the HTML ``report`` of ``document()`` if
    asked for (with ``figures``, titled SVG pictures, after the files), and exit 0, or 1 if a file
    failed or ``failed`` (something else the command could not do, said in the report)."""
    from rich.console import Console

    err = Console(stderr=True, highlight=False, soft_wrap=True)
    for r in results:
        if not r.ok:
            err.print(f"[red]error[/red] {plain(r.path)}: {plain(r.error)}")
    if fmt == "table":
        if output:
            buf = io.StringIO()
            table(Console(file=buf, width=120, color_system=None))
            write_atomic(output, buf.getvalue())
        else:
            table(Console(soft_wrap=False))
    else:
        answer = text()
        if output:
            write_atomic(output, answer)
        else:
            click.echo(answer, nl=False)
        for r in results:
            for w in r.warnings:
                err.print(f"warning {plain(r.path)}: {plain(w)}")
        for c in cautions or []:
            err.print(f"caution: {plain(c)}")
    if report and document is not None:  # after the answer: a report that cannot be written loses nothing else
        from pathlen.export.report import drawing_pictures, render_report

        try:
            write_atomic(report, render_report(document(), drawing_pictures([r.path for r in results if r.ok]),
                                               figures))
        except click.ClickException as exc:
            err.print(f"[red]error[/red] report: {plain(exc.format_message())}")
            failed = True
        except (OSError, UnicodeError) as exc:
            err.print(f"[red]error[/red] report {plain(report)}: {plain(getattr(exc, 'strerror', None) or exc)}")
            failed = True
    sys.exit(1 if failed or any(not r.ok for r in results) else 0)


def collect(files: list[str], settings: Any, reading: Reading, work: Callable[[str, Any], Any] = measure_file,
            failed: Callable[..., Any] = FileResult, verb: str = "measuring") -> list[Any]:
    """Run the batch under the reading's limits, with a progress bar when standard error is a terminal;
    with ``--strict`` a file with warnings fails, its first warning as the reason."""
    results: list[Any] = [None] * len(files)
    client = None
    lost: list[str] = []
    if reading.scheduler:
        from pathlen.cluster import ClusterError, connect, run_on_cluster

        try:
            client = connect(reading.scheduler)
        except ClusterError as exc:
            raise click.UsageError(str(exc)) from None
        batch = run_on_cluster(client, files, settings, work, failed, reading.limits, lost)
    else:
        batch = run_batch(files, settings, reading.jobs, work, failed, reading.limits)
    load_rich()  # while the workers load their readers: side by side on two cores
    from rich.console import Console

    console = Console(stderr=True)
    if console.is_terminal and len(files) > 1:
        from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeElapsedColumn

        columns = (TextColumn("{task.description}"), BarColumn(), MofNCompleteColumn(), TimeElapsedColumn())
        with Progress(*columns, console=console, transient=True) as bar:
            task = bar.add_task(verb, total=len(files))
            doing = _Doing(verb, client)
            for i, r in batch:
                results[i] = r
                bar.update(task, advance=1, description=doing())
    else:
        for i, r in batch:
            results[i] = r
    if client is not None:
        with contextlib.suppress(Exception):
            client.close(timeout=CLOSE_TIMEOUT_S)  # a frozen scheduler never answers the goodbye
    if lost:
        missed = sum(1 for r in results if r is not None and not r.ok and r.error.startswith("not measured: "))
        console.print(f"[red]error[/red] cluster: {plain(lost[0])}; {missed} file{'s' * (missed != 1)} not measured",
                      highlight=False, soft_wrap=True)
    done = [r for r in results if r is not None]
    if reading.strict:
        for r in done:
            if r.ok and r.warnings:
                r.ok, r.error = False, f"warning taken as an error (--strict): {r.warnings[0]}"
    return done


class _Doing:
    """The progress line's words: on a cluster, how many of its workers are busy (asked of the scheduler
    at most every ``every_s`` seconds, not once per file)."""

    def __init__(self, verb: str, client: Any, every_s: float = 1.0) -> None:
        self.verb, self.client, self.every_s = verb, client, every_s
        self.text, self.asked = verb, -math.inf

    def __call__(self) -> str:
        import time

        if self.client is not None and time.monotonic() - self.asked >= self.every_s:
            from pathlen.cluster import busy_workers

            busy, workers = busy_workers(self.client)
            self.text, self.asked = f"{self.verb} ({busy} of {workers} workers busy)", time.monotonic()
        return self.text


def write_atomic(path: str, text: str) -> None:
    """Write ``text`` to ``path`` atomically (:func:`pathlen.atomic.write_atomic`); a file
    error for click when it cannot."""
    from pathlen.atomic import write_atomic as write

    try:
        write(Path(path), text)
    except OSError as exc:
        raise click.FileError(path, hint=exc.strerror or str(exc)) from None
