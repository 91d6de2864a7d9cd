"""Small parts into the holes of larger ones, before the engine nests the rest.

A washer belongs in a flange's bore: the engine packs polygons without holes, so the room inside
each host's holes is filled here first.  For every copy of a host (an unmirrored variant with holes),
largest hole first, guests are tried largest first; a guest's position is searched on a grid over
the hole's box at each rotation it may take, all candidates tested at once (shapely), and the
lowest, then leftmost, candidate that lies inside the hole clear of guests already there is taken.
Both sides are envelopes, so true shapes keep the spacing.  A guest's final rotation is the host's
plus its own: only rotations allowed for every rotation the host may take are tried.

Conventions: mm, each host's drawing coordinates; a guest copy is placed at R(rotation)·M·p + offset.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np
import shapely
from shapely.geometry.polygon import orient

from pathlen.geometry import FloatArray

#: Grid steps across a hole's box when searching a guest's position.
GRID_STEPS = 24
RIGHT_ANGLES = (0.0, 90.0, 180.0, 270.0)


@dataclass(frozen=True)
class Variant:
    """A part as the engine sees it: its demand index, mirrored or not, envelope polygon ``[n, 2]``
    (counter-clockwise; mirrored already applied), the holes' rooms, rotations (None: any)."""

    demand: int
    mirrored: bool
    polygon: FloatArray
    holes: tuple[FloatArray, ...]
    rotations: tuple[float, ...] | None

    @cached_property
    def area(self) -> float:
        """Area of the envelope polygon, mm² (computed once)."""
        return float(shapely.Polygon(self.polygon).area)


@dataclass(frozen=True)
class Guest:
    variant: int
    rotation_deg: float
    offset: tuple[float, float]


def local_rotations(host: Variant, guest: Variant) -> tuple[float, ...]:
    """Rotations of a guest in its host's frame that keep it within its own rotations whatever the host's."""
    if guest.rotations is None:
        return RIGHT_ANGLES
    if host.rotations is None:
        return ()
    allowed = {round(r % 360.0, 6) for r in guest.rotations}
    return tuple(r for r in RIGHT_ANGLES
                 if all(round((h + r) % 360.0, 6) in allowed for h in host.rotations))


def fill_holes(variants: list[Variant], demand: list[int]) -> tuple[dict[tuple[int, int], list[Guest]], list[int]]:
    """Guests per host copy ``(variant, copy)`` and the demand left for the engine."""
    left = list(demand)
    fills: dict[tuple[int, int], list[Guest]] = {}
    hosts = [v for v, var in enumerate(variants) if var.holes and not var.mirrored and left[v] > 0]
    hosts.sort(key=lambda v: -max(shapely.Polygon(h).area for h in variants[v].holes))
    by_size = sorted(range(len(variants)), key=lambda g: -variants[g].area)
    filled: set[int] = set()  # hosts holding guests: they go to the engine, never into another hole
    for v in hosts:
        pattern: list[Guest] | None = None
        for copy in range(left[v]):  # the copies of v still going to the engine (not themselves in a hole)
            counts = _counts(pattern) if pattern is not None else {}
            if pattern is None or any(left[g] < n for g, n in counts.items()):
                pattern = _fill_one(variants, v, [g for g in by_size if g != v and g not in filled and left[g] > 0],
                                    left)
                counts = _counts(pattern)
            if not pattern:
                break
            for g, n in counts.items():
                left[g] -= n
            fills[(v, copy)] = pattern
            filled.add(v)
    return fills, left


def _counts(pattern: list[Guest]) -> dict[int, int]:
    out: dict[int, int] = {}
    for g in pattern:
        out[g.variant] = out.get(g.variant, 0) + 1
    return out


def _fill_one(variants: list[Variant], host: int, guests: list[int], left: list[int]) -> list[Guest]:
    """Guests for one copy of ``host`` with ``left`` copies available (not changed)."""
    avail = {g: left[g] for g in guests}
    placed: list[Guest] = []
    rooms = sorted(variants[host].holes, key=lambda h: -shapely.Polygon(h).area)
    for room_pts in rooms:
        room = shapely.Polygon(room_pts)
        shapely.prepare(room)
        inside: list[shapely.Polygon] = []
        for g in guests:
            turns = local_rotations(variants[host], variants[g])
            while avail[g] > 0 and turns and variants[g].area <= room.area:
                spot = _find_spot(room, inside, variants[g].polygon, turns)
                if spot is None:
                    break
                rotation, offset, shape = spot
                placed.append(Guest(g, rotation, offset))
                inside.append(shape)
                avail[g] -= 1
    return placed


def _find_spot(room: shapely.Polygon, inside: list[shapely.Polygon], polygon: FloatArray,
               turns: tuple[float, ...]) -> tuple[float, tuple[float, float], shapely.Polygon] | None:
    x0, y0, x1, y1 = room.bounds
    occupied = shapely.union_all(inside) if inside else None
    best = None
    for rotation in turns:
        a = np.radians(rotation)
        rot = np.array([[np.cos(a), -np.sin(a)], [np.sin(a), np.cos(a)]])
        shape = polygon @ rot.T
        lo, hi = shape.min(axis=0), shape.max(axis=0)
        span_x, span_y = (x1 - x0) - (hi[0] - lo[0]), (y1 - y0) - (hi[1] - lo[1])
        if span_x < 0 or span_y < 0:
            continue
        xs = x0 - lo[0] + np.linspace(0.0, span_x, GRID_STEPS + 1)
        ys = y0 - lo[1] + np.linspace(0.0, span_y, GRID_STEPS + 1)
        gx, gy = np.meshgrid(xs, ys, indexing="xy")
        offsets = np.stack([gx.ravel(), gy.ravel()], axis=1)
        candidates = shapely.polygons(shape[None, :, :] + offsets[:, None, :])
        ok = shapely.contains_properly(room, candidates)
        if occupied is not None:
            ok &= ~shapely.intersects(occupied, candidates)
        hits = np.flatnonzero(ok)
        if len(hits):
            k = hits[np.lexsort((offsets[hits, 0], offsets[hits, 1]))[0]]
            key = (offsets[k, 1] + lo[1], offsets[k, 0] + lo[0])
            if best is None or key < best[0]:
                best = (key, rotation, (float(offsets[k, 0]), float(offsets[k, 1])), candidates[k])
    if best is None:
        return None
    return best[1], best[2], orient(best[3], 1.0)
