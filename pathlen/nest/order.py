"""Nest orders (TOML, our own form): which drawings, how many, how they may turn.

    [[part]]
    file = "kl101_bracket.dxf"   # relative to the order file
    quantity = 12
    rotations = [0, 180]         # degrees, or "any"; default 0, 90, 180, 270
    mirror = true                # half the copies (rounded down) cut mirrored: left and right pieces
    layers = ["CUT"]             # layers (or #rrggbb colours) holding the parts; default every visible layer

A file with several outer contours gives several parts, each in that quantity.  Every problem is
one line naming the order file, the entry, the key and the value (a usage error).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from pathlen.errors import UsageError
from pathlen.tomlfile import flag, names, read_toml, whole

DEFAULT_ROTATIONS = (0.0, 90.0, 180.0, 270.0)


@dataclass(frozen=True)
class OrderLine:
    file: str  # as the order gives it, resolved against the order's folder
    quantity: int
    rotations: tuple[float, ...] | None  # None: any angle
    mirror: bool = False
    layers: tuple[str, ...] = ()
    where: str = ""  # "order.toml part 2", for messages


def load_order(path: Path) -> list[OrderLine]:
    """The order's lines, or a usage error naming the first problem."""
    data = read_toml(path, "order file")
    unknown = set(data) - {"part"}
    if unknown:
        raise UsageError(f"{path}: unknown key {sorted(unknown)[0]!r} (an order has [[part]] entries)")
    entries = data.get("part")
    if not isinstance(entries, list) or not entries or not all(isinstance(e, dict) for e in entries):
        raise UsageError(f"{path}: no [[part]] entries")
    return [_line(e, path, k) for k, e in enumerate(entries, start=1)]


def _line(entry: dict[str, Any], path: Path, k: int) -> OrderLine:
    where = f"{path} part {k}"
    unknown = set(entry) - {"file", "quantity", "rotations", "mirror", "layers"}
    if unknown:
        key = sorted(unknown)[0]
        raise UsageError(f"{where}: unknown key {key!r} (file, quantity, rotations, mirror, layers)")
    file = entry.get("file")
    if not isinstance(file, str) or not file.strip():
        raise UsageError(f"{where}: file must be the path of a drawing, not {file!r}")
    quantity = whole(where, "quantity", entry.get("quantity", 1))
    mirror = flag(where, "mirror", entry.get("mirror", False))
    layers = names(where, "layers", entry.get("layers", []))
    resolved = Path(file) if Path(file).is_absolute() else path.parent / file
    return OrderLine(str(resolved), quantity, parse_rotations(entry.get("rotations", list(DEFAULT_ROTATIONS)), where),
                     mirror, tuple(layers), where)


def parse_rotations(value: Any, where: str) -> tuple[float, ...] | None:
    """Rotations in degrees from a list of numbers, a comma-separated text, or "any" (None)."""
    if isinstance(value, str):
        if value.strip().lower() == "any":
            return None
        try:
            value = [float(x) for x in value.split(",") if x.strip()]
        except ValueError:
            raise UsageError(f"{where}: rotations must be degrees or 'any', not {value!r}") from None
    if not isinstance(value, list) or not value or not all(
            isinstance(x, int | float) and not isinstance(x, bool) and math.isfinite(x) for x in value):
        raise UsageError(f"{where}: rotations must be a list of degrees or 'any', not {value!r}")
    return tuple(sorted({float(x) % 360.0 for x in value}))
