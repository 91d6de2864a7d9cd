"""Closed-form arc lengths: lines, elliptic arcs, quadratic Béziers.

Every function takes arrays (one row per segment) and returns ``(length,
bound)`` arrays where ``bound`` is a conservative bound on the absolute error
of ``length`` from floating-point rounding, in the input's length unit.
"""

from __future__ import annotations

import numpy as np

from pathlen.geometry import FloatArray
from pathlen.measure.elliptic import incomplete_integrals

EPS = np.finfo(float).eps


def line_lengths(p0: FloatArray, p1: FloatArray) -> tuple[FloatArray, FloatArray]:
    """Euclidean length of each segment ``p0[i] -> p1[i]``."""
    length = np.linalg.norm(p1 - p0, axis=1)
    return length, 4 * EPS * length


def ellipse_frame(u: FloatArray, v: FloatArray) -> tuple[FloatArray, FloatArray, FloatArray]:
    """Principal data of ``c + u cos t + v sin t`` without an SVD.

    The squared speed is ``A + R cos 2(t - tau)``; returns the semi-major axis
    ``a = sqrt(A + R)``, the parameter ``m = 1 - b²/a²`` of the elliptic
    integrals (``m = k²``, scipy's convention) and the phase ``tau`` at which
    the speed is largest (the parameter of a minor-axis vertex).
    """
    uu = np.einsum("ij,ij->i", u, u)
    vv = np.einsum("ij,ij->i", v, v)
    uv = np.einsum("ij,ij->i", u, v)
    half = 0.5 * (vv - uu)
    big_a = 0.5 * (uu + vv)
    r = np.hypot(half, uv)
    a2 = big_a + r
    # b² a² = |u x v|², computed from the cross product to avoid cancellation.
    cross2 = np.sum(np.cross(u, v) ** 2, axis=1)
    with np.errstate(invalid="ignore", divide="ignore"):
        b2 = np.where(a2 > 0, cross2 / a2, 0.0)
        m = np.where(a2 > 0, np.clip(1.0 - b2 / a2, 0.0, 1.0), 0.0)
    tau = 0.5 * np.arctan2(-uv, half)
    return np.sqrt(a2), m, tau


def elliptic_arc_lengths(u: FloatArray, v: FloatArray, t0: FloatArray, t1: FloatArray
                         ) -> tuple[FloatArray, FloatArray]:
    """Length of ``c + u cos t + v sin t`` for ``t`` in ``[t0, t1]``.

    With ``s = t - tau`` the speed is ``a·sqrt(1 - m sin² s)``, so the length is
    ``a·(E(t1 - tau | m) - E(t0 - tau | m))`` with ``E`` the incomplete elliptic
    integral of the second kind (parameter ``m = k²``, see :mod:`pathlen.measure.elliptic`).
    The bound covers rounding of the two ``E`` values, of their arguments
    and of ``m``; a difference of nearly equal ``E`` values (a short arc near
    a major-axis vertex of a slim ellipse) shows up as a large bound, and the
    caller integrates such arcs numerically instead.
    """
    a, m, tau = ellipse_frame(u, v)
    phi0 = t0 - tau
    phi1 = t1 - tau
    e0, f0 = _incomplete_integrals(phi0, m)
    e1, f1 = _incomplete_integrals(phi1, m)
    length = a * (e1 - e0)
    # d E / d m = (E - F) / (2 m); m is rounded once for both ends, so the
    # difference of the two derivatives bounds its effect.
    with np.errstate(divide="ignore", invalid="ignore"):
        dm = np.where(m > 0, np.abs((f1 - e1) - (f0 - e0)) / (2 * m), np.abs(phi1) + np.abs(phi0))
    dm = np.nan_to_num(dm, nan=np.inf, posinf=np.inf)
    bound = a * EPS * (
        16 * (np.abs(e0) + np.abs(e1))
        + 8 * (np.abs(t0) + np.abs(t1) + 2 * np.abs(tau))
        + 16 * dm
    )
    return length, bound


