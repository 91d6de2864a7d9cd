"""Whether the parts of a DXF file outside its entities are of a form ezdxf loads without a word.

The bulk reader checks the entities it reads, and :mod:`pathlen.importers.dxf_layout` the header,
classes, tables and blocks (known sections once each, table entries of their table's kind with a name
and the subclass markers ezdxf expects, unique hexadecimal handles ...).  What is left is the OBJECTS
section, which ezdxf links into its document: a root dictionary, and a layout for each space's block
record.  A file whose objects are all of the kinds below with their subclass markers (and, for the
kinds ezdxf parses by position, the group-code layout ezdxf itself writes), whose first
object is a DICTIONARY, whose block records and layouts name each other and whose dictionaries name
objects (see :func:`_links_plain`) is taken as it is; any other file is still
loaded by ezdxf to hear whether it objects (``tests/test_dxf_readers.py`` checks, on random and
damaged drawings, that a file taken here is one ezdxf loads silently).
"""

from __future__ import annotations

import functools
import json
from pathlib import Path

import numpy as np

from pathlen.importers.dxf_layout import Layout
from pathlen.importers.dxf_tags import NotPlain, TagTable, code_table, has_code

#: Objects ezdxf reads as plain data, with the subclass markers (group 100) each carries (as ezdxf writes
#: them; DXF reference, OBJECTS section): a kind with other markers is left to ezdxf.
PLAIN_OBJECTS: dict[str, tuple[str, ...]] = {
    "DICTIONARY": ("AcDbDictionary",),
    "ACDBDICTIONARYWDFLT": ("AcDbDictionary", "AcDbDictionaryWithDefault"),
    "ACDBPLACEHOLDER": (),
    "LAYOUT": ("AcDbPlotSettings", "AcDbLayout"),
    "PLOTSETTINGS": ("AcDbPlotSettings",),
    "MATERIAL": ("AcDbMaterial",),
    "MLINESTYLE": ("AcDbMlineStyle",),
    "MLEADERSTYLE": ("AcDbMLeaderStyle",),
    "DICTIONARYVAR": ("DictionaryVariables",),
    "SCALE": ("AcDbScale",),
    "XRECORD": ("AcDbXrecord",),
    "VISUALSTYLE": ("AcDbVisualStyle",),
}
#: Sections whose content ezdxf keeps as it is but which are rare enough to leave to ezdxf.
_LEFT_TO_EZDXF = frozenset({"THUMBNAILIMAGE", "ACDSDATA"})


def rest_is_plain(tags: TagTable, lay: Layout) -> bool:
    """Whether everything outside the entities is of the form described in the module docstring."""
    if _LEFT_TO_EZDXF & set(lay.sections):
        return False
    try:
        if lay.objects and not _objects_plain(tags, lay):
            return False
        return _links_plain(tags, lay)
    except NotPlain:  # a value that is not ASCII text where a name or handle stands
        return False


def _objects_plain(tags: TagTable, lay: Layout) -> bool:
    """The first object a DICTIONARY (the root), every object of a kind and with the markers above."""
    if lay.kinds[lay.objects[0]] != "DICTIONARY":
        return False
    markers = np.flatnonzero(tags.codes == 100)
    in_objects = np.zeros(len(lay.kinds), dtype=bool)
    in_objects[lay.objects] = True
    markers = markers[in_objects[lay.owner[markers]]]
    found: dict[int, list[str]] = {e: [] for e in lay.objects}
    for e, name in zip(lay.owner[markers].tolist(), tags.texts(markers), strict=True):
        found[e].append(name)
    if not all(PLAIN_OBJECTS.get(lay.kinds[e]) == tuple(names) for e, names in found.items()):
        return False
    known = _signatures()
    for e in lay.objects:
        kind = lay.kinds[e]
        if kind in known:
            codes = tags.codes[int(lay.first_tag[e]) + 1:int(lay.first_tag[e + 1])]
            if signature(codes.tolist()) not in known[kind]:
                return False
    return True


