"""Resource limits for untrusted input, each with a clear error when reached.

Defaults pass every board of the test corpus with a wide margin and stop a crafted
bomb within seconds. They can be changed in sensorcheck.toml ([limits]).
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
    #: Chosen by timing read_gerber, in a fresh process on a 2-core machine, on files of under
    #: 5 kB making exactly 20 000 (CPU seconds): 0.5 mm flashes on one spot 1.5 s, 0.001 mm apart
    #: 1.9 s, a 177 x 113 grid of touching flashes (one connected image) 3.2 s, 100 mm circles
    #: 0.01 mm apart 4.0 s (6.2 s wall for all of `sensorcheck layers`), a block of 101
    #: overlapping flashes flashed 200 times 1.5 s, flashes 1 mm apart 0.2 s; one more copy is
    #: refused in milliseconds. At 50 000 the grid took 9.1 s and the circles 11.0 s, at 100 000
    #: the grid 24 s: 20 000 keeps the worst case at about 4 s. No corpus board uses AB or SR
    #: (0 made); the demo board's top copper (1392 objects) stepped 3 x 2 makes 6960.
    #: Geometry whose cost can grow faster than the object count: apertures of thousands of
    #: vertices are bounded by max_vertices (counted before the geometry is built); objects
    #: stacked on one spot alternating dark and clear polarity now cost near linear time
    #: (20 000 made by SR: 3 s); such objects each shifted a little (every clear one touching
    #: hundreds of later ones) still grow with the square, bounded by max_polarity_work.
    max_expanded_objects: int = 20_000
    #: polygon vertices in one layer's geometry, counted object by object by the rules that
    #: build it, before it is built: refused at the line of the object that passes it
    max_vertices: int = 50_000_000
    #: work of applying clear polarity (LPC) in one layer: polygon vertices of clear copper that
    #: the backward sweep of gerber_geometry.effective_dark handles again (a clear piece tested
    #: against, or merged by, a dark object after an earlier dark object already met it, plus
    #: that object's own vertices per such test; see PolarityWorkBudget). Refused at the line of
    #: the object being processed. An honest layer meets each clear piece about once: measured
    #: per layer, the corpus's largest is 14 640 (b02 bottom silkscreen, 708 kB), the 10 MB
    #: hatch and panel scaling layers (bench/make_large_board.py) count 0, and so would at 50 MB
    #: (each clear piece met by one dark object, whatever the size); the corpus silkscreens
    #: scaled by bytes to 50 MB would count 1.0e6 (b02) and 2.7e6 (b01). Crafted stacks of dark
    #: and clear 1 mm circles alternating, each 1 um further on (every clear one touching
    #: hundreds of later ones), count ~2e6 per CPU second and grow with the square of their
    #: count: 2 000 written out 4.1e6 in 2.7 s, 4 000 by SR 1.6e7 in 8.6 s, 8 000 6.5e7 in
    #: 32 s (20 000 by SR: minutes). 5e6 stops the 20 000 in 3.2 s (read included), passes the
    #: 2 000 (2.8 s), and is 340 times the corpus's largest layer.
    max_polarity_work: int = 5_000_000
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
