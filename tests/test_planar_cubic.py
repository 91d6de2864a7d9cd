"""Flat cubics measured with bounds proved in advance, against outside references."""

import math

import mpmath as mp
import numpy as np
import pytest
from numpy.polynomial.legendre import leggauss

from pathlen.geometry import Beziers
from pathlen.measure.bezier import bezier_lengths
from pathlen.measure.planar_cubic import (
    _ellipse_rho,
    _gauss_bound,
    hodograph,
    hodograph_coefficients,
    length_floor,
    planar_cubic_lengths,
)
from tests.checks import assert_bound_holds
from tests.reference import bezier_length


def _bernstein_hodograph(ctrl: np.ndarray, t: float) -> complex:
    """B'(t) as a complex number from the textbook Bernstein form of the derivative."""
    d = 3 * np.diff(ctrl, axis=0)
    v = (1 - t) ** 2 * d[0] + 2 * t * (1 - t) * d[1] + t * t * d[2]
    return complex(v[0], v[1])


def test_hodograph_roots_and_factored_speed():
    rng = np.random.default_rng(11)
    ctrl = rng.normal(size=(50, 4, 2))
    coeff = hodograph_coefficients(ctrl)
    h = hodograph(coeff, np.full(50, 1e-9))
    for i, c in enumerate(ctrl):
        # the roots agree with numpy.roots on the complex quadratic (reference: numpy's companion-matrix eigenvalues)
        poly = [complex(*coeff[i, 2]), complex(*coeff[i, 1]), complex(*coeff[i, 0])]
        ref = sorted(np.roots(poly), key=lambda z: (z.real, z.imag))
        ours = sorted(h.roots[:, i], key=lambda z: (z.real, z.imag))
        assert np.allclose(ours, ref, rtol=1e-10, atol=1e-12)
        # and |B'(t)| = |c2|·|t − z_a|·|t − z_b| on the real line (fundamental theorem of algebra)
        for t in np.linspace(0, 1, 7):
            direct = abs(_bernstein_hodograph(c, t))
            factored = h.lead[i] * abs(t - h.roots[0, i]) * abs(t - h.roots[1, i])
            assert factored == pytest.approx(direct, rel=1e-12, abs=1e-14)


def test_length_floor_is_below_the_length():
    # an inscribed polygon is never longer than the curve (triangle inequality); reference: mpmath length
    rng = np.random.default_rng(3)
    ctrl = rng.normal(size=(12, 4, 2))
    floor = length_floor(hodograph_coefficients(ctrl))
    for i, c in enumerate(ctrl):
        ref = float(bezier_length(c))
        assert 0.8 * ref < floor[i] <= ref


@pytest.mark.parametrize(("x", "y"), [(0.0, 0.5), (0.3, 0.05), (1.2, 0.01), (-0.9, 0.2), (0.0, 2.0)])
@pytest.mark.parametrize("n", [4, 8, 16, 32])
def test_gauss_bound_covers_the_true_error(x, y, n):
    # f(u) = sqrt((u − x)² + y²) on [−1, 1] has branch points at x ± iy; the Gauss–Legendre bound
    # 64 M / (15 (1 − ρ⁻²) ρ^{2n}) (fungrim.org, topic Gaussian quadrature) must exceed the true error,
    # with M ≤ A + |x + iy| on the disc that holds the ellipse.  Reference integral: mpmath.quad.
    exact = mp.quad(lambda u: mp.sqrt((u - x) ** 2 + y**2), [-1, x, 1] if -1 < x < 1 else [-1, 1])
    nodes, weights = leggauss(n)
    approx = float(np.sum(weights * np.sqrt((nodes - x) ** 2 + y**2)))
    rho = float(_ellipse_rho(np.array([x]), np.array([y]), np.zeros(1), np.zeros(1), np.ones(1))[0])
    semi_major = 0.5 * (rho + 1 / rho)
    bound = float(_gauss_bound(np.ones(1), np.array([semi_major + math.hypot(x, y)]), np.array([rho]),
                               np.array([n]))[0])
    assert abs(approx - float(exact)) <= bound


