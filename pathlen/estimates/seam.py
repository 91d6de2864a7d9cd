"""Seams of pattern pieces: sew lines (drawn, or the cut line offset inward by the allowance), their
edges, and the seams a plan sews on them.

Units: mm, radians.  A sew line offset from the cut line by the allowance ``a`` is exact: with the
piece traversed counter-clockwise, a smooth stretch that turns by τ shortens by ``a·τ`` (its
offset has length ∫(1 − aκ) ds), and a corner that turns by φ is mitred: each side ends at the
mitre point, shorter by ``a·tan(φ/2)`` at a convex corner (φ > 0), longer by ``a·tan(|φ|/2)`` at a
concave one.  A rectangle W × H sews (W − 2a)(H − 2a) round, its perimeter less 8a; a circle of
radius R sews 2π(R − a).  An allowance at least the radius of a convex curve of the piece is an
error for that piece.

Edges: the sew line is split at corners (turning more than :data:`CORNER_DEG`), turn points and
notches (each snapped to the nearest vertex of the cut line within :data:`MARK_SNAP_MM`).  Edges
are numbered from 1 counter-clockwise, starting at the split nearest the piece's lower-left
(smallest x + y) corner of its box.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from pathlen.containment import segment_turning
from pathlen.contours import Contour
from pathlen.errors import InputError
from pathlen.segments import SegmentTable

#: A vertex whose direction changes by more than this (degrees) ends an edge.
CORNER_DEG = 20.0
#: Notches and turn points further than this (mm) from every vertex of the cut line split nothing.
MARK_SNAP_MM = 1.0


@dataclass
class SewLine:
    """A piece's sew line: its total length and its edges' lengths (mm), numbered as documented."""

    length_mm: float
    edges: list[float]
    unsnapped_marks: int = 0
    #: per edge, the rows of the segment table it runs along (for pictures)
    edge_rows: list[list[int]] = field(default_factory=list)


def sew_line(table: SegmentTable, outline: Contour, allowance: float, marks: list[tuple[float, float]]
             ) -> SewLine:
    """The sew line of the closed cut line ``outline`` offset inward by ``allowance`` mm (0: the line
    itself), split into edges at corners and at ``marks`` (x, y in mm)."""
    idx = outline.segments
    smooth, corners = segment_turning(table, outline)
    total = float(smooth.sum() + corners.sum())
    sign = 1.0 if total >= 0 else -1.0  # counter-clockwise: inward is to the left
    tau, phi = sign * smooth, sign * corners
    lengths = table.length[idx].astype(float)
    a = float(allowance)
    if a > 0:
        _check_allowance(table, outline, tau, a)
    # corner k joins segment k to k + 1: mitre change a·tan(φ/2) off each side (negative: longer)
    half = a * np.tan(np.clip(phi, -math.pi + 1e-9, math.pi - 1e-9) / 2.0)
    sew = lengths - a * tau - half - np.roll(half, 1)
    if np.any(sew < -1e-9 * max(1.0, float(lengths.sum()))):
        raise InputError(f"allowance {a:g} mm is larger than an edge of the piece allows")
    # split vertices: vertex k starts segment k (after corner k - 1)
    split = np.abs(np.roll(corners, 1)) > math.radians(CORNER_DEG)
    starts = table.travel_samples(idx, outline.forward)[:, 0, :2]
    unsnapped = 0
    for mx, my in marks:
        d = np.hypot(starts[:, 0] - mx, starts[:, 1] - my)
        k = int(np.argmin(d))
        if d[k] <= MARK_SNAP_MM:
            split[k] = True
        else:
            unsnapped += 1
    if not split.any():
        return SewLine(float(sew.sum()), [float(sew.sum())], unsnapped, [idx.tolist()])
    cuts = np.flatnonzero(split)
    first = int(cuts[np.argmin(starts[cuts, 0] + starts[cuts, 1])])
    n = len(idx)
    # walk counter-clockwise from the first split vertex: vertex k starts segment k as traversed, so
    # a clockwise outline is walked backwards, each segment then starting at the vertex after it
    if sign > 0:
        seq = [(first + j) % n for j in range(n)]
        opens = [bool(split[k]) for k in seq]
    else:
        seq = [(first - 1 - j) % n for j in range(n)]
        opens = [bool(split[(k + 1) % n]) for k in seq]
    edges: list[float] = []
    rows: list[list[int]] = [[]]
    current = 0.0
    for j, k in enumerate(seq):
        if j > 0 and opens[j]:
            edges.append(current)
            rows.append([])
            current = 0.0
        current += float(sew[k])
        rows[-1].append(int(idx[k]))
    edges.append(current)
    return SewLine(float(sew.sum()), edges, unsnapped, rows)


def _check_allowance(table: SegmentTable, outline: Contour, tau: np.ndarray, a: float) -> None:
    """An allowance at least the radius of a convex curve of the piece leaves no sew line there."""
    length, radius, first = table.turning_pieces(outline.segments, outline.forward)
    convex = np.repeat(tau > 1e-12, np.diff(np.r_[first, len(length)]))
    tight = convex & (radius <= a)
    if tight.any():
        inner = float(radius[tight].min())
        raise InputError(f"allowance {a:g} mm is at least the piece's inner radius ({inner:.3g} mm on a convex "
                         "curve): no sew line there")
