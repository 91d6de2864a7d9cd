"""Pattern pieces: a DXF in the ASTM D6673 convention (one block per piece), or any drawing.

D6673 (pattern interchange, the AAMA convention): each piece is a block inserted in model space;
inside it layer 1 holds the cut line (boundary), 14 the sew line, 4 and 80-83 notches, 2 turn
points, 7 the grain line, 8 internal lines, 11 internal cut-outs, 13 drill holes, 15 annotation.
The piece's name, quantity, size and category come from texts in the block ("Piece Name: FRONT",
"Quantity: 2", "Size: M", "Category: SHELL") or its attributes, else the block name.  A drawing
without such blocks has no piece data here: the seam estimate makes each closed outline a piece.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from pathlen.errors import InputError
from pathlen.geometry import Drawing, SegmentCollector, affine
from pathlen.importers import ImportOptions, check_regular_file, read_drawing
from pathlen.importers.checks import check_geometry, finish_drawing
from pathlen.instances import expand
from pathlen.units import MM_PER_UNIT

#: D6673 layer numbers (as layer names).
CUT_LAYERS = ("1",)
SEW_LAYERS = ("14",)
NOTCH_LAYERS = ("4", "80", "81", "82", "83")
TURN_LAYERS = ("2",)

_FIELD = re.compile(r"^\s*(piece name|name|quantity|size|category)\s*[:=]\s*(.+?)\s*$", re.I)


@dataclass
class PatternPiece:
    """One piece (one INSERT of a block), its geometry in mm in model space."""

    name: str
    quantity: int
    size: str
    category: str
    drawing: Drawing
    #: points (mm) that split the sew line into edges: notches and turn points
    marks: list[tuple[float, float]] = field(default_factory=list)
    notches: int = 0


def read_pattern(path: Path, options: ImportOptions | None = None) -> tuple[list[PatternPiece], Drawing | None]:
    """The D6673 pieces of a DXF file (blocks holding a layer-1 cut line); where there are none, the
    drawing itself as :func:`~pathlen.importers.read_drawing` gives it (a DXF is loaded once)."""
    options = options or ImportOptions()
    if path.suffix.lower() != ".dxf":
        return [], read_drawing(path, options)
    from pathlen.importers import dxf_ezdxf as dxf

    check_regular_file(path)
    loaded = dxf.load_dxf(path, options.recover)
    pieces = _pieces(loaded.doc, options)
    if pieces:
        return pieces, None
    return [], finish_drawing(dxf.dxf_drawing(loaded, options.drawing_units, options.hidden_layers))


def _pieces(doc: object, options: ImportOptions) -> list[PatternPiece]:
    from pathlen.importers import dxf_ezdxf as dxf

    importer = dxf._DxfImporter(doc)  # type: ignore[arg-type]
    scale = MM_PER_UNIT[dxf.drawing_unit(doc, options.drawing_units)[0]]  # type: ignore[arg-type]
    pieces = []
    for insert in doc.modelspace().query("INSERT"):  # type: ignore[attr-defined]
        block = doc.blocks.get(insert.dxf.name)  # type: ignore[attr-defined]
        if block is None or not any(e.dxf.layer in CUT_LAYERS for e in block):
            continue
        coll = SegmentCollector()
        importer.add(insert, coll)
        drawing = expand(coll.drawing())
        if scale != 1.0:
            drawing = drawing.transformed(affine(np.eye(3) * scale))
        check_geometry(drawing)
        texts = [_text(e) for e in block if e.dxftype() in ("TEXT", "MTEXT", "ATTDEF")]
        texts += [a.dxf.text for a in getattr(insert, "attribs", [])]
        info = {m.group(1).lower(): m.group(2) for t in texts if t for m in [_FIELD.match(t)] if m}
        try:
            quantity = int(info.get("quantity", "1"))
        except ValueError:
            raise InputError(f"piece {insert.dxf.name!r}: quantity {info['quantity']!r} is not a whole number"
                             ) from None
        m = np.array(list(insert.matrix44().rows()), dtype=float).T
        marks, notches = [], 0
        for e in block:
            layer = e.dxf.layer
            if layer in NOTCH_LAYERS or layer in TURN_LAYERS:
                at = _position(e)
                if at is not None:
                    p = (m @ np.array([*at, 1.0]))[:2] * scale
                    marks.append((float(p[0]), float(p[1])))
                notches += layer in NOTCH_LAYERS
        pieces.append(PatternPiece(info.get("piece name", info.get("name", insert.dxf.name)), max(quantity, 0),
                                   info.get("size", ""), info.get("category", ""), drawing, marks, notches))
    return pieces


def _text(e: object) -> str:
    kind = e.dxftype()  # type: ignore[attr-defined]
    if kind == "MTEXT":
        return e.plain_text()  # type: ignore[attr-defined]
    return e.dxf.text  # type: ignore[attr-defined]


def _position(e: object) -> tuple[float, float, float] | None:
    """Where a notch or turn point stands: a POINT's location, a LINE's start (the notch on the cut line)."""
    kind = e.dxftype()  # type: ignore[attr-defined]
    if kind == "POINT":
        return e.dxf.location.xyz  # type: ignore[attr-defined]
    if kind == "LINE":
        return e.dxf.start.xyz  # type: ignore[attr-defined]
    if kind == "INSERT":
        return e.dxf.insert.xyz  # type: ignore[attr-defined]
    return None
