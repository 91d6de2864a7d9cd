"""Importers: drawing files -> :class:`~pathlen.geometry.Drawing` (millimetres)."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np

from pathlen.errors import InputError
from pathlen.geometry import Drawing
from pathlen.instances import definitions

#: Coordinates beyond this many millimetres (1,000 km) are taken as a broken file.
MAX_COORDINATE_MM = 1.0e9

#: File kinds read.
SUFFIXES = (".dxf", ".svg")


@dataclass(frozen=True)
class ImportOptions:
    """Options every importer understands."""

    drawing_units: str | None = None  # DXF: overrides $INSUNITS
    svg_dpi: float | None = None  # SVG sized in px or not sized: px per inch (None: 96, with a warning)
    recover: bool = False  # DXF: measure what structural recovery can read of a damaged file
    hidden_layers: bool = False  # DXF: measure layers that are off or frozen too


def read_drawing(path: Path, options: ImportOptions = ImportOptions()) -> Drawing:
    """Read any supported file and check its geometry; raises :class:`InputError`."""
    suffix = path.suffix.lower()
    if suffix in SUFFIXES:
        check_regular_file(path)
    if suffix == ".dxf":
        from pathlen.importers.dxf import read_dxf

        drawing = read_dxf(path, options.drawing_units, options.recover, options.hidden_layers)
    elif suffix == ".svg":
        from pathlen.importers.svg import read_svg

        drawing = read_svg(path, options.svg_dpi)
    else:
        raise InputError(f"unsupported file type {suffix or '(none)'!r}: expected {' or '.join(SUFFIXES)}")
    check_geometry(drawing)
    for kind, count in sorted(drawing.skipped.items()):
        drawing.warnings.append(f"{count} {kind} entit{'y' if count == 1 else 'ies'} not measured")
    return drawing


def check_regular_file(path: Path) -> None:
    """Refuse what is not a regular file (a dangling link, a FIFO or device, a folder), saying which."""
    if path.is_symlink() and not path.exists():
        raise InputError("broken symbolic link: the file it points to does not exist")
    if not path.exists():
        raise InputError("no such file")
    if not path.is_file():
        raise InputError("not a regular file (a folder, pipe or device)")


def check_geometry(drawing: Drawing) -> None:
    """Reject non-finite or absurdly large coordinates, naming the first bad entity.

    What is checked is what the file gave: end points and control points, and for arcs their
    start, middle and end points and finite axes, never a derived centre (a nearly straight bulge
    has its centre far away, legitimately).  Every definition placed by the drawing is checked once.
    """
    for d in definitions(drawing):
        _check_own(d)
        for p in d.placements:
            if not np.all(np.isfinite(p.matrices)):
                raise InputError("a block or <use> placement has a non-finite transformation")


def _check_own(drawing: Drawing) -> None:
    arcs = drawing.arcs
    finite_axes = np.isfinite(arcs.u).all(axis=1) & np.isfinite(arcs.v).all(axis=1)
    t0, t1 = np.where(finite_axes, arcs.t0, 0.0), np.where(finite_axes, arcs.t1, 0.0)
    with np.errstate(invalid="ignore", over="ignore"):
        arc_points = [arcs.points(t0), arcs.points((t0 + t1) / 2.0), arcs.points(t1)]
    arrays = [
        (drawing.lines.entity, (drawing.lines.p0, drawing.lines.p1)),
        (arcs.entity, (*arc_points, np.where(finite_axes, 0.0, np.nan)[:, None],
                       arcs.t0[:, None], arcs.t1[:, None])),
        *((b.entity, (b.ctrl.reshape(len(b), -1), b.weights)) for b in drawing.beziers.values()),
    ]
    for entity, parts in arrays:
        for a in parts:
            bad = ~np.all(np.isfinite(a) & (np.abs(a) <= MAX_COORDINATE_MM), axis=1)
            if np.any(bad):
                e = drawing.entities[int(entity[np.argmax(bad)])]
                what = "non-finite" if not np.all(np.isfinite(a[bad])) else "absurdly large (over 1000 km)"
                raise InputError(f"{e.kind} #{e.handle} on layer {e.layer!r} has {what} coordinates")
