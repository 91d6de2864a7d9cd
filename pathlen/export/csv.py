"""CSV output: one row per file and layer, then ``ok`` and ``error``; a failed file has one row with
its error and no numbers."""

from __future__ import annotations

import csv
import io

from pathlen.batch import FileResult
from pathlen.export import from_mm


def render(results: list[FileResult], units: str) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["path", "layer", f"length_{units}", f"error_bound_{units}", "count", "ok", "error"])
    for r in results:
        if not r.ok:
            w.writerow([r.path, "", "", "", "", "false", r.error])
        for name, t in r.layers.items():
            w.writerow([r.path, name, repr(from_mm(t.length_mm, units)), repr(from_mm(t.bound_mm, units)), t.count,
                        "true", ""])
    return buf.getvalue()
