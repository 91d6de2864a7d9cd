"""Segments as drawing commands, curves kept as curves: SVG path data and matplotlib path pieces.

SVG: lines ``L``, elliptic arcs ``A`` (principal axes from the SVD of the arc's conjugate semi-diameters;
in pieces of at most a quarter turn), quadratic and cubic Béziers ``Q``/``C``, exactly.  Rational and
higher-degree pieces, which SVG cannot hold, are drawn as 8 cubic pieces each matching the curve's
points and tangents at their ends (a picture: lengths always come from ``measure``).  matplotlib draws
the same Béziers natively and arcs as cubic pieces of at most 90°.  Units: mm, the drawing's axes.
"""

from __future__ import annotations

import itertools
import math

import numpy as np

from pathlen.geometry import Beziers, Drawing, EllipticArcs, FloatArray

#: Cubic pieces for a rational or higher-degree Bézier.
APPROX_PIECES = 8


def _f(x: float) -> str:
    return f"{x:.6f}".rstrip("0").rstrip(".") if abs(x) < 1e15 else f"{x:.6e}"


def _pt(p: FloatArray) -> str:
    return f"{_f(float(p[0]))} {_f(float(p[1]))}"


def conic_arc(ctrl: FloatArray, weights: FloatArray) -> tuple[FloatArray, ...] | None:
    """A rational quadratic Bézier that is an elliptic arc (normalised middle weight w < 1) as
    ``(c, u, v, t0, t1)``: with M the chord's middle, the centre is (M − w²P1)/(1 − w²), the arc runs
    from −α to α with cos α = w, u = (M − c)/w and v = half the chord / sin α (the conic's standard
    form: the same points exactly).  None for parabolas and hyperbolas (w >= 1)."""
    w = float(weights[1] / math.sqrt(weights[0] * weights[2]))
    if not 0.0 < w < 1.0:
        return None
    p0, p1, p2 = ctrl[0], ctrl[1], ctrl[2]
    mid = 0.5 * (p0 + p2)
    c = (mid - w * w * p1) / (1.0 - w * w)
    alpha = math.acos(w)
    u = (mid - c) / w
    v = 0.5 * (p2 - p0) / math.sin(alpha)
    return c, u, v, -alpha, alpha


def arc_svg(arcs: EllipticArcs, k: int) -> str:
    """One elliptic arc as ``M ... A ...`` (two ``A`` for a whole turn)."""
    return _arc_svg(arcs.center[k, :2], arcs.u[k, :2], arcs.v[k, :2], float(arcs.t0[k]), float(arcs.t1[k]))


def _arc_svg(c: FloatArray, u: FloatArray, v: FloatArray, t0: float, t1: float) -> str:
    m = np.stack([u, v], axis=1)
    left, sv, _ = np.linalg.svd(m)
    rx, ry = float(sv[0]), float(sv[1])
    phi = math.degrees(math.atan2(left[1, 0], left[0, 0]))
    sweep = 1 if np.linalg.det(m) > 0 else 0

    def at(t: float) -> FloatArray:
        return c + u * math.cos(t) + v * math.sin(t)

    if rx <= 0 or ry <= 1e-12 * rx:
        return f"M {_pt(at(t0))} L {_pt(at(t1))}"
    # pieces of at most a quarter turn: an SVG arc through two ends of a diameter (a half turn) is
    # ill-conditioned (its centre swings with the last digit of the end points)
    n = max(1, math.ceil((t1 - t0) / (math.pi / 2) - 1e-9))
    steps = [t0 + (t1 - t0) * j / n for j in range(n + 1)]
    out = [f"M {_pt(at(t0))}"]
    for _, b in itertools.pairwise(steps):
        out.append(f"A {_f(rx)} {_f(ry)} {_f(phi)} 0 {sweep} {_pt(at(b))}")
    return " ".join(out)


def bezier_svg(b: Beziers, k: int) -> str:
    ctrl = b.ctrl[k, :, :2]
    rational = bool(np.any(b.weights[k] != b.weights[k, 0]))
    if not rational and b.degree == 2:
        return f"M {_pt(ctrl[0])} Q {_pt(ctrl[1])} {_pt(ctrl[2])}"
    if not rational and b.degree == 3:
        return f"M {_pt(ctrl[0])} C {_pt(ctrl[1])} {_pt(ctrl[2])} {_pt(ctrl[3])}"
    arc = conic_arc(ctrl, b.weights[k]) if b.degree == 2 else None
    if arc is not None:
        return _arc_svg(*arc)  # type: ignore[arg-type]
    pieces = cubic_pieces(ctrl, b.weights[k])
    return f"M {_pt(pieces[0][0])} " + " ".join(f"C {_pt(p[1])} {_pt(p[2])} {_pt(p[3])}" for p in pieces)


