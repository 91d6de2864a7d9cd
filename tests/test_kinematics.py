"""Motion model against closed-form kinematics and the corner speed of an arc within a tolerance."""

import math

import numpy as np
import pytest

from pathlen.estimates.kinematics import corner_speed, move_times, plan_speeds, sequence_time


def test_trapezoid_from_rest_to_rest():
    # Standard kinematics: with L >= v²/a the move reaches v: t = L/v + v/a.
    length, v, a = 100.0, 50.0, 500.0
    assert move_times(np.array([length]), np.array([v]), a, np.zeros(1), np.zeros(1))[0] == pytest.approx(
        length / v + v / a, rel=1e-14)


def test_triangle_when_top_speed_is_not_reached():
    # Standard kinematics: L < v²/a never reaches v: t = 2 sqrt(L/a).
    length, v, a = 1.0, 50.0, 500.0
    assert move_times(np.array([length]), np.array([v]), a, np.zeros(1), np.zeros(1))[0] == pytest.approx(
        2 * math.sqrt(length / a), rel=1e-14)


def test_entry_and_exit_speeds():
    # By hand: v_in 10, V 20, v_out 0, a 100, L 10: accelerate 1.5 mm in 0.1 s, brake 2 mm in 0.2 s,
    # cruise 6.5 mm in 0.325 s -> 0.625 s.
    t = move_times(np.array([10.0]), np.array([20.0]), 100.0, np.array([10.0]), np.array([0.0]))[0]
    assert t == pytest.approx(0.625, rel=1e-14)


def test_infinite_acceleration_is_length_over_speed():
    t = move_times(np.array([30.0, 0.0]), np.array([15.0, 15.0]), math.inf, np.zeros(2), np.zeros(2))
    assert t.tolist() == [2.0, 0.0]


@pytest.mark.parametrize(("turn_deg", "factor"), [(90, 1 + math.sqrt(2)), (0, math.inf), (180, 0.0)])
def test_corner_speed_of_the_rounding_arc(turn_deg, factor):
    # Elementary geometry: the arc tangent to both legs passing δ from the corner point has radius
    # r = δ sin(θ/2)/(1 - sin(θ/2)); centripetal acceleration a at speed v on it: v² = a r,
    # θ between the reversed incoming and the outgoing direction: a square corner (θ = 90°) gives
    # sin 45° / (1 - sin 45°) = 1 + √2; straight on no limit; a reversal stops.
    a, delta = 2000.0, 0.05
    t = math.radians(turn_deg)
    v = corner_speed(np.array([[1.0, 0, 0]]), np.array([[math.cos(t), math.sin(t), 0]]), a, delta)[0]
    assert v == pytest.approx(math.sqrt(a * delta * factor), abs=1e-9) if math.isfinite(factor) else v == math.inf


def test_square_contour_by_hand():
    # A square of side s cut from rest to rest: three inside corners at v_c = sqrt(a δ (1 + √2)) (the
    # rounding arc at 90°), each side a trapezoid between its end speeds (standard kinematics), computed here
    # independently of the module.
    s, feed, a, delta = 50.0, 40.0, 1000.0, 0.05
    vc = math.sqrt(a * delta * (1 + math.sqrt(2)))
    assert vc < feed

    def side(v0, v1):
        d_acc, d_dec = (feed**2 - v0**2) / (2 * a), (feed**2 - v1**2) / (2 * a)
        return (feed - v0) / a + (feed - v1) / a + (s - d_acc - d_dec) / feed

    expected = side(0, vc) + side(vc, vc) + side(vc, vc) + side(vc, 0)
    dirs = np.array([[1.0, 0, 0], [0, 1.0, 0], [-1.0, 0, 0], [0, -1.0, 0]])
    corner = np.r_[math.inf, corner_speed(dirs[:-1], dirs[1:], a, delta)]
    assert sequence_time(np.full(4, s), np.full(4, feed), corner, a) == pytest.approx(expected, rel=1e-12)


def test_planned_speeds_are_reachable():
    # Short moves between fast corners: every speed change must fit the move (|Δv²| <= 2 a L).
    rng = np.random.default_rng(3)
    length = rng.uniform(0.01, 5, 200).tolist()
    top = rng.uniform(5, 100, 200).tolist()
    corner = rng.uniform(0, 200, 200).tolist()
    a = 800.0
    v = np.array(plan_speeds(length, top, corner, a))
    assert v[0] == 0 and v[-1] == 0
    assert np.all(np.abs(np.diff(v**2)) <= 2 * a * np.array(length) * (1 + 1e-12))
    assert np.all(v[1:-1] <= np.minimum(np.minimum(top[:-1], top[1:]), corner[1:]) + 1e-12)


@pytest.mark.parametrize("accel", [500.0, 5000.0, math.inf])
def test_batched_planner_gives_the_sequential_planners_times(accel):
    # the batched min-plus scans against the plain forward/backward passes, sequence by sequence
    from pathlen.estimates.kinematics import sequences_time

    rng = np.random.default_rng(0)
    sizes = rng.integers(0, 40, 400)
    sizes[[3, 7]] = [1, 300]
    first = np.r_[0, np.cumsum(sizes)[:-1]]
    n = int(sizes.sum())
    length = rng.uniform(0.01, 50, n)
    top = rng.uniform(10, 100, n)
    corner = np.where(rng.random(n) < 0.5, np.inf, rng.uniform(0, 60, n))
    got = sequences_time(length, top, corner, first, sizes, accel)
    want = [sequence_time(length[f:f + k], top[f:f + k], corner[f:f + k], accel)
            for f, k in zip(first, sizes, strict=True)]
    assert got == pytest.approx(want, rel=1e-12, abs=1e-12)
