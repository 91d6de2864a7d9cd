"""Process profiles: TOML tables ``[profile.NAME]`` with one key per setting, the unit in its name.

Every problem is one line naming the file, the profile, the key and the reason (exit status 2).
The built-in examples live in ``pathlen/data/profiles.toml``; a user's file (``--profiles``)
adds to them and may replace one by name.
"""

from __future__ import annotations

import difflib
import math
import os
import re
import tempfile
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from pathlen.errors import UsageError
from pathlen.tomlfile import read_toml

BUILTIN = Path(__file__).resolve().parent / "data" / "profiles.toml"
PROCESSES = ("laser", "plasma", "waterjet")


@dataclass(frozen=True)
class Key:
    kind: type
    default: Any = None  # None: required (where ``needed_for`` says)
    minimum: float | None = 0.0
    above_minimum: bool = False  # strictly greater than ``minimum``
    maximum: float | None = None
    needed_for: tuple[str, ...] = PROCESSES
    help: str = ""


KEYS: dict[str, Key] = {
    "process": Key(str, help="laser, plasma or waterjet"),
    "material": Key(str, help="material name, for the report and the cautions"),
    "thickness_mm": Key(float, above_minimum=True),
    "feed_mm_min": Key(float, above_minimum=True, needed_for=("laser", "plasma"),
                       help="cutting feed; waterjet: overrides the speed model"),
    "engrave_feed_mm_min": Key(float, above_minimum=True, needed_for=(), help="feed on marked/engraved layers"),
    "pierce_s": Key(float),
    "head_updown_s": Key(float, 0.0, help="head up and down per pierce"),
    "rapid_mm_min": Key(float, above_minimum=True),
    "accel_mm_s2": Key(float, above_minimum=True),
    "corner_tolerance_mm": Key(float, 0.05, help="how far the path may leave a sharp corner (corner speed)"),
    "lead_in_mm": Key(float, 0.0),
    "lead_out_mm": Key(float, 0.0),
    "kerf_mm": Key(float, 0.0),
    "kerf_offset": Key(bool, False, minimum=None, help="offset closed contours by half the kerf"),
    "small_hole_ratio": Key(float, 1.0, help="holes under this x thickness (diameter) are slowed"),
    "small_hole_feed_factor": Key(float, 0.5, above_minimum=True, maximum=1.0),
    "rate_per_hour": Key(float, help="machine rate, money per hour"),
    "consumables_per_min": Key(float, 0.0),
    "assist_gas_per_min": Key(float, 0.0, help="assist gas (laser: oxygen or nitrogen), money per minute cutting"),
    "consumables_per_pierce": Key(float, 0.0),
    "setup_min": Key(float, 0.0),
    "minimum_charge": Key(float, 0.0),
    "currency": Key(str, ""),
    "notes": Key(str, ""),
    # abrasive waterjet speed model (pathlen.estimates.waterjet)
    "pressure_mpa": Key(float, above_minimum=True, needed_for=()),
    "orifice_mm": Key(float, above_minimum=True, needed_for=()),
    "focus_tube_mm": Key(float, above_minimum=True, needed_for=()),
    "abrasive_kg_min": Key(float, above_minimum=True, needed_for=()),
    "machinability": Key(float, above_minimum=True, needed_for=()),
    "quality": Key(float, 3.0, minimum=1.0, maximum=5.0),  # Zeng & Kim (1993): 1 separation cut .. 5 finest
    "model_constant": Key(float, 788.0, above_minimum=True),
    "abrasive_factor": Key(float, 1.0, above_minimum=True),
}
WATERJET_MODEL = ("pressure_mpa", "orifice_mm", "focus_tube_mm", "abrasive_kg_min", "machinability")
_UNIT_SUFFIX = re.compile(r"_(mm|in|m|cm|s|ms|sec|min|h|mpa|psi|bar|ksi|kg|lb|mm_min|m_min|in_min|mm_s|mm_s2|m_s2|"
                          r"kg_min|lb_min|cm_min|m_s|in_s|in_s2|per_hour|per_min|per_pierce)$")


@dataclass(frozen=True)
class Profile:
    name: str
    source: str
    values: dict[str, Any] = field(default_factory=dict)

    def __getattr__(self, key: str) -> Any:
        if key.startswith("__") or key == "values":  # pickling looks these up before ``values`` exists
            raise AttributeError(key)
        try:
            return self.values[key]
        except KeyError:
            raise AttributeError(key) from None

    @property
    def uses_waterjet_model(self) -> bool:
        return self.values["process"] == "waterjet" and self.values.get("feed_mm_min") is None


def load_profiles(extra: list[Path] | None = None) -> dict[str, Profile]:
    """Built-in profiles, then each file in ``extra`` (later names replace earlier ones)."""
    profiles: dict[str, Profile] = {}
    for path in [BUILTIN, *(extra or [])]:
        profiles.update(read_profile_file(path))
    return profiles


