"""What the service can do to a drawing: the same work and the same one-file JSON as the commands."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
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


def build_task(name: str, profile: str | None = None, profile_files: tuple[str, ...] = (),
               bead: str | None = None) -> Task:
    """The task ``name`` with its options; a usage error when one it needs is missing or wrong."""
    from pathlen.batch import FileResult, MeasureSettings, measure_file

    if name == "measure":
        from pathlen.export.json import measure_document

        return Task(name, measure_file, FileResult, MeasureSettings(), lambda r: measure_document([r], "mm"), "")
    if name == "cut":
        from pathlen.cli.profile_files import profiles_or_exit
        from pathlen.estimates.cut import CutEstimate, CutSettings, cautions, estimate_file
        from pathlen.export.cut import cut_document

        if not profile:
            raise UsageError("--task cut needs --profile")
        known = profiles_or_exit(profile_files)
        if profile not in known:
            raise UsageError(f"no profile {profile!r}; known: {', '.join(known)}")
        chosen = known[profile]
        notes = cautions(chosen)
        return Task(name, estimate_file, lambda p, **kw: CutEstimate(p, **kw), CutSettings(chosen),
                    lambda r: cut_document([r], "mm", chosen, notes), f"profile={profile}")
    if name == "bead":
        from pathlen.estimates.bead import BeadEstimate, BeadSettings, Joint, estimate_beads, parse_section
        from pathlen.estimates.bead import cautions as bead_cautions
        from pathlen.export.bead import bead_document

        if not bead:
            raise UsageError("--task bead needs --bead SPEC")
        settings = BeadSettings([Joint("", parse_section(bead))], measure=MeasureSettings())
        return Task(name, estimate_beads, BeadEstimate, settings,
                    lambda r: bead_document([r], "mm", settings, bead_cautions()), f"bead={bead}")
    if name == "seam":
        from pathlen.estimates.seam_estimate import SeamEstimate, SeamSettings, estimate_seams
        from pathlen.estimates.seam_estimate import cautions as seam_cautions
        from pathlen.export.seam import seam_document

        seam_settings = SeamSettings(measure=MeasureSettings())
        return Task(name, estimate_seams, lambda p, **kw: SeamEstimate(p, **kw), seam_settings,
                    lambda r: seam_document([r], "cm", seam_settings, None, seam_cautions()), "")
    raise UsageError(f"unknown task {name!r}; one of {', '.join(TASKS)}")
