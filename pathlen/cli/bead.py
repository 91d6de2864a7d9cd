"""``pathlen bead PATH... --bead SPEC | --plan PLAN.toml``: sealant volume, packs, backer rod, time."""

from __future__ import annotations

from pathlib import Path

import click

from pathlen.batch import MeasureSettings
from pathlen.cli.reading import Reading, collect, emit, finite_number, reading_options
from pathlen.errors import PathlenError


@click.command()
@reading_options()
@click.option("--bead", "bead_spec", metavar="SPEC",
              help="One bead for every path: rect:WxD, fillet:AxB, cove:R or round:D (mm).")
@click.option("--plan", "plan_file", type=click.Path(dir_okay=False), help="A TOML bead plan: [[joint]] tables "
              "with layer (or color), section and sides.")
@click.option("--pack", "pack", default="310ml", show_default=True,
              help="Pack size: ml or US fl oz (310ml, 600ml, 10.1floz).")
@click.option("--waste", "waste_pct", type=click.FloatRange(0, 100), default=10.0, show_default=True,
              callback=finite_number, help="Waste allowance in percent (common practice 5-15).")
@click.option("--gun-speed", "gun_speed", type=click.FloatRange(min=0.1, max=10_000), metavar="MM_S",
              callback=finite_number, help="Bead laying speed (mm/s, 0.1 to 10000), for the time at the gun.")
@click.option("--pack-change-s", type=click.FloatRange(min=0, max=3600), default=30.0, show_default=True,
              callback=finite_number, help="Seconds to change a pack (with --gun-speed).")
@click.option("--pack-price", type=click.FloatRange(min=0, max=1e9), callback=finite_number,
              help="Price of one pack of the command line's pack (plan products carry their own).")
@click.option("--picture", type=click.Path(dir_okay=False), metavar="FILE.svg|png|pdf",
              help="Draw the first drawing's joints, each in its own colour (unsealed paths grey).")
def bead(reading: Reading, bead_spec: str | None, plan_file: str | None, pack: str, waste_pct: float,
         gun_speed: float | None, pack_change_s: float, pack_price: float | None, picture: str | None) -> None:
    """Sealant for the joints drawn in PATHS: volume, whole packs after waste, backer rod, time and cost."""
    from pathlen.estimates.bead import (
        BeadEstimate,
        BeadPlan,
        BeadSettings,
        Joint,
        cautions,
        estimate_beads,
        load_plan,
        parse_pack,
        parse_section,
    )
    from pathlen.export import bead as bead_out

    r = reading
    if (bead_spec is None) == (plan_file is None):
        raise click.UsageError("give either --bead SPEC or --plan PLAN.toml")
    try:
        plan = load_plan(Path(plan_file)) if plan_file else BeadPlan([Joint("", parse_section(bead_spec or ""))])
        pack_ml = parse_pack(pack)
    except PathlenError as exc:
        raise click.UsageError(str(exc)) from None
    settings = BeadSettings(plan.joints, pack_ml, waste_pct, gun_speed, pack_change_s, pack_price,
                            MeasureSettings(rtol=r.rtol, join_tol_mm=r.join_tol, import_options=r.import_options,
                                            max_segments=r.max_segments), plan.products,
                            "in" if r.units in ("in", "ft") else "mm")
    if picture and Path(picture).suffix.lower() not in (".svg", ".png", ".pdf"):
        raise click.BadParameter("must end in .svg, .png or .pdf", param_hint="--picture")
    results: list[BeadEstimate] = collect(r.files(), settings, r, estimate_beads, BeadEstimate, "estimating")
    first = next((x for x in results if x.ok), None)
    if picture and first is not None:
        _draw(picture, first.path, settings.joints, r)
    notes = cautions()
    emit(results, r.fmt, r.output, lambda console: bead_out.render_table(results, r.units, settings, notes, console),
         lambda: bead_out.render_json(results, r.units, settings, notes) if r.fmt == "json"
         else bead_out.render_csv(results, r.units, settings), notes,
         report=r.report, document=lambda: bead_out.bead_document(results, r.units, settings, notes))


def _draw(picture: str, path: str, joints: list, r: Reading) -> None:
    from pathlen.export.bead_picture import write_bead_picture
    from pathlen.importers import read_drawing
    from pathlen.instances import expand

    try:
        drawing = expand(read_drawing(Path(path), r.import_options), r.max_segments, "the picture")
        write_bead_picture(picture, Path(path), drawing, joints)
    except PathlenError as exc:
        raise click.ClickException(f"picture: {exc}") from None
    except OSError as exc:
        raise click.FileError(picture, hint=exc.strerror or str(exc)) from None
