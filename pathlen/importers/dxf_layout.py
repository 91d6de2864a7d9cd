"""Where each entity of a tag table belongs: sections, tables, blocks, model space, linked entities.

Entities are the runs of tags that begin with a code-0 tag.  :func:`layout` walks those runs once, in
Python over the code-0 tags only, and checks the file has the plain structure ezdxf reads without a
word: known sections once each, ``BLOCK ... ENDBLK`` pairs, ``POLYLINE`` followed by ``VERTEX``
entities and ``SEQEND``, ``INSERT`` with attributes followed by ``ATTRIB`` entities and ``SEQEND``,
unique hexadecimal handles.  Anything else raises :class:`~pathlen.importers.dxf_tags.NotPlain`.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from numpy.typing import NDArray

from pathlen.geometry import distinct, run_starts
from pathlen.importers.dxf_tags import POINT_TABLE, NotPlain, TagTable, has_code, windows

#: Entity kinds pathlen measures (the same set as the ezdxf reader's handlers) and INSERT.
MEASURED = frozenset({"LINE", "CIRCLE", "ARC", "ELLIPSE", "LWPOLYLINE", "POLYLINE", "SPLINE"})
#: Kinds counted as "not measured" without reading them; any other kind sends the file to ezdxf.
NOT_MEASURED = frozenset({"TEXT", "MTEXT", "POINT", "HATCH", "DIMENSION", "ATTDEF", "SOLID", "TRACE", "3DFACE",
                          "LEADER", "VIEWPORT", "XLINE", "RAY"})
#: Table names of the TABLES section (DXF reference, "TABLES Section").
TABLES = frozenset({"VPORT", "LTYPE", "LAYER", "STYLE", "VIEW", "UCS", "APPID", "DIMSTYLE", "BLOCK_RECORD"})
#: Section names ezdxf reads (DXF reference, "DXF Files").
SECTIONS = frozenset({"HEADER", "CLASSES", "TABLES", "BLOCKS", "ENTITIES", "OBJECTS", "THUMBNAILIMAGE", "ACDSDATA"})


@dataclass
class Block:
    """A block definition: name, the tag index of its BLOCK entity, and its entities (entity numbers)."""

    name: str
    head: int
    entities: list[int] = field(default_factory=list)


@dataclass
class Layout:
    """The file's structure, by entity number (``first_tag[n]`` is entity ``n``'s code-0 tag)."""

    first_tag: NDArray[np.int64]
    #: entity number of every tag
    owner: NDArray[np.int32]
    kinds: list[str]
    #: the HEADER section's variables: tags ``start .. stop - 1`` (after its SECTION and name, up to the next entity)
    header: tuple[int, int] | None
    entities: list[int]
    blocks: list[Block]
    layer_entries: list[int]
    block_records: list[int]
    vertices: dict[int, list[int]]
    attributed: set[int]
    #: entity numbers of the ENTITIES section's first entity and its ENDSEC (equal when it is empty)
    entities_body: tuple[int, int] | None = None
    #: section names in file order
    sections: list[str] = field(default_factory=list)
    #: entity numbers of the OBJECTS section's objects
    objects: list[int] = field(default_factory=list)
    #: entity numbers of every table entry, and of the DIMSTYLE entities (entries, and objects if any)
    table_entries: list[int] = field(default_factory=list)
    dimstyles: list[int] = field(default_factory=list)



def layout(tags: TagTable) -> Layout:
    """Walk the code-0 tags of ``tags`` (see the module docstring)."""
    if (tags.codes == 999).any():
        raise NotPlain("comments (group code 999): ezdxf's reader skips them, wherever they stand")
    first = np.flatnonzero(tags.codes == 0)
    if len(first) == 0 or first[0] != 0:
        raise NotPlain("tags before the first entity")
    kinds = tags.texts(first)
    owner = np.zeros(len(tags), dtype=np.int32)
    owner[first[1:]] = 1
    owner = np.cumsum(owner, dtype=np.int32)
    follows = _attribs_follow(tags, owner)
    out = Layout(first, owner, kinds, None, [], [], [], [], {}, set())
    seen: set[str] = set()
    i, n = 0, len(kinds)
    while i < n:
        if kinds[i] != "SECTION":
            raise NotPlain(f"{kinds[i][:20]!r} outside a section")
        name = _section_name(tags, first, i)
        if name not in SECTIONS or name in seen:
            raise NotPlain(f"section {name[:20]!r}")
        seen.add(name)
        out.sections.append(name)
        end = i + 1
        while end < n and kinds[end] not in ("ENDSEC", "SECTION"):
            end += 1
        if end == n or kinds[end] != "ENDSEC":
            raise NotPlain("a section without ENDSEC")
        body = range(i + 1, end)
        if name in ("HEADER", "CLASSES") and any(kinds[e] != "CLASS" for e in body):
            raise NotPlain(f"an entity {kinds[body[0]][:20]!r} in the {name} section")
        if name == "HEADER":
            out.header = (int(first[i]) + 2, int(first[i + 1]))  # up to the next entity (i + 1 <= end)
            _check_header(tags, *out.header)
        elif name == "TABLES":
            _tables(tags, first, kinds, body, out)
        elif name == "BLOCKS":
            _blocks(tags, first, kinds, body, follows, out)
        elif name == "ENTITIES":
            out.entities = _graphics(kinds, body, follows, out)
            out.entities_body = (i + 1, end)
        elif name == "OBJECTS":
            out.objects = list(body)
            out.dimstyles.extend(e for e in body if kinds[e] == "DIMSTYLE")  # not plain there, but its handle is 105
        i = end + 1
    if out.header is None:
        raise NotPlain("no HEADER section")
    _check_version(tags, *out.header)
    _check_entries(tags, first, owner, kinds, out.table_entries)
    _check_handles(tags, owner, out.dimstyles)
    return out


#: Header variables ezdxf reads while loading a file, with the group code its loading expects.
LOADED_HEADER_CODES = {b"$ACADVER": 1, b"$DWGCODEPAGE": 3, b"$HANDSEED": 5, b"$HANDLING": 70}


def _check_version(tags: TagTable, start: int, stop: int) -> None:
    """``$ACADVER`` given, and each variable ezdxf reads while loading of the type it expects
    (:data:`LOADED_HEADER_CODES`); subclass markers (code 100) only from R13 (AC1012) on: ezdxf reads a
    file without ``$ACADVER`` as R12, whose entries carry no markers."""
    version = -1
    for name, code in LOADED_HEADER_CODES.items():
        hit = header_variable(tags, start, stop, name)
        if len(hit) > 1 or (hit and (hit[0] + 1 >= stop or tags.codes[hit[0] + 1] != code)):
            raise NotPlain(f"the header variable {name.decode()} not given once as group code {code}")
        if name == b"$ACADVER":
            if not hit:
                raise NotPlain("no $ACADVER in the header")
            version = hit[0] + 1
    if tags.text(version).strip().upper() < "AC1012" and (tags.codes == 100).any():
        raise NotPlain("subclass markers in a file of DXF R12 or before")


def header_variable(tags: TagTable, start: int, stop: int, name: bytes) -> list[int]:
    """The tags among ``start .. stop - 1`` that name the header variable ``name`` (group code 9, value
    exactly ``name``): its occurrences in the bytes of those tags, each checked to be such a tag."""
    if start >= stop:
        return []
    data, first = tags.data, tags.start
    hi = tags.end(stop - 1)
    found = []
    at = data.find(name, int(first[start]), hi)
    while at >= 0:
        i = int(np.searchsorted(first, at))
        if i < len(tags) and first[i] == at and tags.codes[i] == 9 and tags.width[i] == len(name):
            found.append(i)
        at = data.find(name, at + 1, hi)
    return found


def _check_header(tags: TagTable, start: int, stop: int) -> None:
    """Header variables as ezdxf takes them: ``9 $NAME`` then one value, or a point's x, y (and z)."""
    codes = tags.codes[start:stop]
    nine = np.flatnonzero(codes == 9)
    if len(codes) and (len(nine) == 0 or nine[0] != 0):
        raise NotPlain("a header value without its variable name")
    names = nine + start
    if np.any((tags.width[names] == 0) | (np.frombuffer(tags.data, dtype=np.uint8)[tags.start[names]]
                                                        != ord("$"))):
        raise NotPlain("a header variable name without its leading $")
    size = np.diff(np.append(nine, len(codes)))
    if ((size < 2) | (size > 4)).any():
        raise NotPlain("a header variable without one value")
    several = size > 2
    at = nine[several] + 1  # the first of two or three values: a point's x, then its y (and z)
    x = codes[at].astype(np.int64)
    three = size[several] == 4
    point = has_code(x, POINT_TABLE) & (codes[at + 1] == x + 10)
    if not (point & (~three | (codes[np.where(three, at + 2, at)] == x + 20))).all():
        raise NotPlain("a header variable with more than one value")


