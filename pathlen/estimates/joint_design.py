"""Sealant joint design checks: width and depth by width band, movement, backer rod stock sizes.

Units: mm, K, 1/K, percent.  Every rule gives plain warnings naming the joint and the rule; the
drawing's joints are measured as given.

Width and depth (ASTM C1193, Standard Guide for Use of Joint Sealants, as recalled, # from memory:
check the current edition and the sealant maker's data sheet):

* width at least 6.35 mm (1/4 in);
* up to 12.7 mm (1/2 in) wide: depth equal to the width;
* 12.7 to 25.4 mm (1 in): depth about half the width;
* 25.4 to 50.8 mm (2 in): depth capped at 12.7 to 15.9 mm (1/2 to 5/8 in);
* over 50.8 mm: consult the sealant maker.

Movement: a joint must take the expected movement within the sealant's movement capability
(ISO 11600 classes 25, 20, 12.5 and 7.5: ±25 %, ±20 %, ±12.5 %, ±7.5 % of the joint width), so its
width is at least movement / capability.  Thermal movement of a panel of length L is L·α·ΔT.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from pathlen.errors import UsageError

MM_PER_IN = 25.4
MIN_WIDTH_MM = 6.35  # 1/4 in
NARROW_MM = 12.7  # 1/2 in: depth = width up to here
MIDDLE_MM = 25.4  # 1 in: depth about half the width up to here
WIDE_MM = 50.8  # 2 in: above, consult the maker
WIDE_DEPTH_MM = (12.7, 15.875)  # 1/2 to 5/8 in
#: How far a depth may stray from the rule's value before a warning (relative).
DEPTH_SLACK = 0.25  # common practice: joints are tooled, not machined

#: ISO 11600 movement capability classes (percent of the joint width, plus or minus).
MOVEMENT_CLASSES = (25.0, 20.0, 12.5, 7.5)

#: Linear thermal expansion coefficients (1/K) with the standard giving each (# from memory of the
#: clause: check the edition you work to).
THERMAL_EXPANSION: dict[str, tuple[float, str]] = {
    "aluminium": (23e-6, "EN 1999-1-1, 3.2.5"),
    "steel": (12e-6, "EN 1993-1-1, 3.2.6"),
    "stainless": (16e-6, "EN 1993-1-4 (austenitic grades)"),
    "concrete": (10e-6, "EN 1992-1-1, 3.1.3"),
    "glass": (9e-6, "EN 572-1 (soda lime silicate glass)"),
}
ALIASES = {"aluminum": "aluminium", "stainless steel": "stainless"}

#: Backer rod stock diameters (common practice: closed-cell rod as commonly stocked).
ROD_STOCK_MM = (6.0, 8.0, 10.0, 13.0, 15.0, 20.0, 25.0, 30.0, 40.0, 50.0)
ROD_STOCK_IN = (0.25, 0.375, 0.5, 0.625, 0.75, 0.875, 1.0, 1.25, 1.5, 2.0)
#: Backer rod about a quarter wider than the joint, so it is compressed in place.
ROD_OVERSIZE = 1.25  # common practice


def size_warnings(width: float, depth: float, where: str) -> list[str]:
    """The width-and-depth rules for a rectangular joint ``width`` x ``depth`` mm."""
    out = []
    if width < MIN_WIDTH_MM - 1e-9:
        out.append(f"{where}: joint width {width:g} mm is under the minimum of 6.35 mm (1/4 in; ASTM C1193)")
    if width <= NARROW_MM + 1e-9:
        if abs(depth - width) > DEPTH_SLACK * width:
            out.append(f"{where}: joint depth {depth:g} mm should equal the width ({width:g} mm) for joints up "
                       "to 12.7 mm (1/2 in) wide (ASTM C1193)")
    elif width <= MIDDLE_MM + 1e-9:
        if abs(depth - width / 2) > DEPTH_SLACK * width / 2:
            out.append(f"{where}: joint depth {depth:g} mm should be about half the width ({width / 2:g} mm) for "
                       "joints 12.7 to 25.4 mm (1/2 to 1 in) wide (ASTM C1193)")
    elif width <= WIDE_MM + 1e-9:
        lo, hi = WIDE_DEPTH_MM
        if not lo * (1 - DEPTH_SLACK) <= depth <= hi * (1 + DEPTH_SLACK):
            out.append(f"{where}: joint depth {depth:g} mm should be 12.7 to 15.9 mm (1/2 to 5/8 in) for joints "
                       "25.4 to 50.8 mm (1 to 2 in) wide (ASTM C1193)")
    else:
        out.append(f"{where}: joint width {width:g} mm is over 50.8 mm (2 in): consult the sealant maker "
                   "(ASTM C1193)")
    return out


@dataclass(frozen=True)
class Movement:
    """Expected movement of a joint (mm, total range) and where it comes from."""

    mm: float
    basis: str


def thermal_movement(length_mm: float, alpha_per_k: float, delta_t_k: float) -> float:
    """L·α·ΔT (mm)."""
    return length_mm * alpha_per_k * delta_t_k


def expansion(material: str, where: str) -> tuple[float, str]:
    """α (1/K) and its source for a material of the table."""
    key = ALIASES.get(material.strip().lower(), material.strip().lower())
    if key not in THERMAL_EXPANSION:
        raise UsageError(f"{where}: material {material!r} has no expansion coefficient here; give alpha (1/K) "
                         f"or one of {', '.join(THERMAL_EXPANSION)}")
    return THERMAL_EXPANSION[key]


def minimum_width(movement_mm: float, capability_pct: float) -> float:
    """The narrowest joint that takes ``movement_mm`` at ``capability_pct`` (mm)."""
    return movement_mm / (capability_pct / 100.0)


def movement_warning(width: float, movement: Movement, capability_pct: float, where: str) -> str | None:
    """A warning when the joint is narrower than its movement needs."""
    need = minimum_width(movement.mm, capability_pct)
    if width + 1e-9 >= need:
        return None
    return (f"{where}: joint width {width:g} mm is too narrow for {movement.mm:.2f} mm of movement ({movement.basis}) "
            f"at ±{capability_pct:g} %: it needs at least {need:.1f} mm")


def rod_diameter(width: float, series: str = "mm") -> float | None:
    """The smallest stock rod diameter (mm) at or above ROD_OVERSIZE x ``width``; None above the table."""
    want = ROD_OVERSIZE * width
    stock = ROD_STOCK_MM if series == "mm" else tuple(x * MM_PER_IN for x in ROD_STOCK_IN)
    for d in stock:
        if d + 1e-9 >= want:
            return d
    return None


def capability(value: object, where: str, key: str = "movement_class") -> float:
    """A movement capability in percent: an ISO 11600 class, or (key ``capability_pct``) a product's own."""
    if isinstance(value, bool) or not isinstance(value, int | float) or not math.isfinite(value):
        raise UsageError(f"{where}: {key} must be a number, not {value!r}")
    if key == "movement_class" and float(value) not in MOVEMENT_CLASSES:
        raise UsageError(f"{where}: movement_class {value!r} is not an ISO 11600 class "
                         f"({', '.join(f'{c:g}' for c in MOVEMENT_CLASSES)})")
    if not 0 < value <= 100:
        raise UsageError(f"{where}: {key} must be above 0 and at most 100 %, not {value!r}")
    return float(value)
