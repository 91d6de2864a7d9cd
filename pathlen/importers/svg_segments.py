"""Raw 2-D segments of an SVG document and their conversion to a :class:`~pathlen.geometry.Drawing`.

Segments are stored in flat ``array('d')`` rows per kind, in user units, each row tagged with an
entity index and a transform index; :func:`to_drawing` converts arcs from endpoint to centre form
and applies all transforms in one vectorised step per kind.
"""

from __future__ import annotations

import math
from array import array

import numpy as np

from pathlen.geometry import Beziers, Drawing, EllipticArcs, Entity, Lines

#: Numbers per row: line x0 y0 x1 y1; quad 3 points; cubic 4 points; arc in endpoint form
#: x1 y1 rx ry phi(deg) large sweep x2 y2; ellipse in centre form cx cy ux uy vx vy t0 t1.
ROW_WIDTH = {"line": 4, "quad": 6, "cubic": 8, "arc": 9, "ellipse": 8}


class RawSegments:
    """Segments in user units, before transforms, with per-row entity and transform tags."""

    def __init__(self) -> None:
        self.rows = {k: array("d") for k in ROW_WIDTH}
        self.entity = {k: array("q") for k in ROW_WIDTH}
        self.transform = {k: array("q") for k in ROW_WIDTH}

    def add(self, kind: str, rows: np.ndarray) -> None:
        """Append rows ``[n, ROW_WIDTH[kind]]`` in one step."""
        if len(rows):
            self.rows[kind].frombytes(np.ascontiguousarray(rows, dtype=np.float64).tobytes())

    def tag(self, entity: int, transform: int) -> int:
        """Tag every untagged row with ``entity`` and ``transform``; returns how many rows that was."""
        added = 0
        for kind, width in ROW_WIDTH.items():
            n = len(self.rows[kind]) // width - len(self.entity[kind])
            if n:
                self.entity[kind].extend(array("q", [entity]) * n)
                self.transform[kind].extend(array("q", [transform]) * n)
                added += n
        return added


