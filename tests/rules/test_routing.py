"""routing.* rules on hand-drawn boards; overlap areas and run lengths computed by hand below."""

from __future__ import annotations

import math

import pytest
from shapely.geometry import box

from .build import draw, electrode, make_board, make_config, make_design, region, sensor, via, with_traces
from .helpers import run_one

PAD = box(-6, -6, 6, 6)  # 12 x 12 button B1 at the origin; zone margin 5 mm


def button_board(*extra, roles=None, holes=(), b1_trace=None, second=False):
    shapes = [region("top-copper", PAD, "TOUCH1"), *extra]
    if b1_trace is not None:
        shapes.append(b1_trace)
    if second:
        shapes.append(region("top-copper", box(24, -6, 36, 6), "TOUCH2"))
    board = make_board(shapes, holes=holes)
    sensors = [sensor("B1", "self-button", [with_traces(board, electrode("TOUCH1", "self", PAD))])]
    if second:
        sensors.append(sensor("B2", "self-button", [with_traces(board, electrode("TOUCH2", "self", box(24, -6, 36, 6)))]))
    r = {"TOUCH1": "self", "TOUCH2": "self", "GND": "ground", **(roles or {})}
    return make_design(board, make_config(1.0), r, sensors)


def test_foreign_trace_under_electrode_is_an_error() -> None:
    # a 0.2 mm trace on the bottom crossing under the 12 mm pad: 0.2 x 12 = 2.4 mm2 under it
    d = button_board(draw("bottom-copper", [(-20, 0), (20, 0)], 0.2, "SIG", line=42))
    (f,) = run_one("routing.foreign-copper-in-zone", d)
    assert f.severity == "error" and f.value == pytest.approx(2.4, rel=1e-6)
    assert f.location.layer == "bottom-copper" and f.location.line == 42 and f.nets == ("SIG",)


def test_foreign_trace_in_zone_warns() -> None:
    # at y = 8 (2 mm outside the pad, inside the 5 mm zone) the zone is 2 x (6 + sqrt(5^2 - 2^2)) wide
    d = button_board(draw("bottom-copper", [(-20, 8), (20, 8)], 0.2, "SIG"))
    (f,) = run_one("routing.foreign-copper-in-zone", d)
    width = 2 * (6 + math.sqrt(25 - 4))
    assert f.severity == "warning" and f.value == pytest.approx(0.2 * width, rel=0.01)


@pytest.mark.parametrize("net, y", [("SIG", 15.0), ("GND", 0.0)])
def test_no_foreign_copper(net: str, y: float) -> None:
    # GOOD: outside the zone, or ground (a reference net) under the pad (judged by hatch rules)
    d = button_board(draw("bottom-copper", [(-20, y), (20, y)], 0.2, net))
    assert run_one("routing.foreign-copper-in-zone", d) == []


@pytest.mark.parametrize(
    "hole, expect",
    [
        (via(0, 8, net="SIG"), 2.0),  # BAD: signal via 2 mm from the pad, inside the 5 mm zone
        (via(0, 6.3, net="GND"), 0.3),  # BAD: ground via inside the 0.5 mm clearance
        (via(0, 8, net="GND"), None),  # GOOD: ground stitching outside the clearance
        (via(0, 12, net="SIG"), None),  # GOOD: outside the zone
        (via(0, 0, net="TOUCH1"), None),  # GOOD: the sensor's own via
    ],
)
def test_foreign_via(hole, expect) -> None:
    found = run_one("routing.foreign-via-in-zone", button_board(holes=[hole]))
    if expect is None:
        assert found == []
    else:
        (f,) = found
        assert f.severity == "error" and f.value == pytest.approx(expect) and f.location.file == "drill.drl"


def test_trace_under_other_electrode() -> None:
    # B1's trace on the bottom from (0,0) to (30,0) passes under B2 (x 24..36): 6 mm x 0.2 plus a half round cap
    bad = button_board(b1_trace=draw("bottom-copper", [(0, 0), (30, 0)], 0.2, "TOUCH1", line=7), second=True)
    (f,) = run_one("routing.trace-under-electrode", bad)
    assert f.severity == "error" and f.sensor == "B2" and f.location.line == 7
    assert f.value == pytest.approx(6 * 0.2 + math.pi * 0.1**2 / 2, rel=0.01)
    good = button_board(b1_trace=draw("bottom-copper", [(0, 0), (0, -30)], 0.2, "TOUCH1"), second=True)
    assert run_one("routing.trace-under-electrode", good) == []


