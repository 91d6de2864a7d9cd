"""``pathlen cut PATH... --profile NAME``: cutting time and cost; ``--calibrate`` fits a waterjet profile.

The estimate modules (shapely, scipy.spatial) are imported inside the command, so that
``pathlen measure`` starts without them.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

import click

from pathlen.cli.profile_files import profiles_or_exit
from pathlen.cli.reading import Reading, collect, emit, reading_options
from pathlen.errors import PathlenError
from pathlen.profiles import BUILTIN, Profile, write_setting

if TYPE_CHECKING:
    from pathlen.estimates.cut import CutEstimate


def _layer_list(text: str | None) -> tuple[str, ...]:
    return tuple(x.strip() for x in (text or "").split(",") if x.strip())


def _pick(profiles: dict[str, Profile], name: str | None) -> Profile:
    if not name:
        raise click.UsageError(f"--profile is required; one of: {', '.join(profiles)} (see 'pathlen profiles')")
    if name not in profiles:
        raise click.UsageError(f"no profile {name!r}; known: {', '.join(profiles)}")
    return profiles[name]


@click.command()
@reading_options(paths_required=False)
@click.option("--profile", "profile_name", metavar="NAME", help="Process profile (see 'pathlen profiles').")
@click.option("--profiles", "profile_files", multiple=True, type=click.Path(dir_okay=False),
              help="A TOML file of your own profiles (repeatable); its names replace built-in ones.")
@click.option("--quantity", "-q", type=click.IntRange(min=1), default=1, show_default=True,
              help="Parts of each drawing to cut.")
@click.option("--layers", help="Comma-separated layers (or #rrggbb SVG stroke colours) to cut; default: all others.")
@click.option("--engrave", help="Layers/colours marked at the profile's engrave feed, without piercing.")
@click.option("--ignore", help="Layers/colours left out.")
@click.option("--dedupe", is_flag=True, help="Cut segments drawn twice only once.")
@click.option("--calibrate", "calibrate_speed", type=click.FloatRange(min=0, min_open=True), metavar="MM_MIN",
              help="Waterjet: fit the profile's machinability to a test cut at this speed (mm/min) and write it "
                   "back to the profile's file; PATHS are then not needed.")
@click.option("--test-thickness", type=click.FloatRange(min=0, min_open=True), metavar="MM",
              help="With --calibrate: thickness of the test cut (default: the profile's).")
@click.option("--test-quality", type=click.FloatRange(1, 5), metavar="Q",
              help="With --calibrate: quality level of the test cut on the scale of Zeng and Kim's 1993 "
              "waterjet model (1 separation cut ... 5 finest; default: the profile's).")
def cut(reading: Reading, profile_name: str | None, profile_files: tuple[str, ...],
        quantity: int, layers: str | None, engrave: str | None, ignore: str | None, dedupe: bool,
        calibrate_speed: float | None, test_thickness: float | None, test_quality: float | None) -> None:
    """Estimate cutting time and cost of the drawings PATHS (DXF or SVG files, or folders) with a process
    profile; or, with --calibrate, fit a waterjet profile to a test cut."""
    from pathlen.estimates.cut import CutEstimate, CutSettings, cautions, estimate_file
    from pathlen.export import cut as cut_out

    profiles = profiles_or_exit(profile_files)
    profile = _pick(profiles, profile_name)
    if calibrate_speed is not None:
        _calibrate(profile, calibrate_speed, test_thickness, test_quality)
        return
    r = reading
    if not r.paths:
        raise click.UsageError("Missing argument 'PATHS...': drawings or folders to estimate")
    if engrave and profile.values.get("engrave_feed_mm_min") is None:
        raise click.UsageError(f"profile {profile.name!r} has no engrave_feed_mm_min, needed for --engrave")
    files = r.files()
    settings = CutSettings(profile, quantity, _layer_list(layers), _layer_list(engrave), _layer_list(ignore), dedupe,
                           r.join_tol, rtol=r.rtol, import_options=r.import_options, max_segments=r.max_segments)
    results: list[CutEstimate] = collect(files, settings, r, estimate_file, CutEstimate, "estimating")
    notes = cautions(profile)
    emit(results, r.fmt, r.output, lambda console: cut_out.render_table(results, r.units, profile, notes, console),
         lambda: cut_out.render_json(results, r.units, profile, notes) if r.fmt == "json"
         else cut_out.render_csv(results, r.units, profile), notes,
         report=r.report, document=lambda: cut_out.cut_document(results, r.units, profile, notes))


def _calibrate(profile: Profile, speed: float, thickness: float | None, quality: float | None) -> None:
    from pathlen.estimates.waterjet import WaterjetInputs, calibrated_machinability

    v = profile.values
    if v["process"] != "waterjet" or not profile.uses_waterjet_model:
        raise click.UsageError(f"--calibrate needs a waterjet profile that uses the speed model ({profile.name!r} "
                               "does not)")
    if Path(profile.source).resolve() == BUILTIN.resolve():
        raise click.UsageError(f"profile {profile.name!r} is built in: copy it into your own file and pass that "
                               "file with --profiles, so the calibration can be written there")
    inputs = WaterjetInputs(v["pressure_mpa"], v["orifice_mm"], v["focus_tube_mm"], v["abrasive_kg_min"],
                            v["machinability"], v["model_constant"], v["abrasive_factor"])
    h = thickness or v["thickness_mm"]
    q = quality or v["quality"]
    new = calibrated_machinability(inputs, h, q, speed)
    try:
        write_setting(Path(profile.source), profile.name, "machinability", new)
    except (PathlenError, OSError) as exc:
        raise click.UsageError(f"cannot write {profile.source}: {exc}") from None
    click.echo(f"{profile.name}: machinability {v['machinability']:g} -> {new:.6g} "
               f"(test cut {speed:g} mm/min at {h:g} mm, quality {q:g}); written to {profile.source}")
