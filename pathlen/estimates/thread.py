"""Thread for seams: consumption per unit seam length by ISO 4915 stitch type, and the lockstitch model.

Ratios are metres of thread (all threads of the stitch together) per metre of seam.
"""

from __future__ import annotations

from pathlen.errors import InputError

#: Thread per unit seam length by ISO 4915 stitch type, from thread makers' published tables as
#: recalled in shared/REFERENCES.md (# from memory: check your thread maker's figures).
STITCH_RATIO: dict[int, float] = {
    101: 5.0, 301: 2.5, 304: 5.5, 401: 5.5, 503: 12.0, 504: 14.0, 512: 18.0,
    514: 18.0,  # from memory, not in the reference list: a four-thread overedge like 512
    516: 20.0, 602: 25.0, 605: 28.0, 607: 32.0,
}


def lockstitch_ratio(thickness_mm: float, stitches_per_mm: float) -> float:
    """Thread per unit seam of lockstitch 301 by its geometry: 2 + 2·T·S (T seam thickness, S stitches
    per unit length, same unit; textile engineering texts on thread consumption)."""
    return 2.0 + 2.0 * thickness_mm * stitches_per_mm


def thread_ratio(stitch: int, thickness_mm: float | None, stitches_per_mm: float | None) -> float:
    """The ratio for a stitch type: the lockstitch geometry where it applies and is given, else the table."""
    if stitch == 301 and thickness_mm and stitches_per_mm:
        return lockstitch_ratio(thickness_mm, stitches_per_mm)
    if stitch not in STITCH_RATIO:
        raise InputError(f"stitch type {stitch} has no thread ratio here; known: "
                         f"{', '.join(str(k) for k in sorted(STITCH_RATIO))}")
    return STITCH_RATIO[stitch]
