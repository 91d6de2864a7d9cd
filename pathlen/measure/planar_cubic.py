"""Flat cubic Béziers: Gauss–Legendre with a bound proved in advance.

Written as a complex number, the hodograph of a flat cubic is a quadratic,
``B'(t) = c0 + c1 t + c2 t²``, and factors: on the real line the speed is
``|B'(t)| = |c2|·|t − z_a|·|t − z_b|``, whose continuation
``|c2|·sqrt((t − z_a)(t − z̄_a)(t − z_b)(t − z̄_b))`` is analytic away from the
two roots and their conjugates.  On an interval ``[m − h, m + h]`` whose
Bernstein ellipse ``E_ρ`` (foci at the ends, semi-axis sum ``ρh``) holds none
of them, ``n``-point Gauss–Legendre errs by at most

    h · 64 M / (15 (1 − ρ⁻²) ρ^{2n}),   M = sup of |integrand| on E_ρ

(fungrim.org, topic "Gaussian quadrature"; the same as theorem 19.3 of
L. N. Trefethen, Approximation Theory and Approximation Practice, which counts
n + 1 nodes).  So the error is bounded before anything is evaluated: each piece gets
the fewest nodes in :data:`ORDERS` that meet its share of the tolerance, and
pieces that would need more are split.

A root ``x + iy`` near [0, 1] costs many nodes in ``t``; in ``s`` with
``t = x + y sinh s`` its factor becomes ``y cosh s``, entire, so pieces near it
are integrated in ``s`` (a "mapped" piece), where only the other root's
preimages limit the ellipse.  Mapped pieces integrate the factored speed
built from the computed roots; its distance from the true speed is bounded
by the computed backward error of the roots and added to the bound.  Roots
within a small share of the tolerance of the real axis (cusps) are taken as
real: ``|t − z|`` becomes ``±(t − x)``, analytic on either side of a cut at
``x``, and the difference goes into the bound.  Pieces without a usable root
near them are integrated in ``t`` with margins for the roots' rounding.
Curves whose roots are too ill-conditioned to place (near double roots) or
whose pieces do not settle are returned for the adaptive integrator.
"""

from __future__ import annotations

import os
from dataclasses import dataclass
from functools import cache

import numpy as np

from pathlen.geometry import FloatArray, IntArray, take_rows
from pathlen.measure.closed_forms import EPS
from pathlen.measure.polynomial import horner, power_coefficients
from pathlen.measure.quadrature import split_intervals

#: Gauss–Legendre orders tried, smallest first; intervals needing more are split.
ORDERS = np.array([2, 3, 4, 5, 6, 7, 8, 10, 12, 14, 16, 20, 24, 28, 32])


@cache
def _rule(order: int) -> tuple[FloatArray, FloatArray]:
    """Gauss-Legendre nodes and weights on [-1, 1] (computed on first use: numpy.polynomial costs start-up)."""
    from numpy.polynomial.legendre import leggauss

    return leggauss(order)


MAX_PASSES = 64
#: A curve with more unsettled pieces than this goes to the adaptive integrator.
MAX_OPEN_PIECES = 64
#: Of ``rtol · (lower bound of the length)``: the most the quadrature may take (it gets what the
#: fixed terms leave, but never less than the floor share), and what one cusp treated as real may cost.
QUADRATURE_SHARE = 0.9
QUADRATURE_FLOOR_SHARE = 0.25
KINK_SHARE = 0.1
#: Rounding, in ulps of Σ|c_j|: coefficients and Horner (a few), nodes t = x + y sinh s (|x| + |y cosh s|
#: ≤ 5 parameter units: an ulp or two of that times |B''| ≤ 2 Σ|c_j|); and in ulps of the length: the
#: exponentials of mapped pieces (arguments up to about 40 in size, relative error that many ulps,
#: squared in cosh²) and summation.
ROUNDING_ULPS_SCALE = 24
ROUNDING_ULPS_VALUE = 96
#: Roots farther than this from t = 1/2 are not used as centres of sinh maps.
MAP_REACH = 2.0
#: Ellipses are capped at this ρ: beyond it the bound no longer limits the order.
RHO_CAP = 1e3
#: Nodes evaluated per numpy pass (keeps temporaries small, see quadrature.BLOCK).
NODES_PER_BLOCK = 16384


