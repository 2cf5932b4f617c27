"""Builders for small hand-made designs: every test board here is drawn from shapes whose
gaps, areas and fills are known by construction (the expected values are computed in the tests)."""

from __future__ import annotations

import datetime as dt
from collections.abc import Iterable, Sequence
from dataclasses import dataclass

import numpy as np
import shapely
from shapely.geometry import LineString, Point, box
from shapely.geometry.base import BaseGeometry

from sensorcheck.board.model import Board, Feature, Hole, Layer, SourceRef, Stackup, StackupLayer
from sensorcheck.design.model import Config, Design, Electrode, Finger, Overlay, OverlayLayer, Sensor

COPPER_INDEX = {"top-copper": 1, "inner1-copper": 2, "inner2-copper": 3, "bottom-copper": 9}


@dataclass
class Shape:
    """One piece of copper (or mask/paste opening) on a layer."""

    layer: str
    geom: BaseGeometry
    net: str | None = None
    width_mm: float | None = None
    path: BaseGeometry | None = None
    kind: str = "region"
    aperture_function: str | None = None
    line: int = 1


def region(layer: str, geom: BaseGeometry, net: str | None, line: int = 1, aperture_function: str | None = None) -> Shape:
    return Shape(layer, geom, net, line=line, aperture_function=aperture_function)


def draw(layer: str, coords: Sequence[tuple[float, float]], width_mm: float, net: str | None, line: int = 1) -> Shape:
    path = LineString(coords)
    return Shape(layer, path.buffer(width_mm / 2.0), net, width_mm=width_mm, path=path, kind="draw", line=line)


def disc(x: float, y: float, d: float) -> BaseGeometry:
    return Point(x, y).buffer(d / 2.0, quad_segs=64)


def square_hatch(x0: float, y0: float, x1: float, y1: float, line_mm: float, opening_mm: float) -> BaseGeometry:
    """A square crosshatch starting with a line at x0/y0: the box minus every whole g x g opening
    on the pitch w + g (partial openings at the far edges stay copper).  The openings are disjoint,
    so they form a valid MultiPolygon without a union (fast)."""
    pitch = line_mm + opening_mm
    nx = int((x1 - x0 - line_mm - opening_mm) / pitch + 1e-9) + 1
    ny = int((y1 - y0 - line_mm - opening_mm) / pitch + 1e-9) + 1
    if nx <= 0 or ny <= 0:
        return box(x0, y0, x1, y1)
    xs = x0 + line_mm + pitch * np.arange(nx)
    ys = y0 + line_mm + pitch * np.arange(ny)
    gx, gy = np.meshgrid(xs, ys)
    cells = shapely.box(gx.ravel(), gy.ravel(), gx.ravel() + opening_mm, gy.ravel() + opening_mm)
    return box(x0, y0, x1, y1).difference(shapely.MultiPolygon(list(cells)))


def stackup_2layer(core_mm: float = 1.5, eps: float = 4.5) -> Stackup:
    return Stackup(
        layers=[
            StackupLayer("F.Cu", "copper", 0.035, copper_layer="top-copper"),
            StackupLayer("core", "dielectric", core_mm, "FR-4", eps),
            StackupLayer("B.Cu", "copper", 0.035, copper_layer="bottom-copper"),
        ],
        board_thickness_mm=core_mm + 0.07,
        source="config",
    )


def stackup_4layer(prepreg_mm: float = 0.2, core_mm: float = 1.0, eps: float = 4.5) -> Stackup:
    return Stackup(
        layers=[
            StackupLayer("L1", "copper", 0.035, copper_layer="top-copper"),
            StackupLayer("pp1", "dielectric", prepreg_mm, "FR-4", eps),
            StackupLayer("L2", "copper", 0.035, copper_layer="inner1-copper"),
            StackupLayer("core", "dielectric", core_mm, "FR-4", eps),
            StackupLayer("L3", "copper", 0.035, copper_layer="inner2-copper"),
            StackupLayer("pp2", "dielectric", prepreg_mm, "FR-4", eps),
            StackupLayer("L4", "copper", 0.035, copper_layer="bottom-copper"),
        ],
        board_thickness_mm=2 * prepreg_mm + core_mm + 0.14,
        source="config",
    )


