"""fab.* rules: paste/mask openings, floating and balancing copper, holes and edges, by construction."""

from __future__ import annotations

import pytest
from shapely.geometry import box

from .build import electrode, make_board, make_config, make_design, region, sensor, via
from .helpers import run_one

PAD = box(-6, -6, 6, 6)


def button(*extra, holes=(), outline=None):
    board = make_board([region("top-copper", PAD, "TOUCH1"), *extra], holes=holes, outline=outline)
    s = sensor("B1", "self-button", [electrode("TOUCH1", "self", PAD)])
    return make_design(board, make_config(1.0), {"TOUCH1": "self", "GND": "ground"}, [s])


@pytest.mark.parametrize(
    "rule, layer, severity",
    [("fab.paste-on-electrode", "top-paste", "error"), ("fab.mask-opening-on-electrode", "top-mask", "warning")],
)
def test_openings_on_electrode(rule: str, layer: str, severity: str) -> None:
    # BAD: a 3 x 3 opening (9 mm2) on the pad, its right half off the pad edge -> 1.5 x 3 = 4.5 mm2 on copper
    (f,) = run_one(rule, button(region(layer, box(4.5, 0, 7.5, 3), None, line=5)))
    assert f.severity == severity and f.value == pytest.approx(4.5) and f.location.line == 5
    # GOOD: an opening elsewhere, or on the other side
    assert run_one(rule, button(region(layer, box(20, 20, 23, 23), None))) == []
    other = layer.replace("top", "bottom")
    assert run_one(rule, button(region(other, box(-1, -1, 1, 1), None))) == []


@pytest.mark.parametrize("distance, warn", [(3.0, True), (15.0, False)])
def test_floating_copper(distance: float, warn: bool) -> None:
    island = region("top-copper", box(6 + distance, -1, 8 + distance, 1), None)  # no net
    found = run_one("fab.floating-copper", button(island))
    assert bool(found) == warn
    if warn:
        assert found[0].value == pytest.approx(distance)


def test_floating_copper_needs_net_names() -> None:
    from sensorcheck.rules.engine import run_rules

    d = button(region("top-copper", box(9, -1, 11, 1), None))
    d.board.net_source = "geometry"  # no X2 nets, no IPC-D-356: every island is unnamed
    (f,) = [f for f in run_rules(d).findings if f.rule_id == "fab.floating-copper"]
    assert f.severity == "note" and "IPC-D-356" in f.message


@pytest.mark.parametrize("distance, warn", [(4.0, True), (20.0, False)])
def test_copper_balancing(distance: float, warn: bool) -> None:
    dots = region("top-copper", box(6 + distance, 0, 7 + distance, 1), None, aperture_function="CopperBalancing")
    found = run_one("fab.copper-balancing", button(dots))
    assert bool(found) == warn
    if warn:
        assert found[0].value == pytest.approx(distance)


@pytest.mark.parametrize(
    "hole, expect",
    [
        (via(14, 0, d=3.2, function="mechanical", plated=False), None),  # GOOD: edge 8 - 1.6 = 6.4 mm away
        (via(11, 0, d=3.2, function="mechanical", plated=False), 3.4),  # BAD: 5 - 1.6 = 3.4 < 5 mm
        (via(8, 0, d=0.3, net="SIG"), None),  # a via: routing.foreign-via-in-zone's job
    ],
)
def test_hole_near_sensor(hole, expect) -> None:
    found = run_one("fab.hole-near-sensor", button(holes=[hole]))
    if expect is None:
        assert found == []
    else:
        (f,) = found
        assert f.value == pytest.approx(expect) and f.location.file == "drill.drl"


@pytest.mark.parametrize("margin, warn", [(1.0, True), (3.0, False)])
def test_board_edge(margin: float, warn: bool) -> None:
    outline = box(-6 - margin, -20, 40, 20)
    found = run_one("fab.board-edge-near-sensor", button(outline=outline))
    assert bool(found) == warn
    if warn:
        assert found[0].value == pytest.approx(margin) and found[0].limit == 2.0
