"""Sealant beads: section areas, volume, whole packs after waste per product, backer rod, primer,
time and cost, and the joint design checks of :mod:`pathlen.estimates.joint_design`.

Units: lengths in mm, sections in mm², volumes in ml (1 ml = 1000 mm³), time in s, money as
given.  A bead follows the measured paths of a layer or stroke colour (a plan) or of the whole
drawing (one ``--bead``); ``sides = 2`` seals both faces of one drawn line.  Pack counts are whole
packs after waste, per product (never pooled across products), decided with a tolerance far below
a millilitre (an exactly full pack is one).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from pathlen.batch import FileOutcome
from pathlen.errors import UsageError
from pathlen.estimates.joint_design import (
    Movement,
    capability,
    expansion,
    movement_warning,
    rod_diameter,
    size_warnings,
    thermal_movement,
)
from pathlen.tomlfile import number, read_toml, text

#: US customary fluid ounce in ml, exact (NIST Handbook 44, appendix C: 1 fl oz = 29.5735295625 mL).
ML_PER_US_FL_OZ = 29.5735295625
MM3_PER_ML = 1000.0
#: Default waste allowance (%): common practice 5-15 %, typically 10 % (shared/REFERENCES.md).
DEFAULT_WASTE_PCT = 10.0  # common practice
#: Default pack: a 310 ml cartridge (common practice: 290/300/310 ml cartridges).
DEFAULT_PACK_ML = 310.0  # common practice
#: Packs are counted to this many ml below a whole pack (an exactly full pack stays one pack).
PACK_TOLERANCE_ML = 1e-6

#: No sealant joint is wider or deeper than this (mm): a larger size is a typing error.
MAX_SECTION_MM = 1000.0
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
    if not all(math.isfinite(x) and 0 < x <= MAX_SECTION_MM for x in sizes):
        raise UsageError(f"bead section {text!r}: sizes must be positive, finite and at most {MAX_SECTION_MM:g} mm")
    return Section(m.group(1), sizes[0], sizes[1] if len(sizes) > 1 else 0.0)


def parse_pack(text: str) -> float:
    """A pack size: ``310ml``, ``600 ml``, ``10.1floz`` (US fluid ounces) or a number of ml."""
    m = re.fullmatch(r"\s*([0-9.]+(?:[eE][-+]?[0-9]+)?)\s*(ml|floz|fl oz|fl\.oz)?\s*", text.lower())
    if not m:
        raise UsageError(f"pack size {text!r}: expected a volume such as 310ml, 600ml or 10.1floz")
    value = float(m.group(1)) * (ML_PER_US_FL_OZ if m.group(2) and "oz" in m.group(2) else 1.0)
    if not (math.isfinite(value) and 0 < value <= 1e6):
        raise UsageError(f"pack size {text!r}: must be positive and at most 1000 litres")
    return value


def whole_packs(volume_ml: float, pack_ml: float, waste_pct: float) -> int:
    """Packs to buy for ``volume_ml`` plus waste: rounded up, an exactly full pack being one."""
    needed = volume_ml * (1.0 + waste_pct / 100.0)
    if needed <= 0:
        return 0
    return max(1, math.ceil((needed - PACK_TOLERANCE_ML) / pack_ml))


@dataclass(frozen=True)
class Product:
    """A sealant as sold: pack size (ml), price per pack, movement capability (percent, plus or minus),
    colour, and primer per metre of joint (ml/m) where the maker asks for one."""

    name: str
    pack_ml: float
    price: float | None = None
    capability_pct: float | None = None
    colour: str = ""
    primer_ml_per_m: float = 0.0


@dataclass(frozen=True)
class Joint:
    """Which drawn paths get which bead: a layer name or ``#rrggbb`` stroke colour (``""``: all), the
    product, and the expected movement (mm) with its basis, where the plan gives one."""

    selector: str
    section: Section
    sides: int = 1
    product: str | None = None
    movement: Movement | None = None
    capability_pct: float | None = None  # the joint's own ISO 11600 class, over the product's


@dataclass(frozen=True)
class BeadPlan:
    joints: list[Joint]
    products: dict[str, Product] = field(default_factory=dict)


def load_plan(path: Path) -> BeadPlan:
    """A bead plan: ``[[product]]`` tables and ``[[joint]]`` tables (see the README)."""
    data = read_toml(path, "bead plan")
    unknown = set(data) - {"joint", "product"}
    if unknown:
        raise UsageError(f"{path}: unknown table {sorted(unknown)[0]!r}; use [[joint]] and [[product]] tables")
    products: dict[str, Product] = {}
    entries = data.get("product", [])
    if not isinstance(entries, list):
        raise UsageError(f"{path}: product must be [[product]] tables, not {entries!r}")
    for k, entry in enumerate(entries, start=1):
        product = _product(entry, f"{path} product {k}")
        if product.name in products:
            raise UsageError(f"{path} product {k}: a second product named {product.name!r}")
        products[product.name] = product
    entries = data.get("joint", [])
    if not isinstance(entries, list):
        raise UsageError(f"{path}: joint must be [[joint]] tables, not {entries!r}")
    joints = [_joint(entry, f"{path} joint {k}", products) for k, entry in enumerate(entries, start=1)]
    if not joints:
        raise UsageError(f"{path}: no [[joint]] tables")
    return BeadPlan(joints, products)


def _product(entry: Any, where: str) -> Product:
    if not isinstance(entry, dict):
        raise UsageError(f"{where}: must be a table, not {entry!r}")
    extra = set(entry) - {"name", "pack", "price", "movement_class", "capability_pct", "colour", "primer_ml_per_m"}
    if extra:
        raise UsageError(f"{where}: unknown key {sorted(extra)[0]!r} (name, pack, price, movement_class, "
                         "capability_pct, colour, primer_ml_per_m)")
    name = text(where, "name", entry.get("name"), required=True)
    if not isinstance(entry.get("pack"), str | int | float) or isinstance(entry.get("pack"), bool):
        raise UsageError(f"{where}: pack must be a size such as \"600ml\", not {entry.get('pack')!r}")
    try:
        pack = parse_pack(str(entry["pack"]))
    except UsageError as exc:
        raise UsageError(f"{where}: {exc}") from None
    price = number(where, "price", entry["price"], 0.0, 1e9) if "price" in entry else None
    if "movement_class" in entry and "capability_pct" in entry:
        raise UsageError(f"{where}: give movement_class or capability_pct, not both")
    cap = None
    for key in ("movement_class", "capability_pct"):
        if key in entry:
            cap = capability(entry[key], where, key)
    colour = text(where, "colour", entry.get("colour", ""))
    primer = number(where, "primer_ml_per_m", entry.get("primer_ml_per_m", 0.0), 0.0, 1e4)
    return Product(name, pack, price, cap, colour, primer)


def _joint(entry: Any, where: str, products: dict[str, Product]) -> Joint:
    if not isinstance(entry, dict):
        raise UsageError(f"{where}: must be a table, not {entry!r}")
    keys = {"layer", "color", "section", "sides", "product", "movement", "panel_length", "material", "alpha",
            "delta_t", "movement_class"}
    extra = set(entry) - keys
    if extra:
        raise UsageError(f"{where}: unknown key {sorted(extra)[0]!r} ({', '.join(sorted(keys))})")
    if ("layer" in entry) == ("color" in entry):
        raise UsageError(f"{where}: give either layer or color")
    selector = entry.get("layer", entry.get("color"))
    if not isinstance(selector, str) or not isinstance(entry.get("section"), str):
        raise UsageError(f"{where}: layer/color and section must be text, not {selector!r} and "
                         f"{entry.get('section')!r}")
    sides = entry.get("sides", 1)
    if sides not in (1, 2) or isinstance(sides, bool):
        raise UsageError(f"{where}: sides must be 1 or 2, not {sides!r}")
    try:
        section = parse_section(entry["section"])
    except UsageError as exc:
        raise UsageError(f"{where}: {exc}") from None
    product = None
    if "product" in entry:
        product = text(where, "product", entry["product"], required=True)
        if product not in products:
            raise UsageError(f"{where}: product {product!r} is not a [[product]] of this plan"
                             f"{' (' + ', '.join(products) + ')' if products else ''}")
    cap = capability(entry["movement_class"], where) if "movement_class" in entry else None
    return Joint(selector, section, sides, product, _movement(entry, where), cap)


def _movement(entry: dict[str, Any], where: str) -> Movement | None:
    """``movement`` (mm) directly, or ``panel_length`` (mm) with ``material`` or ``alpha`` (1/K) and ``delta_t`` (K)."""
    thermal = {"panel_length", "material", "alpha", "delta_t"} & set(entry)
    if "movement" in entry:
        if thermal:
            raise UsageError(f"{where}: give movement (mm) or panel_length with material/alpha and delta_t, not both")
        return Movement(number(where, "movement", entry["movement"], 0.0, 1000.0), "given")
    if not thermal:
        return None
    missing = [k for k in ("panel_length", "delta_t") if k not in entry]
    if missing or ("material" in entry) == ("alpha" in entry):
        raise UsageError(f"{where}: thermal movement needs panel_length (mm), delta_t (K) and either material or "
                         "alpha (1/K)")
    length = number(where, "panel_length", entry["panel_length"], 0.0, 1e6, strict=True)
    delta = number(where, "delta_t", entry["delta_t"], 0.0, 500.0, strict=True)
    if "alpha" in entry:
        alpha, source = number(where, "alpha", entry["alpha"], 0.0, 1e-3, strict=True), "alpha given"
    else:
        alpha, source = expansion(text(where, "material", entry["material"], required=True), where)
    mm = thermal_movement(length, alpha, delta)
    return Movement(mm, f"{length:g} mm x {alpha * 1e6:g}e-6/K x {delta:g} K, {source}")


@dataclass
class BeadLine:
    """One joint's totals in one file (mm, mm², ml)."""

    selector: str
    section: Section
    sides: int
    product: str = ""  # "" for the command line's pack
    length_mm: float = 0.0  # sealed length: drawn length x sides
    volume_ml: float = 0.0
    backer_rod_mm: float = 0.0
    rod_diameter_mm: float | None = None  # the stock size, None without rod (or above the table)
    primer_ml: float = 0.0
    movement: Movement | None = None
    min_width_mm: float | None = None  # what the movement needs, where a movement is given


