"""Vectorised adaptive Gauss–Kronrod (G7/K15) integration of curve speed.

All curves of a batch are integrated at once: every pass evaluates the
15-point Kronrod rule on all open intervals, accepts those whose error
estimate ``|K15 - G7|`` meets the curve's share of the tolerance and bisects
only the rest.  Curves are first split where their speed has a local minimum
(near-cusps), so that no kink hides between the outer nodes and an interval
end, where the two rules would agree on a wrong value.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Protocol

import numpy as np

from pathlen.geometry import FloatArray, IntArray

EPS = np.finfo(float).eps

# Kronrod nodes on [-1, 1] (positive half, descending) and weights; the Gauss
# 7-point rule uses every second node.  Values as tabulated in QUADPACK's qk15.
_XK = np.array([
    0.991455371120812639206854697526329, 0.949107912342758524526189684047851,
    0.864864423359769072789712788640926, 0.741531185599394439863864773280788,
    0.586087235467691130294144845693013, 0.405845151377397166906606412076961,
    0.207784955007898467600689403773245, 0.0,
])
_WK = np.array([
    0.022935322010529224963732008058970, 0.063092092629978553290700663189204,
    0.104790010322250183839876322541518, 0.140653259715525918745189590510238,
    0.169004726639267902826583426598550, 0.190350578064785409913256402421014,
    0.204432940075298892414161999234649, 0.209482141084727828012999174891714,
])
_WG = np.array([
    0.129484966168869693270611432679082, 0.279705391489276667901467771423780,
    0.381830050505118944950369775488975, 0.417959183673469387755102040816327,
])
NODES = np.concatenate([-_XK[:-1], _XK[::-1]])  # 15 nodes ascending
KRONROD_WEIGHTS = np.concatenate([_WK[:-1], _WK[::-1]])
GAUSS_WEIGHTS = np.zeros(15)
GAUSS_WEIGHTS[[1, 3, 5]] = _WG[:3]
GAUSS_WEIGHTS[[13, 11, 9]] = _WG[:3]
GAUSS_WEIGHTS[7] = _WG[3]
_DIFF_WEIGHTS = KRONROD_WEIGHTS - GAUSS_WEIGHTS

#: Rows of intervals evaluated per numpy pass; keeps temporaries below the
#: allocator's mmap threshold (see shared/REFERENCES.md, numerics).
BLOCK = 1024
MAX_DEPTH = 60
#: Most intervals one curve may be cut into.  A curve that needs more (its speed evaluated with
#: too much rounding noise for the tolerance, say) stops there with its honest error estimate in
#: the bound and is counted as unconverged: work and memory stay bounded.
MAX_INTERVALS_PER_CURVE = 4096
#: Kinks narrower than this (in the unit parameter) are graded towards.  A
#: self-check of 200,000 random and near-degenerate cubics (rtol 1e-9 against
#: 1e-14) found bounds exceeded at 0.02 and none at 0.25.
SHARP = 0.25


class Speed(Protocol):
    """``speed(rows, t)``: |C'(t)| of curve ``rows[i]`` at each ``t[i, :]``."""

    def __call__(self, rows: IntArray, t: FloatArray) -> FloatArray: ...


@dataclass
class Integral:
    """Per-curve integral, absolute error bound and pass statistics."""

    value: FloatArray
    bound: FloatArray
    evaluations: int
    unconverged: int


