"""SVG importer: a file -> :class:`~pathlen.geometry.Drawing` in millimetres.

* Parsed with defusedxml: entity declarations, external references and DTD fetching are refused;
  files over :data:`MAX_BYTES` and nesting deeper than :data:`MAX_DEPTH` are refused before any
  geometry is built, and ``<use>`` expansion stops at :data:`MAX_SEGMENTS` segments.
* Units: the root ``width``/``height`` in CSS absolute units with the ``viewBox`` and
  ``preserveAspectRatio`` give millimetres per user unit; a drawing sized in px (or not sized) is
  read at ``dpi`` px per inch (96, the CSS value, unless the user says otherwise).
* Geometry: ``path`` (all commands), ``rect`` (rounded corners as exact elliptic quarter arcs),
  ``circle``, ``ellipse``, ``line``, ``polyline``, ``polygon``, ``use`` of elements, groups,
  symbols and nested ``svg``; transforms are composed exactly and applied to whole arrays.
* Layer: the ``id`` of the outermost ``<g>`` holding the element ("" when none).  Colour: the
  stroke, as ``#rrggbb``.  Coordinates keep SVG's orientation (y grows downwards).
"""

from __future__ import annotations

import itertools
import math
import os
import re
import xml.etree.ElementTree as ET
from array import array
from collections import Counter
from collections.abc import Iterator
from dataclasses import dataclass, field, replace
from functools import lru_cache
from pathlib import Path

import defusedxml
import defusedxml.ElementTree as SafeET
import numpy as np

from pathlen.errors import InputError
from pathlen.geometry import Drawing, DrawingRuns, Entity, IntArray, SegmentCollector, affine, distinct
from pathlen.importers.svg_css import Rule, cascade, parse_stylesheet
from pathlen.importers.svg_markers import MARKABLE, OrderedSegments, marker_map
from pathlen.importers.svg_markers import vertices as marker_vertices
from pathlen.importers.svg_path import Rows, parse_careful, parse_many
from pathlen.importers.svg_segments import ROW_WIDTH, RawSegments, full_ellipse, to_drawing
from pathlen.importers.svg_values import (
    IDENTITY,
    PX_PER_UNIT,
    Affine2,
    BadValue,
    Relative,
    compose,
    normalise_color,
    number_prefix,
    parse_css_transform,
    parse_length,
    parse_numbers,
    parse_transform,
    transform_origin,
    translate,
    viewbox_transform,
)
from pathlen.importers.xml_entities import declared_entities
from pathlen.proximity import expand_ranges

#: Largest SVG file read (bytes).  Peak memory of ``measure`` measured at about 4.5x the file size for large files
#: (a document with ``<use>`` or markers is held whole: about 8x).
MAX_BYTES = 100_000_000
#: Deepest element nesting accepted.
MAX_DEPTH = 256
#: Deepest chain of ``<use>`` references followed.
MAX_USE_DEPTH = 32
#: Most segments one file may expand to (``<use>`` of ``<use>`` can multiply without bound).
MAX_SEGMENTS = 10_000_000

DEFAULT_DPI = 96.0
SVG_NS = "{http://www.w3.org/2000/svg}"
XLINK_HREF = "{http://www.w3.org/1999/xlink}href"
SHAPES = frozenset({"path", "rect", "circle", "ellipse", "line", "polyline", "polygon"})
CONTAINERS = frozenset({"g", "a", "svg", "switch"})
#: Elements whose content is never drawn where it stands.
DEFINITIONS = frozenset({"defs", "symbol"})
NOT_DRAWN = frozenset({"clipPath", "mask", "marker", "pattern", "linearGradient", "radialGradient", "filter",
                       "style", "script", "title", "desc", "metadata", "font", "font-face", "view", "cursor"})
NOT_MEASURED = frozenset({"text", "image", "foreignObject", "video", "audio", "canvas", "iframe"})
#: Elements a <switch> may choose (rendering elements and containers; SVG 2, 5.8.2).
RENDERED = SHAPES | CONTAINERS | NOT_MEASURED | {"use"}
#: CSS absolute-size keywords in px (CSS Fonts 4, "absolute-size" table, medium = 16 px).
FONT_KEYWORDS = {"xx-small": 9.0, "x-small": 10.0, "small": 13.0, "medium": 16.0, "large": 18.0,
                 "x-large": 24.0, "xx-large": 32.0, "xxx-large": 48.0}


def user_language() -> tuple[str, str]:
    """The user's language as a BCP 47 tag from the environment (LANGUAGE, LC_ALL, LC_MESSAGES, LANG:
    "de_CH.UTF-8" -> "de-CH"), and where it came from; "en" when none is set."""
    for name in ("LANGUAGE", "LC_ALL", "LC_MESSAGES", "LANG"):
        value = os.environ.get(name, "").split(":")[0].split(".")[0].split("@")[0]
        if value and value not in ("C", "POSIX"):
            return value.replace("_", "-"), f"from ${name}"
    return "en", "default; set --svg-language"


@dataclass(frozen=True)
class _State:
    """What an element inherits from where it is drawn."""

    transform: int  # index into the transform list (user units -> mm)
    layer: str | None  # None until the first <g>
    stroke: str
    color: str
    visible: bool
    viewport: tuple[float, float]  # width, height in the current user units, for percentages
    font_size: float = 16.0  # px (user units), for em and ex: CSS initial value "medium" = 16 px
    stroke_width: float = 1.0  # user units: markers scale with it
    markers: tuple[str, str, str] = ("none", "none", "none")  # marker-start, -mid, -end (inherited)


def read_svg(path: Path, dpi: float | None = None, language: str | None = None, in_runs: bool = False
             ) -> Drawing | DrawingRuns:
    """Read an SVG file; raises :class:`InputError` for unreadable, unsafe or non-SVG files.

    ``language`` is the user's language for ``systemLanguage`` (a BCP 47 tag; default from the
    environment, see :func:`user_language`).  With ``in_runs``, a document that places nothing (no
    ``<use>``, no markers) comes as :class:`DrawingRuns`: its paths parsed and converted
    :data:`RUN_CHARS` of path data at a time as the runs are taken (the element tree is let go first)."""
    root = parse_safely(path)
    if local_name(root.tag) != "svg":
        raise InputError(f"not an SVG file (root element is <{local_name(root.tag)}>)")
    if isinstance(root.tag, str) and root.tag.startswith("{") and not root.tag.startswith(SVG_NS):
        namespace = root.tag[1:].partition("}")[0]
        raise InputError(f"root <svg> is in the namespace {namespace[:60]!r}, not SVG's "
                         "(http://www.w3.org/2000/svg): nothing in it would be drawn")
    return _Importer(root, dpi, language).run(in_runs)