@dataclass
class Hodograph:
    """Complex hodograph ``c0 + c1 t + c2 t²`` of each curve, its roots and their placement."""

    coeff: FloatArray  # [n, 3, 2] real power coefficients of B'(t) (x, y)
    lead: FloatArray  # |c2|
    q_abs: FloatArray  # |c2 · z_a| (finite even when c2 = 0)
    roots: np.ndarray  # [2, n] complex, root a then root b; inf where a root does not exist
    root_error: FloatArray  # [2, n] bound of each root's rounding error (parameter units)
    kink: np.ndarray  # [2, n] bool: treated as a real root (cusp), not a branch point
    kink_defect: FloatArray  # [n] error added for the factored speed: the roots' rounding and the cusps
    placeable: np.ndarray  # [n] bool: roots well enough conditioned for the a priori bound
    scale: FloatArray  # Σ |coefficients| (x and y)


def hodograph(coeff: FloatArray, tolerance: FloatArray) -> Hodograph:
    """Roots of each hodograph and their treatment, given ``coeff[n, 3, 2]`` (power basis)
    and the absolute tolerance of each curve (for deciding which roots count as cusps)."""
    c0, c1, c2 = (coeff[:, j, 0] + 1j * coeff[:, j, 1] for j in range(3))
    disc = c1 * c1 - 4 * c0 * c2
    s = np.sqrt(disc)
    s = np.where(c1.real * s.real + c1.imag * s.imag < 0, -s, s)  # |c1 + s| as large as can be
    q = -0.5 * (c1 + s)
    inf = complex(np.inf, 0.0)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        z_a = np.where(c2 != 0, q / np.where(c2 != 0, c2, 1), inf)
        z_b = np.where(q != 0, c0 / np.where(q != 0, q, 1), inf)
        roots = np.stack([z_a, z_b])
        size = np.abs(roots)
        # first-order perturbation of a simple root: the coefficients are off by a few ulps of
        # Σ|c_j| (forward differences, then the backward-stable formula), over |P'(z)| = |s|;
        # 32 ulps is a fourfold margin on that count
        flat = np.abs(coeff.reshape(len(coeff), 6))
        scale = flat[:, 0] + flat[:, 1] + flat[:, 2] + flat[:, 3] + flat[:, 4] + flat[:, 5]
        error = 32 * EPS * scale * (1 + size + size * size) / np.abs(s)
        error = np.where(np.isfinite(size), error, 0.0)
        lead = np.abs(c2)
        reach = 0.01 * np.abs(s) / lead  # a hundredth of the roots' separation
        placeable = ((error[0] <= reach) & (error[1] <= reach)  # false for NaN and inf too
                     & ~((q == 0) & (c2 != 0)) & np.isfinite(scale))
    q_abs = np.abs(q)
    # largest |B'(t)| / |t − z| on [0, 1] for each root: the other factor
    with np.errstate(invalid="ignore"):
        other = np.stack([np.where(lead > 0, lead * (1 + size[1]), 0.0), lead + q_abs])
        slack = 2 * np.abs(roots.imag) * other
        kink = np.isfinite(size) & (slack <= KINK_SHARE * tolerance)
        # Mapped pieces integrate |P̃(t)| = |c2 (t − z_a)(t − z_b)| built from the computed roots (a
        # cusp's made real): off the speed |P(t)| by at most |P − P̃| ≤ Σ_j |c_j − p_j| on [0, 1] (its
        # coefficients, from the roots, plus their rounding), and by |Im z|·max|other factor| per
        # cusp; twice (quadrature and integral).  c2·z_a is q (also when c2 = 0: P̃ = −q (t − z_b)).
        c2za = np.where(c2 != 0, c2 * z_a, q)
        zb = np.where(np.isfinite(z_b), z_b, 0.0)
        p1, p0 = -(c2za + c2 * zb), c2za * zb
        backward = np.abs(p1 - c1) + np.abs(p0 - c0) + 4 * EPS * (np.abs(p1) + np.abs(p0) + scale)
    kink_defect = 2 * backward + np.where(kink[0], slack[0], 0.0) + np.where(kink[1], slack[1], 0.0)
    return Hodograph(coeff, lead, q_abs, roots, error, kink, kink_defect, placeable, scale)


