"""``pathlen seam PATH...``: sew lines of pattern pieces, seams, thread by position, fabric by marker."""

from __future__ import annotations

import re
from pathlib import Path
from typing import Any

import click

from pathlen.batch import MeasureSettings
from pathlen.cli.reading import Reading, collect, emit, finite_number, reading_options
from pathlen.errors import PathlenError


def _cone_mm(text: str | None) -> float | None:
    if text is None:
        return None
    m = re.fullmatch(r"\s*([0-9]+(?:\.[0-9]*)?|\.[0-9]+)\s*(m|yd)?\s*", text.lower())
    if not m or not float(m.group(1)) > 0:
        raise click.BadParameter(f"{text!r} is not a length such as 5000m or 5500yd", param_hint="--cone")
    return float(m.group(1)) * (914.4 if m.group(2) == "yd" else 1000.0)


def _layers(text: str | None) -> tuple[str, ...]:
    return tuple(x.strip() for x in (text or "").split(",") if x.strip())


def _checked(key: str, value: float | None) -> float | None:
    from pathlen.estimates.thread import check_value

    if value is None:
        return None
    try:
        return check_value(key, value, f"--{key}")
    except PathlenError as exc:
        raise click.UsageError(str(exc)) from None


@click.command()
@reading_options(units=("cm", "mm", "in"))
@click.option("--allowance", type=click.FloatRange(min=0, max=1000), default=10.0, show_default=True, metavar="MM",
              callback=finite_number, help="Seam allowance where a piece has no drawn sew line (mm).")
@click.option("--stitch", type=int, default=301, show_default=True, help="ISO 4915 stitch type without a plan.")
@click.option("--spc", type=float, help="Stitches per cm (default 4).")
@click.option("--spi", type=float, help="Stitches per inch.")
@click.option("--thickness", type=float, metavar="MM", help="Seam thickness T (mm, default 1.5).")
@click.option("--width", "width", type=float, metavar="MM",
              help="Seam or cover width W (mm) for overedge and cover stitches (default per type).")
@click.option("--plan", "plan_file", type=click.Path(dir_okay=False), help="A TOML seam plan.")
@click.option("--quantity", "-q", type=click.IntRange(min=1), default=1, show_default=True, help="Garments to make.")
@click.option("--waste", "waste_pct", type=click.FloatRange(0, 100), default=12.5, show_default=True,
              callback=finite_number, help="Thread waste allowance in percent (common practice 10-15).")
@click.option("--cone", metavar="LENGTH", help="Thread per cone (5000m, 5500yd): whole cones per thread position.")
@click.option("--cut-layer", "cut_layers", help="Layers (comma separated) holding cut lines (default: D6673 layer 1; "
              "plain drawings: every layer but the sew layers).")
@click.option("--sew-layer", "sew_layers", help="Layers holding drawn sew lines (default: D6673 layer 14).")
@click.option("--marker", is_flag=True, help="Lay the pieces on the fabric roll: marker length, efficiency, fabric "
              "per garment (also when the plan has a [marker] table).")
@click.option("--fabric-width", metavar="LENGTH", help="Usable fabric width (1500, 150cm, 60in).")
@click.option("--ratio", metavar="SIZE:N,...", help="Garments per size in one marker (S:1,M:2; or N for an unsized "
              "pattern; default one of each size).")
@click.option("--gsm", type=click.FloatRange(min=0, min_open=True), callback=finite_number,
              help="Fabric mass in g/m², for grams per garment.")
@click.option("--marker-time", type=click.FloatRange(min=0, min_open=True, max=3600), default=20.0, show_default=True,
              callback=finite_number, metavar="SECONDS", help="Time the nesting engine may spend on each marker.")
@click.option("--seed", type=int, help="Repeatable markers (one engine thread).")
@click.option("--marker-picture", type=click.Path(dir_okay=False), metavar="FILE.svg|png|pdf",
              help="Draw the marker (one file; with several pattern files, the first's).")