def _incomplete_integrals(phi: FloatArray, m: FloatArray) -> tuple[FloatArray, FloatArray]:
    """``E(phi | m)`` and ``F(phi | m)`` (:func:`pathlen.measure.elliptic.incomplete_integrals`).  Both are
    ``phi`` itself where ``m = 0`` (circles: exact, and no work)."""
    e, f = phi.copy(), phi.copy()
    oval = np.flatnonzero(m != 0)
    if len(oval):
        with np.errstate(divide="ignore", invalid="ignore"):
            e[oval], f[oval] = incomplete_integrals(phi[oval], m[oval])
    return e, f


def quadratic_bezier_lengths(ctrl: FloatArray) -> tuple[FloatArray, FloatArray]:
    """Length of polynomial quadratic Béziers ``ctrl[n, 3, 3]`` on [0, 1].

    ``B'(t) = A + B t`` with ``A = 2(P1 - P0)``, ``B = 2(P2 - 2P1 + P0)``.
    With ``s = t + A·B/|B|²`` and ``h = |A x B| / |B|²`` the speed is
    ``|B|·sqrt(s² + h²)``, whose antiderivative is
    ``(s·sqrt(s²+h²) + h²·asinh(s/h)) / 2``.  When both ends lie on the same
    side of the speed minimum the difference is formed without cancellation
    (see ``_same_side_difference``).  Straight pieces (``B = 0``) are ``|A|``.
    """
    p0, p1, p2 = ctrl[:, 0], ctrl[:, 1], ctrl[:, 2]
    big_a = 2.0 * (p1 - p0)
    big_b = 2.0 * ((p2 - p1) - (p1 - p0))
    nb2 = np.einsum("ij,ij->i", big_b, big_b)
    na = np.linalg.norm(big_a, axis=1)
    nb = np.sqrt(nb2)
    straight = nb2 <= (EPS * na) ** 2
    safe_b2 = np.where(straight, 1.0, nb2)
    s0 = np.einsum("ij,ij->i", big_a, big_b) / safe_b2
    s1 = s0 + 1.0
    h = np.linalg.norm(np.cross(big_a, big_b), axis=1) / safe_b2
    q0 = np.hypot(s0, h)
    q1 = np.hypot(s1, h)
    same = (s0 >= 0) | (s1 <= 0)
    integral = np.where(same, _same_side_difference(s0, s1, q0, q1, h),
                        _antiderivative(s1, q1, h) - _antiderivative(s0, q0, h))
    length = np.where(straight, na, nb * integral)
    return length, 32 * EPS * length + EPS * (na + nb)


def _antiderivative(s: FloatArray, q: FloatArray, h: FloatArray) -> FloatArray:
    with np.errstate(divide="ignore", invalid="ignore"):
        log_term = np.where(h > 0, h * h * np.arcsinh(s / np.where(h > 0, h, 1.0)), 0.0)
    return 0.5 * (s * q + log_term)


def _same_side_difference(s0: FloatArray, s1: FloatArray, q0: FloatArray, q1: FloatArray, h: FloatArray
                          ) -> FloatArray:
    """``F(s1) - F(s0)`` for ``s0 < s1`` of one sign, free of cancellation.

    Uses ``s1 q1 - s0 q0 = (s1² - s0²)(s1² + s0² + h²) / (s1 q1 + s0 q0)`` and
    ``asinh x - asinh y = asinh((x² - y²) / (x sqrt(1+y²) + y sqrt(1+x²)))``.
    Both formulas hold for two negative values by symmetry (F is odd).
    """
    sign = np.where(s1 <= 0, -1.0, 1.0)
    lo = np.where(sign > 0, s0, -s1)
    hi = np.where(sign > 0, s1, -s0)
    qlo = np.where(sign > 0, q0, q1)
    qhi = np.where(sign > 0, q1, q0)
    diff2 = (hi - lo) * (hi + lo)
    with np.errstate(divide="ignore", invalid="ignore"):
        den = hi * qhi + lo * qlo
        sq_part = np.where(den > 0, diff2 * (hi * hi + lo * lo + h * h) / den, 0.0)
        den2 = hi * qlo + lo * qhi
        log_part = np.where(den2 > 0, h * h * np.arcsinh(diff2 / np.where(den2 > 0, den2, 1.0)), 0.0)
    return 0.5 * (sq_part + log_part)
