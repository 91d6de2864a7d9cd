"""``pathlen seam PATH...``: sew lines of pattern pieces, seams and thread by stitch type."""

from __future__ import annotations

import re
from pathlib import Path

import click

from pathlen.batch import MeasureSettings
from pathlen.cli.reading import Reading, collect, emit, reading_options
from pathlen.errors import PathlenError


def _cone_mm(text: str | None) -> float | None:
    if text is None:
        return None
    m = re.fullmatch(r"\s*([0-9.]+)\s*(m|yd)?\s*", text.lower())
    if not m or not float(m.group(1)) > 0:
        raise click.BadParameter("a length such as 5000m or 5500yd", param_hint="--cone")
    return float(m.group(1)) * (914.4 if m.group(2) == "yd" else 1000.0)


def _layers(text: str | None) -> tuple[str, ...]:
    return tuple(x.strip() for x in (text or "").split(",") if x.strip())


@click.command()
@reading_options(units=("cm", "mm", "in"))
@click.option("--allowance", type=click.FloatRange(min=0), default=10.0, show_default=True, metavar="MM",
              help="Seam allowance where a piece has no drawn sew line (mm).")
@click.option("--stitch", type=int, default=301, show_default=True, help="ISO 4915 stitch type without a plan.")
@click.option("--spc", type=click.FloatRange(min=0, min_open=True), help="Stitches per cm.")
@click.option("--spi", type=click.FloatRange(min=0, min_open=True), help="Stitches per inch.")
@click.option("--thickness", type=click.FloatRange(min=0, min_open=True), metavar="MM",
              help="Seam thickness, for the lockstitch (301) model 2 + 2·T·S with --spc or --spi.")
@click.option("--plan", "plan_file", type=click.Path(dir_okay=False), help="A TOML seam plan.")
@click.option("--quantity", "-q", type=click.IntRange(min=1), default=1, show_default=True, help="Garments to make.")
@click.option("--waste", "waste_pct", type=click.FloatRange(0, 100), default=12.5, show_default=True,
              help="Thread waste allowance in percent (common practice 10-15).")
@click.option("--cone", metavar="LENGTH", help="Thread per cone (5000m, 5500yd): cones to order.")
@click.option("--cut-layer", "cut_layers", help="Layers (comma separated) holding cut lines (default: D6673 layer 1; "
              "plain drawings: every layer but the sew layers).")
@click.option("--sew-layer", "sew_layers", help="Layers holding drawn sew lines (default: D6673 layer 14).")
def seam(reading: Reading, allowance: float, stitch: int, spc: float | None, spi: float | None,
         thickness: float | None, plan_file: str | None, quantity: int, waste_pct: float, cone: str | None,
         cut_layers: str | None, sew_layers: str | None) -> None:
    """Seam lengths of the pattern pieces in PATHS, their edges and matches, and thread by stitch type."""
    from pathlen.estimates.seam_estimate import SeamEstimate, SeamSettings, cautions, estimate_seams
    from pathlen.estimates.seam_plan import load_seam_plan
    from pathlen.estimates.thread import STITCH_RATIO
    from pathlen.export import seam as seam_out

    r = reading
    if spc is not None and spi is not None:
        raise click.UsageError("give --spc or --spi, not both")
    if stitch not in STITCH_RATIO:
        raise click.BadParameter(f"unknown stitch type; known: {', '.join(map(str, sorted(STITCH_RATIO)))}",
                                 param_hint="--stitch")
    try:
        plan = load_seam_plan(Path(plan_file)) if plan_file else None
    except PathlenError as exc:
        raise click.UsageError(str(exc)) from None
    density = spc / 10.0 if spc else (spi / 25.4 if spi else None)
    cone_mm = _cone_mm(cone)
    settings = SeamSettings(allowance, stitch, density, thickness, plan, quantity, waste_pct, _layers(cut_layers),
                            _layers(sew_layers), MeasureSettings(rtol=r.rtol, join_tol_mm=r.join_tol,
                                                                 import_options=r.import_options,
                                                                 max_segments=r.max_segments))
    results: list[SeamEstimate] = collect(r.files(), settings, r, estimate_seams, SeamEstimate, "estimating")
    notes = cautions()
    emit(results, r.fmt, r.output,
         lambda console: seam_out.render_table(results, r.units, settings, cone_mm, notes, console),
         lambda: seam_out.render_json(results, r.units, settings, cone_mm, notes) if r.fmt == "json"
         else seam_out.render_csv(results, r.units), notes,
         report=r.report, document=lambda: seam_out.seam_document(results, r.units, settings, cone_mm, notes))
