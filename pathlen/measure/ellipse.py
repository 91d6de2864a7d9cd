"""Elliptic arc lengths: closed form, with quadrature where it is ill-conditioned."""

from __future__ import annotations

import numpy as np

from pathlen.geometry import EllipticArcs, FloatArray, IntArray
from pathlen.measure.closed_forms import ellipse_frame, elliptic_arc_lengths
from pathlen.measure.quadrature import graded_splits, integrate_speed, split_intervals


class ArcSpeed:
    """Speed of ``c + u cos t + v sin t`` on a unit parameter ``s``, ``t = t0 + s·span``."""

    def __init__(self, u: FloatArray, v: FloatArray, t0: FloatArray, span: FloatArray) -> None:
        self.u, self.v, self.t0, self.span = u, v, t0, span

    def __call__(self, rows: IntArray, s: FloatArray) -> FloatArray:
        t = self.t0[rows, None] + s * self.span[rows, None]
        sin, cos = np.sin(t), np.cos(t)
        acc = None
        for i in range(3):
            x = -self.u[rows, i, None] * sin + self.v[rows, i, None] * cos
            acc = x * x if acc is None else acc + x * x
        return np.sqrt(acc) * self.span[rows, None]


def arc_lengths(arcs: EllipticArcs, rtol: float) -> tuple[FloatArray, FloatArray, int]:
    """Length and error bound of every arc; count of unconverged intervals.

    Arcs whose closed-form bound exceeds half of ``rtol`` (short arcs of slim
    ellipses near a major-axis vertex) are integrated numerically instead.
    """
    length, bound = elliptic_arc_lengths(arcs.u, arcs.v, arcs.t0, arcs.t1)
    bad = ~(bound <= 0.5 * rtol * np.abs(length))
    bad &= arcs.t1 > arcs.t0
    idx = np.nonzero(bad)[0]
    if len(idx) == 0:
        return length, bound, 0
    u, v, t0 = arcs.u[idx], arcs.v[idx], arcs.t0[idx]
    span = arcs.t1[idx] - t0
    speed = ArcSpeed(u, v, t0, span)
    n = len(idx)
    _, _, tau = ellipse_frame(u, v)
    # speed minima (major-axis vertices) at t = tau + pi/2 + k·pi, mapped to s in (0, 1)
    first = np.ceil((t0 - tau - np.pi / 2) / np.pi)
    count = np.floor((t0 + span - tau - np.pi / 2) / np.pi) - first + 1
    k_max = int(max(np.max(count), 0))
    mr = np.repeat(np.arange(n), k_max)
    ks = np.tile(np.arange(k_max), n)
    mt = (tau[mr] + np.pi / 2 + (first[mr] + ks) * np.pi - t0[mr]) / span[mr]
    a, _, _ = ellipse_frame(u, v)
    gr, gt, unseen = graded_splits(speed, mr, mt, rtol, a * span)
    rows, lo, hi = split_intervals(n, gr, gt)
    result = integrate_speed(speed, n, rows, lo, hi, np.zeros(n), rtol)
    # rounding of t = t0 + s·span shifts the ends by ~eps·|t|: bound it by the
    # largest speed on the arc (a, where a minor-axis vertex t = tau + k·pi lies inside)
    ends = speed(np.arange(n), np.tile([0.0, 1.0], (n, 1))) / span[:, None]
    hump = np.floor((t0 + span - tau) / np.pi) >= np.ceil((t0 - tau) / np.pi)
    top = np.where(hump, a, np.max(ends, axis=1))
    length[idx] = result.value
    bound[idx] = result.bound + unseen + 16 * np.finfo(float).eps * top * (span + np.abs(t0))
    return length, bound, result.unconverged
