"""Split a (rational) B-spline into Bézier pieces by knot insertion.

Works in homogeneous coordinates ``(w·P, w)``, so rational splines split
exactly.  Clamped and unclamped knot vectors are both handled: every distinct
knot value in the valid domain ``[U[p], U[m-p]]`` is raised to multiplicity
``p`` (Boehm's algorithm), after which the control points of span
``[U[k], U[k+1])`` are ``P[k-p .. k]``.
"""

from __future__ import annotations

from collections import Counter

import numpy as np

from pathlen.geometry import FloatArray


class SplineError(ValueError):
    """Inconsistent spline data (knot count, degree, weights)."""


def insert_knot(homog: FloatArray, knots: FloatArray, degree: int, u: float) -> tuple[FloatArray, FloatArray]:
    """Insert knot ``u`` once (Boehm).  ``homog[n, dim]``, ``knots[n + degree + 1]``;
    ``u`` must have multiplicity below ``degree``."""
    p = degree
    k = int(np.searchsorted(knots, u, side="right")) - 1
    s = int(np.count_nonzero(knots == u))
    new = np.empty((len(homog) + 1, homog.shape[1]))
    new[: k - p + 1] = homog[: k - p + 1]
    new[k - s + 1:] = homog[k - s:]
    for i in range(k - p + 1, k - s + 1):
        den = knots[i + p] - knots[i]
        alpha = 0.0 if den == 0 else (u - knots[i]) / den
        new[i] = alpha * homog[i] + (1.0 - alpha) * homog[i - 1]
    return new, np.insert(knots, k + 1, u)


def bezier_pieces(ctrl: FloatArray, knots: FloatArray, degree: int, weights: FloatArray | None = None
                  ) -> tuple[FloatArray, FloatArray]:
    """Bézier pieces of a NURBS curve.

    Returns ``(ctrl[k, degree+1, 3], weights[k, degree+1])``, one row per
    non-empty knot span of the domain.
    """
    ctrl = np.asarray(ctrl, dtype=float)
    knots = np.asarray(knots, dtype=float)
    p = int(degree)
    n = len(ctrl)
    if p < 1:
        raise SplineError(f"degree {p} is below 1")
    if n < p + 1:
        raise SplineError(f"{n} control points are too few for degree {p}")
    if len(knots) != n + p + 1:
        raise SplineError(f"{len(knots)} knots, expected {n + p + 1} for {n} control points of degree {p}")
    if np.any(np.diff(knots) < 0):
        raise SplineError("knots decrease")
    w = np.ones(n) if weights is None or len(weights) == 0 else np.asarray(weights, dtype=float)
    if len(w) != n:
        raise SplineError(f"{len(w)} weights for {n} control points")
    if np.any(~(w > 0)):
        raise SplineError("weights must be positive")
    lo, hi = knots[p], knots[len(knots) - p - 1]
    if not hi > lo:
        raise SplineError("empty knot domain")
    homog = np.concatenate([ctrl * w[:, None], w[:, None]], axis=1)
    multiplicity = Counter(knots.tolist())
    for u in sorted(multiplicity):
        if lo <= u <= hi:
            for _ in range(max(p - multiplicity[u], 0)):
                homog, knots = insert_knot(homog, knots, p, u)
    spans = np.nonzero(knots[p + 1: len(knots) - p] > knots[p: len(knots) - p - 1])[0] + p
    h = homog[spans[:, None] - p + np.arange(p + 1)]
    return h[:, :, :3] / h[:, :, 3:], h[:, :, 3]
