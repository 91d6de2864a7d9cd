"""Segment model: batches of lines, elliptic arcs and Bézier pieces in millimetres.

Conventions
-----------
* Every coordinate is in millimetres, 3-D (z = 0 for flat drawings).
* One batch per segment kind, structure of arrays; row ``i`` of every array
  describes segment ``i`` and ``entity[i]`` indexes the drawing's entity table.
* Affine maps are 4x4 matrices in column-vector convention: ``p' = M @ [p, 1]``.
"""

from __future__ import annotations

import itertools
from collections import Counter
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import NDArray

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.int64]


def take_rows(a: NDArray, index: NDArray) -> NDArray:
    """``a[index]`` for a 2-D or 3-D array and integer ``index``: ``np.take`` along axis 0, several times
    faster than fancy indexing of rows on the numpy builds measured here."""
    return np.take(a, index, axis=0)


def run_starts(s: NDArray) -> NDArray[np.bool_]:
    """Mask of the elements of 1-D ``s`` that differ from the one before them (the first always): where
    each run of equal values of a sorted array begins.  (``np.r_`` costs ~5 µs a call in index tricks.)"""
    new = np.empty(len(s), dtype=bool)
    new[:1] = True
    np.not_equal(s[1:], s[:-1], out=new[1:])
    return new


def distinct(a: NDArray, return_inverse: bool = False) -> Any:
    """The sorted distinct values of 1-D ``a`` (and, with ``return_inverse``, each element's index among
    them), as ``np.unique`` gives them, found by sorting: numpy 2.4's hash-based ``np.unique`` took about
    20 times longer on millions of integers on the machines measured here."""
    a = np.asarray(a).ravel()
    if not return_inverse:
        s = np.sort(a)
        return s[run_starts(s)]
    order = np.argsort(a, kind="stable")
    s = a[order]
    new = run_starts(s)
    inverse = np.empty(len(a), dtype=np.int64)
    inverse[order] = np.cumsum(new) - 1
    return s[new], inverse


def identity() -> FloatArray:
    """Return the 4x4 identity affine map."""
    return np.eye(4)


def affine(linear: NDArray[np.float64] | list[list[float]], offset: tuple[float, ...] = (0.0, 0.0, 0.0)) -> FloatArray:
    """Build a 4x4 affine map from a 2x2 or 3x3 linear part and an offset."""
    lin = np.asarray(linear, dtype=float)
    m = np.eye(4)
    k = lin.shape[0]
    m[:k, :k] = lin
    off = np.zeros(3)
    off[: len(offset)] = offset
    m[:3, 3] = off
    return m


def apply_points(m: FloatArray, p: FloatArray) -> FloatArray:
    """Apply affine map ``m`` to points ``p[..., 3]``."""
    return p @ m[:3, :3].T + m[:3, 3]


def apply_vectors(m: FloatArray, v: FloatArray) -> FloatArray:
    """Apply the linear part of ``m`` to direction vectors ``v[..., 3]``."""
    return v @ m[:3, :3].T


@dataclass(frozen=True)
class Lines:
    """Straight segments ``p0 -> p1``."""

    p0: FloatArray
    p1: FloatArray
    entity: IntArray

    def __len__(self) -> int:
        return len(self.entity)

    def transformed(self, m: FloatArray) -> Lines:
        return Lines(apply_points(m, self.p0), apply_points(m, self.p1), self.entity)


@dataclass(frozen=True)
class EllipticArcs:
    """Arcs ``c + u cos t + v sin t`` for ``t`` from ``t0`` to ``t1`` (radians).

    ``u`` and ``v`` are conjugate semi-diameters; a circle has ``|u| = |v|`` and
    ``u ⟂ v``.  The form is closed under affine maps.  ``t1 >= t0`` always;
    the direction of travel is carried by ``u``/``v``.
    """

    center: FloatArray
    u: FloatArray
    v: FloatArray
    t0: FloatArray
    t1: FloatArray
    entity: IntArray

    def __len__(self) -> int:
        return len(self.entity)

    def transformed(self, m: FloatArray) -> EllipticArcs:
        return EllipticArcs(
            apply_points(m, self.center), apply_vectors(m, self.u), apply_vectors(m, self.v),
            self.t0, self.t1, self.entity,
        )

    def points(self, t: FloatArray) -> FloatArray:
        """Points at parameters ``t[n]`` (one per arc)."""
        return self.center + self.u * np.cos(t)[:, None] + self.v * np.sin(t)[:, None]