NEAR_CUSP = np.array([[0, 0], [2, 2], [0, 2], [2, 0]], dtype=float)  # exact cusp at t = 1/2


@pytest.fixture(scope="module")
def flat_cases():
    # near-cusps of every width, loops, near-collinear reversals, a far-away tiny curve and random ones
    rng = np.random.default_rng(8)
    curves = [NEAR_CUSP + np.array([[0, 0], [0, 0], [0, 0], [10.0**-k, 0]]) for k in (1, 3, 5, 8, 11, 14)]
    curves += [np.array([[0, 0], [10, 10], [-9, 10], [1, 1e-7]]),  # loop
               np.array([[0, 0], [3, 1e-9], [-2, -1e-9], [1, 0]]),  # reverses twice, nearly collinear
               np.array([[1e6, 1e6], [1e6 + 1e-3, 1e6 + 2e-3], [1e6 + 2e-3, 1e6 - 1e-3], [1e6 + 3e-3, 1e6]])]
    curves += list(rng.normal(size=(8, 4, 2)))
    ctrl = np.array(curves)
    return ctrl, [bezier_length(c) for c in ctrl]


@pytest.mark.parametrize("rtol", [1e-6, 1e-9, 1e-12])
def test_flat_cubics_against_mpmath(rtol, flat_cases):
    # the bound is never below the true error and meets the tolerance (reference: mpmath at 28 digits)
    ctrl, refs = flat_cases
    value, bound, left = planar_cubic_lengths(hodograph_coefficients(ctrl), rtol)
    assert len(left) == 0  # all of these go through the a priori path
    assert_bound_holds(value, bound, ctrl, refs, rtol)


def test_curves_the_bound_cannot_place_still_measured():
    # B' = c2 t² (three coincident control points: a double root) and a straight line traversed with
    # varying speed (conjugate roots): the adaptive integrator takes them; exact lengths by geometry
    ctrl = np.array([[[0, 0], [0, 0], [0, 0], [3, 4]],
                     [[0, 0], [1, 0], [1.5, 0], [6, 0]]], dtype=float)
    _, _, left = planar_cubic_lengths(hodograph_coefficients(ctrl), 1e-9)
    assert 0 in left
    full = np.concatenate([ctrl, np.zeros((2, 4, 1))], axis=2)
    length, bound, unconverged = bezier_lengths(Beziers(full, np.ones((2, 4)), np.arange(2)), 1e-9)
    assert unconverged == 0
    assert abs(length[0] - 5.0) <= bound[0] <= 1e-9 * 5.0
    assert abs(length[1] - 6.0) <= bound[1] <= 1e-9 * 6.0


def test_threads_give_the_same_numbers(monkeypatch):
    # the batch split over threads is by contiguous rows; each curve's pieces and orders are the same,
    # only the BLAS blocking of the node sums may differ in the last bits
    from pathlen.measure import planar_cubic

    ctrl = np.random.default_rng(4).uniform(0, 100, size=(2 * planar_cubic.MIN_CURVES_PER_THREAD + 5, 4, 2))
    coeff = hodograph_coefficients(ctrl)
    monkeypatch.setattr(planar_cubic, "THREADS", 1)
    one = planar_cubic_lengths(coeff, 1e-9)
    monkeypatch.setattr(planar_cubic, "THREADS", 2)
    two = planar_cubic_lengths(coeff, 1e-9)
    assert np.array_equal(one[2], two[2])
    assert np.allclose(one[0], two[0], rtol=1e-13, atol=0)
    assert np.allclose(one[1], two[1], rtol=1e-9, atol=0)
    # and the total agrees with svgpathtools' per-segment lengths to its own accuracy (reference library)
    from svgpathtools import CubicBezier

    sample = range(0, len(ctrl), 997)
    ref = np.array([CubicBezier(*(complex(x, y) for x, y in ctrl[i])).length() for i in sample])
    assert np.allclose(one[0][list(sample)], ref, rtol=1e-9, atol=0)
