"""Speed of (rational) Bézier pieces and their arc length by quadrature."""

from __future__ import annotations

import math

import numpy as np

from pathlen.geometry import Beziers, FloatArray, IntArray, take_rows
from pathlen.measure.closed_forms import EPS, quadratic_bezier_lengths
from pathlen.measure.planar_cubic import hodograph_coefficients, planar_cubic_lengths
from pathlen.measure.polynomial import horner, power_coefficients
from pathlen.measure.quadrature import Integral, golden_minima, graded_splits, integrate_speed, split_intervals


def _flat_dims(coeffs: FloatArray) -> int:
    """2 when every z coefficient is zero (a flat drawing), else 3."""
    return 2 if not np.any(coeffs[..., 2]) else 3


class PolynomialSpeed:
    """|B'(t)| of polynomial Béziers, from derivative power coefficients."""

    def __init__(self, ctrl: FloatArray) -> None:
        d = ctrl.shape[1] - 1
        deriv = d * np.diff(ctrl, axis=1)
        c = power_coefficients(deriv)
        self.dims = _flat_dims(c)
        # coefficients per dimension, contiguous: [dim][n, k]
        self.coeffs = [np.ascontiguousarray(c[:, :, i]) for i in range(self.dims)]
        self.magnitude = np.sum(np.abs(c), axis=(1, 2))

    def __call__(self, rows: IntArray, t: FloatArray) -> FloatArray:
        acc = None
        for c in self.coeffs:
            x = horner(take_rows(c, rows), t)
            acc = x * x if acc is None else acc + x * x
        return np.sqrt(acc)


class RationalSpeed:
    """|C'(t)| of rational Béziers ``C = N / W`` (homogeneous form).

    Control points are shifted by ``P0`` first (translation invariance);
    ``C' = (N' W - N W') / W²``.
    """

    def __init__(self, ctrl: FloatArray, weights: FloatArray) -> None:
        rel = ctrl - ctrl[:, :1]
        w = weights
        homog = np.concatenate([rel * w[:, :, None], w[:, :, None]], axis=2)
        c = power_coefficients(homog)
        self.dims = _flat_dims(c[:, :, :3])
        self.num = [np.ascontiguousarray(c[:, :, i]) for i in range(self.dims)]
        self.den = np.ascontiguousarray(c[:, :, 3])
        k = c.shape[1] - 1
        scale = np.arange(1, k + 1, dtype=float)
        self.num_d = [x[:, 1:] * scale for x in self.num]
        self.den_d = self.den[:, 1:] * scale
        self.magnitude = np.sum(np.abs(c[:, :, :3]), axis=(1, 2)) / np.min(w, axis=1)

    def __call__(self, rows: IntArray, t: FloatArray) -> FloatArray:
        w = horner(take_rows(self.den, rows), t)
        wd = horner(take_rows(self.den_d, rows), t)
        acc = None
        for c, cd in zip(self.num, self.num_d, strict=False):
            x = horner(take_rows(cd, rows), t) * w - horner(take_rows(c, rows), t) * wd
            acc = x * x if acc is None else acc + x * x
        return np.sqrt(acc) / (w * w)


#: From this degree on, speeds are evaluated in the Bernstein basis: the power basis loses about
#: ``2**degree`` in relative accuracy (its coefficients grow like binomials and cancel).
BERNSTEIN_DEGREE = 8


class BernsteinSpeed:
    """|C'(t)| of (rational) Béziers of high degree, evaluated in the Bernstein basis.

    ``C = N / W`` with ``N = Σ w_i (P_i − P_0) B_i``, ``W = Σ w_i B_i`` and their derivatives from
    control-point differences; every basis value is a positive product, so a sum errs by at most
    about ``(d + 2)`` units in the last place of ``Σ |coefficient| · B_i`` (no cancellation in the
    basis, unlike power coefficients).
    """

    def __init__(self, ctrl: FloatArray, weights: FloatArray) -> None:
        d = ctrl.shape[1] - 1
        self.degree = d
        rel = ctrl - ctrl[:, :1]
        self.dims = 2 if not np.any(rel[:, :, 2]) else 3
        w = weights
        self.num = (rel * w[:, :, None])[:, :, :self.dims]  # [n, d+1, dims]
        self.den = w
        self.num_d = d * np.diff(self.num, axis=1)  # [n, d, dims]
        self.den_d = d * np.diff(w, axis=1)
        self.rational = bool(np.any(w != w[:, :1]))
        wmax, wmin = np.max(w, axis=1), np.min(w, axis=1)
        size = np.max(np.linalg.norm(rel, axis=2), axis=1)
        self.magnitude = 4.0 * (d + 2) * d * size * (wmax / wmin) ** 2

    @staticmethod
    def _basis(k: int, t: FloatArray) -> FloatArray:
        """Bernstein basis of degree ``k`` at ``t[...]``: ``[..., k+1]``."""
        i = np.arange(k + 1)
        binom = np.array([math.comb(k, j) for j in range(k + 1)], dtype=float)
        tt = t[..., None]
        return binom * tt ** i * (1.0 - tt) ** (k - i)

    def __call__(self, rows: IntArray, t: FloatArray) -> FloatArray:
        d = self.degree
        lower = self._basis(d - 1, t)  # [m, q, d]
        nd = np.einsum("mqi,mic->mqc", lower, take_rows(self.num_d, rows))
        if not self.rational:
            return np.linalg.norm(nd, axis=2) / take_rows(self.den, rows)[:, :1]
        full = self._basis(d, t)
        n = np.einsum("mqi,mic->mqc", full, take_rows(self.num, rows))
        w = np.einsum("mqi,mi->mq", full, take_rows(self.den, rows))
        wd = np.einsum("mqi,mi->mq", lower, take_rows(self.den_d, rows))
        x = nd * w[:, :, None] - n * wd[:, :, None]
        return np.linalg.norm(x, axis=2) / (w * w)


