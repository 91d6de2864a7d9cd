"""Parts from a drawing: each outer closed contour with everything inside it, ready to nest.

A part is an outer closed contour (even nesting depth) of the chosen layers, with the closed
contours directly inside it (its holes) and every other contour inside it (engraving, open lines).
Parts keep their exact segments (mm, the drawing's coordinates) for lengths and pictures; their
area is exact (Green's theorem on the segments, :mod:`pathlen.nest.area`); the engine gets their
:class:`~pathlen.nest.envelope.Envelope`.  Open contours outside every part are named in a warning
and not nested.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np

from pathlen.batch import FileOutcome, MeasureSettings, one_line_failure
from pathlen.containment import nesting_depth
from pathlen.contours import Contour, ContourSet, chain_contours
from pathlen.file_measure import hidden_note
from pathlen.geometry import Drawing, Entity, FloatArray, keep_rows
from pathlen.importers import read_drawing
from pathlen.instances import expand
from pathlen.measure import measure
from pathlen.nest.area import contour_area, segment_areas
from pathlen.nest.envelope import Envelope, flatten_contour, part_envelope
from pathlen.segments import SegmentTable, segment_layers, segment_table

#: Spacing between parts (mm) when none is given.
DEFAULT_GAP_MM = 1.0


@dataclass(frozen=True)
class PartSettings:
    """What decides the parts read from a file."""

    gap_mm: float = DEFAULT_GAP_MM  # spacing between parts, kerf included (mm)
    layers: tuple[str, ...] = ()  # layers (or #rrggbb colours) holding parts; empty: every visible layer
    #: how the drawing is read and measured (tolerances, import options, segment limit)
    reading: MeasureSettings = field(default_factory=MeasureSettings)


@dataclass
class Part:
    """One part: exact geometry (mm, the drawing's coordinates), exact area and the envelope."""

    file: str
    index: int  # the part's index in its file (outer contours in drawing order)
    drawing: Drawing  # the part's own segments only
    area_mm2: float  # outline less holes
    area_bound_mm2: float
    cut_length_mm: float  # every contour of the part (measured)
    contours: int
    holes: int
    envelope: Envelope
    box: tuple[float, float, float, float]  # x0, y0, x1, y1 of the flattened outline (mm)
    outline: FloatArray  # [n, 2] the flattened outer contour (mm); the true one strays at most `deviation`
    deviation: float
    marks: int = 0  # contours of other layers carried along (engraving, notes): never holes
    name: str = ""  # a pattern piece's name (empty for drawing parts)


@dataclass
class PartsOutcome(FileOutcome):
    """The parts of one file, or its one-line error."""

    parts: list[Part] = field(default_factory=list)
    warnings: list[str] = field(default_factory=list)


def read_parts(path: str, settings: PartSettings) -> PartsOutcome:
    """The parts of one file; never raises for bad input (the error goes in the result)."""
    return one_line_failure(path, lambda: _read_parts(path, settings), PartsOutcome)


def _read_parts(path: str, ps: PartSettings) -> PartsOutcome:
    s = ps.reading
    drawing = expand(read_drawing(Path(path), s.import_options), s.max_segments, "nesting")
    measured = measure(drawing, s.rtol)
    table = segment_table(drawing, measured)
    layer_names, layer = segment_layers(drawing, table)
    visible = np.array([not e.hidden for e in drawing.entities], dtype=bool)
    chosen = visible & np.array([not ps.layers or e.layer in ps.layers or (bool(e.color) and e.color in ps.layers)
                                 for e in drawing.entities], dtype=bool)
    real = table.length > 0
    keep = chosen[table.entity] & real if len(table) else np.zeros(0, dtype=bool)
    marks = visible[table.entity] & ~chosen[table.entity] & real if len(table) else keep
    warnings = list(drawing.warnings) + hidden_note(drawing.entities, measured.entity_length)
    if ps.layers:
        missing = sorted(set(ps.layers) - {e.layer for e in drawing.entities} - {e.color for e in drawing.entities})
        if missing:
            warnings.append(f"no layer or colour named {', '.join(missing)} in this drawing")
    contours = chain_contours(table, layer, s.join_tol_mm, keep)
    depth, parent = nesting_depth(table, contours)
    owner = _owners(contours, depth, parent)
    loose = np.flatnonzero(owner < 0)
    for k in loose[:5].tolist():
        p = contours.start[k]
        warnings.append(f"open outline on layer {layer_names[int(contours.layer[k])]!r} from ({p[0]:.3f}, "
                        f"{p[1]:.3f}) mm, {contours.length[k]:.3f} mm long: not a part, not nested (close it "
                        f"within the join tolerance, {s.join_tol_mm:g} mm)")
    if len(loose) > 5:
        warnings.append(f"{len(loose) - 5} more open outlines outside every part: not nested")
    terms, term_bounds = segment_areas(table)
    outers = np.flatnonzero(owner == np.arange(len(contours)))
    built = [_part(path, i, k, table, contours, owner, parent, terms, term_bounds, ps.gap_mm)
             for i, k in enumerate(outers.tolist())]
    parts = [p for p, _ in built]
    rows = [r for _, r in built]
    if marks.any() and parts:
        _attach_marks(parts, rows, table, chain_contours(table, layer, s.join_tol_mm, marks))
    for part, r in zip(parts, rows, strict=True):
        keep = np.zeros(len(table), dtype=bool)
        keep[r] = True
        part.drawing = _own_entities(keep_rows(table.drawing, keep))
    repaired = sum(p.envelope.repaired for p in parts)
    if repaired:
        warnings.append(f"{repaired} parts cross themselves or touch their holes: nested by their outline "
                        "alone, holes not used for other parts")
    if not parts and not loose.size:
        warnings.append("no closed outline on the chosen layers: nothing to nest")
    return PartsOutcome(path, ok=True, parts=parts, warnings=warnings)


def _owners(contours: ContourSet, depth: np.ndarray, parent: np.ndarray) -> np.ndarray:
    """Per contour, the outer contour of the part it belongs to (itself for an outer one), -1 for open
    contours outside every part."""
    n = len(contours)
    owner = np.where(contours.closed & (depth % 2 == 0), np.arange(n), parent)
    for _ in range(2):  # inside a hole: one step further out reaches the part
        inner = (owner >= 0) & (owner != np.arange(n))
        up = inner & (depth[np.maximum(owner, 0)] % 2 == 1)
        owner = np.where(up, parent[np.maximum(owner, 0)], owner)
    return owner


def _part(path: str, index: int, outer: int, table: SegmentTable, contours: ContourSet, owner: np.ndarray,
          parent: np.ndarray, terms: FloatArray, term_bounds: FloatArray, gap: float) -> tuple[Part, np.ndarray]:
    """The part of outer contour ``outer`` (its drawing is filled in later) and its table rows."""
    members = np.flatnonzero(owner == outer)
    holes = [contours[k] for k in members.tolist() if k != outer and contours.closed[k] and parent[k] == outer]
    part = _build(path, index, table, contours[outer], holes, terms, term_bounds, gap,
                  float(contours.length[members].sum()), len(members))
    return part, np.concatenate([contours[k].segments for k in members.tolist()])


def outline_part(path: str, index: int, table: SegmentTable, outline: Contour, gap: float, name: str = "") -> Part:
    """A part with one closed outline and no holes (a pattern piece's cut line), its drawing its own."""
    terms, term_bounds = segment_areas(table)
    part = _build(path, index, table, outline, [], terms, term_bounds, gap, float(outline.length), 1)
    keep = np.zeros(len(table), dtype=bool)
    keep[outline.segments] = True
    part.drawing = _own_entities(keep_rows(table.drawing, keep))
    part.name = name
    return part


def _build(path: str, index: int, table: SegmentTable, outline: Contour, holes: list[Contour], terms: FloatArray,
           term_bounds: FloatArray, gap: float, cut_length: float, contours: int) -> Part:
    area, bound = contour_area(terms, term_bounds, outline.segments, outline.forward)
    area = abs(area)
    for c in holes:
        a, b = contour_area(terms, term_bounds, c.segments, c.forward)
        area -= abs(a)
        bound += b
    ring = flatten_contour(table, outline.segments, outline.forward)
    envelope = part_envelope(ring, [flatten_contour(table, c.segments, c.forward) for c in holes], gap)
    x0, y0 = ring.points.min(axis=0) - ring.deviation
    x1, y1 = ring.points.max(axis=0) + ring.deviation
    return Part(path, index, table.drawing, area, bound, cut_length, contours, len(holes), envelope,
                (float(x0), float(y0), float(x1), float(y1)), ring.points, ring.deviation)


def _attach_marks(parts: list[Part], rows: list[np.ndarray], table: SegmentTable, marks: ContourSet) -> None:
    """Contours of the other visible layers (engraving, notes) travel with the part whose outline holds
    their start point; they are never holes."""
    import shapely

    outlines = [shapely.Polygon(p.envelope.exterior) for p in parts]
    tree = shapely.STRtree(outlines)
    starts = shapely.points(marks.start[:, :2])
    hit_point, hit_part = tree.query(starts, predicate="within")
    owner = np.full(len(marks), -1)
    owner[hit_point[::-1]] = hit_part[::-1]  # the first part listed wins
    for i, part in enumerate(parts):
        mine = np.flatnonzero(owner == i).tolist()
        if mine:
            rows[i] = np.concatenate([rows[i], *(marks[k].segments for k in mine)])
            part.marks = len(mine)


def _own_entities(d: Drawing) -> Drawing:
    """The drawing with an entity table of its own rows only (a part travels between processes)."""
    used = np.unique(np.concatenate([d.lines.entity, d.arcs.entity, *(b.entity for b in d.beziers.values())]))
    new = np.full(len(d.entities), -1, dtype=np.int64)
    new[used] = np.arange(len(used))
    entities: list[Entity] = [d.entities[i] for i in used.tolist()]
    return replace(d, lines=replace(d.lines, entity=new[d.lines.entity]),
                   arcs=replace(d.arcs, entity=new[d.arcs.entity]),
                   beziers={k: replace(b, entity=new[b.entity]) for k, b in d.beziers.items()}, entities=entities)
