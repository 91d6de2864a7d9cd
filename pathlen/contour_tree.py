"""Contours of a drawing with placements (blocks, ``<use>``), counted without writing out copies that
cannot touch anything.

Segment ends join only within the join tolerance (:func:`pathlen.contours.count_contours`), so a copy
whose box, grown by the tolerance, meets no other copy's box and none of the drawing's own segments
forms contours of its own: as many as its definition has, when the copy's map keeps distances (a
rotation, reflection or translation; a scaled copy could close or open a gap and is written out).
Each definition is counted once per way the placements label it (layers and flags come from the
parent's entity rows, as when copies are written out), and multiplied; the copies that may touch
are written out with the drawing's own segments and counted together.  A tree of 10^7 disjoint
copies is then a handful of small counts instead of 10^7 written-out copies.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from pathlen.contours import ContourCount, count_contours, count_ends, segment_ends
from pathlen.geometry import Drawing, Entity, FloatArray, IntArray, Placement, keep_entities
from pathlen.instances import TooManySegments, expand, instance_matrices, segment_total
from pathlen.segments import arc_boxes

#: Most copies of one drawing whose boxes are compared pair by pair; beyond, every copy is written out.
MAX_PAIRED_COPIES = 4096
#: How far a map's linear part may be from orthonormal and still count as keeping distances.
RIGID_TOLERANCE = 1e-9

Box = tuple[FloatArray, FloatArray]


@dataclass
class _Context:
    top: list[Entity]
    join_tol: float
    max_segments: int
    memo: dict[tuple[int, bytes], tuple[ContourCount, Box | None]] = field(default_factory=dict)


def count_placed(drawing: Drawing, join_tol: float, max_segments: int) -> ContourCount:
    """Closed and open contours of ``drawing`` with every copy, hidden entities left out (as
    :func:`count_contours` on the written-out drawing); raises
    :class:`~pathlen.instances.TooManySegments` when the copies that must be written out are too many."""
    if not drawing.placements:
        return count_ends(visible_ends(drawing, join_tol), drawing.entities, join_tol)
    ctx = _Context(drawing.entities, join_tol, max_segments)
    count, _ = _count(drawing, np.arange(len(drawing.entities), dtype=np.int64), ctx)
    return count


def visible_ends(drawing: Drawing, join_tol: float) -> list[np.ndarray]:
    """:func:`~pathlen.contours.segment_ends` of the drawing's own segments, hidden entities left out
    (placements are not looked at)."""
    shown = np.array([not e.hidden for e in drawing.entities], dtype=bool)
    return segment_ends(drawing if shown.all() else keep_entities(drawing, shown), join_tol)


def _count(d: Drawing, labels: IntArray, ctx: _Context) -> tuple[ContourCount, Box | None]:
    """Contours and box of ``d`` whose entity ``e`` stands for the top drawing's row ``labels[e]``."""
    key = (id(d), labels.tobytes())
    if key in ctx.memo:
        return ctx.memo[key]
    entities = [ctx.top[i] for i in labels.tolist()]
    shown = np.array([not e.hidden for e in entities], dtype=bool)
    own = keep_entities(Drawing(d.lines, d.arcs, d.beziers, entities), shown)
    own_box = _segments_box(own)
    children = [(p, *_count(p.definition, labels[p.entity], ctx)) for p in d.placements]
    children = [(p, child, child_box) for p, child, child_box in children if child_box is not None]  # else hidden
    alone = ContourCount(0, 0)
    if sum(p.copies() for p, _, _ in children) > MAX_PAIRED_COPIES:  # too many to pair: all written out
        touching = list(d.placements)
        boxes = [_mapped_union(child_box, instance_matrices(p)) for p, _, child_box in children]
    else:  # every copy's box once; a copy is free when rigid and its box meets no other and no own segment
        mats = [instance_matrices(p) for p, _, _ in children]
        mapped = [_mapped_boxes(child_box, m) for (_, _, child_box), m in zip(children, mats, strict=True)]
        lo = np.concatenate([b[0] for b in mapped]) if mapped else np.zeros((0, 3))
        hi = np.concatenate([b[1] for b in mapped]) if mapped else np.zeros((0, 3))
        free = np.concatenate([_rigid(m) for m in mats]) if mats else np.zeros(0, dtype=bool)
        free &= ~_may_touch(lo, hi, own_box, ctx.join_tol)
        touching, boxes, at = [], [(lo.min(axis=0), hi.max(axis=0))] if len(lo) else [], 0
        for (p, child, _), m in zip(children, mats, strict=True):
            mine = free[at:at + len(m)]
            at += len(m)
            n_free = int(np.count_nonzero(mine))
            alone = ContourCount(alone.closed + n_free * child.closed, alone.open + n_free * child.open)
            if n_free < len(m):
                touching.append(Placement(p.definition, m[~mine], p.entity))
    rest = Drawing(d.lines, d.arcs, d.beziers, entities, placements=touching)
    together = count_contours(keep_entities(_written_out(rest, ctx), shown), ctx.join_tol)
    result = (ContourCount(alone.closed + together.closed, alone.open + together.open), _union([own_box, *boxes]))
    ctx.memo[key] = result
    return result


