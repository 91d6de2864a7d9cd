"""Bead estimate reports: JSON (``"format": "pathlen-bead"``), CSV (a row per file and joint) and a table.

Lengths in the chosen units, sections in mm², volumes in ml, time in s; numbers unrounded in JSON
and CSV, rounded only in the table.
"""

from __future__ import annotations

import csv
import io
import json
from typing import Any

from rich.console import Console

from pathlen.estimates.bead import ROD_OVERSIZE, BeadEstimate, BeadSettings, whole_packs
from pathlen.export import from_mm, plain, print_notes, report_table


def _line_entry(line: Any, units: str) -> dict[str, Any]:
    rect = line.section.kind == "rect"
    return {"section": line.section.text(), "section_mm2": line.section.area_mm2, "sides": line.sides,
            "length": from_mm(line.length_mm, units), "volume_ml": line.volume_ml, "packs": line.packs,
            "backer_rod_length": from_mm(line.backer_rod_mm, units),
            "backer_rod_diameter_mm": ROD_OVERSIZE * line.section.a if rect else None}


def bead_document(results: list[BeadEstimate], units: str, s: BeadSettings, cautions: list[str]) -> dict[str, Any]:
    ok = [r for r in results if r.ok]
    volume = sum(r.volume_ml for r in ok)
    files = []
    for r in results:
        single = len(r.lines) == 1
        files.append({
            "path": r.path, "ok": r.ok, "error": r.error,
            "length": from_mm(r.length_mm, units),
            "section_mm2": r.lines[0].section.area_mm2 if single else None,
            "volume_ml": r.volume_ml, "pack_ml": s.pack_ml, "waste_pct": s.waste_pct, "packs": r.packs,
            "backer_rod_length": from_mm(r.backer_rod_mm, units),
            "layers": {(x.selector or "(all)"): _line_entry(x, units) for x in r.lines},
            "time_s": r.time_s, "cost": r.cost, "warnings": r.warnings,
        })
    total = {"files": len(results), "failed": len(results) - len(ok),
             "length": from_mm(sum(r.length_mm for r in ok), units), "volume_ml": volume,
             "packs": whole_packs(volume, s.pack_ml, s.waste_pct),
             "backer_rod_length": from_mm(sum(r.backer_rod_mm for r in ok), units)}
    if s.gun_speed_mm_s:
        total["time_s"] = sum(r.time_s or 0.0 for r in ok)
    if s.pack_price is not None:
        total["cost"] = total["packs"] * s.pack_price
    return {"format": "pathlen-bead", "version": 1, "units": units, "cautions": cautions, "files": files,
            "total": total}


def render_json(results: list[BeadEstimate], units: str, s: BeadSettings, cautions: list[str]) -> str:
    return json.dumps(bead_document(results, units, s, cautions), indent=2) + "\n"


def render_csv(results: list[BeadEstimate], units: str, s: BeadSettings) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["path", "joint", "section", "sides", f"length_{units}", "section_mm2", "volume_ml", "packs",
                f"backer_rod_length_{units}", "ok", "error"])
    for r in results:
        if not r.ok:
            w.writerow([r.path, "", "", "", "", "", "", "", "", "false", r.error])
        for x in r.lines:
            w.writerow([r.path, x.selector or "(all)", x.section.text(), x.sides, repr(from_mm(x.length_mm, units)),
                        repr(x.section.area_mm2), repr(x.volume_ml), x.packs, repr(from_mm(x.backer_rod_mm, units)),
                        "true", ""])
    return buf.getvalue()


def render_table(results: list[BeadEstimate], units: str, s: BeadSettings, cautions: list[str],
                 console: Console) -> None:
    digits = 1 if units == "mm" else 2
    table = report_table(f"Sealant beads ({s.pack_ml:g} ml packs, {s.waste_pct:g} % waste)", [
        ("File", "left"), ("Joint", "left"), ("Section", "left"), (f"Length ({units})", "right"),
        ("Area (mm²)", "right"), ("Volume (ml)", "right"), ("Packs", "right"), (f"Backer rod ({units})", "right"),
        ("Rod Ø (mm)", "right")])
    for r in results:
        if not r.ok:
            table.add_row(plain(r.path), "", "", "[red]failed[/red]", "", "", "", "", "")
            continue
        for k, x in enumerate(r.lines):
            rect = x.section.kind == "rect"
            table.add_row(plain(r.path) if k == 0 else "", plain(x.selector or "(all)"),
                          f"{x.section.text()}{' x2 sides' if x.sides == 2 else ''}",
                          f"{from_mm(x.length_mm, units):,.{digits}f}", f"{x.section.area_mm2:,.2f}",
                          f"{x.volume_ml:,.1f}", str(x.packs),
                          f"{from_mm(x.backer_rod_mm, units):,.{digits}f}" if rect else "",
                          f"{ROD_OVERSIZE * x.section.a:g}" if rect else "")
    doc = bead_document(results, units, s, cautions)
    t = doc["total"]
    table.add_section()
    table.add_row(f"[b]Total ({t['files']} files, {t['failed']} failed)[/b]", "", "",
                  f"{t['length']:,.{digits}f}", "", f"[b]{t['volume_ml']:,.1f}[/b]", f"[b]{t['packs']}[/b]",
                  f"{t['backer_rod_length']:,.{digits}f}", "")
    console.print(table)
    extra = []
    if "time_s" in t:
        extra.append(f"time at the gun {t['time_s'] / 60.0:,.1f} min")
    if "cost" in t:
        extra.append(f"sealant cost {t['cost']:,.2f}")
    if extra:
        console.print("; ".join(extra).capitalize() + ".", highlight=False)
    print_notes(console, results, cautions)