def signature(codes: list[int]) -> str:
    """An object's group codes in order, comma-separated (``tools/make_object_signatures.py``).  Kept whole,
    not digested: a hash library's import (OpenSSL's, ~13 ms) would be most of a small file's reading."""
    return ",".join(map(str, codes))


@functools.cache
def _signatures() -> dict[str, frozenset[str]]:
    """Group-code sequences of the objects ezdxf writes itself, for the kinds its loader parses by
    position (a count and the groups after it, say): any other layout of such an object is left to ezdxf."""
    data = json.loads((Path(__file__).parent.parent / "data" / "dxf_object_signatures.json").read_text())
    return {kind: frozenset(found) for kind, found in data["signatures"].items()}


def _links_plain(tags: TagTable, lay: Layout) -> bool:
    """The links ezdxf follows when it builds its layouts: a block record's layout (group 340) is a
    LAYOUT or no entity of the file, a LAYOUT's block record (340) is a BLOCK_RECORD of the file, and a
    dictionary's entries (350, 360) that name an entity of the file name objects."""
    kinds = np.array([*lay.kinds, ""], dtype=object)
    five = np.flatnonzero(tags.codes == 5)
    handle_of = dict(zip((h.upper() for h in tags.texts(five, repeated=False)), lay.owner[five].tolist(), strict=True))

    def targets(codes: tuple[int, ...], owner_kind: str) -> tuple[list[str], np.ndarray]:
        pick = np.flatnonzero(has_code(tags.codes, code_table(codes)))
        pick = pick[kinds[lay.owner[pick]] == owner_kind]
        named = tags.texts(pick)
        return named, np.array([handle_of.get(h.upper(), len(lay.kinds)) for h in named], dtype=np.int64)

    _, of_records = targets((340,), "BLOCK_RECORD")
    if ((of_records < len(lay.kinds)) & (kinds[of_records] != "LAYOUT")).any():
        return False
    layouts = [e for e in lay.objects if lay.kinds[e] == "LAYOUT"]
    for e in layouts:  # its block record: the 330 after its AcDbLayout marker (the first is its owner)
        codes = tags.codes[lay.first_tag[e]:lay.first_tag[e + 1]]
        own = np.flatnonzero(codes == 330)
        if len(own) < 2 or kinds[handle_of.get(tags.text(int(lay.first_tag[e] + own[-1])).upper(), -1)] != \
                "BLOCK_RECORD":
            return False
    objects = np.zeros(len(lay.kinds) + 1, dtype=bool)
    objects[lay.objects] = True
    _, entries = targets((350, 360), "DICTIONARY")
    if ((entries < len(lay.kinds)) & ~objects[entries]).any():
        return False
    return _layout_dictionary_plain(tags, lay, handle_of)


def _layout_dictionary_plain(tags: TagTable, lay: Layout, handle_of: dict[str, int]) -> bool:
    """The root dictionary's entries are dictionaries of the file, its ACAD_LAYOUT one's entries all
    LAYOUTs."""
    if not lay.objects:
        return True

    def entries(e: int) -> list[tuple[str, str]]:
        first, stop = int(lay.first_tag[e]), int(lay.first_tag[e + 1])
        codes = tags.codes[first:stop].tolist()
        return [(tags.text(first + k), tags.text(first + k + 1)) for k in range(len(codes) - 1)
                if codes[k] == 3 and codes[k + 1] in (350, 360)]

    root = dict(entries(lay.objects[0]))
    named = [handle_of.get(h.upper()) for h in root.values()]
    if any(e is None or lay.kinds[e] not in ("DICTIONARY", "ACDBDICTIONARYWDFLT") for e in named):
        return False  # ezdxf takes each entry of the root dictionary as a dictionary (or rebuilds it)
    layout_dictionary = root.get("ACAD_LAYOUT")
    if layout_dictionary is None:
        return True
    e = handle_of.get(layout_dictionary.upper())
    if e is None or lay.kinds[e] != "DICTIONARY":
        return False
    return all(lay.kinds[handle_of.get(h.upper(), -1)] == "LAYOUT" if h.upper() in handle_of else False
               for _, h in entries(e))
