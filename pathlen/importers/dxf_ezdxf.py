"""DXF importer through ezdxf's document model: model space -> :class:`~pathlen.geometry.Drawing` in millimetres.

One small handler per entity type (``HANDLERS``).  Blocks are imported once
each into their own coordinates and placed by every INSERT as whole arrays.
Entities on layer "0" inside a block take the layer of the INSERT placing it.
"""

from __future__ import annotations

import io
import logging
import math
import re
import struct
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

import ezdxf
import numpy as np
from ezdxf import recover as ezdxf_recover
from ezdxf.entities import DXFGraphic, Insert
from ezdxf.lldxf.const import DXFError

from pathlen.errors import InputError
from pathlen.geometry import Drawing, SegmentCollector
from pathlen.importers.dxf_blocks import BlockCache, place_insert
from pathlen.importers.dxf_units import in_millimetres, unit_of_code
from pathlen.importers.nurbs import SplineError, bezier_pieces

#: Sections of a DXF file (DXF reference, "DXF Files"); any other name is a damaged file.
KNOWN_SECTIONS = frozenset({"HEADER", "CLASSES", "TABLES", "BLOCKS", "ENTITIES", "OBJECTS", "THUMBNAILIMAGE",
                            "ACDSDATA"})
#: The header given to a file that has none, so that its entities are read with every group code
#: (ezdxf reads a header-less file as R12 and drops what R12 did not have).  No $INSUNITS: unitless.
MINIMAL_HEADER = "  0\nSECTION\n  2\nHEADER\n  9\n$ACADVER\n  1\nAC1027\n  0\nENDSEC\n"
TWO_PI = 2.0 * math.pi


def read_dxf(path: Path, drawing_units: str | None = None, recover: bool = False,
             hidden_layers: bool = False) -> Drawing:
    """Read a DXF file's model space.

    ``drawing_units`` (a key of ``MM_PER_UNIT``) overrides ``$INSUNITS``; without either the
    drawing is taken as millimetres, with a warning.  A damaged file is refused unless
    ``recover``.  Entities on layers that are off or frozen are marked hidden (measured only
    with ``hidden_layers``: the caller decides).  ezdxf's own log messages become warnings.
    """
    return dxf_drawing(load_dxf(path, recover), drawing_units, hidden_layers)


@dataclass
class LoadedDxf:
    """A DXF document as loaded, with what loading had to say."""

    doc: ezdxf.document.Drawing
    notes: list[str]
    recovered: bool


def load_dxf(path: Path, recover: bool = False) -> LoadedDxf:
    """Load the document (refusing a damaged one unless ``recover``); ezdxf's log lines become notes."""
    with _LogCapture() as log:
        doc, notes, recovered = _load(path, recover)
    return LoadedDxf(doc, [*notes, *log.messages], recovered)


def dxf_drawing(loaded: LoadedDxf, drawing_units: str | None = None, hidden_layers: bool = False) -> Drawing:
    """The model space of a loaded document as a Drawing in millimetres (see :func:`read_dxf`)."""
    doc = loaded.doc
    with _LogCapture() as log:
        hidden, frozen = (frozenset(), frozenset()) if hidden_layers else _hidden_layers(doc)
        importer = _DxfImporter(doc, hidden, frozen)
        coll = SegmentCollector(hidden, frozen)
        coll.warn(*loaded.notes)
        for entity in doc.modelspace():
            importer.add(entity, coll)
        drawing = coll.drawing()
    drawing.warnings.extend(m for m in log.messages if m not in drawing.warnings)
    drawing.recovered = loaded.recovered
    return in_millimetres(drawing, *drawing_unit(doc, drawing_units))


def loads_silently(data: bytes) -> bool:
    """Does ezdxf load a DXF file of these bytes as this reader would, with no damage, repair or log
    line?  (Used on the parts of a file the bulk reader does not check itself.)"""
    import tempfile

    with tempfile.NamedTemporaryFile(suffix=".dxf") as tmp:
        tmp.write(data)
        tmp.flush()
        try:
            with _LogCapture() as log:
                _doc, notes, _recovered = _load(Path(tmp.name), False)
        except InputError:
            return False
    return not notes and not log.messages


