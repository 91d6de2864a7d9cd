"""Closed forms against classical results and mpmath."""

import math

import mpmath as mp
import numpy as np
import pytest

from pathlen.geometry import EllipticArcs
from pathlen.measure.closed_forms import (
    ellipse_frame,
    elliptic_arc_lengths,
    line_lengths,
    quadratic_bezier_lengths,
)
from pathlen.measure.ellipse import arc_lengths
from tests.reference import bezier_length, ellipse_arc_length


def test_line_is_euclidean_distance():
    # Pythagoras: the 3-4-5 and 1-2-2 triangles
    p0 = np.array([[0.0, 0, 0], [1, 1, 1]])
    p1 = np.array([[3.0, 4, 0], [2, 3, 3]])
    length, bound = line_lengths(p0, p1)
    assert length.tolist() == [5.0, 3.0]
    assert np.all(bound < 1e-14)


@pytest.mark.parametrize("r", [1e-3, 1.0, 250.0, 1e6])
def test_full_circle_is_two_pi_r(r):
    # classical result: circumference 2·pi·r
    arcs = EllipticArcs(np.zeros((1, 3)), np.array([[r, 0, 0]]), np.array([[0, r, 0]]),
                        np.array([0.0]), np.array([2 * math.pi]), np.zeros(1, dtype=np.int64))
    length, bound, _ = arc_lengths(arcs, 1e-12)
    assert abs(length[0] - 2 * math.pi * r) <= max(bound[0], 4e-16 * r)
    assert bound[0] <= 1e-12 * length[0]


@pytest.mark.parametrize(("a", "b"), [(3.0, 2.0), (10.0, 0.1), (1.0, 1e-4), (5.0, 4.999)])
def test_ellipse_perimeter_matches_complete_elliptic_integral(a, b):
    # perimeter = 4·a·E(m), m = 1 - b²/a² (mpmath.ellipe takes the parameter m)
    mp.mp.dps = 30
    exact = 4 * mp.mpf(a) * mp.ellipe(1 - mp.mpf(b) ** 2 / mp.mpf(a) ** 2)
    arcs = EllipticArcs(np.zeros((1, 3)), np.array([[a, 0, 0]]), np.array([[0, b, 0]]),
                        np.array([0.0]), np.array([2 * math.pi]), np.zeros(1, dtype=np.int64))
    length, bound, _ = arc_lengths(arcs, 1e-9)
    err = abs(mp.mpf(length[0]) - exact)
    assert err <= bound[0] <= 1e-9 * exact
    # Ramanujan's second approximation: a sanity check whose relative error is
    # about 3·h⁵/2¹⁷ for h = ((a-b)/(a+b))² (so tiny for moderate eccentricity)
    h = ((a - b) / (a + b)) ** 2
    ramanujan = math.pi * (a + b) * (1 + 3 * h / (10 + math.sqrt(4 - 3 * h)))
    assert abs(ramanujan - length[0]) / length[0] < 1e-4 + 1e-3 * h**4


def test_elliptic_frame_finds_principal_axes():
    # conjugate diameters of the ellipse with semi-axes 5 and 2 rotated by 30 degrees
    c, s = math.cos(math.pi / 6), math.sin(math.pi / 6)
    e1, e2 = np.array([c, s, 0]), np.array([-s, c, 0])
    t = 0.7
    u = 5 * math.cos(t) * e1 + 2 * math.sin(t) * e2
    v = -5 * math.sin(t) * e1 + 2 * math.cos(t) * e2
    a, m, _ = ellipse_frame(u[None], v[None])
    assert a[0] == pytest.approx(5.0, rel=1e-14)
    assert m[0] == pytest.approx(1 - 4 / 25, rel=1e-14)


def test_elliptic_arcs_against_mpmath_including_ill_conditioned():
    rng = np.random.default_rng(7)
    n = 40
    u = rng.normal(size=(n, 3))
    v = rng.normal(size=(n, 3))
    t0 = rng.uniform(-7, 7, n)
    t1 = t0 + rng.uniform(0, 7, n)
    v[:10] *= 1e-6  # slim ellipses (e close to 1)
    v[20:40] *= 1e-6
    _, _, tau = ellipse_frame(u, v)
    # short arcs straddling a major-axis vertex of a slim ellipse: differences of
    # nearly equal incomplete integrals, handed to quadrature
    t0[20:40] = tau[20:40] + math.pi / 2 + rng.uniform(-1e-3, 1e-3, 20)
    t1[20:40] = t0[20:40] + rng.uniform(1e-6, 2e-3, 20)
    arcs = EllipticArcs(np.zeros((n, 3)), u, v, t0, t1, np.arange(n))
    # the ill-conditioned rows are recomputed, so the second tuple must differ from the first
    closed, closed_bound = elliptic_arc_lengths(u, v, t0, t1)
    assert np.any(closed_bound[20:40] > 1e-9 * closed[20:40])
    length, bound, unconverged = arc_lengths(arcs, 1e-9)
    assert unconverged == 0
    for i in range(n):
        ref = ellipse_arc_length(u[i], v[i], t0[i], t1[i])
        err = abs(mp.mpf(length[i]) - ref)
        assert err <= bound[i], i
        assert bound[i] <= 1.0001e-9 * ref, i


def test_quadratic_bezier_against_mpmath():
    rng = np.random.default_rng(11)
    cases = list(rng.normal(size=(16, 3, 3)))
    cases += [
        np.array([[0, 0, 0], [1, 0, 0], [2, 0, 0.0]]),  # straight, uniform speed
        np.array([[0, 0, 0], [2, 0, 0], [1, 0, 0.0]]),  # folds back on itself (cusp)
        np.array([[0, 0, 0], [1, 1e-9, 0], [2, 0, 0.0]]),  # almost straight
        np.array([[1e6, 1e6, 0], [1e6 + 1e-3, 1e6, 0], [1e6 + 2.0001e-3, 1e6 + 1e-9, 0]]),  # tiny, far away
        np.array([[0, 0, 0], [0, 0, 0], [0, 0, 0.0]]),  # a point
    ]
    ctrl = np.array(cases)
    length, bound = quadratic_bezier_lengths(ctrl)
    for i, c in enumerate(ctrl):
        ref = bezier_length(c)
        assert abs(mp.mpf(length[i]) - ref) <= bound[i] + 1e-300, i
        assert bound[i] <= 1e-13 * ref + 1e-300, i
