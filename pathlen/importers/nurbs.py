"""Split a (rational) B-spline into Bézier pieces.

Works in homogeneous coordinates ``(w·P, w)``, so rational splines split
exactly.  Clamped and unclamped knot vectors are both handled: each non-empty
span ``[a, b) = [U[k], U[k+1])`` of the valid domain ``[U[p], U[m-p]]`` depends
on ``P[k-p .. k]`` only, and its Bézier control points are the blossom values
``f(a, .., a, b, .., b)`` (``p - i`` times ``a``, ``i`` times ``b``), each found by
de Boor's recursion with ``a`` or ``b`` at each level (Ramshaw's blossoming; the
same numbers knot insertion would give).  All spans at once: work linear in
the number of spans, ``p²(p+1)`` array steps in all.
"""

from __future__ import annotations

import itertools

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
    if n - p <= FEW_SPANS:  # a handful of spans: plain Python beats numpy's per-call cost
        h = np.array(_span_beziers_small([[x * wi, y * wi, z * wi, wi] for (x, y, z), wi in zip(pts, w, strict=True)],
                                         knot_list, p), dtype=float).reshape(-1, p + 1, 4)
    else:
        homog = np.array(pts, dtype=float) * np.array(w)[:, None]
        homog = np.concatenate([homog, np.array(w)[:, None]], axis=1)
        h = _span_beziers(homog, np.array(knot_list, dtype=float), p)
    return h[:, :, :3] / h[:, :, 3:], h[:, :, 3]


#: Splines with at most this many spans are split in plain Python (same recursion as the arrays).
FEW_SPANS = 16


def _span_beziers_small(homog: list[list[float]], knots: list[float], p: int) -> list[list[list[float]]]:
    """:func:`_span_beziers` on lists, for short splines."""
    out = []
    for k in range(p, len(knots) - p - 1):
        a, b = knots[k], knots[k + 1]
        if not b > a:
            continue
        if all(x == a for x in knots[k - p + 1:k + 1]) and all(x == b for x in knots[k + 1:k + p + 1]):
            out.append(homog[k - p:k + 1])  # already a Bézier span (a clamped single-span spline, say)
            continue
        piece = []
        span = [tuple(row) for row in homog[k - p:k + 1]]
        for i in range(p + 1):
            d = span[:]
            for r in range(1, p + 1):
                u = a if r <= p - i else b
                for j in range(p, r - 1, -1):
                    left = knots[k - p + j]
                    t = (u - left) / (knots[k + 1 + j - r] - left)
                    s = 1.0 - t
                    (x0, y0, z0, w0), (x1, y1, z1, w1) = d[j - 1], d[j]
                    d[j] = (s * x0 + t * x1, s * y0 + t * y1, s * z0 + t * z1, s * w0 + t * w1)
            piece.append(d[p])
        out.append(piece)
    return out


def _span_beziers(homog: FloatArray, knots: FloatArray, p: int) -> FloatArray:
    """``[spans, p+1, 4]`` homogeneous Bézier control points of every non-empty span, by blossoming."""
    k = np.arange(p, len(knots) - p - 1)
    k = k[knots[k + 1] > knots[k]]
    local = homog[k[:, None] - p + np.arange(p + 1)]  # [S, p+1, 4]: P[k-p .. k]
    window = knots[k[:, None] - p + 1 + np.arange(2 * p)]  # [S, 2p]: U[k-p+1 .. k+p]
    return window_beziers(local, window, p)


def window_beziers(local: FloatArray, window: FloatArray, p: int) -> FloatArray:
    """Bézier pieces of spans given by their own data: ``local[S, p+1, 4]`` homogeneous control points
    ``P[k-p .. k]`` and ``window[S, 2p]`` knots ``U[k-p+1 .. k+p]`` of span ``[U[k], U[k+1])``.  Spans of
    different splines (of one degree) can share one call."""
    a, b = window[:, p - 1], window[:, p]
    out = np.empty((len(local), p + 1, 4))
    for i in range(p + 1):
        d = local.copy()
        for r in range(1, p + 1):
            u = a if r <= p - i else b
            j = np.arange(r, p + 1)
            left = window[:, j - 1]
            right = window[:, p + j - r]
            alpha = ((u[:, None] - left) / (right - left))[:, :, None]
            d[:, r:] = (1.0 - alpha) * d[:, r - 1:-1] + alpha * d[:, r:]
        out[:, i] = d[:, p]
    return out