def cubic_pieces(ctrl: FloatArray, weights: FloatArray, pieces: int = APPROX_PIECES) -> list[FloatArray]:
    """Hermite cubics through points and tangents of a (rational) Bézier at ``pieces`` + 1 parameters."""
    t = np.linspace(0.0, 1.0, pieces + 1)
    d = len(ctrl) - 1
    basis = np.stack([math.comb(d, i) * t**i * (1 - t) ** (d - i) for i in range(d + 1)], axis=1)
    dbasis = np.stack([math.comb(d, i) * (i * t ** max(i - 1, 0) * (1 - t) ** (d - i)
                                           - (d - i) * t**i * (1 - t) ** max(d - i - 1, 0)) for i in range(d + 1)],
                      axis=1)
    w = basis @ weights
    dw = dbasis @ weights
    num = (basis * weights) @ ctrl
    dnum = (dbasis * weights) @ ctrl
    p = num / w[:, None]
    dp = (dnum * w[:, None] - num * dw[:, None]) / (w * w)[:, None]
    h = 1.0 / pieces
    return [np.array([p[j], p[j] + dp[j] * h / 3, p[j + 1] - dp[j + 1] * h / 3, p[j + 1]]) for j in range(pieces)]


def arc_cubics(arcs: EllipticArcs, k: int) -> list[FloatArray]:
    """An elliptic arc as cubic pieces of at most 90° (for matplotlib)."""
    return _arc_cubics(arcs.center[k, :2], arcs.u[k, :2], arcs.v[k, :2], float(arcs.t0[k]), float(arcs.t1[k]))


def _arc_cubics(c: FloatArray, u: FloatArray, v: FloatArray, t0: float, t1: float) -> list[FloatArray]:
    n = max(1, math.ceil((t1 - t0) / (math.pi / 2)))
    out = []
    for j in range(n):
        a, b = t0 + (t1 - t0) * j / n, t0 + (t1 - t0) * (j + 1) / n
        kk = 4.0 / 3.0 * math.tan((b - a) / 4.0)
        pa, pb = c + u * math.cos(a) + v * math.sin(a), c + u * math.cos(b) + v * math.sin(b)
        da, db = -u * math.sin(a) + v * math.cos(a), -u * math.sin(b) + v * math.cos(b)
        out.append(np.array([pa, pa + kk * da, pb - kk * db, pb]))
    return out


def segment_paths(drawing: Drawing) -> list[str]:
    """SVG path data per segment, in the segment table's row order (lines, arcs, Béziers by degree)."""
    lines, arcs = drawing.lines, drawing.arcs
    out = [f"M {_pt(a)} L {_pt(b)}" for a, b in zip(lines.p0, lines.p1, strict=True)]
    out += [arc_svg(arcs, k) for k in range(len(arcs))]
    for degree in sorted(drawing.beziers):
        b = drawing.beziers[degree]
        out += [bezier_svg(b, k) for k in range(len(b))]
    return out


def segment_cubics(drawing: Drawing) -> list[list[FloatArray]]:
    """Per segment, in table row order: pieces as point arrays (2 points: a line; 4: a cubic)."""
    lines, arcs = drawing.lines, drawing.arcs
    out: list[list[FloatArray]] = [[np.array([a[:2], b[:2]])] for a, b in zip(lines.p0, lines.p1, strict=True)]
    out += [arc_cubics(arcs, k) for k in range(len(arcs))]
    for degree in sorted(drawing.beziers):
        b = drawing.beziers[degree]
        for k in range(len(b)):
            ctrl = b.ctrl[k, :, :2]
            if degree == 3 and not np.any(b.weights[k] != b.weights[k, 0]):
                out.append([ctrl])
            elif degree == 2 and not np.any(b.weights[k] != b.weights[k, 0]):
                out.append([np.array([ctrl[0], ctrl[0] + 2 / 3 * (ctrl[1] - ctrl[0]),
                                      ctrl[2] + 2 / 3 * (ctrl[1] - ctrl[2]), ctrl[2]])])
            else:
                arc = conic_arc(ctrl, b.weights[k]) if degree == 2 else None
                out.append(_arc_cubics(*arc) if arc is not None else cubic_pieces(ctrl, b.weights[k]))  # type: ignore[arg-type]
    return out
