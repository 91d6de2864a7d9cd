"""SVG path data (``d``) -> raw 2-D segments.

Follows the path grammar of SVG 1.1 (section 8.3, "Path data") and SVG 2: absolute and relative
``M L H V C S Q T A Z``, implicit repeats (extra pairs after ``M`` are line-tos), smooth-curve
reflection only after a curve of the same family, closepath back to the subpath start, packed
numbers (``1-2.5.5``) and compact arc flags (``a1 1 0 00 1 1``).

Two parsers give the same segments: :func:`parse_fast` does the per-segment work in numpy and
keeps only the running current point in a tight Python loop; it declines anything unusual (an
error, a partial group) and :func:`parse_careful` then walks the path command by command,
keeping the path up to the first error as the spec's error handling asks, and says what was wrong.
"""

from __future__ import annotations

import itertools
import math
import re
from collections.abc import Callable

import numpy as np

from pathlen.geometry import run_starts
from pathlen.importers.svg_segments import RawSegments
from pathlen.importers.svg_values import NUMBER

_COMMANDS = "MmZzLlHhVvCcSsQqTtAa"
_SPLIT = re.compile(rf"([{_COMMANDS}])")
_NUM = re.compile(NUMBER)
_SEP = r"\s*+(?:,\s*+)?+"  # possessive: linear time on any input
_ARGS = re.compile(rf"\s*+(?:{NUMBER}{_SEP})*+")
_ONE = re.compile(rf"\s*+({NUMBER}){_SEP}")
_ARC_ONE = (rf"\s*+({NUMBER}){_SEP}({NUMBER}){_SEP}({NUMBER}){_SEP}([01]){_SEP}([01]){_SEP}"
            rf"({NUMBER}){_SEP}({NUMBER}){_SEP}")
_ARC = re.compile(_ARC_ONE)
_ARCS = re.compile(rf"(?:{_ARC_ONE})*+\s*+")
#: Anything but the path grammar's characters (ASCII digits, signs, point, exponent, separators, commands;
#: SVG whitespace is space, tab, CR, LF, FF) sends a path to the careful parser.
_FOREIGN = re.compile(rf"[^0-9eE.+\-, \t\r\n\f{_COMMANDS}]")
#: rows of one segment kind, the path each row belongs to, and its subpath within that path
Rows = tuple[np.ndarray, np.ndarray, np.ndarray]
_ARITY = {"M": 2, "L": 2, "H": 1, "V": 1, "C": 6, "S": 4, "Q": 4, "T": 2, "A": 7, "Z": 0}


# -- the careful parser: one command at a time ----------------------------------------------------
def _numbers(args: str) -> tuple[list[float], bool]:
    """The numbers of one command's arguments and whether they all parsed (a number too large for a
    double ends them, like any other error)."""
    if _ARGS.fullmatch(args):
        return _finite_prefix([float(t) for t in _NUM.findall(args)], True)
    out, pos = [], 0
    while m := _ONE.match(args, pos):
        out.append(float(m.group(1)))
        pos = m.end()
    return _finite_prefix(out, False)


def _finite_prefix(values: list[float], ok: bool) -> tuple[list[float], bool]:
    for k, v in enumerate(values):
        if not math.isfinite(v):
            return values[:k], False
    return values, ok


def _arc_numbers(args: str) -> tuple[list[float], bool]:
    """Arc arguments: flags are single characters and may touch the next number ("a1 1 0 011 1")."""
    out: list[float] = []
    pos = 0
    while pos < len(args) and (m := _ARC.match(args, pos)):
        out.extend(float(g) for g in m.groups())
        pos = m.end()
    return _finite_prefix(out, args[pos:].strip() == "")


def parse_careful(d: str, out: RawSegments) -> str | None:
    """The reference parser: exact error handling, one Python step per segment.  Rows are tagged
    (:meth:`RawSegments.tag`, entity field) with their subpath's number, counted by moveto from 0."""
    tag = getattr(out, "tag", None)
    moves = [-1]

    def moveto() -> None:
        if tag is not None and moves[0] >= 0:
            tag(moves[0], 0)
        moves[0] += 1

    error = _walk(d, out, moveto)
    if tag is not None and moves[0] >= 0:
        tag(moves[0], 0)
    return error