def seam(reading: Reading, allowance: float, stitch: int, spc: float | None, spi: float | None,
         thickness: float | None, width: float | None, plan_file: str | None, quantity: int, waste_pct: float,
         cone: str | None, cut_layers: str | None, sew_layers: str | None, marker: bool, fabric_width: str | None,
         ratio: str | None, gsm: float | None, marker_time: float, seed: int | None, marker_picture: str | None
         ) -> None:
    """Seam lengths of the pattern pieces in PATHS, their edges and matches, thread by stitch type and
    thread position, and (with --marker) fabric by marker."""
    from pathlen.estimates.seam_estimate import SeamEstimate, SeamSettings, cautions, estimate_seams
    from pathlen.estimates.seam_plan import load_seam_plan
    from pathlen.estimates.thread import stitch as stitch_type
    from pathlen.export import seam as seam_out

    r = reading
    if spc is not None and spi is not None:
        raise click.UsageError("give --spc or --spi, not both")
    try:
        stitch_type(stitch, "--stitch")
        plan = load_seam_plan(Path(plan_file)) if plan_file else None
    except PathlenError as exc:
        raise click.UsageError(str(exc)) from None
    density = (_checked("spc", spc) or 0) / 10.0 if spc is not None else (
        (_checked("spi", spi) or 0) / 25.4 if spi is not None else None)
    marker_settings = _marker_settings(marker, plan, fabric_width, ratio, gsm, marker_time, seed, marker_picture)
    cone_mm = _cone_mm(cone)
    settings = SeamSettings(allowance, stitch, density, _checked("thickness", thickness), plan, quantity, waste_pct,
                            _layers(cut_layers), _layers(sew_layers),
                            MeasureSettings(rtol=r.rtol, join_tol_mm=r.join_tol, import_options=r.import_options,
                                            max_segments=r.max_segments),
                            _checked("width", width), marker_settings.gap_mm if marker_settings else None)
    results: list[SeamEstimate] = collect(r.files(), settings, r, estimate_seams, SeamEstimate, "estimating")
    markers = _lay(results, marker_settings) if marker_settings else []
    notes = cautions()
    if markers and marker_picture:
        from pathlen.cli.layouts import draw_layout

        draw_layout(markers[0].result, marker_picture, f"marker {Path(markers[0].path).name}")
    figures = _figures(markers) if r.report else None
    emit(results, r.fmt, r.output,
         lambda console: seam_out.render_table(results, r.units, settings, cone_mm, notes, console, markers),
         lambda: seam_out.render_json(results, r.units, settings, cone_mm, notes, markers) if r.fmt == "json"
         else seam_out.render_csv(results, r.units, cone_mm, markers), notes,
         report=r.report, figures=figures,
         document=lambda: seam_out.seam_document(results, r.units, settings, cone_mm, notes, markers))


def _marker_settings(wanted: bool, plan: Any, fabric_width: str | None, ratio: str | None, gsm: float | None,
                     time_s: float, seed: int | None, picture: str | None) -> Any:
    """The marker's settings from the command line over the plan's [marker] table; None without a marker."""
    from pathlen.cli.layouts import length_mm
    from pathlen.estimates.marker import MarkerSettings
    from pathlen.estimates.seam_plan import parse_ratio

    table = plan.marker if plan is not None else None
    planned = table is not None and (table.fabric_width_mm is not None or table.ratio is not None)
    if not (wanted or planned or fabric_width or ratio):
        if picture:
            raise click.UsageError("--marker-picture draws the marker: give --marker and --fabric-width")
        return None
    if picture and Path(picture).suffix.lower() not in (".svg", ".png", ".pdf"):
        raise click.BadParameter("must end in .svg, .png or .pdf", param_hint="--marker-picture")
    width = length_mm(fabric_width, "--fabric-width") if fabric_width else (table.fabric_width_mm if table else None)
    if width is None:
        raise click.UsageError("the marker needs the fabric width: --fabric-width 1500 (mm) or fabric_width in the "
                               "plan's [marker] table")
    try:
        sizes = parse_ratio(ratio, "--ratio") if ratio else (table.ratio if table else None)
    except PathlenError as exc:
        raise click.UsageError(str(exc)) from None
    return MarkerSettings(width, sizes, gsm if gsm is not None else (table.gsm if table else None),
                          time_s=time_s, seed=seed, rotations=dict(table.rotations) if table else {},
                          mirrored=table.mirrored if table else ())


def _lay(results: list[Any], settings: Any) -> list[Any]:
    """One marker per pattern file that was read; a file whose marker cannot be laid fails its line."""
    from pathlen.cli.layouts import run_nest_status
    from pathlen.errors import InputError
    from pathlen.estimates.marker import lay_marker

    markers = []
    for r in results:
        if not r.ok:
            continue
        try:
            markers.append(run_nest_status(lambda status, r=r: lay_marker(r, settings, status)))
        except InputError as exc:
            r.ok, r.error = False, f"marker: {exc}"
    return markers


def _figures(markers: list[Any]) -> list[tuple[str, str]]:
    from pathlen.export.nest_picture import nest_svg

    return [(f"Marker {Path(m.path).name}", nest_svg(m.result, f"marker {Path(m.path).name}")) for m in markers]
