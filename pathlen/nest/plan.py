"""Nesting an order: variants, holes first, then the engine on a roll or sheet after sheet.

Roll (``roll_width``): one strip of the roll's width less the margins, the used length minimised.
Sheets: as few as possible, the last as short as possible.  Each round packs the parts still
waiting into a strip as wide as the sheet; if the strip is no longer than the sheet, that is the
last sheet (and a smaller stock size is tried for it).  Otherwise the copies lying wholly within the
sheet's length make the sheet, and more waiting copies are offered to it, largest first, as long as
the engine can still fit them within the sheet; the rest wait for the next round.

Spacing: every envelope reaches gap/2 (and the flattening bound) beyond its part, so the strip is
widened by the gap and shifted by margin − gap/2: parts keep ``margin`` to the sheet's edges.
Units: mm, seconds.
"""

from __future__ import annotations

import math
import time
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from pathlen.errors import UsageError
from pathlen.nest.engine import StripItem, StripLayout, engine_name, pack_strip
from pathlen.nest.holes import Guest, Variant, fill_holes
from pathlen.nest.layout import Demand, NestResult, Placed, Sheet, SheetSize, Unplaced, compose, place_points

#: Angles tried when checking whether a freely rotating part fits a strip at all.
FREE_ANGLE_STEP_DEG = 1.0

#: Progress callback: (what is being done, seconds spent, seconds budgeted).
Status = Callable[[str, float, float], None]


@dataclass(frozen=True)
class NestSettings:
    roll_width: float | None = None  # mm; or sheets
    sheets: tuple[SheetSize, ...] = ()
    margin_mm: float = 0.0
    gap_mm: float = 1.0
    time_s: float = 30.0
    seed: int | None = None


def nest(demands: list[Demand], s: NestSettings, status: Status | None = None) -> NestResult:
    """Place every copy of ``demands`` (see the module notes); copies that cannot be placed are listed
    in ``unplaced`` with the reason."""
    if s.roll_width is None and not s.sheets:
        raise UsageError("give a roll width or at least one sheet size")
    started = time.monotonic()
    clock = _Clock(started, s.time_s, status)
    variants, demand = _variants(demands)
    unplaced: list[Unplaced] = []
    widths = [s.roll_width] if s.roll_width is not None else [z.width for z in s.sheets]
    lengths = [math.inf] if s.roll_width is not None else [z.length for z in s.sheets]
    for v, var in enumerate(variants):
        if demand[v] and not any(_fits(var, w - 2 * s.margin_mm + s.gap_mm, ln - 2 * s.margin_mm + s.gap_mm)
                                 for w, ln in zip(widths, lengths, strict=True)):
            part = demands[var.demand].part
            x0, y0, x1, y1 = part.box
            where = f"the roll ({s.roll_width:g} mm wide)" if s.roll_width is not None else "any sheet"
            unplaced.append(Unplaced(var.demand, demand[v], f"part of {x1 - x0:.1f} x {y1 - y0:.1f} mm does not fit "
                                     f"{where} within the margin of {s.margin_mm:g} mm at its allowed rotations"))
            demand[v] = 0
    fills, engine_demand = fill_holes(variants, demand)
    result = NestResult(demands, [], [], unplaced, s.roll_width is not None, s.margin_mm, s.gap_mm, 0.0,
                        engine_name())
    copies = _CopyCounter(demands)
    if s.roll_width is not None:
        height = s.roll_width - 2 * s.margin_mm + s.gap_mm
        layout = clock.pack(variants, engine_demand, height, s.time_s, s.seed, "nesting on the roll")
        result.interrupted = layout.interrupted
        _record(result, variants, fills, layout, s.roll_width, math.inf, s, copies)
    else:
        _sheets(result, variants, engine_demand, fills, s, clock, copies)
    result.seconds = time.monotonic() - started
    return result


class _Clock:
    """The time budget across engine runs, and Ctrl-C: after one, every later run is as short as it can be."""

    def __init__(self, started: float, budget: float, status: Status | None) -> None:
        self.started, self.budget, self.status = started, budget, status
        self.interrupted = False

    def left(self) -> float:
        return max(0.0, self.budget - (time.monotonic() - self.started))

    def pack(self, variants: list[Variant], demand: list[int], height: float, seconds: float, seed: int | None,
             doing: str) -> StripLayout:
        items = [StripItem(var.polygon, n, var.rotations) for var, n in zip(variants, demand, strict=True) if n > 0]
        index = [v for v, n in enumerate(demand) if n > 0]
        if not items:
            return StripLayout(0.0, [])

        def report(spent: float, best: float | None) -> None:
            if self.status is not None:
                self.status(doing, time.monotonic() - self.started, self.budget)

        layout = pack_strip(items, height, 1.0 if self.interrupted else max(1.0, seconds), seed, report)
        self.interrupted |= layout.interrupted
        return StripLayout(layout.length, [type(p)(index[p.item], p.rotation_deg, p.offset) for p in layout.placements],
                           layout.interrupted)


