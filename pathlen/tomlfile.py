"""Reading the TOML files people write for pathlen (profiles, bead and seam plans, service files):
one usage error, naming the file, for anything that keeps it from being read."""

from __future__ import annotations

import math
import tomllib
from pathlib import Path
from typing import Any

from pathlen.errors import UsageError


def read_toml(path: Path, what: str) -> dict[str, Any]:
    """The parsed file; ``what`` names it in errors ("profile file", "bead plan", ...)."""
    try:
        return tomllib.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise UsageError(f"{path}: no such {what}") from None
    except OSError as exc:
        raise UsageError(f"{path}: cannot read the {what} ({exc.strerror or exc})") from None
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
        raise UsageError(f"{path}: not valid TOML ({str(exc).splitlines()[0]})") from None
    except RecursionError:
        raise UsageError(f"{path}: nested too deeply to be a {what}") from None


# -- values: one line naming where, the key and the value for anything of the wrong kind ------------------
def number(where: str, key: str, value: Any, low: float = 0.0, high: float = math.inf, strict: bool = False) -> float:
    """A finite number from ``low`` to ``high`` (above ``low`` when ``strict``); booleans are not numbers."""
    if isinstance(value, bool) or not isinstance(value, int | float) or not math.isfinite(value) \
            or not low <= value <= high or (strict and value == low):
        span = f"greater than {low:g}" if strict else f"at least {low:g}"
        if math.isfinite(high):
            span += f" and at most {high:g}"
        raise UsageError(f"{where}: {key} must be a finite number {span}, not {value!r}")
    return float(value)


def whole(where: str, key: str, value: Any, least: int = 1) -> int:
    if isinstance(value, bool) or not isinstance(value, int) or value < least:
        raise UsageError(f"{where}: {key} must be a whole number of at least {least}, not {value!r}")
    return value


def text(where: str, key: str, value: Any, required: bool = False) -> str:
    if not isinstance(value, str) or (required and not value.strip()):
        raise UsageError(f"{where}: {key} must be {'non-empty ' if required else ''}text, not {value!r}")
    return value


def flag(where: str, key: str, value: Any) -> bool:
    if not isinstance(value, bool):
        raise UsageError(f"{where}: {key} must be true or false, not {value!r}")
    return value


def names(where: str, key: str, value: Any) -> tuple[str, ...]:
    """Layer names: a list of text, or one text (comma-separated)."""
    if isinstance(value, str):
        value = [x.strip() for x in value.split(",") if x.strip()]
    if not isinstance(value, list) or not all(isinstance(x, str) for x in value):
        raise UsageError(f"{where}: {key} must be a list of layer names, not {value!r}")
    return tuple(value)