def _ellipse_rho(re: FloatArray | float, im: FloatArray | float, error: FloatArray, mid: FloatArray,
                 half: FloatArray) -> FloatArray:
    """ρ of the Bernstein ellipse of ``[mid − half, mid + half]`` through the point nearest
    the interval within ``error`` of ``re + i·im`` (1 when that point may lie on the interval)."""
    with np.errstate(invalid="ignore", over="ignore", divide="ignore"):
        u_re = (re - mid) / half
        u_im = im / half
        im2 = u_im * u_im
        semi = 0.5 * (np.sqrt((u_re - 1) ** 2 + im2) + np.sqrt((u_re + 1) ** 2 + im2)) - error / half
        rho = np.where(semi > 1, semi + np.sqrt(np.maximum(semi * semi - 1, 0.0)), 1.0)
    return np.where(np.isnan(rho), RHO_CAP, np.minimum(rho, RHO_CAP))


def _speed_bound(h: Hodograph, rows: IntArray, mid: FloatArray, semi_major: FloatArray) -> FloatArray:
    """Bound of |speed| on the disc of radius ``semi_major`` about ``mid`` (it holds the ellipse)."""
    za, zb = h.roots[0][rows], h.roots[1][rows]
    ea, eb = h.root_error[0][rows], h.root_error[1][rows]
    lead = h.lead[rows]
    with np.errstate(invalid="ignore", over="ignore"):
        near_a = lead * (semi_major + np.abs(mid - za) + ea)
        far_a = lead * (semi_major + np.abs(mid)) + h.q_abs[rows] * (1 + 1e-12)
        factor_a = np.fmin(near_a, far_a)
        factor_b = np.where(np.isfinite(zb), semi_major + np.abs(mid - zb) + eb, 1.0)
    return factor_a * factor_b


@dataclass
class _Pieces:
    """Intervals ``[lo, hi]`` of curve ``rows``; ``kind`` indexes the sinh map they are
    integrated in (``lo, hi`` in ``s``), or is −1 for plain Gauss–Legendre (in ``t``)."""

    rows: IntArray
    lo: FloatArray
    hi: FloatArray
    kind: IntArray

    def __len__(self) -> int:
        return len(self.rows)

    def take(self, sel: np.ndarray) -> _Pieces:
        return _Pieces(self.rows[sel], self.lo[sel], self.hi[sel], self.kind[sel])

    def split(self, at: FloatArray) -> _Pieces:
        """Both halves of every piece, cut at ``at``."""
        return _Pieces(np.concatenate([self.rows, self.rows]), np.concatenate([self.lo, at]),
                       np.concatenate([at, self.hi]), np.concatenate([self.kind, self.kind]))


@dataclass
class _Accepted:
    """Accepted pieces ``[a, b]`` with their Gauss order and bound; ``kind`` as in :class:`_Pieces`."""

    rows: IntArray
    a: FloatArray
    b: FloatArray
    kind: IntArray
    order: IntArray
    bound: FloatArray


def _best_order(ratio: FloatArray, rho: FloatArray) -> FloatArray:
    """Smallest ``n`` with ``ρ^{2n} ≥ ratio`` (inf where none)."""
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        need = np.ceil(np.log(np.maximum(ratio, 1.0)) / (2 * np.log(rho)))
    return np.where(np.isfinite(need) & (rho > 1), need, np.inf)


