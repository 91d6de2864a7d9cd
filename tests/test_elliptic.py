"""Incomplete elliptic integrals from Carlson's symmetric forms (pathlen.measure.elliptic) against mpmath."""

import math

import mpmath
import numpy as np
import pytest

from pathlen.measure.closed_forms import elliptic_arc_lengths
from pathlen.measure.elliptic import carlson_rf_rd, incomplete_integrals

EPS = np.finfo(float).eps
#: mpmath works at 15 digits unless told: references are taken at 40 (a slim ellipse needs more than double)
REFERENCE_DIGITS = 40
#: elliptic_arc_lengths' error bound allows 16 EPS of rounding in each E value it takes
BOUND_ULPS = 16.0


def _angles_and_parameters(seed: int) -> tuple[np.ndarray, np.ndarray]:
    rng = np.random.default_rng(seed)
    phi = np.concatenate([rng.uniform(-20, 20, 300), rng.uniform(-1.6, 1.6, 200),
                          [0.1, math.pi / 2, -math.pi / 2, math.pi, 1e-9, 3 * math.pi / 2, -2.5 * math.pi]])
    m = np.concatenate([rng.uniform(0, 1, 170), 1 - 10.0 ** -rng.uniform(1, 15, 170),  # slim ellipses
                        10.0 ** -rng.uniform(1, 15, 160), [0.5, 0.9, 0.99, 1 - 1e-12, 0.3, 1 - 1e-15, 0.7]])
    return phi, m


def test_incomplete_integrals_match_mpmath_to_a_few_ulps():
    # Reference: mpmath.ellipe(phi, m) and mpmath.ellipf(phi, m) (same parameter convention, m = k^2),
    # evaluated in arbitrary precision at the same double inputs.
    phi, m = _angles_and_parameters(1)
    e, f = incomplete_integrals(phi, m)
    worst_e = worst_f = 0.0
    for p, mm, ee, ff in zip(phi.tolist(), m.tolist(), e.tolist(), f.tolist(), strict=True):
        with mpmath.workdps(REFERENCE_DIGITS):
            ref_e, ref_f = mpmath.ellipe(p, mm), mpmath.ellipf(p, mm)
        if ref_e != 0:
            worst_e = max(worst_e, float(abs((ee - ref_e) / ref_e)) / EPS)
        if ref_f != 0:
            # F grows as 1/sqrt(1 - m sin^2) near a vertex of a slim ellipse: the rounding of phi itself
            # (and of phi - j pi) moves it by up to |phi| EPS / sqrt(1 - m sin^2 phi) (scipy's ellipkinc too)
            slope = 1.0 / math.sqrt(max(1.0 - mm * math.sin(p) ** 2, 1e-300))
            allowed = BOUND_ULPS + 4.0 * abs(p) * slope / float(abs(ref_f))
            worst_f = max(worst_f, float(abs((ff - ref_f) / ref_f)) / EPS / allowed * BOUND_ULPS)
    assert worst_e <= BOUND_ULPS
    assert worst_f <= BOUND_ULPS


def test_limits_at_m_zero_and_one():
    # m = 0: E = F = phi; m = 1: E(phi|1) = sin(phi) within a quarter turn, 2 per half turn beyond
    # (DLMF 19.6.8: E(phi, 1) = sin phi), F(phi|1) = atanh(sin phi) (DLMF 19.6.8: F(phi, 1) = gd^-1(phi)).
    phi = np.array([0.3, -1.2, 1.5, 4.0])
    e, f = incomplete_integrals(phi, np.zeros(4))
    assert np.allclose(e, phi, rtol=4 * EPS, atol=0) and np.allclose(f, phi, rtol=4 * EPS, atol=0)
    e, f = incomplete_integrals(phi, np.ones(4))
    assert np.allclose(e[:3], np.sin(phi[:3]), rtol=4 * EPS, atol=0)
    assert e[3] == pytest.approx(2.0 + math.sin(4.0 - math.pi), rel=4 * EPS)
    assert np.allclose(f[:3], np.arctanh(np.sin(phi[:3])), rtol=8 * EPS, atol=0)
    assert f[3] == math.inf


def test_carlson_forms_match_mpmath_and_carlsons_table():
    # Reference values: B. C. Carlson, Numerical Algorithms 10 (1995), section 3 test values
    # R_F(1, 2, 0) = 1.3110287771461, R_D(0, 2, 1) = 1.7972103521034; and mpmath.elliprf / elliprd.
    rf, rd = carlson_rf_rd(np.array([1.0, 0.0]), np.array([2.0, 2.0]), np.array([0.0 + 1e-300, 1.0]))
    assert rf[0] == pytest.approx(1.3110287771461, rel=1e-12)
    assert rd[1] == pytest.approx(1.7972103521034, rel=1e-12)
    rng = np.random.default_rng(3)
    x, y, z = rng.uniform(0, 10, 200), rng.uniform(1e-6, 10, 200), rng.uniform(1e-3, 10, 200)
    x[:20] = 0.0
    rf, rd = carlson_rf_rd(x, y, z)
    for a, b, c, got_f, got_d in zip(x.tolist(), y.tolist(), z.tolist(), rf.tolist(), rd.tolist(), strict=True):
        with mpmath.workdps(REFERENCE_DIGITS):
            ref_f, ref_d = mpmath.elliprf(a, b, c), mpmath.elliprd(a, b, c)
        assert float(abs(got_f - ref_f) / ref_f) <= 8 * EPS
        assert float(abs(got_d - ref_d) / ref_d) <= 8 * EPS


@pytest.mark.parametrize(("a", "b"), [(5.0, 3.0), (100.0, 1.0), (1.0, 1e-6), (7.0, 7.0)])
def test_ellipse_perimeter_is_the_complete_integral(a, b):
    # Classical result: an ellipse's perimeter is 4 a E(m), m = 1 - b^2/a^2 (mpmath.ellipe as reference).
    u, v = np.array([[a, 0.0, 0.0]]), np.array([[0.0, b, 0.0]])
    length, bound = elliptic_arc_lengths(u, v, np.array([0.0]), np.array([2 * math.pi]))
    with mpmath.workdps(REFERENCE_DIGITS):
        exact = 4 * a * mpmath.ellipe(1 - (mpmath.mpf(b) / a) ** 2)
    assert abs(float(length[0] - exact)) <= max(float(bound[0]), 1e-300)
    assert float(abs(length[0] - exact) / exact) <= 1e-14
