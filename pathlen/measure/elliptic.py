"""Incomplete elliptic integrals ``F(phi | m)`` and ``E(phi | m)`` from Carlson's symmetric forms, numpy only.

``F(phi | m) = s R_F(c², 1 - m s², 1)`` (DLMF 19.25.5) and ``E(phi | m)`` as a sum of positive terms
(DLMF 19.25.10, see :func:`_quarter`), with ``s = sin phi``, ``c = cos phi`` for ``|phi| <= pi/2``,
extended by quasi-periodicity
``F(phi + j pi) = F(phi) + 2 j K``, ``E(phi + j pi) = E(phi) + 2 j E`` (DLMF 19.2.10).  ``R_F`` and ``R_D`` by
Carlson's duplication (B. C. Carlson, "Numerical computation of real or complex elliptic integrals",
Numerical Algorithms 10, 1995; DLMF 19.36.i): each step maps the arguments closer together while
keeping the integral, and once they agree to ``DUPLICATION_TOL`` a fifth-order series in their spread
ends it, with a truncation error below 1e-17 relative.  Every array is handled at once; the steps needed
grow as ``log4`` of the arguments' spread (about 12 for the elliptic arcs of a drawing).

This replaces scipy.special's ``ellipeinc``/``ellipkinc`` in measuring (that module costs a sixth of a
second and 20 MB to load, in every worker that meets an ellipse); tests hold both to mpmath.
"""

from __future__ import annotations

import numpy as np

from pathlen.geometry import FloatArray

#: Largest relative spread of the arguments at which the series ends the duplication: its first
#: neglected terms are of the sixth order in the spread (DLMF 19.36.1, 19.36.2): 1e-3 -> about 1e-18.
DUPLICATION_TOL = 1e-3
#: Duplication steps at most: each divides the spread by about 4 (arguments within a factor of 2**200 of
#: each other converge well before).
MAX_STEPS = 100


def incomplete_integrals(phi: FloatArray, m: FloatArray) -> tuple[FloatArray, FloatArray]:
    """``(E(phi | m), F(phi | m))`` for real ``phi`` and ``0 <= m <= 1`` (parameter ``m = k²``, scipy's
    convention).  Where ``m = 1``: ``E`` is ``sin`` extended by quasi-periodicity, ``F`` infinite past a
    quarter turn (``atanh(sin phi)`` within it), as the integrals' limits."""
    phi, m = np.broadcast_arrays(np.asarray(phi, dtype=float), np.asarray(m, dtype=float))
    turns = np.round(phi / np.pi)
    psi = phi - turns * np.pi  # in [-pi/2, pi/2]
    s, c = np.sin(psi), np.cos(psi)
    slim = m >= 1.0
    mm = np.where(slim, 0.0, m)  # m = 1 is done below from its limit
    e, f = _quarter(s, c, mm)
    whole = np.flatnonzero(turns != 0)
    if len(whole):  # whole half turns: twice the complete integrals (s = 1, c = 0) each
        e_half, f_half = _quarter(np.ones(len(whole)), np.zeros(len(whole)), mm[whole])
        e[whole] += 2.0 * turns[whole] * e_half
        f[whole] += 2.0 * turns[whole] * f_half
    if slim.any():
        with np.errstate(divide="ignore"):
            f_slim = np.where(turns == 0, np.arctanh(s), np.copysign(np.inf, phi))
        e = np.where(slim, s + 2.0 * turns, e)
        f = np.where(slim, f_slim, f)
    return e, f


def _quarter(s: FloatArray, c: FloatArray, m: FloatArray) -> tuple[FloatArray, FloatArray]:
    """``(E(psi | m), F(psi | m))`` for ``|psi| <= pi/2`` (``s``, ``c`` its sine and cosine, ``m < 1``):
    ``F = s R_F(c², d, 1)`` and ``E = (1 - m) F + m (1 - m)/3 · s³ R_D(c², 1, d) + m s c / sqrt(d)`` with
    ``d = 1 - m s²`` (DLMF 19.25.5 and 19.25.10 in ``s``, ``c``): terms of one sign, where the textbook
    ``F - (m/3) s³ R_D(c², d, 1)`` subtracts nearly equal numbers for a slim ellipse (m near 1), and ``d``
    formed as ``c² + (1 - m) s²`` for the same reason near its vertices."""
    d = c * c + (1.0 - m) * (s * s)
    rf, rd = carlson_rf_rd(c * c, np.ones_like(s), d)
    f = s * rf
    return (1.0 - m) * f + (m * (1.0 - m) / 3.0) * (s * s * s) * rd + m * s * c / np.sqrt(d), f


