"""An order quoted: material runs nested and cut, lines priced, charges and totals.

A *run* is every part cut from one material with one profile: its parts are nested on the material's
sheets (:mod:`pathlen.nest`), its machine time is the cut model's time per drawing times the
quantity (:mod:`pathlen.estimates.cut`), plus the rapid moves between the nested parts (ordered by
the cut estimate's tour planner from the sheet's corner, at the profile's rapid speed), plus one setup.
Material is charged per sheet used: whole sheets, or with ``charge = "used"`` the last sheet's used
part plus ``remnant_pct`` of the rest.

Each line (a drawing in its quantity) carries its own cutting (machine and consumables), a share of the
run's setup and of the rapids between parts in proportion to its machine time, and a share of the run's
material in proportion to its parts' area; the allocation is stated in every format.  Money: the unit
price is rounded to cents (half up) and the line total is unit price x quantity, so that the lines,
the minimum charge line (the amount that lifts the order to the minimum), and tax add up to the total
exactly (decimal arithmetic).  Units: mm, s, the shop's currency.
"""

from __future__ import annotations

import datetime as dt
import math
from dataclasses import dataclass, field, replace
from decimal import ROUND_HALF_UP, Decimal

import numpy as np

from pathlen.errors import UsageError
from pathlen.estimates.cut import CutEstimate, CutSettings, cautions, estimate_file
from pathlen.estimates.tour import plan_tour
from pathlen.nest.layout import Demand, NestResult, SheetSize, place_points
from pathlen.nest.parts import Part, PartSettings, read_parts
from pathlen.nest.plan import NestSettings, nest
from pathlen.profiles import Profile
from pathlen.quote.order import Material, QuoteOrder, QuotePart

CENT = Decimal("0.01")


def money(x: float | Decimal) -> Decimal:
    """Round to cents, half up (what an invoice does)."""
    return Decimal(str(x)).quantize(CENT, rounding=ROUND_HALF_UP)


@dataclass(frozen=True)
class QuoteSettings:
    gap_mm: float = 1.0  # between parts, the profile's kerf added
    margin_mm: float = 10.0
    time_s: float = 10.0  # nesting time per run
    seed: int | None = None


@dataclass
class Line:
    part: QuotePart
    material: str = ""
    ok: bool = True
    error: str | None = None
    parts: int = 0  # outlines in the drawing
    area_mm2: float = 0.0  # per drawing
    cut_length_mm: float = 0.0  # per drawing, with leads and kerf offset
    pierces: int = 0
    time_s: float = 0.0  # machine time per drawing
    cutting_cost: float = 0.0  # machine and consumables, whole quantity
    setup_share: float = 0.0
    rapid_share: float = 0.0
    material_share: float = 0.0
    unit_price: Decimal = Decimal(0)
    total: Decimal = Decimal(0)
    warnings: list[str] = field(default_factory=list)


@dataclass
class Run:
    material: Material
    profile: Profile
    lines: list[int]
    nest: NestResult | None = None
    #: per sheet used: (size label, price charged, last, used length mm, length mm)
    sheets: list[tuple[str, float, bool, float, float]] = field(default_factory=list)
    material_cost: float = 0.0
    setup_s: float = 0.0
    setup_cost: float = 0.0
    between_mm: float = 0.0  # rapid travel between nested parts
    between_s: float = 0.0
    between_cost: float = 0.0
    machine_s: float = 0.0  # cutting of every line, the rapids between parts and the setup


@dataclass
class Quote:
    order: QuoteOrder
    lines: list[Line]
    runs: list[Run]
    currency: str
    subtotal: Decimal
    minimum: Decimal  # the amount that lifts the order to the minimum (0 when not needed)
    minimum_order: Decimal
    tax: Decimal
    total: Decimal
    date: dt.date
    valid_until: dt.date
    cautions: list[str]
    breaks: dict[int, list[Decimal | None]] = field(default_factory=dict)  # quantity -> unit price per line

    @property
    def failed(self) -> bool:
        return any(not ln.ok for ln in self.lines)


