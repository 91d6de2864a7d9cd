"""A seam estimate per file: pattern pieces, their sew lines and edges, the planned seams, thread.

Pieces come from D6673 blocks (:mod:`pathlen.importers.pattern`) or, in any other drawing, from
the outer closed contours of the cut layers.  Lengths in mm, thread in mm (exports convert).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from pathlen.batch import FileOutcome
from pathlen.containment import nesting_depth
from pathlen.contours import Contour, ContourSet, chain_contours
from pathlen.errors import InputError
from pathlen.estimates.seam import MARK_SNAP_MM, SewLine, sew_line
from pathlen.estimates.seam_plan import DEFAULT_TOLERANCE_PCT, PlannedSeam, SeamPlan
from pathlen.estimates.thread import position_ratios, settings_for, stitch
from pathlen.geometry import Drawing
from pathlen.importers.pattern import CUT_LAYERS, NOTCH_LAYERS, SEW_LAYERS, PatternPiece, read_pattern
from pathlen.instances import expand
from pathlen.measure import measure
from pathlen.segments import SegmentTable, segment_layers, segment_table

DEFAULT_ALLOWANCE_MM = 10.0  # common practice: 10-15 mm, 6 mm on tight curves
DEFAULT_WASTE_PCT = 12.5  # common practice: add 10-15 % to thread


@dataclass
class SeamSettings:
    allowance_mm: float = DEFAULT_ALLOWANCE_MM
    stitch: int = 301
    stitches_per_mm: float | None = None
    thickness_mm: float | None = None
    plan: SeamPlan | None = None
    quantity: int = 1
    waste_pct: float = DEFAULT_WASTE_PCT
    cut_layers: tuple[str, ...] = ()
    sew_layers: tuple[str, ...] = ()
    measure: object = None  # MeasureSettings
    width_mm: float | None = None
    #: keep each piece's cut line as a nesting part (for the fabric marker), spaced this far (mm)
    marker_gap_mm: float | None = None


@dataclass
class ThreadUse:
    """One thread position of a seam: ``threads`` threads, each ``ratio`` per unit seam and
    ``thread_mm`` long (waste included) for one copy of the piece."""

    position: str
    threads: int
    ratio: float
    thread_mm: float


@dataclass
class Seam:
    stitch: int
    length_mm: float
    ratio: float  # all threads together, per unit seam length
    waste_pct: float
    thread_mm: float  # all threads, waste included (mm)
    spc: float = 0.0  # stitches per cm used
    thickness_mm: float = 0.0
    width_mm: float | None = None
    formula: str | None = None  # the published total (None: a fixed ratio)
    positions: list[ThreadUse] = field(default_factory=list)


@dataclass
class PieceSeams:
    name: str
    quantity: int
    size: str
    cut_length_mm: float
    sew_line_mm: float
    edges: list[float]
    notches: int = 0
    seams: list[Seam] = field(default_factory=list)
    #: why this piece has no seams (an allowance too large for it, say); the other pieces go on
    error: str | None = None
    #: a point on each edge (mm; on the line the edge runs along), for pictures
    edge_points: list[tuple[float, float]] = field(default_factory=list)
    #: the sew line as polylines (mm) where it is an offset, and the feet of notches, for pictures
    sew_paths: list[Any] = field(default_factory=list)
    notch_feet: list[tuple[float, float, float, float]] = field(default_factory=list)
    loops: int = 1
    #: the cut line as a nesting part (only when a marker is wanted)
    part: Any = None

    @property
    def sew_length_mm(self) -> float:
        return sum(s.length_mm for s in self.seams)

    @property
    def thread_mm(self) -> float:
        return sum(s.thread_mm for s in self.seams)


@dataclass
class Match:
    a: str
    b: str
    difference_mm: float
    ease_pct: float
    ok: bool


@dataclass
class SeamEstimate(FileOutcome):
    pieces: list[PieceSeams] = field(default_factory=list)
    matches: list[Match] = field(default_factory=list)
    quantity: int = 1
    warnings: list[str] = field(default_factory=list)

    @property
    def sew_length_mm(self) -> float:
        """Per garment: every piece's sewn length times its quantity."""
        return sum(p.sew_length_mm * p.quantity for p in self.pieces)

    @property
    def thread_mm(self) -> float:
        return sum(p.thread_mm * p.quantity for p in self.pieces)