def make_board(shapes: Iterable[Shape], *, holes: Sequence[Hole] = (), outline: BaseGeometry | None = None,
               stackup: Stackup | None = None, copper_layers: Sequence[str] = ("top-copper", "bottom-copper")) -> Board:
    shapes = list(shapes)
    names = list(dict.fromkeys([*copper_layers, *(s.layer for s in shapes)]))
    layers = []
    for name in names:
        fn = "copper" if name.endswith("copper") else name.split("-")[1]
        lay = Layer(name=name, function=fn, side="top" if name.startswith("top") else "bottom",  # type: ignore[arg-type]
                    file=f"{name}.gbr", copper_index=COPPER_INDEX.get(name))
        mine = [s for s in shapes if s.layer == name]
        for s in mine:
            lay.features.append(Feature(
                geometry=s.geom, polarity="dark", kind=s.kind,  # type: ignore[arg-type]
                source=SourceRef(f"{name}.gbr", s.line), aperture_function=s.aperture_function,
                net=s.net, width_mm=s.width_mm, path=s.path,
            ))
        # the rules read the final image of mask and paste layers only; copper is read per net
        lay.dark = None if fn == "copper" else (shapely.union_all([s.geom for s in mine]) if mine else shapely.Polygon())
        if fn == "copper":
            nets: dict[str, list[BaseGeometry]] = {}
            for i, s in enumerate(mine):
                nets.setdefault(s.net if s.net else f"~n{i}", []).append(s.geom)
            lay.by_net = {n: shapely.union_all(g) for n, g in nets.items()}
        layers.append(lay)
    return Board(name="test-board", source="memory", layers=layers, holes=list(holes), outline=outline,
                 stackup=stackup if stackup is not None else stackup_2layer(), net_source="x2")


def via(x: float, y: float, d: float = 0.3, net: str | None = None, function: str | None = "via", plated: bool | None = True) -> Hole:
    return Hole(x, y, d, plated, SourceRef("drill.drl", 10), function=function, net=net)


def overlay(thickness_mm: float = 2.0, eps: float = 2.8) -> Overlay:
    return Overlay(layers=(OverlayLayer("pmma", thickness_mm, eps, "test"),))


def make_config(overlay_mm: float | None = 2.0, **kw) -> Config:
    cfg = Config(overlay=overlay(overlay_mm) if overlay_mm is not None else None,
                 finger=Finger(8.0, 20.0, 150.0, None), today=dt.date(2026, 6, 1), **kw)
    return cfg


def electrode(net: str, role: str, geom: BaseGeometry, layer: str = "top-copper",
              trace: dict[str, BaseGeometry] | None = None) -> Electrode:
    return Electrode(net=net, role=role, layer=layer, geometry=geom, trace=trace or {})  # type: ignore[arg-type]


def sensor(name: str, kind: str, electrodes: list[Electrode], margin_mm: float = 5.0, **kw) -> Sensor:
    outline = shapely.union_all([e.geometry for e in electrodes])
    return Sensor(name=name, kind=kind, layer=electrodes[0].layer, electrodes=electrodes,  # type: ignore[arg-type]
                  zone=outline.buffer(margin_mm), zone_margin_mm=margin_mm, **kw)


def make_design(board: Board, config: Config, roles: dict[str, str | tuple[str, str]], sensors: list[Sensor]) -> Design:
    r = {n: (v, None) if isinstance(v, str) else (v[0], v[1]) for n, v in roles.items()}
    return Design(board=board, config=config, roles=r, sensors=sensors)  # type: ignore[arg-type]


def with_traces(board: Board, e: Electrode) -> Electrode:
    """Fill an electrode's ``trace`` from the board: its net's copper on every layer."""
    e.trace = {lay.name: lay.by_net[e.net] for lay in board.copper_layers() if e.net in lay.by_net}
    return e
