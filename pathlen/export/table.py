"""Human-readable table (rich): per file and layer, units on every number."""

from __future__ import annotations

from typing import TYPE_CHECKING

from pathlen.batch import FileResult
from pathlen.export import from_mm, plain, print_notes

if TYPE_CHECKING:
    from rich.console import Console


def fmt_length(mm: float, units: str) -> str:
    """A length to 0.001 mm or 0.0001 in (the unit stands in the column heading)."""
    return f"{from_mm(mm, units):,.{3 if units == 'mm' else 4}f}"


def fmt_bound(mm: float, units: str) -> str:
    return f"± {from_mm(mm, units):.1e}"


def render(results: list[FileResult], units: str, console: Console) -> None:
    from rich.table import Table

    table = Table(title="Path lengths", show_lines=False)
    table.add_column("File", overflow="fold")
    table.add_column("Layer")
    table.add_column("Entities", justify="right")
    table.add_column(f"Length ({units})", justify="right")
    table.add_column(f"Error bound ({units})", justify="right")
    table.add_column("Contours closed/open", justify="right")
    for r in results:
        if not r.ok:
            table.add_row(plain(r.path), "", "", "[red]failed[/red]", "", "")
            continue
        table.add_row(plain(r.path), "[b]all layers[/b]", str(sum(t.count for t in r.layers.values())),
                      f"[b]{fmt_length(r.length_mm, units)}[/b]", fmt_bound(r.bound_mm, units),
                      f"{r.closed}/{r.open}" if r.contours_counted else "not counted")
        for name, t in r.layers.items():
            table.add_row("", plain(name) if name else '(none)', str(t.count), fmt_length(t.length_mm, units),
                          fmt_bound(t.bound_mm, units), "")
        for colour, t in r.colors.items():
            table.add_row("", f"[dim]stroke {plain(colour)}[/dim]", str(t.count), fmt_length(t.length_mm, units),
                          fmt_bound(t.bound_mm, units), "")
    total = sum(r.length_mm for r in results)
    bound = sum(r.bound_mm for r in results)
    failed = sum(not r.ok for r in results)
    table.add_section()
    table.add_row(f"[b]Total ({len(results)} files, {failed} failed)[/b]", "", "",
                  f"[b]{fmt_length(total, units)}[/b]", fmt_bound(bound, units), "")
    console.print(table)
    print_notes(console, results)