def _section_name(tags: TagTable, first: NDArray[np.int64], i: int) -> str:
    start = first[i]
    stop = first[i + 1] if i + 1 < len(first) else len(tags)
    if start + 1 >= stop or tags.codes[start + 1] != 2:
        raise NotPlain("a section without a name")
    return tags.text(start + 1)


def _tables(tags: TagTable, first: NDArray[np.int64], kinds: list[str], body: range, out: Layout) -> None:
    table = ""
    for e in body:
        kind = kinds[e]
        if kind == "TABLE":
            head = first[e]
            if table or tags.codes[head + 1] != 2:
                raise NotPlain("a TABLE without its name or inside another")
            table = tags.text(head + 1)
            if table not in TABLES:
                raise NotPlain(f"a table {table[:20]!r}")
        elif kind == "ENDTAB":
            if not table:
                raise NotPlain("ENDTAB outside a table")
            table = ""
        elif not table or kind != table:
            raise NotPlain(f"{kind[:20]!r} in table {table!r}")
        else:
            out.table_entries.append(e)
            if kind == "LAYER":
                out.layer_entries.append(e)
            elif kind == "BLOCK_RECORD":
                out.block_records.append(e)
            elif kind == "DIMSTYLE":
                out.dimstyles.append(e)


def _check_entries(tags: TagTable, first: NDArray[np.int64], owner: NDArray[np.int32], kinds: list[str],
                   entries: list[int]) -> None:
    """Each table entry (``entries``: entity numbers, ascending) as ezdxf loads it: a name, and either no
    subclass markers (R12) or two (AcDbSymbolTableRecord and the table's own) with the name after the
    second.  Only the tags from the first entry to the last are looked at (the tables, not the drawing)."""
    if not entries:
        return
    e0, span = entries[0], entries[-1] + 1 - entries[0]  # entities e0 .. e0 + span - 1
    lo = int(first[e0])
    hi = int(first[e0 + span]) if e0 + span < len(first) else len(tags)
    ents = np.array(entries, dtype=np.int64) - e0
    codes = tags.codes[lo:hi]
    names, markers = np.flatnonzero(codes == 2) + lo, np.flatnonzero(codes == 100) + lo
    name_owner, marker_owner = owner[names] - e0, owner[markers] - e0
    first_name = np.full(span, len(tags), dtype=np.int64)  # tag of each entity's first name
    starts = run_starts(name_owner)
    first_name[name_owner[starts]] = names[starts]
    second_marker = np.full(span, -1, dtype=np.int64)  # tag of each entity's second marker
    second = np.flatnonzero(np.arange(len(markers)) - np.searchsorted(marker_owner, marker_owner) == 1)
    second_marker[marker_owner[second]] = markers[second]
    named = np.bincount(name_owner, minlength=span)[ents]
    marked = np.bincount(marker_owner, minlength=span)[ents]
    bad = (named == 0) | ((marked != 0) & (marked != 2)) | ((marked == 2) & (first_name[ents] < second_marker[ents]))
    if bad.any():
        kind = kinds[int(ents[np.argmax(bad)]) + e0]
        raise NotPlain(f"a {kind[:20]} table entry without its name or subclass markers")