def cubic_speed_minima(ctrl: FloatArray) -> tuple[IntArray, FloatArray]:
    """Interior local minima of |B'(t)| on (0, 1) for polynomial cubics.

    ``g = B'·B''`` is a cubic in ``t``; its sign changes from − to + are the
    minima.  The roots of ``g'`` (a quadratic, solved in closed form) cut
    (0, 1) into pieces where ``g`` is monotone, each holding at most one root,
    which bisection then finds to full precision.
    """
    c = power_coefficients(3 * np.diff(ctrl, axis=1))
    c0, c1, c2 = c[:, 0], c[:, 1], c[:, 2]

    def dot(a: FloatArray, b: FloatArray) -> FloatArray:
        return np.einsum("ij,ij->i", a, b)

    g = np.stack([dot(c0, c1), dot(c1, c1) + 2 * dot(c0, c2), 3 * dot(c1, c2), 2 * dot(c2, c2)], axis=1)
    n = len(ctrl)
    # roots of g'(t) = g1 + 2 g2 t + 3 g3 t²
    qa, qb, qc = 3 * g[:, 3], 2 * g[:, 2], g[:, 1]
    disc = qb * qb - 4 * qa * qc
    sq = np.sqrt(np.maximum(disc, 0.0))
    q = -0.5 * (qb + np.copysign(sq, qb))
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):  # huge roots are clipped to [0, 1]
        r1 = np.where(qa != 0, q / qa, np.where(qb != 0, -qc / qb, np.nan))
        r2 = np.where(q != 0, qc / q, np.nan)
    r1 = np.where(disc >= 0, r1, np.nan)
    r2 = np.where(disc >= 0, r2, np.nan)
    cuts = np.sort(np.stack([np.zeros(n), np.clip(np.nan_to_num(r1, nan=0.0), 0, 1),
                             np.clip(np.nan_to_num(r2, nan=0.0), 0, 1), np.ones(n)], axis=1), axis=1)
    rows = np.repeat(np.arange(n), 3)
    lo = cuts[:, :3].ravel()
    hi = cuts[:, 1:].ravel()
    gc = g[rows]
    glo = horner(gc, lo[:, None])[:, 0]
    ghi = horner(gc, hi[:, None])[:, 0]
    sel = (glo < 0) & (ghi > 0)
    rows, lo, hi, gc = rows[sel], lo[sel], hi[sel], gc[sel]
    return rows.astype(np.int64), _bracketed_root(gc, lo, hi)


def _bracketed_root(g: FloatArray, lo: FloatArray, hi: FloatArray) -> FloatArray:
    """The root of each cubic ``g[:, 0] + g[:, 1] t + g[:, 2] t² + g[:, 3] t³`` in ``[lo, hi]``, where
    it rises from negative to positive: Newton steps kept inside the shrinking bracket (bisection
    when a step would leave it) until the step reaches rounding level; the few that are slow after
    twelve steps (double roots) are bisected to full precision."""
    x = 0.5 * (lo + hi)
    lo, hi = lo.copy(), hi.copy()
    live = np.arange(len(x))
    dg = g[:, 1:] * np.arange(1, g.shape[1])  # coefficients of g'

    def value(c: FloatArray, t: FloatArray) -> FloatArray:
        return horner(c, t[:, None])[:, 0]

    for _ in range(12):
        if len(live) == 0:
            return x
        c, t, a, b = g[live], x[live], lo[live], hi[live]
        v = value(c, t)
        slope = value(dg[live], t)
        below = v < 0
        a = np.where(below, t, a)
        b = np.where(below, b, t)
        with np.errstate(divide="ignore", invalid="ignore"):
            newton = t - v / slope
        step = np.where((newton > a) & (newton < b), newton, 0.5 * (a + b))
        step = np.where(v == 0, t, step)
        lo[live], hi[live], x[live] = a, b, step
        live = live[np.abs(step - t) > 2 * EPS * np.abs(t)]
    c, a, b = g[live], lo[live], hi[live]
    for _ in range(64):  # plain bisection for the rest: the bracket halves every step
        mid = 0.5 * (a + b)
        below = value(c, mid) < 0
        a = np.where(below, mid, a)
        b = np.where(below, b, mid)
    x[live] = 0.5 * (a + b)
    return x