class _CopyCounter:
    """Copy numbers per demand: the unmirrored copies first, then the mirrored ones."""

    def __init__(self, demands: list[Demand]) -> None:
        self.next = {(d, m): (0 if not m else _normal_count(x)) for d, x in enumerate(demands) for m in (False, True)}

    def take(self, demand: int, mirrored: bool) -> int:
        n = self.next[(demand, mirrored)]
        self.next[(demand, mirrored)] = n + 1
        return n


def _normal_count(d: Demand) -> int:
    return d.quantity - d.quantity // 2 if d.mirror else d.quantity


def _variants(demands: list[Demand]) -> tuple[list[Variant], list[int]]:
    variants, demand = [], []
    for i, d in enumerate(demands):
        env = d.part.envelope
        variants.append(Variant(i, False, env.exterior, env.holes, d.rotations))
        demand.append(_normal_count(d))
        if d.mirror and d.quantity // 2:
            flipped = env.exterior[::-1] * np.array([1.0, -1.0])
            variants.append(Variant(i, True, flipped, (), d.rotations))
            demand.append(d.quantity // 2)
    return variants, demand


def _fits(var: Variant, height: float, length: float) -> bool:
    """Whether the envelope's box fits a strip of ``height`` x ``length`` at some allowed rotation."""
    angles = var.rotations if var.rotations is not None else tuple(np.arange(0.0, 180.0, FREE_ANGLE_STEP_DEG))
    for a in angles:
        pts = place_points(var.polygon, float(a), False, (0.0, 0.0))
        w, h = np.ptp(pts, axis=0)
        if h <= height and w <= length:
            return True
    return False


def _record(result: NestResult, variants: list[Variant], fills: dict[tuple[int, int], list[Guest]],
            layout: StripLayout, width: float, length: float, s: NestSettings, copies: _CopyCounter,
            engine_copy: dict[int, int] | None = None) -> None:
    """Turn one strip layout into a sheet (or the roll) with its placements."""
    sheet_no = len(result.sheets)
    shift = (s.margin_mm - 0.5 * s.gap_mm, s.margin_mm - 0.5 * s.gap_mm)
    engine_copy = engine_copy if engine_copy is not None else {}
    sheet = Sheet(width, length, 0.0)
    far = 0.0
    for p in layout.placements:
        var = variants[p.item]
        k = engine_copy.get(p.item, 0)
        engine_copy[p.item] = k + 1
        host = _place(result, var, sheet_no, p.rotation_deg, (p.offset[0] + shift[0], p.offset[1] + shift[1]),
                      copies, sheet)
        host_index = len(result.placements) - 1
        far = max(far, _far_x(result, host))
        for g in fills.get((p.item, k), []):
            gv = variants[g.variant]
            rotation, mirrored, offset = compose(host, g.rotation_deg, gv.mirrored, g.offset)
            _place(result, gv, sheet_no, rotation, offset, copies, sheet, mirrored, host_index)
    sheet.used_length = min(length, far + s.margin_mm) if math.isfinite(length) else far + s.margin_mm
    if not math.isfinite(length):
        sheet.length = sheet.used_length
    result.sheets.append(sheet)


def _place(result: NestResult, var: Variant, sheet_no: int, rotation: float, offset: tuple[float, float],
           copies: _CopyCounter, sheet: Sheet, mirrored: bool | None = None, in_hole_of: int | None = None) -> Placed:
    m = var.mirrored if mirrored is None else mirrored
    placed = Placed(var.demand, copies.take(var.demand, var.mirrored), sheet_no, rotation % 360.0, m,
                    (float(offset[0]), float(offset[1])), in_hole_of)
    result.placements.append(placed)
    part = result.demands[var.demand].part
    sheet.parts += 1
    sheet.parts_area_mm2 += part.area_mm2
    return placed


def _far_x(result: NestResult, p: Placed) -> float:
    """The largest x the true part reaches (flattened outline plus its deviation bound), mm."""
    part = result.demands[p.demand].part
    pts = place_points(part.outline, p.rotation_deg, p.mirrored, p.offset)
    return float(pts[:, 0].max()) + part.deviation


def _sheets(result: NestResult, variants: list[Variant], demand: list[int], fills: dict[tuple[int, int], list[Guest]],
            s: NestSettings, clock: _Clock, copies: _CopyCounter) -> None:
    stock = [z.count if z.count is not None else math.inf for z in s.sheets]
    engine_copy: dict[int, int] = {}
    left = list(demand)
    area = [v.area for v in variants]
    try:
        _fill_sheets(result, variants, left, fills, s, clock, copies, stock, engine_copy, area)
    finally:
        if result.sheets:
            result.sheets[-1].last = True


def _fill_sheets(result: NestResult, variants: list[Variant], left: list[int],
                 fills: dict[tuple[int, int], list[Guest]],
                 s: NestSettings, clock: _Clock, copies: _CopyCounter, stock: list[float], engine_copy: dict[int, int],
                 area: list[float]) -> None:
    while sum(left) > 0:
        usable = [i for i, n in enumerate(stock) if n > 0]
        if not usable:
            for v, n in enumerate(left):
                if n:
                    result.unplaced.append(Unplaced(variants[v].demand, n, "no sheet left in stock"))
            return
        big = max(usable, key=lambda i: s.sheets[i].width * s.sheets[i].length)
        size = s.sheets[big]
        height = size.width - 2 * s.margin_mm + s.gap_mm
        room = size.length - 2 * s.margin_mm + s.gap_mm
        here = [n if _fits(variants[v], height, room) else 0 for v, n in enumerate(left)]
        if not any(here):
            for v, n in enumerate(left):
                if n:
                    result.unplaced.append(Unplaced(variants[v].demand, n, "no sheet left in stock that it fits"))
            return
        waiting = sum(a * n for a, n in zip(area, here, strict=True))
        rounds = max(1.0, math.ceil(waiting / (height * room)))
        doing = f"nesting sheet {len(result.sheets) + 1}"
        layout = clock.pack(variants, here, height, clock.left() / rounds, s.seed, doing)
        if layout.length <= room:  # all that fits this size fits one sheet: the smallest size that holds it
            chosen, layout = _smaller_sheet(s, stock, usable, big, variants, here, layout, clock, area)
            stock[chosen] -= 1
            _record(result, variants, fills, layout, s.sheets[chosen].width, s.sheets[chosen].length, s,
                    copies, engine_copy)
            for p in layout.placements:
                left[p.item] -= 1
            continue
        inside = [p for p in layout.placements if _reach(variants[p.item], p) <= room]
        if not inside:  # the engine's first copy always fits alone
            inside = [min(layout.placements, key=lambda p: _reach(variants[p.item], p))]
            layout = clock.pack(variants, _counts_of(inside, len(variants)), height, 1.0, s.seed, "nesting one part")
            inside = layout.placements
        taken = _counts_of(inside, len(variants))
        layout = StripLayout(room, inside)
        layout = _top_up(variants, here, taken, layout, height, room, clock, s, area)
        stock[big] -= 1
        _record(result, variants, fills, layout, size.width, size.length, s, copies, engine_copy)
        for p in layout.placements:
            left[p.item] -= 1


def _counts_of(placements: list, n: int) -> list[int]:
    out = [0] * n
    for p in placements:
        out[p.item] += 1
    return out


def _reach(var: Variant, p: object) -> float:
    pts = place_points(var.polygon, p.rotation_deg, False, p.offset)  # type: ignore[attr-defined]
    return float(pts[:, 0].max())


def _top_up(variants: list[Variant], here: list[int], taken: list[int], layout: StripLayout, height: float,
            room: float, clock: _Clock, s: NestSettings, area: list[float]) -> StripLayout:
    """Offer the sheet more of the waiting copies, largest first, while the engine still fits them in."""
    free = height * room - sum(a * n for a, n in zip(area, taken, strict=True))
    extra = [v for v in sorted(range(len(variants)), key=lambda v: -area[v]) for _ in range(here[v] - taken[v])]
    batch = [v for v in extra if (free := free - area[v]) >= 0] if extra else []
    tries = 0
    while batch and tries < 4 and not clock.interrupted and clock.left() > 1.0:
        tries += 1
        counts = list(taken)
        for v in batch:
            counts[v] += 1
        trial = clock.pack(variants, counts, height, min(clock.left() / 4, 10.0), s.seed, "filling the sheet")
        if trial.length <= room:
            layout, taken = trial, counts
            rest = extra[len(batch):]
            free = height * room - sum(a * n for a, n in zip(area, taken, strict=True))
            batch = [v for v in rest if (free := free - area[v]) >= 0]
            extra = rest
        else:
            batch = batch[: len(batch) // 2]
    return layout


def _smaller_sheet(s: NestSettings, stock: list[float], usable: list[int], big: int, variants: list[Variant],
                   here: list[int], layout: StripLayout, clock: _Clock, area: list[float]) -> tuple[int, StripLayout]:
    """For the last sheet: the smallest stock size that still holds the waiting parts."""
    need = sum(a * n for a, n in zip(area, here, strict=True))
    smaller = sorted((i for i in usable if s.sheets[i].width * s.sheets[i].length < s.sheets[big].width *
                      s.sheets[big].length), key=lambda i: s.sheets[i].width * s.sheets[i].length)
    for i in smaller:
        z = s.sheets[i]
        height, room = z.width - 2 * s.margin_mm + s.gap_mm, z.length - 2 * s.margin_mm + s.gap_mm
        if need > height * room or clock.interrupted:
            continue
        if not all(_fits(variants[v], height, room) for v, n in enumerate(here) if n):
            continue
        # at least a second, even past the budget: a smaller last sheet is worth it
        trial = clock.pack(variants, here, height, max(1.0, min(clock.left() / 2, 10.0)), s.seed, f"trying {z.label}")
        if trial.length <= room:
            return i, trial
    return big, layout