@pytest.mark.parametrize(
    "shape, kind, expect",
    [
        (region("bottom-copper", box(-1, -1, 1, 1), "LED1"), "led", ("error", 4.0)),  # LED pad under the button
        (draw("top-copper", [(-10, 8.1), (10, 8.1)], 0.2, "LED1"), "led", ("warning", 2.0)),  # 2 mm away, limit 4
        (draw("top-copper", [(-10, 11.1), (10, 11.1)], 0.2, "LED1"), "led", None),  # 5 mm away
        (draw("top-copper", [(-10, 8.1), (10, 8.1)], 0.2, "CLK"), "clock", None),  # 2 mm, limit 1 mm
        (draw("top-copper", [(-10, 6.6), (10, 6.6)], 0.2, "CLK"), "clock", ("warning", 0.5)),
    ],
)
def test_aggressor_near_sensor(shape, kind, expect) -> None:
    d = button_board(shape, roles={shape.net: ("aggressor", kind)})
    found = run_one("routing.aggressor-near-sensor", d)
    if expect is None:
        assert found == []
        return
    (f,) = found
    assert f.severity == expect[0]
    if expect[0] == "error":
        assert f.value == pytest.approx(expect[1])  # the 2 x 2 mm LED pad lies wholly under the button
    else:
        assert f.value == pytest.approx(expect[1], abs=1e-6) and f.unit == "mm"


def test_aggressor_parallel_run() -> None:
    # B1's trace along y = 0 from x = 6 to 40; an LED line at y = 0.7 from x = 10 to 30 (0.2 mm wide).
    # Trace centre line within 1 mm of the LED copper: 20 mm plus 2 x sqrt(1.1^2 - 0.7^2) at the round ends.
    trace = draw("top-copper", [(6, 0), (40, 0)], 0.2, "TOUCH1")
    led = draw("top-copper", [(10, 0.7), (30, 0.7)], 0.2, "LED1")
    (f,) = run_one("routing.aggressor-parallel", button_board(led, b1_trace=trace, roles={"LED1": ("aggressor", "led")}))
    assert f.value == pytest.approx(20 + 2 * math.sqrt(1.1**2 - 0.7**2), rel=0.005)
    far = draw("top-copper", [(10, 5), (30, 5)], 0.2, "LED1")
    assert run_one("routing.aggressor-parallel", button_board(far, b1_trace=trace, roles={"LED1": ("aggressor", "led")})) == []


def two_nodes(tx2_x: float):
    """K1 at the origin (RX0 trace down x = 0 to y = -30); K2 at x = 40 whose TX trace runs to x = tx2_x, y -12..-28."""
    return two_nodes_along([(40, -7), (40, -12), (tx2_x, -12), (tx2_x, -28)])


def two_nodes_along(tx_path: list[tuple[float, float]]):
    """K1 at the origin (RX0 trace down x = 0 to y = -30); K2 at x = 40 whose TX trace follows ``tx_path``."""
    rx1, tx1 = box(-4, -4, 4, 4), box(-7, -7, 7, 7).difference(box(-5, -5, 5, 5))
    rx2, tx2 = box(36, -4, 44, 4), box(33, -7, 47, 7).difference(box(35, -5, 45, 5))
    shapes = [
        region("top-copper", rx1, "RX0"), region("top-copper", tx1, "TX0"),
        region("top-copper", rx2, "RX1"), region("top-copper", tx2, "TX1"),
        draw("bottom-copper", [(0, -4), (0, -30)], 0.2, "RX0", line=3),
        draw("bottom-copper", tx_path, 0.2, "TX1"),
    ]
    board = make_board(shapes)
    k1 = sensor("K1", "mutual-button", [with_traces(board, electrode("TX0", "transmitter", tx1)),
                                       with_traces(board, electrode("RX0", "receiver", rx1))])
    k2 = sensor("K2", "mutual-button", [with_traces(board, electrode("TX1", "transmitter", tx2)),
                                       with_traces(board, electrode("RX1", "receiver", rx2))])
    roles = {"TX0": "transmitter", "TX1": "transmitter", "RX0": "receiver", "RX1": "receiver"}
    return make_design(board, make_config(1.0), roles, [k1, k2])


