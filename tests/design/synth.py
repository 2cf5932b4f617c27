"""Synthetic boards for sensor recognition tests: shapely geometry with known answers."""

from __future__ import annotations

import math

import shapely
from shapely.geometry import LineString, Point, Polygon, box
from shapely.geometry.base import BaseGeometry

from sensorcheck.board.model import Board, Feature, Layer, SourceRef

QUAD = 64  # segments per quarter circle: disc area within 0.01 % of pi r^2


def disc(x: float, y: float, r: float) -> BaseGeometry:
    return Point(x, y).buffer(r, quad_segs=QUAD)


def ring(x: float, y: float, r_in: float, r_out: float) -> BaseGeometry:
    return disc(x, y, r_out).difference(disc(x, y, r_in))


def track(points: list[tuple[float, float]], width: float) -> BaseGeometry:
    return LineString(points).buffer(width / 2, quad_segs=8)


def sector(cx: float, cy: float, r_in: float, r_out: float, a0_deg: float, a1_deg: float) -> BaseGeometry:
    n = 96
    angs = [math.radians(a0_deg + (a1_deg - a0_deg) * k / n) for k in range(n + 1)]
    outer = [(cx + r_out * math.cos(a), cy + r_out * math.sin(a)) for a in angs]
    inner = [(cx + r_in * math.cos(a), cy + r_in * math.sin(a)) for a in reversed(angs)]
    return Polygon(outer + inner)


def draw_feature(net: str, points: list[tuple[float, float]], width: float) -> Feature:
    return Feature(geometry=track(points, width), polarity="dark", kind="draw", source=SourceRef("synthetic.gbr", 1),
                   aperture_function="Conductor", net=net, width_mm=width, path=LineString(points))


def _index(name: str) -> int:
    if name == "top-copper":
        return 1
    if name == "bottom-copper":
        return 99
    return int(name.removeprefix("inner").removesuffix("-copper")) + 1


def make_board(copper: dict[str, dict[str, BaseGeometry]], features: dict[str, list[Feature]] | None = None,
               name: str = "synthetic") -> Board:
    """A board from {layer name: {net: geometry}}; geometries of one net on a layer are unioned."""
    layers = []
    for lname, nets in copper.items():
        by_net = {n: shapely.union_all([g]) if not isinstance(g, list) else shapely.union_all(g) for n, g in nets.items()}
        layers.append(Layer(name=lname, function="copper", side="top" if lname.startswith("top") else
                            ("bottom" if lname.startswith("bottom") else "inner"), file=f"{lname}.gbr",
                            copper_index=_index(lname), features=list((features or {}).get(lname, [])),
                            dark=shapely.union_all(list(by_net.values())), by_net=by_net))
    return Board(name=name, source="synthetic", layers=layers, outline=box(-100, -100, 100, 100),
                 net_source="x2")
