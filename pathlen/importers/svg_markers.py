"""Where SVG markers go: the vertices of a markable shape, their directions, and each marker's map.

SVG 2, 11.6 (markers): ``marker-start`` decorates the first vertex of a path, ``marker-end`` the
last, ``marker-mid`` every other one.  A vertex is the start of the path and the end of every
segment; a segment that does not start where the previous one ended starts a new subpath.  With
``orient="auto"`` the marker's x-axis points along the path: along the outgoing direction at a
start, the incoming one at an end, and the bisector of both in between (at the start and end of a
closed subpath too); ``auto-start-reverse`` turns the start marker round; a number is a fixed
angle (degrees).  The marker's content maps from its ``viewBox`` onto ``markerWidth`` x
``markerHeight`` (default 3 x 3), with ``refX``/``refY`` on the vertex, scaled by the stroke width
when ``markerUnits`` is ``strokeWidth`` (the default).  Units: the shape's user units.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from pathlen.importers.svg_segments import ROW_WIDTH, endpoint_to_centre
from pathlen.importers.svg_values import Affine2, compose, translate

#: Elements that take markers (SVG 2, 11.6.1 "markable elements").
MARKABLE = frozenset({"path", "line", "polyline", "polygon"})


@dataclass(frozen=True)
class Vertex:
    x: float
    y: float
    angle_in: float | None  # radians, direction of travel arriving here; None at a subpath's open start
    angle_out: float | None  # leaving here; None at a subpath's open end


class OrderedSegments:
    """Collects path segments in drawing order, as the careful path parser writes them
    (``rows[kind].extend(numbers)``): ``(kind, start, end, direction at start, direction at end)``."""

    def __init__(self) -> None:
        self.items: list[tuple[str, tuple[float, ...]]] = []
        self.rows = {k: _Recorder(self, k) for k in ROW_WIDTH}


class _Recorder:
    def __init__(self, owner: OrderedSegments, kind: str) -> None:
        self.owner, self.kind = owner, kind

    def extend(self, values: tuple[float, ...]) -> None:
        self.owner.items.append((self.kind, tuple(float(v) for v in values)))


def _direction(vectors: list[tuple[float, float]]) -> float | None:
    for dx, dy in vectors:
        if dx != 0.0 or dy != 0.0:
            return math.atan2(dy, dx)
    return None


def segment_ends(kind: str, n: tuple[float, ...]) -> tuple[tuple[float, float], tuple[float, float],
                                                            float | None, float | None]:
    """Start point, end point and the directions of travel there (radians) of one segment row."""
    if kind == "line":
        d = _direction([(n[2] - n[0], n[3] - n[1])])
        return (n[0], n[1]), (n[2], n[3]), d, d
    if kind in ("quad", "cubic"):
        pts = [(n[k], n[k + 1]) for k in range(0, len(n), 2)]
        start = _direction([(p[0] - pts[0][0], p[1] - pts[0][1]) for p in pts[1:]])
        end = _direction([(pts[-1][0] - p[0], pts[-1][1] - p[1]) for p in reversed(pts[:-1])])
        return pts[0], pts[-1], start, end
    _, u, v, t0, t1 = (a[0] for a in endpoint_to_centre(np.array([n], dtype=float)))
    tangent = [-u * math.sin(t) + v * math.cos(t) for t in (t0, t1)]
    return (n[0], n[1]), (n[7], n[8]), _direction([tuple(tangent[0])]), _direction([tuple(tangent[1])])


def vertices(items: list[tuple[str, tuple[float, ...]]]) -> list[Vertex]:
    """The marker vertices of segments in drawing order (see the module notes)."""
    out: list[Vertex] = []
    subpath: list[int] = []  # indices into out of the current subpath's vertices
    prev_end: tuple[float, float] | None = None
    first_out: float | None = None
    for kind, numbers in items:
        if kind == "ellipse":
            continue
        start, end, d_start, d_end = segment_ends(kind, numbers)
        if prev_end is None or start != prev_end:
            _close(out, subpath, first_out)
            out.append(Vertex(start[0], start[1], None, d_start))
            subpath, first_out = [len(out) - 1], d_start
        else:
            last = out[-1]
            out[-1] = Vertex(last.x, last.y, last.angle_in, d_start)
        out.append(Vertex(end[0], end[1], d_end, None))
        subpath.append(len(out) - 1)
        prev_end = end
    _close(out, subpath, first_out)
    return out


def _close(out: list[Vertex], subpath: list[int], first_out: float | None) -> None:
    """A subpath that ends where it started is closed: its ends take each other's directions."""
    if len(subpath) < 3:
        return
    a, b = out[subpath[0]], out[subpath[-1]]
    if (a.x, a.y) == (b.x, b.y):
        out[subpath[0]] = Vertex(a.x, a.y, b.angle_in, a.angle_out)
        out[subpath[-1]] = Vertex(b.x, b.y, b.angle_in, first_out)


def auto_angle(v: Vertex) -> float:
    """The bisector of the incoming and outgoing directions (radians), or whichever exists."""
    if v.angle_in is None and v.angle_out is None:
        return 0.0
    if v.angle_in is None or v.angle_out is None:
        return v.angle_in if v.angle_out is None else v.angle_out  # type: ignore[return-value]
    x = math.cos(v.angle_in) + math.cos(v.angle_out)
    y = math.sin(v.angle_in) + math.sin(v.angle_out)
    return v.angle_in if x == 0.0 and y == 0.0 else math.atan2(y, x)


def marker_map(vertex: Vertex, orient: str, first: bool, content: Affine2, ref: tuple[float, float],
               scale: float) -> Affine2:
    """Marker content -> the shape's user units for one vertex: ``content`` (viewBox -> marker
    box), ``ref`` (in content units) onto the vertex, turned by the orientation, scaled by ``scale``."""
    text = orient.strip()
    if text in ("auto", "auto-start-reverse"):
        angle = auto_angle(vertex) + (math.pi if first and text == "auto-start-reverse" else 0.0)
    else:
        try:
            angle = math.radians(float(text.removesuffix("deg"))) if text else 0.0
        except ValueError:
            angle = 0.0
        if not math.isfinite(angle):
            angle = 0.0
    c, s = math.cos(angle), math.sin(angle)
    rx = content[0] * ref[0] + content[2] * ref[1] + content[4]
    ry = content[1] * ref[0] + content[3] * ref[1] + content[5]
    place = compose(translate(vertex.x, vertex.y), (c * scale, s * scale, -s * scale, c * scale, 0.0, 0.0))
    return compose(place, compose(translate(-rx, -ry), content))
