"""Cut estimate reports: JSON (``"format": "pathlen-cut"``), CSV (one row per file) and a table.

Lengths in the chosen units, times in seconds, money in the profile's currency.
"""

from __future__ import annotations

import csv
import io
import json
from typing import Any

from rich.console import Console

from pathlen.estimates.cut import CutEstimate, run_charges
from pathlen.export import clock, from_mm, plain, print_notes, report_table
from pathlen.profiles import Profile

TIME_KEYS = ("total", "cutting", "piercing", "rapids", "motion_losses")
COST_KEYS = ("total", "machine", "consumables")
#: The run's charges, each its own line in every format: they add up to the total.
CHARGE_KEYS = ("machine", "consumables", "setup", "minimum_charge")


def _file_entry(r: CutEstimate, units: str) -> dict[str, Any]:
    return {
        "path": r.path, "ok": r.ok, "error": r.error, "quantity": r.quantity,
        "contours": {"closed": r.closed, "open": r.open},
        "pierces": r.pierces,
        "cut_length": from_mm(r.cut_length_mm, units),
        "engrave_length": from_mm(r.engrave_length_mm, units),
        "lead_length": from_mm(r.lead_length_mm, units),
        "kerf_change": from_mm(r.kerf_change_mm, units),
        "rapid_length": from_mm(r.rapid_length_mm, units),
        "error_bound": from_mm(r.bound_mm, units),
        "feed_mm_min": r.feed_mm_min,
        "part_time_s": r.part_time_s,
        "time_s": {k: r.time_s.get(k, 0.0) for k in TIME_KEYS},
        "cost": {k: r.cost.get(k, 0.0) for k in COST_KEYS},
        "warnings": r.warnings,
    }


def _total(results: list[CutEstimate], units: str, profile: Profile) -> dict[str, Any]:
    ok = [r for r in results if r.ok]
    run = run_charges(results, profile)
    times = {k: sum(r.time_s.get(k, 0.0) for r in ok) for k in TIME_KEYS}
    times["setup"] = run["setup_s"]
    times["total"] = run["time_s"]
    return {
        "files": len(results), "failed": len(results) - len(ok),
        "quantity": sum(r.quantity for r in ok),
        "contours": {"closed": sum(r.closed * r.quantity for r in ok), "open": sum(r.open * r.quantity for r in ok)},
        "pierces": sum(r.pierces * r.quantity for r in ok),
        "cut_length": from_mm(sum(r.cut_length_mm * r.quantity for r in ok), units),
        "rapid_length": from_mm(sum(r.rapid_length_mm * r.quantity for r in ok), units),
        "time_s": times,
        "cost": {**{k: run[k] for k in CHARGE_KEYS}, "total": run["total"]},
    }


def cut_document(results: list[CutEstimate], units: str, profile: Profile, cautions: list[str]) -> dict[str, Any]:
    v = profile.values
    return {
        "format": "pathlen-cut", "version": 1, "units": units,
        "profile": {"name": profile.name, "process": v["process"], "material": v["material"],
                    "thickness_mm": v["thickness_mm"], "currency": v["currency"]},
        "cautions": cautions,
        "files": [_file_entry(r, units) for r in results],
        "total": _total(results, units, profile),
    }


def render_json(results: list[CutEstimate], units: str, profile: Profile, cautions: list[str]) -> str:
    return json.dumps(cut_document(results, units, profile, cautions), indent=2) + "\n"


