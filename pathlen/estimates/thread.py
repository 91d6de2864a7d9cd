"""Thread for seams: consumption per unit seam length by ISO 4915 stitch type, split by thread position.

Every thread of a stitch runs from its own cone: a needle thread, a bobbin or looper thread, a cover
thread.  A position's consumption per unit seam length (one thread) is ``c + S·(t·T + w·W)``, with
S stitches per unit length, T the seam's thickness and W the seam (or cover) width, all in one
length unit (mm here), so the ratio has no unit.

Totals over the positions are the published per-stitch formulas (thread makers' consumption
tables, reproduced in textile engineering texts; e.g. the stitch-formula table of the
"Sewing Thread Consumption Calculator", textiletechinsight.com):

    101: 3 + 2TS        301: 2 + 2TS          401: 4 + 2TS          504: 5 + 4S(W + T)
    514: 5 + 2S(3T + 2W)  516: 9 + 2S(2W + 3T)  602: 8 + S(5W + 4T)
    605: 10 + 2S(2W + 3T) 607: 12 + 4S(W + 2T)

The split by position is ours, from the stitch geometry, and always sums to the published total:
a chain or overedge needle thread lies along the seam and passes down and up through it (1 + 2TS
per thread); the lockstitch's two threads interlace midway, so each takes half (1 + TS: the thread
maker's stitch guide calls for a 1 : 1 needle-to-bobbin ratio); a cover thread crosses the cover
width and back once per stitch (1 + 2SW, the tables' note on cover threads); the loopers share what
is left equally.  Types without a formula here (304, 503) use a recalled fixed ratio.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from pathlen.errors import UsageError

#: Stated defaults (common practice for woven and knit apparel): 4 stitches per cm (about 10 per
#: inch), a seam 1.5 mm thick (two plies of medium-weight fabric).
DEFAULT_STITCHES_PER_MM = 0.4  # common practice
DEFAULT_THICKNESS_MM = 1.5  # common practice
#: Sanity limits: anything beyond is a typing error, not a seam.
MAX_STITCHES_PER_MM = 3.0  # 30 per cm
MAX_THICKNESS_MM = 50.0
MAX_WIDTH_MM = 50.0


@dataclass(frozen=True)
class Position:
    """One thread position of a stitch: ``threads`` threads (cones), each using ``c + S·(t·T + w·W)``."""

    name: str
    threads: int
    c: float
    t: float = 0.0
    w: float = 0.0

    def ratio(self, s: float, thickness: float, width: float) -> float:
        """Thread per unit seam length of one thread of this position."""
        return self.c + s * (self.t * thickness + self.w * width)


@dataclass(frozen=True)
class Stitch:
    """An ISO 4915 stitch type: its thread positions, the published total and the default width."""

    number: int
    name: str
    positions: tuple[Position, ...]
    formula: str | None  # the published total, None for a fixed ratio
    width_mm: float | None = None  # default seam/cover width where W enters; common practice

    def uses_width(self) -> bool:
        return any(p.w for p in self.positions)

    def ratio(self, s: float, thickness: float, width: float) -> float:
        """All threads together per unit seam length."""
        return sum(p.threads * p.ratio(s, thickness, width) for p in self.positions)


def _needles(n: int) -> Position:
    return Position("needle", n, 1.0, 2.0)


_COVER = Position("cover", 1, 1.0, 0.0, 2.0)

STITCHES: dict[int, Stitch] = {s.number: s for s in (
    Stitch(101, "single-thread chainstitch", (Position("needle", 1, 3.0, 2.0),), "3 + 2TS"),
    Stitch(301, "lockstitch", (Position("needle", 1, 1.0, 1.0), Position("bobbin", 1, 1.0, 1.0)), "2 + 2TS"),
    # from memory: ratio 5.5 (a thread maker's stitch guide), split 1 : 1 as a lockstitch
    Stitch(304, "zigzag lockstitch", (Position("needle", 1, 2.75), Position("bobbin", 1, 2.75)), None),
    Stitch(401, "two-thread chainstitch", (_needles(1), Position("looper", 1, 3.0)), "4 + 2TS"),
    # from memory: ratio 12 in recalled thread-maker tables; the split 2 : 10 is ours
    Stitch(503, "two-thread overedge", (Position("needle", 1, 2.0), Position("looper", 1, 10.0)), None),
    Stitch(504, "three-thread overedge", (_needles(1), Position("upper looper", 1, 2.0, 1.0, 2.0),
                                          Position("lower looper", 1, 2.0, 1.0, 2.0)), "5 + 4S(W + T)", 4.0),
    # 512 is formed by the same four threads as 514 (two needles, two loopers; ISO 4915): its formula
    Stitch(512, "four-thread mock safety stitch", (_needles(2), Position("upper looper", 1, 1.5, 1.0, 2.0),
                                                   Position("lower looper", 1, 1.5, 1.0, 2.0)),
           "5 + 2S(3T + 2W)", 5.0),
    Stitch(514, "four-thread overedge", (_needles(2), Position("upper looper", 1, 1.5, 1.0, 2.0),
                                         Position("lower looper", 1, 1.5, 1.0, 2.0)), "5 + 2S(3T + 2W)", 5.0),
    # 516 = 401 + 504 sewn together: the 401 chain's needle and looper and the 504 overedge's threads
    Stitch(516, "five-thread safety stitch", (
        Position("chain needle", 1, 1.0, 2.0), Position("chain looper", 1, 3.0),
        Position("overedge needle", 1, 1.0, 2.0), Position("upper looper", 1, 2.0, 1.0, 2.0),
        Position("lower looper", 1, 2.0, 1.0, 2.0)), "9 + 2S(2W + 3T)", 5.0),
    Stitch(602, "two-needle cover stitch", (_needles(2), Position("looper", 1, 5.0, 0.0, 3.0), _COVER),
           "8 + S(5W + 4T)", 5.0),
    Stitch(605, "three-needle cover stitch", (_needles(3), Position("looper", 1, 6.0, 0.0, 2.0), _COVER),
           "10 + 2S(2W + 3T)", 5.0),
    Stitch(607, "four-needle flat seam", (_needles(4), Position("looper", 1, 7.0, 0.0, 2.0), _COVER),
           "12 + 4S(W + 2T)", 6.0),
)}


def known() -> str:
    return ", ".join(str(k) for k in sorted(STITCHES))


def stitch(number: object, where: str = "stitch") -> Stitch:
    """The stitch type ``number``, or a usage error naming the value given."""
    if isinstance(number, bool) or not isinstance(number, int) or number not in STITCHES:
        raise UsageError(f"{where}: unknown stitch type {number!r}; known ISO 4915 types: {known()}")
    return STITCHES[number]


@dataclass(frozen=True)
class StitchSettings:
    """S (stitches per mm), T and W (mm) of one seam, each given or the stated default."""

    stitches_per_mm: float
    thickness_mm: float
    width_mm: float | None  # None where the stitch has no width

    @property
    def spc(self) -> float:
        return self.stitches_per_mm * 10.0


def settings_for(st: Stitch, stitches_per_mm: float | None, thickness_mm: float | None,
                 width_mm: float | None) -> StitchSettings:
    """The given values where given, else the stated defaults (the stitch's own default width)."""
    width = (width_mm if width_mm is not None else st.width_mm) if st.uses_width() else None
    return StitchSettings(stitches_per_mm if stitches_per_mm is not None else DEFAULT_STITCHES_PER_MM,
                          thickness_mm if thickness_mm is not None else DEFAULT_THICKNESS_MM, width)


def check_value(key: str, value: object, where: str) -> float:
    """A positive, finite, plausible S (per mm), T or W (mm) or a usage error naming ``key``."""
    limit = {"spc": MAX_STITCHES_PER_MM * 10, "spi": MAX_STITCHES_PER_MM * 25.4, "thickness": MAX_THICKNESS_MM,
             "width": MAX_WIDTH_MM}[key]
    if isinstance(value, bool) or not isinstance(value, int | float) or not 0 < value <= limit \
            or not math.isfinite(value):
        unit = {"spc": "per cm", "spi": "per inch"}.get(key, "mm")
        raise UsageError(f"{where}: {key} must be a number above 0 and at most {limit:g} {unit}, not {value!r}")
    return float(value)


def position_ratios(st: Stitch, ss: StitchSettings) -> list[tuple[Position, float]]:
    """Per position, the thread per unit seam length of one of its threads."""
    width = ss.width_mm or 0.0
    return [(p, p.ratio(ss.stitches_per_mm, ss.thickness_mm, width)) for p in st.positions]
