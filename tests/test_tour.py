"""Cutting order: never worse than the file's order, near an exact tour on small jobs, holes first."""

import itertools

import numpy as np
import pytest

from pathlen.estimates import tour as tour_module
from pathlen.estimates.tour import plan_tour, tour_length

HOME = np.zeros(2)


def points_tour(p, parent=None):
    n = len(p)
    return plan_tour(p, p, np.ones(n, dtype=bool), np.full(n, -1) if parent is None else parent)


@pytest.mark.parametrize("seed", range(25))
def test_never_longer_than_file_order(seed):
    rng = np.random.default_rng(seed)
    p = rng.uniform(0, 500, (int(rng.integers(2, 60)), 2))
    t = points_tour(p)
    assert sorted(t.order.tolist()) == list(range(len(p)))
    assert t.rapid_length <= tour_length(p, np.arange(len(p)), HOME) + 1e-9
    assert t.rapid_length == pytest.approx(tour_length(p, t.order, HOME), rel=1e-12)


def test_close_to_exact_tour_on_small_jobs():
    # Reference: the exact shortest open tour from home, by brute force over all 7! orders.
    rng = np.random.default_rng(11)
    ratios = []
    for _ in range(40):
        p = rng.uniform(0, 100, (7, 2))
        exact = min(tour_length(p, np.array(perm), HOME) for perm in itertools.permutations(range(7)))
        ratios.append(points_tour(p).rapid_length / exact)
    assert min(ratios) >= 1 - 1e-12
    assert np.mean(ratios) <= 1.03
    assert max(ratios) <= 1.15


def nested_squares(n_parts, rng):
    """Parts with two holes each, listed outer profile first (the wrong order for cutting)."""
    starts, parent = [], []
    for _k in range(n_parts):
        x, y = rng.uniform(0, 2000, 2)
        base = len(starts)
        starts += [(x, y), (x + 5, y + 5), (x + 10, y + 5)]
        parent += [-1, base, base]
    return np.array(starts), np.array(parent)


@pytest.mark.parametrize("parts", [5, 2000])
def test_holes_before_their_part(parts):
    rng = np.random.default_rng(2)
    p, parent = nested_squares(parts, rng)
    t = points_tour(p, parent)
    pos = np.empty(len(p), dtype=int)
    pos[t.order] = np.arange(len(p))
    inner = parent >= 0
    assert np.all(pos[inner] < pos[parent[inner]])
    assert sorted(t.order.tolist()) == list(range(len(p)))


def test_open_contours_are_entered_at_the_nearer_end():
    start = np.array([[100.0, 0.0]])
    end = np.array([[1.0, 0.0]])
    t = plan_tour(start, end, np.array([False]), np.array([-1]))
    assert t.reverse[0] and t.rapid_length == pytest.approx(1.0)


def test_hilbert_start_is_a_permutation():
    rng = np.random.default_rng(5)
    p = rng.uniform(-50, 50, (3000, 2))
    order = tour_module._hilbert_order(p)
    assert sorted(order.tolist()) == list(range(3000))
    # a space-filling curve keeps neighbours near: far shorter than a random order
    assert tour_length(p, order, HOME) < 0.2 * tour_length(p, rng.permutation(3000), HOME)


def _greedy_orientation(start, end, closed, order, home):
    """The rule stated plainly, one contour after another: an open contour is cut from its nearer
    end (forwards on a tie); the head is left at its far end, a closed contour's at its start."""
    import math

    x, y = home[0], home[1]
    reverse, moves = np.zeros(len(start), dtype=bool), []
    for i in order:
        d_start = math.hypot(start[i][0] - x, start[i][1] - y)
        d_end = math.hypot(end[i][0] - x, end[i][1] - y)
        if not closed[i] and d_end < d_start:
            reverse[i] = True
            moves.append(d_end)
            x, y = start[i][0], start[i][1]
        else:
            moves.append(d_start)
            x, y = (start[i][0], start[i][1]) if closed[i] else (end[i][0], end[i][1])
    return reverse, np.array(moves)


@pytest.mark.parametrize("seed", range(40))
def test_orientation_of_runs_at_once_equals_one_after_another(seed):
    # runs of open contours between closed ones are decided a step at a time for all runs together;
    # integer points (every other seed) make ties, which must go forwards as in the plain loop
    rng = np.random.default_rng(seed)
    n = int(rng.integers(1, 80))
    points = (lambda k: rng.integers(0, 4, (k, 3)).astype(float)) if seed % 2 else (lambda k: rng.uniform(0, 9, (k, 3)))
    start, end, home = points(n), points(n), points(1)[0]
    closed = rng.random(n) < rng.random()
    order = rng.permutation(n)
    got = tour_module._orient(start, end, closed, order, home)
    reverse, moves = _greedy_orientation(start, end, closed, order.tolist(), home)
    assert np.array_equal(got.reverse, reverse)
    np.testing.assert_allclose(got.rapid_moves, moves, rtol=1e-15, atol=0)


@pytest.mark.parametrize("seed", range(30))
def test_disjoint_spans_found_at_once_equal_a_pass_in_order(seed):
    # the spans a pass in listed order keeps (each that meets none kept before it), found in rounds
    rng = np.random.default_rng(seed)
    count = int(rng.integers(0, 120))
    lo = rng.integers(0, 200, count)
    hi = lo + rng.integers(1, 1 + (8 if seed % 2 else 60), count)
    taken = np.zeros(400, dtype=bool)
    expected = []
    for k in range(count):
        if not taken[lo[k]:hi[k]].any():
            taken[lo[k]:hi[k]] = True
            expected.append(k)
    assert tour_module._first_come_disjoint(lo, hi).tolist() == expected
