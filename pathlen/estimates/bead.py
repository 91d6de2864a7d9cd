"""Sealant beads: section areas, volume, whole packs after waste, backer rod, time and cost.

Units: lengths in mm, sections in mm², volumes in ml (1 ml = 1000 mm³), time in s, money as
given.  A bead follows the measured paths of a layer or stroke colour (a plan) or of the whole
drawing (one ``--bead``); ``sides = 2`` seals both faces of one drawn line.  Pack counts are whole
packs after waste, decided with a tolerance far below a millilitre (an exactly full pack is one).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field
from pathlib import Path

from pathlen.batch import FileOutcome
from pathlen.errors import UsageError
from pathlen.tomlfile import read_toml

#: US customary fluid ounce in ml, exact (NIST Handbook 44, appendix C: 1 fl oz = 29.5735295625 mL).
ML_PER_US_FL_OZ = 29.5735295625
MM3_PER_ML = 1000.0
#: Default waste allowance (%): common practice 5-15 %, typically 10 % (shared/REFERENCES.md).
DEFAULT_WASTE_PCT = 10.0  # common practice
#: Default pack: a 310 ml cartridge (common practice: 290/300/310 ml cartridges).
DEFAULT_PACK_ML = 310.0  # common practice
#: Backer rod about a quarter wider than the joint, so that it is compressed in place.
ROD_OVERSIZE = 1.25  # common practice
#: Packs are counted to this many ml below a whole pack (an exactly full pack stays one pack).
PACK_TOLERANCE_ML = 1e-6

_SECTION = re.compile(r"(rect|fillet|cove|round):([0-9.eE+-]+)(?:x([0-9.eE+-]+))?")


@dataclass(frozen=True)
class Section:
    """A bead's cross-section; sizes in mm."""

    kind: str
    a: float
    b: float = 0.0

    @property
    def area_mm2(self) -> float:
        """rect w·d; fillet (right-angle triangle) a·b/2; cove (square less a quarter disc) r²(1 − π/4);
        round bead πD²/4 (elementary geometry)."""
        if self.kind == "rect":
            return self.a * self.b
        if self.kind == "fillet":
            return self.a * self.b / 2.0
        if self.kind == "cove":
            return self.a * self.a * (1.0 - math.pi / 4.0)
        return math.pi * self.a * self.a / 4.0

    def text(self) -> str:
        return f"{self.kind}:{self.a:g}x{self.b:g}" if self.kind in ("rect", "fillet") else f"{self.kind}:{self.a:g}"


def parse_section(text: str) -> Section:
    """``rect:WxD``, ``fillet:AxB``, ``cove:R`` or ``round:D`` (mm); anything else is a usage error."""
    m = _SECTION.fullmatch(text.strip())
    two = m is not None and m.group(1) in ("rect", "fillet")
    if m is None or two != (m.group(3) is not None):
        raise UsageError(f"bead section {text!r}: expected rect:WxD, fillet:AxB, cove:R or round:D in mm")
    try:
        sizes = [float(g) for g in m.groups()[1:] if g is not None]
    except ValueError:
        raise UsageError(f"bead section {text!r}: sizes must be numbers in mm") from None
    if not all(math.isfinite(x) and x > 0 for x in sizes):
        raise UsageError(f"bead section {text!r}: sizes must be positive and finite")
    return Section(m.group(1), sizes[0], sizes[1] if len(sizes) > 1 else 0.0)


def parse_pack(text: str) -> float:
    """A pack size: ``310ml``, ``600 ml``, ``10.1floz`` (US fluid ounces) or a number of ml."""
    m = re.fullmatch(r"\s*([0-9.]+(?:[eE][-+]?[0-9]+)?)\s*(ml|floz|fl oz|fl\.oz)?\s*", text.lower())
    if not m:
        raise UsageError(f"pack size {text!r}: expected a volume such as 310ml, 600ml or 10.1floz")
    value = float(m.group(1)) * (ML_PER_US_FL_OZ if m.group(2) and "oz" in m.group(2) else 1.0)
    if not (math.isfinite(value) and value > 0):
        raise UsageError(f"pack size {text!r}: must be positive")
    return value


def whole_packs(volume_ml: float, pack_ml: float, waste_pct: float) -> int:
    """Packs to buy for ``volume_ml`` plus waste: rounded up, an exactly full pack being one."""
    needed = volume_ml * (1.0 + waste_pct / 100.0)
    if needed <= 0:
        return 0
    return max(1, math.ceil((needed - PACK_TOLERANCE_ML) / pack_ml))


def sizing_warnings(section: Section, where: str) -> list[str]:
    """Joint-sizing rules for rectangular joints (ASTM C1193 guide, as summarised in architectural
    detailing texts; see shared/REFERENCES.md): width at least 6 mm, depth about half the width and
    between 6 and 13 mm.  Warnings only: the drawing's joint is measured as given."""
    if section.kind != "rect":
        return []
    w, d = section.a, section.b
    out = []
    if w < 6.0:
        out.append(f"{where}: joint width {w:g} mm is under the usual minimum of 6 mm")
    if not 6.0 <= d <= 13.0:
        out.append(f"{where}: joint depth {d:g} mm is outside the usual 6-13 mm")
    if abs(d - w / 2.0) > 0.25 * (w / 2.0):
        out.append(f"{where}: joint depth {d:g} mm is not about half the width ({w / 2.0:g} mm)")
    return out


@dataclass(frozen=True)
class Joint:
    """Which drawn paths get which bead: a layer name or ``#rrggbb`` stroke colour (``""``: all)."""

    selector: str
    section: Section
    sides: int = 1


