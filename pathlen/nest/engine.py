"""The one module that talks to the nesting engine: strip packing of polygons.

Engine: ``spyrrow``, the Python binding of sparrow (J. Gardeyn and T. Wauters, state-of-the-art
irregular strip packing on the jagua-rs collision engine).  It packs simple polygons (no holes)
into a strip of fixed height, minimising the used length, with rotations from a list or free.
Everything else (holes, sheets, remnants, mirroring, spacing) is built around it in
:mod:`pathlen.nest`.  To use another engine, replace :func:`pack_strip` and keep its contract.

Conventions: mm; the strip runs along +x from x = 0, its height along y from y = 0.  A placed copy
of item ``i`` maps a point p of the item's polygon to R(rotation_deg)·p + offset (R counter-clockwise).
"""

from __future__ import annotations

import math
import os
import threading
import time
from collections.abc import Callable
from dataclasses import dataclass

from pathlen.errors import UsageError
from pathlen.geometry import FloatArray


@dataclass(frozen=True)
class StripItem:
    """A polygon ``[n, 2]`` (mm, simple, no holes) to place ``demand`` times, with the rotations it may
    take (degrees; None: any)."""

    polygon: FloatArray
    demand: int
    rotations: tuple[float, ...] | None


@dataclass(frozen=True)
class StripPlacement:
    item: int
    rotation_deg: float
    offset: tuple[float, float]


@dataclass(frozen=True)
class StripLayout:
    length: float  # used strip length (mm), as the engine reports it
    placements: list[StripPlacement]
    interrupted: bool = False  # Ctrl-C: the best layout found until then


#: Progress callback: (seconds spent, best used length so far or None).
Progress = Callable[[float, float | None], None]


def engine_name() -> str:
    """The engine and its version, for reports."""
    import spyrrow

    return f"spyrrow {getattr(spyrrow, '__version__', '?')}"


def pack_strip(items: list[StripItem], height: float, time_s: float, seed: int | None = None,
               progress: Progress | None = None) -> StripLayout:
    """Pack every copy of ``items`` into a strip of ``height`` (mm) within about ``time_s`` seconds.

    The engine runs in a thread of its own; this thread collects its progress reports.  On Ctrl-C
    the best feasible layout reported so far is returned (``interrupted``), or the interrupt goes on
    when there is none yet.  With a ``seed`` the engine runs on one thread, so that the same order,
    seed and time give the same layout on the same machine.
    """
    import spyrrow

    if not items:
        return StripLayout(0.0, [])
    # the engine works in single precision: give it each polygon about its own centre, and undo that
    shifts = [_centre(it.polygon) for it in items]
    engine_items = [
        spyrrow.Item(str(i), [(float(x), float(y)) for x, y in it.polygon - shift], int(it.demand),
                     None if it.rotations is None else [float(r) for r in it.rotations])
        for i, (it, shift) in enumerate(zip(items, shifts, strict=True))
    ]
    try:
        instance = spyrrow.StripPackingInstance("pathlen", float(height), engine_items)
    except ValueError as exc:
        raise UsageError(f"the nesting engine refused the parts: {exc}") from None
    total = max(1, math.ceil(time_s))
    # with a seed the engine runs on one thread: threads racing each other would change the answer
    workers = 1 if seed is not None else len(os.sched_getaffinity(0))
    config = spyrrow.StripPackingConfig(early_termination=True, total_computation_time=total,
                                        num_workers=workers, seed=seed)
    queue = spyrrow.ProgressQueue()
    box: dict[str, object] = {}

    def run() -> None:
        try:
            box["solution"] = instance.solve(config, progress=queue)
        except BaseException as exc:  # noqa: BLE001 - handed to the caller's thread below
            box["error"] = exc

    worker = threading.Thread(target=run, name="nesting-engine", daemon=True)
    started = time.monotonic()
    worker.start()
    best = None
    try:
        while worker.is_alive():
            worker.join(0.2)
            best = _best_feasible(queue.drain(), best)
            if progress is not None:
                progress(time.monotonic() - started, None if best is None else best.width)
    except KeyboardInterrupt:
        best = _best_feasible(queue.drain(), best)
        if best is None:
            raise
        return _layout(best, shifts, interrupted=True)
    if "error" in box:
        raise UsageError(f"the nesting engine failed: {box['error']}")
    best = _best_feasible(queue.drain(), best)
    final = box["solution"]
    return _layout(best if best is not None and best.width < final.width else final, shifts)  # type: ignore


def _best_feasible(reports: list, best: object) -> object:
    import spyrrow

    feasible = (spyrrow.ReportType.ExplFeas, spyrrow.ReportType.CmprFeas, spyrrow.ReportType.Final)
    for kind, solution in reports:
        if kind not in feasible:
            continue
        if best is None or solution.width < best.width:  # type: ignore[attr-defined]
            best = solution
    return best


def _centre(polygon: FloatArray) -> FloatArray:
    return 0.5 * (polygon.min(axis=0) + polygon.max(axis=0))


def _layout(solution: object, shifts: list[FloatArray], interrupted: bool = False) -> StripLayout:
    out = []
    for p in solution.placed_items:  # type: ignore[attr-defined]
        i = int(p.id)
        a = math.radians(p.rotation)
        c, s = math.cos(a), math.sin(a)
        sx, sy = shifts[i]
        # the engine placed (q - shift): R (q - shift) + t = R q + (t - R shift)
        tx, ty = p.translation
        out.append(StripPlacement(i, float(p.rotation), (tx - (c * sx - s * sy), ty - (s * sx + c * sy))))
    return StripLayout(float(solution.width), out, interrupted)  # type: ignore[attr-defined]

