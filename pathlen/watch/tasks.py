"""What the service can do to a drawing: the same work, options and one-file JSON as the commands.

A task is built from options with the command's own names and meaning, given on the ``watch``
command line or in a service file's ``[folder."NAME"]`` table:

* measure: ``recover``
* cut: ``profile`` (required), ``quantity``, ``layers``, ``engrave``, ``ignore``, ``dedupe``, ``recover``
* seam: ``plan``, ``allowance``, ``stitch``, ``quantity``, ``spc`` or ``spi``, ``thickness``, ``width``,
  ``waste``, ``cone`` (metres per cone), ``recover``
* bead: ``bead`` (a section) or ``plan``, ``pack``, ``waste``, ``recover``

Every value is checked when the service starts; a problem is one line naming the file, the table,
the key and the value (a usage error).  Plan paths in a service file are relative to it.
"""

from __future__ import annotations

import json
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from pathlen.errors import PathlenError, UsageError
from pathlen.tomlfile import flag as _flag
from pathlen.tomlfile import names as _names
from pathlen.tomlfile import number as _number
from pathlen.tomlfile import text
from pathlen.tomlfile import whole as _whole

TASKS = ("measure", "cut", "seam", "bead")
COMMON = ("recover",)
OPTIONS: dict[str, tuple[str, ...]] = {
    "measure": COMMON,
    "cut": ("profile", "quantity", "layers", "engrave", "ignore", "dedupe", *COMMON),
    "seam": ("plan", "allowance", "stitch", "quantity", "spc", "spi", "thickness", "width", "waste", "cone", *COMMON),
    "bead": ("bead", "plan", "pack", "waste", *COMMON),
}


@dataclass(frozen=True)
class Task:
    name: str
    work: Callable[[str, Any], Any]
    failed: Callable[..., Any]
    settings: Any
    document: Callable[[Any], dict[str, Any]]
    #: what besides the content decides the result (part of the job key)
    options_key: str
    #: the command's CSV for one result
    csv: Callable[[Any], str] | None = None


def headline(doc: dict[str, Any]) -> str:
    """The numbers a summary line shows for a result document (units named)."""
    t = doc.get("total", {})
    kind = doc.get("format", "")
    if kind == "pathlen-measure":
        return f"length {t.get('length', 0):.3f} {doc.get('units', 'mm')}"
    if kind == "pathlen-cut":
        return (f"time {t.get('time_s', {}).get('total', 0):.1f} s, cost {t.get('cost', {}).get('total', 0):.2f}, "
                f"pierces {t.get('pierces', 0)}")
    if kind == "pathlen-seam":
        return f"sewn {t.get('sew_length', 0):.1f} {doc['units']['length']}, thread " \
               f"{t.get('thread_length', 0):.2f} {doc['units']['thread']}"
    if kind == "pathlen-bead":
        return f"sealant {t.get('volume', 0):.1f} {doc.get('units', {}).get('volume', 'ml')}, packs {t.get('packs', 0)}"
    return ""


def _text(where: str, key: str, value: Any) -> str:
    return text(where, key, value, required=True)


