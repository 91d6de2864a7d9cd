"""What a nest answers: placed copies, sheets (or the roll) and what could not be placed.

Conventions (the ``pathlen-nest`` contract): mm; a roll or sheet runs along +x from x = 0, its
width along y from y = 0, each sheet in its own coordinates.  A point p of a part, in its drawing's
coordinates, lands at R(rotation_deg)·M·p + offset, R counter-clockwise about the drawing's origin
and M the mirror (x, y) -> (x, −y) when ``mirrored``, else the identity.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from pathlen.geometry import FloatArray
from pathlen.nest.parts import Part


@dataclass(frozen=True)
class Demand:
    """How a part is wanted: copies, rotations (degrees; None: any angle), and whether half the copies
    (rounded down) are cut mirrored, as left and right pieces are."""

    part: Part
    quantity: int
    rotations: tuple[float, ...] | None = (0.0, 90.0, 180.0, 270.0)
    mirror: bool = False


@dataclass(frozen=True)
class SheetSize:
    """A stock sheet: ``width`` along y, ``length`` along x (mm); ``count`` in stock (None: as many as needed)."""

    width: float
    length: float
    count: int | None = None

    @property
    def label(self) -> str:
        return f"{self.width:g} x {self.length:g} mm"


@dataclass(frozen=True)
class Placed:
    demand: int  # index into the demands
    copy: int  # copy number of that part, from 0
    sheet: int
    rotation_deg: float
    mirrored: bool
    offset: tuple[float, float]
    in_hole_of: int | None = None  # index of the placement whose hole holds this copy


@dataclass
class Sheet:
    width: float
    length: float  # the sheet's full length; a roll's is its used length
    used_length: float
    parts: int = 0
    parts_area_mm2: float = 0.0
    last: bool = False

    @property
    def counted_length(self) -> float:
        """The length charged: the whole sheet, or the used length of the last sheet and of a roll."""
        return self.used_length if self.last else self.length

    @property
    def utilisation(self) -> float:
        area = self.width * self.counted_length
        return self.parts_area_mm2 / area if area > 0 else 0.0

    @property
    def remnant(self) -> tuple[float, float] | None:
        """(width, length) mm of the rectangle left beyond the used length of the last sheet."""
        rest = self.length - self.used_length
        return (self.width, rest) if self.last and rest > 0 else None


@dataclass
class Unplaced:
    demand: int
    count: int
    reason: str


@dataclass
class NestResult:
    demands: list[Demand]
    placements: list[Placed]
    sheets: list[Sheet]
    unplaced: list[Unplaced]
    roll: bool
    margin_mm: float
    gap_mm: float
    seconds: float
    engine: str
    interrupted: bool = False
    notes: list[str] = field(default_factory=list)

    @property
    def parts_area_mm2(self) -> float:
        return sum(s.parts_area_mm2 for s in self.sheets)

    @property
    def utilisation(self) -> float:
        area = sum(s.width * s.counted_length for s in self.sheets)
        return self.parts_area_mm2 / area if area > 0 else 0.0


def placement_matrix(rotation_deg: float, mirrored: bool) -> FloatArray:
    """The 2x2 linear part R·M of a placement."""
    a = math.radians(rotation_deg)
    r = np.array([[math.cos(a), -math.sin(a)], [math.sin(a), math.cos(a)]])
    return r @ np.diag([1.0, -1.0]) if mirrored else r


def place_points(points: FloatArray, rotation_deg: float, mirrored: bool, offset: tuple[float, float]) -> FloatArray:
    """``points [n, 2]`` of a part in its drawing's coordinates, placed on the sheet (mm)."""
    return points @ placement_matrix(rotation_deg, mirrored).T + np.asarray(offset)


def compose(outer: Placed, rotation_deg: float, mirrored: bool, offset: tuple[float, float]
            ) -> tuple[float, bool, tuple[float, float]]:
    """A placement inside an unmirrored host placed by ``outer``: (rotation, mirrored, offset) on the sheet."""
    assert not outer.mirrored
    o = place_points(np.asarray([offset], dtype=float), outer.rotation_deg, False, outer.offset)[0]
    return (outer.rotation_deg + rotation_deg) % 360.0, mirrored, (float(o[0]), float(o[1]))
