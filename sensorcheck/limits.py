"""Resource limits for untrusted input, each with a clear error when reached.

Defaults pass every board of the test corpus with a wide margin and stop a crafted
bomb within seconds. They can be changed in sensorcheck.toml ([limits]) or, for the
archive and file limits, on the command line.
"""

from __future__ import annotations

from dataclasses import dataclass, fields, replace
from typing import Any


@dataclass(frozen=True, slots=True)
class Limits:
    #: largest single input file read (bytes)
    max_file_bytes: int = 200 * 1024 * 1024
    #: archives: total uncompressed size, member count, and compression ratio of any member
    max_archive_bytes: int = 1024 * 1024 * 1024
    max_archive_members: int = 5000
    max_compression_ratio: float = 200.0
    #: graphical objects in one Gerber file, after step-and-repeat expansion
    max_gerber_objects: int = 5_000_000
    #: copies made by one step-and-repeat block
    max_step_repeat_copies: int = 100_000
    #: polygon vertices in one layer's geometry
    max_vertices: int = 50_000_000
    #: Excellon holes in one file
    max_holes: int = 2_000_000
    #: boundary-element panels for one sensor solve
    max_mesh_panels: int = 12_000

    def with_overrides(self, values: dict[str, Any]) -> "Limits":
        known = {f.name for f in fields(self)}
        unknown = set(values) - known
        if unknown:
            raise KeyError(", ".join(sorted(unknown)))
        return replace(self, **values)


DEFAULT_LIMITS = Limits()
