"""Quote reports: JSON (``"format": "pathlen-quote"``), CSV (one row per line and per charge, the amount
column adding up to the total), a table, and the printable quote document (HTML, A4).

Money in the shop's currency as decimal text with two places in JSON and CSV (exact), lengths in the
chosen units, times in seconds.
"""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path
from typing import Any

from rich.console import Console

from pathlen.export import clock, from_mm, plain, report_table
from pathlen.export import markup_text as escape
from pathlen.quote.compute import Quote

ALLOCATION = ("each line carries its own cutting (machine time and consumables), a share of its run's setup "
              "and of the rapids between nested parts in proportion to its machine time, and a share of the "
              "run's material in proportion to its parts' area")


def quote_document(q: Quote, units: str) -> dict[str, Any]:
    o = q.order
    lines = []
    for k, ln in enumerate(q.lines, start=1):
        entry: dict[str, Any] = {
            "line": k, "file": ln.part.file, "ok": ln.ok, "error": ln.error, "quantity": ln.part.quantity,
            "profile": ln.part.profile, "material": ln.material}
        if ln.ok:
            entry.update({
                "parts_per_drawing": ln.parts, "area_per_drawing": from_mm(from_mm(ln.area_mm2, units), units),
                "cut_length_per_drawing": from_mm(ln.cut_length_mm, units), "pierces_per_drawing": ln.pierces,
                "time_per_drawing_s": ln.time_s,
                "cost": {"cutting": round(ln.cutting_cost, 4), "setup_share": round(ln.setup_share, 4),
                         "rapids_share": round(ln.rapid_share, 4), "material_share": round(ln.material_share, 4)},
                "unit_price": str(ln.unit_price), "line_total": str(ln.total)})
            if q.breaks:
                entry["price_breaks"] = {str(n): (str(v[k - 1]) if v[k - 1] is not None else None)
                                         for n, v in q.breaks.items()}
        entry["warnings"] = ln.warnings
        lines.append(entry)
    runs = []
    for r in q.runs:
        runs.append({
            "material": r.material.key, "name": r.material.name, "thickness_mm": r.material.thickness_mm,
            "profile": r.profile.name, "charge": r.material.charge,
            "sheets": [{"size": label, "charged": round(price, 4), "last": last, "used_length": from_mm(used, units),
                        "length": from_mm(length, units)} for label, price, last, used, length in r.sheets],
            "utilisation": r.nest.utilisation if r.nest else 0.0,
            "material_cost": round(r.material_cost, 4), "setup_s": r.setup_s, "setup_cost": round(r.setup_cost, 4),
            "rapids_between_parts": from_mm(r.between_mm, units), "rapids_between_parts_s": r.between_s,
            "machine_time_s": r.machine_s})
    charges = [{"charge": "lines", "amount": str(q.subtotal)},
               {"charge": "minimum order charge", "amount": str(q.minimum), "minimum_order": str(q.minimum_order),
                "applied": q.minimum > 0},
               {"charge": f"tax {o.shop.tax_rate_pct:g} %", "amount": str(q.tax)}]
    return {"format": "pathlen-quote", "version": 1, "units": units, "currency": q.currency,
            "shop": o.shop.name, "customer": o.customer, "reference": o.reference,
            "date": q.date.isoformat(), "valid_until": q.valid_until.isoformat(),
            "lines": lines, "runs": runs, "charges": charges,
            "total": {"subtotal": str(q.subtotal), "minimum_charge": str(q.minimum), "tax": str(q.tax),
                      "total": str(q.total), "lines": len(q.lines), "failed": sum(not ln.ok for ln in q.lines)},
            "allocation": ALLOCATION, "cautions": q.cautions}


def render_json(doc: dict[str, Any]) -> str:
    return json.dumps(doc, indent=2) + "\n"


