"""Seam plans (TOML, our own form): which edges are sewn, with which stitch, and what must match.

    tolerance_pct = 3            # matching: |ease| above this is flagged (default 3)
    allowance = { POCKET = 15 }  # seam allowance per piece (mm) where it differs from --allowance

    [[seam]]
    piece = "FRONT"              # a piece name (all sizes), edges numbered as pathlen reports them
    edges = [1, 3]               # or "all"
    stitch = 504                 # ISO 4915 stitch type
    spc = 4                      # stitches per cm (or spi = 10); optional
    rows = 1                     # rows of stitching (a twin-needle seam: 2)
    to = "BACK:3"                # optional, one edge only: sewn to that edge (sewn once) and matched

Every problem is one line naming the plan, the entry and the reason (a usage error).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path

from pathlen.errors import UsageError
from pathlen.estimates.thread import STITCH_RATIO
from pathlen.tomlfile import read_toml

DEFAULT_TOLERANCE_PCT = 3.0  # common practice: ease a few percent at most on matched edges


@dataclass(frozen=True)
class PlannedSeam:
    piece: str
    edges: tuple[int, ...] | None  # None: all edges
    stitch: int
    stitches_per_mm: float | None
    rows: int
    to: tuple[str, int] | None


@dataclass(frozen=True)
class SeamPlan:
    seams: tuple[PlannedSeam, ...]
    tolerance_pct: float = DEFAULT_TOLERANCE_PCT
    allowances: dict[str, float] = field(default_factory=dict)


def load_seam_plan(path: Path) -> SeamPlan:
    data = read_toml(path, "seam plan")
    unknown = set(data) - {"seam", "tolerance_pct", "allowance"}
    if unknown:
        raise UsageError(f"{path}: unknown key {sorted(unknown)[0]!r} (seam, tolerance_pct, allowance)")
    allowances = data.get("allowance", {})
    if not isinstance(allowances, dict) or not all(
            isinstance(v, int | float) and not isinstance(v, bool) and v >= 0 for v in allowances.values()):
        raise UsageError(f"{path}: allowance must map piece names to millimetres, at least 0")
    tolerance = data.get("tolerance_pct", DEFAULT_TOLERANCE_PCT)
    if isinstance(tolerance, bool) or not isinstance(tolerance, int | float) or not tolerance >= 0:
        raise UsageError(f"{path}: tolerance_pct must be a number of percent, at least 0")
    entries = data.get("seam", [])
    if not isinstance(entries, list):
        raise UsageError(f"{path}: seam must be [[seam]] tables, not {entries!r}")
    seams = []
    for k, entry in enumerate(entries, start=1):
        seams.append(_seam(entry, f"{path} seam {k}"))
    if not seams:
        raise UsageError(f"{path}: no [[seam]] tables")
    return SeamPlan(tuple(seams), float(tolerance), {str(k): float(v) for k, v in allowances.items()})


def _seam(entry: object, where: str) -> PlannedSeam:
    if not isinstance(entry, dict):
        raise UsageError(f"{where}: must be a table")
    extra = set(entry) - {"piece", "edges", "stitch", "spc", "spi", "rows", "to"}
    if extra:
        raise UsageError(f"{where}: unknown key {sorted(extra)[0]!r}")
    piece = entry.get("piece")
    if not isinstance(piece, str) or not piece:
        raise UsageError(f"{where}: piece must be a piece name")
    edges = entry.get("edges", "all")
    if edges == "all":
        chosen = None
    elif isinstance(edges, list) and edges and all(isinstance(e, int) and not isinstance(e, bool) and e >= 1
                                                   for e in edges):
        chosen = tuple(edges)
    else:
        raise UsageError(f"{where}: edges must be 'all' or a list of edge numbers from 1")
    stitch = entry.get("stitch", 301)
    if not isinstance(stitch, int) or isinstance(stitch, bool) or stitch not in STITCH_RATIO:
        raise UsageError(f"{where}: unknown stitch type {stitch!r}; known: {', '.join(map(str, sorted(STITCH_RATIO)))}")
    density = None
    if "spc" in entry and "spi" in entry:
        raise UsageError(f"{where}: give spc or spi, not both")
    for key, per_mm in (("spc", 0.1), ("spi", 1.0 / 25.4)):  # SPI = 25.4 / stitch length in mm
        if key in entry:
            value = entry[key]
            if isinstance(value, bool) or not isinstance(value, int | float) or not 0 < value < math.inf:
                raise UsageError(f"{where}: {key} must be a positive finite number, not {value!r}")
            density = float(value) * per_mm
    rows = entry.get("rows", 1)
    if isinstance(rows, bool) or not isinstance(rows, int) or rows < 1:
        raise UsageError(f"{where}: rows must be a whole number from 1")
    to = None
    if "to" in entry:
        text = entry["to"]
        name, sep, number = text.rpartition(":") if isinstance(text, str) else ("", "", "")
        if not sep or not name or not number.isdigit() or int(number) < 1:
            raise UsageError(f"{where}: to must be 'PIECE:EDGE', e.g. 'BACK:3'")
        if chosen is None or len(chosen) != 1:
            raise UsageError(f"{where}: a seam sewn to another edge names one edge of its own")
        to = (name, int(number))
    return PlannedSeam(piece, chosen, int(stitch), density, rows, to)
