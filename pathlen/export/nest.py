"""Nest reports: JSON (``"format": "pathlen-nest"``), CSV (one row per placed copy, unplaced copy or failed
file) and a table.  Lengths and coordinates in the chosen units, areas in its square, utilisation a
fraction 0..1."""

from __future__ import annotations

import csv
import io
import json
from typing import Any

from rich.console import Console

from pathlen.export import from_mm, plain, print_notes, report_table
from pathlen.nest.layout import NestResult
from pathlen.nest.parts import PartsOutcome


def _area(mm2: float, units: str) -> float:
    return from_mm(from_mm(mm2, units), units)


def nest_document(result: NestResult | None, files: list[PartsOutcome], units: str) -> dict[str, Any]:
    """The JSON document; ``result`` is None when no part could be read."""
    demand_of = {} if result is None else {(d.part.file, d.part.index): i for i, d in enumerate(result.demands)}
    placed_count: dict[int, int] = {}
    for p in (result.placements if result else []):
        placed_count[p.demand] = placed_count.get(p.demand, 0) + 1
    entries = []
    for f in files:
        parts = []
        for part in f.parts:
            i = demand_of.get((part.file, part.index))
            quantity = result.demands[i].quantity if result is not None and i is not None else 0
            parts.append({"part": part.index, "quantity": quantity, "placed": placed_count.get(i, 0),
                          "area": _area(part.area_mm2, units), "area_error_bound": _area(part.area_bound_mm2, units),
                          "cut_length": from_mm(part.cut_length_mm, units), "contours": part.contours,
                          "holes": part.holes, "size": [from_mm(part.box[2] - part.box[0], units),
                                                        from_mm(part.box[3] - part.box[1], units)]})
        entries.append({"path": f.path, "ok": f.ok, "error": f.error, "parts": parts, "warnings": f.warnings})
    doc: dict[str, Any] = {"format": "pathlen-nest", "version": 1, "units": units, "files": entries}
    if result is None:
        doc.update(placements=[], sheets=[], parts_area=0.0, utilisation=0.0, unplaced=[])
    else:
        doc.update(_layout(result, units))
    failed = sum(not f.ok for f in files)
    doc["total"] = {"files": len(files), "failed": failed,
                    "copies": len(doc["placements"]), "unplaced": sum(u["count"] for u in doc["unplaced"]),
                    "sheets": len(doc["sheets"]),
                    "used_length": sum(s["used_length"] for s in doc["sheets"])}
    return doc


def _layout(r: NestResult, units: str) -> dict[str, Any]:
    def part_of(i: int) -> tuple[str, int]:
        return r.demands[i].part.file, r.demands[i].part.index

    material: dict[str, Any] = ({"kind": "roll", "width": from_mm(r.sheets[0].width, units) if r.sheets else None}
                                if r.roll else {"kind": "sheets"})
    return {
        "material": material, "margin": from_mm(r.margin_mm, units), "gap": from_mm(r.gap_mm, units),
        "engine": r.engine, "seconds": r.seconds, "interrupted": r.interrupted,
        "placements": [{"file": part_of(p.demand)[0], "part": part_of(p.demand)[1], "copy": p.copy, "sheet": p.sheet,
                        "rotation_deg": p.rotation_deg, "mirrored": p.mirrored,
                        "offset": [from_mm(p.offset[0], units), from_mm(p.offset[1], units)],
                        "in_hole_of": p.in_hole_of} for p in r.placements],
        "sheets": [{"sheet": k, "width": from_mm(s.width, units), "length": from_mm(s.length, units),
                    "used_length": from_mm(s.used_length, units), "parts": s.parts,
                    "parts_area": _area(s.parts_area_mm2, units), "utilisation": s.utilisation,
                    "remnant": None if s.remnant is None else {"width": from_mm(s.remnant[0], units),
                                                               "length": from_mm(s.remnant[1], units)}}
                   for k, s in enumerate(r.sheets)],
        "parts_area": _area(r.parts_area_mm2, units), "utilisation": r.utilisation,
        "unplaced": [{"file": part_of(u.demand)[0], "part": part_of(u.demand)[1], "count": u.count,
                      "reason": u.reason} for u in r.unplaced],
        "notes": r.notes,
    }


def render_json(doc: dict[str, Any]) -> str:
    return json.dumps(doc, indent=2, allow_nan=False) + "\n"


def render_csv(doc: dict[str, Any]) -> str:
    u = doc["units"]
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["status", "file", "part", "copy", "sheet", "rotation_deg", "mirrored", f"x_{u}", f"y_{u}", "reason"])
    for p in doc["placements"]:
        w.writerow(["placed", p["file"], p["part"], p["copy"], p["sheet"], f"{p['rotation_deg']:.6g}",
                    str(p["mirrored"]).lower(), f"{p['offset'][0]:.6f}", f"{p['offset'][1]:.6f}", ""])
    for x in doc["unplaced"]:
        for _ in range(x["count"]):
            w.writerow(["unplaced", x["file"], x["part"], "", "", "", "", "", "", x["reason"]])
    for f in doc["files"]:
        if not f["ok"]:
            w.writerow(["failed", f["path"], "", "", "", "", "", "", "", f["error"]])
    return buf.getvalue()


def render_table(doc: dict[str, Any], results: list[PartsOutcome], cautions: list[str], console: Console) -> None:
    u = doc["units"]
    sheets = report_table(f"Material ({doc.get('material', {}).get('kind', 'sheets')})",
                          [("sheet", "right"), (f"size ({u})", "right"), ("parts", "right"),
                           (f"used length ({u})", "right"), ("utilisation", "right"), (f"remnant ({u})", "right")])
    for s in doc["sheets"]:
        rem = s["remnant"]
        sheets.add_row(str(s["sheet"] + 1), f"{s['width']:.1f} x {s['length']:.1f}", str(s["parts"]),
                       f"{s['used_length']:.1f}", f"{100 * s['utilisation']:.1f} %",
                       f"{rem['width']:.1f} x {rem['length']:.1f}" if rem else "")
    console.print(sheets)
    parts = report_table("Parts", [("file", "left"), ("part", "right"), ("quantity", "right"), ("placed", "right"),
                                   (f"area ({u}²)", "right"), (f"cut length ({u})", "right")])
    for f in doc["files"]:
        if not f["ok"]:
            parts.add_row(plain(f["path"]), "", "", "", "", "[red]failed[/red]")
        for p in f["parts"]:
            parts.add_row(plain(f["path"]), str(p["part"] + 1), str(p["quantity"]), str(p["placed"]),
                          f"{p['area']:.2f}", f"{p['cut_length']:.2f}")
    console.print(parts)
    t = doc["total"]
    if doc["sheets"]:
        what = "roll" if doc["material"]["kind"] == "roll" else "sheets"
        console.print(f"{t['copies']} copies on {t['sheets']} {what}"
                      f", used length {t['used_length']:.1f} {u}, parts area {doc['parts_area']:.1f} {u}², "
                      f"utilisation {100 * doc['utilisation']:.1f} % ({doc['engine']}, {doc['seconds']:.1f} s"
                      f"{', interrupted: best so far' if doc['interrupted'] else ''})", highlight=False)
    for x in doc["unplaced"]:
        console.print(f"[red]not placed[/red] {plain(x['file'])} part {x['part'] + 1}: {x['count']} copies: "
                      f"{plain(x['reason'])}", highlight=False)
    print_notes(console, results, cautions)