def _round_up(need: FloatArray) -> tuple[np.ndarray, IntArray]:
    """Whether an order in :data:`ORDERS` suffices, and that order."""
    pick = np.searchsorted(ORDERS, need)
    return pick < len(ORDERS), ORDERS[np.minimum(pick, len(ORDERS) - 1)]


def _gauss_bound(half: FloatArray, sup: FloatArray, rho: FloatArray, order: IntArray) -> FloatArray:
    """``half · 64 M / (15 (1 − ρ⁻²) ρ^{2n})``: the Gauss–Legendre error bound."""
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        return half * 64 * sup / (15 * (1 - rho**-2)) * np.exp(-2.0 * order * np.log(rho))


def _direct_pass(h: Hodograph, p: _Pieces, density: FloatArray) -> tuple[np.ndarray, _Accepted, FloatArray]:
    """Plain Gauss–Legendre in ``t``, for pieces with no root near enough to centre a map (roots all
    cusps, absent or far); the true speed is evaluated, so roots count with their rounding margins."""
    mid = 0.5 * (p.lo + p.hi)
    half = 0.5 * (p.hi - p.lo)
    rho = np.full(len(p), RHO_CAP)
    for k in range(2):
        z = h.roots[k][p.rows]
        near = _ellipse_rho(z.real, z.imag, h.root_error[k][p.rows], mid, half)
        np.minimum(rho, np.where(h.kink[k][p.rows], RHO_CAP, near), out=rho)
    sup = _speed_bound(h, p.rows, mid, 0.5 * half * (rho + 1 / rho))
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        ratio = 64 * sup / (15 * (1 - rho**-2) * 2 * density[p.rows])
    ok, order = _round_up(_best_order(ratio, rho))
    acc = _Accepted(p.rows, p.lo, p.hi, p.kind, order, _gauss_bound(half, sup, rho, order))
    return ok, acc, mid


@dataclass
class _SinhMaps:
    """Maps ``t = x + y sinh(s)``, each centred on one root ``x + iy`` of one curve.

    Mapped pieces integrate the factored speed ``|c2|·|t − z_c|·|t − z_o|`` with the computed
    roots (``z_o`` made real when it is a cusp), where ``|t − z_c| = y cosh s`` exactly:
    ``g(s) = y² cosh² s · (A |t − z_o| + B)`` with ``(A, B) = (|c2|, 0)``, or ``(0, |q|)`` when
    the hodograph is linear.  How far that is from the true speed is in the hodograph's defect.
    """

    x: FloatArray
    y: FloatArray
    other_re: FloatArray  # principal preimage asinh((z_o − x)/y) of a non-cusp other root (inf if none) …
    other_im: FloatArray  # … its imaginary part, made non-negative (the ellipses are symmetric)
    other_x: FloatArray  # the other root as the integrand uses it: x_o and y_o² (0 for a cusp)
    other_y2: FloatArray
    other_dist: FloatArray  # |x − z_o|: with y cosh R it bounds |t − z_o| on an ellipse
    a_coef: FloatArray  # A and B
    b_coef: FloatArray

    @classmethod
    def build(cls, h: Hodograph, row: IntArray, k: IntArray) -> _SinhMaps:
        """Maps centred on root ``k`` (0 or 1) of curve ``row``."""
        n = h.roots.shape[1]
        flat, flat_o = k * n + row, (1 - k) * n + row
        z = h.roots.ravel()[flat]
        zo, ko = h.roots.ravel()[flat_o], h.kink.ravel()[flat_o]
        x, y = z.real, np.abs(z.imag)
        finite_o = np.isfinite(zo)
        live_o = finite_o & ~ko
        xo = np.where(finite_o, zo.real, 0.0)
        yo = np.where(live_o, zo.imag, 0.0)
        with np.errstate(all="ignore"):
            so = np.arcsinh(np.where(live_o, (zo - x) / y, 0.0))
            dist = np.where(finite_o, np.sqrt((x - xo) ** 2 + yo * yo), 0.0)
        # root a goes with |c2|; without it (c2 = 0) the speed is |q|·|t − z_b|
        lead = h.lead[row]
        return cls(x, y, np.where(live_o, so.real, np.inf), np.where(live_o, np.abs(so.imag), 0.0), xo, yo * yo,
                   dist, np.where(finite_o, lead, 0.0), np.where(finite_o, 0.0, h.q_abs[row]))

    def to_s(self, m: IntArray, t: FloatArray) -> FloatArray:
        """``s`` of parameter ``t`` under map ``m``."""
        with np.errstate(all="ignore"):
            return np.arcsinh((t - self.x[m]) / self.y[m])