def material_of(order: QuoteOrder, profile: Profile) -> Material:
    """The material table whose name and thickness are the profile's."""
    for m in order.materials.values():
        if m.name.lower() == str(profile.material).lower() and math.isclose(m.thickness_mm, profile.thickness_mm):
            return m
    raise UsageError(f"{order.source}: no [material] table for profile {profile.name!r} ({profile.material}, "
                     f"{profile.thickness_mm:g} mm): add one with name = {str(profile.material)!r} and "
                     f"thickness_mm = {profile.thickness_mm:g}")


def quote_order(order: QuoteOrder, profiles: dict[str, Profile], s: QuoteSettings = QuoteSettings(),
                quantities: tuple[int, ...] = (), today: dt.date | None = None) -> Quote:
    """Price the order (see the module notes); ``quantities`` adds price breaks (every line at that quantity)."""
    for p in order.parts:
        if p.profile not in profiles:
            raise UsageError(f"{p.where}: no profile {p.profile!r}; known: {', '.join(profiles)}")
    runs_by_key: dict[tuple[str, str], Run] = {}
    lines = [Line(p) for p in order.parts]
    read: list[tuple[list[Part], CutEstimate | None]] = []
    for k, line in enumerate(lines):
        profile = profiles[line.part.profile]
        material = material_of(order, profile)
        line.material = material.key
        run = runs_by_key.setdefault((material.key, profile.name), Run(material, profile, []))
        run.lines.append(k)
        read.append(_read_line(line, profile, s))
    quote = _price(order, lines, list(runs_by_key.values()), read, s, today or dt.date.today())
    for q in quantities:
        again = [replace(p, quantity=q) for p in order.parts]
        trial_lines = [Line(p, ln.material, ln.ok, ln.error) for p, ln in zip(again, lines, strict=True)]
        trial_runs = [Run(r.material, r.profile, list(r.lines)) for r in quote.runs]
        quick = replace(s, time_s=max(1.0, s.time_s / 4))  # a price break needs the sheet count, not the last %
        trial = _price(replace(order, parts=tuple(again)), trial_lines, trial_runs, read, quick, quote.date)
        quote.breaks[q] = [ln.unit_price if ln.ok else None for ln in trial.lines]
    return quote


def _read_line(line: Line, profile: Profile, s: QuoteSettings) -> tuple[list[Part], CutEstimate | None]:
    p = line.part
    parts = read_parts(p.file, PartSettings(s.gap_mm + profile.kerf_mm, p.layers or ()))
    if not parts.ok:
        line.ok, line.error = False, parts.error
        return [], None
    if not parts.parts:
        line.ok, line.error = False, "no closed outline to cut on the chosen layers"
        return [], None
    cut = estimate_file(p.file, CutSettings(profile, 1, p.layers, p.engrave, p.ignore))
    if not cut.ok:
        line.ok, line.error = False, cut.error
        return [], None
    line.parts = len(parts.parts)
    line.area_mm2 = sum(x.area_mm2 for x in parts.parts)
    line.cut_length_mm, line.pierces, line.time_s = cut.cut_length_mm, cut.pierces, cut.part_time_s
    line.warnings = list(dict.fromkeys([*parts.warnings, *cut.warnings]))
    return parts.parts, cut


def _price(order: QuoteOrder, lines: list[Line], runs: list[Run], read: list[tuple[list[Part], CutEstimate | None]],
           s: QuoteSettings, today: dt.date) -> Quote:
    for run in runs:
        _run(run, order, lines, read, s)
    for line in lines:
        if line.ok:
            q = line.part.quantity
            raw = line.cutting_cost + line.setup_share + line.rapid_share + line.material_share
            line.unit_price = money(raw / q)
            line.total = line.unit_price * q
    subtotal = sum((ln.total for ln in lines if ln.ok), Decimal("0.00"))
    used = [r.profile for r in runs if any(lines[k].ok for k in r.lines)]
    floor = order.shop.minimum_order if order.shop.minimum_order is not None else \
        max((p.minimum_charge for p in used), default=0.0)
    minimum_order = money(floor)
    minimum = max(Decimal("0.00"), minimum_order - subtotal) if subtotal > 0 else Decimal("0.00")
    tax = money((subtotal + minimum) * Decimal(str(order.shop.tax_rate_pct)) / 100)
    currency = order.shop.currency or next((str(p.currency) for p in used if p.currency), "")
    notes = list(dict.fromkeys(c for p in used for c in cautions(p)))
    notes.append("Figures are estimates from the shop's own process profiles and material prices: check them "
                 "before the work is accepted.")
    return Quote(order, lines, runs, currency, subtotal, minimum, minimum_order, tax, subtotal + minimum + tax,
                 today, today + dt.timedelta(days=order.shop.validity_days), notes)


