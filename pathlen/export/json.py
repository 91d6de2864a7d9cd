"""JSON output, ``"format": "pathlen-measure"`` (see shared/ARCHITECTURE.md)."""

from __future__ import annotations

import json
from typing import Any

from pathlen.batch import FileResult, LayerTotal
from pathlen.export import from_mm


def file_entry(r: FileResult, units: str) -> dict[str, Any]:
    return {
        "path": r.path,
        "ok": r.ok,
        "error": r.error,
        "length": from_mm(r.length_mm, units),
        "error_bound": from_mm(r.bound_mm, units),
        "layers": _totals(r.layers, units),
        "colors": _totals(r.colors, units),
        "contours": {"closed": r.closed, "open": r.open} if r.contours_counted else {"closed": None, "open": None},
        "recovered": r.recovered,
        "warnings": r.warnings,
    }


def _totals(groups: dict[str, LayerTotal], units: str) -> dict[str, dict[str, Any]]:
    return {
        name: {"length": from_mm(t.length_mm, units), "error_bound": from_mm(t.bound_mm, units), "count": t.count}
        for name, t in groups.items()
    }


def measure_document(results: list[FileResult], units: str) -> dict[str, Any]:
    return {
        "format": "pathlen-measure",
        "version": 1,
        "units": units,
        "files": [file_entry(r, units) for r in results],
        "total": {
            "length": from_mm(sum(r.length_mm for r in results), units),
            "error_bound": from_mm(sum(r.bound_mm for r in results), units),
            "files": len(results),
            "failed": sum(not r.ok for r in results),
        },
    }


def render(results: list[FileResult], units: str) -> str:
    return json.dumps(measure_document(results, units), indent=2) + "\n"
