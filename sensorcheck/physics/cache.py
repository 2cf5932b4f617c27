"""Estimates kept by window fingerprint: a window solved once is never solved again.

A sensor's estimate depends only on its solve window (:mod:`sensorcheck.physics.fingerprint`):
two runs whose windows have the same fingerprint get the same numbers.  A :class:`WindowCache`
keeps each solved window's estimate under its fingerprint, in memory and, when given a folder,
on disk; while it is active (``with cache.active():``) the scheduler
(:mod:`sensorcheck.physics.schedule`) takes every window it holds from it and solves only the
others.  ``compare`` uses one cache for both revisions, so a sensor whose window did not change
is solved once; kept in a folder between CI runs, the old revision is not solved at all.

The files are Python pickles, read back with an unpickler that builds only the estimate classes
of :mod:`sensorcheck.physics.estimate` and the fingerprint's key (anything else in a file is
refused and the window solved again).  Each file name carries the tool version: a new version
never reads another's numbers.

Counting, not timing: :attr:`WindowCache.solved` counts windows solved while the cache was
active, :attr:`WindowCache.hits` windows taken from it.
"""

from __future__ import annotations

import contextlib
import contextvars
import io
import os
import pickle
import tempfile
from collections.abc import Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

from sensorcheck import __version__

if TYPE_CHECKING:
    from sensorcheck.physics.estimate import SensorEstimate
    from sensorcheck.physics.fingerprint import WindowKey

_ACTIVE: contextvars.ContextVar["WindowCache | None"] = contextvars.ContextVar("sensorcheck_window_cache", default=None)

#: modules whose classes a cache file may hold (everything else is refused on reading)
_ALLOWED = {
    "sensorcheck.physics.estimate": {"SensorEstimate", "NodeEstimate", "SegmentEstimate", "PositionResponse"},
    "sensorcheck.physics.fingerprint": {"WindowKey"},
}


class _Unpickler(pickle.Unpickler):
    def find_class(self, module: str, name: str) -> Any:
        if name in _ALLOWED.get(module, ()):
            return super().find_class(module, name)
        raise pickle.UnpicklingError(f"{module}.{name} is not an estimate class")


@dataclass(slots=True)
class Entry:
    """One solved window: its estimate, the key it was solved under, the stackup notes that lead its notes."""

    estimate: "SensorEstimate"
    key: "WindowKey"
    stack_notes: int


@dataclass
class WindowCache:
    """Estimates by window fingerprint (see the module docstring); ``folder`` None: memory only."""

    folder: Path | None = None
    hits: int = 0
    solved: int = 0
    _memory: dict[str, Entry] = field(default_factory=dict)

    @contextlib.contextmanager
    def active(self) -> Iterator["WindowCache"]:
        """Let the scheduler use this cache inside the ``with`` block."""
        token = _ACTIVE.set(self)
        try:
            yield self
        finally:
            _ACTIVE.reset(token)

    def _path(self, digest: str) -> Path | None:
        if self.folder is None:
            return None
        return self.folder / f"{digest}-{__version__}.pickle"

    def lookup(self, key: "WindowKey | None", name: str, stack_notes: int) -> "SensorEstimate | None":
        """The estimate for the sensor ``name`` whose window has ``key``, moved onto it; None when not held."""
        if key is None:
            return None
        entry = self._memory.get(key.digest)
        if entry is None:
            entry = self._read(key.digest)
        if entry is None or entry.stack_notes != stack_notes:
            return None
        from sensorcheck.physics.fingerprint import translated

        self.hits += 1
        return translated(entry.estimate, entry.key, key, name, stack_notes, entry.key.notes, key.notes)

    def store(self, key: "WindowKey | None", estimate: "SensorEstimate", stack_notes: int) -> None:
        """Keep a window just solved (counted in :attr:`solved` either way)."""
        self.solved += 1
        if key is None:
            return
        entry = Entry(estimate, key, stack_notes)
        self._memory[key.digest] = entry
        path = self._path(key.digest)
        if path is not None:
            with contextlib.suppress(OSError):  # a full or read-only disk costs a solve next time, nothing else
                path.parent.mkdir(parents=True, exist_ok=True)
                fd, tmp = tempfile.mkstemp(dir=path.parent, suffix=".tmp")
                with os.fdopen(fd, "wb") as fh:
                    pickle.dump(entry, fh, protocol=pickle.HIGHEST_PROTOCOL)
                os.replace(tmp, path)

    def _read(self, digest: str) -> Entry | None:
        path = self._path(digest)
        if path is None or not path.is_file():
            return None
        try:
            entry = _Unpickler(io.BytesIO(path.read_bytes())).load()
        except Exception:  # noqa: BLE001 - a damaged or foreign file: solve the window again
            return None
        if not isinstance(entry, Entry) or entry.key.digest != digest:
            return None
        self._memory[digest] = entry
        return entry


_ALLOWED[__name__] = {"Entry"}


def active_cache() -> WindowCache | None:
    """The cache the scheduler should use now (set by :meth:`WindowCache.active`), or None."""
    return _ACTIVE.get()
