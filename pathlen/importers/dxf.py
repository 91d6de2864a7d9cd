"""DXF importer: the bulk reader for plain text files, ezdxf's document model for everything else.

The bulk reader checks the entities it reads itself, and the structure of the rest of the file (header,
tables, blocks, objects: :mod:`pathlen.importers.dxf_rest`); a rest outside the form checked there is
loaded by ezdxf as well, so that a file ezdxf would refuse, repair or warn about is read by ezdxf after
all, with its words.  A file the bulk reader takes whole never imports ezdxf.

Both readers give the same drawing (tests/test_dxf_readers.py runs them side by side); the bulk reader
(:mod:`pathlen.importers.dxf_bulk`) is several times faster and lighter on large files and does not
load ezdxf at all, ezdxf (:mod:`pathlen.importers.dxf_ezdxf`) knows every odd form, damaged files and
binary DXF.
"""

from __future__ import annotations

import os
from pathlib import Path

from pathlen.geometry import Drawing
from pathlen.importers.dxf_bulk import read_plain
from pathlen.importers.dxf_tags import NotPlain, read_padded
from pathlen.importers.dxf_units import in_millimetres, unit_of_code


def read_dxf(path: Path, drawing_units: str | None = None, recover: bool = False,
             hidden_layers: bool = False) -> Drawing:
    """Read a DXF file's model space in millimetres.

    ``drawing_units`` (a key of ``MM_PER_UNIT``) overrides ``$INSUNITS``; without either the
    drawing is taken as millimetres, with a warning.  A damaged file is refused unless ``recover``.
    Entities on layers that are off or frozen are marked hidden (measured only with
    ``hidden_layers``: the caller decides).  ``PATHLEN_DXF_READER=ezdxf`` in the environment reads every
    file through ezdxf (to compare, or to rule the bulk reader out when a file reads strangely).
    """
    plain = None if os.environ.get("PATHLEN_DXF_READER") == "ezdxf" else read_bulk(path, hidden_layers)
    if plain is None or not (plain.rest_checked or _loads_silently(plain.rest)):
        from pathlen.importers.dxf_ezdxf import read_dxf as read_with_ezdxf

        return read_with_ezdxf(path, drawing_units, recover, hidden_layers)
    return in_millimetres(plain.drawing, *unit_of_code(plain.insunits, drawing_units))


def _loads_silently(rest: bytes) -> bool:
    from pathlen.importers.dxf_ezdxf import loads_silently

    return loads_silently(rest)


def read_bulk(path: Path, hidden_layers: bool = False, keep_rest: bool = False):
    """The bulk reader's result, or None when the file needs ezdxf (or cannot be read here)."""
    try:
        return read_plain(read_padded(path), hidden_layers, keep_rest)
    except (NotPlain, OSError):
        return None
    except (IndexError, ValueError, TypeError, KeyError, ZeroDivisionError, OverflowError):
        return None  # a form the bulk reader did not foresee: ezdxf decides (tests hold both readers equal)
