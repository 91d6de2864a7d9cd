"""Split a (rational) B-spline into Bézier pieces by knot insertion.

Works in homogeneous coordinates ``(w·P, w)``, so rational splines split
exactly.  Clamped and unclamped knot vectors are both handled: every distinct
knot value in the valid domain ``[U[p], U[m-p]]`` is raised to multiplicity
``p`` (Boehm's algorithm), after which the control points of span
``[U[k], U[k+1])`` are ``P[k-p .. k]``.
"""

from __future__ import annotations

import bisect
import itertools
from collections import Counter

import numpy as np

from pathlen.geometry import FloatArray


class SplineError(ValueError):
    """Inconsistent spline data (knot count, degree, weights)."""


def bezier_pieces(ctrl: FloatArray, knots: FloatArray, degree: int, weights: FloatArray | None = None
                  ) -> tuple[FloatArray, FloatArray]:
    """Bézier pieces of a NURBS curve.

    Returns ``(ctrl[k, degree+1, 3], weights[k, degree+1])``, one row per
    non-empty knot span of the domain.  Plain Python lists inside: a spline has a
    handful of points, and per-call numpy overhead would dominate.
    """
    pts = [[float(c) for c in row] for row in (ctrl.tolist() if isinstance(ctrl, np.ndarray) else ctrl)]
    knot_list = [float(k) for k in (knots.tolist() if isinstance(knots, np.ndarray) else knots)]
    p = int(degree)
    n = len(pts)
    if p < 1:
        raise SplineError(f"degree {p} is below 1")
    if n < p + 1:
        raise SplineError(f"{n} control points are too few for degree {p}")
    if len(knot_list) != n + p + 1:
        raise SplineError(f"{len(knot_list)} knots, expected {n + p + 1} for {n} control points of degree {p}")
    if any(b < a for a, b in itertools.pairwise(knot_list)):
        raise SplineError("knots decrease")
    w = [1.0] * n if weights is None or len(weights) == 0 else [float(x) for x in weights]
    if len(w) != n:
        raise SplineError(f"{len(w)} weights for {n} control points")
    if not all(x > 0 for x in w):
        raise SplineError("weights must be positive")
    lo, hi = knot_list[p], knot_list[len(knot_list) - p - 1]
    if not hi > lo:
        raise SplineError("empty knot domain")
    if len(pts[0]) != 3:
        raise SplineError("control points must be 3-D")
    homog = [[x * wi, y * wi, z * wi, wi] for (x, y, z), wi in zip(pts, w, strict=True)]
    homog, knot_list = _raise_to_bezier(homog, knot_list, p, lo, hi)
    spans = [k for k in range(p, len(knot_list) - p - 1) if knot_list[k + 1] > knot_list[k]]
    h = np.array([homog[k - p:k + 1] for k in spans], dtype=float).reshape(len(spans), p + 1, 4)
    return h[:, :, :3] / h[:, :, 3:], h[:, :, 3]


def _raise_to_bezier(points: list[list[float]], knots: list[float], p: int, lo: float, hi: float
                     ) -> tuple[list[list[float]], list[float]]:
    """Boehm's insertion on plain lists (splines are short: list steps beat numpy calls here):
    every distinct knot in ``[lo, hi]`` raised to multiplicity ``p``."""
    multiplicity = Counter(knots)
    for u in sorted(multiplicity):
        if not lo <= u <= hi:
            continue
        for s in range(multiplicity[u], p):  # s: the multiplicity of u before this insertion
            k = bisect.bisect_right(knots, u) - 1
            new = points[: k - p + 1]
            for i in range(k - p + 1, k - s + 1):
                den = knots[i + p] - knots[i]
                a = 0.0 if den == 0 else (u - knots[i]) / den
                new.append([a * x + (1.0 - a) * y for x, y in zip(points[i], points[i - 1], strict=True)])
            new.extend(points[k - s:])
            points = new
            knots.insert(k + 1, u)
    return points, knots