def read_profile_file(path: Path) -> dict[str, Profile]:
    """Parse and check one TOML file; raises :class:`UsageError` with one line per the first problem."""
    where = str(path)
    data = read_toml(path, "profile file")
    unknown_top = set(data) - {"profile"}
    if unknown_top:
        raise UsageError(f"{where}: unknown table {sorted(unknown_top)[0]!r}; profiles go under [profile.NAME]")
    tables = data.get("profile", {})
    if not isinstance(tables, dict) or not tables:
        raise UsageError(f"{where}: no [profile.NAME] tables")
    return {name: check_profile(name, body, where) for name, body in tables.items()}


def check_profile(name: str, body: Any, where: str) -> Profile:
    """Validate one profile table: known keys, right types and units, sensible ranges."""
    at = f"{where}: [profile.{name}]"
    if not isinstance(body, dict):
        raise UsageError(f"{at}: must be a table of settings")
    for key, value in body.items():
        if key not in KEYS:
            raise UsageError(f"{at} {key}: {_unknown_key_reason(key)}")
        _check_value(at, key, value)
    process = body.get("process")
    if process not in PROCESSES:
        raise UsageError(f"{at} process: must be one of {', '.join(PROCESSES)} (got {process!r})")
    values: dict[str, Any] = {}
    for key, spec in KEYS.items():
        if key in body:
            values[key] = float(body[key]) if spec.kind is float else body[key]
        elif spec.default is not None:
            values[key] = spec.default
        elif process in spec.needed_for:
            raise UsageError(f"{at} {key}: missing (needed for {process})")
        else:
            values[key] = None
    if process == "waterjet" and values["feed_mm_min"] is None:
        missing = [k for k in WATERJET_MODEL if values[k] is None]
        if missing:
            raise UsageError(f"{at} {missing[0]}: missing (a waterjet profile needs feed_mm_min or the speed "
                             f"model inputs {', '.join(WATERJET_MODEL)})")
    return Profile(name, where, values)


def _unknown_key_reason(key: str) -> str:
    stem = _UNIT_SUFFIX.sub("", key)
    same_stem = [k for k in KEYS if _UNIT_SUFFIX.sub("", k) == stem and k != key]
    if same_stem:
        return f"wrong unit: this setting is {same_stem[0]!r}"
    close = difflib.get_close_matches(key, KEYS, n=1)
    return f"unknown setting{f'; did you mean {close[0]!r}?' if close else ''}"


def _check_value(at: str, key: str, value: Any) -> None:
    spec = KEYS[key]
    if spec.kind is bool:
        if not isinstance(value, bool):
            raise UsageError(f"{at} {key}: must be true or false (got {value!r})")
        return
    if spec.kind is str:
        if not isinstance(value, str):
            raise UsageError(f"{at} {key}: must be text in quotes (got {value!r})")
        return
    if isinstance(value, bool) or not isinstance(value, int | float):
        hint = " (write the number alone: the unit is in the key's name)" if isinstance(value, str) else ""
        raise UsageError(f"{at} {key}: must be a number (got {value!r}){hint}")
    if not math.isfinite(value):
        raise UsageError(f"{at} {key}: must be a finite number")
    if spec.minimum is not None and (value <= spec.minimum if spec.above_minimum else value < spec.minimum):
        word = "greater than" if spec.above_minimum else "at least"
        what = "negative" if value < 0 else "too small"
        raise UsageError(f"{at} {key}: {what} ({value:g}); must be {word} {spec.minimum:g}")
    if spec.maximum is not None and value > spec.maximum:
        raise UsageError(f"{at} {key}: too large ({value:g}); must be at most {spec.maximum:g}")


def write_setting(path: Path, name: str, key: str, value: float) -> None:
    """Set ``key = value`` in ``[profile.NAME]`` of a TOML file, keeping everything else as written.

    The file is rewritten atomically (a temporary file renamed over it).
    """
    lines = path.read_text(encoding="utf-8").splitlines(keepends=True)
    header = re.compile(rf"^\s*\[\s*profile\.(\"{re.escape(name)}\"|{re.escape(name)})\s*\]\s*(#.*)?$")
    start = next((i for i, line in enumerate(lines) if header.match(line.rstrip("\n"))), None)
    if start is None:
        raise UsageError(f"{path}: no [profile.{name}] table to write {key} into")
    end = next((i for i in range(start + 1, len(lines)) if re.match(r"^\s*\[", lines[i])), len(lines))
    setting = f"{key} = {value:.6g}  # calibrated from a test cut\n"
    pattern = re.compile(rf"^\s*{re.escape(key)}\s*=")
    for i in range(start + 1, end):
        if pattern.match(lines[i]):
            lines[i] = setting
            break
    else:
        at = end
        while at > start + 1 and not lines[at - 1].strip():
            at -= 1
        lines.insert(at, setting)
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.")
    with os.fdopen(fd, "w", encoding="utf-8") as f:
        f.writelines(lines)
    os.replace(tmp, path)
