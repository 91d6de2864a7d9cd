"""Helpers shared by the commands that nest (``nest``, ``quote``, ``seam --marker``): lengths with
units, the nesting engine's spinner and Ctrl-C, and layout pictures."""

from __future__ import annotations

import math
import re
import sys
from collections.abc import Callable
from pathlib import Path
from typing import Any

import click

from pathlen.atomic import write_file_atomic
from pathlen.cli.reading import write_atomic
from pathlen.errors import UsageError
from pathlen.units import MM_PER_UNIT

LENGTH_UNITS = ("mm", "cm", "m", "in", "ft")
_NUMBER = r"(\d+(?:\.\d*)?|\.\d+)"


def length_mm(text: str, what: str) -> float:
    """A positive length from text such as ``1500``, ``1500mm`` or ``60in`` (mm when no unit is given)."""
    m = re.fullmatch(rf"\s*{_NUMBER}\s*({'|'.join(LENGTH_UNITS)})?\s*", text)
    if not m:
        raise click.BadParameter(f"{text!r} is not a length (a number, optionally with mm, cm, m, in or ft)",
                                 param_hint=what)
    value = float(m.group(1)) * MM_PER_UNIT[m.group(2) or "mm"]
    if not (value > 0 and math.isfinite(value)):
        raise click.BadParameter(f"{text!r} must be greater than zero", param_hint=what)
    return value



def run_nest_status(work: Callable[[Any], Any]) -> Any:
    """``work(status)`` with a spinner on a terminal (status None elsewhere); Ctrl-C before any layout
    exits 130, a nesting usage problem exits 2."""
    from rich.console import Console

    err = Console(stderr=True)
    try:
        if not err.is_terminal:
            return work(None)
        with err.status("nesting") as status:
            return work(lambda doing, spent, budget: status.update(
                f"{doing}: {spent:.0f} s of {budget:.0f} s (Ctrl-C keeps the best layout so far)"))
    except KeyboardInterrupt:
        err.print("interrupted before the engine found any layout: nothing to report")
        sys.exit(130)
    except UsageError as exc:
        raise click.UsageError(str(exc)) from None


def layout_svg(result: Any, title: str = "nest") -> str:
    from pathlen.export.nest_picture import nest_svg

    return nest_svg(result, title)


def draw_layout(result: Any, picture: str, title: str) -> None:
    """The layout as SVG, PNG or PDF (by the file's suffix), written whole or not at all."""
    from pathlen.export.nest_picture import render_nest_raster

    if picture.lower().endswith(".svg"):
        write_atomic(picture, layout_svg(result, title))
        return
    try:
        write_file_atomic(Path(picture), lambda tmp: render_nest_raster(result, tmp))
    except OSError as exc:
        raise click.FileError(picture, hint=exc.strerror or str(exc)) from None