class _LogCapture(logging.Handler):
    """ezdxf's log records of WARNING and above, as one-line warnings of this file (not printed)."""

    def __init__(self) -> None:
        super().__init__(logging.WARNING)
        self.messages: list[str] = []

    def emit(self, record: logging.LogRecord) -> None:
        text = _first_line(Exception(record.getMessage()))
        message = f"DXF reader: {text}"
        if message not in self.messages and len(self.messages) < 20:
            self.messages.append(message)

    def __enter__(self) -> _LogCapture:
        self.logger = logging.getLogger("ezdxf")
        self.saved = self.logger.propagate
        self.logger.addHandler(self)
        self.logger.propagate = False
        return self

    def __exit__(self, *exc: object) -> None:
        self.logger.removeHandler(self)
        self.logger.propagate = self.saved


#: What ezdxf raises on files it cannot make sense of (besides OSError).
_UNREADABLE = (DXFError, UnicodeError, ValueError, TypeError, IndexError, KeyError, OverflowError, AttributeError,
               StopIteration, struct.error, EOFError)


def _load(path: Path, recover: bool) -> tuple[ezdxf.document.Drawing, list[str], bool]:
    """The document, notes for the report, and whether structural recovery was needed."""
    try:
        doc = _read_whole(path)
        damage = _damage(doc) or _repeated_code(path)
    except OSError as exc:
        if exc.strerror:
            raise InputError(f"cannot read file: {exc.strerror}") from None
        raise InputError("not a DXF file (no DXF structure found)") from None
    except _UNREADABLE as exc:
        damage = _plain_reason(exc, path)
    if damage is None:
        return doc, [], False
    if not recover:
        raise InputError(f"DXF damaged: {damage}; --recover measures what can be read")
    try:
        doc, auditor = ezdxf_recover.readfile(path)
    except (*_UNREADABLE, OSError) as exc:
        raise InputError(f"DXF structure not readable: {_plain_reason(exc)}") from None
    fixes = len(auditor.fixes) + len(auditor.errors)
    return doc, [f"damaged DXF read by structural recovery ({damage}; {fixes} repairs): check the result"], True


def _read_whole(path: Path) -> ezdxf.document.Drawing:
    """ezdxf's reading, except that a text file without a HEADER section gets a minimal one."""
    with path.open("rb") as fh:
        head = fh.read(65536)
    if not head.strip():
        raise InputError("empty file")
    binary = head.startswith(b"AutoCAD Binary DXF")
    if not binary and _SECTION.search(head) is None:
        raise InputError("not a DXF file (no DXF structure found)")
    if binary and not _has_binary_header(head):
        return _read_binary_without_header(path.read_bytes())
    if binary or _HEADER_SECTION.search(head) is not None:
        return ezdxf.readfile(path)
    raw = path.read_bytes()
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError:
        text = raw.decode("cp1252", errors="replace")
    text = text.lstrip("\ufeff").replace("\r\n", "\n")  # CRLF line ends, as ezdxf's file reader takes them
    return ezdxf.read(io.StringIO(MINIMAL_HEADER + text))


#: An empty HEADER section in binary DXF with one-byte group codes (what a file without $ACADVER uses)
EMPTY_BINARY_HEADER = b"\x00SECTION\x00\x02HEADER\x00\x00ENDSEC\x00"
_BINARY_SENTINEL = 22  # "AutoCAD Binary DXF" CR LF SUB NUL


def _has_binary_header(head: bytes) -> bool:
    """Whether a binary DXF starts with a HEADER section (group code 2 in one byte or two)."""
    first = head[_BINARY_SENTINEL:_BINARY_SENTINEL + 32]
    return b"\x02HEADER\x00" in first or b"\x02\x00HEADER\x00" in first


def _read_binary_without_header(data: bytes) -> ezdxf.document.Drawing:
    """A binary DXF without a HEADER section, read with an empty one: ezdxf would otherwise take a new
    drawing's header, metres and all; without $INSUNITS the drawing is unitless, as for text files."""
    from ezdxf.document import Drawing
    from ezdxf.lldxf.tagger import binary_tags_loader

    return Drawing.load(binary_tags_loader(data[:_BINARY_SENTINEL] + EMPTY_BINARY_HEADER + data[_BINARY_SENTINEL:]))


