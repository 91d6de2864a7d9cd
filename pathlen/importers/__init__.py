"""Importers: drawing files -> :class:`~pathlen.geometry.Drawing` (millimetres)."""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, cast

from pathlen.errors import InputError

if TYPE_CHECKING:  # the segment model loads with the readers (this module's options and names load first)
    from pathlen.geometry import Drawing, DrawingRuns


@dataclass(frozen=True)
class ImportOptions:
    """Options every importer understands."""

    drawing_units: str | None = None  # DXF: overrides $INSUNITS
    svg_dpi: float | None = None  # SVG sized in px or not sized: px per inch (None: 96, with a warning)
    recover: bool = False  # DXF: measure what structural recovery can read of a damaged file
    hidden_layers: bool = False  # DXF: measure layers that are off or frozen too
    svg_language: str | None = None  # SVG systemLanguage: the user's language (None: from the environment)


#: The module that reads each file kind (imported on first use: a batch of DXF files never loads the SVG reader).
READERS = {".dxf": "pathlen.importers.dxf", ".svg": "pathlen.importers.svg"}
#: File kinds read.
SUFFIXES = tuple(READERS)


def load_readers(suffixes: Iterable[str]) -> None:
    """Import the readers of the file kinds ``suffixes`` now (others are ignored): a worker does this
    before its first file comes, beside the parent's own start."""
    from importlib import import_module

    for suffix in suffixes:
        if suffix in READERS:
            import_module(READERS[suffix])


def read_drawing(path: Path, options: ImportOptions = ImportOptions()) -> Drawing:
    """Read any supported file and check its geometry; raises :class:`InputError`."""
    return cast("Drawing", read_drawing_or_runs(path, options, in_runs=False))  # no runs asked for


def read_drawing_or_runs(path: Path, options: ImportOptions = ImportOptions(), in_runs: bool = True
                         ) -> Drawing | DrawingRuns:
    """:func:`read_drawing`, except that with ``in_runs`` a reader that can hand the drawing over a run
    of segments at a time (SVG without placements) does so (:class:`~pathlen.geometry.DrawingRuns`,
    each run checked as it is taken)."""
    suffix = path.suffix.lower()
    if suffix in SUFFIXES:
        check_regular_file(path)
    if suffix == ".dxf":
        from pathlen.importers.dxf import read_dxf

        drawing = read_dxf(path, options.drawing_units, options.recover, options.hidden_layers)
    elif suffix == ".svg":
        from pathlen.importers.svg import read_svg

        drawing = read_svg(path, options.svg_dpi, options.svg_language, in_runs)
    else:
        raise InputError(f"unsupported file type {suffix or '(none)'!r}: expected {' or '.join(SUFFIXES)}")
    from pathlen.geometry import DrawingRuns
    from pathlen.importers.checks import finish_drawing, finish_runs

    return finish_runs(drawing) if isinstance(drawing, DrawingRuns) else finish_drawing(drawing)


def check_regular_file(path: Path) -> None:
    """Refuse what is not a regular file (a dangling link, a FIFO or device, a folder), saying which."""
    if path.is_symlink() and not path.exists():
        raise InputError("broken symbolic link: the file it points to does not exist")
    if not path.exists():
        raise InputError("no such file")
    if not path.is_file():
        raise InputError("not a regular file (a folder, pipe or device)")