def carlson_rf_rd(x: FloatArray, y: FloatArray, z: FloatArray) -> tuple[FloatArray, FloatArray]:
    """Carlson's ``R_F(x, y, z)`` and ``R_D(x, y, z)`` (DLMF 19.16.1, 19.16.5) for ``x, y >= 0``, not both
    zero, and ``z > 0``, by one duplication (DLMF 19.36.i): each step maps every argument ``t`` to
    ``(t + lambda)/4``, ``lambda = sqrt(xy) + sqrt(yz) + sqrt(zx)``, which keeps ``R_F`` and changes
    ``R_D`` by a term summed as it goes, until the arguments agree to :data:`DUPLICATION_TOL` about the
    means ``(x + y + z)/3`` and ``(x + y + 3z)/5``; then the series of DLMF 19.36.1 and 19.36.2."""
    x, y, z = (np.array(a, dtype=float) for a in np.broadcast_arrays(x, y, z))
    total = np.zeros_like(x)
    scale = 1.0
    for _ in range(MAX_STEPS):
        mean_f, mean_d = (x + y + z) / 3.0, (x + y + 3.0 * z) / 5.0
        if max(_spread(mean_f, x, y, z), _spread(mean_d, x, y, z)) <= DUPLICATION_TOL:
            break
        sx, sy, sz = np.sqrt(x), np.sqrt(y), np.sqrt(z)
        lam = sx * (sy + sz) + sy * sz
        total += scale / (sz * (z + lam))
        scale *= 0.25
        for t in (x, y, z):
            t += lam
            t *= 0.25
    # R_F: X, Y, Z = 1 - x/A, 1 - y/A, 1 - z/A (summing to 0); A^(-1/2) (1 - E2/10 + E3/14 + E2²/24 - 3 E2 E3/44)
    big_x, big_y = 1.0 - x / mean_f, 1.0 - y / mean_f
    big_z = -(big_x + big_y)
    e2, e3 = big_x * big_y - big_z * big_z, big_x * big_y * big_z
    rf = (1.0 - e2 / 10.0 + e3 / 14.0 + e2 * e2 / 24.0 - 3.0 * e2 * e3 / 44.0) / np.sqrt(mean_f)
    # R_D: X, Y = 1 - x/A, 1 - y/A, Z = -(X + Y)/3;
    # 4^-N A^(-3/2) (1 - 3E2/14 + E3/6 + 9E2²/88 - 3E4/22 - 9E2E3/52 + 3E5/26) + 3 (the terms summed)
    big_x, big_y = 1.0 - x / mean_d, 1.0 - y / mean_d
    big_z = -(big_x + big_y) / 3.0
    xy, zz = big_x * big_y, big_z * big_z
    e2, e3 = xy - 6.0 * zz, (3.0 * xy - 8.0 * zz) * big_z
    e4, e5 = 3.0 * (xy - zz) * zz, xy * zz * big_z
    series = (1.0 - 3.0 * e2 / 14.0 + e3 / 6.0 + 9.0 * e2 * e2 / 88.0 - 3.0 * e4 / 22.0 - 9.0 * e2 * e3 / 52.0
              + 3.0 * e5 / 26.0)
    return rf, 3.0 * total + scale * series / (mean_d * np.sqrt(mean_d))


def _spread(mean: FloatArray, x: FloatArray, y: FloatArray, z: FloatArray) -> float:
    """Largest relative distance of any argument from ``mean`` (0 for no arguments)."""
    if mean.size == 0:
        return 0.0
    with np.errstate(invalid="ignore", divide="ignore"):
        worst = np.maximum(np.maximum(np.abs(mean - x), np.abs(mean - y)), np.abs(mean - z)) / mean
    return float(np.nanmax(worst)) if np.isfinite(worst).any() else 0.0