def _mapped_pass(maps: _SinhMaps, p: _Pieces, density: FloatArray) -> tuple[np.ndarray, _Accepted, FloatArray]:
    """Gauss–Legendre in ``s`` for ``t = x + y sinh(s)``, ``x + iy`` the centre root.

    The integrand ``g(s)`` (see :class:`_SinhMaps`) is singular only at the other root's
    preimages ``s_o = asinh((z_o − x)/y)``, ``iπ − s_o``, ``iπ − s̄_o`` and their conjugates
    within ``|Im s| < 3π/2``, where the ellipses stay.  On an ellipse with ``|Re s| ≤ R``:
    ``|sinh s|, |cosh s| ≤ cosh R``, so ``|g| ≤ y² cosh² R (A (|x − z_o| + y cosh R) + B)``.
    """
    k = p.kind
    y = maps.y[k]
    so_re, so_im = maps.other_re[k], maps.other_im[k]
    s_lo, s_hi = p.lo, p.hi
    with np.errstate(all="ignore"):
        sm = 0.5 * (s_lo + s_hi)
        hs = 0.5 * (s_hi - s_lo)
        t_width = 2 * y * np.cosh(sm) * np.sinh(hs)  # sinh(s_hi) − sinh(s_lo), times y
        # an ellipse's minor semi-axis is hs (ρ − 1/ρ) / 2; keep it below 3π/2 (less a hair)
        strip = (3 * np.pi - 1e-9) / hs
        rho = 0.5 * (strip + np.sqrt(strip * strip + 4))
        margin = np.where(np.isfinite(so_re), 64 * EPS * (1 + np.abs(so_re) + so_im), 0.0)  # rounding of asinh
        # s_o (with |Im s_o|: a conjugate pair gives the same ρ) …
        np.minimum(rho, _ellipse_rho(so_re, so_im, margin, sm, hs), out=rho)
        # … and iπ − s_o, iπ − s̄_o, which only an ellipse reaching |Im s| = π − |Im s_o| can meet
        reach = 2 * (np.pi - so_im - margin) / hs
        far = rho <= 0.5 * (reach + np.sqrt(reach * reach + 4))
    near = np.nonzero(~far)[0]
    if len(near):
        with np.errstate(all="ignore"):
            re_n, im_n, mg, m_n, h_n = -so_re[near], so_im[near], margin[near], sm[near], hs[near]
            rho[near] = np.minimum(rho[near], np.minimum(_ellipse_rho(re_n, np.pi - im_n, mg, m_n, h_n),
                                                         _ellipse_rho(re_n, np.pi + im_n, mg, m_n, h_n)))
    with np.errstate(all="ignore"):
        yc = y * np.cosh(np.abs(sm) + 0.5 * hs * (rho + 1 / rho))
        sup = yc * yc * (maps.a_coef[k] * (maps.other_dist[k] + yc) + maps.b_coef[k])
        ratio = 64 * sup * hs / (15 * (1 - rho**-2) * density[p.rows] * t_width)
    ok, order = _round_up(_best_order(ratio, rho))
    acc = _Accepted(p.rows, s_lo, s_hi, k, order, _gauss_bound(hs, sup, rho, order))
    return ok, acc, sm


