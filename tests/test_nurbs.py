"""B-spline -> Bézier decomposition, checked against scipy's B-spline evaluation."""

from math import comb

import numpy as np
import pytest
from scipy.interpolate import BSpline

from pathlen.importers.nurbs import SplineError, bezier_pieces


@pytest.mark.parametrize("seed", range(24))
def test_pieces_trace_the_spline(seed):
    rng = np.random.default_rng(seed)
    p = int(rng.integers(1, 5))
    n = int(rng.integers(p + 1, p + 8))
    ctrl = rng.normal(size=(n, 3))
    w = rng.uniform(0.3, 3.0, n) if seed % 2 else np.ones(n)
    if seed % 3:
        inner = np.sort(rng.uniform(0, 1, n - p - 1))
        if seed % 4 == 0 and len(inner) > 1 and p > 1:
            inner[1] = inner[0]  # a double knot
        knots = np.concatenate([np.zeros(p + 1), inner, np.ones(p + 1)])
    else:
        knots = np.sort(rng.uniform(0, 5, n + p + 1))  # unclamped
    # reference: scipy evaluates the homogeneous spline (w·P, w)
    hom = BSpline(knots, np.concatenate([ctrl * w[:, None], w[:, None]], axis=1), p)
    pieces, weights = bezier_pieces(ctrl, knots, p, w)
    spans = [(knots[k], knots[k + 1]) for k in range(p, n) if knots[k + 1] > knots[k]]
    assert len(pieces) == len(spans)
    s = np.linspace(0, 1, 9)
    basis = np.array([[comb(p, i) * x**i * (1 - x) ** (p - i) for i in range(p + 1)] for x in s])
    for (a, b), c, ww in zip(spans, pieces, weights, strict=True):
        pts = (basis * ww) @ c / (basis @ ww)[:, None]
        h = hom(a + s * (b - a))
        np.testing.assert_allclose(pts, h[:, :3] / h[:, 3:], atol=1e-12)


def test_bad_splines_are_rejected_with_reasons():
    ctrl = np.zeros((4, 3))
    with pytest.raises(SplineError, match="knots"):
        bezier_pieces(ctrl, [0, 0, 1, 1], 3)
    with pytest.raises(SplineError, match="weights must be positive"):
        bezier_pieces(ctrl, [0, 0, 0, 0, 1, 1, 1, 1], 3, [1, 0, 1, 1])
    with pytest.raises(SplineError, match="decrease"):
        bezier_pieces(ctrl, [0, 0, 0, 1, 0.5, 1, 1, 1], 3)
