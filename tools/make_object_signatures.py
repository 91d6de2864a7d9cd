"""Writes pathlen/data/dxf_object_signatures.json: the group-code sequences of the OBJECTS entries ezdxf
itself writes (every DXF version it writes, with and without its standard styles), for the kinds whose
loading in ezdxf depends on their layout (pathlen.importers.dxf_rest).  Run after upgrading ezdxf:
python tools/make_object_signatures.py
"""

from __future__ import annotations

import io
import json
from pathlib import Path

import ezdxf

from pathlen.importers.dxf_rest import signature

KINDS = ("LAYOUT", "PLOTSETTINGS", "MATERIAL", "MLINESTYLE", "MLEADERSTYLE", "VISUALSTYLE")
OUT = Path(__file__).parent.parent / "pathlen" / "data" / "dxf_object_signatures.json"


def main() -> None:
    found: dict[str, set[str]] = {k: set() for k in KINDS}
    for version in ("R2000", "R2004", "R2007", "R2010", "R2013", "R2018"):
        for setup in (False, True):
            doc = ezdxf.new(version, setup=setup)
            doc.layouts.new("Layout2")
            stream = io.StringIO()
            doc.write(stream)
            lines = stream.getvalue().splitlines()
            tags = [(int(lines[i]), lines[i + 1].strip()) for i in range(0, len(lines) - 1, 2)]
            start = tags.index((2, "OBJECTS"))
            kind, codes = None, []
            for code, value in tags[start + 1:]:
                if code == 0:
                    if kind in found:
                        found[kind].add(signature(codes))
                    kind, codes = value, []
                else:
                    codes.append(code)
    OUT.write_text(json.dumps({"ezdxf": ezdxf.__version__, "signatures": {k: sorted(v) for k, v in found.items()}},
                              indent=1) + "\n")
    print(f"{OUT}: {sum(len(v) for v in found.values())} signatures")


if __name__ == "__main__":
    main()
