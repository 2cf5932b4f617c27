"""area.receiver-vs-ground and the estimate-based signal.* rules, with hand-computed areas."""

from __future__ import annotations

import math

import pytest
from shapely.geometry import box

from sensorcheck.physics.estimate import SensorEstimate

from .build import electrode, make_board, make_config, make_design, region, sensor
from .helpers import run_one


def node_over_ground(with_ground: bool = True, pin: float | None = 5.0):
    """8 x 8 RX (64 mm2) in a 2 mm TX ring 1 mm away (outer 14 x 14); solid ground 40 x 40 on the bottom."""
    rx = box(-4, -4, 4, 4)
    tx = box(-7, -7, 7, 7).difference(box(-5, -5, 5, 5))
    shapes = [region("top-copper", rx, "RX0"), region("top-copper", tx, "TX0")]
    if with_ground:
        shapes.append(region("bottom-copper", box(-20, -20, 20, 20), "GND"))
    cfg = make_config(1.0)
    cfg.controller = {"max_parasitic_pf": 30.0, **({"pin_capacitance_pf": pin} if pin is not None else {})}
    s = sensor("K1", "mutual-button", [electrode("TX0", "transmitter", tx), electrode("RX0", "receiver", rx)])
    return make_design(make_board(shapes), cfg, {"TX0": "transmitter", "RX0": "receiver", "GND": "ground"}, [s])


# the ground counted lies within 10 mm of the 14 x 14 node: 14^2 + 4 x 14 x 10 + pi 10^2 (all on the bottom)
WINDOW = 14 * 14 + 4 * 14 * 10 + math.pi * 100


def est(delta: float = -0.2, pct: float = -15.0, turn: float | None = None, kind: str = "mutual",
        parasitic: float | None = None) -> SensorEstimate:
    return SensorEstimate("K1", kind, "test model", 1.0, delta, pct, turn, parasitic_pf=parasitic)  # type: ignore[arg-type]


def test_receiver_fraction_note() -> None:
    (f,) = run_one("area.receiver-vs-ground", node_over_ground())
    assert f.severity == "note" and f.unit == "%"
    assert f.value == pytest.approx(100 * 64 / WINDOW, rel=2e-3)  # buffer arcs are polygons
    assert f"{100 * 64 / 196:.1f} % of the node" in f.message  # node footprint 14 x 14


def test_receiver_without_ground_says_undefined() -> None:
    (f,) = run_one("area.receiver-vs-ground", node_over_ground(with_ground=False))
    assert f.value is None and "undefined" in f.message


def test_turnaround_replaces_the_area_note_with_an_error() -> None:
    design = node_over_ground()
    estimates = {"K1": est(turn=1.5)}
    assert run_one("area.receiver-vs-ground", design, estimates) == []
    (f,) = run_one("signal.turnaround", design, estimates)
    assert f.severity == "error" and f.value == pytest.approx(1.5) and f.unit == "mm"
    assert f"{100 * 64 / WINDOW:.1f} % of the ground" in f.message


@pytest.mark.parametrize("turn", [None, 0.0])
def test_no_turnaround_above_surface(turn: float | None) -> None:
    assert run_one("signal.turnaround", node_over_ground(), {"K1": est(turn=turn)}) == []


@pytest.mark.parametrize(
    "estimate, expect_unit",
    [
        (est(-0.2, -15.0), None),  # GOOD mutual: 0.2 pF >= 0.1, 15 % >= 10 % (common practice)
        (est(-0.05, -15.0), "fF"),  # BAD: delta below 0.1 pF (reported in fF, as every report shows the delta)
        (est(-0.2, -5.0), "%"),  # BAD: 5 % below the mutual floor 10 %
        (est(0.5, 4.0, kind="self"), None),  # GOOD self: 4 % >= 3 %
        (est(0.5, 2.0, kind="self"), "%"),  # BAD self: 2 % < 3 %
    ],
)
def test_touch_floor(estimate: SensorEstimate, expect_unit: str | None) -> None:
    found = run_one("signal.touch-below-floor", node_over_ground(), {"K1": estimate})
    if expect_unit is None:
        assert found == []
    else:
        (f,) = found
        assert f.unit == expect_unit and f.severity == "warning"


def test_parasitic_above_limit() -> None:
    (f,) = run_one("signal.parasitic-above-limit", node_over_ground(), {"K1": est(parasitic=28.0)})
    assert f.value == pytest.approx(33.0) and f.limit == 30.0 and "28.00 pF board + pin 5.00 pF" in f.message
    assert run_one("signal.parasitic-above-limit", node_over_ground(), {"K1": est(parasitic=20.0)}) == []
    (g,) = run_one("signal.parasitic-above-limit", node_over_ground(pin=None), {"K1": est(parasitic=31.0)})
    assert "pin capacitance not given" in g.message


def test_parasitic_above_limit_per_slider_channel() -> None:
    from sensorcheck.physics.estimate import SegmentEstimate

    # issue 10: a slider is judged channel by channel, not as one lumped electrode (24 pF lumped,
    # 8 pF per segment: no channel is over the 30 pF limit with the 5 pF pin)
    lumped = est(parasitic=24.3, kind="self")
    lumped.segments = [SegmentEstimate(f"S{i}", (0.0, 0.0), 5.0 * i, 8.0, 0.5) for i in range(3)]
    assert run_one("signal.parasitic-above-limit", node_over_ground(), {"K1": lumped}) == []
    # one channel over the limit: one finding that names it
    lumped.segments[1].parasitic_pf = 26.0
    (f,) = run_one("signal.parasitic-above-limit", node_over_ground(), {"K1": lumped})
    assert "channel S1" in f.message and f.value == pytest.approx(31.0) and f.nets == ("S1",)
