"""Seam plans (TOML, our own form): which edges are sewn, with which stitch, what must match, and
how the fabric marker is laid.

    tolerance_pct = 3            # matching: |ease| above this is flagged (default 3)
    allowance = { POCKET = 15 }  # seam allowance per piece (mm) where it differs from --allowance

    [[seam]]
    piece = "FRONT"              # a piece name (all sizes), edges numbered as pathlen reports them
    edges = [1, 3]               # or "all"
    stitch = 504                 # ISO 4915 stitch type
    spc = 4                      # stitches per cm (or spi = 10); default 4 per cm
    thickness = 1.5              # seam thickness T (mm); default 1.5
    width = 4                    # seam or cover width W (mm) where the stitch has one; default per type
    rows = 1                     # rows of stitching (a twin-needle seam: 2)
    to = ["BACK:2", "BACK:3"]    # optional: sewn to these edges (sewn once), lengths matched as sums

    [marker]                     # optional: fabric by marker (the command line overrides)
    fabric_width = 1500          # mm
    ratio = { S = 1, M = 2 }     # garments per size in one marker ({ "" = 3 } for an unsized pattern)
    gsm = 180                    # fabric mass (g/m²), for grams per garment
    rotations = { COLLAR = [0, 90, 180, 270] }   # per piece; default 0 and 180 (the grain line kept)
    mirrored = ["SLEEVE"]        # pieces cut as left and right (half the copies mirrored)

Every problem is one line naming the plan, the entry and the reason (a usage error).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from pathlen.errors import UsageError
from pathlen.estimates.thread import check_value, stitch
from pathlen.tomlfile import number, read_toml

DEFAULT_TOLERANCE_PCT = 3.0  # common practice: ease a few percent at most on matched edges


@dataclass(frozen=True)
class PlannedSeam:
    piece: str
    edges: tuple[int, ...] | None  # None: all edges
    stitch: int
    stitches_per_mm: float | None
    rows: int
    to: tuple[tuple[str, int], ...] = ()
    thickness_mm: float | None = None
    width_mm: float | None = None


@dataclass(frozen=True)
class MarkerPlan:
    """The plan's ``[marker]`` table (every key optional)."""

    fabric_width_mm: float | None = None
    ratio: dict[str, int] | None = None
    gsm: float | None = None
    rotations: dict[str, tuple[float, ...] | None] = field(default_factory=dict)
    mirrored: tuple[str, ...] = ()


@dataclass(frozen=True)
class SeamPlan:
    seams: tuple[PlannedSeam, ...]
    tolerance_pct: float = DEFAULT_TOLERANCE_PCT
    allowances: dict[str, float] = field(default_factory=dict)
    marker: MarkerPlan = field(default_factory=MarkerPlan)


def load_seam_plan(path: Path) -> SeamPlan:
    data = read_toml(path, "seam plan")
    unknown = set(data) - {"seam", "tolerance_pct", "allowance", "marker"}
    if unknown:
        raise UsageError(f"{path}: unknown key {sorted(unknown)[0]!r} (seam, tolerance_pct, allowance, marker)")
    allowances = data.get("allowance", {})
    if not isinstance(allowances, dict):
        raise UsageError(f"{path}: allowance must map piece names to millimetres, not {allowances!r}")
    allowance = {str(k): number(f"{path} allowance", str(k), v, 0.0, 1000.0) for k, v in allowances.items()}
    tolerance = number(str(path), "tolerance_pct", data.get("tolerance_pct", DEFAULT_TOLERANCE_PCT), 0.0, 100.0)
    entries = data.get("seam", [])
    if not isinstance(entries, list):
        raise UsageError(f"{path}: seam must be [[seam]] tables, not {entries!r}")
    seams = [_seam(entry, f"{path} seam {k}") for k, entry in enumerate(entries, start=1)]
    if not seams and "marker" not in data:
        raise UsageError(f"{path}: no [[seam]] tables")
    marker = _marker(data.get("marker", {}), f"{path} marker")
    return SeamPlan(tuple(seams), tolerance, allowance, marker)


def _edge_ref(text: object, where: str) -> tuple[str, int]:
    name, sep, num = text.rpartition(":") if isinstance(text, str) else ("", "", "")
    if not sep or not name or not num.isdigit() or int(num) < 1:
        raise UsageError(f"{where}: to must be 'PIECE:EDGE' or a list of them, e.g. 'BACK:3', not {text!r}")
    return name, int(num)