def _walk(d: str, out: RawSegments, moveto: Callable[[], None]) -> str | None:
    """:func:`parse_careful`'s walk; ``moveto`` is called at the start of every subpath."""
    lines, quads, cubics, arcs = (out.rows[k] for k in ("line", "quad", "cubic", "arc"))
    x = y = 0.0  # current point
    sx = sy = 0.0  # start of the current subpath
    qx = qy = 0.0  # last control point, for S/T reflection
    last = ""  # previous command family, upper case
    parts = _SPLIT.split(d)
    if parts[0].strip():
        return f"unexpected {parts[0].strip()[:20]!r} in path data"
    for cmd, args in zip(parts[1::2], parts[2::2], strict=True):
        up = cmd.upper()
        rel = cmd != up
        if last == "" and up != "M":
            return "path data must start with a moveto (M or m)"
        if up == "Z":
            if args.strip():
                return "numbers after closepath (Z)"
            if x != sx or y != sy:
                lines.extend((x, y, sx, sy))
            x, y, last = sx, sy, "Z"
            continue
        v, ok = _arc_numbers(args) if up == "A" else _numbers(args)
        k = _ARITY[up]
        count = len(v) // k
        if count == 0:
            return f"command {cmd} without its {k} numbers"
        for i in range(0, count * k, k):
            ox, oy = (x, y) if rel else (0.0, 0.0)
            if up == "M" and i == 0:
                x, y = sx, sy = v[0] + ox, v[1] + oy
                moveto()
            elif up in "ML":
                nx, ny = v[i] + ox, v[i + 1] + oy
                lines.extend((x, y, nx, ny))
                x, y = nx, ny
            elif up == "H":
                nx = v[i] + ox
                lines.extend((x, y, nx, y))
                x = nx
            elif up == "V":
                ny = v[i] + oy
                lines.extend((x, y, x, ny))
                y = ny
            elif up in "CSQT":  # curves; S and T reflect the previous control point of their family
                family = "C" if up in "CS" else "Q"
                explicit = up in "CQ"
                j = i + 2 if explicit else i
                if explicit:
                    first = (v[i] + ox, v[i + 1] + oy)
                else:
                    first = (2 * x - qx, 2 * y - qy) if last == family else (x, y)
                if family == "C":
                    qx, qy, j = v[j] + ox, v[j + 1] + oy, j + 2
                    nx, ny = v[j] + ox, v[j + 1] + oy
                    cubics.extend((x, y, *first, qx, qy, nx, ny))
                else:
                    qx, qy = first
                    nx, ny = v[j] + ox, v[j + 1] + oy
                    quads.extend((x, y, qx, qy, nx, ny))
                x, y = nx, ny
            else:  # A
                rx, ry, phi, large, sweep = v[i], v[i + 1], v[i + 2], v[i + 3], v[i + 4]
                nx, ny = v[i + 5] + ox, v[i + 6] + oy
                if nx == x and ny == y:
                    pass  # SVG 1.1 F.6.2: identical endpoints -> the arc is omitted
                elif rx == 0.0 or ry == 0.0:
                    lines.extend((x, y, nx, ny))  # F.6.2: a zero radius -> straight line
                else:
                    arcs.extend((x, y, abs(rx), abs(ry), phi, large, sweep, nx, ny))
                x, y = nx, ny
            last = "C" if up in "CS" else "Q" if up in "QT" else "L" if up in "MHV" else up
        if not ok or len(v) % k:
            return f"bad numbers after command {cmd}; path measured up to there"
    return None


# -- the fast parser: numpy per segment kind, a tight loop for the current point --------------------
_KINDS = "MLHVCSQTAZ"
M, L, H, V, C, S, Q, T, A, Z = range(10)
_KIND_OF = np.full(128, -1, dtype=np.int64)
for _k, _c in enumerate(_KINDS):
    _KIND_OF[ord(_c)] = _KIND_OF[ord(_c.lower())] = _k
_ARITY_OF = np.array([_ARITY[c] for c in _KINDS])
#: offset of the end point's x and y among a segment's numbers (-1: not given)
_END_X = np.array([0, 0, 0, -1, 4, 2, 2, 0, 5, -1])
_END_Y = np.array([1, 1, -1, 0, 5, 3, 3, 1, 6, -1])


