"""Sides of a comparison made from small invented designs (no files): estimates with the window
cache active, summaries as ``check`` writes them, exact copper."""

from __future__ import annotations

from typing import Any

from shapely.geometry import Point, box

from sensorcheck.check import _summaries
from sensorcheck.compare.model import Side
from sensorcheck.compare.sides import side_from
from sensorcheck.design.model import Design, Electrode, Finger, Sensor
from sensorcheck.findings import Result
from sensorcheck.physics.cache import WindowCache
from sensorcheck.physics.schedule import estimate_design
from tests.physics.designs import make_design, overlay

#: a coarse mesh: enough for the direction of a change, seconds per solve
FAST = {"h_edge_mm": 1.0, "h_near_mm": 1.5, "h_far_mm": 4.0, "window_mm": 8.0, "finger_sides": 16, "search": False,
        "heights": 4}


def side_of(design: Design, which: str = "old", cache: WindowCache | None = None) -> Side:
    cache = cache if cache is not None else WindowCache()
    with cache.active():
        est = estimate_design(design, workers=1)
    result = Result(board="synthetic", source="synthetic", tool_version="test", config_file=None,
                    sensors=_summaries(design, est))
    return side_from(which, f"{which}-design", "folder", result, design)  # type: ignore[arg-type]


def buttons(radii: tuple[float, ...] = (5.0, 5.0), *, overlay_mm: float = 1.0, ground_under: bool = False,
            estimate: dict[str, Any] | None = None, finger: Finger | None = None, pitch_mm: float = 30.0) -> Design:
    """Self buttons in a row ``pitch_mm`` apart, each in its own ring of top ground; with
    ``ground_under`` a solid ground plane on the bottom layer under every button."""
    nets: dict[str, Any] = {}
    sensors = []
    rings = []
    for i, r in enumerate(radii):
        x = i * pitch_mm
        el = Point(x, 0).buffer(r, quad_segs=24)
        nets[f"T{i + 1}"] = el
        rings.append(box(x - 12, -12, x + 12, 12).difference(Point(x, 0).buffer(r + 1.5, quad_segs=24)))
        sensors.append(Sensor(f"B{i + 1}", "self-button", "top-copper", [Electrode(f"T{i + 1}", "self", "top-copper", el)],
                              el.buffer(1.0), 1.0))
    import shapely

    nets["GND"] = shapely.union_all(rings)
    roles = {n: "self" for n in nets if n != "GND"} | {"GND": "ground"}
    d = make_design(nets, roles, sensors, ov=overlay(overlay_mm), estimate=FAST if estimate is None else estimate,
                    finger=finger)
    if ground_under:
        bottom = d.board.layers[1]
        plane = box(-12, -12, (len(radii) - 1) * pitch_mm + 12, 12)
        bottom.by_net["GND"] = plane
    return d