def load_plan(path: Path) -> list[Joint]:
    """A bead plan: ``[[joint]]`` tables with ``layer`` (or ``color``), ``section`` and optional ``sides``."""
    data = read_toml(path, "bead plan")
    unknown = set(data) - {"joint"}
    if unknown:
        raise UsageError(f"{path}: unknown table {sorted(unknown)[0]!r}; joints go in [[joint]] tables")
    entries = data.get("joint", [])
    if not isinstance(entries, list):
        raise UsageError(f"{path}: joint must be [[joint]] tables, not {entries!r}")
    joints = []
    for k, entry in enumerate(entries, start=1):
        where = f"{path} joint {k}"
        if not isinstance(entry, dict):
            raise UsageError(f"{where}: must be a table")
        extra = set(entry) - {"layer", "color", "section", "sides"}
        if extra:
            raise UsageError(f"{where}: unknown key {sorted(extra)[0]!r} (layer, color, section, sides)")
        if ("layer" in entry) == ("color" in entry):
            raise UsageError(f"{where}: give either layer or color")
        selector = entry.get("layer", entry.get("color"))
        if not isinstance(selector, str) or not isinstance(entry.get("section"), str):
            raise UsageError(f"{where}: layer/color and section must be text")
        sides = entry.get("sides", 1)
        if sides not in (1, 2) or isinstance(sides, bool):
            raise UsageError(f"{where}: sides must be 1 or 2")
        try:
            section = parse_section(entry["section"])
        except UsageError as exc:
            raise UsageError(f"{where}: {exc}") from None
        joints.append(Joint(selector, section, sides))
    if not joints:
        raise UsageError(f"{path}: no [[joint]] tables")
    return joints


@dataclass
class BeadLine:
    """One joint's totals in one file (mm, mm², ml)."""

    selector: str
    section: Section
    sides: int
    length_mm: float = 0.0  # sealed length: drawn length x sides
    volume_ml: float = 0.0
    packs: int = 0
    backer_rod_mm: float = 0.0


@dataclass
class BeadSettings:
    joints: list[Joint]
    pack_ml: float = DEFAULT_PACK_ML
    waste_pct: float = DEFAULT_WASTE_PCT
    gun_speed_mm_s: float | None = None
    pack_change_s: float = 0.0
    pack_price: float | None = None
    measure: object = None  # MeasureSettings


@dataclass
class BeadEstimate(FileOutcome):
    """One file's bead estimate, or its one-line error."""

    lines: list[BeadLine] = field(default_factory=list)
    length_mm: float = 0.0
    volume_ml: float = 0.0
    packs: int = 0
    backer_rod_mm: float = 0.0
    time_s: float | None = None
    cost: float | None = None
    warnings: list[str] = field(default_factory=list)


def estimate_beads(path: str, settings: BeadSettings) -> BeadEstimate:
    """Measure the drawing and put the beads on it; never raises for bad input."""
    from pathlen.batch import one_line_failure

    return one_line_failure(path, lambda: _estimate(path, settings), BeadEstimate)


def _estimate(path: str, settings: BeadSettings) -> BeadEstimate:
    from pathlen.batch import measure_file

    measured = measure_file(path, settings.measure)  # type: ignore[arg-type]
    out = BeadEstimate(path, measured.ok, measured.error, warnings=list(measured.warnings))
    if not measured.ok:
        return out
    used: set[str] = set()
    for joint in settings.joints:
        if joint.selector == "":
            drawn = measured.length_mm
            used.update(measured.layers)
        else:
            group = measured.colors if joint.selector.startswith("#") else measured.layers
            total = group.get(joint.selector)
            drawn = total.length_mm if total else 0.0
            if total is None:
                out.warnings.append(f"no drawn paths on {joint.selector!r}: its bead is empty")
            elif not joint.selector.startswith("#"):
                used.add(joint.selector)
        line = BeadLine(joint.selector, joint.section, joint.sides, drawn * joint.sides)
        line.volume_ml = line.length_mm * joint.section.area_mm2 / MM3_PER_ML
        line.packs = whole_packs(line.volume_ml, settings.pack_ml, settings.waste_pct)
        line.backer_rod_mm = line.length_mm if joint.section.kind == "rect" else 0.0
        out.warnings.extend(sizing_warnings(joint.section, joint.selector or "bead"))
        out.lines.append(line)
    left = sorted(set(measured.layers) - used)
    if left and all(not j.selector.startswith("#") for j in settings.joints):
        length = sum(measured.layers[n].length_mm for n in left)
        out.warnings.append(f"layers not in the bead plan, not sealed: {', '.join(repr(n) for n in left)} "
                            f"({length:.1f} mm)")
    out.length_mm = sum(x.length_mm for x in out.lines)
    out.volume_ml = sum(x.volume_ml for x in out.lines)
    out.packs = whole_packs(out.volume_ml, settings.pack_ml, settings.waste_pct)
    out.backer_rod_mm = sum(x.backer_rod_mm for x in out.lines)
    if settings.gun_speed_mm_s:
        out.time_s = out.length_mm / settings.gun_speed_mm_s + out.packs * settings.pack_change_s
    if settings.pack_price is not None:
        out.cost = out.packs * settings.pack_price
    return out


def cautions() -> list[str]:
    """The safety notes printed with every bead estimate."""
    return [
        "Sealants and primers: ventilate the work area; some contain diisocyanates, strong respiratory "
        "sensitisers. Wear gloves and eye protection and read the product's safety data sheet.",
        "These are estimates, not instructions: follow the sealant maker's joint design rules, the safety data "
        "sheet and local codes.",
    ]