def _seam(entry: object, where: str) -> PlannedSeam:
    if not isinstance(entry, dict):
        raise UsageError(f"{where}: must be a table, not {entry!r}")
    extra = set(entry) - {"piece", "edges", "stitch", "spc", "spi", "rows", "to", "thickness", "width"}
    if extra:
        raise UsageError(f"{where}: unknown key {sorted(extra)[0]!r}")
    piece = entry.get("piece")
    if not isinstance(piece, str) or not piece:
        raise UsageError(f"{where}: piece must be a piece name, not {piece!r}")
    edges = entry.get("edges", "all")
    if edges == "all":
        chosen = None
    elif isinstance(edges, list) and edges and all(isinstance(e, int) and not isinstance(e, bool) and e >= 1
                                                   for e in edges):
        chosen = tuple(edges)
    else:
        raise UsageError(f"{where}: edges must be 'all' or a list of edge numbers from 1, not {edges!r}")
    kind = stitch(entry.get("stitch", 301), where).number
    if "spc" in entry and "spi" in entry:
        raise UsageError(f"{where}: give spc or spi, not both")
    density = None
    for key, per_mm in (("spc", 0.1), ("spi", 1.0 / 25.4)):  # SPI = 25.4 / stitch length in mm
        if key in entry:
            density = check_value(key, entry[key], where) * per_mm
    thickness = check_value("thickness", entry["thickness"], where) if "thickness" in entry else None
    width = check_value("width", entry["width"], where) if "width" in entry else None
    rows = entry.get("rows", 1)
    if isinstance(rows, bool) or not isinstance(rows, int) or not 1 <= rows <= 20:
        raise UsageError(f"{where}: rows must be a whole number from 1 to 20, not {rows!r}")
    to: tuple[tuple[str, int], ...] = ()
    if "to" in entry:
        refs = entry["to"] if isinstance(entry["to"], list) else [entry["to"]]
        if not refs:
            raise UsageError(f"{where}: to names no edge")
        to = tuple(_edge_ref(x, where) for x in refs)
        if chosen is None:
            raise UsageError(f"{where}: a seam sewn to other edges names its own edges (edges = [...])")
    return PlannedSeam(piece, chosen, kind, density, rows, to, thickness, width)


def _marker(table: Any, where: str) -> MarkerPlan:
    if not isinstance(table, dict):
        raise UsageError(f"{where}: must be a table, not {table!r}")
    extra = set(table) - {"fabric_width", "ratio", "gsm", "rotations", "mirrored"}
    if extra:
        raise UsageError(f"{where}: unknown key {sorted(extra)[0]!r}")
    width = number(where, "fabric_width", table["fabric_width"], 0.0, 100_000.0, strict=True) \
        if "fabric_width" in table else None
    gsm = number(where, "gsm", table["gsm"], 0.0, 10_000.0, strict=True) if "gsm" in table else None
    ratio = None
    if "ratio" in table:
        ratio = parse_ratio(table["ratio"], where)
    rotations: dict[str, tuple[float, ...] | None] = {}
    rot = table.get("rotations", {})
    if not isinstance(rot, dict):
        raise UsageError(f"{where}: rotations must map piece names to lists of degrees, not {rot!r}")
    for name, value in rot.items():
        if value == "any":
            rotations[str(name)] = None
        elif isinstance(value, list) and value and all(
                not isinstance(v, bool) and isinstance(v, int | float) and math.isfinite(v) for v in value):
            rotations[str(name)] = tuple(float(v) % 360.0 for v in value)
        else:
            raise UsageError(f"{where}: rotations of {name!r} must be a list of degrees or 'any', not {value!r}")
    mirrored = table.get("mirrored", [])
    if not isinstance(mirrored, list) or not all(isinstance(x, str) for x in mirrored):
        raise UsageError(f"{where}: mirrored must be a list of piece names, not {mirrored!r}")
    return MarkerPlan(width, ratio, gsm, rotations, tuple(mirrored))


def parse_ratio(value: Any, where: str) -> dict[str, int]:
    """Garments per size: a table ``{S = 1, M = 2}`` or text ``"S:1,M:2"`` (or ``"3"``: three of an unsized pattern)."""
    if isinstance(value, str):
        out: dict[str, Any] = {}
        for part in (x.strip() for x in value.split(",") if x.strip()):
            size, sep, count = part.rpartition(":")
            if not sep:
                size, count = "", part
            try:
                out[size.strip()] = int(count)
            except ValueError:
                raise UsageError(f"{where}: ratio must be SIZE:COUNT pairs such as S:1,M:2, not {value!r}") from None
        value = out
    if not isinstance(value, dict) or not value:
        raise UsageError(f"{where}: ratio must map sizes to garment counts, not {value!r}")
    for size, count in value.items():
        if isinstance(count, bool) or not isinstance(count, int) or not 0 <= count <= 1000:
            raise UsageError(f"{where}: ratio of size {size!r} must be a whole number of garments, 0 to 1000, "
                             f"not {count!r}")
    if not any(value.values()):
        raise UsageError(f"{where}: ratio lays no garment")
    return {str(k): int(v) for k, v in value.items()}