def estimate_seams(path: str, settings: SeamSettings) -> SeamEstimate:
    """Never raises for bad input: the error goes in the result."""
    from pathlen.batch import one_line_failure

    return one_line_failure(path, lambda: _estimate(path, settings),
                            lambda p, **kw: SeamEstimate(p, quantity=settings.quantity, **kw))


def _estimate(path: str, s: SeamSettings) -> SeamEstimate:
    options = s.measure.import_options  # type: ignore[attr-defined]
    out = SeamEstimate(path, True, quantity=s.quantity)
    pattern, drawing = read_pattern(Path(path), options)
    for piece in pattern:
        out.pieces.append(_pattern_piece(piece, s, out.warnings))
    if drawing is not None:
        out.warnings.extend(drawing.warnings)
        flat = expand(drawing, s.measure.max_segments, "the seam estimate")  # type: ignore[attr-defined]
        out.pieces.extend(_plain_pieces(flat, s))
    if not out.pieces:
        raise InputError("no pattern pieces: no closed outline on the cut layers")
    for index, p in enumerate(out.pieces):
        if p.part is not None:
            p.part.file, p.part.index = path, index
    _sew(out, s)
    return out


def _table(drawing: Drawing, s: SeamSettings) -> tuple[SegmentTable, list[str], np.ndarray]:
    table = segment_table(drawing, measure(drawing, s.measure.rtol))  # type: ignore[attr-defined]
    names, layer = segment_layers(drawing, table)
    return table, names, layer


def _on(names: list[str], layer: np.ndarray, wanted: tuple[str, ...]) -> np.ndarray:
    index = [k for k, n in enumerate(names) if n in wanted]
    return np.isin(layer, index)


def _pattern_piece(piece: PatternPiece, s: SeamSettings, warnings: list[str]) -> PieceSeams:
    table, names, layer = _table(piece.drawing, s)
    cut = _on(names, layer, s.cut_layers or CUT_LAYERS)
    sew = _on(names, layer, s.sew_layers or SEW_LAYERS)
    tol = s.measure.join_tol_mm  # type: ignore[attr-defined]
    outlines = chain_contours(table, layer, tol, cut)
    k = _largest_closed(table, outlines)
    if k is None:
        raise InputError(f"piece {piece.name!r}: its cut line is not closed")
    sewn = chain_contours(table, layer, tol, sew)
    j = _largest_closed(table, sewn)
    part = _part(piece.drawing, table, outlines[k], s, piece.name)
    try:
        if j is not None:  # a drawn sew line wins over the allowance
            line = sew_line(table, sewn[j], 0.0, piece.marks, cut=outlines[k])
        else:
            line = sew_line(table, outlines[k], _allowance(s, piece.name), piece.marks)
    except InputError as exc:
        return PieceSeams(piece.name, piece.quantity, piece.size, float(outlines.length[k]), 0.0, [], error=str(exc),
                          part=part)
    if line.unsnapped_marks:
        warnings.append(f"piece {piece.name!r}: {line.unsnapped_marks} notches or turn points are more than "
                        f"{MARK_SNAP_MM:g} mm from the cut and sew lines: they split no edge")
    notches = int(_on(names, layer, NOTCH_LAYERS).sum()) if piece.notches == 0 else piece.notches
    return _piece(piece.name, piece.quantity, piece.size, float(outlines.length[k]), line, table, notches, part)


def _piece(name: str, quantity: int, size: str, cut_mm: float, line: SewLine, table: SegmentTable, notches: int,
           part: Any) -> PieceSeams:
    return PieceSeams(name, quantity, size, cut_mm, line.length_mm, line.edges, notches,
                      edge_points=_edge_points(table, line.edge_rows), sew_paths=line.paths, notch_feet=line.feet,
                      loops=line.loops, part=part)


def _part(drawing: Drawing, table: SegmentTable, outline: Contour, s: SeamSettings, name: str) -> Any:
    """The cut line as a nesting part, when the marker wants one."""
    if s.marker_gap_mm is None:
        return None
    from pathlen.nest.parts import outline_part

    return outline_part("", 0, table, outline, s.marker_gap_mm, name)


