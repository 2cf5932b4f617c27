"""hatch.* rules: fills measured from the copper image against the closed form for square hatch
(fill = 1 - (g/(g+w))^2, derived; reference note layout-rules.md 1.6) and hand-computed areas."""

from __future__ import annotations

import math

import pytest
import shapely
from shapely.geometry import box

from sensorcheck.physics.parasitics import EPS0_F_PER_M
from sensorcheck.rules.hatch import measure_hatch

from .build import electrode, make_board, make_config, make_design, region, sensor, square_hatch, stackup_2layer, stackup_4layer
from .helpers import run_one


def closed_form(w: float, g: float) -> float:
    return 1.0 - (g / (g + w)) ** 2


@pytest.mark.parametrize(
    "w, g, pct",
    [
        (0.18, 1.14, 25.0),  # 7 mil lines, 45 mil openings -> 25 % (catalogue figure, common practice)
        (0.18, 1.78, 17.0),  # 7 mil / 70 mil -> 17 %
        (0.127, 1.143, 19.0),  # 5 mil lines at 50 mil pitch -> 19 %
        (0.5, 0.5, 75.0),  # a dense hatch: 1 - 1/4
    ],
)
def test_measure_hatch_against_closed_form(w: float, g: float, pct: float) -> None:
    n = 12
    p = w + g
    hatch = square_hatch(0, 0, n * p + w, n * p + w, w, g)
    m = measure_hatch(hatch, box(0, 0, n * p, n * p))  # a window of whole periods
    assert m.fill == pytest.approx(closed_form(w, g), rel=1e-9)
    assert 100 * m.fill == pytest.approx(pct, abs=0.6)  # the rounded catalogue figure
    assert m.opening_mm == pytest.approx(g, rel=1e-9)
    assert m.line_mm == pytest.approx(w, rel=1e-9)
    # openings touching the window edge are not closed; floating point decides for the last row
    assert (n - 1) ** 2 <= m.openings <= n**2


def test_measure_solid_and_empty() -> None:
    m = measure_hatch(box(0, 0, 10, 10), box(0, 0, 5, 5))
    assert m.fill == 1.0 and m.opening_mm is None
    assert measure_hatch(box(20, 20, 30, 30), box(0, 0, 5, 5)).fill == 0.0


def button_with_ground(ground, kind="self-button", gap_mm=1.0):
    """12 x 12 mm button; ground copper ``ground`` minus the button grown by ``gap_mm``."""
    pad = box(-6, -6, 6, 6)
    g = ground.difference(pad.buffer(gap_mm, join_style="mitre"))
    board = make_board([region("top-copper", pad, "TOUCH1"), region("top-copper", g, "GND")])
    role = "self" if kind == "self-button" else "receiver"
    s = sensor("B1", kind, [electrode("TOUCH1", role, pad)])
    return make_design(board, make_config(1.0), {"TOUCH1": role, "GND": "ground"}, [s])


# the 10 mm ring around a 12 x 12 square (rounded corners): 48 x 10 + pi 10^2; the ground is cut back
# 1 mm with mitred corners, so the empty gap band is 14^2 - 12^2
RING = 48 * 10 + math.pi * 100
GAP_MITRE = 14 * 14 - 144  # band of the square grown 1 mm with mitred corners: 14^2 - 12^2 = 52


def test_solid_pour_near_self_button_warns_with_hand_computed_fill() -> None:
    design = button_with_ground(box(-30, -30, 30, 30))
    (f,) = run_one("hatch.fill-near-sensor", design)
    expect = 100 * (RING - GAP_MITRE) / RING  # everything in the ring but the gap band is copper
    assert f.value == pytest.approx(expect, rel=0.005)  # buffer arcs are polygons: 0.5 %
    assert f.severity == "warning" and f.limit == 40.0 and f.location.layer == "top-copper"
    assert "no hatch openings" in f.message
    # 0-2 mm ring: 48 x 2 + pi 2^2 mm2, of which the mitred 1 mm gap band (52 mm2) is empty
    ring2 = 48 * 2 + math.pi * 4
    assert f"rings 0-2/2-5/5-10 mm: {100 * (ring2 - GAP_MITRE) / ring2:.0f}/100/100 %" in f.message


def test_light_hatch_near_self_button_passes_and_dense_warns() -> None:
    light = square_hatch(-17, -17, 17, 17, 0.18, 1.14)  # 25 %, covers the 10 mm ring
    assert run_one("hatch.fill-near-sensor", button_with_ground(light)) == []
    dense = square_hatch(-17, -17, 17, 17, 0.5, 0.5)  # 75 %
    (f,) = run_one("hatch.fill-near-sensor", button_with_ground(dense))
    # expected: closed form times the copper-bearing share of the ring (ring edges cut the hatch
    # at random phase: 3 % relative)
    expect = 100 * closed_form(0.5, 0.5) * (RING - GAP_MITRE) / RING
    assert f.value == pytest.approx(expect, rel=0.03)
    assert "hatch line 0.50 mm, opening 0.50 mm" in f.message
    assert "rings 0-2/2-5/5-10 mm: " in f.message


def test_mutual_sensor_gets_a_note_not_a_warning() -> None:
    (f,) = run_one("hatch.fill-near-sensor", button_with_ground(box(-30, -30, 30, 30), kind="mutual-button"))
    assert f.severity == "note"


