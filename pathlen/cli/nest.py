"""``pathlen nest ORDER.toml | DRAWINGS...``: parts placed on a roll or on sheets, for material estimates."""

from __future__ import annotations

import math
import re
from pathlib import Path
from typing import TYPE_CHECKING, Any

import click

from pathlen.cli.layouts import LENGTH_UNITS, draw_layout, layout_svg, length_mm, run_nest_status
from pathlen.cli.profile_files import profiles_or_exit
from pathlen.cli.reading import Reading, collect, drawing_files, emit, reading_options
from pathlen.errors import PathlenError

if TYPE_CHECKING:
    from pathlen.nest.order import OrderLine
    from pathlen.nest.parts import PartsOutcome

def sheet_size(text: str) -> Any:
    """``WIDTHxLENGTH[:COUNT]`` with an optional unit after either number (``1250x2500``, ``48x96in:6``)."""
    from pathlen.nest.layout import SheetSize

    body, _, count = text.partition(":")
    unit = re.search(rf"({'|'.join(LENGTH_UNITS)})\s*$", body)
    sides = body.lower().split("x")
    if len(sides) != 2:
        raise click.BadParameter(f"{text!r} is not WIDTHxLENGTH[:COUNT], e.g. 1250x2500 or 48x96in:6",
                                 param_hint="--sheet")
    suffix = unit.group(1) if unit and not re.search(r"[a-z]", sides[0]) else ""
    width, length = length_mm(sides[0] + suffix, "--sheet"), length_mm(sides[1], "--sheet")
    n = None
    if count:
        if not count.strip().isdigit() or int(count) < 1:
            raise click.BadParameter(f"sheet count {count!r} must be a whole number of at least 1",
                                     param_hint="--sheet")
        n = int(count)
    return SheetSize(width, length, n)


@click.command()
@reading_options()
@click.option("--roll", "roll", metavar="WIDTH", help="Nest on a roll this wide (mm, or with a unit: 60in); the "
              "used length is minimised.")
@click.option("--sheet", "sheets", multiple=True, metavar="WxL[:COUNT]",
              help="A stock sheet: width x length (mm, or with a unit), optionally how many are in stock "
                   "(repeatable: several sizes).")
@click.option("--margin", default=None, metavar="MM",
              help="Distance kept from the material's edges [default: 10 mm on sheets, 0 on a roll].")
@click.option("--gap", default="1", show_default=True, metavar="MM",
              help="Spacing between parts (the profile's kerf is added with --profile).")
@click.option("--time", "time_s", type=float, default=30.0, show_default=True, metavar="S",
              help="Seconds the nesting engine may search; the best layout so far is kept (Ctrl-C too).")
@click.option("--seed", type=click.IntRange(min=0), default=None, help="Seed for a repeatable layout.")
@click.option("--quantity", "-q", type=click.IntRange(min=1), default=1, show_default=True,
              help="Copies of each part, for drawings given on the command line.")
@click.option("--rotations", default="0,90,180,270", show_default=True,
              help="Rotations allowed (degrees, comma-separated) or 'any', for drawings on the command line.")
@click.option("--mirror", is_flag=True, help="Cut half the copies mirrored (left and right pieces).")
@click.option("--layers", help="Comma-separated layers (or #rrggbb SVG colours) holding the parts.")
@click.option("--profile", "profile_name", metavar="NAME", help="Process profile whose kerf is added to the gap.")
@click.option("--profiles", "profile_files", multiple=True, type=click.Path(dir_okay=False),
              help="A TOML file of your own profiles (repeatable).")
@click.option("--picture", type=click.Path(dir_okay=False), metavar="FILE.svg|png|pdf",
              help="Also draw every sheet with its parts, numbered.")