def local_name(tag: object) -> str:
    """``"{http://www.w3.org/2000/svg}path"`` -> ``"path"``; comments and processing instructions -> ""."""
    return tag.rpartition("}")[2] if isinstance(tag, str) else ""


def parse_safely(path: Path) -> ET.Element:
    """Parse XML with external references, deep nesting and entities beyond a budget refused (one-line
    errors; see :mod:`pathlen.importers.xml_entities`)."""
    try:
        size = path.stat().st_size
    except FileNotFoundError:
        raise InputError("no such file") from None
    except OSError as exc:
        raise InputError(f"cannot read file: {exc.strerror}") from None
    if size > MAX_BYTES:
        raise InputError(f"SVG file of {size / 1e6:,.0f} MB refused: the limit is {MAX_BYTES / 1e6:,.0f} MB")
    if size == 0:
        raise InputError("empty file")
    root = None
    depth = 0
    try:
        entities = declared_entities(path)
        for event, elem in SafeET.iterparse(str(path), events=("start", "end"), forbid_dtd=False,
                                            forbid_entities=not entities):
            if event == "end":
                depth -= 1
                continue
            depth += 1
            if root is None:
                root = elem
            if depth > MAX_DEPTH:
                raise InputError(f"elements nested more than {MAX_DEPTH} deep; file refused")
    except defusedxml.EntitiesForbidden:
        raise InputError("unsafe XML refused: the file declares entities (expansion is not allowed)") from None
    except defusedxml.ExternalReferenceForbidden:
        raise InputError("unsafe XML refused: the file refers to an external resource") from None
    except defusedxml.DefusedXmlException as exc:
        raise InputError(f"unsafe XML refused: {type(exc).__name__}") from None
    except ET.ParseError as exc:
        raise InputError(f"not well-formed XML: {exc}") from None
    except LookupError as exc:  # an encoding Python does not know, named in the XML declaration
        raise InputError(f"not readable XML: {exc}") from None
    except OSError as exc:
        raise InputError(f"cannot read file: {exc.strerror}") from None
    assert root is not None
    return root


#: Characters of path data parsed in one batch (bounds the temporary token lists).
CHUNK_CHARS = 2_000_000
#: Characters of path data in one run of a document read in runs (about 16,000 segments: the run's parse
#: and measure temporaries stay near 10 MB, and so does what the allocator keeps of them).
RUN_CHARS = 500_000


def _parse_in_chunks(texts: list[str]) -> tuple[dict[str, Rows], np.ndarray]:
    """:func:`parse_many` over batches of about :data:`CHUNK_CHARS`, rows tagged with indices into ``texts``."""
    found: dict[str, list[Rows]] = {}
    oks = []
    first = 0
    lengths = [len(t) for t in texts]
    while first < len(texts):
        last = _batch_end(lengths, first, CHUNK_CHARS)
        rows, ok = parse_many(texts[first:last])
        for kind, (r, owner, sub) in rows.items():
            found.setdefault(kind, []).append((r, owner + first, sub))
        oks.append(ok)
        first = last
    merged = {}
    for kind in list(found):  # a kind's batches let go once joined: never every kind twice at once
        parts = found.pop(kind)
        merged[kind] = tuple(np.concatenate([p[j] for p in parts]) for j in range(3))
        del parts
    return merged, np.concatenate(oks) if oks else np.zeros(0, dtype=bool)


def _paint(st: _State, props: dict[str, str]) -> _State:
    """``st`` with the stroke, colour and visibility an element specifies ("inherit" keeps the parent's)."""
    stroke = props.get("stroke", "inherit")
    color = props.get("color", "inherit")
    visibility = props.get("visibility", "inherit").lower()
    markers = list(st.markers)
    if "marker" in props:
        markers = [props["marker"]] * 3
    for k, name in enumerate(("marker-start", "marker-mid", "marker-end")):
        if props.get(name, "inherit") != "inherit":
            markers[k] = props[name]
    width = st.stroke_width
    if props.get("stroke-width", "inherit") != "inherit":
        try:
            width = parse_length(props["stroke-width"], 0.0)[0]
        except BadValue:
            pass  # an invalid value keeps the inherited one
    return replace(
        st,
        stroke=st.stroke if stroke == "inherit" else stroke,
        color=st.color if color == "inherit" else color,
        visible=st.visible if visibility == "inherit" else visibility == "visible",
        stroke_width=width,
        markers=(markers[0], markers[1], markers[2]),
    )


@lru_cache(maxsize=4096)
def _colour(stroke: str, color: str) -> str:
    return normalise_color(stroke, normalise_color(color))


@dataclass
class _Canvas:
    """What one drawing collects: the document itself, or one ``<use>`` target in one context."""

    raw: RawSegments = field(default_factory=RawSegments)
    transforms: list[Affine2] = field(default_factory=list)
    entities: list[Entity] = field(default_factory=list)
    #: path elements drawn, parsed together at the end: (path data, entity, transform)
    paths: list[tuple[str, int, int]] = field(default_factory=list)
    #: copies of other definitions: (definition key, user units -> this canvas, handle prefix)
    placements: list[tuple[tuple, Affine2, str]] = field(default_factory=list)


_MOVES = re.compile(r"[Mm]")
_CLOSES = re.compile(r"[Zz]")


def _closed_in_file(elem: ET.Element, tag: str) -> bool:
    """Whether the shape is closed as written: rect, circle, ellipse, polygon, or a path whose every
    subpath ends in a closepath."""
    if tag in ("rect", "circle", "ellipse", "polygon"):
        return True
    if tag != "path":
        return False
    d = elem.get("d", "").rstrip()
    return d[-1:] in ("z", "Z") and len(_MOVES.findall(d)) <= len(_CLOSES.findall(d))


