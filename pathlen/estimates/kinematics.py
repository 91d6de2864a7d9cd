"""Machine motion: how long a sequence of moves takes with limited speed and acceleration.

Units: mm, s, mm/s, mm/s².  Each move has a length and a top speed; the machine starts and ends
every sequence at rest and changes speed at a constant acceleration ``a`` (trapezoidal profile:
accelerate, cruise, decelerate; triangular when the move is too short to reach its top speed).
Where two moves meet at a sharp corner, the speed is the one of an arc that rounds the corner
without leaving it by more than the corner tolerance, v = √(a·r) (:func:`corner_speed`); a forward
and a backward pass make every speed change reachable.
"""

from __future__ import annotations

import math

import numpy as np

from pathlen.geometry import FloatArray, IntArray


def move_times(length: FloatArray, top: FloatArray, accel: float, v_in: FloatArray, v_out: FloatArray) -> FloatArray:
    """Time of each move from speed ``v_in`` to ``v_out`` (both reachable within the move).

    Trapezoid: t = (V - v_in)/a + (V - v_out)/a + (L - d_acc - d_dec)/V with d = (V² - v²)/(2a);
    when d_acc + d_dec > L the peak is v_p = sqrt((2aL + v_in² + v_out²)/2) and
    t = (v_p - v_in)/a + (v_p - v_out)/a.  ``accel = inf`` gives L / V.
    """
    length, top = np.asarray(length, dtype=float), np.asarray(top, dtype=float)
    if math.isinf(accel):
        return np.divide(length, top, out=np.zeros_like(length), where=length > 0)
    v_in, v_out = np.asarray(v_in, dtype=float), np.asarray(v_out, dtype=float)
    d_acc = (top**2 - v_in**2) / (2 * accel)
    d_dec = (top**2 - v_out**2) / (2 * accel)
    cruise = d_acc + d_dec <= length
    peak = np.sqrt(np.maximum((2 * accel * length + v_in**2 + v_out**2) / 2, 0.0))
    v = np.where(cruise, top, np.minimum(peak, top))
    t = (v - v_in) / accel + (v - v_out) / accel
    with np.errstate(divide="ignore", invalid="ignore"):
        t += np.where(cruise, (length - d_acc - d_dec) / top, 0.0)
    return t


def corner_speed(d_in: FloatArray, d_out: FloatArray, accel: float, tolerance: float) -> FloatArray:
    """Highest speed through a corner from unit direction ``d_in`` to ``d_out``.

    The corner is taken as rounded by the arc tangent to both legs that passes ``tolerance`` (δ)
    from the corner point, cut at the speed whose centripetal acceleration is ``a``: v = √(a·r).
    With θ the angle between the reversed incoming and the outgoing direction (θ = 180° going
    straight on, 90° at a square corner, 0 on a reversal) the corner point lies r/sin(θ/2) from
    the arc's centre, so δ = r/sin(θ/2) − r and r = δ·sin(θ/2)/(1 − sin(θ/2)).  Straight on gives
    no limit (inf).
    """
    cos_theta = np.clip(-np.einsum("ij,ij->i", d_in, d_out), -1.0, 1.0)
    sin_half = np.sqrt(0.5 * (1.0 - cos_theta))
    with np.errstate(divide="ignore"):
        v2 = accel * tolerance * sin_half / (1.0 - sin_half)
    return np.where(sin_half >= 1.0 - 1e-12, np.inf, np.sqrt(v2))


def plan_speeds(length: list[float], top: list[float], corner: list[float], accel: float) -> list[float]:
    """Speeds at the n + 1 boundaries of n moves: zero at both ends, at most ``corner[k]`` between
    move k - 1 and move k (and each side's top speed), and reachable: |v²_k+1 - v²_k| <= 2 a L_k."""
    n = len(length)
    v = [0.0] * (n + 1)
    for k in range(1, n):
        v[k] = min(corner[k], top[k - 1], top[k])
    if math.isinf(accel):
        return v
    for k in range(n - 1, -1, -1):  # backward: able to slow down in time
        v[k] = min(v[k], math.sqrt(v[k + 1] ** 2 + 2 * accel * length[k]))
    for k in range(n):  # forward: able to speed up in time
        v[k + 1] = min(v[k + 1], math.sqrt(v[k] ** 2 + 2 * accel * length[k]))
    return v