_HEADER_SECTION = re.compile(rb"(?m)^[ \t]*0[ \t]*\r?\n[ \t]*SECTION[ \t]*\r?\n"
                             rb"[ \t]*2[ \t]*\r?\n[ \t]*HEADER[ \t]*\r?$")


_SECTION = re.compile(rb"(?m)^[ \t]*0[ \t]*\r?\n[ \t]*SECTION[ \t]*\r?$")


def _damage(doc: ezdxf.document.Drawing) -> str | None:
    """What is wrong with a document ezdxf read without complaint, or None."""
    unknown = sorted({str(s.entities[0][1].value) for s in doc.stored_sections
                      if s.entities and len(s.entities[0]) > 1} - KNOWN_SECTIONS)
    if unknown:
        return f"unknown section {', '.join(repr(u[:40]) for u in unknown)} (a misspelt ENTITIES?)"
    return None


#: Text files up to this size are scanned for repeated codes on the ezdxf path (the bulk reader checks
#: every file it reads; bigger files it declines are rare and the scan is a Python loop).
REPEAT_SCAN_BYTES = 64_000_000
#: Entities whose coordinate and value codes each appear once (DXF reference): a repeat is damage.
_SINGLE_CODE_KINDS = frozenset({"LINE", "CIRCLE", "ARC", "ELLIPSE", "INSERT"})


def _repeated_code(path: Path) -> str | None:
    """The first coordinate or value code (10-59, 210-239) given twice in a LINE, CIRCLE, ARC, ELLIPSE
    or INSERT of a text DXF, as damage in words (ezdxf keeps the last value without a word)."""
    with path.open("rb") as fh:
        if fh.read(22).startswith(b"AutoCAD Binary DXF") or path.stat().st_size > REPEAT_SCAN_BYTES:
            return None
    kind, handle, seen = "", "", set()
    with path.open("rb") as fh:
        lines = iter(fh)
        number = 0
        for code_line in lines:
            value = next(lines, b"")
            number += 2
            code = code_line.strip()
            if not code.isdigit():
                continue
            c = int(code)
            if c == 0:
                kind, handle, seen = value.strip().decode("latin-1"), "", set()
            elif kind in _SINGLE_CODE_KINDS:
                if c == 5:
                    handle = value.strip().decode("latin-1")
                elif 10 <= c <= 59 or 210 <= c <= 239:
                    if c in seen:
                        return (f"group code {c} given twice in {kind}{f' #{handle}' if handle else ''} (line "
                                f"{number - 1}): a changed or repeated code")
                    seen.add(c)
    return None


def _plain_reason(exc: BaseException, path: Path | None = None) -> str:
    """ezdxf's reason for refusing a file, in words a shop user can act on (``path``: the file, to
    say what was found there)."""
    if isinstance(exc, StopIteration | EOFError | struct.error):
        return "the file ends early (truncated?)"
    if isinstance(exc, UnicodeError):
        return "text in an encoding that cannot be decoded"
    if isinstance(exc, DXFError):
        text = _first_line(exc).removeprefix(f"{type(exc).__name__}: ").rstrip(".")
        where = re.search(r"line:? *(\d+)", text)
        at = f" near line {where.group(1)}" if where else ""
        if "invalid floating point" in text.lower() and path is not None:
            comma = _decimal_comma(path)
            if comma is not None:
                return (f"numbers written with decimal commas (line {comma[0]}: {comma[1]!r}); DXF numbers use a "
                        "decimal point")
        if "missing required" in text.lower() and "coordinate" in text.lower():
            return (f"a point's coordinates are missing or out of order{at} (x, y and z are group codes 10, "
                    "20, 30 in that order)")
        return text + ("; file truncated?" if "missing" in text.lower() or "EOF" in text else "")
    return "not a DXF structure that can be read (truncated or damaged?)"


