"""``pathlen measure PATH...``: lengths per file, layer and stroke colour."""

from __future__ import annotations

import click

from pathlen.batch import MeasureSettings
from pathlen.cli.reading import Reading, collect, emit, reading_options
from pathlen.export import csv as csv_out
from pathlen.export import json as json_out
from pathlen.export import table as table_out


@click.command()
@reading_options()
def measure(reading: Reading) -> None:
    """Measure every path in the drawings PATHS (DXF or SVG files, or folders searched for them)."""
    r = reading
    settings = MeasureSettings(rtol=r.rtol, join_tol_mm=r.join_tol, import_options=r.import_options,
                               max_segments=r.max_segments)
    results = collect(r.files(), settings, r)
    emit(results, r.fmt, r.output, lambda console: table_out.render(results, r.units, console),
         lambda: json_out.render(results, r.units) if r.fmt == "json" else csv_out.render(results, r.units),
         report=r.report, document=lambda: json_out.measure_document(results, r.units))
