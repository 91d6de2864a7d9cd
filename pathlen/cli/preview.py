"""``pathlen preview FILE -o OUT.svg|.png|.pdf``: a picture of exactly what was measured."""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

import click

from pathlen.errors import PathlenError

if TYPE_CHECKING:
    from pathlen.export.preview import Scene


@click.command()
@click.argument("path", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--output", "-o", type=click.Path(dir_okay=False, path_type=Path), required=True,
              help="The picture: .svg (curves kept exact), .png or .pdf.")
@click.option("--join-tol", type=click.FloatRange(min=0), default=0.01, show_default=True, metavar="MM",
              help="Distance within which segment ends join into one contour.")
@click.option("--drawing-units", default=None, help="Units of a DXF drawing without $INSUNITS (mm, in, ...).")
@click.option("--svg-dpi", type=click.FloatRange(min=1.0, max=1e6), default=None, help="px per inch of a px SVG.")
@click.option("--hidden-layers", is_flag=True, help="Treat DXF layers that are off or frozen as measured (they are "
              "shown faintly, as not measured, otherwise).")
@click.option("--dpi", type=click.FloatRange(min=10, max=1200), default=150.0, show_default=True,
              help="Resolution of PNG output.")
@click.option("--profile", help="Show the cut order of this process profile: pierces numbered, rapids dashed.")
@click.option("--profiles", "profile_files", multiple=True, type=click.Path(dir_okay=False),
              help="A TOML file of your own profiles.")
@click.option("--seam", "seam_edges", is_flag=True, help="Number the seam edges of each pattern piece, as "
              "'pathlen seam' does (with --allowance, --cut-layer, --sew-layer).")
@click.option("--allowance", type=click.FloatRange(min=0), default=10.0, show_default=True, metavar="MM")
@click.option("--cut-layer", "cut_layers", help="Layers or #rrggbb colours of cut lines (with --seam).")
@click.option("--sew-layer", "sew_layers", help="Layers or #rrggbb colours of drawn sew lines (with --seam).")
@click.option("--real-size", is_flag=True, help="SVG: sized in mm, so that printing it at 100 % or measuring it "
              "again gives the drawing's lengths (by default it has no size: a browser fits it to its window).")
@click.option("--plan", "plan_file", type=click.Path(dir_okay=False),
              help="A seam plan (with --seam): its allowances, and its matches listed beside the picture.")
def preview(path: Path, output: Path, join_tol: float, drawing_units: str | None, svg_dpi: float | None,
            hidden_layers: bool, dpi: float, profile: str | None, profile_files: tuple[str, ...], seam_edges: bool,
            allowance: float, cut_layers: str | None, sew_layers: str | None, real_size: bool, plan_file: str | None
            ) -> None:
    """Draw the drawing PATH as pathlen measured it: contours by kind, starts and directions, gaps, scale bar."""
    from pathlen.cli.reading import write_atomic
    from pathlen.export.preview import build_scene, render_raster, scene_svg
    from pathlen.importers import ImportOptions, read_drawing
    from pathlen.instances import expand
    from pathlen.units import MM_PER_UNIT

    if profile is not None:
        from pathlen.cli.profile_files import profiles_or_exit

        if profile not in profiles_or_exit(profile_files):
            raise click.BadParameter(f"no profile {profile!r} (see 'pathlen profiles')", param_hint="--profile")
    suffix = output.suffix.lower()
    if suffix not in (".svg", ".png", ".pdf"):
        raise click.BadParameter("must end in .svg, .png or .pdf", param_hint="--output")
    if drawing_units is not None and drawing_units not in MM_PER_UNIT:
        raise click.BadParameter(f"unknown unit {drawing_units!r}", param_hint="--drawing-units")
    if not (output.parent or Path(".")).is_dir():
        raise click.BadParameter(f"folder {str(output.parent)!r} does not exist", param_hint="--output")
    try:
        drawing = expand(read_drawing(path, ImportOptions(drawing_units, svg_dpi, hidden_layers=hidden_layers)))
    except PathlenError as exc:
        click.echo(f"error {path}: {exc}", err=True)
        raise SystemExit(1) from None
    scene = build_scene(drawing, path.name, path.suffix.lower() == ".svg", join_tol, cut_order=profile is not None)
    if plan_file and not seam_edges:
        raise click.UsageError("--plan goes with --seam")
    if seam_edges:
        _seam_marks(scene, path, ImportOptions(drawing_units, svg_dpi, hidden_layers=hidden_layers), join_tol,
                    allowance, cut_layers, sew_layers, plan_file)
    if suffix == ".svg":
        write_atomic(str(output), scene_svg(scene, fit=not real_size))
    else:
        from pathlen.atomic import write_file_atomic

        try:
            write_file_atomic(output, lambda tmp: render_raster(scene, tmp, dpi))
        except OSError as exc:
            raise click.FileError(str(output), hint=exc.strerror or str(exc)) from None
    click.echo(f"wrote {output}", err=True)


def _seam_marks(scene: Scene, path: Path, options: object, join_tol: float, allowance: float,
                cut_layers: str | None, sew_layers: str | None, plan_file: str | None) -> None:
    """Onto the scene: 'PIECE:EDGE' at a point of every edge as ``pathlen seam`` numbers them, the
    computed sew lines (dashed), notch ticks and, with a plan, its matches listed beside the picture."""
    from pathlen.batch import MeasureSettings
    from pathlen.estimates.seam_estimate import SeamSettings, estimate_seams
    from pathlen.estimates.seam_plan import load_seam_plan
    from pathlen.export import from_mm

    def split(text: str | None) -> tuple[str, ...]:
        return tuple(x.strip() for x in (text or "").split(",") if x.strip())

    try:
        plan = load_seam_plan(Path(plan_file)) if plan_file else None
    except PathlenError as exc:
        raise click.UsageError(str(exc)) from None
    settings = SeamSettings(allowance, plan=plan, cut_layers=split(cut_layers), sew_layers=split(sew_layers),
                            measure=MeasureSettings(join_tol_mm=join_tol, import_options=options))  # type: ignore[arg-type]
    result = estimate_seams(str(path), settings)
    if not result.ok:
        raise click.ClickException(f"seam edges: {result.error}")
    scene.labels = [(x, y, f"{p.name}:{k}") for p in result.pieces
                    for k, (x, y) in enumerate(p.edge_points, start=1)]
    scene.sew_lines = [line for p in result.pieces for line in p.sew_paths]
    scene.ticks = [t for p in result.pieces for t in p.notch_feet]
    scene.side_notes = [f"match {m.a} ~ {m.b}: {round(from_mm(m.difference_mm, 'mm'), 1) + 0.0:+.1f} mm "
                        f"({round(m.ease_pct, 1) + 0.0:+.1f} % ease){'' if m.ok else ' check'}" for m in result.matches]
