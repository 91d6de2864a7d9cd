"""DXF drawing units: ``$INSUNITS`` codes and the scaling of a drawing to millimetres."""

from __future__ import annotations

import numpy as np

from pathlen.geometry import Drawing, affine
from pathlen.units import MM_PER_UNIT

#: ``$INSUNITS`` codes (DXF reference, header variables) -> unit names of
#: :data:`~pathlen.units.MM_PER_UNIT`; codes absent here cannot be used.
INSUNITS: dict[int, str] = {
    1: "in", 2: "ft", 3: "mi", 4: "mm", 5: "cm", 6: "m", 7: "km", 8: "uin", 9: "mil", 10: "yd",
    11: "angstrom", 12: "nm", 13: "um", 14: "dm", 15: "dam", 16: "hm", 17: "Gm", 18: "au", 19: "ly",
    20: "parsec", 21: "us_ft", 22: "us_in", 23: "us_yd", 24: "us_mi",
}
def in_millimetres(drawing: Drawing, unit: str, note: str | None) -> Drawing:
    """The drawing scaled from ``unit`` to millimetres, with the unit's warning (if any) added."""
    if note:
        drawing.warnings.append(note)
    scale = MM_PER_UNIT[unit]
    return drawing if scale == 1.0 else drawing.transformed(affine(np.eye(3) * scale))


def unit_of_code(code: int, drawing_units: str | None = None) -> tuple[str, str | None]:
    """The unit for ``$INSUNITS`` = ``code`` (``drawing_units`` wins) and a warning when taken as mm."""
    if drawing_units:
        return drawing_units, None
    if code in INSUNITS:
        return INSUNITS[code], None
    if code == 0:
        return "mm", "drawing has no units ($INSUNITS = 0): taken as mm; set --drawing-units"
    return "mm", f"$INSUNITS = {code} is not a length unit pathlen converts: taken as mm"