@dataclass
class ProductUse:
    """One product over a file or a job: volume, whole packs after waste, primer and cost."""

    name: str  # "" for the command line's pack
    pack_ml: float
    price: float | None
    volume_ml: float = 0.0
    primer_ml: float = 0.0
    length_mm: float = 0.0

    def packs(self, waste_pct: float) -> int:
        return whole_packs(self.volume_ml, self.pack_ml, waste_pct)

    def cost(self, waste_pct: float) -> float | None:
        return self.packs(waste_pct) * self.price if self.price is not None else None


@dataclass
class BeadSettings:
    joints: list[Joint]
    pack_ml: float = DEFAULT_PACK_ML
    waste_pct: float = DEFAULT_WASTE_PCT
    gun_speed_mm_s: float | None = None
    pack_change_s: float = 0.0
    pack_price: float | None = None
    measure: object = None  # MeasureSettings
    products: dict[str, Product] = field(default_factory=dict)
    rod_series: str = "mm"  # "mm" or "in": which stock sizes of backer rod

    def use_for(self, name: str) -> ProductUse:
        """An empty tally for product ``name`` ("": the command line's pack and price)."""
        if name:
            p = self.products[name]
            return ProductUse(name, p.pack_ml, p.price)
        return ProductUse("", self.pack_ml, self.pack_price)


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
    products: list[ProductUse] = field(default_factory=list)


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
        out.lines.append(_line(joint, drawn, settings, out.warnings))
    left = sorted(set(measured.layers) - used)
    if left and all(not j.selector.startswith("#") for j in settings.joints):
        length = sum(measured.layers[n].length_mm for n in left)
        out.warnings.append(f"layers not in the bead plan, not sealed: {', '.join(repr(n) for n in left)} "
                            f"({length:.1f} mm)")
    out.products = product_totals([out], settings)
    out.length_mm = sum(x.length_mm for x in out.lines)
    out.volume_ml = sum(x.volume_ml for x in out.lines)
    out.packs = sum(u.packs(settings.waste_pct) for u in out.products)
    out.backer_rod_mm = sum(x.backer_rod_mm for x in out.lines)
    if settings.gun_speed_mm_s:
        out.time_s = out.length_mm / settings.gun_speed_mm_s + out.packs * settings.pack_change_s
    costs = [u.cost(settings.waste_pct) for u in out.products]
    if costs and all(c is not None for c in costs):
        out.cost = sum(c for c in costs if c is not None)
    return out


