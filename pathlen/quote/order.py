"""Quote orders (TOML, our own form): the customer, the parts with their process profiles, the materials
with their sheets and prices, and the shop's terms.

    customer = "Harbour Lights Ltd"
    reference = "HL-2026-118"

    [shop]                         # or a shop file (--shop); the order's keys win
    name = "Kestrel Lane Fabrication"
    currency = "EUR"
    tax_rate_pct = 20              # optional
    validity_days = 30
    minimum_order = 40             # optional; default: the largest minimum charge of the profiles used

    [material.steel3]
    name = "mild steel"            # what the profiles call it ...
    thickness_mm = 3               # ... at this thickness
    charge = "sheets"              # whole sheets; or "used": the used part plus remnant_pct of the rest
    remnant_pct = 50
    density_kg_m3 = 7850           # with price_per_kg
    price_per_kg = 1.10            # or a price on each sheet
    sheets = [{ width_mm = 1250, length_mm = 2500, count = 10 }, { width_mm = 1000, length_mm = 2000, price = 70 }]

    [[part]]
    file = "kl101_bracket.dxf"     # relative to the order file
    quantity = 20
    profile = "steel-3mm-laser"    # its material and thickness choose the material table
    layers = ["CUT"]               # and engrave, ignore, rotations: as on cut and nest

Every problem is one line naming the file, the table, the key and the value (a usage error).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from pathlen.errors import UsageError
from pathlen.nest.order import DEFAULT_ROTATIONS, parse_rotations
from pathlen.tomlfile import names as _names
from pathlen.tomlfile import number as _number
from pathlen.tomlfile import read_toml, whole
from pathlen.tomlfile import text as _text


@dataclass(frozen=True)
class Sheet:
    width_mm: float
    length_mm: float
    price: float  # per sheet, in the shop's currency
    count: int | None = None


@dataclass(frozen=True)
class Material:
    key: str
    name: str
    thickness_mm: float
    sheets: tuple[Sheet, ...]
    charge: str = "sheets"  # or "used"
    remnant_pct: float = 100.0


@dataclass(frozen=True)
class QuotePart:
    file: str
    quantity: int
    profile: str
    layers: tuple[str, ...] = ()
    engrave: tuple[str, ...] = ()
    ignore: tuple[str, ...] = ()
    rotations: tuple[float, ...] | None = DEFAULT_ROTATIONS
    where: str = ""


@dataclass(frozen=True)
class Shop:
    name: str = ""
    currency: str = ""
    tax_rate_pct: float = 0.0
    validity_days: int = 30
    minimum_order: float | None = None


@dataclass(frozen=True)
class QuoteOrder:
    customer: str
    reference: str
    parts: tuple[QuotePart, ...]
    materials: dict[str, Material]
    shop: Shop = field(default_factory=Shop)
    source: str = ""


def _keys(where: str, table: dict[str, Any], allowed: tuple[str, ...]) -> None:
    unknown = sorted(set(table) - set(allowed))
    if unknown:
        raise UsageError(f"{where}: unknown key {unknown[0]!r} ({', '.join(allowed)})")


def load_shop(path: Path) -> dict[str, Any]:
    data = read_toml(path, "shop file")
    _keys(str(path), data, ("shop",))
    shop = data.get("shop", {})
    if not isinstance(shop, dict):
        raise UsageError(f"{path}: shop must be a [shop] table, not {shop!r}")
    return shop


def _shop(where: str, table: dict[str, Any]) -> Shop:
    _keys(where, table, ("name", "currency", "tax_rate_pct", "validity_days", "minimum_order"))
    days = whole(where, "validity_days", table.get("validity_days", 30), 0)
    minimum = table.get("minimum_order")
    return Shop(_text(where, "name", table.get("name", "")), _text(where, "currency", table.get("currency", "")),
                _number(where, "tax_rate_pct", table.get("tax_rate_pct", 0.0)), days,
                None if minimum is None else _number(where, "minimum_order", minimum))


def load_quote_order(path: Path, shop_defaults: dict[str, Any] | None = None) -> QuoteOrder:
    """The order, or a usage error naming the first problem."""
    data = read_toml(path, "order file")
    _keys(str(path), data, ("customer", "reference", "shop", "material", "part"))
    shop_table = dict(shop_defaults or {})
    own = data.get("shop", {})
    if not isinstance(own, dict):
        raise UsageError(f"{path}: shop must be a [shop] table, not {own!r}")
    shop_table.update(own)
    materials_table = data.get("material", {})
    if not isinstance(materials_table, dict) or not materials_table:
        raise UsageError(f"{path}: no [material.NAME] tables")
    materials = {k: _material(f"{path} [material.{k}]", k, v) for k, v in materials_table.items()}
    entries = data.get("part")
    if not isinstance(entries, list) or not entries or not all(isinstance(e, dict) for e in entries):
        raise UsageError(f"{path}: no [[part]] entries")
    parts = tuple(_part(f"{path} part {k}", e, path.parent) for k, e in enumerate(entries, start=1))
    return QuoteOrder(_text(str(path), "customer", data.get("customer", "")),
                      _text(str(path), "reference", data.get("reference", "")), parts, materials,
                      _shop(f"{path} [shop]", shop_table), str(path))


def _material(where: str, key: str, t: Any) -> Material:
    if not isinstance(t, dict):
        raise UsageError(f"{where}: must be a table, not {t!r}")
    _keys(where, t, ("name", "thickness_mm", "charge", "remnant_pct", "density_kg_m3", "price_per_kg", "sheets"))
    charge = t.get("charge", "sheets")
    if charge not in ("sheets", "used"):
        raise UsageError(f"{where}: charge must be \"sheets\" or \"used\", not {charge!r}")
    thickness = _number(where, "thickness_mm", t.get("thickness_mm"), 0.0, strict=True)
    per_kg = t.get("price_per_kg")
    density = t.get("density_kg_m3")
    if per_kg is not None:
        per_kg = _number(where, "price_per_kg", per_kg)
        if density is None:
            raise UsageError(f"{where}: price_per_kg needs density_kg_m3")
        density = _number(where, "density_kg_m3", density, 0.0, strict=True)
    sheets_table = t.get("sheets")
    if not isinstance(sheets_table, list) or not sheets_table or not all(isinstance(s, dict) for s in sheets_table):
        raise UsageError(f"{where}: sheets must be a list of {{ width_mm, length_mm, price }} tables")
    sheets = []
    for k, s in enumerate(sheets_table, start=1):
        at = f"{where} sheet {k}"
        _keys(at, s, ("width_mm", "length_mm", "price", "count"))
        w = _number(at, "width_mm", s.get("width_mm"), 0.0, strict=True)
        ln = _number(at, "length_mm", s.get("length_mm"), 0.0, strict=True)
        if "price" in s:
            price = _number(at, "price", s["price"])
        elif per_kg is not None:
            price = per_kg * w * ln * thickness * 1e-9 * float(density)  # mm³ -> m³, times kg/m³
        else:
            raise UsageError(f"{at}: give the sheet a price, or the material price_per_kg and density_kg_m3")
        count = s.get("count")
        if count is not None:
            whole(at, "count", count)
        sheets.append(Sheet(w, ln, price, count))
    return Material(key, _text(where, "name", t.get("name", key)), thickness, tuple(sheets), charge,
                    _number(where, "remnant_pct", t.get("remnant_pct", 100.0)))


def _part(where: str, e: dict[str, Any], base: Path) -> QuotePart:
    _keys(where, e, ("file", "quantity", "profile", "layers", "engrave", "ignore", "rotations"))
    file = e.get("file")
    if not isinstance(file, str) or not file.strip():
        raise UsageError(f"{where}: file must be the path of a drawing, not {file!r}")
    quantity = whole(where, "quantity", e.get("quantity", 1))
    profile = e.get("profile")
    if not isinstance(profile, str) or not profile:
        raise UsageError(f"{where}: profile must name a process profile, not {profile!r}")
    path = Path(file) if Path(file).is_absolute() else base / file
    return QuotePart(str(path), quantity, profile, _names(where, "layers", e.get("layers", [])),
                     _names(where, "engrave", e.get("engrave", [])), _names(where, "ignore", e.get("ignore", [])),
                     parse_rotations(e.get("rotations", list(DEFAULT_ROTATIONS)), where), where)
