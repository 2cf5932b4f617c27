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
    #: objects one Gerber file makes by copying, beyond the objects it writes out: a flash of a
    #: block aperture (AB) that places N objects makes N - 1, a step-and-repeat (SR) of X x Y
    #: copies of a block of N objects makes (X*Y - 1) * N (also inside a block definition, where
    #: the copies are made at once). Counted before anything is copied, refused at the line of
    #: the flash or SR that would pass it. This bounds amplification (few bytes, many objects);
    #: an honest large layer written out object by object is bounded by max_gerber_objects.
    #: Chosen from the geometry cost of the worst shapes a few bytes can place, read_gerber on
    #: a loaded 2-core machine (CPU seconds / wall seconds, at 20 000 / 50 000 / 100 000 copies):
    #: 0.5 mm flashes on one spot 1.3 / 3.9 / 7.7 s CPU (1.3 / 5.9 / 10.8 s wall); flashes
    #: 0.001 mm apart 1.6 / 4.1 / 9.1 s CPU; a grid of touching flashes (one connected blob)
    #: 3.3 / 9.1 / 24.2 s CPU (5.2 / 11.6 / 25.5 s wall); 100 mm circles 0.01 mm apart 3.8 / 11.0
    #: s CPU (the 100 000 refused by max_vertices after 8.8 s); flashes 1 mm apart (no contact)
    #: 0.14 / 0.39 / 0.79 s CPU. So 20 000 keeps the worst case near 4 s CPU (about 5 s wall),
    #: where 50 000 passes 10 s. No corpus board uses AB or SR (0 here); the demo board's top
    #: copper (1392 objects) stepped 3 x 2 as a panel makes 6960, about a third of the limit.
    max_expanded_objects: int = 20_000
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
