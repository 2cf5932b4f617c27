"""Small invented sensor designs for the field-solver tests and the bench (our own scenario)."""

from __future__ import annotations

from shapely.geometry import Point, box
from shapely.geometry.base import BaseGeometry

from sensorcheck.board.model import Board, Layer, Stackup, StackupLayer
from sensorcheck.design.model import Config, Design, Electrode, Finger, Overlay, OverlayLayer, Sensor


def stackup(core_mm: float = 1.53, eps: float = 4.4) -> Stackup:
    return Stackup(
        layers=[
            StackupLayer("F.Cu", "copper", 0.035, copper_layer="top-copper"),
            StackupLayer("core", "dielectric", core_mm, material="FR-4", epsilon_r=eps),
            StackupLayer("B.Cu", "copper", 0.035, copper_layer="bottom-copper"),
        ],
        board_thickness_mm=core_mm + 0.07,
        source="config",
    )


def overlay(thickness_mm: float = 1.0, eps: float = 2.8) -> Overlay:
    return Overlay((OverlayLayer("pmma", thickness_mm, eps, "test"),), "top")


def make_design(
    nets: dict[str, BaseGeometry],
    roles: dict[str, str],
    sensors: list[Sensor],
    *,
    ov: Overlay | None = None,
    finger: Finger | None = None,
    estimate: dict | None = None,
) -> Design:
    top = Layer("top-copper", "copper", "top", "test.gtl", copper_index=1, by_net=dict(nets))
    bottom = Layer("bottom-copper", "copper", "bottom", "test.gbl", copper_index=2, by_net={})
    board = Board("test", "test", layers=[top, bottom], stackup=stackup())
    cfg = Config(overlay=ov or overlay(), finger=finger, estimate=dict(estimate or {}))
    return Design(board, cfg, {n: (r, None) for n, r in roles.items()}, sensors)  # type: ignore[misc]


def button(
    *,
    rx_radius_mm: float = 5.0,
    gap_mm: float = 1.0,
    tx_width_mm: float = 2.0,
    ground_gap_mm: float = 1.0,
    ground: bool = True,
    ground_size_mm: float = 34.0,
    ov: Overlay | None = None,
    finger: Finger | None = None,
    estimate: dict | None = None,
) -> Design:
    """A mutual button: RX disk in a TX ring, top ground pour around it (invented)."""
    rx = Point(0, 0).buffer(rx_radius_mm, quad_segs=24)
    r_in = rx_radius_mm + gap_mm
    tx = Point(0, 0).buffer(r_in + tx_width_mm, quad_segs=24).difference(Point(0, 0).buffer(r_in, quad_segs=24))
    nets: dict[str, BaseGeometry] = {"RX1": rx, "TX1": tx}
    roles = {"RX1": "receiver", "TX1": "transmitter"}
    if ground:
        h = ground_size_mm / 2.0
        nets["GND"] = box(-h, -h, h, h).difference(Point(0, 0).buffer(r_in + tx_width_mm + ground_gap_mm, quad_segs=24))
        roles["GND"] = "ground"
    electrodes = [Electrode("TX1", "transmitter", "top-copper", tx), Electrode("RX1", "receiver", "top-copper", rx)]
    s = Sensor("K1", "mutual-button", "top-copper", electrodes, rx.union(tx).buffer(1.0), 1.0)
    return make_design(nets, roles, [s], ov=ov, finger=finger, estimate=estimate)


def self_button(radius_mm: float = 6.0, ground_gap_mm: float = 1.0, ov: Overlay | None = None, shield: bool = False) -> Design:
    el = Point(0, 0).buffer(radius_mm, quad_segs=24)
    ring = box(-16, -16, 16, 16).difference(Point(0, 0).buffer(radius_mm + ground_gap_mm, quad_segs=24))
    nets = {"TOUCH1": el, ("SHLD" if shield else "GND"): ring}
    roles = {"TOUCH1": "self", ("SHLD" if shield else "GND"): ("shield" if shield else "ground")}
    s = Sensor("B1", "self-button", "top-copper", [Electrode("TOUCH1", "self", "top-copper", el)], el.buffer(1.0), 1.0)
    return make_design(nets, roles, [s], ov=ov)


