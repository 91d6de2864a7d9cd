"""Small drawings the tests write."""

from pathlib import Path

import ezdxf


def line_dxf(path: Path, length: float = 10.0, insunits: int | None = 4) -> Path:
    """A DXF holding one line from (0, 0) to (``length``, 0), its ``$INSUNITS`` set unless None."""
    doc = ezdxf.new()
    if insunits is not None:
        doc.header["$INSUNITS"] = insunits
    doc.modelspace().add_line((0, 0), (length, 0))
    doc.saveas(path)
    return path