def render_csv(doc: dict[str, Any]) -> str:
    """A row per line (failed lines with their error), a row per charge, the total: ``amount`` adds up."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    u = doc["units"]
    w.writerow(["row", "file", "ok", "error", "quantity", "profile", "material", f"cut_length_per_drawing_{u}",
                "pierces_per_drawing", "time_per_drawing_s", "unit_price", "amount", "currency"])
    for ln in doc["lines"]:
        w.writerow([f"line {ln['line']}", ln["file"], str(ln["ok"]).lower(), ln["error"] or "", ln["quantity"],
                    ln["profile"], ln["material"], ln.get("cut_length_per_drawing", ""),
                    ln.get("pierces_per_drawing", ""), ln.get("time_per_drawing_s", ""), ln.get("unit_price", ""),
                    ln.get("line_total", "0.00"), doc["currency"]])
    for c in doc["charges"][1:]:
        w.writerow([c["charge"], "", "", "", "", "", "", "", "", "", "", c["amount"], doc["currency"]])
    w.writerow(["total", "", "", "", "", "", "", "", "", "", "", doc["total"]["total"], doc["currency"]])
    return buf.getvalue()


def render_table(doc: dict[str, Any], console: Console) -> None:
    cur, u = doc["currency"] or "money", doc["units"]
    table = report_table(plain(f"Quote {doc['reference']} for {doc['customer']}"), [
        ("#", "right"), ("Drawing", "left"), ("Qty", "right"), (f"Cut each ({u})", "right"), ("Time each", "right"),
        (f"Unit ({cur})", "right"), (f"Total ({cur})", "right")])
    for ln in doc["lines"]:
        if not ln["ok"]:
            table.add_row(str(ln["line"]), plain(Path(ln["file"]).name), str(ln["quantity"]), "", "", "",
                          "[red]failed[/red]")
            continue
        table.add_row(str(ln["line"]), f"{plain(Path(ln['file']).name)} ({plain(ln['material'])})",
                      str(ln["quantity"]), f"{ln['cut_length_per_drawing']:,.1f}", clock(ln["time_per_drawing_s"]),
                      ln["unit_price"], ln["line_total"])
    table.add_section()
    for c in doc["charges"]:
        label = c["charge"] if c["charge"] != "lines" else "Lines"
        if c["charge"].startswith("minimum"):
            label = f"Minimum order charge (order minimum {c['minimum_order']})"
        table.add_row("", plain(label), "", "", "", "", c["amount"])
    table.add_section()
    table.add_row("", f"[b]Total, valid until {doc['valid_until']}[/b]", "", "", "", "",
                  f"[b]{doc['total']['total']}[/b]")
    console.print(table)
    for r in doc["runs"]:
        sheets = ", ".join(f"{s['size']} ({s['charged']:.2f})" for s in r["sheets"]) or "none"
        console.print(f"Material {plain(r['material'])} ({plain(r['name'])}, {r['thickness_mm']:g} mm, "
                      f"{r['profile']}): sheets {sheets}; utilisation {100 * r['utilisation']:.1f} %; material "
                      f"{r['material_cost']:.2f} {cur}; machine {clock(r['machine_time_s'])} incl. setup "
                      f"{clock(r['setup_s'])}", highlight=False)
    if any("price_breaks" in ln for ln in doc["lines"]):
        breaks = report_table(f"Unit price by quantity ({cur})", [("#", "right"), ("Drawing", "left"), *(
            (n, "right") for n in next(ln["price_breaks"] for ln in doc["lines"] if "price_breaks" in ln))])
        for ln in doc["lines"]:
            if "price_breaks" in ln:
                breaks.add_row(str(ln["line"]), plain(Path(ln["file"]).name),
                               *(v or "" for v in ln["price_breaks"].values()))
        console.print(breaks)
    console.print(f"Allocation: {doc['allocation']}.", highlight=False)
    for ln in doc["lines"]:
        if not ln["ok"]:
            console.print(f"[red]line {ln['line']} failed[/red] {plain(ln['file'])}: {plain(ln['error'])}",
                          highlight=False)
    for c in doc["cautions"]:
        console.print(f"[bold red]caution[/bold red] {plain(c)}", highlight=False)


QUOTE_STYLE = """
:root { --accent: #0b6e6e; --ink: #1d252c; --soft: #66717c; --line: #d8dee3; }
* { box-sizing: border-box; }
body { font-family: "DejaVu Sans", Helvetica, Arial, sans-serif; color: var(--ink); margin: 0 auto; max-width: 52rem;
       padding: 1rem; font-size: 10.5pt; line-height: 1.35; }
header { display: flex; justify-content: space-between; gap: 1rem; border-bottom: 2px solid var(--accent); }
h1 { font-size: 1.5rem; color: var(--accent); margin: 0 0 .3rem; }
h2 { font-size: 1.05rem; margin: 1.2rem 0 .4rem; break-after: avoid; }
.meta { text-align: right; color: var(--soft); }
table { border-collapse: collapse; width: 100%; table-layout: fixed; }
th, td { padding: .25rem .35rem; border-bottom: 1px solid var(--line); text-align: left; overflow-wrap: anywhere; }
td.n, th.n { text-align: right; font-variant-numeric: tabular-nums; }
tr.charge td { border-bottom: none; } tr.total td { font-weight: bold; border-top: 2px solid var(--ink); }
.failed { color: #b01030; }
.caution { border: 1px solid #b01030; padding: .4rem .6rem; margin: .6rem 0; font-size: .85rem; }
figure { margin: .6rem 0; break-inside: avoid; } figure svg { width: 100%; height: auto; max-height: 60vh; }
.note { color: var(--soft); font-size: .85rem; }
@media print { @page { size: A4; margin: 15mm; } body { max-width: none; padding: 0; font-size: 9.5pt; } }
"""


def quote_html(doc: dict[str, Any], pictures: list[tuple[str, str]]) -> str:
    """The quote as a self-contained HTML page (inline CSS and SVG, nothing fetched), A4 when printed."""
    cur = escape(doc["currency"] or "")

    def cell(v: Any, num: bool = False) -> str:
        return f'<td class="n">{escape(str(v))}</td>' if num else f"<td>{escape(str(v))}</td>"

    rows = []
    for ln in doc["lines"]:
        name = escape(Path(ln["file"]).name)
        if not ln["ok"]:
            rows.append(f'<tr><td class="n">{ln["line"]}</td><td>{name}</td>{cell(ln["quantity"], True)}'
                        f'<td colspan="4" class="failed">not quoted: {escape(str(ln["error"]))}</td></tr>')
            continue
        cut_each = f"{ln['cut_length_per_drawing']:,.1f} {doc['units']}"
        rows.append(f'<tr><td class="n">{ln["line"]}</td><td>{name}<br><span class="note">{escape(ln["material"])}, '
                    f'{escape(ln["profile"])}</span></td>{cell(ln["quantity"], True)}'
                    f'{cell(cut_each, True)}'
                    f'{cell(ln["pierces_per_drawing"], True)}{cell(ln["unit_price"], True)}'
                    f'{cell(ln["line_total"], True)}</tr>')
    for c in doc["charges"]:
        label = "Lines" if c["charge"] == "lines" else c["charge"]
        if c["charge"].startswith("minimum"):
            label = f"Minimum order charge (order minimum {c['minimum_order']} {doc['currency']})"
        rows.append(f'<tr class="charge"><td></td><td colspan="5">{escape(label)}</td>{cell(c["amount"], True)}</tr>')
    rows.append(f'<tr class="total"><td></td><td colspan="5">Total ({cur})</td>'
                f'{cell(doc["total"]["total"], True)}</tr>')
    runs = "".join(
        f"<tr><td>{escape(r['material'])}</td><td>{escape(r['name'])}, {r['thickness_mm']:g} mm</td>"
        f"<td>{escape(', '.join(s['size'] for s in r['sheets']) or 'none')}</td>"
        f'<td class="n">{100 * r["utilisation"]:.1f} %</td><td class="n">{r["material_cost"]:,.2f}</td></tr>'
        for r in doc["runs"])
    breaks = ""
    with_breaks = [ln for ln in doc["lines"] if "price_breaks" in ln]
    if with_breaks:
        qs = list(with_breaks[0]["price_breaks"])
        head = "".join(f'<th class="n">{escape(q)}</th>' for q in qs)
        body = "".join(f'<tr><td>{ln["line"]}</td><td>{escape(Path(ln["file"]).name)}</td>'
                       + "".join(cell(v or "", True) for v in ln["price_breaks"].values()) + "</tr>"
                       for ln in with_breaks)
        breaks = (f"<h2>Unit price by quantity ({cur})</h2><table><thead><tr><th>#</th><th>Drawing</th>{head}</tr>"
                  f"</thead><tbody>{body}</tbody></table>")
    figures = "".join(f"<figure><figcaption>{escape(t)}</figcaption>{svg[svg.index('<svg'):]}</figure>"
                      for t, svg in pictures)
    cautions = "".join(f'<p class="caution">{escape(c)}</p>' for c in doc["cautions"])
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1">
<title>Quote {escape(doc['reference'])}</title><style>{QUOTE_STYLE}</style></head><body>
<header><div><h1>Quote {escape(doc['reference'])}</h1><div>{escape(doc['shop'])}</div></div>
<div class="meta">for <b>{escape(doc['customer'])}</b><br>date {escape(doc['date'])}<br>valid until
{escape(doc['valid_until'])}</div></header>
<h2>Lines ({cur})</h2>
<table><colgroup><col style="width:2.2rem"><col><col style="width:3.2rem"><col style="width:7rem">
<col style="width:4.6rem"><col style="width:5.5rem"><col style="width:6.5rem"></colgroup>
<thead><tr><th>#</th><th>Drawing</th><th class="n">Qty</th><th class="n">Cut each</th><th class="n">Pierces</th>
<th class="n">Unit</th><th class="n">Total</th></tr></thead><tbody>{''.join(rows)}</tbody></table>
<p class="note">How the price is made: {escape(doc['allocation'])}.</p>
{breaks}
<h2>Material</h2><table><thead><tr><th>Run</th><th>Material</th><th>Sheets</th><th class="n">Utilisation</th>
<th class="n">Material ({cur})</th></tr></thead><tbody>{runs}</tbody></table>
{figures}
{cautions}
</body></html>
"""
