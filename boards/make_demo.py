"""Generate the demo boards: an invented battery kitchen timer, "TM-1", in three revisions.

    python boards/make_demo.py [OUT_DIR]        (default: the folder this script is in)

writes ``tm1-clean/``, ``tm1-flawed/`` and ``tm1-revc/`` under OUT_DIR, each with ``fab/`` (Gerber X2 layers,
Excellon PTH and NPTH, IPC-D-356A netlist, Gerber job file) and ``sensorcheck.toml``.  The output
is byte-identical on every run (no clock, no randomness; project GUIDs derive from the names).
The scenario and every seeded fault are described in ``boards/README.md``.

Geometry is exact by construction: electrodes are regions with true arcs, the ground pour is one
dark region per copper layer cut by clear objects (clearance around every other net, written with
exact Gerber primitives: a trace's clearance is the same path drawn with a wider round
aperture), and the hatch openings are clear square flashes on a fixed grid.  Shapely is used
only for yes/no decisions (which hatch cells fit) and for a design-rule self-check, never for
coordinates that are written, so the files do not depend on the GEOS version.

Coordinates: mm, origin at the lower-left board corner, x right, y up, seen from the top.
"""

from __future__ import annotations

import math
import sys
from collections.abc import Callable
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Literal

import shapely
from shapely.geometry import LineString, Point, Polygon, box
from shapely.geometry.base import BaseGeometry

REPO = Path(__file__).resolve().parents[1]
if str(REPO) not in sys.path:  # run as a script from a checkout
    sys.path.insert(0, str(REPO))

from sensorcheck.fab.writer import (  # noqa: E402
    ArcTo,
    DrillHole,
    GerberWriter,
    LineTo,
    NetRecord,
    StackLayer,
    excellon_bytes,
    ipc356_bytes,
    jobfile_bytes,
    project_guid,
)

Side = Literal["top", "bottom"]
SOFTWARE = ("sensorcheck", "make_demo", "1")
#: the design's release date, written into the job file (a constant, never the clock)
RELEASE_DATE = "2026-11-02T09:00:00+00:00"

# --- the product -------------------------------------------------------------------------------
BOARD_W_MM = 110.0
BOARD_H_MM = 70.0
CORNER_R_MM = 3.0
BOARD_THICKNESS_MM = 1.6
OVERLAY_MATERIAL = "pmma"
OVERLAY_THICKNESS_MM = 2.0

# --- common design values ------------------------------------------------------------------
VIA_DRILL_MM = 0.3
VIA_PAD_MM = 0.6
SENSE_TRACE_MM = 0.2
LED_TRACE_MM = 0.25
POWER_TRACE_MM = 0.4
GND_TRACE_MM = 0.3
TRACE_CLEARANCE_MM = 0.3  # pour clearance around traces, pads and vias of other nets
EDGE_CLEARANCE_MM = 0.5  # pour set back from the board edge
HOLE_CLEARANCE_MM = 1.0  # pour set back from a non-plated hole's edge
MOUNT_HOLE_MM = 3.2
MOUNT_HOLES = ((4.0, 4.0), (106.0, 4.0), (4.0, 66.0), (106.0, 66.0))
SELF_TO_GND_MM = 2.0  # self electrode to ground pour = overlay thickness (common practice)
MUTUAL_TO_GND_MM = 1.5

# self buttons: discs, diameter >= contact 8 mm + 2 x overlay (common practice)
BTN_R_MM = 6.5
BTN1_C = (62.0, 50.0)
BTN2_C = (84.0, 50.0)
BTN_VIA_DY_MM = -5.5  # via 1 mm inside the lower edge

# slider: 5 identical chevron segments, x 12..49, y 16..28 (the ends follow the chevron too, so
# the end segments are no wider than the others); chevron depth > pitch + horizontal gap, so a
# vertical line anywhere inside crosses two segments
SLD_X0, SLD_Y0, SLD_H = 12.0, 16.0, 12.0
SLD_PITCH, SLD_DEPTH, SLD_N = 6.0, 7.0, 5
SLD_GAP_MM = 0.5  # perpendicular gap between segments
SLD_X1 = SLD_X0 + SLD_N * SLD_PITCH + SLD_DEPTH  # right end (49 mm)
SLD_VIA_Y = 17.2

# mutual node K1 (TX ring around an RX disc) and K2 (interleaved fingers)
K1_C = (18.0, 50.0)
K2_BOX = (34.0, 43.6, 46.0, 56.4)  # x0, y0, x1, y1
K2_FINGER_W = 0.8

# hatch of the ground pour (square cross-hatch: fill = 1 - (g / (g + w))^2)
TOP_HATCH = (0.2, 1.5)  # line width, opening (mm) -> 22.1 %
BOTTOM_HATCH = (0.2, 1.9)  # -> 18.1 %
DENSE_HATCH = (0.5, 0.7)  # flawed revision near BTN1 -> 66.0 %
#: solid (unhatched) ground on both layers here: the electronics corner (x0, y0, x1, y1)
SOLID_ZONE = (73.0, 0.0, BOARD_W_MM, 33.0)
#: flawed revision: dense hatch in this box around BTN1 (top layer)
DENSE_BOX = (50.0, 38.0, 72.0, 62.0)

# controller U1 on the bottom side: 24 pins, 1.27 mm pitch, two rows
U1_C = (87.0, 25.0)
U1_ROW_DX = 4.7
U1_PAD = (1.8, 0.6)
U1_PITCH = 1.27