def render_csv(results: list[CutEstimate], units: str, profile: Profile | None = None) -> str:
    """One row per file (its whole quantity; failed files have ok=false and their error), then, with the
    profile, one row per charge of the run (setup, minimum charge) and the total: the cost_total column
    adds up to the total row."""
    head = ["path", "ok", "error", "quantity", "contours_closed", "contours_open", "pierces",
            f"cut_length_{units}", f"rapid_length_{units}", *(f"time_{k}_s" for k in TIME_KEYS),
            *(f"cost_{k}" for k in COST_KEYS)]
    buf = io.StringIO()
    w = csv.DictWriter(buf, fieldnames=head, lineterminator="\n", restval="")
    w.writeheader()
    for r in results:
        w.writerow({"path": r.path, "ok": str(r.ok).lower(), "error": r.error or "", "quantity": r.quantity,
                    "contours_closed": r.closed, "contours_open": r.open, "pierces": r.pierces,
                    f"cut_length_{units}": repr(from_mm(r.cut_length_mm, units)),
                    f"rapid_length_{units}": repr(from_mm(r.rapid_length_mm, units)),
                    **{f"time_{k}_s": repr(r.time_s.get(k, 0.0)) for k in TIME_KEYS},
                    **{f"cost_{k}": repr(r.cost.get(k, 0.0)) for k in COST_KEYS}})
    if profile is not None:
        run = run_charges(results, profile)
        w.writerow({"path": "(setup, once for the run)", "time_total_s": repr(run["setup_s"]),
                    "cost_total": repr(run["setup"])})
        w.writerow({"path": "(minimum charge: amount to reach it)", "cost_total": repr(run["minimum_charge"])})
        w.writerow({"path": "(total)", "time_total_s": repr(run["time_s"]), "cost_total": repr(run["total"])})
    return buf.getvalue()


def render_table(results: list[CutEstimate], units: str, profile: Profile, cautions: list[str],
                 console: Console) -> None:
    v = profile.values
    money = plain(v["currency"] or "money")
    title = (f"Cut estimate: {profile.name} ({v['process']}, {v['material']}, {v['thickness_mm']:g} mm, "
             f"feed {results[0].feed_mm_min if results else 0:,.0f} mm/min)")
    table = report_table(plain(title), [
        ("File", "left"), ("Qty", "right"), ("Contours closed/open", "right"), ("Pierces", "right"),
        (f"Cut ({units})", "right"), (f"Rapid ({units})", "right"), ("Time h:mm:ss", "right"),
        (f"Cost ({money})", "right")])
    digits = 1 if units == "mm" else 2
    for r in results:
        if not r.ok:
            table.add_row(plain(r.path), str(r.quantity), "", "", "[red]failed[/red]", "", "", "")
            continue
        cut_len, rapid_len = from_mm(r.cut_length_mm, units), from_mm(r.rapid_length_mm, units)
        table.add_row(plain(r.path), str(r.quantity), f"{r.closed}/{r.open}", str(r.pierces), f"{cut_len:,.{digits}f}",
                      f"{rapid_len:,.{digits}f}", clock(r.time_s["total"]), f"{r.cost['total']:,.2f}")
    t = _total(results, units, profile)
    c = t["cost"]
    table.add_section()
    table.add_row("Setup, once", "", "", "", "", "", clock(t["time_s"]["setup"]), f"{c['setup']:,.2f}")
    table.add_row("Minimum charge", "", "", "", "", "", "", f"{c['minimum_charge']:,.2f}")
    table.add_section()
    table.add_row(f"[b]Total ({t['files']} files, {t['failed']} failed)[/b]", str(t["quantity"]), "",
                  str(t["pierces"]), f"{t['cut_length']:,.{digits}f}", f"{t['rapid_length']:,.{digits}f}",
                  f"[b]{clock(t['time_s']['total'])}[/b]", f"[b]{t['cost']['total']:,.2f}[/b]")
    console.print(table)
    ts = t["time_s"]
    console.print(f"Time: cutting {clock(ts['cutting'])}, piercing {clock(ts['piercing'])}, rapids "
                  f"{clock(ts['rapids'])}, acceleration and corners {clock(ts['motion_losses'])}, setup "
                  f"{clock(ts['setup'])}.  Cost ({money}): machine {c['machine']:,.2f} + consumables "
                  f"{c['consumables']:,.2f} + setup {c['setup']:,.2f} + minimum charge {c['minimum_charge']:,.2f} "
                  f"= {c['total']:,.2f}.", highlight=False)
    if c["minimum_charge"] > 0:
        console.print(f"The run costs less than the profile's minimum charge of {profile.minimum_charge:,.2f} {money}: "
                      f"the minimum charge line adds {c['minimum_charge']:,.2f}.", highlight=False)
    print_notes(console, results, cautions)