def _decimal_comma(path: Path) -> tuple[int, str] | None:
    """The first value (line number from 1, text) after a coordinate group code that is a number with a
    decimal comma, such as ``12,5``."""
    try:
        lines = path.read_bytes()[:50_000_000].decode("latin-1").splitlines()
    except OSError:
        return None
    for k in range(0, len(lines) - 1):
        code = lines[k].strip()
        if code.isdigit() and 10 <= int(code) <= 59 and re.fullmatch(r"\s*[-+]?\d+,\d+\s*", lines[k + 1]):
            return k + 2, lines[k + 1].strip()
    return None


def _first_line(exc: BaseException) -> str:
    text = str(exc).strip().splitlines()
    return text[0][:200] if text else type(exc).__name__


def _hidden_layers(doc: ezdxf.document.Drawing) -> tuple[frozenset[str], frozenset[str]]:
    """Layers switched off or frozen in the layer table, and the frozen ones (DXF reference, LAYER:
    negative colour = off, flag 1 = frozen)."""
    out, frozen = set(), set()
    for layer in doc.layers:
        try:
            if layer.is_off() or layer.is_frozen():
                out.add(layer.dxf.name)
            if layer.is_frozen():
                frozen.add(layer.dxf.name)
        except (AttributeError, ValueError, TypeError):
            continue
    return frozenset(out), frozenset(frozen)


def drawing_unit(doc: ezdxf.document.Drawing, drawing_units: str | None = None) -> tuple[str, str | None]:
    """The unit of the drawing's coordinates (``drawing_units`` over ``$INSUNITS``) and a warning when
    it had to be taken as mm."""
    if drawing_units:
        return drawing_units, None
    return unit_of_code(int(doc.header.get("$INSUNITS", 0) or 0))


class _DxfImporter:
    """Walks entities, caching each block's geometry by name."""

    def __init__(self, doc: ezdxf.document.Drawing, hidden: frozenset[str] = frozenset(),
                 frozen: frozenset[str] = frozenset()) -> None:
        self.doc = doc
        self.hidden = hidden
        self.frozen = frozen
        self.blocks = BlockCache()

    def add(self, entity: DXFGraphic, coll: SegmentCollector) -> None:
        """One entity into ``coll``; an entity whose data cannot be used is skipped with a warning."""
        kind = entity.dxftype()
        handler = HANDLERS.get(kind)
        if handler is None and kind != "INSERT":
            coll.skipped[kind] += 1
            return
        if entity.dxf.get("invisible", 0):  # group 60: not drawn (a dynamic block's hidden state, say)
            coll.skipped[f"invisible {kind}"] += 1
            return
        try:
            if kind == "INSERT":
                self.add_insert(entity, coll)  # type: ignore[arg-type]
            else:
                handler(entity, coll)  # type: ignore[misc]
        except (SplineError, DXFError, ValueError, TypeError, AttributeError, IndexError, KeyError,
                ZeroDivisionError, OverflowError) as exc:
            coll.warn(f"{kind} #{entity.dxf.handle} skipped: {_first_line(exc)}")

    def add_insert(self, insert: Insert, coll: SegmentCollector) -> None:
        """Place the block once per INSERT (a MINSERT as one placement with a grid); its geometry is
        read once per block name, never copied."""
        name = insert.dxf.get("name")
        if not isinstance(name, str) or not name:
            coll.warn(f"INSERT #{insert.dxf.handle} names no block (group code 2 missing): skipped")
            return
        block = self.blocks.get(name, coll, self._build_block)
        if block is None:
            return
        rows = np.array(list(insert.matrix44().rows()), dtype=float)
        place_insert(coll, block, rows.T, name, insert.dxf.layer, insert.dxf.handle, _minsert_grid(insert))

    def _build_block(self, name: str) -> Drawing | None:
        layout = self.doc.blocks.get(name)
        if layout is None:
            return None
        sub = SegmentCollector(self.hidden, self.frozen)
        for entity in layout:
            self.add(entity, sub)
        return sub.drawing()


