"""Error hierarchy: every error carries the exit status the CLI returns for it."""

from __future__ import annotations


class PathlenError(Exception):
    """Base class; ``exit_code`` is what the CLI exits with."""

    exit_code = 1


class InputError(PathlenError):
    """A drawing cannot be read or holds invalid geometry (one file fails, the batch goes on)."""

    exit_code = 1


class UsageError(PathlenError):
    """Bad options or arguments."""

    exit_code = 2