def _run(run: Run, order: QuoteOrder, lines: list[Line], read: list[tuple[list[Part], CutEstimate | None]],
         s: QuoteSettings) -> None:
    p, m = run.profile, run.material
    demands, owner = [], []
    for k in run.lines:
        if not lines[k].ok:
            continue
        for part in read[k][0]:
            demands.append(Demand(part, lines[k].part.quantity, lines[k].part.rotations))
            owner.append(k)
    if not demands:
        return
    sizes = tuple(SheetSize(x.width_mm, x.length_mm, x.count) for x in m.sheets)
    result = nest(demands, NestSettings(None, sizes, s.margin_mm, s.gap_mm + p.kerf_mm, s.time_s, s.seed))
    run.nest = result
    for u in result.unplaced:
        k = owner[u.demand]
        lines[k].ok, lines[k].error = False, f"on material {m.key}: {u.reason}"
    good = [k for k in run.lines if lines[k].ok]
    if not good:
        return
    rate = p.rate_per_hour / 3600.0
    for sheet in result.sheets:
        price = next(x.price for x in m.sheets if (x.width_mm, x.length_mm) == (sheet.width, sheet.length))
        if m.charge == "used" and sheet.last:
            used = sheet.used_length / sheet.length
            price = price * used + price * (1 - used) * m.remnant_pct / 100.0
        run.sheets.append((f"{sheet.width:g} x {sheet.length:g} mm", price, sheet.last, sheet.used_length,
                           sheet.length))
    run.material_cost = sum(x[1] for x in run.sheets)
    run.between_mm = _between_parts(result)
    run.between_s = run.between_mm / (p.rapid_mm_min / 60.0)
    run.between_cost = run.between_s * rate
    run.setup_s = p.setup_min * 60.0
    run.setup_cost = run.setup_s * rate
    cut_s = {k: lines[k].time_s * lines[k].part.quantity for k in good}
    area = {k: lines[k].area_mm2 * lines[k].part.quantity for k in good}
    run.machine_s = sum(cut_s.values()) + run.between_s + run.setup_s
    total_cut, total_area = sum(cut_s.values()), sum(area.values())
    for k in good:
        line, cut = lines[k], read[k][1]
        q = line.part.quantity
        line.cutting_cost = q * (cut.cost["machine"] + cut.cost["consumables"]) if cut else 0.0
        share = cut_s[k] / total_cut if total_cut > 0 else 1.0 / len(good)
        line.setup_share = share * run.setup_cost
        line.rapid_share = share * run.between_cost
        line.material_share = (area[k] / total_area if total_area > 0 else 1.0 / len(good)) * run.material_cost


def _between_parts(result: NestResult) -> float:
    """Rapid travel over each sheet between the nested parts (mm), in the order the cut estimate's own tour
    planner gives them from the sheet's corner (:func:`pathlen.estimates.tour.plan_tour`); a part's first
    outline point stands for its pierce."""
    total = 0.0
    for n in range(len(result.sheets)):
        pts = np.array([place_points(result.demands[p.demand].part.outline[:1], p.rotation_deg, p.mirrored,
                                     p.offset)[0] for p in result.placements if p.sheet == n], dtype=float)
        if len(pts):
            total += plan_tour(pts, pts, np.ones(len(pts), dtype=bool), np.full(len(pts), -1)).rapid_length
    return total
