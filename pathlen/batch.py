"""Files -> measured results, one file at a time or on a process pool."""

from __future__ import annotations

import os
from collections.abc import Callable, Iterable, Iterator
from concurrent.futures import ProcessPoolExecutor, as_completed
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from pathlen.contours import DEFAULT_JOIN_TOL_MM, count_contours
from pathlen.errors import PathlenError, UsageError
from pathlen.importers import SUFFIXES, ImportOptions, read_drawing
from pathlen.instances import DEFAULT_MAX_SEGMENTS, TooManySegments, expand
from pathlen.measure import DEFAULT_RTOL, measure


@dataclass(frozen=True)
class MeasureSettings:
    """Everything that decides a file's measurement."""

    rtol: float = DEFAULT_RTOL
    join_tol_mm: float = DEFAULT_JOIN_TOL_MM
    import_options: ImportOptions = field(default_factory=ImportOptions)
    #: most segments a drawing's copies may be written out to (for contours)
    max_segments: int = DEFAULT_MAX_SEGMENTS


@dataclass
class LayerTotal:
    length_mm: float
    bound_mm: float
    count: int


@dataclass
class FileOutcome:
    """What every command reports per file: the path, whether it worked, else a one-line error."""

    path: str
    ok: bool
    error: str | None = None


@dataclass
class FileResult(FileOutcome):
    """One file's measurement (millimetres) or its one-line error."""

    length_mm: float = 0.0
    bound_mm: float = 0.0
    layers: dict[str, LayerTotal] = field(default_factory=dict)
    #: per stroke colour (``#rrggbb``); empty for formats without colours
    colors: dict[str, LayerTotal] = field(default_factory=dict)
    closed: int = 0
    open: int = 0
    #: False when the copies were too many to write out (see ``max_segments``)
    contours_counted: bool = True
    warnings: list[str] = field(default_factory=list)


def find_drawings(paths: Iterable[str]) -> list[str]:
    """Expand folders (recursively) into their drawing files; keep files as given.

    Paths that do not exist are kept, so that they are reported as failed files.
    """
    out: list[str] = []
    for p in paths:
        path = Path(p)
        if path.is_dir():
            found = sorted(str(f) for f in path.rglob("*") if f.suffix.lower() in SUFFIXES and f.is_file())
            out.extend(found)
        else:
            out.append(p)
    if not out:
        raise UsageError(f"no {' or '.join(SUFFIXES)} files found in the given paths")
    return out


def one_line_failure(path: str, work: Callable[[], Any], failed: Callable[..., Any]) -> Any:
    """``work()``, or ``failed(path, ok=False, error=...)`` with a one-line reason if it raises.

    Bad input (:class:`PathlenError`) gives its own message; anything else is named, never shown
    as a traceback: one bad file must not stop the batch.
    """
    try:
        return work()
    except PathlenError as exc:
        return failed(path, ok=False, error=str(exc))
    except MemoryError:
        return failed(path, ok=False, error="out of memory while reading this file")
    except RecursionError:
        return failed(path, ok=False, error="structure nested too deeply")
    except Exception as exc:  # noqa: BLE001 - one bad file must not stop the batch
        text = str(exc).strip().splitlines()
        return failed(path, ok=False, error=f"unexpected {type(exc).__name__}: {text[0] if text else ''}")


def measure_file(path: str, settings: MeasureSettings = MeasureSettings()) -> FileResult:
    """Measure one file; never raises for bad input (the error goes in the result)."""
    return one_line_failure(path, lambda: _measure_file(path, settings), FileResult)


def _measure_file(path: str, settings: MeasureSettings) -> FileResult:
    drawing = read_drawing(Path(path), settings.import_options)
    result = measure(drawing, settings.rtol)
    warnings = list(drawing.warnings)
    try:
        contours = count_contours(expand(drawing, settings.max_segments, "counting contours"), settings.join_tol_mm)
    except TooManySegments as exc:
        contours = None
        warnings.append(f"contours not counted: {exc}; lengths are exact all the same")
    copies = [e.copies for e in drawing.entities]
    layers = _totals_by([e.layer for e in drawing.entities], result.entity_length, result.entity_bound, copies)
    colors = _totals_by([e.color for e in drawing.entities], result.entity_length, result.entity_bound, copies)
    colors.pop("", None)
    if result.unconverged:
        warnings.append(f"{result.unconverged} integration intervals did not reach the tolerance; "
                        "their error is included in the bound")
    return FileResult(
        path, ok=True, length_mm=float(np.sum(result.entity_length)),
        bound_mm=float(np.sum(result.entity_bound)), layers=layers, colors=colors,
        closed=contours.closed if contours else 0, open=contours.open if contours else 0,
        contours_counted=contours is not None, warnings=warnings,
    )


def _totals_by(keys: list[str], length: np.ndarray, bound: np.ndarray, copies: list[int]) -> dict[str, LayerTotal]:
    """Per-key sums of entity lengths, bounds and counts (each entity counted ``copies`` times), keys sorted."""
    names, index = np.unique(np.array(keys, dtype=object), return_inverse=True) if keys else ([], [])
    lengths = np.bincount(index, weights=length, minlength=len(names))
    bounds = np.bincount(index, weights=bound, minlength=len(names))
    counts = np.bincount(index, weights=np.array(copies, dtype=float), minlength=len(names))
    rows = zip(names, lengths, bounds, counts, strict=True)
    return {str(n): LayerTotal(float(a), float(b), int(c)) for n, a, b, c in rows}


def single_blas_thread() -> None:
    """Keep BLAS to one thread in this process.  pathlen's products are tall and thin (nodes times
    weights, points times 3x3 maps): BLAS threads gain nothing there and, spinning beside
    pathlen's own threads and workers, cost up to a third of the wall time on two cores."""
    from threadpoolctl import threadpool_limits

    threadpool_limits(limits=1, user_api="blas")


def _one_thread_each() -> None:
    """Pool workers already share the cores: no threads of their own inside."""
    from pathlen.measure import planar_cubic

    planar_cubic.THREADS = 1
    single_blas_thread()


def run_batch(paths: list[str], settings: Any, jobs: int = 1,
              work: Callable[[str, Any], Any] = measure_file,
              failed: Callable[..., Any] = FileResult) -> Iterator[tuple[int, Any]]:
    """Yield ``(index, work(path, settings))`` for every path as results finish.

    ``work`` never raises for bad input (it returns a failed result); ``jobs > 1`` runs on a
    process pool, ``jobs = 0`` uses every core.  A worker that dies fails its file only, with
    ``failed(path, ok=False, error=...)`` as its result.  Whoever does the work keeps BLAS to
    one thread (:func:`single_blas_thread`).
    """
    workers = (os.cpu_count() or 1) if jobs == 0 else jobs
    if workers <= 1 or len(paths) == 1:
        single_blas_thread()
        for i, p in enumerate(paths):
            yield i, work(p, settings)
        return
    with ProcessPoolExecutor(max_workers=min(workers, len(paths)), initializer=_one_thread_each) as pool:
        futures = {pool.submit(work, p, settings): i for i, p in enumerate(paths)}
        for fut in as_completed(futures):
            i = futures[fut]
            try:
                yield i, fut.result()
            except Exception as exc:  # noqa: BLE001 - a dead worker fails its file only
                yield i, failed(paths[i], ok=False, error=f"worker failed: {type(exc).__name__}")