def endpoint_to_centre(rows: np.ndarray) -> tuple[np.ndarray, ...]:
    """Arcs in endpoint form -> ``(centre, u, v, t0, t1)`` with point(t) = c + u cos t + v sin t.

    ``rows`` is ``[n, 9]``: x1 y1 rx ry phi(deg) large sweep x2 y2, radii positive, endpoints
    distinct.  Implements SVG 1.1 appendix F.6.5 (conversion to centre parameters) with the
    radius correction of F.6.6 (radii too small to reach are scaled up by sqrt(Λ)).  The
    direction of travel is kept: a negative sweep flips ``v`` and the parameter's sign, so t
    always increases from the start point to the end point.
    """
    x1, y1, rx, ry, phi, large, sweep, x2, y2 = rows.T
    phi = np.radians(phi % 360.0)
    cos, sin = np.cos(phi), np.sin(phi)
    dx, dy = (x1 - x2) / 2.0, (y1 - y2) / 2.0
    x1p = cos * dx + sin * dy
    y1p = -sin * dx + cos * dy
    # Λ = (x1'/rx)² + (y1'/ry)², computed without overflow for tiny radii (1e-300): with k = max(rx, ry)
    # and radii scaled by 1/k, reach = k·√Λ; radii that cannot reach (Λ > 1) become (rx, ry)·√Λ
    k = np.maximum(rx, ry)
    rxn, ryn = rx / k, ry / k
    with np.errstate(divide="ignore", over="ignore", invalid="ignore"):
        reach = np.hypot(x1p / rxn, y1p / ryn)
        grow = reach > k
        rx, ry = np.where(grow, rxn * reach, rx), np.where(grow, ryn * reach, ry)
        root = np.where(grow, 1.0, reach / k)  # √Λ, at most 1
    # F.6.5.2: sqrt((rx²ry² − rx²y1'² − ry²x1'²)/(rx²y1'² + ry²x1'²)) = sqrt(1/Λ − 1), 0 when scaled up
    with np.errstate(divide="ignore", over="ignore", invalid="ignore"):
        coef = np.sqrt(np.maximum((1.0 - root) * (1.0 + root), 0.0)) / root  # sqrt(1/Λ − 1) without 1/Λ
    coef = np.where(grow, 0.0, coef) * np.where(large != sweep, 1.0, -1.0)
    cxp = coef * rx * y1p / ry
    cyp = -coef * ry * x1p / rx
    cx = cos * cxp - sin * cyp + (x1 + x2) / 2.0
    cy = sin * cxp + cos * cyp + (y1 + y2) / 2.0
    th1 = np.arctan2((y1p - cyp) / ry, (x1p - cxp) / rx)
    th2 = np.arctan2((-y1p - cyp) / ry, (-x1p - cxp) / rx)
    dth = np.mod(th2 - th1, 2.0 * np.pi)
    dth = np.where((sweep == 0) & (dth > 0), dth - 2.0 * np.pi, dth)
    u = np.stack([rx * cos, rx * sin], axis=1)
    v = np.stack([-ry * sin, ry * cos], axis=1)
    back = dth < 0
    v[back] *= -1.0
    t0 = np.where(back, -th1, th1)
    # the parameter span without cancellation: on the unit circle of the scaled frame the chord is
    # 2√Λ, so the smaller arc is 2·asin(√Λ); the large-arc flag takes the other one (π when scaled up)
    small = 2.0 * np.arcsin(np.clip(root, 0.0, 1.0))
    span = np.where(grow, np.pi, np.where(large != 0, 2.0 * np.pi - small, small))
    # start every arc at t = 0 (u, v turned by t0, still conjugate): a short arc far from t = 0 would
    # otherwise lose its relative length to the rounding of t1 - t0
    c0, s0 = np.cos(t0)[:, None], np.sin(t0)[:, None]
    u, v = u * c0 + v * s0, v * c0 - u * s0
    return np.stack([cx, cy], axis=1), u, v, np.zeros(len(t0)), span


#: A small arc whose radii exceed its chord this many times is its chord: the length differs by about
#: (chord/radius)²/24 of the chord (Taylor series of 2r·asin(c/2r)), below 1e-17 here.
STRAIGHT_RATIO = 1e8


def straight_arcs(rows: np.ndarray) -> np.ndarray:
    """Rows (endpoint form) that are the small arc of radii over :data:`STRAIGHT_RATIO` times the chord."""
    x1, y1, rx, ry, _, large, _, x2, y2 = rows.T
    with np.errstate(over="ignore", invalid="ignore"):
        return (large == 0) & (np.minimum(rx, ry) > STRAIGHT_RATIO * np.hypot(x2 - x1, y2 - y1))


#: Rows converted at a time: the temporaries (each row's transform, the arc conversion's) stay bounded.
CONVERT_RUN = 1 << 16


