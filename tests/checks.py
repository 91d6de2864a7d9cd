"""Assertions shared by the measurement tests."""

import mpmath as mp
import numpy as np


def assert_bound_holds(values, bounds, ctrl, refs, rtol):
    """Each reported bound is never below the true error (``refs``: mpmath lengths) and meets the
    tolerance, plus the rounding of far-away coordinates."""
    for i, c in enumerate(ctrl):
        err = abs(mp.mpf(values[i]) - refs[i])
        assert err <= bounds[i], (i, float(err), bounds[i])
        assert bounds[i] <= rtol * refs[i] + 64 * np.finfo(float).eps * np.abs(c).max(), i