def _blocks(tags: TagTable, first: NDArray[np.int64], kinds: list[str], body: range, follows: dict[int, bool],
            out: Layout) -> None:
    block: Block | None = None
    members: list[int] = []
    for e in body:
        kind = kinds[e]
        if kind == "BLOCK":
            if block is not None:
                raise NotPlain("BLOCK without ENDBLK")
            block = Block("", e)
            members = []
        elif kind == "ENDBLK":
            if block is None:
                raise NotPlain("ENDBLK without BLOCK")
            block.entities = members
            out.blocks.append(block)
            block = None
        elif block is None:
            raise NotPlain("an entity outside a block")
        else:
            members.append(e)
    if block is not None:
        raise NotPlain("BLOCK without ENDBLK")
    for b in out.blocks:
        b.entities = _graphics(kinds, b.entities, follows, out)


def _graphics(kinds: list[str], members, follows: dict[int, bool], out: Layout) -> list[int]:
    """The main entities among ``members`` (consecutive entity numbers), linking VERTEX and ATTRIB runs."""
    main: list[int] = []
    members = list(members)
    k, n = 0, len(members)
    while k < n:
        e = members[k]
        kind = kinds[e]
        if kind in ("POLYLINE", "INSERT") and (kind == "POLYLINE" or follows.get(e, False)):
            child = "VERTEX" if kind == "POLYLINE" else "ATTRIB"
            run = []
            k += 1
            while k < n and kinds[members[k]] == child:
                run.append(members[k])
                k += 1
            if k == n or kinds[members[k]] != "SEQEND":
                raise NotPlain(f"{kind} without SEQEND")
            if kind == "POLYLINE":
                out.vertices[e] = run
            else:
                out.attributed.add(e)
        elif kind not in MEASURED and kind not in NOT_MEASURED and kind != "INSERT":
            raise NotPlain(f"entity kind {kind[:20]!r}")
        main.append(e)
        k += 1
    return main


