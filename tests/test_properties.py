"""Arc length is a geometric invariant (property tests with hypothesis)."""

import math

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from pathlen.geometry import Beziers, EllipticArcs
from pathlen.measure.bezier import bezier_lengths
from pathlen.measure.ellipse import arc_lengths

coord = st.floats(-100, 100, allow_nan=False, allow_infinity=False)
cubic = st.lists(st.tuples(coord, coord, coord), min_size=4, max_size=4).map(lambda p: np.array(p, dtype=float))


def length_of(ctrl, weights=None):
    ctrl = np.asarray(ctrl, dtype=float)[None]
    w = np.ones(ctrl.shape[:2]) if weights is None else np.asarray(weights, dtype=float)[None]
    length, bound, _ = bezier_lengths(Beziers(ctrl, w, np.zeros(1, dtype=np.int64)), 1e-10)
    return length[0], bound[0]


def close(a, b, scale):
    (la, ba), (lb, bb) = a, b
    return abs(la - lb) <= ba + bb + 1e-12 * scale


def split(ctrl, t):
    """De Casteljau subdivision at t (a textbook construction)."""
    left, right, pts = [ctrl[0]], [ctrl[-1]], ctrl
    while len(pts) > 1:
        pts = (1 - t) * pts[:-1] + t * pts[1:]
        left.append(pts[0])
        right.append(pts[-1])
    return np.array(left), np.array(right[::-1])


@settings(max_examples=60, deadline=None)
@given(cubic, st.floats(0, 2 * math.pi), st.tuples(coord, coord, coord))
def test_rigid_motion_keeps_length(ctrl, angle, shift):
    c, s = math.cos(angle), math.sin(angle)
    rot = np.array([[c, -s, 0], [s, c, 0], [0, 0, 1]])
    moved = ctrl @ rot.T + np.array(shift)
    assert close(length_of(ctrl), length_of(moved), 1 + np.abs(moved).max())


@settings(max_examples=60, deadline=None)
@given(cubic, st.sampled_from([0.001, 0.5, 3.0, 1024.0]))
def test_uniform_scale_scales_length(ctrl, k):
    la, ba = length_of(ctrl)
    lb, bb = length_of(ctrl * k)
    assert abs(lb - k * la) <= bb + k * ba + 1e-12 * k * (1 + np.abs(ctrl).max())


@settings(max_examples=60, deadline=None)
@given(cubic, st.floats(0.01, 0.99))
def test_length_adds_under_splitting(ctrl, t):
    left, right = split(ctrl, t)
    whole = length_of(ctrl)
    a, b = length_of(left), length_of(right)
    assert close(whole, (a[0] + b[0], a[1] + b[1]), 1 + np.abs(ctrl).max())


@settings(max_examples=60, deadline=None)
@given(cubic)
def test_reversal_and_degree_elevation_keep_length(ctrl):
    assert close(length_of(ctrl), length_of(ctrl[::-1]), 1 + np.abs(ctrl).max())
    # degree elevation: the same curve written as a quartic (a different representation)
    n = 3
    q = [ctrl[0]] + [(i / (n + 1)) * ctrl[i - 1] + (1 - i / (n + 1)) * ctrl[i] for i in range(1, n + 1)] + [ctrl[-1]]
    assert close(length_of(ctrl), length_of(np.array(q)), 1 + np.abs(ctrl).max())


@settings(max_examples=40, deadline=None)
@given(cubic, st.floats(0.2, 5.0))
def test_rational_reparametrisation_keeps_length(ctrl, r):
    # weights (1, r, r², r³) reparametrise a polynomial cubic without changing its trace
    la = length_of(ctrl)
    lb = length_of(ctrl, [1, r, r * r, r**3])
    assert close(la, lb, 1 + np.abs(ctrl).max())


@settings(max_examples=40, deadline=None)
@given(st.floats(0.1, 50), st.floats(0.1, 50), st.floats(-10, 10), st.floats(0.01, 6.2), st.floats(0, 2 * math.pi))
def test_elliptic_arc_under_rotation_and_parameter_shift(a, b, t0, span, angle):
    # rotating the conjugate pair (u, v) -> (u cos φ + v sin φ, -u sin φ + v cos φ) shifts the parameter by φ
    u = np.array([[a, 0.0, 0.0]])
    v = np.array([[0.0, b, 0.0]])
    c, s = math.cos(angle), math.sin(angle)
    u2, v2 = u * c + v * s, -u * s + v * c
    ent = np.zeros(1, dtype=np.int64)
    one = arc_lengths(EllipticArcs(np.zeros((1, 3)), u, v, np.array([t0]), np.array([t0 + span]), ent), 1e-10)
    two = arc_lengths(EllipticArcs(np.zeros((1, 3)), u2, v2, np.array([t0 - angle]),
                                   np.array([t0 - angle + span]), ent), 1e-10)
    assert abs(one[0][0] - two[0][0]) <= one[1][0] + two[1][0] + 1e-13 * (a + b)