def _batch_end(lengths: list[int], first: int, chars: int) -> int:
    """End of the batch of texts from ``first``: about ``chars`` characters (``lengths`` of the texts), at
    least one text (none when ``first`` is past the end)."""
    last, size = first, 0
    while last < len(lengths) and (size < chars or last == first):
        size += lengths[last]
        last += 1
    return last


class _Importer:
    """One document's walk: element tree -> raw segments -> Drawing.

    A ``<use>`` does not copy its target: the target is drawn once per context that can change
    what it reports (layer, stroke, colour, visibility, viewport) into a definition drawing of its
    own, and placed there by the ``<use>``'s transform (see :mod:`pathlen.instances`).
    """

    def __init__(self, root: ET.Element, dpi: float | None, language: str | None = None) -> None:
        self.root = root
        self.dpi = dpi
        self.language, self.language_source = (language, "--svg-language") if language else user_language()
        self.conditions_used = False
        self.marker_count = 0
        #: relative units where the element being handled stands (set as the walk goes)
        self.rel = Relative()
        self.root_rel = Relative()
        self.canvas = _Canvas()
        self.warnings: list[str] = []
        self.not_measured: Counter[str] = Counter()
        self.by_id: dict[str, ET.Element] = {}
        self.ordinal: dict[int, int] = {}
        self.drawn: set[int] = set()
        self.definitions: list[ET.Element] = []
        self.rules: list[Rule] = []
        #: ids (Python ``id``) of <use> elements in a circular reference (SVG 2, 5.6): never rendered
        self.circular: set[int] = set()
        #: definition drawings by key (target id, layer, stroke, colour, visibility, viewport)
        self.defined: dict[tuple, Drawing] = {}
        #: ids of the <use> targets being drawn, innermost last (a target met again is a cycle)
        self.building: list[str] = []
        #: path data already warned about (a text parsed again in a later run warns once)
        self.warned_paths: set[str] = set()

    # -- set-up ---------------------------------------------------------------------------
    def run(self, in_runs: bool = False) -> Drawing | DrawingRuns:
        css_skipped = 0
        for k, elem in enumerate(self.root.iter()):
            self.ordinal[id(elem)] = k
            ident = elem.get("id")
            if ident is not None:
                self.by_id.setdefault(ident, elem)
            if local_name(elem.tag) == "style" and elem.text:
                rules, skipped = parse_stylesheet(elem.text, len(self.rules))
                self.rules.extend(rules)
                css_skipped += skipped
        self.rules.sort(key=lambda r: r.specificity)
        self.circular = self.circular_uses()
        if css_skipped:
            self.warnings.append(f"{css_skipped} CSS selectors too complex to apply were ignored")
        top, viewport = self.root_transform()
        props = self.props(self.root)
        root_font = self.font_size(props, 16.0)
        self.rel = self.root_rel = Relative(root_font, root_font, viewport[0] / 100.0, viewport[1] / 100.0)
        state = _State(self.add_transform(top), None, props.get("stroke", "none"), props.get("color", "black"),
                       props.get("visibility", "visible") == "visible", viewport, root_font)
        if props.get("display", "").lower() == "none":
            self.count_hidden(self.root)
            self.warnings.append("the root <svg> has display none: nothing in it is drawn")
        else:
            self.walk_children(self.root, state)
        if self.marker_count:
            self.warnings.append(f"{self.marker_count} marker{'s' if self.marker_count != 1 else ''} (marker-start, "
                                 "-mid, -end) measured with the shapes they decorate")
        if self.conditions_used:
            self.warnings.append(f"conditional processing (systemLanguage) evaluated for the user language "
                                 f"{self.language!r} ({self.language_source})")
        if in_runs and not self.canvas.placements:
            return self.in_runs()
        drawing = self.finish_canvas()
        self.warnings.extend(self.report_notes())
        drawing.warnings.extend(self.warnings)
        return drawing

    def in_runs(self) -> DrawingRuns:
        """The document's own segments as :class:`DrawingRuns` (no placements): the element tree is
        let go before the first run (the runs need only the path data and the entity rows)."""
        notes = self.report_notes()
        self.root = ET.Element("svg")  # the document's tree goes
        self.by_id.clear()
        self.definitions.clear()
        out = DrawingRuns(self.canvas.entities, iter(()))
        out.runs = self._runs(out, notes)
        return out

    def _runs(self, out: DrawingRuns, notes: list[str]) -> Iterator[Drawing]:
        """Runs of about :data:`RUN_CHARS` of path data, in document order (the other shapes with the
        first); their path data let go as they are parsed.  At the end, ``out.used`` and ``out.warnings``."""
        c = self.canvas
        transforms = np.array(c.transforms, dtype=float).reshape(-1, 6)
        paths, c.paths = c.paths, []
        lengths = [len(d) for d, _, _ in paths]
        used = np.zeros(0, dtype=bool)
        raw, done, first = c.raw, self.raw_count(), 0
        while True:
            last = _batch_end(lengths, first, RUN_CHARS)
            done += self.add_paths(paths[first:last], raw, done)
            paths[first:last] = [("", 0, 0)] * (last - first)  # their text goes
            first = last
            used = np.concatenate([used, np.zeros(len(c.entities) - len(used), dtype=bool)])
            for tags in raw.entity.values():
                used[np.frombuffer(tags, dtype=np.int64)] = True
            yield to_drawing(raw, transforms, c.entities)
            if first == len(paths):
                break
            raw = RawSegments()
        out.used = used
        out.warnings = [*self.warnings, *notes]

    def finish_canvas(self) -> Drawing:
        """The current canvas as a Drawing, with its placements."""
        c = self.canvas
        self.add_paths(c.paths, c.raw, self.raw_count())
        self.drop_empty_entities()
        drawing = to_drawing(c.raw, np.array(c.transforms, dtype=float).reshape(-1, 6), c.entities)
        coll = SegmentCollector()
        coll.entities = drawing.entities
        for key, m, prefix, layer, colour in c.placements:
            a, b, cc, d, e, f = m
            matrix = affine([[a, cc], [b, d]], (e, f))
            if layer is None:
                coll.add_placement(self.defined[key], matrix, key, lambda lay: lay, prefix)
            else:  # markers: reported under the layer and colour of the element they decorate
                coll.add_placement(self.defined[key], matrix, (key, layer, colour), lambda _, lay=layer: lay, prefix,
                                   color=colour)
        placed = coll.drawing()
        drawing.entities = placed.entities
        drawing.placements = placed.placements
        return drawing

    def root_transform(self) -> tuple[Affine2, tuple[float, float]]:
        """User units -> mm for the whole document, and the viewport size in user units."""
        root = self.root
        try:
            viewbox = self.viewbox(root)
            width = self.size_attribute(root, "width")
            height = self.size_attribute(root, "height")
        except BadValue as exc:
            raise InputError(f"root <svg>: {exc}") from None
        units = {u for _, u in (width, height) if u is not None}
        physical = bool(units) and all(u not in ("", "px") for u in units)
        w, h = width[0], height[0]
        if viewbox is not None:
            aspect = viewbox[2] / viewbox[3]
            if w is None and h is None:
                w, h = viewbox[2], viewbox[3]
            elif w is None:
                w = h * aspect
            elif h is None:
                h = w / aspect
        if (w is not None and w <= 0) or (h is not None and h <= 0):
            raise InputError("root <svg> has zero or negative width/height: nothing is drawn")
        if physical:
            mm_per_px = 25.4 / 96.0  # CSS: 1in = 96px
        else:
            mm_per_px = 25.4 / (self.dpi or DEFAULT_DPI)
            if self.dpi is None:
                self.warnings.append("drawing has no physical size (width/height in px or absent): "
                                     "read at 96 px per inch; use --svg-dpi if it was made at another resolution")
        scale = (mm_per_px, 0.0, 0.0, mm_per_px, 0.0, 0.0)
        if viewbox is None:
            return scale, (w or 0.0, h or 0.0)
        fit = viewbox_transform(viewbox, (0.0, 0.0, w, h), root.get("preserveAspectRatio", ""))
        return compose(scale, fit), (viewbox[2], viewbox[3])

    @staticmethod
    def viewbox(elem: ET.Element) -> tuple[float, float, float, float] | None:
        text = elem.get("viewBox")
        if text is None:
            return None
        v = parse_numbers(text)
        if len(v) != 4 or v[2] <= 0 or v[3] <= 0:
            raise BadValue(f"viewBox {text!r} needs four numbers with positive width and height")
        return (v[0], v[1], v[2], v[3])

    @staticmethod
    def size_attribute(elem: ET.Element, name: str) -> tuple[float | None, str | None]:
        """A root width/height in px and its unit; (None, None) when absent, 'auto' or a percentage."""
        text = elem.get(name)
        if text is None or text.strip() in ("", "auto") or text.strip().endswith("%"):
            return None, None
        return parse_length(text)

    # -- the walk -------------------------------------------------------------------------
    def props(self, elem: ET.Element) -> dict[str, str]:
        return cascade(local_name(elem.tag), elem.attrib, self.rules)

    def add_transform(self, m: Affine2) -> int:
        self.canvas.transforms.append(m)
        return len(self.canvas.transforms) - 1

    def walk_children(self, parent: ET.Element, state: _State) -> None:
        """Draw the children of ``parent`` in document order."""
        self.walk([(c, state) for c in parent])

    def walk(self, items: list[tuple[ET.Element, _State]]) -> None:
        """Draw elements in order, with their subtrees (iteratively: depth is bounded, not recursion)."""
        stack = list(reversed(items))
        while stack:
            elem, st = stack.pop()
            for child_and_state in reversed(self.visit(elem, st)):
                stack.append(child_and_state)

    def visit(self, elem: ET.Element, st: _State) -> list[tuple[ET.Element, _State]]:
        """Handle one element; return the children to visit next, with their state."""
        if not isinstance(elem.tag, str) or (elem.tag.startswith("{") and not elem.tag.startswith(SVG_NS)):
            return []  # comments, processing instructions, foreign namespaces
        tag = local_name(elem.tag)
        if tag in NOT_DRAWN:
            return []
        if tag in DEFINITIONS:
            self.definitions.append(elem)
            return []
        if tag in NOT_MEASURED:
            self.not_measured[f"<{tag}>"] += 1
            return []
        if not self.conditions_true(elem):
            self.count_hidden(elem)
            return []
        props = self.props(elem)
        if props.get("display", "").lower() == "none":
            self.count_hidden(elem)
            return []
        try:
            st = self.inherit(elem, st, props, tag)
        except BadValue as exc:
            self.warn_element(elem, tag, str(exc))
            return []
        if tag in SHAPES:
            if st.visible:
                self.shape(elem, tag, st)
            else:
                self.not_measured["hidden"] += 1
            return []
        if tag == "use":
            return self.use(elem, st)
        if tag in CONTAINERS:
            children = list(elem)
            if tag == "switch":
                children = self.switch_choice(children)
            return [(c, st) for c in children]
        return []  # unknown elements draw nothing

    def inherit(self, elem: ET.Element, st: _State, props: dict[str, str], tag: str) -> _State:
        """The state for ``elem`` and its children: transform, layer, stroke, colour, visibility."""
        transform = st.transform
        viewport = st.viewport
        font = self.font_size(props, st.font_size, elem, tag)
        self.rel = replace(self.root_rel, em=font)
        local = self.local_transform(elem, tag, props, viewport)
        if tag == "svg":  # a nested viewport
            local, viewport = self.nested_viewport(elem, local, st.viewport)
        if local != IDENTITY:
            transform = self.add_transform(compose(self.canvas.transforms[st.transform], local))
        layer = st.layer
        if layer is None and tag == "g":
            layer = elem.get("id", "")
        return _paint(replace(st, transform=transform, layer=layer, viewport=viewport, font_size=font), props)

    def local_transform(self, elem: ET.Element, tag: str, props: dict[str, str], box: tuple[float, float]) -> Affine2:
        """The element's own transform: the CSS ``transform`` property (rules, ``style``) over the
        ``transform`` attribute, about ``transform-origin`` (SVG 2 / CSS Transforms 1: 0 0 for SVG
        elements by default).  An invalid value is ignored (its initial value, none) with a warning."""
        local = IDENTITY
        try:
            if "transform" in props:
                local = parse_css_transform(props["transform"], self.rel)
            elif "transform" in elem.attrib:
                local = parse_transform(elem.get("transform", ""))
        except BadValue as exc:  # SVG 2 / CSS: an invalid value is ignored; the element is still drawn
            self.warn_element(elem, tag, f"{exc}; transform ignored")
            return IDENTITY
        if local != IDENTITY and "transform-origin" in props:
            try:
                ox, oy = transform_origin(props["transform-origin"], box, self.rel)
            except BadValue as exc:
                self.warn_element(elem, tag, f"{exc}; origin 0 0 used")
                return local
            local = compose(compose(translate(ox, oy), local), translate(-ox, -oy))
        return local

    def font_size(self, props: dict[str, str], parent: float, elem: ET.Element | None = None, tag: str = "") -> float:
        """The element's font size (px) for em/ex: CSS absolute keywords, lengths, em and % of the parent's."""
        text = props.get("font-size", "").strip().lower()
        if not text or text == "inherit":
            return parent
        if text in FONT_KEYWORDS:
            return FONT_KEYWORDS[text]
        try:
            size = parse_length(text, parent, replace(self.root_rel, em=parent))[0]
        except BadValue as exc:
            if elem is not None:
                self.warn_element(elem, tag, f"{exc}; font-size inherited")
            return parent
        return size if size > 0 else parent

    def conditions_true(self, elem: ET.Element) -> bool:
        """SVG 2, 5.8 (conditional processing): requiredExtensions names extensions (pathlen supports none)
        and an empty value is false; systemLanguage is true when the user's language equals one of its
        tags or a prefix of one followed by '-'; requiredFeatures is gone from SVG 2 and is ignored."""
        if "requiredExtensions" in elem.attrib:
            return False
        langs = elem.get("systemLanguage")
        if langs is None:
            return True
        self.conditions_used = True
        user = self.language.lower()
        tags = [t.strip().lower() for t in langs.split(",") if t.strip()]
        return any(t == user or t.startswith(user + "-") for t in tags)

    def switch_choice(self, children: list[ET.Element]) -> list[ET.Element]:
        """The first direct child of a ``<switch>`` that is a rendering element with true conditions."""
        for child in children:
            if not isinstance(child.tag, str):
                continue
            if child.tag.startswith("{") and not child.tag.startswith(SVG_NS):
                continue
            name = local_name(child.tag)
            if name not in RENDERED:
                continue  # unknown elements are skipped (SVG 2, 5.8.2)
            if self.conditions_true(child):
                return [child]
        return []

    def nested_viewport(self, elem: ET.Element, local: Affine2, outer: tuple[float, float],
                        size: tuple[str | None, str | None] = (None, None)) -> tuple[Affine2, tuple[float, float]]:
        """Transform and viewport of a nested ``<svg>`` (or a ``<symbol>`` placed by ``<use>``)."""
        x = self.length(elem, "x", outer[0])
        y = self.length(elem, "y", outer[1])
        w_text = size[0] or elem.get("width") or "100%"
        h_text = size[1] or elem.get("height") or "100%"
        w = parse_length(w_text, outer[0], self.rel)[0]
        h = parse_length(h_text, outer[1], self.rel)[0]
        if w <= 0 or h <= 0:
            raise BadValue("zero or negative viewport size: nothing drawn")
        viewbox = self.viewbox(elem)
        place = translate(x, y)
        if viewbox is None:
            return compose(local, place), (w, h)
        fit = viewbox_transform(viewbox, (0.0, 0.0, w, h), elem.get("preserveAspectRatio", ""))
        return compose(local, compose(place, fit)), (viewbox[2], viewbox[3])

    def use(self, elem: ET.Element, st: _State) -> list[tuple[ET.Element, _State]]:
        """Place the target of a ``<use>``: drawn once per context as a definition, placed here by transform.

        SVG 2 (5.6, the 'use' element): a reference to the ``<use>`` itself or to an ancestor, directly
        or through other ``<use>`` elements, is an error and the ``<use>`` is not rendered.
        """
        href = elem.get("href") or elem.get(XLINK_HREF) or ""
        if not href.startswith("#"):
            self.warn_element(elem, "use", f"reference {href[:40]!r} is not a local #id; not measured")
            return []
        target = self.by_id.get(href[1:])
        if target is None:
            self.warn_element(elem, "use", f"refers to missing {href!r}; not measured")
            return []
        if id(elem) in self.circular or href[1:] in self.building:
            self.warn_element(elem, "use", f"refers to {href!r}, which contains this <use> (a circular "
                                           "reference): not rendered")
            return []
        if len(self.building) >= MAX_USE_DEPTH:
            self.warn_element(elem, "use", f"<use> references nested more than {MAX_USE_DEPTH} deep; not rendered")
            return []
        target_tag = local_name(target.tag)
        try:
            x = self.length(elem, "x", st.viewport[0])
            y = self.length(elem, "y", st.viewport[1])
            m = compose(self.canvas.transforms[st.transform], translate(x, y))
            viewport = st.viewport
            if target_tag in ("symbol", "svg"):
                local, viewport = self.nested_viewport(target, IDENTITY, st.viewport,
                                                       (elem.get("width"), elem.get("height")))
                if target_tag == "symbol":
                    local = compose(parse_transform(target.get("transform", "")), local)
                m = compose(m, local)
        except BadValue as exc:
            self.warn_element(elem, "use", str(exc))
            return []
        inner = replace(st, viewport=viewport)
        if target_tag in ("symbol", "svg"):
            inner = _paint(inner, self.props(target))
        key = (href[1:], inner.layer, inner.stroke, inner.color, inner.visible, inner.viewport)
        if key not in self.defined:
            self.define(key, target, inner)
        self.canvas.placements.append((key, m, self.handle(elem, "use") + "/", None, None))
        return []

    def define(self, key: tuple, target: ET.Element, inner: _State) -> None:
        """Draw ``target`` (a symbol or nested svg: its children) on a canvas of its own."""
        saved = self.canvas
        self.canvas = _Canvas()
        self.building.append(target.get("id") or str(key[0]))
        try:
            base = replace(inner, transform=self.add_transform(IDENTITY))
            if local_name(target.tag) in ("symbol", "svg", "marker"):
                self.walk_children(target, base)
            else:
                self.walk([(target, base)])
            self.defined[key] = self.finish_canvas()
        finally:
            self.building.pop()
            self.canvas = saved

    def circular_uses(self) -> set[int]:
        """The ``<use>`` elements that reference themselves, an ancestor, or anything that leads back to
        them through other ``<use>`` elements (SVG 2, 5.6: in error, not rendered).

        In the graph of element -> child and ``<use>`` -> target edges, child edges form a tree, so a
        ``<use>`` is circular exactly when it lies on a cycle: in a strongly connected component of
        more than one element, or referencing itself.  Linear in the number of elements.
        """
        uses = [e for e in self.root.iter() if local_name(e.tag) == "use"]
        if not uses:
            return set()
        from scipy.sparse import coo_matrix
        from scipy.sparse.csgraph import connected_components

        src, dst, own = [], [], set()
        for elem in self.root.iter():
            k = self.ordinal[id(elem)]
            for child in elem:
                src.append(k)
                dst.append(self.ordinal[id(child)])
        for u in uses:
            href = u.get("href") or u.get(XLINK_HREF) or ""
            target = self.by_id.get(href[1:]) if href.startswith("#") else None
            if target is u:
                own.add(id(u))
            elif target is not None:
                src.append(self.ordinal[id(u)])
                dst.append(self.ordinal[id(target)])
        n = len(self.ordinal)
        graph = coo_matrix((np.ones(len(src), dtype=np.int8), (src, dst)), shape=(n, n)).tocsr()
        _, label = connected_components(graph, directed=True, connection="strong")
        size = np.bincount(label)
        return own | {id(u) for u in uses if size[label[self.ordinal[id(u)]]] > 1}

    # -- shapes ---------------------------------------------------------------------------
    def length(self, elem: ET.Element, name: str, percent_of: float, default: float = 0.0) -> float:
        """A length attribute in user units; an invalid value takes the initial value ``default``
        (SVG 2, 19.2 error processing: the element is still drawn) with a warning."""
        text = elem.get(name)
        if text is None or text.strip() == "auto":
            return default
        try:
            return parse_length(text, percent_of, self.rel)[0]
        except BadValue as exc:
            self.warn_element(elem, local_name(elem.tag), f"{name}: {exc}; initial value used")
            return default

    def shape(self, elem: ET.Element, tag: str, st: _State) -> None:
        raw = self.canvas.raw
        w, h = st.viewport
        diagonal = math.hypot(w, h) / math.sqrt(2.0)  # SVG: percentages of radii use the normalised diagonal
        error = None
        if tag == "path":
            self.canvas.paths.append((elem.get("d", ""), len(self.canvas.entities), st.transform))
            self.add_entity(elem, tag, st)
            if len(self.canvas.paths) > MAX_SEGMENTS:
                raise InputError(f"more than {MAX_SEGMENTS:,} paths after expanding <use>; file refused")
            if st.markers != ("none", "none", "none"):
                self.place_markers(elem, tag, st)
            return
        try:
            if tag == "line":
                raw.rows["line"].extend((self.length(elem, "x1", w), self.length(elem, "y1", h),
                                         self.length(elem, "x2", w), self.length(elem, "y2", h)))
            elif tag in ("polyline", "polygon"):
                error = self.poly(elem.get("points", ""), tag == "polygon")
            elif tag == "circle":
                r = self.length(elem, "r", diagonal)
                if r > 0:
                    full_ellipse(self.length(elem, "cx", w), self.length(elem, "cy", h), r, r, raw)
            elif tag == "ellipse":
                rx = self.length(elem, "rx", w, -1.0)
                ry = self.length(elem, "ry", h, -1.0)
                rx, ry = (ry if rx < 0 else rx), (rx if ry < 0 else ry)  # SVG 2: "auto" takes the other radius
                if rx > 0 and ry > 0:
                    full_ellipse(self.length(elem, "cx", w), self.length(elem, "cy", h), rx, ry, raw)
            else:
                self.rect(elem, w, h)
        except BadValue as exc:
            error = f"{exc}; not measured"
        if error:
            self.warn_element(elem, tag, error)
        if raw.tag(len(self.canvas.entities), st.transform):
            self.add_entity(elem, tag, st)
            if self.raw_count() > MAX_SEGMENTS:
                raise InputError(f"more than {MAX_SEGMENTS:,} segments after expanding <use>; file refused")
        if tag in MARKABLE and st.markers != ("none", "none", "none"):
            self.place_markers(elem, tag, st)

    def place_markers(self, elem: ET.Element, tag: str, st: _State) -> None:
        """Place the element's markers at its vertices (see :mod:`pathlen.importers.svg_markers`): each
        marker's content is drawn once, as a definition, and placed per vertex, under the element's
        layer and stroke colour."""
        ordered = OrderedSegments()
        if tag == "path":
            parse_careful(elem.get("d", ""), ordered)  # type: ignore[arg-type]
        elif tag == "line":
            w, h = st.viewport
            ordered.rows["line"].extend((self.length(elem, "x1", w), self.length(elem, "y1", h),
                                         self.length(elem, "x2", w), self.length(elem, "y2", h)))
        else:
            v, _ = number_prefix(elem.get("points", ""))
            pts = list(zip(v[0::2], v[1::2], strict=False))
            if tag == "polygon" and len(pts) > 2 and pts[0] != pts[-1]:
                pts.append(pts[0])
            for (x0, y0), (x1, y1) in itertools.pairwise(pts):
                ordered.rows["line"].extend((x0, y0, x1, y1))
        points = marker_vertices(ordered.items)
        if not points:
            return
        colour = _colour(st.stroke, st.color)
        base = self.canvas.transforms[st.transform]
        for k, vertex in enumerate(points):
            which = 0 if k == 0 else 2 if k == len(points) - 1 else 1
            ref = st.markers[which].strip()
            if ref in ("none", ""):
                continue
            placed = self.marker(elem, tag, ref, st)
            if placed is None:
                continue
            key, marker, content, anchor, units = placed
            scale = st.stroke_width if units != "userSpaceOnUse" else 1.0
            m = compose(base, marker_map(vertex, marker.get("orient", "0"), k == 0, content, anchor, scale))
            self.canvas.placements.append((key, m, self.handle(elem, tag) + "/", st.layer or "", colour))
            self.marker_count += 1

    def marker(self, elem: ET.Element, tag: str, ref: str, st: _State
               ) -> tuple[tuple, ET.Element, Affine2, tuple[float, float], str] | None:
        """The marker named by ``url(#id)``: its definition key (drawn on first use), element, content
        map (viewBox -> markerWidth x markerHeight), reference point and markerUnits."""
        m = re.fullmatch(r"url\(\s*['\"]?#([^'\")]+)['\"]?\s*\)", ref)
        target = self.by_id.get(m.group(1)) if m else None
        if target is None or local_name(target.tag) != "marker":
            self.warn_element(elem, tag, f"marker {ref[:40]!r} is not a <marker> of this file; not drawn")
            return None
        ident = m.group(1)  # type: ignore[union-attr]
        if ident in self.building:
            self.warn_element(elem, tag, f"marker {ident!r} is used inside itself; not drawn")
            return None
        try:
            mw = self.length(target, "markerWidth", st.viewport[0], 3.0)
            mh = self.length(target, "markerHeight", st.viewport[1], 3.0)
            box = self.viewbox(target)
            content = IDENTITY if box is None else viewbox_transform(box, (0.0, 0.0, mw, mh),
                                                                      target.get("preserveAspectRatio", ""))
            anchor = (self.length(target, "refX", mw), self.length(target, "refY", mh))
        except BadValue as exc:
            self.warn_element(elem, tag, f"marker {ident!r}: {exc}; not drawn")
            return None
        key = ("marker", ident)
        if key not in self.defined:
            inner = _State(0, None, "none", "black", True, (box[2], box[3]) if box else (mw, mh))
            self.define(("marker", ident), target, _paint(inner, self.props(target)))
        return key, target, content, anchor, target.get("markerUnits", "strokeWidth").strip()

    def add_entity(self, elem: ET.Element, tag: str, st: _State) -> None:
        """The entity row for a drawn shape: layer, handle, kind and stroke colour."""
        self.canvas.entities.append(Entity(st.layer or "", self.handle(elem, tag), tag, _colour(st.stroke, st.color),
                                           loop=_closed_in_file(elem, tag)))
        self.drawn.add(id(elem))

    def poly(self, text: str, closed: bool) -> str | None:
        """Lines through ``points``, used up to the first bad token (SVG 2: rendered up to the error)."""
        v, good = number_prefix(text)
        error = None if good else "bad token in points; drawn up to there"
        if len(v) % 2:
            v, error = v[:-1], "odd number of coordinates in points; the last one ignored"
        pts = list(zip(v[0::2], v[1::2], strict=True))
        if closed and len(pts) > 2 and pts[0] != pts[-1]:
            pts.append(pts[0])
        rows = self.canvas.raw.rows["line"]
        for (x0, y0), (x1, y1) in itertools.pairwise(pts):
            rows.extend((x0, y0, x1, y1))
        return error

    def rect(self, elem: ET.Element, vw: float, vh: float) -> None:
        """A rectangle, its rounded corners as exact quarter ellipses (SVG 2, 10.2, rx/ry rules)."""
        x, y = self.length(elem, "x", vw), self.length(elem, "y", vh)
        w, h = self.length(elem, "width", vw), self.length(elem, "height", vh)
        if w <= 0 or h <= 0:
            return  # a zero size disables rendering; a negative one is an error, also not drawn
        rx, ry = self.length(elem, "rx", vw, -1.0), self.length(elem, "ry", vh, -1.0)
        rx, ry = (ry if rx < 0 else rx), (rx if ry < 0 else ry)
        rx, ry = min(max(rx, 0.0), w / 2.0), min(max(ry, 0.0), h / 2.0)
        lines, ellipses = self.canvas.raw.rows["line"], self.canvas.raw.rows["ellipse"]
        if rx == 0.0 or ry == 0.0:
            lines.extend((x, y, x + w, y, x + w, y, x + w, y + h, x + w, y + h, x, y + h, x, y + h, x, y))
            return
        half = math.pi / 2.0
        corners = ((x + w - rx, y + ry), (x + w - rx, y + h - ry), (x + rx, y + h - ry), (x + rx, y + ry))
        for k, (cx, cy) in enumerate(corners):
            start = (k - 1) * half  # from -90°: top-right, bottom-right, bottom-left, top-left
            ellipses.extend((cx, cy, rx, 0.0, 0.0, ry, start, start + half))
        edges = ((x + rx, y, x + w - rx, y), (x + w, y + ry, x + w, y + h - ry),
                 (x + w - rx, y + h, x + rx, y + h), (x, y + h - ry, x, y + ry))
        for x0, y0, x1, y1 in edges:
            if (x0, y0) != (x1, y1):
                lines.extend((x0, y0, x1, y1))

    def add_paths(self, paths: list[tuple[str, int, int]], raw: RawSegments, drawn: int) -> int:
        """Parse every distinct path of ``paths`` (path data, entity, transform) once, all together, then
        place each drawn copy into ``raw``; returns how many segments that added.  ``drawn``: segments
        already drawn on the canvas (for the :data:`MAX_SEGMENTS` refusal)."""
        if not paths:
            return 0
        distinct: dict[str, int] = {}
        copy_of = np.array([distinct.setdefault(d, len(distinct)) for d, _, _ in paths], dtype=np.int64)
        entity = np.array([e for _, e, _ in paths], dtype=np.int64)
        transform = np.array([t for _, _, t in paths], dtype=np.int64)
        texts = list(distinct)
        rows, ok = _parse_in_chunks(texts)
        for u in np.flatnonzero(~ok).tolist():
            one = RawSegments()
            error = parse_careful(texts[u], one)
            if error and texts[u] not in self.warned_paths:  # a text in several runs warns once
                self.warned_paths.add(texts[u])
                first = self.canvas.entities[int(entity[np.argmax(copy_of == u)])]
                self.warnings.append(f"<path> {first.handle}: {error}")
            for kind, width in ROW_WIDTH.items():
                extra = np.frombuffer(one.rows[kind], dtype=np.float64).reshape(-1, width)
                if len(extra):
                    r, owner, sub = rows.get(kind, (np.zeros((0, width)), np.zeros(0, dtype=np.int64),
                                                    np.zeros(0, dtype=np.int64)))
                    rows[kind] = (np.concatenate([r, extra]), np.concatenate([owner, np.full(len(extra), u)]),
                                  np.concatenate([sub, np.frombuffer(one.entity[kind], dtype=np.int64)]))
        counts = {kind: np.bincount(owner, minlength=len(texts)) for kind, (_, owner, _) in rows.items()}
        added = sum(int(c[copy_of].sum()) for c in counts.values())
        if added + drawn > MAX_SEGMENTS:
            raise InputError(f"more than {MAX_SEGMENTS:,} segments after expanding <use>; file refused")
        rank, extra_rows = self.closed_subpaths(texts, rows, copy_of, entity)
        copies = np.arange(len(copy_of))
        for kind in list(rows):  # each kind's parsed rows go once copied to the canvas
            r, owner, _ = rows.pop(kind)
            order = np.argsort(owner, kind="stable")  # rows of each distinct path together
            first = (np.cumsum(counts[kind]) - counts[kind])[copy_of]
            n = counts[kind][copy_of]
            pick = order[expand_ranges(copies, first, first + n)[:, 1]]
            raw.add(kind, r[pick])
            k = rank[kind][pick]
            own = np.repeat(entity, n)
            raw.entity[kind].frombytes(np.where(k > 0, np.repeat(extra_rows, n) + k - 1, own).tobytes())
            raw.transform[kind].frombytes(np.repeat(transform, n).tobytes())
        return added

    def closed_subpaths(self, texts: list[str], rows: dict[str, Rows], copy_of: IntArray, entity: IntArray
                        ) -> tuple[dict[str, IntArray], IntArray]:
        """Closed stays closed per subpath: a path of several drawn subpaths, some ending in a
        closepath, gets an entity row per subpath (its first keeps the path's own row, the others
        count no copies of their own), so each closed subpath chains only with itself even where
        it touches another (:func:`pathlen.contours.join_groups`).

        Returns per kind the rank of each row's subpath among its path's drawn subpaths (0 for a
        path not split), and per drawn copy the entity row of its second subpath."""
        # (path, subpath) pairs as one number each, sorted and made distinct (as np.unique's rows, in a
        # quarter of its memory): path * top + subpath, top above every subpath number
        top = 1 + max((int(sub.max()) for _, _, sub in rows.values() if len(sub)), default=0)
        pair = np.concatenate([owner.astype(np.int64) * top + sub for _, owner, sub in rows.values()]) if rows \
            else np.zeros(0, dtype=np.int64)
        pair, inverse = distinct(pair, return_inverse=True)
        unique = np.stack([pair // top, pair % top], axis=1)
        del pair
        path_of = unique[:, 0]
        drawn = np.bincount(path_of, minlength=len(texts))
        lead = np.searchsorted(path_of, path_of)  # first drawn subpath of the same path
        pair_rank = np.arange(len(unique)) - lead
        at = np.searchsorted(path_of, np.arange(len(texts)))  # each path's first pair
        closed = np.zeros(len(unique), dtype=bool)
        for p in np.flatnonzero(drawn > 1).tolist():
            ends = [chunk.rstrip()[-1:] in ("z", "Z") for chunk in _MOVES.split(texts[p])[1:]]
            mine = slice(at[p], at[p] + drawn[p])
            closed[mine] = [ends[s] if s < len(ends) else False for s in unique[mine, 1].tolist()]
        split = np.zeros(len(texts), dtype=bool)
        split[path_of[closed]] = True
        split &= drawn > 1
        pair_rank[~split[path_of]] = 0
        added = np.where(split[copy_of], drawn[copy_of] - 1, 0)
        extra_rows = len(self.canvas.entities) + np.cumsum(added) - added
        for c in np.flatnonzero(added).tolist():
            base = self.canvas.entities[int(entity[c])]
            p = copy_of[c]
            ends = closed[at[p]:at[p] + drawn[p]].tolist()
            base.loop = ends[0]
            self.canvas.entities.extend(Entity(base.layer, base.handle, base.kind, base.color, copies=0,
                                               hidden=base.hidden, loop=k, frozen=base.frozen) for k in ends[1:])
        rank, row = {}, 0
        for kind, (r, _, _) in rows.items():
            rank[kind] = pair_rank[inverse.ravel()[row:row + len(r)]]
            row += len(r)
        return rank, extra_rows

    def raw_count(self) -> int:
        return sum(len(a) for a in self.canvas.raw.entity.values())

    def drop_empty_entities(self) -> None:
        """Forget entities that gave no segment (an empty path), renumbering the rest."""
        tags = {k: np.frombuffer(a, dtype=np.int64) for k, a in self.canvas.raw.entity.items()}
        used = np.zeros(len(self.canvas.entities), dtype=bool)
        for t in tags.values():
            used[t] = True
        if used.all():
            return
        renumber = np.cumsum(used) - 1
        for k, t in tags.items():
            self.canvas.raw.entity[k] = array("q", renumber[t].tobytes())
        self.canvas.entities = [e for e, keep in zip(self.canvas.entities, used.tolist(), strict=True) if keep]

    # -- reporting ------------------------------------------------------------------------
    def handle(self, elem: ET.Element, tag: str) -> str:
        ident = elem.get("id")
        return ident if ident else f"{tag}[{self.ordinal.get(id(elem), 0)}]"

    def warn_element(self, elem: ET.Element, tag: str, message: str) -> None:
        self.warnings.append(f"<{tag}> {self.handle(elem, tag)}: {message}")

    def count_hidden(self, elem: ET.Element) -> None:
        self.not_measured["hidden"] += sum(1 for e in elem.iter() if local_name(e.tag) in SHAPES)

    def report_notes(self) -> list[str]:
        """What was left out: elements not measured, hidden shapes, definitions never used."""
        unused = sum(1 for d in self.definitions for e in d.iter()
                     if local_name(e.tag) in SHAPES and id(e) not in self.drawn)
        notes = []
        for what, n in sorted(self.not_measured.items()):
            if what == "hidden":
                notes.append(f"{n} hidden shape{'s' if n != 1 else ''} (display/visibility) not measured")
            else:
                notes.append(f"{n} {what} element{'s' if n != 1 else ''} not measured")
        if unused:
            notes.append(f"{unused} shape{'s' if unused != 1 else ''} in <defs>/<symbol> never used, not measured")
        return notes


__all__ = ["DEFAULT_DPI", "MAX_BYTES", "MAX_DEPTH", "PX_PER_UNIT", "read_svg"]
