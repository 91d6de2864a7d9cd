"""Cut time and cost of one drawing with a process profile (laser, plasma, waterjet).

Per part: every contour of the cut layers is pierced once (engraved/marked layers are not),
cut along its measured length (plus lead-in and lead-out, plus the kerf offset when the profile
asks for it) at the profile's feed (reduced on small holes), with the motion model of
:mod:`pathlen.estimates.kinematics`; between contours the head travels at rapid speed in the order
of :mod:`pathlen.estimates.tour`.  A file's job = quantity x part; cost = machine time x rate, plus
consumables per minute of cutting and per pierce.  Setup and the minimum charge belong to the run
(every drawing cut together with one profile: one setup), not to a drawing: :func:`run_charges`.
Units: mm, s, money as in the profile.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from pathlen.batch import FileOutcome, give_back_heap, one_line_failure, stage
from pathlen.containment import nesting_depth
from pathlen.contours import (
    DEFAULT_GAP_REPORT_MM,
    DEFAULT_JOIN_TOL_MM,
    chain_contours,
    duplicate_segments,
    gap_warnings,
    overlapping_lines,
)
from pathlen.errors import InputError, UsageError
from pathlen.estimates.cut_contours import TROUBLE, kerf_changes, motion_times, outlines, walk
from pathlen.estimates.kinematics import move_times
from pathlen.estimates.tour import plan_tour
from pathlen.estimates.waterjet import WaterjetInputs, waterjet_feed_mm_min
from pathlen.file_measure import hidden_note
from pathlen.importers import ImportOptions, read_drawing
from pathlen.instances import DEFAULT_MAX_SEGMENTS, expand, segment_total
from pathlen.measure import DEFAULT_RTOL, measure
from pathlen.profiles import Profile
from pathlen.segments import segment_layers, segment_table


@dataclass(frozen=True)
class CutSettings:
    """What decides a file's estimate besides the drawing."""

    profile: Profile
    quantity: int = 1
    cut: tuple[str, ...] = ()  # layers (or #rrggbb stroke colours) to cut; empty: every other layer
    engrave: tuple[str, ...] = ()  # layers/colours marked at the engrave feed, no pierce
    ignore: tuple[str, ...] = ()  # layers/colours left out
    dedupe: bool = False
    join_tol_mm: float = DEFAULT_JOIN_TOL_MM
    gap_report_mm: float = DEFAULT_GAP_REPORT_MM
    rtol: float = DEFAULT_RTOL
    home: tuple[float, float] = (0.0, 0.0)
    import_options: ImportOptions = field(default_factory=ImportOptions)
    max_segments: int = DEFAULT_MAX_SEGMENTS


@dataclass
class CutEstimate(FileOutcome):
    """One file's estimate (mm, s, money) or its one-line error."""

    quantity: int = 1
    closed: int = 0
    open: int = 0
    pierces: int = 0
    cut_length_mm: float = 0.0  # per part, with leads and kerf offset
    engrave_length_mm: float = 0.0
    lead_length_mm: float = 0.0
    kerf_change_mm: float = 0.0
    rapid_length_mm: float = 0.0
    bound_mm: float = 0.0  # error bound of the measured path length
    feed_mm_min: float = 0.0
    time_s: dict[str, float] = field(default_factory=dict)  # whole job
    cost: dict[str, float] = field(default_factory=dict)  # whole job
    part_time_s: float = 0.0
    warnings: list[str] = field(default_factory=list)


def cutting_feed_mm_min(profile: Profile) -> float:
    """The profile's feed, or the waterjet model's speed at its thickness and quality."""
    if profile.uses_waterjet_model:
        v = profile.values
        inputs = WaterjetInputs(v["pressure_mpa"], v["orifice_mm"], v["focus_tube_mm"], v["abrasive_kg_min"],
                                v["machinability"], v["model_constant"], v["abrasive_factor"])
        return waterjet_feed_mm_min(inputs, v["thickness_mm"], v["quality"])
    return float(profile.feed_mm_min)