J1_PINS = ((100.0, 26.54), (100.0, 29.08))  # battery connector: VBAT, GND
J1_PAD_MM, J1_DRILL_MM = 1.7, 1.0
LED_PAD = (0.9, 1.2)
GND_STITCH = ((8.0, 10.0), (66.0, 3.0), (8.0, 40.0), (50.0, 66.0), (70.0, 66.0), (96.0, 40.0),
              (96.0, 62.0), (106.0, 36.0))

FAB_MIN_CLEARANCE_MM = 0.15
FAB_MIN_WIDTH_MM = 0.15


def u1_pin_xy(pin: int) -> tuple[float, float]:
    """Pad centre of U1 pin 1..24 (left row 1-12 top to bottom, right row 13-24 bottom to top)."""
    cx, cy = U1_C
    if 1 <= pin <= 12:
        return (round(cx - U1_ROW_DX, 6), round(cy + (6.5 - pin) * U1_PITCH, 6))
    if 13 <= pin <= 24:
        return (round(cx + U1_ROW_DX, 6), round(cy + (pin - 18.5) * U1_PITCH, 6))
    raise ValueError(pin)


@dataclass(frozen=True)
class Revision:
    """What differs between the clean and the flawed revision."""

    folder: str
    rev: str
    title: str
    k1_rx_r_mm: float
    k1_gap_mm: float
    k1_tx_w_mm: float
    k1_gnd_clear_mm: float
    k1_tx_via_side: Literal["left", "right"]
    k2_gap_mm: float
    dense_hatch: bool
    led_xy: tuple[float, float]
    #: "short": LED_DRV stays in the electronics corner; "under-btn2": it runs under BTN2
    led_route: Literal["short", "under-btn2"]
    #: top-row channel: (net, channel y, U1 pin) in order of rising y
    channel: tuple[tuple[str, float, int], ...]
    #: extra ground vias (stitching pockets of the pour that traces enclose)
    extra_gnd_vias: tuple[tuple[float, float], ...] = ()
    #: two channel nets with no ground between them: the pour pocket their jogs and pin stubs
    #: would enclose is left out (it would float)
    no_pour_between: tuple[str, str] | None = None
    #: the front panel's thickness (mm)
    overlay_mm: float = OVERLAY_THICKNESS_MM


CLEAN = Revision(
    folder="tm1-clean",
    rev="B",
    title="TM-1 kitchen timer, revision B (review passed)",
    k1_rx_r_mm=3.25,
    k1_gap_mm=1.2,
    k1_tx_w_mm=2.05,
    k1_gnd_clear_mm=MUTUAL_TO_GND_MM,
    k1_tx_via_side="right",
    k2_gap_mm=1.2,
    dense_hatch=False,
    led_xy=(100.0, 10.0),
    led_route="short",
    channel=(("RX1", 31.0, 6), ("TX1", 33.0, 5), ("TX2", 35.0, 4), ("RX2", 37.0, 3), ("BTN1", 39.0, 2),
             ("BTN2", 41.0, 1)),
)

FLAWED = Revision(
    folder="tm1-flawed",
    rev="A",
    title="TM-1 kitchen timer, revision A (seeded faults, for review)",
    # fault (a): a 20 mm receiver in a 2 mm TX ring with no ground within 10 mm on either layer:
    # the receiver is large against the ground around it, so with the product's weak return path
    # (battery, on a worktop) the finger's own coupling to RX overtakes and the signal turns around
    k1_rx_r_mm=10.0,
    k1_gap_mm=1.2,
    k1_tx_w_mm=2.0,
    k1_gnd_clear_mm=10.0,
    k1_tx_via_side="left",
    k2_gap_mm=0.2,
    dense_hatch=True,
    led_xy=(73.0, 50.0),
    led_route="under-btn2",
    channel=(("TX1", 31.0, 6), ("RX1", 33.0, 5), ("TX2", 33.5, 4), ("RX2", 35.5, 3), ("BTN1", 37.5, 2),
             ("BTN2", 39.5, 1)),
    # the strip between TX1 and RX1 is closed off by K1's keep-out; the top-left corner of the
    # pour is cut off by it too
    extra_gnd_vias=((40.0, 32.0), (2.2, 67.8)),
    no_pour_between=("RX1", "TX2"),
)

#: revision C: revision B with two changes a merge request might bring, for ``sensorcheck compare``:
#: the front panel thickened to 3.0 mm, and the indicator LED moved between the self buttons with
#: its drive line run under BTN2 (the geometry of revision A's fault d); everything else as B
REV_C = replace(
    CLEAN,
    folder="tm1-revc",
    rev="C",
    title="TM-1 kitchen timer, revision C (3 mm front panel, LED moved; for compare)",
    led_xy=FLAWED.led_xy,
    led_route=FLAWED.led_route,
    overlay_mm=3.0,
)

REVISIONS = (CLEAN, FLAWED, REV_C)


# --- geometry of the sensors (shared with the tests) -----------------------------------------


def k1_dims(rev: Revision) -> dict[str, float]:
    """K1: RX disc radius, TX ring inner/outer/mid radius (mm)."""
    inner = rev.k1_rx_r_mm + rev.k1_gap_mm
    outer = inner + rev.k1_tx_w_mm
    return {"rx_r": rev.k1_rx_r_mm, "tx_inner": inner, "tx_outer": outer, "tx_mid": (inner + outer) / 2}


