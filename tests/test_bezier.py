"""Adaptive quadrature of Bézier arc length against mpmath and classical results."""

import math

import mpmath as mp
import numpy as np
import pytest

from pathlen.geometry import Beziers
from pathlen.measure.bezier import bezier_lengths, cubic_speed_minima
from pathlen.measure.quadrature import GAUSS_WEIGHTS, KRONROD_WEIGHTS, NODES
from tests.checks import assert_bound_holds
from tests.reference import bezier_length


def _batch(ctrl, weights=None):
    ctrl = np.asarray(ctrl, dtype=float)
    w = np.ones(ctrl.shape[:2]) if weights is None else np.asarray(weights, dtype=float)
    return Beziers(ctrl, w, np.arange(len(ctrl)))


def test_gauss_kronrod_rules_integrate_polynomials_exactly():
    # G7 is exact to degree 13, K15 to degree 23 (Gauss-Kronrod theory): ∫_{-1}^{1} x^k = 2/(k+1) for even k
    for k in range(0, 24, 2):
        exact = 2.0 / (k + 1)
        assert KRONROD_WEIGHTS @ NODES**k == pytest.approx(exact, rel=1e-14)
        if k <= 13:
            assert GAUSS_WEIGHTS @ NODES**k == pytest.approx(exact, rel=1e-14)
    assert abs(GAUSS_WEIGHTS @ NODES**14 - 2 / 15) > 1e-6  # and no further


ADVERSARIAL = [
    [[0, 0, 0], [2, 2, 0], [0, 2, 0], [2, 0, 0]],  # exact cusp at t = 1/2
    [[0, 0, 0], [2, 2, 0], [0, 2, 0], [2.0001, 0, 0]],  # near-cusp: a kink 1e-5 wide
    [[0, 0, 0], [2, 2, 0], [0, 2, 0], [2 + 1e-8, 0, 0]],  # sharper near-cusp
    [[0, 0, 0], [1, 0, 0], [3, 0, 0], [2, 0, 0]],  # collinear, reverses direction
    [[0, 0, 0], [3, 0, 0], [-2, 0, 0], [1, 0, 0]],  # collinear, reverses twice
    [[0, 0, 0], [10, 10, 0], [-9, 10, 0], [1, 1e-7, 0]],  # loop
    [[0, 0, 0], [0, 0, 0], [0, 0, 0], [0, 0, 0]],  # a point
    [[0, 0, 0], [0, 0, 0], [1, 1, 0], [1, 1, 0]],  # doubled end points
    [[1e6, 1e6, 0], [1e6 + 1e-3, 1e6 + 2e-3, 0], [1e6 + 2e-3, 1e6 - 1e-3, 0], [1e6 + 3e-3, 1e6, 0]],  # tiny, far away
    [[0, 0, 0], [4e5, 1e6, 0], [7e5, -1e6, 0], [1e6, 0, 0]],  # huge
    [[0, 0, 0], [1, 2, 3], [2, -1, 1], [3, 1, -2]],  # twisted space curve
    [[0, 0, 0], [0, 1, 0], [0, 0, 0], [0, 0, 1e-6]],  # space curve, near-cusps inside and at t = 1
]


@pytest.fixture(scope="module")
def cubic_cases():
    rng = np.random.default_rng(2024)
    rand = rng.normal(size=(14, 4, 3))
    rand[:10, :, 2] = 0.0
    ctrl = np.concatenate([np.array(ADVERSARIAL, dtype=float), rand])
    return ctrl, [bezier_length(c) for c in ctrl]


@pytest.mark.parametrize("rtol", [1e-6, 1e-9, 1e-12])
def test_cubic_lengths_and_bounds_against_mpmath(rtol, cubic_cases):
    ctrl, refs = cubic_cases
    length, bound, unconverged = bezier_lengths(_batch(ctrl), rtol)
    assert unconverged == 0
    # the reported bound is never below the true error (reference: mpmath at 28 digits) and meets rtol
    assert_bound_holds(length, bound, ctrl, refs, rtol)


