"""Internal XML entities, honoured only within a budget.

Some drawing programs declare general entities in the document type's internal subset and use
them in namespace attributes (``<!ENTITY ns_x "http://...">`` ... ``xmlns:x="&ns_x;"``).  XML 1.0
(4.4) has every processor expand such internal entities; unbounded expansion is the classic
denial of service, and external entities can read files.  So before a file is parsed with
entities allowed, its declarations are read on their own (the prolog only: the first pass stops at
the root element) and the file is refused when

- an entity is external (SYSTEM or PUBLIC: it would reach outside the file), a parameter entity,
  or named outside ASCII (its references could not be counted in every encoding);
- one entity's text, all references in it expanded, exceeds :data:`MAX_ENTITY_CHARS`;
- every reference in the file (counted in its text, so never fewer than are expanded) expanded
  together exceeds :data:`MAX_EXPANSION_CHARS`.

References inside an entity's value must name entities declared before it (or the five
predefined ones), so each entity's expanded size is known when it is declared.
"""

from __future__ import annotations

import re
import xml.parsers.expat
from collections import Counter
from pathlib import Path

from pathlen.errors import InputError

#: Longest text one entity may expand to (characters).
MAX_ENTITY_CHARS = 1 << 20
#: Most characters all entity references of one file may expand to together.
MAX_EXPANSION_CHARS = 32 << 20
#: Most entities one file may declare.
MAX_ENTITIES = 10_000
#: XML 1.0 (4.6): always known, never declared
PREDEFINED = frozenset({"lt", "gt", "amp", "apos", "quot"})
_REFERENCE = re.compile(r"&([^\s;&<>\"'#]{1,1000});")
_CHUNK = 1 << 16


class _RootReached(Exception):
    """The prolog is over: every declaration has been seen."""


def declared_entities(path: Path) -> bool:
    """Whether ``path`` declares internal entities that may be expanded safely; raises
    :class:`InputError` (one line, beginning "unsafe XML refused") for any that may not.
    A malformed prolog is left to the full parse to report."""
    sizes: dict[str, int] = {}

    def declaration(name: str, parameter: bool, value: str | None, _base: str | None, system: str | None,
                    public: str | None, _notation: str | None) -> None:
        if parameter:
            raise InputError("unsafe XML refused: the file declares parameter entities")
        if value is None or system is not None or public is not None:
            raise InputError("unsafe XML refused: the file refers to an external resource")
        if not name.isascii():
            raise InputError("unsafe XML refused: an entity name outside ASCII (its references cannot be counted)")
        if len(sizes) >= MAX_ENTITIES:
            raise InputError(f"unsafe XML refused: the file declares more than {MAX_ENTITIES:,} entities")
        size = len(value)
        for ref in _REFERENCE.finditer(value):
            inner = ref.group(1)
            if inner in PREDEFINED:
                continue
            if inner not in sizes:
                raise InputError(f"unsafe XML refused: entity {name[:40]!r} uses {inner[:40]!r} before it is declared")
            size += sizes[inner] - len(ref.group(0))
        if size > MAX_ENTITY_CHARS:
            raise InputError(f"unsafe XML refused: entity {name[:40]!r} expands to more than "
                             f"{MAX_ENTITY_CHARS:,} characters")
        sizes.setdefault(name, size)  # XML 1.0 (4.2): the first declaration binds

    def root(_name: str, _attrs: dict) -> None:
        raise _RootReached

    parser = xml.parsers.expat.ParserCreate()
    parser.SetParamEntityParsing(xml.parsers.expat.XML_PARAM_ENTITY_PARSING_NEVER)
    parser.EntityDeclHandler = declaration
    parser.StartElementHandler = root
    try:
        with path.open("rb") as f:
            while chunk := f.read(_CHUNK):
                parser.Parse(chunk, False)
            parser.Parse(b"", True)
    except _RootReached:
        pass
    except xml.parsers.expat.ExpatError:
        return False  # the full parse names what is wrong
    if not sizes:
        return False
    total = sum(sizes.get(name, 0) * n for name, n in _references(path).items())
    if total > MAX_EXPANSION_CHARS:
        raise InputError(f"unsafe XML refused: its entity references would expand to {total:,} characters "
                         f"(the limit is {MAX_EXPANSION_CHARS:,})")
    return True


def _references(path: Path) -> Counter[str]:
    """How often each ``&name;`` occurs in the file's text (an upper bound of the references expanded)."""
    raw = path.read_bytes()
    encoding = "utf-32" if raw[:4] in (b"\xff\xfe\x00\x00", b"\x00\x00\xfe\xff") else (
        "utf-16" if raw[:2] in (b"\xff\xfe", b"\xfe\xff") or b"\x00" in raw[:4] else "latin-1")
    try:
        text = raw.decode(encoding)
    except UnicodeDecodeError:
        raise InputError("unsafe XML refused: entities declared in a file whose text cannot be read") from None
    return Counter(_REFERENCE.findall(text))  # entity names are ASCII: latin-1 reads them in any 8-bit encoding