def k2_fingers(rev: Revision) -> tuple[list[tuple[float, float, float, float]], list[tuple[float, float, float, float]]]:
    """K2 copper as rectangles (x0, y0, x1, y1): (TX parts, RX parts).

    TX: a spine on the left with fingers to the right; RX: a spine on the right with fingers to
    the left; fingers alternate TX, RX, ..., TX from the bottom; every TX-RX edge is ``k2_gap_mm``.
    """
    x0, y0, x1, y1 = K2_BOX
    w, g = K2_FINGER_W, rev.k2_gap_mm
    pitch = w + g
    n = round((y1 - y0 + g) / pitch)
    if abs(n * pitch - g - (y1 - y0)) > 1e-9 or n % 2 == 0:
        raise ValueError("K2 box height must hold an odd number of fingers")
    tx = [(x0, y0, x0 + w, y1)]
    rx: list[tuple[float, float, float, float]] = []
    for k in range(n):
        fy0 = y0 + k * pitch
        if k % 2 == 0:
            tx.append((x0 + w, fy0, x1 - w - g, fy0 + w))
        else:
            rx.append((x0 + w + g, fy0, x1 - w, fy0 + w))
    rx.insert(0, (x1 - w, y0 + pitch, x1, y1 - pitch))
    return [tuple(round(v, 6) for v in r) for r in tx], [tuple(round(v, 6) for v in r) for r in rx]  # type: ignore[misc]


def slider_segments() -> list[list[tuple[float, float]]]:
    """The five chevron segments as polygons (lists of vertices, counter-clockwise).

    Boundary i is x = X0 + i * pitch + chevron(y), chevron(y) = depth * (1 - |y - yc| / (h / 2)),
    for i = 0..5 (the outer two are the slider's ends).  The horizontal gap is widened so that
    the perpendicular gap is SLD_GAP_MM on the slanted edges.
    """
    yc = SLD_Y0 + SLD_H / 2
    slope = SLD_DEPTH / (SLD_H / 2)
    gx = SLD_GAP_MM * math.sqrt(1 + slope * slope)
    ys = (SLD_Y0, yc, SLD_Y0 + SLD_H)

    def chev(y: float) -> float:
        return SLD_DEPTH * (1 - abs(y - yc) / (SLD_H / 2))

    segs = []
    for i in range(SLD_N):
        half_l = 0.0 if i == 0 else gx / 2
        half_r = 0.0 if i == SLD_N - 1 else gx / 2
        left = [(SLD_X0 + i * SLD_PITCH + chev(y) + half_l, y) for y in ys]
        right = [(SLD_X0 + (i + 1) * SLD_PITCH + chev(y) - half_r, y) for y in ys]
        pts = [left[0], right[0], right[1], right[2], left[2], left[1]]
        pts = [(round(x, 6), round(y, 6)) for x, y in pts]
        dedup = [p for k, p in enumerate(pts) if p != pts[k - 1]]
        segs.append(dedup)
    return segs


def slider_vias() -> list[tuple[float, float]]:
    """One via per segment, 1.2 mm above the slider's lower edge, mid-way across the segment."""
    chev = SLD_DEPTH * (1 - abs(SLD_VIA_Y - (SLD_Y0 + SLD_H / 2)) / (SLD_H / 2))
    return [(round(SLD_X0 + SLD_PITCH * (i + 0.5) + chev, 6), SLD_VIA_Y) for i in range(SLD_N)]


# --- board assembly ----------------------------------------------------------------------------


@dataclass
class Layer:
    """What goes onto one copper layer, in writing order groups."""

    dark: list[Callable[[GerberWriter], None]] = field(default_factory=list)
    cuts: list[Callable[[GerberWriter], None]] = field(default_factory=list)
    #: shapely shape per object: (net, shape) for the self-check and the hatch decisions
    shapes: list[tuple[str, BaseGeometry]] = field(default_factory=list)
    cut_shapes: list[BaseGeometry] = field(default_factory=list)