def _written_out(rest: Drawing, ctx: _Context) -> Drawing:
    """``rest`` with its copies written out, or :class:`TooManySegments` naming how many that takes."""
    total = segment_total(rest)
    if total > ctx.max_segments:
        raise TooManySegments(f"counting contours needs the copies that may touch one another written out: "
                              f"{total:,} segments, over the limit of {ctx.max_segments:,} (--max-segments)")
    return expand(rest, ctx.max_segments)


def _may_touch(lo: FloatArray, hi: FloatArray, own_box: Box | None, grow: float) -> np.ndarray:
    """Which copies (boxes ``lo``, ``hi``, of every placement) may come within ``grow`` of another copy
    or of the own segments' box: their boxes grown by ``grow`` overlap."""
    hits = _overlaps(lo - grow, hi + grow, lo - grow, hi + grow)
    np.fill_diagonal(hits, False)
    meets = hits.any(axis=1)
    if own_box is not None:
        meets |= _overlaps(lo - grow, hi + grow, own_box[0][None] - grow, own_box[1][None] + grow)[:, 0]
    return meets


def _overlaps(a_lo: FloatArray, a_hi: FloatArray, b_lo: FloatArray, b_hi: FloatArray) -> np.ndarray:
    """``[len(a), len(b)]``: whether box a_i and box b_j overlap (closed boxes)."""
    return np.all((a_lo[:, None, :] <= b_hi[None, :, :]) & (b_lo[None, :, :] <= a_hi[:, None, :]), axis=2)


def _rigid(mats: FloatArray) -> np.ndarray:
    """Maps whose linear part keeps distances (orthonormal columns)."""
    linear = mats[:, :3, :3]
    gram = np.einsum("kji,kjl->kil", linear, linear)
    return np.all(np.abs(gram - np.eye(3)) <= RIGID_TOLERANCE, axis=(1, 2))


def _mapped_boxes(box: Box, mats: FloatArray) -> tuple[FloatArray, FloatArray]:
    """Axis-aligned boxes ``[k, 3]`` holding ``box`` under each map (its 8 corners mapped)."""
    lo, hi = box
    corners = np.array([[hi[0] if i & 1 else lo[0], hi[1] if i & 2 else lo[1], hi[2] if i & 4 else lo[2]]
                        for i in range(8)])
    pts = np.einsum("kij,cj->kci", mats[:, :3, :3], corners) + mats[:, None, :3, 3]
    return pts.min(axis=1), pts.max(axis=1)


def _union(boxes: list[Box | None]) -> Box | None:
    """The box holding every given box (None entries are empty)."""
    given = [b for b in boxes if b is not None]
    if not given:
        return None
    return np.min([b[0] for b in given], axis=0), np.max([b[1] for b in given], axis=0)


def _mapped_union(box: Box, mats: FloatArray, chunk: int = 65536) -> Box:
    """The box holding ``box`` under every map, in chunks of maps (bounded temporaries)."""
    parts = [_mapped_boxes(box, mats[k:k + chunk]) for k in range(0, len(mats), chunk)]
    return np.min([lo.min(axis=0) for lo, _ in parts], axis=0), np.max([hi.max(axis=0) for _, hi in parts], axis=0)


def _segments_box(d: Drawing) -> Box | None:
    """The box of a drawing's own segments (Béziers by their control points, which hold the curve
    for positive weights), None when it has none."""
    los, his = [], []
    if len(d.lines):
        los.append(np.minimum(d.lines.p0, d.lines.p1).min(axis=0))
        his.append(np.maximum(d.lines.p0, d.lines.p1).max(axis=0))
    if len(d.arcs):
        lo, hi = arc_boxes(d.arcs)
        los.append(lo.min(axis=0))
        his.append(hi.max(axis=0))
    for b in d.beziers.values():
        if len(b):
            los.append(b.ctrl.min(axis=(0, 1)))
            his.append(b.ctrl.max(axis=(0, 1)))
    if not los:
        return None
    return np.min(los, axis=0), np.max(his, axis=0)