def test_higher_degree_and_rational_against_mpmath():
    rng = np.random.default_rng(5)
    quartic = rng.normal(size=(4, 5, 3))
    # and the near-cusp space cubic above raised to degree 4: a kink 5e-7 wide at the end t = 1
    quartic = np.concatenate([quartic, [[[0, 0, 0], [0, 0.75, 0], [0, 0.5, 0], [0, 0, 2.5e-7], [0, 0, 1e-6]]]])
    quintic = rng.normal(size=(3, 6, 3))
    for ctrl in (quartic, quintic):
        length, bound, _ = bezier_lengths(_batch(ctrl), 1e-9)
        for i, c in enumerate(ctrl):
            ref = bezier_length(c)
            assert abs(mp.mpf(length[i]) - ref) <= bound[i] <= 1e-9 * ref
    rat = rng.normal(size=(6, 4, 3))
    w = rng.uniform(0.2, 4.0, size=(6, 4))
    length, bound, _ = bezier_lengths(_batch(rat, w), 1e-9)
    for i in range(6):
        ref = bezier_length(rat[i], w[i])
        assert abs(mp.mpf(length[i]) - ref) <= bound[i] <= 1e-9 * ref


@pytest.mark.parametrize("r", [1.0, 37.5])
def test_rational_quadratic_quarter_circle_is_exactly_a_quarter(r):
    # conic form of a circular arc: weights 1, cos(45°), 1 give an exact quarter circle (length pi·r/2)
    ctrl = np.array([[[r, 0, 0], [r, r, 0], [0, r, 0]]])
    length, bound, _ = bezier_lengths(_batch(ctrl, [[1, math.sqrt(0.5), 1]]), 1e-12)
    assert abs(length[0] - math.pi * r / 2) <= bound[0] <= 1e-12 * length[0] * 1.0001


def test_cycloid_arch_is_eight_times_rolling_radius():
    # classical result: one arch of the cycloid x = a(t - sin t), y = a(1 - cos t) has length 8a.
    # Build it from cubic Hermite pieces (Bézier handles from the exact derivative) and bound the
    # difference between fit and cycloid by the sampled speed difference.
    a, pieces = 2.5, 400
    ts = np.linspace(0, 2 * math.pi, pieces + 1)
    h = ts[1] - ts[0]

    def pos(t):
        return np.stack([a * (t - np.sin(t)), a * (1 - np.cos(t)), 0 * t], axis=-1)

    def vel(t):
        return np.stack([a * (1 - np.cos(t)), a * np.sin(t), 0 * t], axis=-1)

    p0, p3 = pos(ts[:-1]), pos(ts[1:])
    ctrl = np.stack([p0, p0 + h / 3 * vel(ts[:-1]), p3 - h / 3 * vel(ts[1:]), p3], axis=1)
    length, bound, _ = bezier_lengths(_batch(ctrl), 1e-12)
    # fit error: |∫|B'| - ∫|C'|| <= ∫ |B'(s)/h - C'(t)| dt, sampled densely on every piece
    s = np.linspace(0, 1, 41)
    basis_d = np.stack([-3 * (1 - s) ** 2, 3 * (1 - s) * (1 - 3 * s), 3 * s * (2 - 3 * s), 3 * s**2], axis=1)
    fit_speed = np.einsum("qk,nkd->nqd", basis_d, ctrl) / h
    true_speed = vel(ts[:-1, None] + h * s[None, :])
    fit_error = np.max(np.linalg.norm(fit_speed - true_speed, axis=2)) * 2 * math.pi
    assert fit_error < 1e-6  # the fit itself is good
    assert abs(length.sum() - 8 * a) <= 2 * fit_error + bound.sum()


