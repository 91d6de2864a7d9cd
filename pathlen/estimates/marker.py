"""Fabric by marker: a pattern's pieces nested on the fabric roll, and fabric per garment.

A marker lays the pieces of ``ratio`` garments (so many of each size) on a roll ``fabric_width``
wide; pieces keep their grain line (rotations 0 and 180 degrees unless the plan says otherwise) and
pieces cut as left and right are mirrored in pairs.  Its length is the used length of the roll;
its efficiency the pieces' exact area over width x length.  Units: mm and mm² here; exports give
m, m² and g (with the fabric's mass per area, gsm, in g/m²).
"""

from __future__ import annotations

from dataclasses import dataclass, field

from pathlen.errors import InputError
from pathlen.estimates.seam_estimate import SeamEstimate
from pathlen.nest.layout import Demand, NestResult
from pathlen.nest.plan import NestSettings, Status, nest

#: Grain line kept: a piece may turn end for end, never across the fabric.
GRAIN_ROTATIONS = (0.0, 180.0)
DEFAULT_MARKER_GAP_MM = 1.0  # common practice: a blade's clearance between pieces
DEFAULT_MARKER_TIME_S = 20.0


@dataclass(frozen=True)
class MarkerSettings:
    fabric_width_mm: float
    ratio: dict[str, int] | None = None  # None: one garment of every size in the file
    gsm: float | None = None
    gap_mm: float = DEFAULT_MARKER_GAP_MM
    time_s: float = DEFAULT_MARKER_TIME_S
    seed: int | None = None
    rotations: dict[str, tuple[float, ...] | None] = field(default_factory=dict)
    mirrored: tuple[str, ...] = ()


@dataclass
class Marker:
    path: str
    garments: int
    width_mm: float
    length_mm: float
    parts_area_mm2: float
    pieces: int  # copies laid
    unplaced: int  # copies that did not fit the width
    result: NestResult
    gsm: float | None = None
    ratio: dict[str, int] = field(default_factory=dict)
    #: per demand of the nest, the piece's (name, size)
    labels: list[tuple[str, str]] = field(default_factory=list)

    @property
    def efficiency(self) -> float:
        area = self.width_mm * self.length_mm
        return self.parts_area_mm2 / area if area > 0 else 0.0

    @property
    def length_per_garment_mm(self) -> float:
        return self.length_mm / self.garments

    @property
    def area_per_garment_mm2(self) -> float:
        return self.width_mm * self.length_mm / self.garments

    @property
    def grams_per_garment(self) -> float | None:
        return self.area_per_garment_mm2 / 1e6 * self.gsm if self.gsm is not None else None


def marker_demands(estimate: SeamEstimate, s: MarkerSettings
                   ) -> tuple[list[Demand], dict[str, int], list[tuple[str, str]]]:
    """The copies to lay: each piece's quantity per garment times the garments of its size; and per
    demand the piece's (name, size)."""
    sizes = sorted({p.size for p in estimate.pieces})
    ratio = dict(s.ratio) if s.ratio is not None else {size: 1 for size in sizes}
    missing = sorted(set(ratio) - set(sizes))
    if missing:
        have = ", ".join(repr(x) for x in sizes) if any(sizes) else "none (an unsized pattern: --ratio N)"
        raise InputError(f"the marker ratio names size {missing[0]!r}; this pattern's sizes: {have}")
    demands, labels = [], []
    for p in estimate.pieces:
        count = p.quantity * ratio.get(p.size, 0)
        if count <= 0 or p.part is None:
            continue
        p.part.name = f"{p.name} ({p.size})" if p.size else p.name
        rotations = s.rotations.get(p.name, GRAIN_ROTATIONS)
        demands.append(Demand(p.part, count, rotations, p.name in s.mirrored and count >= 2))
        labels.append((p.name, p.size))
    if not demands:
        raise InputError("the marker has no piece to lay (every size in the ratio has 0 garments)")
    return demands, ratio, labels


def lay_marker(estimate: SeamEstimate, s: MarkerSettings, status: Status | None = None) -> Marker:
    """The marker of one pattern file (a usage error if the nesting settings are unusable)."""
    demands, ratio, labels = marker_demands(estimate, s)
    garments = sum(ratio.values())
    result = nest(demands, NestSettings(roll_width=s.fabric_width_mm, gap_mm=s.gap_mm, time_s=s.time_s, seed=s.seed),
                  status)
    length = sum(sheet.counted_length for sheet in result.sheets)
    return Marker(estimate.path, garments, s.fabric_width_mm, length, result.parts_area_mm2,
                  len(result.placements), sum(u.count for u in result.unplaced), result, s.gsm, ratio, labels)
