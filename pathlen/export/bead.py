"""Bead estimate reports: JSON (``"format": "pathlen-bead"``), CSV and a table.

Units follow ``--units``: metric lengths with volumes in ml, sections in mm² and rod diameters in
mm; ``in`` or ``ft`` lengths with volumes in US fl oz, sections in in² and rod diameters in inches
(exact factors).  Numbers unrounded in JSON and CSV, rounded only in the table.  Packs, primer and
cost are given per product (never pooled across products) and in total.
"""

from __future__ import annotations

import csv
import io
import json
from typing import Any

from rich.console import Console

from pathlen.estimates.bead import ML_PER_US_FL_OZ, BeadEstimate, BeadSettings, product_totals
from pathlen.estimates.joint_design import MM_PER_IN
from pathlen.export import from_mm, plain, print_notes, report_table


def imperial(units: str) -> bool:
    return units in ("in", "ft")


def unit_names(units: str) -> dict[str, str]:
    """The units of every quantity in a report for ``--units``."""
    if imperial(units):
        return {"length": units, "volume": "fl oz", "section": "in²", "diameter": "in"}
    return {"length": units, "volume": "ml", "section": "mm²", "diameter": "mm"}


def volume(ml: float, units: str) -> float:
    return ml / ML_PER_US_FL_OZ if imperial(units) else ml


def section(mm2: float, units: str) -> float:
    return mm2 / MM_PER_IN**2 if imperial(units) else mm2


def diameter(mm: float | None, units: str) -> float | None:
    return None if mm is None else (mm / MM_PER_IN if imperial(units) else mm)


def _line_entry(line: Any, units: str) -> dict[str, Any]:
    return {"section": line.section.text(), "section_area": section(line.section.area_mm2, units),
            "sides": line.sides, "product": line.product or None, "length": from_mm(line.length_mm, units),
            "volume": volume(line.volume_ml, units), "primer": volume(line.primer_ml, units),
            "backer_rod_length": from_mm(line.backer_rod_mm, units),
            "backer_rod_diameter": diameter(line.rod_diameter_mm, units),
            "movement_mm": line.movement.mm if line.movement else None,
            "movement_basis": line.movement.basis if line.movement else None,
            "min_width_mm": line.min_width_mm}


def _products(uses: list[Any], units: str, s: BeadSettings) -> list[dict[str, Any]]:
    return [{"product": u.name or None, "pack": volume(u.pack_ml, units), "volume": volume(u.volume_ml, units),
             "packs": u.packs(s.waste_pct), "price": u.price, "cost": u.cost(s.waste_pct),
             "primer": volume(u.primer_ml, units), "length": from_mm(u.length_mm, units)} for u in uses]


def _rods(results: list[BeadEstimate], units: str) -> list[dict[str, Any]]:
    """Backer rod length per stock diameter over the job."""
    by: dict[float | None, float] = {}
    for r in results:
        if r.ok:
            for x in r.lines:
                if x.backer_rod_mm > 0:
                    by[x.rod_diameter_mm] = by.get(x.rod_diameter_mm, 0.0) + x.backer_rod_mm
    return [{"diameter": diameter(d, units), "length": from_mm(mm, units)}
            for d, mm in sorted(by.items(), key=lambda kv: (kv[0] is None, kv[0] or 0.0))]


def bead_document(results: list[BeadEstimate], units: str, s: BeadSettings, cautions: list[str]) -> dict[str, Any]:
    ok = [r for r in results if r.ok]
    files = []
    for r in results:
        files.append({
            "path": r.path, "ok": r.ok, "error": r.error,
            "length": from_mm(r.length_mm, units), "volume": volume(r.volume_ml, units), "waste_pct": s.waste_pct,
            "packs": r.packs, "products": _products(r.products, units, s),
            "backer_rod_length": from_mm(r.backer_rod_mm, units),
            "layers": {(x.selector or "(all)"): _line_entry(x, units) for x in r.lines},
            "time_s": r.time_s, "cost": r.cost, "warnings": r.warnings,
        })
    uses = product_totals(ok, s)
    products = _products(uses, units, s)
    total: dict[str, Any] = {"files": len(results), "failed": len(results) - len(ok),
                             "length": from_mm(sum(r.length_mm for r in ok), units),
                             "volume": volume(sum(r.volume_ml for r in ok), units),
                             "packs": sum(p["packs"] for p in products), "products": products,
                             "primer": volume(sum(u.primer_ml for u in uses), units),
                             "backer_rod_length": from_mm(sum(r.backer_rod_mm for r in ok), units),
                             "backer_rod": _rods(results, units)}
    if s.gun_speed_mm_s:
        total["time_s"] = sum(r.time_s or 0.0 for r in ok)
    if products and all(p["cost"] is not None for p in products):
        total["cost"] = sum(p["cost"] for p in products)
    return {"format": "pathlen-bead", "version": 2, "units": unit_names(units), "cautions": cautions,
            "files": files, "total": total}