def _initial_pieces(h: Hodograph, live: np.ndarray) -> tuple[_Pieces, _SinhMaps]:
    """[0, 1] of each live curve, cut at its cusps and between two nearby roots, each piece
    centred on the non-cusp root nearest to it (or on none), and the maps of those centres."""
    za, zb = h.roots
    branch_a = np.isfinite(za) & ~h.kink[0]
    branch_b = np.isfinite(zb) & ~h.kink[1]
    with np.errstate(invalid="ignore"):
        close = branch_a & branch_b & (np.maximum(np.abs(za.imag), np.abs(zb.imag)) < np.abs(za.real - zb.real))
    cuts = [np.where(h.kink[0], za.real, np.nan), np.where(h.kink[1], zb.real, np.nan),
            np.where(close, 0.5 * (za.real + zb.real), np.nan)]
    cut_rows = [np.nonzero(np.isfinite(c) & live)[0] for c in cuts]
    rows, lo, hi = split_intervals(len(live), np.concatenate(cut_rows),
                                   np.concatenate([c[r] for c, r in zip(cuts, cut_rows, strict=True)]))
    if not np.all(live):
        on = live[rows]
        rows, lo, hi = rows[on], lo[on], hi[on]
    # centre on the root nearest the piece (any choice is correct; the nearest pays best); only roots
    # near [0, 1] centre a map: far ones gain nothing and would cost rounding in t = x + y sinh s
    near = []
    for z, branch in ((za[rows], branch_a[rows]), (zb[rows], branch_b[rows])):
        with np.errstate(invalid="ignore"):
            off = np.maximum(np.maximum(lo - z.real, z.real - hi), 0.0)
            usable = branch & (np.abs(z - 0.5) <= MAP_REACH)
            near.append(np.where(usable, off * off + z.imag * z.imag, np.inf))
    centre = (near[1] < near[0]).astype(np.int64)
    mapped = np.nonzero(np.isfinite(np.minimum(near[0], near[1])))[0]
    kind = np.full(len(rows), -1, dtype=np.int64)
    kind[mapped] = np.arange(len(mapped))  # a map per piece (two pieces of a curve may share a centre)
    maps = _SinhMaps.build(h, rows[mapped], centre[mapped])
    lo[mapped] = maps.to_s(kind[mapped], lo[mapped])
    hi[mapped] = maps.to_s(kind[mapped], hi[mapped])
    return _Pieces(rows, lo, hi, kind), maps


def _plan(h: Hodograph, density: FloatArray, live: np.ndarray) -> tuple[list[_Accepted], _SinhMaps, IntArray]:
    """Pieces and Gauss orders meeting ``density`` (tolerance per unit parameter) for the
    ``live`` curves (mapped ones first), their maps, and the curves that did not settle."""
    pieces, maps = _initial_pieces(h, live)
    out: list[_Accepted] = []
    unsettled: list[IntArray] = []
    for _ in range(MAX_PASSES):
        if len(pieces) == 0:
            break
        mapped = pieces.kind >= 0
        ok = np.zeros(len(pieces), dtype=bool)
        at = np.empty(len(pieces))
        for sel in (mapped, ~mapped):
            if np.any(sel):
                part = pieces.take(sel)
                if sel is mapped:
                    good, acc, cut_at = _mapped_pass(maps, part, density)
                else:
                    good, acc, cut_at = _direct_pass(h, part, density)
                out.append(_take_accepted(acc, good))
                ok[sel] = good
                at[sel] = cut_at
        rest = pieces.take(~ok)
        at = at[~ok]
        stuck = ~((at > rest.lo) & (at < rest.hi))
        # a curve whose open pieces keep multiplying is not helped by splitting
        crowded = np.bincount(rest.rows, minlength=len(live)) > MAX_OPEN_PIECES
        stuck |= crowded[rest.rows]
        unsettled.append(rest.rows[stuck])
        pieces = rest.take(~stuck).split(at[~stuck])
    unsettled.append(pieces.rows)
    mapped_parts = [a for a in out if len(a.rows) and a.kind[0] >= 0]
    plain_parts = [a for a in out if len(a.rows) and a.kind[0] < 0]
    merged = [_Accepted(*(np.concatenate(f) for f in zip(*(vars(a).values() for a in parts), strict=True)))
              for parts in (mapped_parts, plain_parts) if parts]
    return merged, maps, np.unique(np.concatenate(unsettled)).astype(np.int64)


