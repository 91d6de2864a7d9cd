"""Exporters: measured results -> table, JSON or CSV text, in the chosen units."""

from __future__ import annotations

from rich.markup import escape

from pathlen.geometry import MM_PER_UNIT

#: Output units a person can choose.
OUTPUT_UNITS = ("mm", "in")


def plain(text: object) -> str:
    """Text from a drawing, a file name or an error, made safe to print through rich: never markup."""
    return escape(str(text))


def from_mm(value: float, units: str) -> float:
    """Convert millimetres to ``units`` (exact factors, see ``MM_PER_UNIT``)."""
    return value / MM_PER_UNIT[units]
