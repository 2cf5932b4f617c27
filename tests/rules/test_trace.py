"""trace.* rules: widths, lengths and via counts by construction; the parasitic budget by hand from
the closed forms (which tests/physics checks against handbook examples)."""

from __future__ import annotations

import pytest
from shapely.geometry import box

from sensorcheck.physics.estimate import SensorEstimate
from sensorcheck.physics.parasitics import microstrip_pf_per_mm, parallel_plate_pf, via_capacitance_pf

from .build import draw, electrode, make_board, make_config, make_design, region, sensor, square_hatch, via, with_traces
from .helpers import run_one

PAD = box(-6, -6, 6, 6)


def button(trace_shapes=(), holes=(), ground=None, fab=None, controller=None):
    shapes = [region("top-copper", PAD, "TOUCH1"), *trace_shapes]
    if ground is not None:
        shapes.append(region("bottom-copper", ground, "GND"))
    board = make_board(shapes, holes=holes)
    cfg = make_config(1.0)
    cfg.fabrication = fab or {}
    cfg.controller = controller or {}
    s = sensor("B1", "self-button", [with_traces(board, electrode("TOUCH1", "self", PAD))])
    return make_design(board, cfg, {"TOUCH1": "self", "GND": "ground"}, [s])


@pytest.mark.parametrize(
    "width, fab_min, expect",
    [
        (0.2, None, None),  # GOOD: 0.2 <= 0.25 mm (common practice)
        (0.5, None, ("warning", 0.25)),  # BAD: wide trace
        (0.1, 0.15, ("error", 0.15)),  # BAD: below the fabrication minimum
    ],
)
def test_trace_width(width, fab_min, expect) -> None:
    d = button([draw("top-copper", [(6, 0), (30, 0)], width, "TOUCH1", line=12)],
               fab={"min_width_mm": fab_min} if fab_min else None)
    found = run_one("trace.width", d)
    if expect is None:
        assert found == []
        return
    (f,) = found
    assert (f.severity, f.limit) == expect and f.value == pytest.approx(width) and f.location.line == 12


@pytest.mark.parametrize("length, warn", [(250.0, False), (350.0, True)])
def test_trace_length(length: float, warn: bool) -> None:
    # an L-shaped route: 6 -> 106 along x, then down; total centre-line length = length
    pts = [(6, 0), (106, 0), (106, -(length - 100))]
    found = run_one("trace.length", button([draw("bottom-copper", pts, 0.2, "TOUCH1")]))
    assert bool(found) == warn
    if warn:
        assert found[0].value == pytest.approx(length) and found[0].limit == 300.0


@pytest.mark.parametrize("count, warn", [(2, False), (3, True)])
def test_via_count(count: int, warn: bool) -> None:
    trace = draw("top-copper", [(6, 0), (40, 0)], 0.2, "TOUCH1")
    # the vias carry no net in the drill file: their net comes from the copper they land on
    holes = [via(10 + 5 * i, 0, net=None) for i in range(count)]
    found = run_one("trace.via-count", button([trace], holes=holes))
    assert bool(found) == warn
    if warn:
        assert found[0].value == count and found[0].limit == 2


def budget_design(ground, limit_pf: float, holes=()):
    trace = draw("top-copper", [(6, 0), (106, 0)], 0.2, "TOUCH1")  # 100 mm
    return button([trace], holes=holes, ground=ground, controller={"max_parasitic_pf": limit_pf, "pin_capacitance_pf": 5.0})


def expected_solid(vias: int = 0) -> float:
    # 2-layer board, 1.5 mm FR-4 (eps_r 4.5), solid ground under everything:
    # pad 144 mm2 as a parallel plate + 100 mm of 0.2 mm microstrip (Hammerstad-Jensen) + vias + 5 pF pin
    via_pf = via_capacitance_pf(4.5, 1.57, 0.3 + 0.3, 0.6 + 0.5)
    return parallel_plate_pf(144, 1.5, 4.5) + 100 * microstrip_pf_per_mm(0.2, 1.5, 4.5) + vias * via_pf + 5.0


@pytest.mark.parametrize("limit, expect", [(10.0, "error"), (15.0, "warning"), (20.0, None)])
def test_parasitic_budget_solid_ground(limit: float, expect: str | None) -> None:
    total = expected_solid()  # about 3.8 + 4.0 + 5 = 12.8 pF
    assert 12.0 < total < 13.5
    found = run_one("trace.parasitic-budget", budget_design(box(-50, -50, 150, 50), limit))
    if expect is None:
        assert found == []
        return
    (f,) = found
    assert f.severity == expect and f.value == pytest.approx(total, rel=1e-4) and f.limit == limit


def test_parasitic_budget_counts_vias() -> None:
    holes = [via(50, 0, d=0.3, net="TOUCH1")]
    (f,) = run_one("trace.parasitic-budget", budget_design(box(-50, -50, 150, 50), 10.0, holes))
    assert f.value == pytest.approx(expected_solid(vias=1), rel=1e-4)


def test_parasitic_budget_is_hatch_corrected() -> None:
    # a 25 % hatch under the board: plate and trace terms scale (to first order) with the fill
    hatch = square_hatch(-10, -10, 112, 10, 0.18, 1.14)  # covers the pad and the trace corridor
    (f,) = run_one("trace.parasitic-budget", budget_design(hatch, 6.0))
    solid_board = expected_solid() - 5.0
    assert f.value - 5.0 == pytest.approx(0.25 * solid_board, rel=0.1)


def test_estimate_takes_over_the_budget() -> None:
    e = SensorEstimate("B1", "self", "m", 10.0, 0.5, 5.0, None, parasitic_pf=8.0)
    assert run_one("trace.parasitic-budget", budget_design(box(-50, -50, 150, 50), 10.0), {"B1": e}) == []