@dataclass
class Board:
    rev: Revision
    layers: dict[Side, Layer] = field(default_factory=lambda: {"top": Layer(), "bottom": Layer()})
    holes_pth: list[DrillHole] = field(default_factory=list)
    holes_npth: list[DrillHole] = field(default_factory=list)
    netlist: list[NetRecord] = field(default_factory=list)
    mask: dict[Side, list[tuple[str, tuple[float, float], tuple[float, float] | float]]] = field(
        default_factory=lambda: {"top": [], "bottom": []})
    paste: dict[Side, list[tuple[tuple[float, float], tuple[float, float]]]] = field(
        default_factory=lambda: {"top": [], "bottom": []})

    # -- primitives ---------------------------------------------------------------------------

    def track(self, side: Side, pts: list[tuple[float, float]], width: float, net: str) -> None:
        lay = self.layers[side]
        lay.dark.append(lambda w: w.track(pts, w.circle(width, "Conductor"), net=net))
        lay.shapes.append((net, LineString(pts).buffer(width / 2, quad_segs=16)))
        if net != "GND":
            cw = width + 2 * TRACE_CLEARANCE_MM
            lay.cuts.append(lambda w: w.track(pts, w.circle(cw, "Conductor"), net="GND", polarity="clear"))
            lay.cut_shapes.append(LineString(pts).buffer(cw / 2, quad_segs=16))

    def via(self, xy: tuple[float, float], net: str) -> None:
        for side in ("top", "bottom"):
            lay = self.layers[side]  # type: ignore[index]
            lay.dark.append(lambda w: w.flash(xy, w.circle(VIA_PAD_MM, "ViaPad"), net=net))
            lay.shapes.append((net, Point(xy).buffer(VIA_PAD_MM / 2, quad_segs=16)))
            if net != "GND":
                self._cut_disc(side, xy, VIA_PAD_MM / 2 + TRACE_CLEARANCE_MM)  # type: ignore[arg-type]
        self.holes_pth.append(DrillHole(xy[0], xy[1], VIA_DRILL_MM, "ViaDrill"))
        self.netlist.append(NetRecord(net, "VIA", "", xy[0], xy[1], VIA_PAD_MM, VIA_PAD_MM, hole_mm=VIA_DRILL_MM,
                                      access=0, soldermask=3))

    def _cut_disc(self, side: Side, xy: tuple[float, float], r: float) -> None:
        lay = self.layers[side]
        lay.cuts.append(lambda w: w.flash(xy, w.circle(2 * r, "Conductor"), net="GND", polarity="clear"))
        lay.cut_shapes.append(Point(xy).buffer(r, quad_segs=32))

    def _cut_rect(self, side: Side, r: tuple[float, float, float, float]) -> None:
        lay = self.layers[side]
        x0, y0, x1, y1 = (round(v, 6) for v in r)
        lay.cuts.append(lambda w: w.polygon([(x0, y0), (x1, y0), (x1, y1), (x0, y1)], function="Conductor",
                                            net="GND", polarity="clear"))
        lay.cut_shapes.append(box(x0, y0, x1, y1))

    def smd(self, side: Side, ref: str, pin: str, xy: tuple[float, float], size: tuple[float, float], net: str,
            cut: bool = True) -> None:
        lay = self.layers[side]
        lay.dark.append(lambda w: w.flash(xy, w.rect(size[0], size[1], "SMDPad,CuDef"), net=net, pin=(ref, pin)))
        lay.shapes.append((net, box(xy[0] - size[0] / 2, xy[1] - size[1] / 2, xy[0] + size[0] / 2,
                                    xy[1] + size[1] / 2)))
        if cut and net != "GND":
            c = TRACE_CLEARANCE_MM
            self._cut_rect(side, (xy[0] - size[0] / 2 - c, xy[1] - size[1] / 2 - c, xy[0] + size[0] / 2 + c,
                                  xy[1] + size[1] / 2 + c))
        self.mask[side].append(("rect", xy, (size[0] + 0.1, size[1] + 0.1)))
        self.paste[side].append((xy, size))
        self.netlist.append(NetRecord(net, ref, pin, xy[0], xy[1], size[0], size[1], access=1 if side == "top" else 2,
                                      soldermask=0))

    def tht(self, ref: str, pin: str, xy: tuple[float, float], net: str) -> None:
        for side in ("top", "bottom"):
            lay = self.layers[side]  # type: ignore[index]
            lay.dark.append(lambda w: w.flash(xy, w.circle(J1_PAD_MM, "ComponentPad"), net=net, pin=(ref, pin)))
            lay.shapes.append((net, Point(xy).buffer(J1_PAD_MM / 2, quad_segs=16)))
            if net != "GND":
                self._cut_disc(side, xy, J1_PAD_MM / 2 + TRACE_CLEARANCE_MM)  # type: ignore[arg-type]
            self.mask[side].append(("pad", xy, J1_PAD_MM + 0.1))  # type: ignore[index]
        self.holes_pth.append(DrillHole(xy[0], xy[1], J1_DRILL_MM, "ComponentDrill"))
        self.netlist.append(NetRecord(net, ref, pin, xy[0], xy[1], J1_PAD_MM, J1_PAD_MM, hole_mm=J1_DRILL_MM,
                                      access=0, soldermask=0))