def integrate_speed(speed: Speed, n: int, rows: IntArray, lo: FloatArray, hi: FloatArray,
                    floor: FloatArray, rtol: float, atol: float = 0.0) -> Integral:
    """Integrate ``speed`` over the intervals ``[lo, hi]`` of curves ``rows``.

    Parameters
    ----------
    speed : the integrand, vectorised over rows and nodes.
    n : number of curves; results have length ``n``.
    rows, lo, hi : initial intervals (several per curve allowed, no overlap).
    floor : a lower bound of each curve's integral (e.g. its chord), used
        with the first-pass estimate to set the tolerance.
    rtol, atol : the target is ``bound <= max(rtol·length, atol)`` per curve.
    """
    value = np.zeros(n)
    bound = np.zeros(n)
    span = np.bincount(rows, weights=hi - lo, minlength=n)
    evaluations = 0
    unconverged = 0
    depth = np.zeros(len(rows), dtype=np.int64)
    density: FloatArray | None = None
    while len(rows):
        k_val, g_err, round_err = _kronrod(speed, rows, lo, hi)
        evaluations += 15 * len(rows)
        if density is None:
            estimate = np.maximum(np.bincount(rows, weights=k_val, minlength=n), floor)
            with np.errstate(divide="ignore", invalid="ignore"):
                density = np.where(span > 0, np.maximum(rtol * estimate, atol) / span, 0.0)
        width = hi - lo
        ok = g_err <= density[rows] * width
        live = np.bincount(rows[~ok], minlength=n)  # intervals each curve would still split
        spent = live[rows] > MAX_INTERVALS_PER_CURVE // 2
        stuck = ~ok & ((depth >= MAX_DEPTH) | (lo + 0.5 * width <= lo) | (lo + 0.5 * width >= hi) | spent)
        unconverged += int(np.count_nonzero(stuck))
        done = ok | stuck
        np.add.at(value, rows[done], k_val[done])
        np.add.at(bound, rows[done], g_err[done] + round_err[done])
        keep = ~done
        rows, lo, hi, depth = rows[keep], lo[keep], hi[keep], depth[keep]
        mid = 0.5 * (lo + hi)
        rows = np.concatenate([rows, rows])
        lo, hi = np.concatenate([lo, mid]), np.concatenate([mid, hi])
        depth = np.concatenate([depth, depth]) + 1
    return Integral(value, bound, evaluations, unconverged)


def _kronrod(speed: Speed, rows: IntArray, lo: FloatArray, hi: FloatArray
             ) -> tuple[FloatArray, FloatArray, FloatArray]:
    """K15 value, |K15 - G7| and a rounding bound for each interval."""
    m = len(rows)
    k_val = np.empty(m)
    g_err = np.empty(m)
    for s in range(0, m, BLOCK):
        sl = slice(s, s + BLOCK)
        half = 0.5 * (hi[sl] - lo[sl])
        t = (0.5 * (hi[sl] + lo[sl]))[:, None] + half[:, None] * NODES
        f = speed(rows[sl], t)
        k_val[sl] = half * (f @ KRONROD_WEIGHTS)
        g_err[sl] = half * np.abs(f @ _DIFF_WEIGHTS)
    return k_val, g_err, 32 * EPS * np.abs(k_val)


def golden_minima(speed: Speed, n: int, samples: int = 33) -> tuple[IntArray, FloatArray]:
    """Local minima of ``speed`` on (0, 1) for curves ``0..n-1``, by sampling.

    Each interior sample lower than both neighbours is refined by golden-section
    search in its bracket.  Used for curves without a closed-form minimum
    finder (rational and high-degree pieces).
    """
    rows_all = np.arange(n)
    grid = np.linspace(0.0, 1.0, samples)
    f = np.concatenate([speed(rows_all[s:s + BLOCK], np.broadcast_to(grid, (min(BLOCK, n - s), samples)))
                        for s in range(0, n, BLOCK)]) if n else np.zeros((0, samples))
    is_min = (f[:, 1:-1] < f[:, :-2]) & (f[:, 1:-1] <= f[:, 2:])
    r, k = np.nonzero(is_min)
    a = grid[k]
    b = grid[k + 2]
    g = (np.sqrt(5.0) - 1.0) / 2.0
    for _ in range(60):
        x1 = b - g * (b - a)
        x2 = a + g * (b - a)
        f1 = speed(r, x1[:, None])[:, 0]
        f2 = speed(r, x2[:, None])[:, 0]
        left = f1 < f2
        b = np.where(left, x2, b)
        a = np.where(left, a, x1)
    return r.astype(np.int64), 0.5 * (a + b)