def estimate_file(path: str, settings: CutSettings) -> CutEstimate:
    """Estimate one file; never raises for bad input (the error goes in the result)."""
    return one_line_failure(path, lambda: _estimate(path, settings),
                            lambda p, **kw: CutEstimate(p, quantity=settings.quantity, **kw))


def _role_of_entities(drawing_entities: list, s: CutSettings) -> np.ndarray:
    """0 ignored, 1 cut, 2 engraved, per entity (a selector is a layer name or a #rrggbb colour); decided
    once per distinct (layer, colour, hidden)."""
    def role(layer: str, color: str, hidden: bool) -> int:
        def hit(selectors: tuple[str, ...]) -> bool:
            return layer in selectors or (bool(color) and color in selectors)

        if hidden or hit(s.ignore):
            return 0
        if hit(s.engrave):
            return 2
        return 1 if not s.cut or hit(s.cut) else 0

    keys = [(e.layer, e.color, e.hidden) for e in drawing_entities]
    of_key = {key: role(*key) for key in set(keys)}
    return np.array([of_key[key] for key in keys], dtype=np.int64)


#: Contour steps whose samples, motion pieces and outlines are built at once (see :func:`_estimate`).
CUT_RUN_STEPS = 1 << 14


def _estimate(path: str, s: CutSettings) -> CutEstimate:
    p = s.profile
    with stage("reading the drawing"):
        drawing = expand(read_drawing(Path(path), s.import_options), s.max_segments, "the cut estimate")
    total = segment_total(drawing)
    give_back_heap(total)
    with stage(f"measuring {total:,} segments"):
        measured = measure(drawing, s.rtol)
        table = segment_table(drawing, measured)
    layer_names, layer = segment_layers(drawing, table)
    role = _role_of_entities(drawing.entities, s)[table.entity] if len(table) else np.zeros(0, dtype=np.int64)
    warnings = list(drawing.warnings) + hidden_note(drawing.entities, measured.entity_length)
    keep = (role > 0) & (table.length > 0)  # a zero-length segment is nothing to cut (nor a pierce)
    duplicates = duplicate_segments(table, layer, s.join_tol_mm)
    duplicates = duplicates[keep[duplicates]]
    if len(duplicates):
        extra = float(table.length[duplicates].sum())
        if s.dedupe:
            keep[duplicates] = False
            warnings.append(f"{len(duplicates)} segments drawn twice: cut once (--dedupe), {extra:.3f} mm saved")
        else:
            warnings.append(f"{len(duplicates)} segments drawn twice ({extra:.3f} mm): cut twice; "
                            "--dedupe cuts them once")
    others = np.setdiff1d(np.flatnonzero(keep), duplicates, assume_unique=True)  # both sorted, distinct
    overlaps, overlap_mm = overlapping_lines(table, layer, others, s.join_tol_mm)
    if overlaps:
        if s.dedupe:
            warnings.append(f"{overlaps} straight segments overlap others on the same line: the {overlap_mm:.3f} mm "
                            "cut twice is cut once (--dedupe)")
        else:
            warnings.append(f"{overlaps} straight segments overlap others on the same line ({overlap_mm:.3f} mm cut "
                            "twice); --dedupe cuts it once")
    if (role == 2).any() and p.values.get("engrave_feed_mm_min") is None:
        raise UsageError(f"profile {p.name!r} has no engrave_feed_mm_min, needed for the engraved layers")
    with stage(f"chaining {int(keep.sum()):,} segments into contours"):
        contours = chain_contours(table, layer, s.join_tol_mm, keep)
        warnings += gap_warnings(contours, layer_names, s.join_tol_mm, s.gap_report_mm)
    engraved = role[contours.steps[contours.first]] == 2
    with stage(f"finding which of {len(contours):,} contours lie inside which"):
        depth, parent = nesting_depth(table, contours)
    feed = cutting_feed_mm_min(p)
    result = CutEstimate(path, ok=True, quantity=s.quantity, feed_mm_min=feed, warnings=warnings)
    cut = ~engraved
    hole = contours.closed & (depth % 2 == 1) & cut
    offset = bool(p.kerf_offset and p.kerf_mm > 0)
    outward = np.where(hole, -0.5, 0.5) * p.kerf_mm
    lead_in = np.where(cut, p.lead_in_mm, 0.0)
    lead_out = np.where(cut, p.lead_out_mm, 0.0)
    n = len(contours)
    small, f, motion = np.zeros(n, dtype=bool), np.zeros(n), np.zeros(n)
    change, trouble = np.zeros(n), np.zeros(n, dtype=np.int64)
    # contour by contour facts, in runs of about CUT_RUN_STEPS steps: each run's samples, motion pieces
    # and outlines are let go before the next, so memory stays bounded whatever the drawing's size
    for c0, c1 in contours.runs(CUT_RUN_STEPS):
        run, part = contours.run(c0, c1), slice(c0, c1)
        with stage(f"building the outlines of {int(contours.closed.sum()):,} closed contours"):
            steps = walk(table, run)
            shapes = outlines(table, run, steps)
        small[part] = hole[part] & (shapes.perimeter > 0) & (
            4.0 * shapes.area / np.where(shapes.perimeter > 0, shapes.perimeter, 1.0)
            < p.small_hole_ratio * p.thickness_mm)
        f[part] = np.where(engraved[part], float(p.engrave_feed_mm_min or 0.0), feed) * np.where(
            small[part], p.small_hole_feed_factor, 1.0)
        with stage("offsetting the contours by half the kerf"):
            change[part], trouble[part] = kerf_changes(table, run, steps, shapes, outward[part],
                                                       (cut & contours.closed)[part] & offset)
        del shapes  # the outline polygons and the steps' samples are not needed past here: free them first
        steps.samples = np.zeros((0, 0, 3))
        with stage(f"planning the motion of {n:,} contours"):
            motion[part] = motion_times(table, run, steps, f[part] / 60.0, lead_in[part], lead_out[part],
                                        change[part], p.accel_mm_s2, p.corner_tolerance_mm)
        del steps
    path_mm = contours.length + change + lead_in + lead_out
    result.engrave_length_mm = float(contours.length[engraved].sum())
    result.pierces = int(cut.sum())
    result.kerf_change_mm = float(change.sum())
    result.lead_length_mm = float((lead_in + lead_out).sum())
    result.bound_mm = float(contours.bound.sum())
    result.cut_length_mm = float(path_mm[cut].sum())
    cutting_s = float(np.sum(path_mm / (f / 60.0))) if len(contours) else 0.0
    motion_s = float(motion.sum())
    small_holes = int(small.sum())
    narrow_holes = int((trouble == TROUBLE.index("narrow")).sum())
    rough_offsets = int((trouble == TROUBLE.index("rough")).sum())
    crossing = int((trouble == TROUBLE.index("crossing")).sum())
    open_cut = int((cut & ~contours.closed).sum())
    if s.dedupe and overlaps:  # the overlapped stretch is cut once: take it off at the cutting feed
        result.cut_length_mm -= overlap_mm
        cutting_s -= overlap_mm / (feed / 60.0)
        motion_s -= overlap_mm / (feed / 60.0)
    result.closed = int(contours.closed.sum())
    result.open = len(contours) - result.closed
    if small_holes:
        warnings.append(f"{small_holes} small holes cut at {p.small_hole_feed_factor:g} x feed")
    if narrow_holes:
        warnings.append(f"{narrow_holes} holes narrower than the kerf: cut without offset, check them")
    if crossing:
        warnings.append(f"{crossing} closed contours cross themselves: cut as drawn, without kerf offset")
    if rough_offsets:
        warnings.append(f"{rough_offsets} contours have features smaller than half the kerf: their offset "
                        "length is approximate")
    if open_cut:
        warnings.append(f"{open_cut} open contours cut as drawn: check the drawing if they should be closed")
    with stage(f"ordering {len(contours):,} contours for the rapids"):
        tour = plan_tour(contours.start[:, :2], contours.end[:, :2], contours.closed,
                         np.where(np.isin(parent, np.flatnonzero(~engraved)), parent, -1), s.home)
    rapid_v = p.rapid_mm_min / 60.0
    result.rapid_length_mm = tour.rapid_length
    rapids_s = tour.rapid_length / rapid_v
    rapid_motion_s = float(move_times(tour.rapid_moves, np.full(len(tour.rapid_moves), rapid_v), p.accel_mm_s2,
                                      np.zeros(len(tour.rapid_moves)), np.zeros(len(tour.rapid_moves))).sum())
    piercing_s = result.pierces * (p.pierce_s + p.head_updown_s)
    losses_s = (motion_s - cutting_s) + (rapid_motion_s - rapids_s)
    part_s = cutting_s + piercing_s + rapids_s + losses_s
    q = s.quantity
    result.part_time_s = part_s
    result.time_s = {"total": q * part_s, "cutting": q * cutting_s, "piercing": q * piercing_s,
                     "rapids": q * rapids_s, "motion_losses": q * losses_s}
    rate = p.rate_per_hour / 3600.0
    machine = q * part_s * rate
    consumables = ((p.consumables_per_min + p.assist_gas_per_min) * q * motion_s / 60.0  # per minute cutting
                   + p.consumables_per_pierce * q * result.pierces)
    result.cost = {"total": machine + consumables, "machine": machine, "consumables": consumables}
    numbers = [*result.time_s.values(), *result.cost.values(), result.cut_length_mm, result.rapid_length_mm]
    if not all(math.isfinite(x) for x in numbers):  # a report holds finite numbers or none at all
        raise InputError("the time model gave a non-finite result for this drawing; please report it with the file")
    return result


