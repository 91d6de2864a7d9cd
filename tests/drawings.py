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


def mm_dxf(tmp_path: Path, build, name: str = "piece.dxf") -> Path:
    """A DXF in mm whose model space ``build(msp)`` fills, written to ``tmp_path / name``."""
    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 4
    build(doc.modelspace())
    path = tmp_path / name
    doc.saveas(path)
    return path


def seam_json(runner, *args, code=(0, 1)):
    """``pathlen seam ARGS --units mm --format json``: the result and its parsed document."""
    import json

    from pathlen.cli import main

    res = runner.invoke(main, ["seam", *map(str, args), "--units", "mm", "--format", "json"])
    assert res.exit_code in code, res.output
    return res, json.loads(res.stdout)