def _minsert_grid(insert: Insert) -> tuple[int, int, np.ndarray, np.ndarray] | None:
    """A MINSERT's grid in WCS (rows, columns, row step, column step), or None for one copy.

    As the DXF reference and ezdxf's ``multi_insert`` have it: steps along the block's rotated
    OCS axes, not scaled; a zero spacing puts every copy of that direction in one place (drawn once).
    """
    rows, cols = int(insert.dxf.row_count), int(insert.dxf.column_count)
    dy, dx = float(insert.dxf.row_spacing), float(insert.dxf.column_spacing)
    rows, cols = (max(rows, 0) if dy else min(rows, 1)), (max(cols, 0) if dx else min(cols, 1))
    if rows * cols == 1:
        return None
    ocs = insert.ocs()
    angle = math.radians(insert.dxf.rotation)
    c, s = math.cos(angle), math.sin(angle)
    row_step = np.array(ocs.to_wcs((-s * dy, c * dy, 0.0)).xyz, dtype=float)
    col_step = np.array(ocs.to_wcs((c * dx, s * dx, 0.0)).xyz, dtype=float)
    return rows, cols, row_step, col_step


def _entity(e: DXFGraphic, coll: SegmentCollector) -> int:
    return coll.entity(e.dxf.layer, e.dxf.handle or "", e.dxftype())


def _line(e: DXFGraphic, coll: SegmentCollector) -> None:
    coll.add_line(e.dxf.start.xyz, e.dxf.end.xyz, _entity(e, coll))


def _circle_arc(e: DXFGraphic, coll: SegmentCollector, t0: float, t1: float, ent: int | None = None) -> None:
    r = float(e.dxf.radius)
    if not r > 0:
        raise ValueError(f"radius {r} is not positive")
    ocs = e.ocs()
    center = ocs.to_wcs(e.dxf.center).xyz
    u = (ocs.to_wcs((r, 0, 0))).xyz
    v = (ocs.to_wcs((0, r, 0))).xyz
    coll.add_arc(center, u, v, t0, t1, _entity(e, coll) if ent is None else ent)


def _circle(e: DXFGraphic, coll: SegmentCollector) -> None:
    _circle_arc(e, coll, 0.0, TWO_PI)


def _arc(e: DXFGraphic, coll: SegmentCollector, ent: int | None = None) -> None:
    t0 = math.radians(e.dxf.start_angle) % TWO_PI
    t1 = math.radians(e.dxf.end_angle) % TWO_PI
    if t1 <= t0:
        t1 += TWO_PI
    _circle_arc(e, coll, t0, t1, ent)


def _mline(e: DXFGraphic, coll: SegmentCollector) -> None:
    """An MLINE as the lines of its elements and its end-cap arcs, as ezdxf draws them (its virtual
    entities), all one entity."""
    parts = list(e.virtual_entities())  # type: ignore[attr-defined]
    if not parts:
        coll.warn(f"MLINE #{e.dxf.handle} has no elements to draw: nothing to measure")
        return
    ent = _entity(e, coll)
    for part in parts:
        kind = part.dxftype()
        if kind == "LINE":
            coll.add_line(part.dxf.start.xyz, part.dxf.end.xyz, ent)
        elif kind == "ARC":
            _arc(part, coll, ent)
        else:
            coll.skipped[f"MLINE {kind}"] += 1


def _ellipse(e: DXFGraphic, coll: SegmentCollector) -> None:
    t0 = float(e.dxf.start_param)
    t1 = float(e.dxf.end_param)
    if abs((t1 - t0) - TWO_PI) > 1e-12:  # not a whole turn: normalise like an arc
        t0 %= TWO_PI
        t1 %= TWO_PI
        if t1 <= t0:
            t1 += TWO_PI
    coll.add_arc(e.dxf.center.xyz, e.dxf.major_axis.xyz, e.minor_axis.xyz, t0, t1, _entity(e, coll))