def test_cubic_minima_are_speed_minima():
    # the exact cusp of ADVERSARIAL[0] is at t = 1/2 (B'(1/2) = 0 by symmetry)
    rows, t = cubic_speed_minima(np.array([ADVERSARIAL[0]], dtype=float))
    assert rows.tolist() == [0]
    assert t[0] == pytest.approx(0.5, abs=1e-12)


def test_denormal_scale_control_points_do_not_overflow():
    # Found by hypothesis: a control point at 1.5e-157 made a speed-minimum root overflow (a warning, an
    # error under pytest).  z(t) = (1-t)³ + t³ falls from 1 to 1/4 and back: length 3/2 (by hand), and
    # the mpmath reference agrees.
    ctrl = np.array([[(0.0, 0.0, 1.0), (0.0, 0.0, 0.0), (0.0, 0.0, 0.0), (0.0, 1.4588876746115643e-157, 1.0)]])
    length, bound, _ = bezier_lengths(Beziers(ctrl, np.ones((1, 4)), np.zeros(1, dtype=np.int64)), 1e-9)
    assert length[0] == pytest.approx(1.5, rel=1e-12)
    assert abs(length[0] - float(bezier_length(ctrl[0]))) <= bound[0]


@pytest.mark.parametrize(("degree", "rational"), [(8, False), (20, True), (36, False)])
def test_high_degree_pieces_against_mpmath(degree, rational):
    # reference: mpmath quadrature of the Bernstein-form speed at 28 digits (tests/reference.py)
    rng = np.random.default_rng(degree + rational)
    ctrl = np.cumsum(rng.normal(size=(1, degree + 1, 3)) * [10, 10, 0], axis=1)
    weights = rng.uniform(0.5, 2.0, size=(1, degree + 1)) if rational else None
    length, bound, unconverged = bezier_lengths(_batch(ctrl, weights), 1e-9)
    refs = [bezier_length(c, None if weights is None else weights[i]) for i, c in enumerate(ctrl)]
    assert unconverged == 0
    assert_bound_holds(length, bound, ctrl, refs, 1e-9)


def test_work_per_curve_is_bounded_when_the_speed_is_noise():
    # A speed that cannot be integrated to the tolerance (random rounding-like noise): the integrator
    # stops at its interval budget with an honest estimate in the bound instead of growing without end
    from pathlen.measure.quadrature import MAX_INTERVALS_PER_CURVE, integrate_speed

    rng = np.random.default_rng(7)

    def noisy(rows, t):
        return 1.0 + 1e-6 * rng.standard_normal(t.shape)

    n = 3
    rows = np.arange(n)
    out = integrate_speed(noisy, n, rows, np.zeros(n), np.ones(n), np.ones(n), 1e-12)
    assert out.unconverged > 0
    assert out.evaluations <= 15 * 2 * MAX_INTERVALS_PER_CURVE * n
    np.testing.assert_allclose(out.value, 1.0, atol=1e-6)  # ∫_0^1 1 dt, noise averaged by the rule
    assert np.all(out.bound > 0)


@pytest.mark.parametrize("name", ["kl330_sign_panel.dxf", "kl412_lamp_panel.svg", "kl214_gasket.dxf",
                                  "kl101_bracket.dxf"])
def test_measuring_in_runs_changes_no_result(name, monkeypatch):
    # every curve is measured alone, so runs of 3 rows give the lengths, bounds and counts of one pass
    from pathlib import Path

    import pathlen.measure as measure_module
    from pathlen.importers import read_drawing

    drawing = read_drawing(Path(__file__).resolve().parent.parent / "fixtures" / name)
    whole = measure_module.measure(drawing)
    monkeypatch.setattr(measure_module, "MEASURE_RUN", 3)
    runs = measure_module.measure(drawing)
    assert len(drawing.arcs) > 3 or any(len(b) > 3 for b in drawing.beziers.values())
    np.testing.assert_array_equal(runs.entity_length, whole.entity_length)
    np.testing.assert_array_equal(runs.entity_bound, whole.entity_bound)
    assert runs.unconverged == whole.unconverged