def build(rev: Revision) -> Board:
    b = Board(rev)
    top = b.layers["top"]

    # K1: RX disc, TX ring (two half-ring regions with exact arcs), vias
    d = k1_dims(rev)
    cx, cy = K1_C
    top.dark.append(lambda w: w.disc(K1_C, d["rx_r"], function="Conductor", net="RX1"))
    top.shapes.append(("RX1", Point(K1_C).buffer(d["rx_r"], quad_segs=64)))
    top.dark.append(lambda w: w.annulus(K1_C, d["tx_inner"], d["tx_outer"], function="Conductor", net="TX1"))
    top.shapes.append(("TX1", Point(K1_C).buffer(d["tx_outer"], quad_segs=64).difference(
        Point(K1_C).buffer(d["tx_inner"], quad_segs=64))))
    for side in ("top", "bottom") if rev.k1_gnd_clear_mm > MUTUAL_TO_GND_MM else ("top",):
        b._cut_disc(side, K1_C, d["tx_outer"] + rev.k1_gnd_clear_mm)  # type: ignore[arg-type]
    b.via(K1_C, "RX1")
    if rev.k1_tx_via_side == "right":
        tx1_via = (round(cx + d["tx_mid"], 6), cy)
    else:  # a stub out of a ring too thin to hold the via pad
        tx1_via = (round(cx - d["tx_outer"] - 0.7, 6), cy)
        b.track("top", [(round(cx - d["tx_mid"], 6), cy), tx1_via], 0.3, "TX1")
    b.via(tx1_via, "TX1")

    # K2: interleaved fingers
    tx_rects, rx_rects = k2_fingers(rev)
    for net, rects in (("TX2", tx_rects), ("RX2", rx_rects)):
        for r in rects:
            top.dark.append(lambda w, r=r, net=net: w.polygon([(r[0], r[1]), (r[2], r[1]), (r[2], r[3]), (r[0], r[3])],
                                                             function="Conductor", net=net))
            top.shapes.append((net, box(*r)))
    x0, y0, x1, y1 = K2_BOX
    c = MUTUAL_TO_GND_MM
    b._cut_rect("top", (x0 - c, y0 - c, x1 + c, y1 + c))
    tx2_via = (round(x0 + K2_FINGER_W / 2, 6), round(y0 + K2_FINGER_W / 2, 6))
    rx2_via = (round(x1 - K2_FINGER_W / 2, 6), round(rx_rects[1][1] + K2_FINGER_W / 2, 6))
    b.via(tx2_via, "TX2")
    b.via(rx2_via, "RX2")

    # self buttons
    btn_vias = {}
    for net, centre in (("BTN1", BTN1_C), ("BTN2", BTN2_C)):
        top.dark.append(lambda w, centre=centre, net=net: w.disc(centre, BTN_R_MM, function="Conductor", net=net))
        top.shapes.append((net, Point(centre).buffer(BTN_R_MM, quad_segs=64)))
        b._cut_disc("top", centre, BTN_R_MM + SELF_TO_GND_MM)
        btn_vias[net] = (centre[0], round(centre[1] + BTN_VIA_DY_MM, 6))
        b.via(btn_vias[net], net)

    # slider
    for i, seg in enumerate(slider_segments()):
        net = f"SLD{i + 1}"
        top.dark.append(lambda w, seg=seg, net=net: w.polygon(seg, function="Conductor", net=net))
        top.shapes.append((net, Polygon(seg)))
    s = SELF_TO_GND_MM
    b._cut_rect("top", (SLD_X0 - s, SLD_Y0 - s, SLD_X1 + s, SLD_Y0 + SLD_H + s))
    for i, xy in enumerate(slider_vias()):
        b.via(xy, f"SLD{i + 1}")

    # U1 (bottom) pads; row keep-outs instead of per-pad cuts (no ground slivers between pins)
    pins: dict[int, str] = {n: "N/C" for n in range(1, 25)}
    vias = {"RX1": K1_C, "TX1": tx1_via, "TX2": tx2_via, "RX2": rx2_via, **btn_vias}
    for net, _, pin in rev.channel:
        pins[pin] = net
    for i in range(SLD_N):
        pins[11 - i] = f"SLD{i + 1}"
    pins[13], pins[14], pins[15] = "LED_DRV", "GND", "VBAT"
    for n, net in pins.items():
        b.smd("bottom", "U1", str(n), u1_pin_xy(n), U1_PAD, net, cut=False)
    c = TRACE_CLEARANCE_MM
    for lo, hi in ((1, 12), (13, 24)):
        xa, ya = u1_pin_xy(hi if lo == 1 else lo)
        xb, yb = u1_pin_xy(lo if lo == 1 else hi)
        b._cut_rect("bottom", (xa - U1_PAD[0] / 2 - c, ya - U1_PAD[1] / 2 - c, xa + U1_PAD[0] / 2 + c,
                               yb + U1_PAD[1] / 2 + c))
    gx, gy = u1_pin_xy(14)
    b.track("bottom", [(gx, gy), (gx + 2.8, gy)], GND_TRACE_MM, "GND")

    # top-row sensor traces (bottom layer): via -> channel -> jog -> U1 pin
    jogs: dict[str, tuple[float, float, float]] = {}
    for rank, (net, yc, pin) in enumerate(rev.channel):
        vx, vy = vias[net]
        xj = round(73.5 + 1.2 * rank, 6)
        px, py = u1_pin_xy(pin)
        b.track("bottom", [(vx, vy), (vx, yc), (xj, yc), (xj, py), (px, py)], SENSE_TRACE_MM, net)
        jogs[net] = (xj, yc, py)
    if rev.no_pour_between:
        (xa, _, pa), (xb, yb, pb) = jogs[rev.no_pour_between[0]], jogs[rev.no_pour_between[1]]
        b._cut_rect("bottom", (xa, pa, xb, yb))  # between the two jogs
        b._cut_rect("bottom", (xa, pa, u1_pin_xy(1)[0], pb))  # between the two pin stubs
    # slider traces: leftmost segment -> lowest channel, farthest jog, lowest pin
    for i, (vx, vy) in enumerate(slider_vias()):
        yc = 6.0 + 1.5 * i
        xj = 79.0 - i
        px, py = u1_pin_xy(11 - i)
        b.track("bottom", [(vx, vy), (vx, yc), (xj, yc), (xj, py), (px, py)], SENSE_TRACE_MM, f"SLD{i + 1}")

    # battery connector J1 and power
    b.tht("J1", "1", J1_PINS[0], "VBAT")
    b.tht("J1", "2", J1_PINS[1], "GND")
    vx, vy = u1_pin_xy(15)
    b.track("bottom", [(vx, vy), (96.5, vy), (96.5, J1_PINS[0][1]), J1_PINS[0]], POWER_TRACE_MM, "VBAT")

    # indicator LED D1 (top): anode on LED_DRV (driven by U1 pin 13), cathode on GND
    lx, ly = rev.led_xy
    anode, cathode = (round(lx + 0.95, 6), ly), (round(lx - 0.95, 6), ly)
    b.smd("top", "D1", "A", anode, LED_PAD, "LED_DRV")
    b.smd("top", "D1", "K", cathode, LED_PAD, "GND")
    px, py = u1_pin_xy(13)
    if rev.led_route == "under-btn2":
        led_via = (round(lx + 2.8, 6), ly)
        b.track("top", [led_via, anode], LED_TRACE_MM, "LED_DRV")
        b.track("bottom", [(px, py), (104.0, py), (104.0, ly), led_via], LED_TRACE_MM, "LED_DRV")
    else:
        led_via = (anode[0], round(ly + 3.5, 6))
        b.track("top", [led_via, anode], LED_TRACE_MM, "LED_DRV")
        b.track("bottom", [(px, py), (led_via[0], py), led_via], LED_TRACE_MM, "LED_DRV")
    b.via(led_via, "LED_DRV")

    # stitching vias, except inside K1's ground keep-out (a via there would be ground near RX)
    k1_keepout_mm = k1_dims(rev)["tx_outer"] + rev.k1_gnd_clear_mm
    for xy in GND_STITCH + rev.extra_gnd_vias:
        if math.hypot(xy[0] - K1_C[0], xy[1] - K1_C[1]) > k1_keepout_mm:
            b.via(xy, "GND")
    for xy in MOUNT_HOLES:
        b.holes_npth.append(DrillHole(xy[0], xy[1], MOUNT_HOLE_MM, "MechanicalDrill"))
        for side in ("top", "bottom"):
            b._cut_disc(side, xy, MOUNT_HOLE_MM / 2 + HOLE_CLEARANCE_MM)  # type: ignore[arg-type]
            b.mask[side].append(("hole", xy, MOUNT_HOLE_MM + 0.1))  # type: ignore[index]
    return b