def test_rx_parallel_to_other_tx() -> None:
    # RX0's centre line (x = 0) within 1 mm of TX1 copper (edge at x = 0.4): from y = -28 - sqrt(1.1^2 - 0.5^2)
    # up to where the horizontal TX1 run's round corner at (0.5, -12) stops: -12 + sqrt(1.1^2 - 0.5^2)
    (f,) = run_one("routing.rx-parallel-tx", two_nodes(0.5))
    reach = math.sqrt(1.1**2 - 0.5**2)
    assert f.value == pytest.approx(16 + 2 * reach, rel=0.01)
    assert f.sensor == "K1" and set(f.nets) == {"RX0", "TX1"} and f.location.line == 3
    assert f.severity == "warning"  # RX0 and TX1 form no node anywhere
    assert run_one("routing.rx-parallel-tx", two_nodes(5.0)) == []


def scanned_keys():
    """Four keys scanned as a 2 x 2 matrix but each its own mutual node (K<row><col>: TX column C<col>, RX row
    R<row>), and a separate node K9 (T9/R9).  On the bottom, R0's trace runs along y = -40 from x = -10 to 40;
    C1's trace along y = -40.5 from x = 10 to 30 and T9's along y = -39.5 from x = -5 to 5 (all 0.2 mm wide)."""
    def key(x: float, y: float) -> tuple:
        return box(x - 2, y - 2, x + 2, y + 2), box(x - 5, y - 5, x + 5, y + 5).difference(box(x - 3, y - 3, x + 3, y + 3))

    shapes, sensors, pads = [], [], {}
    for r in (0, 1):
        for c in (0, 1):
            rx, tx = key(20.0 * c, 20.0 * r)
            pads[r, c] = (rx, tx)
            shapes += [region("top-copper", rx, f"R{r}"), region("top-copper", tx, f"C{c}")]
    rx9, tx9 = key(60.0, 0.0)
    shapes += [region("top-copper", rx9, "R9"), region("top-copper", tx9, "T9"),
               draw("bottom-copper", [(-10, -40), (40, -40)], 0.2, "R0", line=5),
               draw("bottom-copper", [(10, -40.5), (30, -40.5)], 0.2, "C1"),
               draw("bottom-copper", [(-5, -39.5), (5, -39.5)], 0.2, "T9")]
    board = make_board(shapes)
    for (r, c), (rx, tx) in sorted(pads.items()):
        sensors.append(sensor(f"K{r}{c}", "mutual-button", [with_traces(board, electrode(f"C{c}", "transmitter", tx)),
                                                          with_traces(board, electrode(f"R{r}", "receiver", rx))]))
    sensors.append(sensor("K9", "mutual-button", [with_traces(board, electrode("T9", "transmitter", tx9)),
                                                with_traces(board, electrode("R9", "receiver", rx9))]))
    roles = {n: "transmitter" for n in ("C0", "C1", "T9")} | {n: "receiver" for n in ("R0", "R1", "R9")}
    return make_design(board, make_config(1.0), roles, sensors)


def test_rx_parallel_tx_one_finding_per_pair_and_matrix_pairs_as_notes() -> None:
    # R0 is the RX of K00 and K01, C1 the TX of K01 and K11: one finding for (R0, C1, bottom), not one per
    # pair of sensors (there were three).  R0 and C1 already form the node K01, so it is a note.  By hand:
    # the RX centre line is 0.5 mm from each TX centre line, i.e. within 1 mm of TX copper (0.1 mm half
    # width) along the TX run plus sqrt(1.1^2 - 0.5^2) past each round end.
    found = {tuple(sorted(f.nets)): f for f in run_one("routing.rx-parallel-tx", scanned_keys())}
    assert set(found) == {("C1", "R0"), ("R0", "T9")}
    reach = math.sqrt(1.1**2 - 0.5**2)
    note, warn = found["C1", "R0"], found["R0", "T9"]
    # reported under the node the run adds to (K01), not under the first node of R0 in name order (K00)
    assert note.severity == "note" and note.sensor == "K01" and "K01" in note.message
    assert note.value == pytest.approx(20 + 2 * reach, rel=0.01) and note.location.layer == "bottom-copper"
    assert note.location.line == 5 and "0.50 mm from the TX copper" not in note.message  # centre line to copper: 0.40
    assert "0.40 mm from the TX copper" in note.message
    # T9 forms no node with R0: a warning, 10 mm run plus the two ends
    assert warn.severity == "warning" and warn.value == pytest.approx(10 + 2 * reach, rel=0.01)


