"""What the service can do to a drawing: the same work and the same one-file JSON as the commands."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from pathlen.errors import UsageError

TASKS = ("measure", "cut", "seam", "bead")


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


def build_task(name: str, profile: str | None = None, profile_files: tuple[str, ...] = (),
               bead: str | None = None) -> Task:
    """The task ``name`` with its options; a usage error when one it needs is missing or wrong."""
    from pathlen.batch import FileResult, MeasureSettings, measure_file

    if name == "measure":
        from pathlen.export.csv import render as measure_csv
        from pathlen.export.json import measure_document

        return Task(name, measure_file, FileResult, MeasureSettings(), lambda r: measure_document([r], "mm"), "",
                    lambda r: measure_csv([r], "mm"))
    if name == "cut":
        from pathlen.cli.profile_files import profiles_or_exit
        from pathlen.estimates.cut import CutEstimate, CutSettings, cautions, estimate_file
        from pathlen.export.cut import cut_document, render_csv

        if not profile:
            raise UsageError("--task cut needs --profile")
        known = profiles_or_exit(profile_files)
        if profile not in known:
            raise UsageError(f"no profile {profile!r}; known: {', '.join(known)}")
        chosen = known[profile]
        notes = cautions(chosen)
        return Task(name, estimate_file, lambda p, **kw: CutEstimate(p, **kw), CutSettings(chosen),
                    lambda r: cut_document([r], "mm", chosen, notes), f"profile={profile}",
                    lambda r: render_csv([r], "mm"))
    if name == "bead":
        from pathlen.estimates.bead import BeadEstimate, BeadSettings, Joint, estimate_beads, parse_section
        from pathlen.estimates.bead import cautions as bead_cautions
        from pathlen.export.bead import bead_document
        from pathlen.export.bead import render_csv as bead_csv

        if not bead:
            raise UsageError("--task bead needs --bead SPEC")
        settings = BeadSettings([Joint("", parse_section(bead))], measure=MeasureSettings())
        return Task(name, estimate_beads, BeadEstimate, settings,
                    lambda r: bead_document([r], "mm", settings, bead_cautions()), f"bead={bead}",
                    lambda r: bead_csv([r], "mm", settings))
    if name == "seam":
        from pathlen.estimates.seam_estimate import SeamEstimate, SeamSettings, estimate_seams
        from pathlen.estimates.seam_estimate import cautions as seam_cautions
        from pathlen.export.seam import render_csv as seam_csv
        from pathlen.export.seam import seam_document

        seam_settings = SeamSettings(measure=MeasureSettings())
        return Task(name, estimate_seams, lambda p, **kw: SeamEstimate(p, **kw), seam_settings,
                    lambda r: seam_document([r], "cm", seam_settings, None, seam_cautions()), "",
                    lambda r: seam_csv([r], "cm"))
    raise UsageError(f"unknown task {name!r}; one of {', '.join(TASKS)}")


def load_service_file(path: Path, default: Task, profile_files: tuple[str, ...] = ()) -> dict[str, Task]:
    """A service file: ``[folder."NAME"]`` tables (``task``, ``profile``, ``bead``) giving the task for the
    inbox's sub-folder NAME; files elsewhere get ``default``.  One usage error per problem."""
    from pathlen.tomlfile import read_toml

    data = read_toml(path, "service file")
    if set(data) - {"folder"}:
        raise UsageError(f"{path}: unknown table {sorted(set(data) - {'folder'})[0]!r}; use [folder.\"NAME\"]")
    out = {"": default}
    for name, entry in data.get("folder", {}).items():
        where = f"{path} folder {name!r}"
        if not isinstance(entry, dict) or set(entry) - {"task", "profile", "bead"}:
            raise UsageError(f"{where}: give task, and profile (cut) or bead (bead)")
        if "/" in name or name in ("", ".", ".."):
            raise UsageError(f"{where}: a folder name directly inside the inbox")
        try:
            out[name] = build_task(entry.get("task", "measure"), entry.get("profile"), profile_files,
                                   entry.get("bead"))
        except UsageError as exc:
            raise UsageError(f"{where}: {exc}") from None
    return out