def render_json(results: list[BeadEstimate], units: str, s: BeadSettings, cautions: list[str]) -> str:
    return json.dumps(bead_document(results, units, s, cautions), indent=2) + "\n"


def render_csv(results: list[BeadEstimate], units: str, s: BeadSettings) -> str:
    """One table: a ``joint`` row per file and joint, a ``product`` row per product over the job."""
    n = unit_names(units)
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["record", "path", "joint", "section", "sides", "product", f"length_{units}",
                f"section_{n['section']}", f"volume_{n['volume']}", "packs", f"primer_{n['volume']}",
                f"backer_rod_length_{units}", f"backer_rod_diameter_{n['diameter']}", "cost", "ok", "error"])
    for r in results:
        if not r.ok:
            w.writerow(["file", r.path, *[""] * 12, "false", r.error])
        for x in r.lines:
            e = _line_entry(x, units)
            w.writerow(["joint", r.path, x.selector or "(all)", x.section.text(), x.sides, x.product,
                        repr(e["length"]), repr(e["section_area"]), repr(e["volume"]), "", repr(e["primer"]),
                        repr(e["backer_rod_length"]), "" if e["backer_rod_diameter"] is None
                        else repr(e["backer_rod_diameter"]), "", "true", ""])
    for p in _products(product_totals([r for r in results if r.ok], s), units, s):
        w.writerow(["product", "", "", "", "", p["product"] or "", repr(p["length"]), "", repr(p["volume"]),
                    p["packs"], repr(p["primer"]), "", "", "" if p["cost"] is None else repr(p["cost"]), "true", ""])
    return buf.getvalue()


def render_table(results: list[BeadEstimate], units: str, s: BeadSettings, cautions: list[str],
                 console: Console) -> None:
    n = unit_names(units)
    digits = 1 if units in ("mm", "in") else 2
    table = report_table(f"Sealant beads ({s.waste_pct:g} % waste)", [
        ("File", "left"), ("Joint", "left"), ("Section", "left"), ("Product", "left"), (f"Length ({units})", "right"),
        (f"Area ({n['section']})", "right"), (f"Volume ({n['volume']})", "right"),
        (f"Backer rod ({units})", "right"), (f"Rod Ø ({n['diameter']})", "right")])
    for r in results:
        if not r.ok:
            table.add_row(plain(r.path), "", "", "", "[red]failed[/red]", "", "", "", "")
            continue
        for k, x in enumerate(r.lines):
            e = _line_entry(x, units)
            rod = e["backer_rod_diameter"]
            table.add_row(plain(r.path) if k == 0 else "", plain(x.selector or "(all)"),
                          f"{x.section.text()}{' x2 sides' if x.sides == 2 else ''}", plain(x.product or "-"),
                          f"{e['length']:,.{digits}f}", f"{e['section_area']:,.{4 if imperial(units) else 2}f}",
                          f"{e['volume']:,.1f}", f"{e['backer_rod_length']:,.{digits}f}" if x.backer_rod_mm else "",
                          f"{rod:g}" if rod is not None else ("none in stock" if x.backer_rod_mm else ""))
    doc = bead_document(results, units, s, cautions)
    t = doc["total"]
    table.add_section()
    table.add_row(f"[b]Total ({t['files']} files, {t['failed']} failed)[/b]", "", "", "",
                  f"{t['length']:,.{digits}f}", "", f"[b]{t['volume']:,.1f}[/b]",
                  f"{t['backer_rod_length']:,.{digits}f}", "")
    console.print(table)
    packs = report_table("Packs by product (never pooled across products)", [
        ("Product", "left"), (f"Pack ({n['volume']})", "right"), (f"Volume ({n['volume']})", "right"),
        ("Packs", "right"), (f"Primer ({n['volume']})", "right"), ("Cost", "right")])
    for p in t["products"]:
        packs.add_row(plain(p["product"] or "command line pack"), f"{p['pack']:g}", f"{p['volume']:,.1f}",
                      str(p["packs"]), f"{p['primer']:,.1f}" if p["primer"] else "",
                      f"{p['cost']:,.2f}" if p["cost"] is not None else "")
    packs.add_section()
    packs.add_row("[b]Total[/b]", "", "", f"[b]{t['packs']}[/b]", f"{t['primer']:,.1f}" if t["primer"] else "",
                  f"[b]{t['cost']:,.2f}[/b]" if "cost" in t else "")
    console.print(packs)
    rods = ", ".join(f"{r['length']:,.{digits}f} {units} of {r['diameter']:g} {n['diameter']}"
                     if r["diameter"] is not None else f"{r['length']:,.{digits}f} {units} with no stock size"
                     for r in t["backer_rod"])
    if rods:
        console.print(f"Backer rod: {rods}.", highlight=False)
    if "time_s" in t:
        console.print(f"Time at the gun {t['time_s'] / 60.0:,.1f} min.", highlight=False)
    print_notes(console, results, cautions)