def _selected(drawing: Drawing, table: SegmentTable, selectors: tuple[str, ...]) -> np.ndarray:
    """Segments whose entity's layer or stroke colour (``#rrggbb``, SVG) is one of ``selectors``."""
    chosen = np.array([e.layer in selectors or (bool(e.color) and e.color in selectors) for e in drawing.entities],
                      dtype=bool)
    return chosen[table.entity] if len(table) else np.zeros(0, dtype=bool)


def _plain_pieces(drawing: Drawing, s: SeamSettings) -> list[PieceSeams]:
    table, _, layer = _table(drawing, s)
    sew = _selected(drawing, table, s.sew_layers) if s.sew_layers else np.zeros(len(table), dtype=bool)
    cut = _selected(drawing, table, s.cut_layers) if s.cut_layers else ~sew
    tol = s.measure.join_tol_mm  # type: ignore[attr-defined]
    outlines = chain_contours(table, layer, tol, cut)
    depth, _ = nesting_depth(table, outlines)
    pieces = [k for k in range(len(outlines)) if outlines.closed[k] and depth[k] % 2 == 0]
    pieces.sort(key=lambda k: (float(outlines.start[k, 0] + outlines.start[k, 1]), k))
    sewn = chain_contours(table, layer, tol, sew) if sew.any() else None
    out = []
    for number, k in enumerate(pieces, start=1):
        name = f"piece {number}"
        part = _part(drawing, table, outlines[k], s, name)
        try:
            line = None
            if sewn is not None:
                inside = _inside_outline(table, outlines, k, sewn)
                if inside is not None:
                    line = sew_line(table, sewn[inside], 0.0, [], cut=outlines[k])
            if line is None:
                line = sew_line(table, outlines[k], _allowance(s, name), [])
        except InputError as exc:
            out.append(PieceSeams(name, 1, "", float(outlines.length[k]), 0.0, [], error=str(exc), part=part))
            continue
        out.append(_piece(name, 1, "", float(outlines.length[k]), line, table, 0, part))
    return out


