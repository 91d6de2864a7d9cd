"""Exporters: measured results -> table, JSON or CSV text, in the chosen units."""

from __future__ import annotations

import re
from collections.abc import Sequence
from functools import cache
from html import escape as html_escape
from typing import TYPE_CHECKING, Any

from pathlen.units import MM_PER_UNIT

if TYPE_CHECKING:
    from rich.console import Console
    from rich.table import Table

#: Output units a person can choose.
OUTPUT_UNITS = ("mm", "in")


#: Characters XML 1.0 does not allow (C0 controls but tab, newline and return; lone surrogates, as a
#: file name that is not UTF-8 decodes to; U+FFFE and U+FFFF).
_NOT_XML = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\ud800-\udfff\ufffe\uffff]")


def markup_text(text: object) -> str:
    """Text from a drawing, a file name or an error, made safe inside SVG or HTML: escaped, and every
    character XML cannot hold replaced by U+FFFD (the replacement character)."""
    return html_escape(_NOT_XML.sub("\ufffd", str(text)))


def load_rich() -> None:
    """Load rich now, with what it loads only on first use (markup, emoji and cell-width tables), by
    drawing a one-cell table to nowhere: a batch does this while its workers start, so that its report
    is drawn at once when the results come."""
    import io

    from rich.console import Console
    from rich.table import Table

    table = Table("…")  # a character outside rich's single-width ranges: the cell-width tables load
    table.add_row("[b]0[/b]")
    Console(file=io.StringIO(), width=20).print(table)


def plain(text: object) -> str:
    """Text from a drawing, a file name or an error, made safe to print through rich: never markup."""
    from rich.markup import escape

    return escape(str(text))


@cache
def _numbers_whole() -> type[Table]:
    """A rich table class whose right-justified (number) columns are never narrower than their widest
    value: on a narrow terminal the text columns (file names) fold instead."""
    from rich.table import Table
    from rich.text import Text

    class NumbersWhole(Table):
        def __rich_console__(self, console: Console, options: Any) -> Any:
            for column in self.columns:
                if column.justify == "right":
                    widest = max((Text.from_markup(str(c)).cell_len for c in column._cells), default=0)
                    column.min_width = max(column.min_width or 0, widest)
            yield from super().__rich_console__(console, options)

    return NumbersWhole


def report_table(title: str, columns: list[tuple[str, str]]) -> Table:
    """A rich table with ``(head, "left" | "right")`` columns; long text folds, numbers stay whole."""
    table = _numbers_whole()(title=title)
    for name, justify in columns:
        table.add_column(name, justify=justify, overflow="fold")  # type: ignore[arg-type]
    return table


def print_notes(console: Console, results: list[Any], cautions: Sequence[str] = ()) -> None:
    """Each file's warnings, then the cautions, as plain text lines after a table."""
    for r in results:
        for w in r.warnings:
            console.print(f"[yellow]warning[/yellow] {plain(r.path)}: {plain(w)}", highlight=False)
    for c in cautions:
        console.print(f"[bold red]caution[/bold red] {plain(c)}", highlight=False)


def from_mm(value: float, units: str) -> float:
    """Convert millimetres to ``units`` (exact factors, see ``MM_PER_UNIT``)."""
    return value / MM_PER_UNIT[units]


def clock(seconds: float) -> str:
    """Seconds as h:mm:ss (rounded to the second)."""
    s = round(seconds)
    return f"{s // 3600}:{s % 3600 // 60:02d}:{s % 60:02d}"
