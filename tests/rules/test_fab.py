"""fab.* rules: paste/mask openings, floating and balancing copper, holes and edges, by construction."""

from __future__ import annotations

import pytest
import shapely
from shapely.geometry import box

from .build import Shape, electrode, make_board, make_config, make_design, region, sensor, via
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


def unnamed_button(*extra, holes=(), pins: bool = False):
    """``button`` on a board without net names: nets from connectivity (board/connectivity.py).

    The electrode's trace ends in a pad (an ``SMDPad`` flash; with ``pins``, a feature with an X2
    ``.P`` pin and no flash), so the electrode's own copper is connected.
    """
    from sensorcheck.board.connectivity import assign_nets

    pad = Shape("top-copper", box(-1, -1, 1, 1), None, kind="flash", aperture_function="SMDPad,CuDef")
    d = button(pad, *extra, holes=holes)
    for lay in d.board.copper_layers():
        for f in lay.features:
            f.net = None
        lay.dark = shapely.union_all([f.geometry for f in lay.features]) if lay.features else shapely.Polygon()
    if pins:
        for f in d.board.layer("top-copper").features:
            if f.kind == "flash" and f.geometry.equals(box(-1, -1, 1, 1)):
                f.kind, f.pin, f.component = "region", "1", "U1"
    assign_nets(d.board, None, use_x2=False)
    assert d.board.net_source == "geometry"
    return d


def _floating_places(d) -> list[tuple[str, float]]:
    return sorted((f.location.layer, round(f.value, 3)) for f in run_one("fab.floating-copper", d))


# Without net names, floating copper is copper that meets no component pad and no plated component
# hole.  The pad functions are the Gerber specification's (2023.08, .AperFunction: SMDPad,
# ComponentPad, FiducialPad; section number from memory); a fiducial is a mark, not a connection.
@pytest.mark.parametrize("pins", [False, True])
def test_floating_copper_by_geometry_without_names(pins: bool) -> None:
    far = box(9, -1, 11, 1)  # 3 mm right of the electrode
    # BAD: a bare island; a fiducial (FiducialPad flash) on its own
    assert _floating_places(unnamed_button(region("top-copper", far, None), pins=pins)) == [("top-copper", 3.0)]
    fid = Shape("top-copper", far, None, kind="flash", aperture_function="FiducialPad,Local")
    assert _floating_places(unnamed_button(fid, pins=pins)) == [("top-copper", 3.0)]
    # BAD: islands on both sides joined by a via only connect to nothing (both are reported)
    both = (region("top-copper", far, None), region("bottom-copper", far, None))
    assert _floating_places(unnamed_button(*both, holes=[via(10, 0)], pins=pins)) == [
        ("bottom-copper", 3.0), ("top-copper", 3.0)]
    # GOOD: the same islands through a plated component hole (a through-hole pin)
    assert _floating_places(unnamed_button(*both, holes=[via(10, 0, 1.0, function="component")], pins=pins)) == []
    # a pad flash: a component pad where the files give no pins; with pins, only a pin connects
    pad = Shape("top-copper", far, None, kind="flash", aperture_function="SMDPad,CuDef")
    assert _floating_places(unnamed_button(pad, pins=pins)) == ([("top-copper", 3.0)] if pins else [])


def test_floating_copper_same_with_and_without_names() -> None:
    # the named reading (copper without a net) and the geometric one agree on the same board
    island = region("top-copper", box(9, -1, 11, 1), None)
    named = button(Shape("top-copper", box(-1, -1, 1, 1), "TOUCH1", kind="flash", aperture_function="SMDPad,CuDef"),
                   island)
    assert _floating_places(named) == _floating_places(unnamed_button(island)) == [("top-copper", 3.0)]


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