def bezier_lengths(batch: Beziers, rtol: float) -> tuple[FloatArray, FloatArray, int]:
    """Arc length of every piece in ``batch``, its error bound and the count
    of intervals that could not meet ``rtol`` (their error is still in the bound)."""
    n = len(batch)
    length = np.zeros(n)
    bound = np.zeros(n)
    if n == 0:
        return length, bound, 0
    rational = batch.rational_rows()
    poly = ~rational
    unconverged = 0
    if batch.degree == 2:
        idx = np.nonzero(poly)[0]
        length[idx], bound[idx] = quadratic_bezier_lengths(batch.ctrl[idx])
    else:
        idx = np.nonzero(poly)[0]
        if batch.degree == 3:
            idx = _planar_first(batch.ctrl, idx, rtol, length, bound)
        if len(idx):
            ctrl = batch.ctrl[idx]
            speed = BernsteinSpeed(ctrl, batch.weights[idx]) if batch.degree >= BERNSTEIN_DEGREE \
                else PolynomialSpeed(ctrl)
            if batch.degree == 3:
                mr, mt = cubic_speed_minima(ctrl)
            else:
                mr, mt = golden_minima(speed, len(idx))
            u = _integrate(speed, ctrl, mr, mt, rtol)
            length[idx], bound[idx] = u.value, u.bound + 16 * EPS * speed.magnitude
            unconverged += u.unconverged
    idx = np.nonzero(rational)[0]
    if len(idx):
        ctrl = batch.ctrl[idx]
        speed_r = BernsteinSpeed(ctrl, batch.weights[idx]) if batch.degree >= BERNSTEIN_DEGREE \
            else RationalSpeed(ctrl, batch.weights[idx])
        mr, mt = golden_minima(speed_r, len(idx))
        u = _integrate(speed_r, ctrl, mr, mt, rtol)
        length[idx], bound[idx] = u.value, u.bound + 16 * EPS * speed_r.magnitude
        unconverged += u.unconverged
    return length, bound, unconverged


def _planar_first(ctrl_all: FloatArray, idx: IntArray, rtol: float, length: FloatArray,
                  bound: FloatArray) -> IntArray:
    """Measure the flat cubics among rows ``idx`` with bounds proved in advance (into
    ``length`` and ``bound``); return the rows left for the adaptive integrator."""
    every = len(idx) == len(ctrl_all)
    z = np.abs((ctrl_all if every else ctrl_all[idx])[:, :, 2])
    flat = (z[:, 0] + z[:, 1] + z[:, 2] + z[:, 3]) == 0
    rows = idx[flat]
    if len(rows) == 0:
        return idx
    ctrl = ctrl_all if every and len(rows) == len(idx) else ctrl_all[rows]
    value, err, left = planar_cubic_lengths(hodograph_coefficients(ctrl), rtol)
    length[rows], bound[rows] = value, err
    return np.sort(np.concatenate([idx[~flat], rows[left]]))


def _integrate(speed: PolynomialSpeed | RationalSpeed | BernsteinSpeed, ctrl: FloatArray, mr: IntArray, mt: FloatArray,
               rtol: float) -> Integral:
    """Integrate over [0, 1], split at the speed minima and graded towards near-cusps, the
    end points included (a near-cusp at t = 0 or 1 is no interior minimum, yet hides from the
    rules just as well)."""
    n = len(ctrl)
    chord = np.linalg.norm(ctrl[:, -1] - ctrl[:, 0], axis=1)
    polygon = np.sum(np.linalg.norm(np.diff(ctrl, axis=1), axis=2), axis=1)
    every = np.arange(n, dtype=np.int64)
    mr = np.concatenate([mr, every, every])
    mt = np.concatenate([mt, np.zeros(n), np.ones(n)])
    gr, gt, unseen = graded_splits(speed, mr, mt, rtol, polygon)
    rows, lo, hi = split_intervals(n, gr, gt)
    result = integrate_speed(speed, n, rows, lo, hi, chord, rtol)
    result.bound += unseen
    return result
