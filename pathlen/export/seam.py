"""Seam estimate reports: JSON (``"format": "pathlen-seam"``), CSV and a table.

Seam lengths in cm by default (``--units`` mm or in), thread in m (yd with in); numbers unrounded in
JSON and CSV.  Thread is given per seam, per thread position (each position runs from its own
cones) and in total; the fabric marker (when laid) in m, m² and g per garment.
"""

from __future__ import annotations

import csv
import io
import json
from collections.abc import Sequence
from typing import Any

from rich.console import Console

from pathlen.estimates.seam_estimate import SeamEstimate, SeamSettings, position_totals
from pathlen.export import from_mm, plain, print_notes, report_table

MM_PER_YD = 914.4


def thread_unit(units: str) -> str:
    return "yd" if units == "in" else "m"


def _thread(mm: float, units: str) -> float:
    return mm / (MM_PER_YD if units == "in" else 1000.0)


def _seam(x: Any, units: str) -> dict[str, Any]:
    return {"stitch": x.stitch, "length": from_mm(x.length_mm, units), "ratio": x.ratio, "formula": x.formula,
            "spc": x.spc, "thickness_mm": x.thickness_mm, "width_mm": x.width_mm, "waste_pct": x.waste_pct,
            "thread_length": _thread(x.thread_mm, units),
            "positions": [{"position": u.position, "threads": u.threads, "ratio_per_thread": u.ratio,
                           "thread_length_per_thread": _thread(u.thread_mm, units)} for u in x.positions]}


def _piece(p: Any, units: str) -> dict[str, Any]:
    return {
        "name": p.name, "quantity": p.quantity, "size": p.size, "error": p.error,
        "cut_length": from_mm(p.cut_length_mm, units), "sew_line_length": from_mm(p.sew_line_mm, units),
        "sew_length": from_mm(p.sew_length_mm, units), "notches": p.notches, "sew_line_loops": p.loops,
        "edges": [{"index": k, "length": from_mm(e, units)} for k, e in enumerate(p.edges, start=1)],
        "seams": [_seam(x, units) for x in p.seams],
        "thread_length": _thread(p.thread_mm, units),
    }


def _marker(m: Any) -> dict[str, Any]:
    """A marker in m, m² and g (fixed units: fabric is bought so); placements in mm, as ``pathlen nest``
    places parts: R(rotation)·M·p + offset, p in the pattern file's coordinates."""
    return {"path": m.path, "ratio": m.ratio, "garments": m.garments, "fabric_width_m": m.width_mm / 1000.0,
            "length_m": m.length_mm / 1000.0, "pieces_laid": m.pieces, "pieces_unplaced": m.unplaced,
            "pieces_area_m2": m.parts_area_mm2 / 1e6, "efficiency": m.efficiency,
            "per_garment": {"length_m": m.length_per_garment_mm / 1000.0, "area_m2": m.area_per_garment_mm2 / 1e6,
                            "mass_g": m.grams_per_garment},
            "gsm": m.gsm, "interrupted": m.result.interrupted,
            "placements": [{"piece": m.labels[p.demand][0], "size": m.labels[p.demand][1], "copy": p.copy,
                            "rotation_deg": p.rotation_deg, "mirrored": p.mirrored, "offset": list(p.offset)}
                           for p in m.result.placements]}


def seam_document(results: list[SeamEstimate], units: str, s: SeamSettings, cone_mm: float | None,
                  cautions: list[str], markers: Sequence[Any] = ()) -> dict[str, Any]:
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
    positions = []
    for t in position_totals(ok):
        row: dict[str, Any] = {"stitch": t.stitch, "position": t.position, "threads": t.threads,
                               "thread_length_per_thread": _thread(t.thread_mm, units)}
        if cone_mm:
            row["cones"] = t.cones(cone_mm)
        positions.append(row)
    total: dict[str, Any] = {"files": len(results), "failed": len(results) - len(ok),
                             "sew_length": from_mm(sum(r.sew_length_mm * r.quantity for r in ok), units),
                             "thread_length": _thread(thread_mm, units), "positions": positions}
    if cone_mm:
        total["cone_length"] = _thread(cone_mm, units)
        total["cones"] = sum(row["cones"] for row in positions)
    return {"format": "pathlen-seam", "version": 2, "units": {"length": units, "thread": thread_unit(units)},
            "allowance_mm": s.allowance_mm, "waste_pct": s.waste_pct, "cautions": cautions, "files": files,
            "markers": [_marker(m) for m in markers], "total": total}


def render_json(results: list[SeamEstimate], units: str, s: SeamSettings, cone_mm: float | None,
                cautions: list[str], markers: Sequence[Any] = ()) -> str:
    return json.dumps(seam_document(results, units, s, cone_mm, cautions, markers), indent=2) + "\n"