def _attribs_follow(tags: TagTable, owner: NDArray[np.int32]) -> dict[int, bool]:
    """Entities whose group code 66 says attributes (or vertices) follow."""
    sixty_six = np.flatnonzero(tags.codes == 66)
    owners = owner[sixty_six]
    return {int(e): bool(v) for e, v in zip(owners.tolist(), tags.number[sixty_six].tolist(), strict=True)}


HEX = np.zeros(256, dtype=bool)
for _c in b"0123456789abcdefABCDEF":
    HEX[_c] = True


def _check_handles(tags: TagTable, owner_of: NDArray[np.int32], dimstyle_entries: list[int]) -> None:
    """Every handle (group code 5; 105 for the DIMSTYLE entries) hexadecimal, one per entity, unique in
    the file: ezdxf warns about or replaces anything else."""
    five = np.flatnonzero(tags.codes == 5)
    one_oh_five = np.flatnonzero(tags.codes == 105)
    if dimstyle_entries:
        dimstyles = np.zeros(int(owner_of[-1]) + 1, dtype=bool)
        dimstyles[dimstyle_entries] = True
        five = five[~dimstyles[owner_of[five]]]
        one_oh_five = one_oh_five[dimstyles[owner_of[one_oh_five]]]
    else:
        one_oh_five = one_oh_five[:0]
    # owners ascend with the tags and the two kinds of handle have no owner in common
    five_owner, one_oh_five_owner = owner_of[five], owner_of[one_oh_five]
    if (five_owner[1:] == five_owner[:-1]).any() or (one_oh_five_owner[1:] == one_oh_five_owner[:-1]).any():
        raise NotPlain("an entity with two handles")
    handles = np.concatenate((five, one_oh_five))
    width = tags.width[handles].astype(np.int64)
    if len(handles) and (width.max() > 16 or width.min() < 1):
        raise NotPlain("a handle of unusual width")
    chars = windows(tags.data, tags.start[handles], 16, width)
    if not (HEX[chars] | (chars == 0)).all():
        raise NotPlain("a handle that is not hexadecimal")
    if len(distinct(chars.view("S16").ravel())) != len(handles):
        raise NotPlain("a handle used twice")
    if np.all((chars == ord("0")) | (chars == 0), axis=1).any():
        raise NotPlain("a handle 0 (no entity's: ezdxf refuses it)")
