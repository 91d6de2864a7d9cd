"""Bézier pieces in the power basis: coefficients from forward differences, Horner evaluation.

Coefficients are built from forward differences of the control points (never
from absolute coordinates), so tiny curves far from the origin keep their
relative accuracy.
"""

from __future__ import annotations

from math import comb

import numpy as np

from pathlen.geometry import FloatArray


def power_coefficients(points: FloatArray) -> FloatArray:
    """Power-basis coefficients of a Bézier with control points ``points[n, k+1, dim]``.

    ``B(t) = sum_j c_j t^j`` with ``c_j = C(k, j) Δ^j P_0`` (forward differences).
    """
    k = points.shape[1] - 1
    out = np.empty_like(points)
    diff = points
    for j in range(k + 1):
        out[:, j] = comb(k, j) * diff[:, 0]
        diff = np.diff(diff, axis=1)
    return out


def horner(c: FloatArray, t: FloatArray) -> FloatArray:
    """Evaluate ``sum_j c[:, j] t^j`` for ``c[m, k]`` and ``t[m, q]``."""
    val = np.broadcast_to(c[:, -1, None], t.shape).copy()
    for j in range(c.shape[1] - 2, -1, -1):
        val *= t
        val += c[:, j, None]
    return val