def _edge_points(table: SegmentTable, rows: list[list[int]]) -> list[tuple[float, float]]:
    """The middle of each edge's middle segment (mm)."""
    return [(float(table.middle[r[len(r) // 2], 0]), float(table.middle[r[len(r) // 2], 1])) for r in rows if r]


def _allowance(s: SeamSettings, piece: str) -> float:
    """The plan's allowance for this piece, else ``--allowance``."""
    return s.plan.allowances.get(piece, s.allowance_mm) if s.plan else s.allowance_mm


def _largest_closed(table: SegmentTable, contours: ContourSet) -> int | None:
    best, size = None, -1.0
    for k in range(len(contours)):
        if not contours.closed[k]:
            continue
        lo, hi = table.box
        steps = contours.steps[contours.first[k]:contours.first[k] + contours.size[k]]
        area = float(np.prod(hi[steps, :2].max(axis=0) - lo[steps, :2].min(axis=0)))
        if area > size:
            best, size = k, area
    return best


def _inside_outline(table: SegmentTable, outlines: ContourSet, k: int, sewn: ContourSet) -> int | None:
    """The closed sew contour whose start lies inside piece outline ``k`` (by its sample polygon)."""
    import shapely

    ring = table.travel_samples(outlines[k].segments, outlines[k].forward)[:, :, :2].reshape(-1, 2)
    polygon = shapely.Polygon(ring)
    for j in range(len(sewn)):
        if sewn.closed[j] and polygon.contains(shapely.Point(sewn.start[j, :2])):
            return j
    return None


def _sew(out: SeamEstimate, s: SeamSettings) -> None:
    """Seams on each piece: one seam along the whole sew line, or the plan's; thread; matches."""
    by_name: dict[tuple[str, str], PieceSeams] = {(p.name, p.size): p for p in out.pieces}
    tolerance = s.plan.tolerance_pct if s.plan else DEFAULT_TOLERANCE_PCT
    for piece in out.pieces:
        if piece.error:
            out.warnings.append(f"{piece.name}{f' ({piece.size})' if piece.size else ''}: {piece.error}; not sewn")
            continue
        if piece.loops > 1:
            out.warnings.append(f"{piece.name}{f' ({piece.size})' if piece.size else ''}: the allowance splits the "
                                f"sew line into {piece.loops} loops (the piece is narrower than twice the allowance "
                                "somewhere); all are counted")
        planned = [x for x in s.plan.seams if x.piece == piece.name] if s.plan else [
            PlannedSeam(piece.name, None, s.stitch, s.stitches_per_mm, 1)]
        for seam in planned:
            edges = seam.edges or tuple(range(1, len(piece.edges) + 1))
            _check_edges(piece, edges)
            length = sum(piece.edges[e - 1] for e in edges) * seam.rows
            piece.seams.append(_thread(seam, length, s))
            if seam.to:
                others = []
                for name, number in seam.to:
                    other = by_name.get((name, piece.size))
                    if other is None or other.error:
                        raise InputError(f"plan: {name}:{number} is not an edge of a sewn piece of this file"
                                         f"{f' in size {piece.size}' if piece.size else ''}")
                    _check_edges(other, (number,))
                    others.append(other.edges[number - 1])
                a, b = sum(piece.edges[e - 1] for e in edges), sum(others)
                ease = (a - b) / b * 100.0 if b > 0 else math.inf
                size = f" ({piece.size})" if piece.size else ""
                mine = f"{piece.name}:{'+'.join(map(str, edges))}{size}"
                theirs = " + ".join(f"{n}:{e}" for n, e in seam.to) + size
                out.matches.append(Match(mine, theirs, a - b, ease, abs(ease) <= tolerance))
    if s.plan:
        names = {p.name for p in out.pieces}
        unknown = sorted({x.piece for x in s.plan.seams} - names)
        if unknown:
            out.warnings.append(f"the plan names pieces not in this file: {', '.join(repr(n) for n in unknown)}")
    for m in out.matches:
        if not m.ok:
            out.warnings.append(f"{m.a} and {m.b} differ by {m.difference_mm:.1f} mm ({m.ease_pct:+.1f} % ease)")


def _check_edges(piece: PieceSeams, edges: tuple[int, ...]) -> None:
    missing = [e for e in edges if e > len(piece.edges)]
    if missing:
        raise InputError(f"piece {piece.name!r} has {len(piece.edges)} edges; the plan names edge {missing[0]}")


def _thread(seam: PlannedSeam, length: float, s: SeamSettings) -> Seam:
    """Thread for ``length`` mm of a planned seam: per position, from the seam's S, T, W (or the defaults)."""
    kind = stitch(seam.stitch)
    ss = settings_for(kind, seam.stitches_per_mm or s.stitches_per_mm, seam.thickness_mm or s.thickness_mm,
                      seam.width_mm or s.width_mm)
    waste = 1 + s.waste_pct / 100
    uses = [ThreadUse(p.name, p.threads, r, length * r * waste) for p, r in position_ratios(kind, ss)]
    ratio = sum(u.threads * u.ratio for u in uses)
    return Seam(kind.number, length, ratio, s.waste_pct, length * ratio * waste, ss.spc, ss.thickness_mm,
                ss.width_mm, kind.formula, uses)


def cautions() -> list[str]:
    return [
        "Sewing machines: keep fingers clear of the needle and guards in place; switch off before threading "
        "or changing needles.",
        "These are estimates, not instructions: check thread consumption against your thread maker's figures "
        "and a sample seam.",
    ]


def cones_for(thread_mm: float, cone_mm: float) -> int:
    """Whole cones for ``thread_mm`` of one thread (a cone holding ``cone_mm``)."""
    return max(0, math.ceil(thread_mm / cone_mm - 1e-12)) if thread_mm > 0 else 0


@dataclass
class PositionTotal:
    """One thread position of one stitch type over an order: every thread of it runs from its own cone."""

    stitch: int
    position: str
    threads: int
    thread_mm: float  # per thread, waste included

    def cones(self, cone_mm: float) -> int:
        return self.threads * cones_for(self.thread_mm, cone_mm)


def position_totals(results: list[SeamEstimate]) -> list[PositionTotal]:
    """Thread per position over the order (garments x piece quantities), stitch types in order."""
    totals: dict[tuple[int, str], PositionTotal] = {}
    for r in results:
        if not r.ok:
            continue
        for p in r.pieces:
            for seam in p.seams:
                for u in seam.positions:
                    t = totals.setdefault((seam.stitch, u.position), PositionTotal(seam.stitch, u.position,
                                                                                  u.threads, 0.0))
                    t.threads = max(t.threads, u.threads)
                    t.thread_mm += u.thread_mm * p.quantity * r.quantity
    return [totals[k] for k in sorted(totals, key=lambda k: (k[0], list(totals).index(k)))]