# --- ground pour ---------------------------------------------------------------------------


def pour_outline() -> tuple[tuple[float, float], list[LineTo | ArcTo], Polygon]:
    """The pour boundary: the board outline set back by EDGE_CLEARANCE_MM (a rounded rectangle)."""
    e, r = EDGE_CLEARANCE_MM, CORNER_R_MM - EDGE_CLEARANCE_MM
    return _rounded_rect(e, e, BOARD_W_MM - e, BOARD_H_MM - e, r)


def _rounded_rect(x0: float, y0: float, x1: float, y1: float, r: float) -> tuple[
        tuple[float, float], list[LineTo | ArcTo], Polygon]:
    start = (x0 + r, y0)
    segs: list[LineTo | ArcTo] = [
        LineTo((x1 - r, y0)), ArcTo((x1, y0 + r), (x1 - r, y0 + r), False),
        LineTo((x1, y1 - r)), ArcTo((x1 - r, y1), (x1 - r, y1 - r), False),
        LineTo((x0 + r, y1)), ArcTo((x0, y1 - r), (x0 + r, y1 - r), False),
        LineTo((x0, y0 + r)), ArcTo((x0 + r, y0), (x0 + r, y0 + r), False),
    ]
    shape = box(x0 + r, y0 + r, x1 - r, y1 - r).buffer(r, quad_segs=64)
    return start, segs, shape


def hatch_cells(zone: BaseGeometry, avoid: BaseGeometry, line_mm: float, open_mm: float) -> list[tuple[float, float]]:
    """Centres of the hatch openings: grid lines at k * pitch (origin 0, 0), an opening of side
    ``open_mm`` between them, kept only where the opening grown by one line width lies inside
    ``zone`` and clear of ``avoid`` (so the hatch keeps a border at least one line wide)."""
    p = line_mm + open_mm
    x0, y0, x1, y1 = zone.bounds
    kx = range(math.floor(x0 / p), math.ceil(x1 / p) + 1)
    ky = range(math.floor(y0 / p), math.ceil(y1 / p) + 1)
    centres = [(round((i + 0.5) * p, 6), round((j + 0.5) * p, 6)) for j in ky for i in kx]
    half = open_mm / 2 + line_mm + 0.005
    boxes = shapely.box(*[[cx - half for cx, _ in centres], [cy - half for _, cy in centres],
                          [cx + half for cx, _ in centres], [cy + half for _, cy in centres]])
    shapely.prepare(zone)
    shapely.prepare(avoid)
    keep = shapely.contains(zone, boxes) & ~shapely.intersects(avoid, boxes)
    return [c for c, k in zip(centres, keep, strict=True) if k]


def copper_gerber(board: Board, side: Side) -> tuple[GerberWriter, int]:
    rev = board.rev
    lay = board.layers[side]
    w = GerberWriter(f"Copper,L{1 if side == 'top' else 2},{'Top' if side == 'top' else 'Bot'}",
                     generation_software=SOFTWARE, project_id=project(rev))
    start, segs, pour = pour_outline()
    # 1. the pour (dark), 2. clearances (clear), 3. hatch openings (clear), 4. everything else
    w.region(start, segs, function="Conductor", net="GND")
    for cut in lay.cuts:
        cut(w)
    solid = box(*SOLID_ZONE)
    gnd_objects = shapely.union_all([s for net, s in lay.shapes if net == "GND"] or [Polygon()])
    cuts = shapely.union_all(lay.cut_shapes).buffer(0.01)
    line, opening = TOP_HATCH if side == "top" else BOTTOM_HATCH
    avoid = shapely.union_all([cuts, solid, gnd_objects])
    if side == "top" and rev.dense_hatch:
        dense = box(*DENSE_BOX)
        cells = hatch_cells(pour, shapely.union_all([avoid, dense]), line, opening)
        dense_cells = hatch_cells(dense.intersection(pour), avoid, *DENSE_HATCH)
    else:
        cells = hatch_cells(pour, avoid, line, opening)
        dense_cells = []
    ap = w.rect(opening, opening, "Conductor")
    for c in cells:
        w.flash(c, ap, net="GND", polarity="clear")
    if dense_cells:
        apd = w.rect(DENSE_HATCH[1], DENSE_HATCH[1], "Conductor")
        for c in dense_cells:
            w.flash(c, apd, net="GND", polarity="clear")
    for obj in lay.dark:
        obj(w)
    return w, len(cells) + len(dense_cells)


