"""Small invented boards written as Gerber X2 files with a sensorcheck.toml: self buttons in
rings of ground, a routing line on the bottom; each board as a variant of one design."""

from __future__ import annotations

from pathlib import Path

import shapely
from shapely.geometry import LineString, Point, box
from shapely.geometry.base import BaseGeometry

from tests.recognition.synth_boards import _gerber, _outline

CONFIG = """\
[board]
face = "top"

[[overlay.layers]]
material = "pmma"
thickness_mm = {overlay_mm}
kind = "overlay"

[roles]
self = ["KEY*"]
ground = ["GND"]

[estimate]
enabled = {estimate}
heights = 4
"""


def write(folder: Path, *, radii: dict[str, float] | None = None, places: dict[str, float] | None = None,
          line_y_mm: float = -22.0, overlay_mm: float = 1.5, estimate: bool = True) -> Path:
    """Self buttons (net -> radius mm, net -> x mm; all at y 0) in a ring of top ground each, a
    0.3 mm line on the bottom at ``line_y_mm`` (under a button when it is within its radius; by
    default outside every solve window, 15 mm round an electrode)."""
    radii = radii or {"KEY_A": 5.0, "KEY_B": 5.0}
    places = places or {n: 30.0 * i for i, n in enumerate(radii)}
    top: dict[str, BaseGeometry] = {}
    rings = []
    for net, r in radii.items():
        x = places[net]
        top[net] = Point(x, 0).buffer(r, quad_segs=24)
        rings.append(box(x - 12, -12, x + 12, 12).difference(Point(x, 0).buffer(r + 1.5, quad_segs=24)))
    top["GND"] = shapely.union_all(rings)
    xs = list(places.values())
    bottom = {"LINE": LineString([(min(xs) - 10, line_y_mm), (max(xs) + 10, line_y_mm)]).buffer(0.15)}
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "board-top.gbr").write_text(_gerber("Copper,L1,Top", "mm", top, True))
    (folder / "board-bottom.gbr").write_text(_gerber("Copper,L2,Bot", "mm", bottom, True))
    (folder / "board-outline.gbr").write_text(_outline("mm", (min(xs) - 15, -25, max(xs) + 15, 15)))
    (folder / "sensorcheck.toml").write_text(CONFIG.format(overlay_mm=overlay_mm, estimate=str(estimate).lower()))
    return folder