def test_rx_parallel_tx_total_over_several_runs_located_at_the_longest() -> None:
    # TX1 passes RX0 twice on its way down: x = 0.5 for y -12..-14 (2 mm) and y -18..-21 (3 mm), stepping
    # out to x = 5 between.  Each stretch alone is under the 5 mm limit (2 + 2 reach and 3 + 2 reach); the
    # total is reported once, at the longer run.
    tx_path = [(40, -7), (40, -12), (0.5, -12), (0.5, -14), (5, -14), (5, -18), (0.5, -18), (0.5, -21), (5, -21)]
    (f,) = run_one("routing.rx-parallel-tx", two_nodes_along(tx_path))
    reach = math.sqrt(1.1**2 - 0.5**2)
    assert f.value == pytest.approx(5 + 4 * reach, rel=0.01)
    assert f"longest run {3 + 2 * reach:.1f} mm" in f.message
    # the location's box is the longer run's: y from -21 - reach to -18 + reach on x = 0
    x0, y0, x1, y1 = f.location.box_mm
    assert (x0, x1) == (0.0, 0.0) and y0 == pytest.approx(-21 - reach, abs=0.01) and y1 == pytest.approx(-18 + reach, abs=0.01)


@pytest.mark.parametrize("angle_deg, warn", [(30.0, True), (90.0, False), (65.0, False), (45.0, True)])
def test_crossing_angle(angle_deg: float, warn: bool) -> None:
    trace = draw("top-copper", [(6, 0), (40, 0)], 0.2, "TOUCH1")
    a = math.radians(angle_deg)
    led = draw("bottom-copper", [(25 - 10 * math.cos(a), -10 * math.sin(a)), (25 + 10 * math.cos(a), 10 * math.sin(a))], 0.2, "LED1")
    found = run_one("routing.crossing-angle", button_board(led, b1_trace=trace, roles={"LED1": ("aggressor", "led")}))
    if not warn:
        assert found == []
        return
    (f,) = found
    assert f.value == pytest.approx(angle_deg, abs=1e-6)
    assert f.location.x_mm == pytest.approx(25.0) and f.location.y_mm == pytest.approx(0.0, abs=1e-9)


@pytest.mark.parametrize(
    "hole, expect",
    [
        # a ground via off the pad's corner (6, 6): within the box grown by 0.5 mm, but 0.1 x sqrt(2) = 0.14 mm
        # or 0.4 x sqrt(2) = 0.57 mm from the corner (Pythagoras): inside the clearance only for the first
        (via(6.1, 6.1, net="GND"), 0.1 * math.sqrt(2)),
        (via(6.4, 6.4, net="GND"), None),
        # a signal via off the corner: 3 x sqrt(2) = 4.24 mm (inside the 5 mm zone), 4 x sqrt(2) = 5.66 mm (outside)
        (via(9, 9, net="SIG"), 3 * math.sqrt(2)),
        (via(10, 10, net="SIG"), None),
    ],
)
def test_foreign_via_near_the_corner(hole, expect) -> None:
    found = run_one("routing.foreign-via-in-zone", button_board(holes=[hole]))
    if expect is None:
        assert found == []
    else:
        (f,) = found
        assert f.value == pytest.approx(expect, rel=1e-3)  # the zone's rounded corner is a polygon: 1e-3