def to_drawing(raw: RawSegments, transforms: np.ndarray, entities: list[Entity]) -> Drawing:
    """Apply each row's transform (``transforms[k]`` = a b c d e f, user units -> mm) and build a Drawing
    (:data:`CONVERT_RUN` rows at a time).  ``raw`` is emptied: each kind's rows go once converted."""
    def table(kind: str) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        width = ROW_WIDTH[kind]
        rows = np.frombuffer(raw.rows[kind], dtype=float).reshape(-1, width)
        ent = np.frombuffer(raw.entity[kind], dtype=np.int64)
        which = np.frombuffer(raw.transform[kind], dtype=np.int64)
        raw.rows[kind], raw.entity[kind], raw.transform[kind] = array("d"), array("q"), array("q")
        return rows, ent, which

    rows, ent, which = table("line")
    rows_a, ent_a, which_a = table("arc")
    straight = straight_arcs(rows_a)
    if straight.any():  # drawn as their chords (exact to rounding, see straight_arcs)
        rows = np.concatenate([rows, rows_a[straight][:, [0, 1, 7, 8]]])
        ent, which = np.concatenate([ent, ent_a[straight]]), np.concatenate([which, which_a[straight]])
        rows_a, ent_a, which_a = rows_a[~straight], ent_a[~straight], which_a[~straight]
    p0, p1 = np.zeros((len(rows), 3)), np.zeros((len(rows), 3))
    _map_rows(transforms, which, [(p0, rows[:, 0:2], True), (p1, rows[:, 2:4], True)])
    lines = Lines(p0, p1, ent.copy())

    beziers = {}
    for kind, degree in (("quad", 2), ("cubic", 3)):
        rows, ent, which = table(kind)
        if len(rows):
            ctrl = np.zeros((len(rows), degree + 1, 3))
            _map_rows(transforms, which, [(ctrl[:, j], rows[:, 2 * j:2 * j + 2], True) for j in range(degree + 1)])
            beziers[degree] = Beziers(ctrl, np.ones((len(rows), degree + 1)), ent.copy())

    rows_e, ent_e, which_e = table("ellipse")
    n_a, n = len(rows_a), len(rows_a) + len(rows_e)
    center, u, v, t0, t1 = np.zeros((n, 3)), np.zeros((n, 3)), np.zeros((n, 3)), np.empty(n), np.empty(n)
    for a in range(0, n_a, CONVERT_RUN):
        run = slice(a, min(a + CONVERT_RUN, n_a))
        c, u_a, v_a, t0[run], t1[run] = endpoint_to_centre(rows_a[run])
        _map_rows(transforms, which_a[run], [(center[run], c, True), (u[run], u_a, False), (v[run], v_a, False)])
    ellipses = slice(n_a, n)
    _map_rows(transforms, which_e, [(center[ellipses], rows_e[:, 0:2], True), (u[ellipses], rows_e[:, 2:4], False),
                                    (v[ellipses], rows_e[:, 4:6], False)])
    t0[ellipses], t1[ellipses] = rows_e[:, 6], rows_e[:, 7]
    arcs = EllipticArcs(center, u, v, t0, t1, np.concatenate([ent_a, ent_e]))
    return Drawing(lines, arcs, beziers, entities)


def _map_rows(transforms: np.ndarray, which: np.ndarray, parts: list[tuple[np.ndarray, np.ndarray, bool]]) -> None:
    """Into each ``out`` of ``parts`` (``[n, 3]``, z left as it is): its ``xy`` (``[n, 2]``) mapped by the row's
    transform ``transforms[which[k]]``, as a point (True) or a vector, :data:`CONVERT_RUN` rows at a time."""
    for a in range(0, len(which), CONVERT_RUN):
        run = slice(a, a + CONVERT_RUN)
        m = transforms[which[run]]
        for out, xy, point in parts:
            out[run, :2] = (_points(m, xy[run]) if point else _vectors(m, xy[run]))[:, :2]


def _vectors(m: np.ndarray, p: np.ndarray) -> np.ndarray:
    out = np.zeros((len(p), 3))
    out[:, 0] = m[:, 0] * p[:, 0] + m[:, 2] * p[:, 1]
    out[:, 1] = m[:, 1] * p[:, 0] + m[:, 3] * p[:, 1]
    return out


def _points(m: np.ndarray, p: np.ndarray) -> np.ndarray:
    out = _vectors(m, p)
    out[:, 0] += m[:, 4]
    out[:, 1] += m[:, 5]
    return out


def full_ellipse(cx: float, cy: float, rx: float, ry: float, out: RawSegments) -> None:
    """A whole ellipse (or circle) with axes along x and y, starting at (cx + rx, cy)."""
    out.rows["ellipse"].extend((cx, cy, rx, 0.0, 0.0, ry, 0.0, 2.0 * math.pi))