def project(rev: Revision) -> tuple[str, str, str]:
    return ("TM-1_kitchen_timer", project_guid("TM-1_kitchen_timer"), rev.rev)


def mask_gerber(board: Board, side: Side) -> GerberWriter:
    w = GerberWriter(f"Soldermask,{'Top' if side == 'top' else 'Bot'}", file_polarity="Negative",
                     generation_software=SOFTWARE, project_id=project(board.rev))
    for kind, xy, size in board.mask[side]:
        if kind == "rect":
            ap = w.rect(size[0], size[1], "SMDPad,CuDef")  # type: ignore[index]
        elif kind == "pad":
            ap = w.circle(size, "ComponentPad")  # type: ignore[arg-type]
        else:
            ap = w.circle(size, "Other,NonPlatedHole")  # type: ignore[arg-type]
        w.flash(xy, ap)
    return w


def paste_gerber(board: Board, side: Side) -> GerberWriter:
    w = GerberWriter(f"Paste,{'Top' if side == 'top' else 'Bot'}", generation_software=SOFTWARE,
                     project_id=project(board.rev))
    for xy, size in board.paste[side]:
        w.flash(xy, w.rect(size[0], size[1], "SMDPad,CuDef"))
    return w


def silk_gerber(board: Board, side: Side) -> GerberWriter:
    w = GerberWriter(f"Legend,{'Top' if side == 'top' else 'Bot'}", generation_software=SOFTWARE,
                     project_id=project(board.rev))
    ap = w.circle(0.15, "Other,Legend")
    if side == "top":
        lx, ly = board.rev.led_xy
        w.track([(lx - 1.9, ly - 1.1), (lx + 1.9, ly - 1.1), (lx + 1.9, ly + 1.1), (lx - 1.9, ly + 1.1),
                 (lx - 1.9, ly - 1.1)], ap)
        # a direction arrow beside the slider (its "more" end)
        w.track([(48.0, 10.0), (56.0, 10.0)], ap)
        w.track([(54.0, 11.0), (56.0, 10.0), (54.0, 9.0)], ap)
    else:
        cx, cy = U1_C
        w.track([(cx - 3.0, cy - 8.0), (cx + 3.0, cy - 8.0), (cx + 3.0, cy + 8.0), (cx - 3.0, cy + 8.0),
                 (cx - 3.0, cy - 8.0)], ap)
        w.flash((cx - 2.2, cy + 7.2), w.circle(0.5, "Other,Legend"))
        (jx, jy0), (_, jy1) = J1_PINS
        w.track([(jx - 1.4, jy0 - 1.4), (jx + 1.4, jy0 - 1.4), (jx + 1.4, jy1 + 1.4), (jx - 1.4, jy1 + 1.4),
                 (jx - 1.4, jy0 - 1.4)], ap)
    return w


def outline_gerber(board: Board) -> GerberWriter:
    w = GerberWriter("Profile,NP", generation_software=SOFTWARE, project_id=project(board.rev))
    ap = w.circle(0.05, "Profile")
    start, segs, _ = _rounded_rect(0.0, 0.0, BOARD_W_MM, BOARD_H_MM, CORNER_R_MM)
    prev = start
    for seg in segs:
        if isinstance(seg, LineTo):
            w.track([prev, seg.end], ap)
        else:
            w.arc(prev, seg.end, seg.centre, seg.clockwise, ap)
        prev = seg.end
    return w


# --- self-check ----------------------------------------------------------------------------


def self_check(board: Board) -> dict[str, float]:
    """Design-rule self-check of the written copper (not counting the pour): different nets on
    one layer never closer than the fabrication minimum.  Returns the smallest gap per layer."""
    out = {}
    for side, lay in board.layers.items():
        by_net: dict[str, list[BaseGeometry]] = {}
        for net, shape in lay.shapes:
            by_net.setdefault(net, []).append(shape)
        merged = {net: shapely.union_all(s) for net, s in by_net.items()}
        nets = sorted(merged)
        smallest = math.inf
        for i, a in enumerate(nets):
            for bnet in nets[i + 1:]:
                if "N/C" in (a, bnet):
                    continue
                d = merged[a].distance(merged[bnet])
                smallest = min(smallest, d)
                if d < FAB_MIN_CLEARANCE_MM - 1e-6:
                    raise AssertionError(f"{board.rev.folder} {side}: {a} to {bnet} only {d:.3f} mm apart")
        out[side] = smallest
    return out


# --- files ---------------------------------------------------------------------------------

STACKUP = (
    StackLayer("Legend", "Top Legend", color="White"),
    StackLayer("SolderMask", "Top Mask", 0.02, "LPI epoxy", 3.8, "Green"),
    StackLayer("Copper", "Top Copper", 0.035),
    StackLayer("Dielectric", "Core", 1.49, "FR4", 4.5),
    StackLayer("Copper", "Bottom Copper", 0.035),
    StackLayer("SolderMask", "Bottom Mask", 0.02, "LPI epoxy", 3.8, "Green"),
    StackLayer("Legend", "Bottom Legend", color="White"),
)