def sequence_time(length: FloatArray, top: FloatArray, corner: FloatArray, accel: float) -> float:
    """Time (s) of moves cut one after another from rest to rest."""
    if len(length) == 0:
        return 0.0
    v = np.array(plan_speeds(list(length), list(top), list(corner), accel))
    return float(move_times(length, top, accel, v[:-1], v[1:]).sum())


def segmented_min_scan(x: FloatArray, first: IntArray, size: IntArray, reverse: bool = False) -> FloatArray:
    """Running minimum of ``x`` within each group (group k is ``x[first[k] : first[k] + size[k]]``),
    from the group's start (or, ``reverse``, from its end).  Groups of similar size are padded
    together (sizes rounded up to a power of two), so the work stays within twice the input."""
    out = np.empty_like(x)
    if len(x) == 0:
        return out
    bucket = np.ceil(np.log2(np.maximum(size, 1))).astype(np.int64)
    for b in np.unique(bucket).tolist():
        groups = np.flatnonzero(bucket == b)
        width = 1 << b
        idx = first[groups, None] + np.arange(width)[None, :]
        valid = np.arange(width)[None, :] < size[groups, None]
        block = np.where(valid, x[np.minimum(idx, len(x) - 1)], np.inf)
        if reverse:
            block = np.minimum.accumulate(block[:, ::-1], axis=1)[:, ::-1]
        else:
            block = np.minimum.accumulate(block, axis=1)
        out[idx[valid]] = block[valid]
    return out


def sequences_time(length: FloatArray, top: FloatArray, corner: FloatArray, first: IntArray, size: IntArray,
                   accel: float) -> FloatArray:
    """:func:`sequence_time` for many sequences at once (sequence k: moves ``first[k]`` to
    ``first[k] + size[k] - 1``), with the same speeds: in squared speeds the backward pass is
    w_k = min over j >= k of (c_j + P_j) - P_k and the forward pass u_k = min over j <= k of
    (w_j - P_j) + P_k, P the running sum of 2·a·L within the sequence, c the boundary limits."""
    n = len(length)
    groups = len(first)
    if n == 0:
        return np.zeros(groups)
    group = np.repeat(np.arange(groups), size)
    # boundaries: sequence k has size[k] + 1 of them, at move index + k
    b_first = first + np.arange(groups)
    b_size = size + 1
    nb = n + groups
    move_b = np.arange(n) + group  # the boundary before each move
    limit = np.full(nb, np.inf)
    limit[move_b] = np.minimum(corner, top)  # before move m: its corner and top
    limit[move_b[1:]] = np.minimum(limit[move_b[1:]], np.where(group[1:] == group[:-1], top[:-1], np.inf))
    limit[b_first] = 0.0  # from rest
    limit[b_first + size] = 0.0  # to rest
    c = limit**2
    if math.isinf(accel):
        v2 = c
    else:
        step = np.zeros(nb)
        step[move_b + 1] = 2.0 * accel * length  # P_{k+1} - P_k across move k
        p = np.cumsum(step)
        p = p - np.repeat(p[b_first], b_size)  # from the sequence's first boundary
        w = segmented_min_scan(c + p, b_first, b_size, reverse=True) - p
        v2 = segmented_min_scan(w - p, b_first, b_size) + p
    v = np.sqrt(np.maximum(v2, 0.0))
    t = move_times(length, top, accel, v[move_b], v[move_b + 1])
    return np.bincount(group, weights=t, minlength=groups)
