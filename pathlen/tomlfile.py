"""Reading the TOML files people write for pathlen (profiles, bead and seam plans, service files):
one usage error, naming the file, for anything that keeps it from being read."""

from __future__ import annotations

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
