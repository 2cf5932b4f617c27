"""The one small error tree of sensorcheck.

Every error a user can cause (a bad file, a bad config, a limit reached) is an
:class:`InputError` or :class:`ConfigError`; the command line turns them into a
one-line message and exit code 2, never a traceback. :class:`InternalError`
marks our own bugs that were caught and reported (also exit 2).
"""

from __future__ import annotations

from pathlib import Path


class SensorcheckError(Exception):
    """Base of every error sensorcheck raises on purpose."""

    def describe(self) -> str:
        return str(self)


class InputError(SensorcheckError):
    """A fabrication file cannot be read as what it claims to be.

    ``file`` is the path as the user gave it (or the archive member name),
    ``line`` the 1-based line where the problem was seen (None when the whole
    file is at fault), ``expected`` says what the reader expected to find.
    """

    def __init__(self, file: str | Path | None, line: int | None, message: str, expected: str | None = None) -> None:
        self.file = str(file) if file is not None else None
        self.line = line
        self.message = message
        self.expected = expected
        super().__init__(self.describe())

    def describe(self) -> str:
        where = self.file or "<input>"
        if self.line is not None:
            where += f":{self.line}"
        text = f"{where}: {self.message}"
        if self.expected:
            text += f" (expected {self.expected})"
        return text


class EmptyInputError(InputError):
    """The folder (or archive) holds no file at all: ``--allow-empty`` lets such a board pass."""


class LimitError(InputError):
    """An input exceeds a configured resource limit (size, count, expansion)."""


class ConfigError(SensorcheckError):
    """The board config (sensorcheck.toml) is invalid.

    ``key`` is the dotted key path (``overlay.layers[0].thickness_mm``).
    """

    def __init__(self, file: str | Path | None, key: str | None, message: str) -> None:
        self.file = str(file) if file is not None else None
        self.key = key
        self.message = message
        super().__init__(self.describe())

    def describe(self) -> str:
        where = self.file or "<config>"
        if self.key:
            where += f": {self.key}"
        return f"{where}: {self.message}"


class InternalError(SensorcheckError):
    """A bug in sensorcheck, caught and reported instead of crashing."""
