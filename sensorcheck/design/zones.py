"""Sensing zones: where a finger (or a foreign net) interacts with a sensor's field.

The zone of a sensor is the outline of its electrodes (holes filled: a zone has no
islands) grown by a margin.  The margin rule:

* ``[board] zone_margin_mm`` when the config gives it;
* else the geometric overlay thickness ``t`` (sum of the overlay layers), and at least
  :data:`MIN_ZONE_MARGIN_MM` = 1 mm.

Why ``t``: the fringe field that reaches the touch surface spreads sideways by about the
overlay thickness, so copper within ``t`` of an electrode edge shares its field (common
practice; layout-rules 3.1 SELF-GAP / SELF-PITCH use the same ``t``).  The 1 mm floor keeps
a zone meaningful for bare boards and thin films, where the field still spreads about a
trace-to-electrode clearance (common practice).
"""

from __future__ import annotations

from collections.abc import Iterable

import shapely
from shapely.geometry import MultiPolygon, Polygon
from shapely.geometry.base import BaseGeometry

from sensorcheck.design.model import Config

MIN_ZONE_MARGIN_MM = 1.0


def zone_margin_mm(config: Config) -> float:
    """The margin a sensing zone is grown by (see the module docstring for the rule)."""
    if config.zone_margin_mm is not None:
        return float(config.zone_margin_mm)
    t = config.overlay.thickness_mm if config.overlay is not None else 0.0
    return max(t, MIN_ZONE_MARGIN_MM)


def fill_holes(geom: BaseGeometry) -> BaseGeometry:
    """The same polygons without their interior rings."""
    polys: list[Polygon] = []
    for g in getattr(geom, "geoms", [geom]):
        if isinstance(g, Polygon) and not g.is_empty:
            polys.append(Polygon(g.exterior))
        elif isinstance(g, MultiPolygon):
            polys.extend(Polygon(p.exterior) for p in g.geoms)
    if not polys:
        return Polygon()
    return shapely.union_all(polys)


def sensing_zone(electrodes: Iterable[BaseGeometry], margin_mm: float, *,
                 outline: BaseGeometry | None = None) -> BaseGeometry:
    """Union of the electrode outlines, holes filled, grown by ``margin_mm`` (round corners).

    ``outline``: that union when the caller has already made it (a sensor's :attr:`outline`).
    """
    geoms = [g for g in electrodes if g is not None and not g.is_empty]
    if not geoms:
        return Polygon()
    outline = fill_holes(outline if outline is not None else shapely.union_all(geoms))
    if margin_mm <= 0:
        return fill_holes(outline)
    parts = shapely.get_parts(outline)
    # the union of the parts grown one by one is the same set as the whole grown at once, at a
    # third of the cost when parts face each other closely (a TX ring around an RX: the offset
    # curves of one part no longer cross those of the other while the buffer is built)
    zone = (shapely.union_all(shapely.buffer(parts, margin_mm, quad_segs=8)) if len(parts) > 1
            else outline.buffer(margin_mm, quad_segs=8))
    return fill_holes(zone)