def nest(reading: Reading, roll: str | None, sheets: tuple[str, ...], margin: str | None, gap: str, time_s: float,
         seed: int | None, quantity: int, rotations: str, mirror: bool, layers: str | None, profile_name: str | None,
         profile_files: tuple[str, ...], picture: str | None) -> None:
    """Place the parts of an order (ORDER.toml) or of drawings (PATHS) on a roll (--roll) or on sheets (--sheet):
    how much material the job takes."""
    from pathlen.export import nest as nest_out
    from pathlen.nest.order import OrderLine, load_order, parse_rotations
    from pathlen.nest.plan import NestSettings

    if bool(roll) == bool(sheets):
        raise click.UsageError("give either --roll WIDTH or at least one --sheet WxL")
    if not (time_s > 0 and math.isfinite(time_s)):
        raise click.BadParameter("must be a number of seconds greater than zero", param_hint="--time")
    gap_mm = length_mm(gap, "--gap")
    margin_mm = 0.0 if margin is None and roll else 10.0 if margin is None else _margin(margin)
    if profile_name:
        profiles = profiles_or_exit(profile_files)
        if profile_name not in profiles:
            raise click.UsageError(f"no profile {profile_name!r}; known: {', '.join(profiles)}")
        gap_mm += float(profiles[profile_name].kerf_mm)
    if picture and Path(picture).suffix.lower() not in (".svg", ".png", ".pdf"):
        raise click.BadParameter("must end in .svg, .png or .pdf", param_hint="--picture")
    settings = NestSettings(length_mm(roll, "--roll") if roll else None, tuple(sheet_size(x) for x in sheets),
                            margin_mm, gap_mm, time_s, seed)
    orders = [p for p in reading.paths if p.lower().endswith(".toml")]
    lines: list[OrderLine] = []
    try:
        for o in orders:
            lines += load_order(Path(o))
        plain_paths = tuple(p for p in reading.paths if p not in orders)
        if plain_paths:
            turns = parse_rotations(rotations, "--rotations")
            picked = tuple(x.strip() for x in (layers or "").split(",") if x.strip())
            lines += [OrderLine(f, quantity, turns, mirror, picked, f) for f in drawing_files(plain_paths)]
    except PathlenError as exc:
        raise click.UsageError(str(exc)) from None
    outcomes, demands = _read(lines, reading, gap_mm)
    result = _nest(demands, settings) if demands else None
    doc = nest_out.nest_document(result, outcomes, reading.units)
    if picture and result is not None:
        draw_layout(result, picture, "nest")
    figures = [("Layout", layout_svg(result, "nest"))] if reading.report and result is not None else None
    emit(outcomes, reading.fmt, reading.output, lambda console: nest_out.render_table(doc, outcomes, [], console),
         lambda: nest_out.render_json(doc) if reading.fmt == "json" else nest_out.render_csv(doc), [],
         report=reading.report, document=lambda: doc, figures=figures,
         failed=bool(doc["unplaced"]))


def _margin(text: str) -> float:
    return 0.0 if text.strip() in ("0", "0.0") else length_mm(text, "--margin")


def _read(lines: list[OrderLine], reading: Reading, gap_mm: float) -> tuple[list[PartsOutcome], list[Any]]:
    """Every line's parts, read in worker processes under the reading's limits; files in order of the lines."""
    from pathlen.batch import MeasureSettings
    from pathlen.nest.layout import Demand
    from pathlen.nest.parts import PartSettings, PartsOutcome, read_parts

    groups: dict[tuple[str, ...], list[str]] = {}
    for line in lines:
        files = groups.setdefault(line.layers, [])
        if line.file not in files:
            files.append(line.file)
    read: dict[tuple[tuple[str, ...], str], PartsOutcome] = {}
    for picked, files in groups.items():
        ps = PartSettings(gap_mm, picked, MeasureSettings(reading.rtol, reading.join_tol, reading.import_options,
                                                          reading.max_segments))
        for r in collect(files, ps, reading, read_parts, PartsOutcome, "reading parts"):
            read[(picked, r.path)] = r
    outcomes: list[PartsOutcome] = []
    demands = []
    for line in lines:
        r = read[(line.layers, line.file)]
        if r not in outcomes:
            outcomes.append(r)
        if r.ok:
            demands += [Demand(p, line.quantity, line.rotations, line.mirror) for p in r.parts]
    return outcomes, demands


def _nest(demands: list[Any], settings: Any) -> Any:
    from pathlen.nest.plan import nest

    return run_nest_status(lambda status: nest(demands, settings, status))