def test_trace_under_electrode_of_a_net_in_several_sensors() -> None:
    # TX column C0 drives two mutual keys (K1 at x = 0, K2 at x = 20); its bottom-layer trace runs along y = 0 from
    # x = 28 to 50 under the self button B (x 34..46): one crossing, one finding (issue 16: not one per node of
    # the line), named after the first key, 12 x 0.2 mm2 (the round caps end at x = 27.9 and 50.1, outside B)
    def key(x: float) -> tuple:
        return box(x - 2, -2, x + 2, 2), box(x - 5, -5, x + 5, 5).difference(box(x - 3, -3, x + 3, 3))

    (rx1, tx1), (rx2, tx2), pad = key(0.0), key(20.0), box(34, -6, 46, 6)
    shapes = [region("top-copper", rx1, "R1"), region("top-copper", tx1, "C0"), region("top-copper", rx2, "R2"),
              region("top-copper", tx2, "C0"), region("top-copper", pad, "TOUCH"),
              draw("bottom-copper", [(28, 0), (50, 0)], 0.2, "C0", line=9)]
    board = make_board(shapes)
    keys = [sensor(name, "mutual-button", [with_traces(board, electrode("C0", "transmitter", tx)),
                                         with_traces(board, electrode(r, "receiver", rx))])
            for name, r, rx, tx in (("K1", "R1", rx1, tx1), ("K2", "R2", rx2, tx2))]
    b = sensor("B", "self-button", [with_traces(board, electrode("TOUCH", "self", pad))])
    roles = {"C0": "transmitter", "R1": "receiver", "R2": "receiver", "TOUCH": "self"}
    found = run_one("routing.trace-under-electrode", make_design(board, make_config(1.0), roles, [*keys, b]))
    assert [(f.sensor, f.nets, f.severity) for f in found] == [("B", ("C0", "TOUCH"), "error")]
    assert all(f.value == pytest.approx(12 * 0.2, rel=1e-6) and f.location.line == 9 for f in found)
    assert {f.message.split("(")[1].split(")")[0] for f in found} == {"K1"}


def test_crossing_angle_reports_the_shallowest_of_several() -> None:
    # an LED line on the bottom zigzags over B1's trace (y = 0): up at 80 deg through (15, 0), then down at
    # 30 deg through (25, 0) (slopes tan 80 and -tan 30 by construction): one finding, the 30 deg crossing
    t80, t30 = math.tan(math.radians(80)), math.tan(math.radians(30))
    led = draw("bottom-copper", [(15 - 5 / t80, -5), (15 + 5 / t80, 5), (25 - 5 / t30, 5), (25 + 5 / t30, -5)],
               0.2, "LED1")
    trace = draw("top-copper", [(6, 0), (40, 0)], 0.2, "TOUCH1")
    (f,) = run_one("routing.crossing-angle", button_board(led, b1_trace=trace, roles={"LED1": ("aggressor", "led")}))
    assert f.value == pytest.approx(30.0, abs=1e-6)
    assert f.location.x_mm == pytest.approx(25.0, abs=1e-4) and f.location.y_mm == pytest.approx(0.0, abs=1e-4)


def test_feature_index_matches_the_shared_helpers() -> None:
    # the per-run index must hand out what common.net_features / hole_nets give, and for a trace
    # what the plain rule gives: the net's draws not inside the electrode shrunk by 1 um
    from sensorcheck.rules.common import hole_nets, net_features
    from sensorcheck.rules.routing import FeatureIndex

    def trace_features(board, electrode):  # the rule written out plainly, one feature at a time
        out = {}
        for lay in board.copper_layers():
            feats = [f for f in net_features(board, lay.name, [electrode.net]) if f.path is not None]
            if lay.name == electrode.layer:
                shrunk = electrode.geometry.buffer(-1e-3)
                feats = [f for f in feats if not shrunk.contains(f.path)]
            if feats:
                out[lay.name] = feats
        return out

    inside = draw("top-copper", [(-3, 0), (3, 0)], 0.2, "TOUCH1", line=2)  # within the pad: not trace
    out = draw("top-copper", [(0, -5), (0, -20)], 0.2, "TOUCH1", line=3)  # leaves the pad: trace
    other = draw("bottom-copper", [(-20, 8), (20, 8)], 0.2, "SIG", line=4)
    d = button_board(inside, other, b1_trace=out, holes=[via(0, -20), via(10, 8), via(30, 30)])
    index = FeatureIndex(d.board)
    e = d.sensors[0].electrodes[0]
    assert index.trace(e) == trace_features(d.board, e)
    assert [f.source.line for f in index.trace(e)["top-copper"]] == [3]
    for lay in d.board.copper_layers():
        for net in ("TOUCH1", "SIG", "GND"):
            assert index.net(lay.name, net) == net_features(d.board, lay.name, [net])
    assert hole_nets(d) == {0: "TOUCH1", 1: "SIG", 2: None}