def _take_accepted(acc: _Accepted, sel: np.ndarray) -> _Accepted:
    return _Accepted(acc.rows[sel], acc.a[sel], acc.b[sel], acc.kind[sel], acc.order[sel], acc.bound[sel])


def _speed_sums(cx: FloatArray, cy: FloatArray, r: IntArray, t: FloatArray, weights: FloatArray) -> FloatArray:
    """``Σ_j weights[j] · |B'(t[i, j])|`` for curves ``r[i]`` (Horner on the power coefficients)."""
    vx = horner(take_rows(cx, r), t)
    vy = horner(take_rows(cy, r), t)
    vx *= vx
    vy *= vy
    vx += vy
    np.sqrt(vx, out=vx)
    return vx @ weights


def _mapped_sums(maps: _SinhMaps, k: IntArray, mid: FloatArray, half: FloatArray, nodes: FloatArray,
                 weights: FloatArray) -> FloatArray:
    """Gauss sums in ``s`` of ``g(s) = y² cosh² s · (A |t − z_o| + B)``, ``t = x + y sinh s``, over
    ``[mid ± half]`` for maps ``k``.  With ``E = (y/2) e^s`` and ``F = (y/2)² / E = (y/2) e^{−s}``:
    ``t − x = E − F`` and ``y cosh s = E + F``."""
    y_half = 0.5 * maps.y[k]
    big = np.exp((mid + np.log(y_half))[:, None] + half[:, None] * nodes)
    small = (y_half * y_half)[:, None] / big
    d = big - small
    d += (maps.x[k] - maps.other_x[k])[:, None]  # t − x_o
    d *= d
    d += maps.other_y2[k][:, None]
    np.sqrt(d, out=d)
    d *= maps.a_coef[k][:, None]
    d += maps.b_coef[k][:, None]
    big += small
    big *= big
    d *= big
    return d @ weights