@dataclass(frozen=True)
class Beziers:
    """(Rational) Bézier pieces of one degree on ``t`` in [0, 1].

    ``ctrl[n, d+1, 3]`` are control points, ``weights[n, d+1]`` their weights
    (all 1 for polynomial pieces).
    """

    ctrl: FloatArray
    weights: FloatArray
    entity: IntArray

    @property
    def degree(self) -> int:
        return self.ctrl.shape[1] - 1

    def __len__(self) -> int:
        return len(self.entity)

    def transformed(self, m: FloatArray) -> Beziers:
        return Beziers(apply_points(m, self.ctrl), self.weights, self.entity)

    def rational_rows(self) -> NDArray[np.bool_]:
        """Rows whose weights are not all equal (truly rational)."""
        w = self.weights
        return np.any(w != w[:, :1], axis=1)


@dataclass(slots=True)
class Entity:
    """One source entity: where a segment came from."""

    layer: str
    handle: str
    kind: str
    #: stroke colour as ``#rrggbb`` ("none", "other"); "" where the format has none to report
    color: str = ""
    #: how many times the entity is drawn (instances of a block or ``<use>`` share one row); 0 for the
    #: further subpaths of an SVG path given rows of their own (counted with the path's first row)
    copies: int = 1
    #: on a layer the author switched off or froze: not measured unless asked for
    hidden: bool = False
    #: closed in the file (a closed polyline, an SVG rect, polygon or path whose subpaths all end in Z):
    #: its segments chain among themselves into closed contours, whatever touches them
    loop: bool = False
    #: inside a block reference on a frozen layer: hidden whatever its own layer (DXF: freezing an
    #: INSERT's layer hides the whole reference; switching it off hides only its layer-0 content)
    frozen: bool = False


@dataclass(frozen=True)
class Placement:
    """Copies of a definition drawing (a DXF block, an SVG ``<use>`` target) in a parent drawing.

    Copy ``k`` is ``definition`` under the 4x4 map ``matrices[k]``; with a ``grid`` (rows, columns,
    row step, column step: a DXF MINSERT) each of those is repeated at the translations
    ``i * row_step + j * column_step`` (mm, parent coordinates).  ``entity[e]`` is the parent's
    entity row that stands for every copy of the definition's entity ``e``.
    """

    definition: Drawing
    matrices: FloatArray
    entity: IntArray
    grid: tuple[int, int, FloatArray, FloatArray] | None = None

    def copies(self) -> int:
        """How many copies of the definition this placement draws (a Python int: never overflows)."""
        rows, cols = (self.grid[0], self.grid[1]) if self.grid is not None else (1, 1)
        return len(self.matrices) * rows * cols

    def transformed(self, m: FloatArray) -> Placement:
        grid = self.grid
        if grid is not None:
            grid = (grid[0], grid[1], apply_vectors(m, grid[2]), apply_vectors(m, grid[3]))
        return Placement(self.definition, m @ self.matrices, self.entity, grid)


@dataclass
class Drawing:
    """Everything an importer found in one file, in millimetres."""

    lines: Lines
    arcs: EllipticArcs
    beziers: dict[int, Beziers]
    entities: list[Entity]
    warnings: list[str] = field(default_factory=list)
    #: entity kinds found but not measured (TEXT, HATCH ...), with counts
    skipped: Counter[str] = field(default_factory=Counter)
    #: instances of other drawings (blocks, ``<use>`` targets), kept as a tree: see :mod:`pathlen.instances`
    placements: list[Placement] = field(default_factory=list)
    #: read only through structural recovery of a damaged file
    recovered: bool = False

    def segment_count(self) -> int:
        """Segments drawn explicitly here (not counting placements)."""
        return len(self.lines) + len(self.arcs) + sum(len(b) for b in self.beziers.values())

    def transformed(self, m: FloatArray) -> Drawing:
        """The same drawing under the affine map ``m`` (used for unit scaling); placements are
        composed with ``m``, their definitions shared."""
        return Drawing(
            self.lines.transformed(m), self.arcs.transformed(m),
            {d: b.transformed(m) for d, b in self.beziers.items()},
            self.entities, list(self.warnings), Counter(self.skipped),
            [p.transformed(m) for p in self.placements],
        )