def render_csv(results: list[SeamEstimate], units: str, cone_mm: float | None = None,
               markers: Sequence[Any] = ()) -> str:
    """One table: a ``piece`` row per piece, a ``thread`` row per stitch type and position over the order,
    a ``marker`` row per marker (fabric in m, m², g per garment)."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    tu = thread_unit(units)
    w.writerow(["record", "path", "piece", "size", "quantity", f"cut_length_{units}", f"sew_length_{units}",
                f"thread_length_{tu}", "stitch", "position", "threads", "cones", "marker_length_m", "efficiency",
                "fabric_m_per_garment", "fabric_m2_per_garment", "fabric_g_per_garment", "ok", "error"])
    blank = [""] * 7
    for r in results:
        if not r.ok:
            w.writerow(["file", r.path, "", "", "", "", "", "", "", "", "", "", *blank[:5], "false", r.error])
        for p in r.pieces:
            w.writerow(["piece", r.path, p.name, p.size, p.quantity, repr(from_mm(p.cut_length_mm, units)),
                        repr(from_mm(p.sew_length_mm, units)), repr(_thread(p.thread_mm, units)),
                        " ".join(sorted({str(x.stitch) for x in p.seams})), "", "", "", *blank[:5],
                        "true" if not p.error else "false", p.error or ""])
    for t in position_totals([r for r in results if r.ok]):
        w.writerow(["thread", "", "", "", "", "", "", repr(_thread(t.thread_mm, units)), t.stitch, t.position,
                    t.threads, t.cones(cone_mm) if cone_mm else "", *blank[:5], "true", ""])
    for m in markers:
        g = m.grams_per_garment
        w.writerow(["marker", m.path, "", " ".join(f"{k}:{v}" for k, v in m.ratio.items()), m.garments, "", "", "",
                    "", "", "", "", repr(m.length_mm / 1000.0), repr(m.efficiency),
                    repr(m.length_per_garment_mm / 1000.0), repr(m.area_per_garment_mm2 / 1e6),
                    repr(g) if g is not None else "", "true" if not m.unplaced else "false",
                    f"{m.unplaced} pieces wider than the fabric" if m.unplaced else ""])
    return buf.getvalue()


def render_table(results: list[SeamEstimate], units: str, s: SeamSettings, cone_mm: float | None,
                 cautions: list[str], console: Console, markers: Sequence[Any] = ()) -> None:
    tu = thread_unit(units)
    table = report_table(f"Seams (allowance {s.allowance_mm:g} mm where no sew line is drawn, thread + "
                         f"{s.waste_pct:g} % waste)", [
        ("File", "left"), ("Piece", "left"), ("Size", "left"), ("Qty", "right"), (f"Cut line ({units})", "right"),
        (f"Sewn ({units})", "right"), (f"Edges ({units})", "left"), ("Stitch (S/cm, T, W mm)", "left"),
        (f"Thread ({tu})", "right")])
    for r in results:
        if not r.ok:
            table.add_row(plain(r.path), "", "", "", "[red]failed[/red]", "", "", "", "")
            continue
        for k, p in enumerate(r.pieces):
            stitches = ", ".join(sorted({f"{x.stitch} ({x.spc:g}, {x.thickness_mm:g}"
                                         f"{f', {x.width_mm:g}' if x.width_mm is not None else ''})"
                                         for x in p.seams}))
            table.add_row(plain(r.path) if k == 0 else "", plain(p.name), plain(p.size), str(p.quantity),
                          f"{from_mm(p.cut_length_mm, units):,.1f}", f"{from_mm(p.sew_length_mm, units):,.1f}",
                          " ".join(f"{k}:{from_mm(e, units):.1f}" for k, e in enumerate(p.edges, start=1)),
                          stitches, f"{_thread(p.thread_mm, units):,.2f}")
    doc = seam_document(results, units, s, cone_mm, cautions, markers)
    t = doc["total"]
    table.add_section()
    table.add_row(f"[b]Order total ({t['files']} files, {t['failed']} failed)[/b]", "", "", "", "",
                  f"[b]{t['sew_length']:,.1f}[/b]", "", "", f"[b]{t['thread_length']:,.2f}[/b]")
    console.print(table)
    _positions(console, t, tu)
    for r in results:
        for m in r.matches:
            mark = "ok" if m.ok else "[yellow]check[/yellow]"
            console.print(f"match {plain(m.a)} ~ {plain(m.b)}: {round(from_mm(m.difference_mm, units), 2) + 0.0:+.2f} "
                          f"{units} ({round(m.ease_pct, 1) + 0.0:+.1f} % ease) {mark}", highlight=False)
    for m in doc["markers"]:
        per = m["per_garment"]
        grams = f", {per['mass_g']:,.0f} g" if per["mass_g"] is not None else ""
        ratio = ", ".join(f"{plain(k) or 'unsized'} x {v}" for k, v in m["ratio"].items())
        console.print(f"marker {plain(m['path'])} ({ratio}): {m['length_m']:.3f} m of {m['fabric_width_m']:g} m "
                      f"fabric, efficiency {m['efficiency'] * 100:.1f} %; per garment {per['length_m']:.3f} m, "
                      f"{per['area_m2']:.3f} m²{grams}"
                      + (f"; [red]{m['pieces_unplaced']} pieces do not fit the width[/red]"
                         if m["pieces_unplaced"] else ""), highlight=False)
    print_notes(console, results, cautions)


def _positions(console: Console, total: dict[str, Any], tu: str) -> None:
    """Thread per stitch type and position over the order, with whole cones for each."""
    if not total["positions"]:
        return
    cones = "cone_length" in total
    table = report_table("Thread by position (each thread from its own cone)" + (
        f", cones of {total['cone_length']:,.0f} {tu}" if cones else ""),
        [("Stitch", "left"), ("Position", "left"), ("Threads", "right"), (f"Per thread ({tu})", "right")]
        + ([("Cones", "right")] if cones else []))
    for row in total["positions"]:
        table.add_row(str(row["stitch"]), row["position"], str(row["threads"]),
                      f"{row['thread_length_per_thread']:,.2f}", *([str(row["cones"])] if cones else []))
    if cones:
        table.add_section()
        table.add_row("[b]Cones to order[/b]", "", "", "", f"[b]{total['cones']}[/b]")
    console.print(table)