def pad_over(layer: str, ground, stackup):
    pad = box(-6, -6, 6, 6)
    layers = ("top-copper", "inner1-copper", "inner2-copper", "bottom-copper") if stackup.layers[2].copper_layer != "bottom-copper" else ("top-copper", "bottom-copper")
    board = make_board([region("top-copper", pad, "TOUCH1"), region(layer, ground, "GND")], stackup=stackup, copper_layers=layers)
    s = sensor("B1", "self-button", [electrode("TOUCH1", "self", pad)])
    return make_design(board, make_config(1.0), {"TOUCH1": "self", "GND": "ground"}, [s])


def plate_pf(area_mm2: float, h_mm: float, eps: float) -> float:
    return EPS0_F_PER_M * eps * area_mm2 * 1e-6 / (h_mm * 1e-3) * 1e12


def test_solid_close_ground_under_self_is_an_error() -> None:
    # four-layer board, solid L2 ground 0.2 mm below a 144 mm2 pad: 28.7 pF by eps0 eps_r A / h
    design = pad_over("inner1-copper", box(-20, -20, 20, 20), stackup_4layer(prepreg_mm=0.2))
    (f,) = run_one("hatch.ground-under-self", design)
    assert f.severity == "error" and f.value == pytest.approx(0.2) and f.location.layer == "inner1-copper"
    assert f"{plate_pf(144, 0.2, 4.5):.2f} pF" in f.message


def test_solid_far_ground_warns_light_hatch_passes() -> None:
    design = pad_over("bottom-copper", box(-20, -20, 20, 20), stackup_2layer(core_mm=1.5))
    (f,) = run_one("hatch.ground-under-self", design)
    # the solid plane fills 100 % of the electrode's footprint, above the 50 % limit: that metric
    # triggered it, so it is the one reported; the added capacitance (parallel plate) is in the text
    assert f.severity == "warning" and f.value == pytest.approx(100.0) and f.limit == 50.0 and f.unit == "%"
    assert f"{plate_pf(144, 1.5, 4.5):.2f} pF" in f.message
    light = square_hatch(-20, -20, 20, 20, 0.18, 1.14)
    assert run_one("hatch.ground-under-self", pad_over("bottom-copper", light, stackup_2layer(1.5))) == []


def test_opening_is_not_pulled_down_by_cut_openings() -> None:
    # a 0.5/1.5 mm hatch (the designed opening 1.5 mm) with a few openings partly filled by pads:
    # the median opening stays the designed one (a mean would not)
    hatch = square_hatch(0, 0, 20 * 2.0 + 0.5, 20 * 2.0 + 0.5, 0.5, 1.5)
    pads = shapely.union_all([box(0.5 + 2 * k, 0.5, 1.5 + 2 * k, 1.5) for k in range(5)])  # fill half of 5 openings
    m = measure_hatch(hatch.union(pads), box(0, 0, 40, 40))
    assert m.opening_mm == pytest.approx(1.5, rel=1e-9)
    assert m.line_mm == pytest.approx(0.5, rel=1e-9)


def test_overlapping_nets_are_merged_not_counted_twice() -> None:
    """Two nets drawn over each other (a bad export): the fill counts their copper once.

    The ground pour fills the ring but the 1 mm mitred gap band (hand value as above); a second net
    covers the same 60 x 60 mm square again.  Summing the two would pass 100 % of the ring.
    """
    pad = box(-6, -6, 6, 6)
    copper = box(-30, -30, 30, 30).difference(pad.buffer(1.0, join_style="mitre"))
    board = make_board([region("top-copper", pad, "TOUCH1"), region("top-copper", copper, "GND"),
                        region("top-copper", copper, "SHIELD_COPY")])
    s = sensor("B1", "self-button", [electrode("TOUCH1", "self", pad)])
    design = make_design(board, make_config(1.0), {"TOUCH1": "self", "GND": "ground"}, [s])
    (f,) = run_one("hatch.fill-near-sensor", design)
    assert f.value == pytest.approx(100 * (RING - GAP_MITRE) / RING, rel=0.005)


def test_copper_beyond_the_ring_in_its_box_decides_nothing() -> None:
    """The box bound only skips work: copper in the box's corners outside the ring must not count.

    A light hatch (0.25 mm lines, 1.14 mm openings) fills the 10 mm ring at about 31 %; solid
    copper of another net fills the box's four rounded-off corners, 32^2 - (12^2 + 4 x 12 x 10 +
    pi 10^2) = 85.8 mm2 (hand value), which lifts the box's copper above 40 % of the ring's area,
    so the exact measure runs, and finds the ring itself under the limit: no finding.
    """
    pad = box(-6, -6, 6, 6)
    reach = pad.buffer(10.0, quad_segs=64)
    light = square_hatch(-17, -17, 17, 17, 0.25, 1.14).intersection(reach).difference(
        pad.buffer(1.0, join_style="mitre"))
    corners = box(-16, -16, 16, 16).difference(reach)
    assert corners.area == pytest.approx(32**2 - (144 + 480 + math.pi * 100), rel=1e-3)
    board = make_board([region("top-copper", pad, "TOUCH1"), region("top-copper", light, "GND"),
                        region("top-copper", corners, "LED")])
    s = sensor("B1", "self-button", [electrode("TOUCH1", "self", pad)])
    design = make_design(board, make_config(1.0), {"TOUCH1": "self", "GND": "ground"}, [s])
    ring = reach.difference(pad)
    assert 100 * (light.area + corners.area) / ring.area > 40.0  # the bound cannot decide
    assert 100 * light.area / ring.area < 40.0  # the ring can
    assert run_one("hatch.fill-near-sensor", design) == []