@dataclass
class DrawingRuns:
    """A drawing without placements handed over a run of segments at a time, so that a big file is
    measured in bounded memory: each of ``runs`` is a :class:`Drawing` of some of its own segments
    (checked as :func:`pathlen.importers.checks.check_geometry` checks a drawing), all sharing
    ``entities``, which may grow as the runs come (entities added by a run are used by that run only).

    Once every run has been taken, ``warnings`` is complete and ``used`` marks the entities that gave
    at least one segment (an empty path gives none; the whole drawing read at once leaves those out)."""

    entities: list[Entity]
    runs: Iterator[Drawing]
    warnings: list[str] = field(default_factory=list)
    used: NDArray[np.bool_] | None = None
    recovered: bool = False


def keep_entities(drawing: Drawing, keep: NDArray[np.bool_]) -> Drawing:
    """The drawing's own segments whose entity row is kept (``keep[entity]``); placements dropped
    (expand first).  The entity table is unchanged."""
    lines, arcs = drawing.lines, drawing.arcs
    kl, ka = keep[lines.entity], keep[arcs.entity]
    return Drawing(
        Lines(lines.p0[kl], lines.p1[kl], lines.entity[kl]),
        EllipticArcs(arcs.center[ka], arcs.u[ka], arcs.v[ka], arcs.t0[ka], arcs.t1[ka], arcs.entity[ka]),
        {d: Beziers(b.ctrl[keep[b.entity]], b.weights[keep[b.entity]], b.entity[keep[b.entity]])
         for d, b in drawing.beziers.items()},
        drawing.entities, drawing.warnings, drawing.skipped, recovered=drawing.recovered,
    )


def keep_rows(drawing: Drawing, keep: NDArray[np.bool_]) -> Drawing:
    """The drawing's own segments where ``keep`` holds, ``keep`` given in segment-table row order
    (lines, arcs, Béziers by increasing degree); placements dropped (expand first), entities kept."""
    n_lines, n_arcs = len(drawing.lines), len(drawing.arcs)
    lines, arcs = drawing.lines, drawing.arcs
    kl, ka = keep[:n_lines], keep[n_lines:n_lines + n_arcs]
    first = n_lines + n_arcs
    beziers = {}
    for d in sorted(drawing.beziers):
        b = drawing.beziers[d]
        kb = keep[first:first + len(b)]
        first += len(b)
        if kb.any():
            beziers[d] = Beziers(b.ctrl[kb], b.weights[kb], b.entity[kb])
    return Drawing(
        Lines(lines.p0[kl], lines.p1[kl], lines.entity[kl]),
        EllipticArcs(arcs.center[ka], arcs.u[ka], arcs.v[ka], arcs.t0[ka], arcs.t1[ka], arcs.entity[ka]),
        beziers, drawing.entities, [], Counter(), recovered=drawing.recovered,
    )