def board_files(rev: Revision) -> dict[str, bytes]:
    """Every fabrication file of one revision: file name -> bytes."""
    board = build(rev)
    self_check(board)
    stem = f"tm1-rev{rev.rev.lower()}"
    files: dict[str, tuple[GerberWriter, str]] = {}
    top, _ = copper_gerber(board, "top")
    bottom, _ = copper_gerber(board, "bottom")
    files[f"{stem}.gtl"] = (top, "Positive")
    files[f"{stem}.gbl"] = (bottom, "Positive")
    files[f"{stem}.gts"] = (mask_gerber(board, "top"), "Negative")
    files[f"{stem}.gbs"] = (mask_gerber(board, "bottom"), "Negative")
    files[f"{stem}.gtp"] = (paste_gerber(board, "top"), "Positive")
    files[f"{stem}.gbp"] = (paste_gerber(board, "bottom"), "Positive")
    files[f"{stem}.gto"] = (silk_gerber(board, "top"), "Positive")
    files[f"{stem}.gbo"] = (silk_gerber(board, "bottom"), "Positive")
    files[f"{stem}.gko"] = (outline_gerber(board), "Positive")
    out = {name: w.to_bytes() for name, (w, _) in files.items()}
    out[f"{stem}-PTH.drl"] = excellon_bytes(board.holes_pth, plated=True, generation_software=SOFTWARE,
                                           project_id=project(rev))
    out[f"{stem}-NPTH.drl"] = excellon_bytes(board.holes_npth, plated=False, generation_software=SOFTWARE,
                                            project_id=project(rev))
    out[f"{stem}.d356"] = ipc356_bytes(board.netlist, job=f"TM-1 rev {rev.rev}", title=rev.title)
    job_files = [(name, w.file_function, pol) for name, (w, pol) in files.items()]
    job_files += [(f"{stem}-PTH.drl", "Plated,1,2,PTH", "Positive"), (f"{stem}-NPTH.drl", "NonPlated,1,2,NPTH",
                                                                     "Positive")]
    out[f"{stem}.gbrjob"] = jobfile_bytes(
        project=project(rev), creation_date=RELEASE_DATE, size_mm=(BOARD_W_MM, BOARD_H_MM),
        board_thickness_mm=BOARD_THICKNESS_MM, files=job_files, stackup=STACKUP,
        min_clearance_mm=FAB_MIN_CLEARANCE_MM, min_width_mm=FAB_MIN_WIDTH_MM, generation_software=SOFTWARE)
    return out


CONFIG_HEAD = """\
# sensorcheck.toml for {title}.
# Generated by boards/make_demo.py (edit the script, not this file).
# Product: TM-1, an invented free-standing kitchen timer running from two AAA cells.
# Touch face: the top of the board, behind a {t} mm clear acrylic (PMMA) front panel.
profile = "default"

[board]
face = "top"

[[overlay.layers]]
material = "{material}"
thickness_mm = {t}
kind = "overlay"

[roles]
transmitter = ["TX*"]
receiver = ["RX*"]
self = ["BTN*", "SLD*"]
ground = ["GND"]
aggressor = [{{pattern = "LED*", kind = "led"}}]

[[sensors]]
name = "K1"
kind = "mutual-button"
tx = ["TX1"]
rx = ["RX1"]

[[sensors]]
name = "K2"
kind = "mutual-button"
tx = ["TX2"]
rx = ["RX2"]

[[sensors]]
name = "BTN1"
kind = "self-button"
nets = ["BTN1"]

[[sensors]]
name = "BTN2"
kind = "self-button"
nets = ["BTN2"]

[[sensors]]
name = "minutes"
kind = "slider"
nets = ["SLD1", "SLD2", "SLD3", "SLD4", "SLD5"]

[finger]
# The timer is battery powered and stands on a kitchen worktop: its ground reaches earth only
# through its own capacitance to the surroundings.  A body about 10 cm across has a free-space
# capacitance of about 5-6 pF (4 pi eps0 r with r = 5 cm); standing on a worktop raises it.
# 10 pF is our estimate for this product, not a measurement and not tuned to any result.
device_ground = 10.0

[controller]
max_parasitic_pf = 30.0
pin_capacitance_pf = 5.0

[fabrication]
min_clearance_mm = {clr}
min_width_mm = {wid}

[esd]
level_kv = 8.0
mode = "air"
"""


def config_text(rev: Revision) -> str:
    return CONFIG_HEAD.format(title=rev.title, t=rev.overlay_mm, material=OVERLAY_MATERIAL,
                              clr=FAB_MIN_CLEARANCE_MM, wid=FAB_MIN_WIDTH_MM)


def write_board(rev: Revision, out_root: Path) -> Path:
    folder = out_root / rev.folder
    fab = folder / "fab"
    fab.mkdir(parents=True, exist_ok=True)
    for name, data in sorted(board_files(rev).items()):
        (fab / name).write_bytes(data)
    (folder / "sensorcheck.toml").write_bytes(config_text(rev).encode("ascii"))
    return folder


def main(argv: list[str] | None = None) -> int:
    args = sys.argv[1:] if argv is None else argv
    out_root = Path(args[0]) if args else Path(__file__).resolve().parent
    for rev in REVISIONS:
        write_board(rev, out_root)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