def _line(joint: Joint, drawn: float, s: BeadSettings, warnings: list[str]) -> BeadLine:
    where = joint.selector or "bead"
    product = s.products.get(joint.product) if joint.product else None
    if s.products and product is None:
        warnings.append(f"{where}: no product named: the command line's pack ({s.pack_ml:g} ml) is counted")
    line = BeadLine(joint.selector, joint.section, joint.sides, joint.product or "", drawn * joint.sides)
    line.volume_ml = line.length_mm * joint.section.area_mm2 / MM3_PER_ML
    line.primer_ml = line.length_mm / 1000.0 * product.primer_ml_per_m if product else 0.0
    if joint.section.kind == "rect":
        width, depth = joint.section.a, joint.section.b
        warnings.extend(size_warnings(width, depth, where))
        line.backer_rod_mm = line.length_mm
        line.rod_diameter_mm = rod_diameter(width, s.rod_series)
        if line.rod_diameter_mm is None:
            warnings.append(f"{where}: no stock backer rod is 25 % wider than {width:g} mm: ask the rod's maker")
        cap = joint.capability_pct or (product.capability_pct if product else None)
        line.movement = joint.movement
        if joint.movement is not None:
            if cap is None:
                warnings.append(f"{where}: movement given but no movement class (joint or product): not checked")
            else:
                line.min_width_mm = joint.movement.mm / (cap / 100.0)
                warning = movement_warning(width, joint.movement, cap, where)
                if warning:
                    warnings.append(warning)
    return line


def product_totals(results: list[BeadEstimate], s: BeadSettings) -> list[ProductUse]:
    """Volume, primer and length per product over ``results`` (ok ones), in the order first used."""
    uses: dict[str, ProductUse] = {}
    for r in results:
        if not r.ok:
            continue
        for line in r.lines:
            use = uses.setdefault(line.product, s.use_for(line.product))
            use.volume_ml += line.volume_ml
            use.primer_ml += line.primer_ml
            use.length_mm += line.length_mm
    return list(uses.values())


def cautions() -> list[str]:
    """The safety notes printed with every bead estimate."""
    return [
        "Sealants and primers: ventilate the work area; some contain diisocyanates, strong respiratory "
        "sensitisers. Wear gloves and eye protection and read the product's safety data sheet.",
        "These are estimates, not instructions: follow the sealant maker's joint design rules, the safety data "
        "sheet and local codes.",
    ]
