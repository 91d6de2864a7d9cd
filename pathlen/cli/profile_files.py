"""Process profiles for the commands that use them (``cut``, ``profiles``): one usage error for a bad file."""

from __future__ import annotations

from pathlib import Path

import click

from pathlen.errors import PathlenError
from pathlen.profiles import Profile, load_profiles


def profiles_or_exit(files: tuple[str, ...]) -> dict[str, Profile]:
    """The built-in profiles and those of ``files``, or a usage error naming the first problem."""
    try:
        return load_profiles([Path(f) for f in files])
    except PathlenError as exc:
        raise click.UsageError(str(exc)) from None