class SegmentCollector:
    """Accumulates segments from an importer and freezes them into a :class:`Drawing`.

    Importers call the ``add_*`` methods with model coordinates in millimetres
    (plain tuples are fine: arrays are built once, at :meth:`drawing`);
    ``entity`` is the index returned by :meth:`entity`.  Whole sub-drawings
    (block contents, SVG ``use`` targets) are appended with :meth:`add_drawing`,
    transformed as arrays in one step.
    """

    def __init__(self, hidden_layers: frozenset[str] = frozenset(), frozen_layers: frozenset[str] = frozenset()
                 ) -> None:
        #: layers whose entities are marked hidden (final layer names, after a block's layer "0" is mapped)
        self.hidden_layers = hidden_layers
        #: frozen layers (a subset of the hidden ones): a block placed on one is hidden whole
        self.frozen_layers = frozen_layers
        self.entities: list[Entity] = []
        self.warnings: list[str] = []
        self.skipped: Counter[str] = Counter()
        self._lines: list[tuple] = []
        self._arcs: list[tuple] = []
        self._beziers: dict[int, list[tuple]] = {}
        #: placements grouped by key: (definition, matrices, layer_of, handle prefix, grid, colour, hidden whole)
        self._placed: dict[object, tuple[Drawing, list[FloatArray], Callable[[str], str], str, tuple | None,
                                         str | None, bool]] = {}

    def entity(self, layer: str, handle: str, kind: str) -> int:
        self.entities.append(Entity(layer, handle, kind, hidden=layer in self.hidden_layers))
        return len(self.entities) - 1

    def add_line(self, p0: Sequence[float], p1: Sequence[float], entity: int) -> None:
        self._lines.append((p0, p1, entity))

    def add_polyline(self, points: Sequence[Sequence[float]], entity: int) -> None:
        """Add straight segments between consecutive points."""
        for a, b in itertools.pairwise(points):
            self._lines.append((a, b, entity))

    def add_arc(self, center: Sequence[float], u: Sequence[float], v: Sequence[float],
                t0: float, t1: float, entity: int) -> None:
        """Add ``c + u cos t + v sin t`` for ``t0 <= t <= t1`` (radians)."""
        if not t1 >= t0:
            raise ValueError("arc parameter range must increase")
        self._arcs.append((center, u, v, t0, t1, entity))

    def add_bezier(self, ctrl: Sequence[Sequence[float]], weights: Sequence[float] | None, entity: int) -> None:
        """Add a (rational) Bézier piece; degree 1 becomes a line."""
        d = len(ctrl) - 1
        if d == 1 and (weights is None or weights[0] == weights[1]):
            self._lines.append((ctrl[0], ctrl[1], entity))
            return
        w = (1.0,) * (d + 1) if weights is None else tuple(weights)
        self._beziers.setdefault(d, []).append((ctrl, w, entity))

    def add_placement(self, sub: Drawing, m: FloatArray, key: object, layer_of: Callable[[str], str],
                      handle_prefix: str, grid: tuple[int, int, FloatArray, FloatArray] | None = None,
                      color: str | None = None, frozen: bool = False) -> None:
        """Place ``sub`` under the affine map ``m`` (4x4), without copying its segments.

        Placements with one ``key`` (the same definition and inherited layer, say) share entity
        rows: one per entity of ``sub``, with layer ``layer_of(layer)`` and handle ``handle_prefix +
        handle``.  ``grid`` repeats the copy on a grid (see :class:`Placement`); a key with a grid is
        never merged with another.  ``color`` replaces the copies' stroke colour (SVG markers report
        under the element they decorate).
        """
        if grid is not None:
            key = (key, len(self._placed))
        entry = self._placed.get(key)
        if entry is None:
            self._placed[key] = (sub, [m], layer_of, handle_prefix, grid, color, frozen)
            self.warn(*sub.warnings)
            self.skipped.update(sub.skipped)
        else:
            entry[1].append(m)

    def warn(self, *messages: str) -> None:
        """Record warnings once each, in order."""
        for msg in messages:
            if msg not in self.warnings:
                self.warnings.append(msg)

    def drawing(self) -> Drawing:
        placements = []
        for sub, matrices, layer_of, prefix, grid, color, frozen in self._placed.values():
            base = len(self.entities)
            p = Placement(sub, np.array(matrices, dtype=float).reshape(-1, 4, 4),
                          np.arange(base, base + len(sub.entities), dtype=np.int64), grid)
            n = p.copies()
            self.entities.extend(Entity(layer_of(e.layer), prefix + e.handle, e.kind,
                                        e.color if color is None else color, e.copies * n, loop=e.loop,
                                        frozen=frozen or e.frozen)
                                 for e in sub.entities)
            if self.hidden_layers:
                for e in self.entities[base:]:
                    e.hidden = e.frozen or e.layer in self.hidden_layers
            placements.append(p)
        return Drawing(
            lines=_lines_from(self._lines),
            arcs=_arcs_from(self._arcs),
            beziers={d: _beziers_from(rows, d) for d, rows in self._beziers.items()},
            entities=self.entities,
            warnings=self.warnings,
            skipped=self.skipped,
            placements=placements,
        )


def _ent(rows: list, k: int) -> IntArray:
    return np.fromiter((r[k] for r in rows), dtype=np.int64, count=len(rows))


def _vecs(rows: list, k: int) -> FloatArray:
    return np.array([r[k] for r in rows], dtype=float).reshape(len(rows), 3)


def _lines_from(rows: list) -> Lines:
    return Lines(_vecs(rows, 0), _vecs(rows, 1), _ent(rows, 2))


def _arcs_from(rows: list) -> EllipticArcs:
    t = np.array([(r[3], r[4]) for r in rows], dtype=float).reshape(len(rows), 2)
    return EllipticArcs(_vecs(rows, 0), _vecs(rows, 1), _vecs(rows, 2), t[:, 0], t[:, 1], _ent(rows, 5))


def _beziers_from(rows: list, d: int) -> Beziers:
    ctrl = np.array([r[0] for r in rows], dtype=float).reshape(len(rows), d + 1, 3)
    w = np.array([r[1] for r in rows], dtype=float).reshape(len(rows), d + 1)
    return Beziers(ctrl, w, _ent(rows, 2))


def empty_drawing() -> Drawing:
    """A drawing with no segments."""
    return SegmentCollector().drawing()
