"""The small part of CSS that decides what an SVG draws and in which stroke colour.

Only the properties pathlen needs are kept (``stroke``, ``color``, ``display``, ``visibility``),
from ``<style>`` sheets with simple selectors (``tag``, ``.class``, ``#id``, ``tag.class``, ``*``
and comma lists of them) and from ``style`` attributes.  The cascade follows CSS 2.1 section 6.4:
presentation attributes lose to any rule, rules order by specificity then source order, and the
``style`` attribute wins.  Rules with other selectors are counted, not applied.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from pathlen.importers.svg_values import parse_style

#: The properties that decide whether and how an element is measured.
PROPERTIES = ("stroke", "color", "display", "visibility", "transform", "transform-origin", "font-size",
              "stroke-width", "marker", "marker-start", "marker-mid", "marker-end")
#: Properties whose presentation attribute has a grammar of its own (SVG's ``transform`` list):
#: the cascade reports them only when a rule or ``style`` sets them (CSS grammar).
CSS_ONLY = frozenset({"transform"})

_SIMPLE = re.compile(r"(\*|[a-zA-Z][\w-]*)?((?:\.[\w-]+)*)(#[\w-]+)?((?:\.[\w-]+)*)")
_RULE = re.compile(r"([^{}]+)\{([^{}]*)\}")
_COMMENT = re.compile(r"/\*.*?\*/", re.S)


@dataclass(frozen=True)
class Rule:
    tag: str | None
    classes: frozenset[str]
    id: str | None
    specificity: tuple[int, int, int, int]  # ids, classes, tags, source order
    declarations: tuple[tuple[str, str], ...]


def parse_stylesheet(text: str, first_order: int = 0) -> tuple[list[Rule], int]:
    """Rules of a style sheet that touch :data:`PROPERTIES`, and how many rules were not understood."""
    rules: list[Rule] = []
    skipped = 0
    order = first_order
    for m in _RULE.finditer(_COMMENT.sub("", text)):
        decls = tuple((k, v) for k, v in parse_style(m.group(2)).items() if k in PROPERTIES)
        if not decls:
            continue
        for selector in m.group(1).split(","):
            sel = _SIMPLE.fullmatch(selector.strip())
            if not sel or not selector.strip() or selector.strip().startswith("@"):
                skipped += 1
                continue
            tag = sel.group(1) if sel.group(1) not in (None, "*") else None
            classes = frozenset(c for c in (sel.group(2) + sel.group(4)).split(".") if c)
            ident = sel.group(3)[1:] if sel.group(3) else None
            order += 1
            rules.append(Rule(tag, classes, ident, (int(ident is not None), len(classes), int(tag is not None), order),
                              decls))
    rules.sort(key=lambda r: r.specificity)
    return rules, skipped


def cascade(tag: str, attrib: dict[str, str], rules: list[Rule]) -> dict[str, str]:
    """The specified values of :data:`PROPERTIES` on one element (before inheritance)."""
    out = {k: attrib[k].strip() for k in PROPERTIES if k in attrib and k not in CSS_ONLY}
    if rules:
        classes = set(attrib.get("class", "").split())
        ident = attrib.get("id")
        for r in rules:
            if (r.tag is None or r.tag == tag) and r.classes <= classes and (r.id is None or r.id == ident):
                out.update(r.declarations)
    if "style" in attrib:
        out.update((k, v) for k, v in parse_style(attrib["style"]).items() if k in PROPERTIES)
    return out
