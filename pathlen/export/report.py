"""A one-file HTML report of a batch, for a customer: totals, a table per file, warnings and cautions, and
a picture of each drawing as measured.

Built from the command's own JSON document, so the page shows the same numbers (rounded for reading).
Self-contained: inline CSS, inline SVG pictures (each opens to full size), one small inline script
that sorts a table by a clicked column; nothing is fetched.  Every string from a drawing is escaped.
Prints on A4 or Letter; readable on a phone.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import Any

from pathlen.export import clock
from pathlen.export import markup_text as escape

STYLE = """
:root { --accent: #0b6e6e; --ink: #1d252c; --soft: #66717c; --line: #d8dee3; }
* { box-sizing: border-box; }
body { font-family: "DejaVu Sans", "Helvetica Neue", Arial, sans-serif; color: var(--ink); margin: 0 auto;
       max-width: 60rem; padding: 1rem; line-height: 1.4; }
h1 { font-size: 1.4rem; margin: 0 0 .2rem; color: var(--accent); }
h2 { font-size: 1.05rem; margin: 1.6rem 0 .4rem; word-break: break-all; }
.sub { color: var(--soft); font-size: .85rem; }
.totals { display: flex; flex-wrap: wrap; gap: .6rem 1.6rem; margin: 1rem 0; padding: .6rem .8rem;
          border-left: .3rem solid var(--accent); background: #f3f7f7; }
.totals div { font-size: .8rem; color: var(--soft); }
.totals b { display: block; font-size: 1.1rem; color: var(--ink); }
.wrap { overflow-x: auto; }
table { border-collapse: collapse; width: 100%; font-size: .85rem; }
th, td { padding: .3rem .5rem; border-bottom: 1px solid var(--line); text-align: left; }
th { cursor: pointer; white-space: nowrap; background: #fafbfc; }
td.n, th.n { text-align: right; font-variant-numeric: tabular-nums; }
.failed { color: #b01030; font-weight: bold; }
.warn { color: #8a5a00; font-size: .8rem; margin: .2rem 0; }
.caution { border: 1px solid #b01030; padding: .5rem .8rem; margin: 1.2rem 0; font-size: .85rem; }
details.pic { margin: .5rem 0; } details.pic summary { list-style: none; cursor: zoom-in; }
details.pic summary svg { width: 24rem; max-width: 100%; height: auto; border: 1px solid var(--line); }
details.pic[open] summary svg { width: 100%; }
.figure svg { width: 100%; height: auto; border: 1px solid var(--line); }
@media print { @page { size: A4; margin: 14mm; } body { max-width: none; padding: 0; }
  details.pic summary svg { width: 12rem; } th { cursor: default; } h2 { break-after: avoid; } }
"""

SORTER = """
document.querySelectorAll('table.sortable th').forEach(function (th, col) {
  th.addEventListener('click', function () {
    var body = th.closest('table').tBodies[0], rows = Array.prototype.slice.call(body.rows);
    var up = th.dataset.up !== '1'; th.dataset.up = up ? '1' : '0';
    rows.sort(function (a, b) {
      var x = a.cells[col].dataset.v || a.cells[col].textContent;
      var y = b.cells[col].dataset.v || b.cells[col].textContent;
      var p = parseFloat(x), q = parseFloat(y);
      var c = (!isNaN(p) && !isNaN(q)) ? p - q : x.localeCompare(y);
      return up ? c : -c;
    });
    rows.forEach(function (r) { body.appendChild(r); });
  });
});
"""


def _num(value: Any, digits: int) -> str:
    if value is None:
        return ""
    return f"{value:,.{digits}f}"


def _cell(value: Any, digits: int | None = None) -> str:
    if digits is None:
        return f"<td>{escape(str(value))}</td>"
    raw = "" if value is None else repr(float(value))
    return f'<td class="n" data-v="{escape(raw)}">{_num(value, digits)}</td>'


#: Per report format: (title, [(column head, key path, digits or None)], per-file row source, totals)
def _measure(doc: dict[str, Any]) -> tuple[str, list[tuple[str, str]], list[tuple[str, int | None]],
                                              Callable[[dict[str, Any]], list[list[Any]]]]:
    u = doc["units"]
    totals = [("Total length", f"{doc['total']['length']:,.3f} {u}"), ("Files", str(doc["total"]["files"])),
              ("Failed", str(doc["total"]["failed"]))]
    cols = [("Layer", None), ("Entities", 0), (f"Length ({u})", 3), (f"Error bound ({u})", None)]

    def rows(f: dict[str, Any]) -> list[list[Any]]:
        out = [["all layers", sum(v["count"] for v in f["layers"].values()), f["length"],
                f"± {f['error_bound']:.1e}"]]
        out += [[name or "(none)", v["count"], v["length"], f"± {v['error_bound']:.1e}"]
                for name, v in f["layers"].items()]
        return out

    return "Path lengths", totals, cols, rows


def _cut(doc: dict[str, Any]) -> tuple[str, list[tuple[str, str]], list[tuple[str, int | None]],
                                          Callable[[dict[str, Any]], list[list[Any]]]]:
    u, t = doc["units"], doc["total"]
    money = doc["profile"].get("currency") or "money"
    c = t["cost"]
    parts = t.get("quantity") or 0
    totals = [("Machine time", clock(t["time_s"]["total"])),
              (f"Machine ({money})", f"{c['machine']:,.2f}"),
              (f"Consumables ({money})", f"{c['consumables']:,.2f}"),
              (f"Setup, once ({money})", f"{c['setup']:,.2f}"),
              (f"Minimum charge ({money})", f"{c['minimum_charge']:,.2f}"),
              (f"Total ({money})", f"{c['total']:,.2f}")]
    if parts:
        totals.append((f"Per part, {parts} parts ({money})", f"{c['total'] / parts:,.2f}"))
    totals += [("Cut length", f"{t['cut_length']:,.1f} {u}"), ("Pierces", str(t["pierces"])),
               ("Profile", doc["profile"]["name"])]
    cols = [("Quantity", 0), ("Closed contours", 0), ("Open contours", 0), ("Pierces", 0), (f"Cut ({u})", 1),
            (f"Rapid ({u})", 1), ("Time (h:mm:ss)", None), (f"Cost ({money})", 2)]

    def rows(f: dict[str, Any]) -> list[list[Any]]:
        return [[f["quantity"], f["contours"]["closed"], f["contours"]["open"], f["pierces"], f["cut_length"],
                 f["rapid_length"], clock(f["time_s"]["total"]), f["cost"]["total"]]]

    return "Cut estimate", totals, cols, rows


def _seam(doc: dict[str, Any]) -> tuple[str, list[tuple[str, str]], list[tuple[str, int | None]],
                                           Callable[[dict[str, Any]], list[list[Any]]]]:
    lu, tu = doc["units"]["length"], doc["units"]["thread"]
    t = doc["total"]
    totals = [("Sewn (order)", f"{t['sew_length']:,.1f} {lu}"), ("Thread (order)", f"{t['thread_length']:,.1f} {tu}")]
    if "cones" in t:
        totals.append(("Cones (one per thread of each position)", str(t["cones"])))
    for row in t.get("positions", []):
        totals.append((f"Thread {row['stitch']} {row['position']} (x {row['threads']})",
                       f"{row['thread_length_per_thread']:,.1f} {tu}"))
    for m in doc.get("markers", []):
        per = m["per_garment"]
        grams = f", {per['mass_g']:,.0f} g" if per["mass_g"] is not None else ""
        totals.append((f"Marker {Path(m['path']).name}", f"{m['length_m']:.3f} m of {m['fabric_width_m']:g} m, "
                       f"{m['efficiency'] * 100:.1f} %; per garment {per['length_m']:.3f} m, "
                       f"{per['area_m2']:.3f} m²{grams}"))
    cols = [("Piece", None), ("Size", None), ("Quantity", 0), (f"Cut line ({lu})", 1), (f"Sewn ({lu})", 1),
            (f"Thread ({tu})", 2)]

    def rows(f: dict[str, Any]) -> list[list[Any]]:
        return [[p["name"], p["size"], p["quantity"], p["cut_length"], p["sew_length"], p["thread_length"]]
                for p in f["pieces"]]

    return "Seams and thread", totals, cols, rows


def _bead(doc: dict[str, Any]) -> tuple[str, list[tuple[str, str]], list[tuple[str, int | None]],
                                           Callable[[dict[str, Any]], list[list[Any]]]]:
    u, t = doc["units"], doc["total"]
    lu, vu = u["length"], u["volume"]
    totals = [("Sealant", f"{t['volume']:,.1f} {vu}"), ("Joint length", f"{t['length']:,.1f} {lu}")]
    for p in t["products"]:
        cost = f", {p['cost']:,.2f}" if p["cost"] is not None else ""
        totals.append((f"Packs of {p['product'] or 'the command line pack'} ({p['pack']:g} {vu})",
                       f"{p['packs']}{cost}"))
    if t["primer"]:
        totals.append(("Primer", f"{t['primer']:,.1f} {vu}"))
    for rod in t["backer_rod"]:
        size = f"{rod['diameter']:g} {u['diameter']}" if rod["diameter"] is not None else "no stock size"
        totals.append((f"Backer rod {size}", f"{rod['length']:,.1f} {lu}"))
    if "time_s" in t:
        totals.append(("Time at the gun", clock(t["time_s"])))
    if "cost" in t:
        totals.append(("Sealant cost", f"{t['cost']:,.2f}"))
    cols = [("Joint", None), ("Section", None), ("Product", None), (f"Length ({lu})", 1), (f"Volume ({vu})", 1),
            (f"Rod Ø ({u['diameter']})", 2)]

    def rows(f: dict[str, Any]) -> list[list[Any]]:
        return [[name, v["section"], v["product"] or "", v["length"], v["volume"],
                 v["backer_rod_diameter"] if v["backer_rod_diameter"] is not None else ""]
                for name, v in f["layers"].items()]

    return "Sealant beads", totals, cols, rows


def _nest(doc: dict[str, Any]) -> tuple[str, list[tuple[str, str]], list[tuple[str, int | None]],
                                      Callable[[dict[str, Any]], list[list[Any]]]]:
    u, t = doc["units"], doc["total"]
    totals = [("copies placed", str(t["copies"])), ("not placed", str(t["unplaced"])),
              ("sheets" if doc.get("material", {}).get("kind") != "roll" else "roll", str(t["sheets"])),
              ("used length", f"{_num(t['used_length'], 1)} {u}"),
              ("utilisation", f"{100 * doc['utilisation']:.1f} %"), ("failed files", str(t["failed"]))]
    cols = [("part", 0), ("quantity", 0), ("placed", 0), (f"area ({u}²)", 2), (f"cut length ({u})", 2)]

    def rows(f: dict[str, Any]) -> list[list[Any]]:
        return [[p["part"] + 1, p["quantity"], p["placed"], p["area"], p["cut_length"]] for p in f["parts"]]

    return "Nesting", totals, cols, rows


KINDS = {"pathlen-nest": _nest, "pathlen-measure": _measure, "pathlen-cut": _cut, "pathlen-seam": _seam,
         "pathlen-bead": _bead}


def render_report(doc: dict[str, Any], pictures: dict[str, str] | None = None,
                  figures: list[tuple[str, str]] | None = None) -> str:
    """The HTML page for a command's JSON document; ``pictures`` maps a file path to an SVG picture,
    ``figures`` are titled SVG pictures shown after the files (a nest's sheets)."""
    title, totals, cols, rows = KINDS[doc["format"]](doc)
    pictures = pictures or {}
    parts = ["<!DOCTYPE html>", '<html lang="en"><head><meta charset="utf-8">',
             '<meta name="viewport" content="width=device-width, initial-scale=1">',
             f"<title>{escape(title)}</title><style>{STYLE}</style></head><body>",
             f"<h1>{escape(title)}</h1>", f'<p class="sub">pathlen report, {len(doc["files"])} files</p>',
             '<div class="totals">' + "".join(f"<div>{escape(k)}<b>{escape(v)}</b></div>" for k, v in totals)
             + "</div>"]
    parts.append(_job_table(doc, cols, rows))
    for f in doc["files"]:
        parts.append(f"<h2>{escape(f['path'])}</h2>")
        if not f["ok"]:
            parts.append(f'<p class="failed">failed: {escape(str(f["error"]))}</p>')
            continue
        if f["path"] in pictures:
            parts.append(f'<details class="pic"><summary>{pictures[f["path"]]}</summary></details>')
        head = "".join(f'<th class="{"n" if d is not None else ""}">{escape(c)}</th>' for c, d in cols)
        body = "".join("<tr>" + "".join(_cell(v, d) for v, (_, d) in zip(row, cols, strict=True)) + "</tr>"
                       for row in rows(f))
        parts.append(f'<div class="wrap"><table class="sortable"><thead><tr>{head}</tr></thead>'
                     f"<tbody>{body}</tbody></table></div>")
        parts += [f'<p class="warn">warning: {escape(w)}</p>' for w in f.get("warnings", [])]
    for title, svg in figures or []:
        parts.append(f"<h2>{escape(title)}</h2>")
        parts.append(f'<div class="figure">{svg[svg.index("<svg"):]}</div>')
    for u in doc.get("unplaced", []):
        parts.append(f'<p class="failed">not placed: {escape(str(u["file"]))} part {u["part"] + 1}, {u["count"]} '
                     f'copies: {escape(u["reason"])}</p>')
    for c in doc.get("cautions", []):
        parts.append(f'<p class="caution">{escape(c)}</p>')
    parts.append(f"<script>{SORTER}</script></body></html>")
    return "\n".join(parts) + "\n"


def _job_table(doc: dict[str, Any], cols: list[tuple[str, int | None]],
               rows: Callable[[dict[str, Any]], list[list[Any]]]) -> str:
    """The whole job in one sortable table: every file's rows, the file named in the first column."""
    head = '<th class="">File</th>' + "".join(f'<th class="{"n" if d is not None else ""}">{escape(c)}</th>'
                                            for c, d in cols)
    body = []
    for f in doc["files"]:
        name = f"<td>{escape(Path(f['path']).name)}</td>"
        if not f["ok"]:
            body.append(f'<tr>{name}<td colspan="{len(cols)}" class="failed">failed: {escape(str(f["error"]))}'
                        "</td></tr>")
            continue
        body += ["<tr>" + name + "".join(_cell(v, d) for v, (_, d) in zip(row, cols, strict=True)) + "</tr>"
                 for row in rows(f)]
    return (f'<h2>All files</h2><div class="wrap"><table class="sortable job"><thead><tr>{head}</tr></thead>'
            f"<tbody>{''.join(body)}</tbody></table></div>")


def drawing_pictures(paths: list[str], max_segments: int = 200_000) -> dict[str, str]:
    """SVG pictures of the drawings (as measured), for files that read and are not too large to draw."""
    from pathlen.errors import PathlenError
    from pathlen.export.preview import build_scene, scene_svg
    from pathlen.importers import read_drawing
    from pathlen.instances import expand, segment_total

    out = {}
    for p in paths:
        try:
            drawing = read_drawing(Path(p))
            if segment_total(drawing) > max_segments:
                continue
            svg = scene_svg(build_scene(expand(drawing), Path(p).name, p.lower().endswith(".svg")))
        except (PathlenError, MemoryError, ValueError):
            continue
        out[p] = svg[svg.index("<svg"):]
    return out