def _bulged_path(points: list[tuple[float, float, float]], bulges: list[float], closed: bool,
                 ocs, coll: SegmentCollector, ent: int) -> None:
    """Lines and bulge arcs between OCS vertices ``points`` (x, y, elevation)."""
    count = len(points)
    last = count if closed else count - 1
    plain = not ocs.transform  # default extrusion: OCS is WCS, no conversions needed

    def to_wcs(p: tuple[float, float, float]) -> tuple[float, float, float]:
        return p if plain else ocs.to_wcs(p).xyz

    wcs = [to_wcs(p) for p in points]
    for i in range(last):
        j = (i + 1) % count
        b = bulges[i]
        (x0, y0, z), (x1, y1, _) = points[i], points[j]
        dx, dy = x1 - x0, y1 - y0
        if dx == 0.0 and dy == 0.0:
            continue  # repeated vertex: nothing to measure
        if b == 0.0:
            coll.add_line(wcs[i], wcs[j], ent)
            continue
        # bulge b = tan(theta/4); centre = midpoint + left normal·(1 - b²)/(4b)
        k = (1.0 - b * b) / (4.0 * b)
        cx, cy = 0.5 * (x0 + x1) - dy * k, 0.5 * (y0 + y1) + dx * k
        ux, uy = x0 - cx, y0 - cy
        vx, vy = (-uy, ux) if b > 0 else (uy, -ux)
        theta = 4.0 * math.atan(abs(b))
        coll.add_arc(to_wcs((cx, cy, z)), to_wcs((ux, uy, 0.0)), to_wcs((vx, vy, 0.0)), 0.0, theta, ent)


def _lwpolyline(e: DXFGraphic, coll: SegmentCollector) -> None:
    pts = list(e.lwpoints)  # (x, y, start width, end width, bulge)
    if len(pts) < 2:
        coll.warn(f"LWPOLYLINE #{e.dxf.handle} has {len(pts)} vertices: nothing to measure")
        return
    z = float(e.dxf.elevation)
    ent = _entity(e, coll)
    coll.entities[ent].loop = bool(e.closed)
    _bulged_path([(p[0], p[1], z) for p in pts], [float(p[4]) for p in pts], bool(e.closed), e.ocs(), coll, ent)


def _polyline(e: DXFGraphic, coll: SegmentCollector) -> None:
    if e.is_polygon_mesh or e.is_poly_face_mesh:
        coll.skipped["POLYLINE mesh"] += 1
        return
    verts = [v for v in e.vertices if not v.dxf.flags & 16]  # 16: spline frame control point
    if len(verts) < 2:
        coll.warn(f"POLYLINE #{e.dxf.handle} has {len(verts)} vertices: nothing to measure")
        return
    ent = _entity(e, coll)
    coll.entities[ent].loop = bool(e.is_closed)
    if e.is_3d_polyline:
        pts = [v.dxf.location.xyz for v in verts]
        if e.is_closed:
            pts.append(pts[0])
        coll.add_polyline(pts, ent)
        return
    z = float(e.dxf.elevation.z)
    pts = [(v.dxf.location.x, v.dxf.location.y, z) for v in verts]
    _bulged_path(pts, [float(v.dxf.bulge) for v in verts], bool(e.is_closed), e.ocs(), coll, ent)


def _spline(e: DXFGraphic, coll: SegmentCollector) -> None:
    if e.control_point_count():
        ctrl = np.array(e.control_points, dtype=float)
        knots = np.array(e.knots, dtype=float)
        weights = np.array(e.weights, dtype=float) if len(e.weights) else None
        degree = int(e.dxf.degree)
    elif e.fit_point_count():
        tool = e.construction_tool()
        ctrl = np.array(tool.control_points, dtype=float)
        knots = np.array(tool.knots(), dtype=float)
        weights = np.array(tool.weights(), dtype=float) if tool.is_rational else None
        degree = tool.degree
        coll.warn("SPLINE given by fit points only: curve reconstructed by ezdxf's fit-point "
                  "interpolation, which may differ from the drawing program's")
    else:
        raise ValueError("no control or fit points")
    ent = _entity(e, coll)
    pieces, piece_w = bezier_pieces(ctrl, knots, degree, weights)
    rational = weights is not None and np.ptp(weights) > 0
    for c, w in zip(pieces, piece_w, strict=False):
        coll.add_bezier(c, w if rational else None, ent)


HANDLERS: dict[str, Callable[[DXFGraphic, SegmentCollector], None]] = {
    "LINE": _line,
    "CIRCLE": _circle,
    "ARC": _arc,
    "ELLIPSE": _ellipse,
    "LWPOLYLINE": _lwpolyline,
    "POLYLINE": _polyline,
    "SPLINE": _spline,
    "HELIX": _spline,  # a helix carries its spline (DXF reference, HELIX: a SPLINE subclass)
    "MLINE": _mline,
}
