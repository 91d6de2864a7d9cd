"""Seam estimate reports: JSON (``"format": "pathlen-seam"``), CSV (a row per piece) and a table.

Seam lengths in cm by default (``--units`` mm or in), thread in m (yd with in); numbers unrounded in
JSON and CSV.
"""

from __future__ import annotations

import csv
import io
import json
from typing import Any

from rich.console import Console

from pathlen.estimates.seam_estimate import SeamEstimate, SeamSettings, cones_for
from pathlen.export import from_mm, plain, print_notes, report_table

MM_PER_YD = 914.4


def thread_unit(units: str) -> str:
    return "yd" if units == "in" else "m"


def _thread(mm: float, units: str) -> float:
    return mm / (MM_PER_YD if units == "in" else 1000.0)


def _piece(p: Any, units: str) -> dict[str, Any]:
    return {
        "name": p.name, "quantity": p.quantity, "size": p.size, "error": p.error,
        "cut_length": from_mm(p.cut_length_mm, units), "sew_line_length": from_mm(p.sew_line_mm, units),
        "sew_length": from_mm(p.sew_length_mm, units), "notches": p.notches,
        "edges": [{"index": k, "length": from_mm(e, units)} for k, e in enumerate(p.edges, start=1)],
        "seams": [{"stitch": x.stitch, "length": from_mm(x.length_mm, units), "ratio": x.ratio,
                   "waste_pct": x.waste_pct, "thread_length": _thread(x.thread_mm, units)} for x in p.seams],
        "thread_length": _thread(p.thread_mm, units),
    }


def seam_document(results: list[SeamEstimate], units: str, s: SeamSettings, cone_mm: float | None,
                  cautions: list[str]) -> dict[str, Any]:
    ok = [r for r in results if r.ok]
    files = []
    for r in results:
        sizes: dict[str, dict[str, float]] = {}
        for p in r.pieces:
            entry = sizes.setdefault(p.size, {"sew_length": 0.0, "thread_length": 0.0})
            entry["sew_length"] += from_mm(p.sew_length_mm * p.quantity, units)
            entry["thread_length"] += _thread(p.thread_mm * p.quantity, units)
        files.append({
            "path": r.path, "ok": r.ok, "error": r.error, "quantity": r.quantity,
            "pieces": [_piece(p, units) for p in r.pieces],
            "sizes": sizes if len(sizes) > 1 else {},
            "sew_length": from_mm(r.sew_length_mm, units), "thread_length": _thread(r.thread_mm, units),
            "matches": [{"a": m.a, "b": m.b, "difference": from_mm(m.difference_mm, units), "ease_pct": m.ease_pct,
                         "ok": m.ok} for m in r.matches],
            "warnings": r.warnings,
        })
    thread_mm = sum(r.thread_mm * r.quantity for r in ok)
    total: dict[str, Any] = {"files": len(results), "failed": len(results) - len(ok),
                             "sew_length": from_mm(sum(r.sew_length_mm * r.quantity for r in ok), units),
                             "thread_length": _thread(thread_mm, units)}
    if cone_mm:
        total["cones"] = cones_for(thread_mm, cone_mm)
    return {"format": "pathlen-seam", "version": 1, "units": {"length": units, "thread": thread_unit(units)},
            "allowance_mm": s.allowance_mm, "waste_pct": s.waste_pct, "cautions": cautions, "files": files,
            "total": total}


def render_json(results: list[SeamEstimate], units: str, s: SeamSettings, cone_mm: float | None,
                cautions: list[str]) -> str:
    return json.dumps(seam_document(results, units, s, cone_mm, cautions), indent=2) + "\n"


def render_csv(results: list[SeamEstimate], units: str) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["path", "piece", "size", "quantity", f"cut_length_{units}", f"sew_length_{units}",
                f"thread_length_{thread_unit(units)}", "ok", "error"])
    for r in results:
        if not r.ok:
            w.writerow([r.path, "", "", "", "", "", "", "false", r.error])
        for p in r.pieces:
            w.writerow([r.path, p.name, p.size, p.quantity, repr(from_mm(p.cut_length_mm, units)),
                        repr(from_mm(p.sew_length_mm, units)), repr(_thread(p.thread_mm, units)), "true", ""])
    return buf.getvalue()


def render_table(results: list[SeamEstimate], units: str, s: SeamSettings, cone_mm: float | None,
                 cautions: list[str], console: Console) -> None:
    tu = thread_unit(units)
    table = report_table(f"Seams (allowance {s.allowance_mm:g} mm where no sew line is drawn, thread + "
                         f"{s.waste_pct:g} % waste)", [
        ("File", "left"), ("Piece", "left"), ("Size", "left"), ("Qty", "right"), (f"Cut line ({units})", "right"),
        (f"Sewn ({units})", "right"), ("Edges", "left"), ("Stitches", "left"), (f"Thread ({tu})", "right")])
    for r in results:
        if not r.ok:
            table.add_row(plain(r.path), "", "", "", "[red]failed[/red]", "", "", "", "")
            continue
        for k, p in enumerate(r.pieces):
            table.add_row(plain(r.path) if k == 0 else "", plain(p.name), plain(p.size), str(p.quantity),
                          f"{from_mm(p.cut_length_mm, units):,.1f}", f"{from_mm(p.sew_length_mm, units):,.1f}",
                          " ".join(f"{from_mm(e, units):.1f}" for e in p.edges),
                          ", ".join(sorted({str(x.stitch) for x in p.seams})), f"{_thread(p.thread_mm, units):,.2f}")
    doc = seam_document(results, units, s, cone_mm, cautions)
    t = doc["total"]
    table.add_section()
    table.add_row(f"[b]Order total ({t['files']} files, {t['failed']} failed)[/b]", "", "", "", "",
                  f"[b]{t['sew_length']:,.1f}[/b]", "", "", f"[b]{t['thread_length']:,.2f}[/b]")
    console.print(table)
    if "cones" in t:
        console.print(f"Cones to order: {t['cones']}.", highlight=False)
    for r in results:
        for m in r.matches:
            mark = "ok" if m.ok else "[yellow]check[/yellow]"
            console.print(f"match {plain(m.a)} ~ {plain(m.b)}: {from_mm(m.difference_mm, units):+.2f} {units} "
                          f"({m.ease_pct:+.1f} % ease) {mark}", highlight=False)
    print_notes(console, results, cautions)
