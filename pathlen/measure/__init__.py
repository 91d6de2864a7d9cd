"""Measure a :class:`~pathlen.geometry.Drawing`: arc length and error bound per segment.

Placed copies (blocks, ``<use>``) are measured per definition, never written out: arc length
is unchanged by translations, scales by ``s`` under a similarity (``AᵀA = s²I``) and is measured
again only under a distinct linear part that is not one.  A map whose singular values differ by
``σmax − σmin`` (rounding, at most ``rtol/100`` of ``σmax``) counts as a similarity of scale
``(σmax + σmin)/2``; the length it can change, ``(σmax − σmin)/2 · L``, goes into the bound.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, fields, replace
from typing import TypeVar

import numpy as np

from pathlen.defaults import DEFAULT_RTOL
from pathlen.geometry import Beziers, Drawing, EllipticArcs, FloatArray, IntArray, Placement, affine
from pathlen.instances import is_planar
from pathlen.measure.bezier import bezier_lengths
from pathlen.measure.closed_forms import line_lengths
from pathlen.measure.ellipse import arc_lengths


@dataclass
class SegmentLengths:
    """Lengths (mm) and absolute error bounds (mm) of one batch, row-aligned with it."""

    length: FloatArray
    bound: FloatArray
    entity: IntArray


@dataclass
class Measurement:
    """Measured drawing: per-batch lengths and per-entity totals, millimetres."""

    lines: SegmentLengths
    arcs: SegmentLengths
    beziers: dict[int, SegmentLengths]
    entity_length: FloatArray
    entity_bound: FloatArray
    unconverged: int

    @property
    def length(self) -> float:
        return float(np.sum(self.entity_length))

    @property
    def error_bound(self) -> float:
        return float(np.sum(self.entity_bound))


def measure(drawing: Drawing, rtol: float = DEFAULT_RTOL, _cache: dict | None = None) -> Measurement:
    """Measure every segment of ``drawing`` to relative tolerance ``rtol``, placed copies included
    in the per-entity totals (``SegmentLengths`` cover the drawing's own segments only)."""
    if not 0 < rtol < 1:
        raise ValueError("rtol must lie between 0 and 1")
    cache: dict = {} if _cache is None else _cache
    lines = SegmentLengths(*line_lengths(drawing.lines.p0, drawing.lines.p1), drawing.lines.entity)
    a_len, a_bound, unconverged = _in_runs(drawing.arcs, arc_lengths, rtol)
    arcs = SegmentLengths(a_len, a_bound, drawing.arcs.entity)
    beziers = {}
    for degree, batch in drawing.beziers.items():
        b_len, b_bound, u = _in_runs(batch, bezier_lengths, rtol)
        beziers[degree] = SegmentLengths(b_len, b_bound, batch.entity)
        unconverged += u
    n = len(drawing.entities)
    length = np.zeros(n)
    bound = np.zeros(n)
    for part in (lines, arcs, *beziers.values()):
        length += np.bincount(part.entity, weights=part.length, minlength=n)
        bound += np.bincount(part.entity, weights=part.bound, minlength=n)
    for p in drawing.placements:
        p_len, p_bound, u = _placed(p, rtol, cache)
        np.add.at(length, p.entity, p_len)
        np.add.at(bound, p.entity, p_bound)
        unconverged += u
    return Measurement(lines, arcs, beziers, length, bound, unconverged)


#: Curves measured at a time: the integrators' temporaries (a few hundred bytes a curve) stay bounded
#: whatever the drawing's size.  Each curve is measured alone, so runs change no result.
MEASURE_RUN = 1 << 14

_Batch = TypeVar("_Batch", EllipticArcs, Beziers)


def _in_runs(batch: _Batch, lengths: Callable[[_Batch, float], tuple[FloatArray, FloatArray, int]], rtol: float
             ) -> tuple[FloatArray, FloatArray, int]:
    """``lengths(batch, rtol)`` (length, bound, unconverged), taken :data:`MEASURE_RUN` rows at a time."""
    n = len(batch)
    if n <= MEASURE_RUN:
        return lengths(batch, rtol)
    length, bound, unconverged = np.empty(n), np.empty(n), 0
    for a in range(0, n, MEASURE_RUN):
        run = slice(a, a + MEASURE_RUN)
        part = replace(batch, **{f.name: getattr(batch, f.name)[run] for f in fields(batch)})
        length[run], bound[run], u = lengths(part, rtol)
        unconverged += u
    return length, bound, unconverged


#: Largest relative spread of singular values still measured as a similarity (a share of ``rtol``).
SIMILARITY_SHARE = 1e-2
#: Rounding of a computed singular value, relative (a few units in the last place).
SVD_ROUNDING = 8 * np.finfo(float).eps


def _cached(drawing: Drawing, rtol: float, cache: dict) -> tuple[FloatArray, FloatArray, int]:
    """Per-entity lengths and bounds of ``drawing`` (kept alive in the cache, so its id stays unique)."""
    hit = cache.get(id(drawing))
    if hit is None:
        m = measure(drawing, rtol, cache)
        hit = cache[id(drawing)] = (drawing, m.entity_length, m.entity_bound, m.unconverged)
    return hit[1], hit[2], hit[3]


def _scaled_permutation(a: FloatArray) -> np.ndarray:
    """Per matrix ``a[k]`` (entries >= 0): one non-zero entry per row and column, all equal."""
    nonzero = a != 0.0
    one_each = np.all(nonzero.sum(axis=1) == 1, axis=1) & np.all(nonzero.sum(axis=2) == 1, axis=1)
    top = a.max(axis=(1, 2))
    return one_each & np.all((a == 0.0) | (a == top[:, None, None]), axis=(1, 2))


def _placed(p: Placement, rtol: float, cache: dict) -> tuple[FloatArray, FloatArray, int]:
    """Per-entity lengths and bounds of every copy a placement draws, summed (mm)."""
    planar = cache.setdefault("planar", {})
    lin = p.matrices[:, :3, :3]
    cols = lin[:, :, :2] if is_planar(p.definition, planar) else lin
    sv = np.linalg.svd(cols, compute_uv=False)
    top, low = sv[:, 0], sv[:, -1]
    # rotations by quarter turns, reflections and uniform scales (translations above all): exact scale
    k = cols.shape[2]
    signed = np.abs(cols[:, :k, :k])
    exact = np.all(cols[:, k:, :] == 0.0, axis=(1, 2)) & _scaled_permutation(signed)
    scale_exact = signed.max(axis=(1, 2))
    top, low = np.where(exact, scale_exact, top), np.where(exact, scale_exact, low)
    per_matrix = p.copies() // max(len(p.matrices), 1)
    similar = (top - low) <= SIMILARITY_SHARE * rtol * top
    n = len(p.definition.entities)
    length, bound, unconverged = np.zeros(n), np.zeros(n), 0
    if np.any(similar):
        base_len, base_bound, unconverged = _cached(p.definition, rtol, cache)
        scale = float(np.sum((top + low)[similar] / 2.0))
        spread = float(np.sum(np.where(exact, 0.0, (top - low) / 2.0 + SVD_ROUNDING * top)[similar]))
        length += base_len * scale
        bound += base_bound * scale + base_len * spread
    if not np.all(similar):
        distinct, count = np.unique(lin[~similar].reshape(-1, 9), axis=0, return_counts=True)
        for a, k in zip(distinct, count.tolist(), strict=True):
            key = ("linear", id(p.definition), a.tobytes())
            moved = cache.get(key)
            if moved is None:
                moved = cache[key] = p.definition.transformed(affine(a.reshape(3, 3)))
            m_len, m_bound, u = _cached(moved, rtol, cache)
            length += m_len * k
            bound += m_bound * k
            unconverged += u
    return length * per_matrix, bound * per_matrix, unconverged