def split_intervals(n: int, split_rows: IntArray, split_t: FloatArray,
                    t_start: FloatArray | None = None, t_end: FloatArray | None = None
                    ) -> tuple[IntArray, FloatArray, FloatArray]:
    """Intervals of each curve's range cut at the given interior points.

    Curves ``0..n-1`` span ``[t_start, t_end]`` (default [0, 1]); points outside
    a curve's open range are ignored.  Returns ``rows, lo, hi`` sorted by row.
    """
    if n == 0:
        return np.zeros(0, dtype=np.int64), np.zeros(0), np.zeros(0)
    t_start = np.zeros(n) if t_start is None else t_start
    t_end = np.ones(n) if t_end is None else t_end
    inside = (split_t > t_start[split_rows]) & (split_t < t_end[split_rows])
    sr, st = split_rows[inside], split_t[inside]
    order = np.argsort(st)  # by t, then stably by row: the same as lexsort((st, sr)), faster here
    order = order[np.argsort(sr[order], kind="stable")]
    sr, st = sr[order], st[order]
    count = np.bincount(sr, minlength=n)
    pieces = count + 1
    rows = np.repeat(np.arange(n, dtype=np.int64), pieces)
    lo = np.repeat(t_start, pieces)
    hi = np.repeat(t_end, pieces)
    # the j-th cut of a row ends that row's j-th piece and starts its next
    at = (np.cumsum(pieces) - pieces)[sr] + np.arange(len(sr)) - (np.cumsum(count) - count)[sr]
    hi[at] = st
    lo[at + 1] = st
    nonempty = hi > lo
    return rows[nonempty], lo[nonempty], hi[nonempty]


def graded_splits(speed: Speed, rows: IntArray, t_star: FloatArray, rtol: float,
                  scale: FloatArray, ratio: float = 4.0) -> tuple[IntArray, FloatArray, FloatArray]:
    """Split points graded geometrically towards near-cusps.

    Near a speed minimum ``t*`` the speed behaves like ``sqrt(s² + c²x²)``: a
    kink of width ``w = s/c``.  Its deviation from ``c|x|`` integrates to about
    ``s²/c·(1 + ln(c/s))``; where that exceeds a small share of the tolerance
    (``rtol·scale[row]``), the points ``t* ± w·ratio^k`` (out to the unit
    interval) are added so that every interval sees the kink at a distance
    comparable to its own length, where Gauss–Kronrod estimates are reliable.
    Returns the original minima plus the graded points, and per curve the
    kink deviations left ungraded (four times the estimate), which the rule
    cannot see and which therefore go into the error bound.
    """
    n = len(scale)
    if len(rows) == 0:
        return rows, t_star, np.zeros(n)
    h = 1e-3
    s = speed(rows, t_star[:, None])[:, 0]
    probe = np.where(t_star + h <= 1.0, t_star + h, t_star - h)
    sh = speed(rows, probe[:, None])[:, 0]
    c = np.sqrt(np.maximum(sh * sh - s * s, 0.0)) / h
    with np.errstate(divide="ignore", invalid="ignore"):
        w = np.where(c > 0, s / c, 0.0)
        defect = np.where((s > 0) & (c > 0), s * w * (1.0 + np.log(np.maximum(c / s, 1.0))), 0.0)
    # a kink wider than SHARP is resolved by the 15 nodes of the intervals around it
    sharp = (w > 0) & (w < SHARP)
    need = sharp & (defect > 1e-3 * rtol * scale[rows])
    sharp &= ~need
    unseen = np.bincount(rows[sharp], weights=4.0 * defect[sharp], minlength=n)
    extra_r: list[IntArray] = [rows]
    extra_t: list[FloatArray] = [t_star]
    if np.any(need):
        r, t0, w0 = rows[need], t_star[need], w[need]
        k_max = int(np.ceil(np.log(0.5 / np.min(w0)) / np.log(ratio))) + 1
        for k in range(k_max):
            off = w0 * ratio**k
            live = off < 0.5
            for sign in (-1.0, 1.0):
                extra_r.append(r[live])
                extra_t.append(t0[live] + sign * off[live])
    return np.concatenate(extra_r), np.concatenate(extra_t), unseen