def build_task(name: str, options: dict[str, Any] | None = None, profile_files: tuple[str, ...] = (),
               where: str = "watch", base: Path | None = None) -> Task:
    """The task ``name`` with ``options`` (see the module notes); a usage error naming ``where`` and the key
    when one is missing or wrong.  ``base`` is the folder plan paths are relative to."""
    from pathlen.batch import FileResult, MeasureSettings, measure_file
    from pathlen.importers import ImportOptions

    if name not in TASKS:
        raise UsageError(f"{where}: task must be one of {', '.join(TASKS)}, not {name!r}")
    opts = {k: v for k, v in (options or {}).items() if v is not None}
    unknown = sorted(set(opts) - set(OPTIONS[name]))
    if unknown:
        raise UsageError(f"{where}: {unknown[0]!r} is not an option of task {name} ({', '.join(OPTIONS[name])})")
    recover = _flag(where, "recover", opts.get("recover", False))
    measure = MeasureSettings(import_options=ImportOptions(recover=recover))
    key = json.dumps({k: opts[k] for k in sorted(opts)}, sort_keys=True, default=str)

    def plan_path(value: Any) -> Path:
        path = Path(_text(where, "plan", value))
        return path if path.is_absolute() or base is None else base / path

    if name == "measure":
        from pathlen.export.csv import render as measure_csv
        from pathlen.export.json import measure_document

        return Task(name, measure_file, FileResult, measure, lambda r: measure_document([r], "mm"), key,
                    lambda r: measure_csv([r], "mm"))
    if name == "cut":
        from pathlen.estimates.cut import CutEstimate, CutSettings, cautions, estimate_file
        from pathlen.export.cut import cut_document, render_csv
        from pathlen.profiles import load_profiles

        if "profile" not in opts:
            raise UsageError(f"{where}: task cut needs profile (the name of a process profile)")
        profile = _text(where, "profile", opts["profile"])
        try:
            known = load_profiles([Path(f) for f in profile_files])
        except PathlenError as exc:
            raise UsageError(f"{where}: {exc}") from None
        if profile not in known:
            raise UsageError(f"{where}: profile {profile!r} is not known ({', '.join(known)})")
        chosen = known[profile]
        engrave = _names(where, "engrave", opts.get("engrave", []))
        if engrave and chosen.values.get("engrave_feed_mm_min") is None:
            raise UsageError(f"{where}: profile {profile!r} has no engrave_feed_mm_min, needed for engrave")
        settings = CutSettings(chosen, _whole(where, "quantity", opts.get("quantity", 1)),
                               _names(where, "layers", opts.get("layers", [])), engrave,
                               _names(where, "ignore", opts.get("ignore", [])),
                               _flag(where, "dedupe", opts.get("dedupe", False)),
                               import_options=measure.import_options)
        notes = cautions(chosen)
        return Task(name, estimate_file, lambda p, **kw: CutEstimate(p, quantity=settings.quantity, **kw), settings,
                    lambda r: cut_document([r], "mm", chosen, notes), key, lambda r: render_csv([r], "mm", chosen))
    if name == "bead":
        from pathlen.estimates.bead import (
            BeadEstimate,
            BeadPlan,
            BeadSettings,
            Joint,
            estimate_beads,
            load_plan,
            parse_pack,
            parse_section,
        )
        from pathlen.estimates.bead import cautions as bead_cautions
        from pathlen.export.bead import bead_document
        from pathlen.export.bead import render_csv as bead_csv

        if ("bead" in opts) == ("plan" in opts):
            raise UsageError(f"{where}: task bead needs either bead (a section such as rect:12x6) or plan")
        try:
            plan = (load_plan(plan_path(opts["plan"])) if "plan" in opts
                    else BeadPlan([Joint("", parse_section(_text(where, "bead", opts["bead"])))]))
            pack = parse_pack(_text(where, "pack", opts.get("pack", "310ml")))
        except UsageError as exc:
            raise UsageError(f"{where}: {exc}") from None
        settings = BeadSettings(plan.joints, pack, _number(where, "waste", opts.get("waste", 10.0), 0, 100),
                                measure=measure, products=plan.products)
        return Task(name, estimate_beads, BeadEstimate, settings,
                    lambda r: bead_document([r], "mm", settings, bead_cautions()), key,
                    lambda r: bead_csv([r], "mm", settings))
    from pathlen.estimates.seam_estimate import SeamEstimate, SeamSettings, estimate_seams
    from pathlen.estimates.seam_estimate import cautions as seam_cautions
    from pathlen.estimates.seam_plan import load_seam_plan
    from pathlen.estimates.thread import check_value
    from pathlen.estimates.thread import stitch as stitch_type
    from pathlen.export.seam import render_csv as seam_csv
    from pathlen.export.seam import seam_document

    stitch = stitch_type(opts.get("stitch", 301), f"{where}: stitch").number
    try:
        plan = load_seam_plan(plan_path(opts["plan"])) if "plan" in opts else None
    except UsageError as exc:
        raise UsageError(f"{where}: {exc}") from None
    if "spc" in opts and "spi" in opts:
        raise UsageError(f"{where}: give spc or spi, not both")
    density = (check_value("spc", opts["spc"], where) / 10.0 if "spc" in opts else
               check_value("spi", opts["spi"], where) / 25.4 if "spi" in opts else None)
    cone_mm = _number(where, "cone", opts["cone"], 0.0, 1e9, strict=True) * 1000.0 if "cone" in opts else None
    seam_settings = SeamSettings(_number(where, "allowance", opts.get("allowance", 10.0), 0.0, 1000.0), stitch,
                                 density, check_value("thickness", opts["thickness"], where)
                                 if "thickness" in opts else None, plan=plan,
                                 quantity=_whole(where, "quantity", opts.get("quantity", 1)),
                                 waste_pct=_number(where, "waste", opts.get("waste", 12.5), 0.0, 100.0),
                                 measure=measure,
                                 width_mm=check_value("width", opts["width"], where) if "width" in opts else None)
    return Task(name, estimate_seams, lambda p, **kw: SeamEstimate(p, quantity=seam_settings.quantity, **kw),
                seam_settings, lambda r: seam_document([r], "cm", seam_settings, cone_mm, seam_cautions()), key,
                lambda r: seam_csv([r], "cm", cone_mm))


def load_service_file(path: Path, default: Task, profile_files: tuple[str, ...] = ()) -> dict[str, Task]:
    """A service file: ``[folder."NAME"]`` tables (``task`` and that task's options) giving the task for the
    inbox's sub-folder NAME; files elsewhere get ``default``.  One usage error per problem."""
    from pathlen.tomlfile import read_toml

    data = read_toml(path, "service file")
    if set(data) - {"folder"}:
        raise UsageError(f"{path}: unknown table {sorted(set(data) - {'folder'})[0]!r}; use [folder.\"NAME\"]")
    folders = data.get("folder", {})
    if not isinstance(folders, dict):
        raise UsageError(f"{path}: folder must be tables [folder.\"NAME\"], not {folders!r}")
    out = {"": default}
    for name, entry in folders.items():
        where = f"{path} [folder.{json.dumps(name)}]"
        if not isinstance(entry, dict):
            raise UsageError(f"{where}: must be a table with task and its options, not {entry!r}")
        if "/" in name or name in ("", ".", ".."):
            raise UsageError(f"{where}: a folder name directly inside the inbox")
        task = entry.get("task", "measure")
        if not isinstance(task, str):
            raise UsageError(f"{where}: task must be one of {', '.join(TASKS)}, not {task!r}")
        out[name] = build_task(task, {k: v for k, v in entry.items() if k != "task"}, profile_files, where,
                               path.parent)
    return out