def run_charges(results: list[CutEstimate], profile: Profile) -> dict[str, float]:
    """The money and time of one run of the machine with ``profile`` over the files ``results`` (those that
    were read): machine and consumables of every file, one setup, and the minimum charge as the amount
    that lifts the run to it (0 when the run costs more).  ``total`` is the sum of the four charges;
    ``time_s`` the machine time with the one setup."""
    ok = [r for r in results if r.ok]
    rate = profile.rate_per_hour / 3600.0
    setup_s = profile.setup_min * 60.0 if ok else 0.0
    machine = sum(r.cost.get("machine", 0.0) for r in ok)
    consumables = sum(r.cost.get("consumables", 0.0) for r in ok)
    setup = setup_s * rate
    minimum = max(0.0, profile.minimum_charge - (machine + consumables + setup)) if ok else 0.0
    return {"machine": machine, "consumables": consumables, "setup": setup, "minimum_charge": minimum,
            "total": machine + consumables + setup + minimum, "setup_s": setup_s,
            "time_s": sum(r.time_s.get("total", 0.0) for r in ok) + setup_s}


def cautions(profile: Profile) -> list[str]:
    """The safety notes printed with every estimate for this process and material."""
    material = (profile.material or "").lower()
    out = []
    if profile.process == "laser":
        if any(w in material for w in ("pvc", "vinyl", "polyvinyl")):
            out.append("DO NOT laser-cut PVC or vinyl: it gives off hydrogen chloride, which harms people and the "
                       "machine.")
        out.append("Laser: some plastics give off hydrogen cyanide or other toxic fumes; use fume extraction, "
                   "eyewear rated for the laser's wavelength, and never leave a cut unattended (fire).")
    elif profile.process == "plasma":
        out.append("Plasma: electric shock, UV radiation (filter shade by current) and metal fume; ventilate and "
                   "wear the right eye and skin protection.")
    else:
        out.append("Waterjet: the stream can inject water and abrasive through skin even at low pressure; treat "
                   "any such injury as a surgical emergency and keep hands away from the jet.")
    out.append("These are estimates, not instructions: follow the machine maker's data and manual, the "
               "material's safety data sheet and local rules.")
    return out
