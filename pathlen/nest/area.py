"""Exact areas of closed contours by Green's theorem on the segments themselves.

Conventions: coordinates in mm, areas in mm²; the signed area of a closed contour is
½∮(x dy − y dx) along its cutting order, positive counter-clockwise in the drawing's axes.
Each segment contributes ½∫ B(t) × B′(t) dt over its parameter range (× is the 2-D cross product):

* line p0 → p1: ½ p0 × p1;
* elliptic arc c + u cos t + v sin t on [t0, t1]: ½[c × (P(t1) − P(t0)) + (u × v)(t1 − t0)]
  (expand B × B′; cos² + sin² = 1);
* polynomial Bézier of degree d: B × B′ has degree 2d − 1, so d-point Gauss–Legendre is exact;
* rational Bézier: composite Gauss–Legendre, 16 points on 8 and on 16 pieces; the difference of the
  two is returned as the bound (the integrand is analytic on [0, 1] for positive weights).
"""

from __future__ import annotations

from math import comb

import numpy as np
from numpy.typing import NDArray

from pathlen.geometry import Beziers, FloatArray, IntArray
from pathlen.segments import SegmentTable


def _cross(a: FloatArray, b: FloatArray) -> FloatArray:
    return a[..., 0] * b[..., 1] - a[..., 1] * b[..., 0]


def segment_areas(table: SegmentTable) -> tuple[FloatArray, FloatArray]:
    """Per table row, the signed area term ½∫ B × B′ dt along the parametrisation (mm²) and a bound
    on its error (mm²; zero where the form is closed)."""
    d = table.drawing
    lines, arcs = d.lines, d.arcs
    parts = [0.5 * _cross(lines.p0, lines.p1)]
    bounds = [np.zeros(len(lines))]
    if len(arcs):
        c = arcs.center
        p0, p1 = arcs.points(arcs.t0), arcs.points(arcs.t1)
        parts.append(0.5 * (_cross(c, p1 - p0) + _cross(arcs.u, arcs.v) * (arcs.t1 - arcs.t0)))
    else:
        parts.append(np.zeros(0))
    bounds.append(np.zeros(len(arcs)))
    for degree in sorted(d.beziers):
        area, bound = _bezier_areas(d.beziers[degree])
        parts.append(area)
        bounds.append(bound)
    return np.concatenate(parts), np.concatenate(bounds)


def contour_area(terms: FloatArray, bounds: FloatArray, rows: IntArray, forward: NDArray[np.bool_]
                 ) -> tuple[float, float]:
    """Signed area (mm²) of a closed contour given by its rows and directions, and its bound."""
    sign = np.where(forward, 1.0, -1.0)
    return float(np.sum(sign * terms[rows])), float(np.sum(bounds[rows]))


def _bezier_areas(b: Beziers) -> tuple[FloatArray, FloatArray]:
    n = len(b)
    if n == 0:
        return np.zeros(0), np.zeros(0)
    rational = b.rational_rows()
    area, bound = np.zeros(n), np.zeros(n)
    poly = np.flatnonzero(~rational)
    if len(poly):
        # shift to the first control point: the integrand then has no large cancelling terms, and the
        # terms the shift adds, ½ o × (B(1) − B(0)), are exact
        origin = b.ctrl[poly, 0, :2]
        ctrl = b.ctrl[poly, :, :2] - origin[:, None]
        nodes, weights = np.polynomial.legendre.leggauss(max(b.degree, 1))
        area[poly] = _integrate(ctrl, b.weights[poly], (nodes + 1) / 2, weights / 2)
        area[poly] += 0.5 * _cross(origin, b.ctrl[poly, -1, :2] - b.ctrl[poly, 0, :2])
    rat = np.flatnonzero(rational)
    if len(rat):
        origin = b.ctrl[rat, 0, :2]
        ctrl = b.ctrl[rat, :, :2] - origin[:, None]
        coarse = _integrate(ctrl, b.weights[rat], *_composite(8))
        fine = _integrate(ctrl, b.weights[rat], *_composite(16))
        area[rat] = fine + 0.5 * _cross(origin, b.ctrl[rat, -1, :2] - b.ctrl[rat, 0, :2])
        bound[rat] = np.abs(fine - coarse) + 1e-15 * np.abs(fine)
    return area, bound


def _composite(pieces: int, points: int = 16) -> tuple[FloatArray, FloatArray]:
    x, w = np.polynomial.legendre.leggauss(points)
    left = np.arange(pieces)[:, None] / pieces
    t = (left + (x[None, :] + 1) / (2 * pieces)).ravel()
    return t, np.tile(w / (2 * pieces), pieces)


def _integrate(ctrl: FloatArray, weights: FloatArray, t: FloatArray, w: FloatArray) -> FloatArray:
    """½ Σ w_j B(t_j) × B′(t_j) for (rational) Béziers ``ctrl[n, d+1, 2]``."""
    d = ctrl.shape[1] - 1
    basis = np.stack([comb(d, i) * t**i * (1 - t) ** (d - i) for i in range(d + 1)], axis=1)  # [m, d+1]
    dbasis = np.stack([comb(d, i) * (i * t ** max(i - 1, 0) * (1 - t) ** (d - i)
                                     - (d - i) * t**i * (1 - t) ** max(d - i - 1, 0)) for i in range(d + 1)], axis=1)
    wb = basis[None] * weights[:, None, :]  # [n, m, d+1]
    wdb = dbasis[None] * weights[:, None, :]
    num, dnum = wb @ ctrl, wdb @ ctrl  # [n, m, 2]
    den, dden = wb.sum(axis=2), wdb.sum(axis=2)
    p = num / den[..., None]
    dp = (dnum * den[..., None] - num * dden[..., None]) / (den * den)[..., None]
    return 0.5 * np.einsum("nm,m->n", _cross(p, dp), w)