def _gauss_sums(coeff: FloatArray, pieces: list[_Accepted], maps: _SinhMaps, n: int
                ) -> tuple[FloatArray, FloatArray]:
    """Per curve: the Gauss–Legendre sums over the accepted pieces, and their bounds."""
    if not pieces:
        return np.zeros(n), np.zeros(n)
    cx = np.ascontiguousarray(coeff[:, :, 0])
    cy = np.ascontiguousarray(coeff[:, :, 1])
    rows = np.concatenate([acc.rows for acc in pieces])
    bound = np.concatenate([acc.bound for acc in pieces])
    value = np.empty(len(rows))
    start = 0
    for acc in pieces:
        mapped = acc.kind[0] >= 0
        for k in np.unique(acc.order):
            nodes, weights = _rule(int(k))
            sel = np.nonzero(acc.order == k)[0]
            step = max(1, NODES_PER_BLOCK // int(k))
            for s in range(0, len(sel), step):
                part = sel[s:s + step]
                half = 0.5 * (acc.b[part] - acc.a[part])
                mid = 0.5 * (acc.b[part] + acc.a[part])
                if mapped:
                    value[start + part] = half * _mapped_sums(maps, acc.kind[part], mid, half, nodes, weights)
                else:  # plain pieces: the node is t
                    t = mid[:, None] + half[:, None] * nodes
                    value[start + part] = half * _speed_sums(cx, cy, acc.rows[part], t, weights)
        start += len(acc.rows)
    return (np.bincount(rows, weights=value, minlength=n).astype(float),
            np.bincount(rows, weights=bound, minlength=n).astype(float))


#: Chords B(k/4) − B((k−1)/4), k = 1…4, from the hodograph's power coefficients:
#: ``Σ_j c_j (t_k^{j+1} − t_{k−1}^{j+1}) / (j+1)``.
_QUARTER_CHORDS = np.diff(np.array([[t ** (j + 1) / (j + 1) for t in np.linspace(0.0, 1.0, 5)]
                                    for j in range(3)]), axis=1)


def hodograph_coefficients(ctrl: FloatArray) -> FloatArray:
    """Power coefficients ``[n, 3, 2]`` of ``B'(t)`` for cubics ``ctrl[n, 4, ≥2]`` (x, y only): those of
    the derivative's control points ``3 (P_{j+1} − P_j)``."""
    return power_coefficients(3 * np.diff(ctrl[:, :, :2], axis=1))


def length_floor(coeff: FloatArray) -> FloatArray:
    """A lower bound of each flat cubic's length from its hodograph coefficients ``coeff[n, 3, 2]``:
    the polygon through B(0), B(1/4), …, B(1) (a chord path inscribed in a curve is never longer)."""
    n = len(coeff)
    d = (coeff.transpose(0, 2, 1).reshape(2 * n, 3) @ _QUARTER_CHORDS).reshape(n, 2, 4)
    d *= d
    chords = np.sqrt(d[:, 0] + d[:, 1])
    return (chords[:, 0] + chords[:, 1] + chords[:, 2] + chords[:, 3]) * (1 - 1e-12)


def planar_cubic_lengths(coeff: FloatArray, rtol: float) -> tuple[FloatArray, FloatArray, IntArray]:
    """Length and error bound of flat cubics from their hodograph power coefficients
    ``coeff[n, 3, ≥2]`` (``B'(t) = Σ_j coeff[:, j] t^j``), and the rows left for the adaptive
    integrator.  The returned bound covers quadrature, cusps, summation and the rounding of
    the coefficients.

    Large batches are cut into :data:`THREADS` contiguous parts measured on as many threads
    (numpy releases the GIL inside its loops); the results do not depend on the split.
    """
    n = len(coeff)
    coeff = np.ascontiguousarray(coeff[:, :, :2])
    parts = min(THREADS, n // MIN_CURVES_PER_THREAD)
    if parts <= 1:
        return _lengths(coeff, rtol)
    from concurrent.futures import ThreadPoolExecutor  # here: its import (logging and all) costs every start 6 ms

    edges = np.linspace(0, n, parts + 1).astype(int)
    with ThreadPoolExecutor(max_workers=parts) as pool:
        done = list(pool.map(lambda a, b: _lengths(coeff[a:b], rtol), edges[:-1], edges[1:]))
    left = np.concatenate([rest + a for (_, _, rest), a in zip(done, edges[:-1], strict=True)])
    return np.concatenate([d[0] for d in done]), np.concatenate([d[1] for d in done]), left


def _lengths(coeff: FloatArray, rtol: float) -> tuple[FloatArray, FloatArray, IntArray]:
    n = len(coeff)
    floor = length_floor(coeff)
    target = rtol * floor
    h = hodograph(coeff, target)
    fixed = h.kink_defect + (ROUNDING_ULPS_SCALE + ROUNDING_ULPS_VALUE) * EPS * h.scale  # |B'| ≤ Σ|c_j|
    density = np.maximum(QUADRATURE_SHARE * target - fixed, QUADRATURE_FLOOR_SHARE * target)
    # a zero floor (a point, or a loop whose samples coincide) cannot set a tolerance
    live = h.placeable & (floor > 0)
    pieces, maps, unsettled = _plan(h, density, live)
    value, bound = _gauss_sums(h.coeff, pieces, maps, n)
    bound += h.kink_defect + ROUNDING_ULPS_VALUE * EPS * value + ROUNDING_ULPS_SCALE * EPS * h.scale
    left = np.union1d(np.nonzero(~live)[0], unsettled)
    return value, bound, left.astype(np.int64)


def _usable_cores() -> int:
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:  # not on every platform
        return os.cpu_count() or 1


#: Threads for large batches (at most 4); batch workers of a process pool set it to 1.
THREADS = min(4, _usable_cores())
#: Below this many curves per thread, threads cost more than they save.
MIN_CURVES_PER_THREAD = 8192