def parse_many(paths: list[str]) -> tuple[dict[str, Rows], np.ndarray]:
    """Parse many well-formed paths at once.

    Returns ``({kind: (rows, path index of each row, subpath of each row)}, ok)``, subpaths
    numbered from 0 by their moveto within each path; a path with anything unusual
    (an error, a partial group, packed numbers) gets ``ok = False`` and no rows: give it to
    :func:`parse_careful`.
    """
    ok = np.ones(len(paths), dtype=bool)
    cmds: list[str] = []
    tokens: list[list[str]] = []
    owner: list[int] = []
    for p, d in enumerate(paths):
        parts = _SPLIT.split(d)
        if parts[0].strip() or len(parts) < 3 or parts[1] not in "Mm" or _FOREIGN.search(d):
            ok[p] = False
            continue
        mine = []
        for c, a in zip(parts[1::2], parts[2::2], strict=True):
            if c in "Aa":
                if not _ARCS.fullmatch(a):
                    ok[p] = False
                    break
                mine.append([x for arc in _ARC.findall(a) for x in arc])
            else:
                mine.append(a.replace(",", " ").split())
        if ok[p]:
            cmds.extend(parts[1::2])
            tokens.extend(mine)
            owner.extend([p] * len(mine))
    counts = np.fromiter(map(len, tokens), dtype=np.int64, count=len(tokens))
    cmd_path = np.array(owner, dtype=np.int64)
    nums = _to_floats(tokens, counts, cmd_path, ok)
    infinite = ~np.isfinite(nums)
    if infinite.any():  # 1e400: the careful parser ends such a path there
        ok[np.repeat(cmd_path, counts)[infinite]] = False
    code = np.frombuffer("".join(cmds).encode("ascii"), dtype=np.uint8)
    kind = _KIND_OF[code]
    arity = _ARITY_OF[kind]
    closing = kind == Z
    bad = np.where(closing, counts != 0, (counts == 0) | (counts % np.maximum(arity, 1) != 0))
    ok[cmd_path[bad]] = False
    keep = ok[cmd_path]  # commands of paths still fine
    groups = np.where(closing, 1, counts // np.maximum(arity, 1)) * keep
    first_group = np.cumsum(groups) - groups
    seg_cmd = np.repeat(np.arange(len(cmds)), groups)
    within = np.arange(len(seg_cmd)) - first_group[seg_cmd]
    seg_kind = kind[seg_cmd]
    seg_kind[(seg_kind == M) & (within > 0)] = L  # extra pairs after a moveto are line-tos
    seg_rel = (code >= ord("a"))[seg_cmd]
    seg_path = cmd_path[seg_cmd]
    path_start = run_starts(seg_path)
    moves = np.cumsum((kind[seg_cmd] == M) & (within == 0))
    seg_sub = moves - np.maximum.accumulate(np.where(path_start, moves, 0))
    seg_rel[path_start] = False  # a path's first moveto is relative to (0, 0): absolute
    start = (np.cumsum(counts) - counts)[seg_cmd] + within * arity[seg_cmd]
    end_x, end_y = _current_points(nums, seg_kind, seg_rel, start)
    prev_x = np.r_[0.0, end_x[:-1]]
    prev_y = np.r_[0.0, end_y[:-1]]
    return _emit(nums, seg_kind, seg_rel, start, prev_x, prev_y, end_x, end_y, seg_path, seg_sub), ok


def _to_floats(tokens: list[list[str]], counts: np.ndarray, cmd_path: np.ndarray, ok: np.ndarray) -> np.ndarray:
    """All numbers as one array; paths whose numbers do not convert (packed "1-2") are marked not ok."""
    try:
        return np.array(list(itertools.chain.from_iterable(tokens)), dtype=np.float64)
    except ValueError:
        pass
    out = np.zeros(int(counts.sum()))
    pos = 0
    for t, p in zip(tokens, cmd_path.tolist(), strict=True):
        try:
            out[pos:pos + len(t)] = [float(x) for x in t]
        except ValueError:
            ok[p] = False
        pos += len(t)
    return out


def _current_points(nums: np.ndarray, kind: np.ndarray, rel: np.ndarray,
                    start: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The current point after each segment: a running sum with resets, so one sequential loop."""
    gx, gy = _END_X[kind], _END_Y[kind]
    vx = np.where(gx >= 0, nums[np.minimum(start + gx, len(nums) - 1)] if len(nums) else 0.0, 0.0)
    vy = np.where(gy >= 0, nums[np.minimum(start + gy, len(nums) - 1)] if len(nums) else 0.0, 0.0)
    abs_x = (gx >= 0) & ~rel  # H/V keep the other coordinate: a relative move by 0
    abs_y = (gy >= 0) & ~rel
    ex, ey = [0.0] * len(kind), [0.0] * len(kind)
    x = y = sx = sy = 0.0
    for i, (k, ax, px, ay, py) in enumerate(zip(kind.tolist(), abs_x.tolist(), vx.tolist(), abs_y.tolist(),
                                                vy.tolist(), strict=True)):
        if k == Z:
            x, y = sx, sy
        else:
            x = px if ax else x + px
            y = py if ay else y + py
            if k == M:
                sx, sy = x, y
        ex[i] = x
        ey[i] = y
    return np.array(ex), np.array(ey)


def _emit(nums: np.ndarray, kind: np.ndarray, rel: np.ndarray, start: np.ndarray, px: np.ndarray, py: np.ndarray,
          ex: np.ndarray, ey: np.ndarray, path: np.ndarray, sub: np.ndarray) -> dict[str, Rows]:
    """Rows of every kind with the path and subpath each row belongs to, from the segment table and
    current points."""
    def point(rows: np.ndarray, offset: int) -> tuple[np.ndarray, np.ndarray]:
        """An absolute point given at ``offset`` among each row's numbers."""
        r = rel[rows]
        return (nums[start[rows] + offset] + np.where(r, px[rows], 0.0),
                nums[start[rows] + offset + 1] + np.where(r, py[rows], 0.0))

    straight = np.isin(kind, (L, H, V)) | ((kind == Z) & ((px != ex) | (py != ey)))
    lines = [np.stack([px[straight], py[straight], ex[straight], ey[straight]], axis=1)]
    line_path = [path[straight]]
    line_sub = [sub[straight]]
    out: dict[str, Rows] = {}

    cubic = np.flatnonzero((kind == C) | (kind == S))
    c2x, c2y = np.zeros(len(kind)), np.zeros(len(kind))
    is_c = kind[cubic] == C
    c2x[cubic], c2y[cubic] = point(cubic, np.where(is_c, 2, 0))
    c1x, c1y = px[cubic].copy(), py[cubic].copy()
    explicit = cubic[is_c]
    c1x[is_c], c1y[is_c] = point(explicit, 0)
    smooth = cubic[~is_c]
    follows = (smooth > 0) & np.isin(kind[np.maximum(smooth - 1, 0)], (C, S))
    refl = smooth[follows]
    sel = np.flatnonzero(~is_c)[follows]
    c1x[sel] = 2 * px[refl] - c2x[refl - 1]
    c1y[sel] = 2 * py[refl] - c2y[refl - 1]
    out["cubic"] = (np.stack([px[cubic], py[cubic], c1x, c1y, c2x[cubic], c2y[cubic], ex[cubic], ey[cubic]],
                             axis=1), path[cubic], sub[cubic])

    quad = np.flatnonzero((kind == Q) | (kind == T))
    qx, qy = np.zeros(len(kind)), np.zeros(len(kind))
    explicit = quad[kind[quad] == Q]
    qx[explicit], qy[explicit] = point(explicit, 0)
    for i in quad[kind[quad] == T].tolist():  # each smooth control point reflects the previous one
        if i > 0 and kind[i - 1] in (Q, T):
            qx[i], qy[i] = 2 * px[i] - qx[i - 1], 2 * py[i] - qy[i - 1]
        else:
            qx[i], qy[i] = px[i], py[i]
    out["quad"] = (np.stack([px[quad], py[quad], qx[quad], qy[quad], ex[quad], ey[quad]], axis=1),
                   path[quad], sub[quad])

    arc = np.flatnonzero(kind == A)
    moved = (ex[arc] != px[arc]) | (ey[arc] != py[arc])  # SVG 1.1 F.6.2: identical endpoints -> omitted
    arc = arc[moved]
    rx, ry = np.abs(nums[start[arc]]), np.abs(nums[start[arc] + 1])
    flat = (rx == 0) | (ry == 0)  # F.6.2: a zero radius -> straight line
    lines.append(np.stack([px[arc[flat]], py[arc[flat]], ex[arc[flat]], ey[arc[flat]]], axis=1))
    line_path.append(path[arc[flat]])
    line_sub.append(sub[arc[flat]])
    a = arc[~flat]
    out["arc"] = (np.stack([px[a], py[a], rx[~flat], ry[~flat], nums[start[a] + 2], nums[start[a] + 3],
                            nums[start[a] + 4], ex[a], ey[a]], axis=1), path[a], sub[a])
    out["line"] = (np.concatenate(lines), np.concatenate(line_path), np.concatenate(line_sub))
    return out