def row_column(
    *,
    pitch_mm: float = 8.0,
    width_mm: float = 3.0,
    length_mm: float = 16.0,
    n: int = 2,
    ov: Overlay | None = None,
    finger: Finger | None = None,
    estimate: dict | None = None,
) -> Design:
    """An n x n bar-and-stripe matrix (invented): TX rows on the bottom copper, RX columns on the top."""
    half_l, half_w = length_mm / 2.0, width_mm / 2.0
    off = [(k - (n - 1) / 2.0) * pitch_mm for k in range(n)]
    rows = {f"TX{k + 1}": box(-half_l, y - half_w, half_l, y + half_w) for k, y in enumerate(off)}
    cols = {f"RX{k + 1}": box(x - half_w, -half_l, x + half_w, half_l) for k, x in enumerate(off)}
    top = Layer("top-copper", "copper", "top", "test.gtl", copper_index=1, by_net=dict(cols))
    bottom = Layer("bottom-copper", "copper", "bottom", "test.gbl", copper_index=2, by_net=dict(rows))
    board = Board("test", "test", layers=[top, bottom], stackup=stackup())
    cfg = Config(overlay=ov or overlay(), finger=finger, estimate=dict(estimate or {}))
    roles = {**{t: ("transmitter", None) for t in rows}, **{r: ("receiver", None) for r in cols}}
    electrodes = [Electrode(t, "transmitter", "bottom-copper", g) for t, g in rows.items()]
    electrodes += [Electrode(r, "receiver", "top-copper", g) for r, g in cols.items()]
    outline = box(-half_l, -half_l, half_l, half_l)
    s = Sensor("M1", "matrix", "top-copper", electrodes, outline.buffer(1.0), 1.0, rows=tuple(rows), columns=tuple(cols))
    return Design(board, cfg, roles, [s])  # type: ignore[arg-type]


def slider(
    *,
    n: int = 5,
    seg_width_mm: float = 4.0,
    gap_mm: float = 0.5,
    height_mm: float = 12.0,
    gaps_mm: list[float] | None = None,
    ground: bool = True,
    estimate: dict | None = None,
) -> Design:
    """A straight self-capacitance slider of rectangular segments along x (invented), ground frame 1 mm away.

    ``gaps_mm`` (n - 1 values) overrides the gap between consecutive segments.
    """
    gaps = list(gaps_mm) if gaps_mm is not None else [gap_mm] * (n - 1)
    x = 0.0
    nets: dict[str, BaseGeometry] = {}
    for i in range(n):
        nets[f"SEG{i + 1}"] = box(x, -height_mm / 2.0, x + seg_width_mm, height_mm / 2.0)
        x += seg_width_mm + (gaps[i] if i < n - 1 else 0.0)
    roles = {k: "self" for k in nets}
    span = box(0.0, -height_mm / 2.0, x, height_mm / 2.0)
    if ground:
        nets["GND"] = span.buffer(8.0, join_style=2).difference(span.buffer(1.0, join_style=2))
        roles["GND"] = "ground"
    electrodes = [Electrode(k, "self", "top-copper", g) for k, g in nets.items() if k.startswith("SEG")]
    order = tuple(e.net for e in electrodes)
    s = Sensor("S1", "slider", "top-copper", electrodes, span.buffer(1.0), 1.0, order=order)
    return make_design(nets, roles, [s], estimate=estimate)


def wheel(*, n: int = 6, r_in_mm: float = 6.0, r_out_mm: float = 14.0, gap_deg: float = 4.0, estimate: dict | None = None) -> Design:
    """A self-capacitance wheel of n annular sectors (invented), no ground: every segment alike by rotation."""
    import math

    from shapely.geometry import Polygon

    nets: dict[str, BaseGeometry] = {}
    step = 360.0 / n
    for i in range(n):
        a0, a1 = math.radians(i * step + gap_deg / 2.0), math.radians((i + 1) * step - gap_deg / 2.0)
        arc = [a0 + (a1 - a0) * k / 12.0 for k in range(13)]
        pts = [(r_out_mm * math.cos(a), r_out_mm * math.sin(a)) for a in arc]
        pts += [(r_in_mm * math.cos(a), r_in_mm * math.sin(a)) for a in reversed(arc)]
        nets[f"W{i + 1}"] = Polygon(pts)
    electrodes = [Electrode(k, "self", "top-copper", g) for k, g in nets.items()]
    outline = Point(0, 0).buffer(r_out_mm)
    s = Sensor("WH", "wheel", "top-copper", electrodes, outline.buffer(1.0), 1.0, order=tuple(nets))
    return make_design(nets, {k: "self" for k in nets}, [s], estimate=estimate)
