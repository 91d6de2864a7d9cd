"""The instance tree of a drawing: placements of blocks and ``<use>`` targets, counted and expanded.

A :class:`~pathlen.geometry.Drawing` draws its own segments and places other drawings
(:class:`~pathlen.geometry.Placement`).  Lengths never need the copies written out (see
:func:`pathlen.measure.measure`); contours and cut order do, so :func:`expand` writes them out,
under a limit on the number of segments.
"""

from __future__ import annotations

from collections.abc import Iterator

import numpy as np

from pathlen.defaults import DEFAULT_MAX_SEGMENTS
from pathlen.errors import InputError
from pathlen.geometry import Beziers, Drawing, EllipticArcs, FloatArray, IntArray, Lines, Placement


class TooManySegments(InputError):
    """Expanding the instances would exceed the segment limit."""


def segment_total(drawing: Drawing, _memo: dict[int, int] | None = None) -> int:
    """Segments the drawing draws with every copy written out (exact, however many)."""
    memo = {} if _memo is None else _memo
    key = id(drawing)
    if key not in memo:
        memo[key] = drawing.segment_count() + sum(
            p.copies() * segment_total(p.definition, memo) for p in drawing.placements)
    return memo[key]


def definitions(drawing: Drawing) -> Iterator[Drawing]:
    """The drawing and every drawing it places, directly or not, each once."""
    seen: set[int] = set()
    stack = [drawing]
    while stack:
        d = stack.pop()
        if id(d) in seen:
            continue
        seen.add(id(d))
        yield d
        stack.extend(p.definition for p in d.placements)


def is_planar(drawing: Drawing, _memo: dict[int, bool] | None = None) -> bool:
    """Whether every segment, copies included, lies in a plane z = constant of this drawing's
    coordinates: then only the first two columns of a linear map change its lengths."""
    memo = {} if _memo is None else _memo
    key = id(drawing)
    if key in memo:
        return memo[key]
    flat = (np.array_equal(drawing.lines.p0[:, 2], drawing.lines.p1[:, 2])
            and not np.any(drawing.arcs.u[:, 2]) and not np.any(drawing.arcs.v[:, 2])
            and all(np.all(b.ctrl[:, :, 2] == b.ctrl[:, :1, 2]) for b in drawing.beziers.values()))
    memo[key] = flat and all(not np.any(p.matrices[:, 2, :2]) and is_planar(p.definition, memo)
                             for p in drawing.placements)
    return memo[key]


def instance_matrices(p: Placement) -> FloatArray:
    """Every copy's 4x4 map, ``[copies, 4, 4]`` (grids written out, row by row)."""
    if p.grid is None:
        return p.matrices
    rows, cols, row_step, col_step = p.grid
    i, j = np.divmod(np.arange(rows * cols), cols)
    shift = i[:, None] * row_step + j[:, None] * col_step  # [rows*cols, 3]
    out = np.repeat(p.matrices[:, None], rows * cols, axis=1)  # [k, rows*cols, 4, 4]
    out[:, :, :3, 3] += shift[None]
    return out.reshape(-1, 4, 4)


def expand(drawing: Drawing, max_segments: int = DEFAULT_MAX_SEGMENTS, what: str = "this command") -> Drawing:
    """The drawing with every copy written out as segments of its own (entity rows unchanged).

    Raises :class:`TooManySegments` naming the count when it would pass ``max_segments``.
    """
    if not drawing.placements:
        return drawing
    total = segment_total(drawing)
    if total > max_segments:
        raise TooManySegments(f"{what} needs every copy of the drawing's blocks or <use> elements written out: "
                              f"{total:,} segments, over the limit of {max_segments:,} (--max-segments)")
    return _expand(drawing, {})


def _expand(drawing: Drawing, memo: dict[int, Drawing]) -> Drawing:
    key = id(drawing)
    if key in memo:
        return memo[key]
    parts = [drawing]
    for p in drawing.placements:
        sub = _expand(p.definition, memo)
        parts.append(_copies(sub, instance_matrices(p), p.entity))
    flat = Drawing(
        Lines(*(np.concatenate([getattr(d.lines, f) for d in parts]) for f in ("p0", "p1", "entity"))),
        EllipticArcs(*(np.concatenate([getattr(d.arcs, f) for d in parts])
                       for f in ("center", "u", "v", "t0", "t1", "entity"))),
        {deg: Beziers(*(np.concatenate([getattr(d.beziers[deg], f) for d in parts if deg in d.beziers])
                        for f in ("ctrl", "weights", "entity")))
         for deg in sorted({deg for d in parts for deg in d.beziers})},
        drawing.entities, drawing.warnings, drawing.skipped,
    )
    memo[key] = flat
    return flat


def _copies(sub: Drawing, mats: FloatArray, entity_map: IntArray) -> Drawing:
    """``sub`` (no placements) under each of ``mats[k]``, entities renumbered by ``entity_map``."""
    lin = mats[:, :3, :3]
    off = mats[:, :3, 3]

    def pts(p: FloatArray) -> FloatArray:  # [n, ..., 3] -> [k * n, ..., 3]
        moved = np.einsum("kij,n...j->kn...i", lin, p)
        moved += off.reshape((len(mats),) + (1,) * (p.ndim - 1) + (3,))
        return moved.reshape((-1, *p.shape[1:]))

    def vecs(v: FloatArray) -> FloatArray:
        return np.einsum("kij,nj->kni", lin, v).reshape(-1, 3)

    def ents(e: IntArray) -> IntArray:
        return np.tile(entity_map[e], len(mats))

    def tile(a: FloatArray) -> FloatArray:
        return np.tile(a, (len(mats),) + (1,) * (a.ndim - 1))

    lines, arcs = sub.lines, sub.arcs
    return Drawing(
        Lines(pts(lines.p0), pts(lines.p1), ents(lines.entity)),
        EllipticArcs(pts(arcs.center), vecs(arcs.u), vecs(arcs.v), tile(arcs.t0), tile(arcs.t1), ents(arcs.entity)),
        {d: Beziers(pts(b.ctrl), tile(b.weights), ents(b.entity)) for d, b in sub.beziers.items()},
        [],
    )
