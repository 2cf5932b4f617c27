"""A revision's effect on a sensor, in the direction physics says (outside sources beside each check).

Direction tests (any electrostatics text: a self electrode's capacitance to a touching finger is
that of the plate pair finger-overlay-electrode, C = eps0 eps_r A / d in the parallel-plate limit):
a larger electrode under the same overlay gains touch delta (A grows); a thicker overlay loses it
(d grows); a ground plane added under a self button adds the electrode-to-ground plate capacitance
to the baseline (the parasitic rises) while the finger's share stays, so the % change falls.

Size of a change: a large pad under a thin overlay, touched by a finger much wider than the
overlay is thick, is a circular plate capacitor; doubling the overlay thickness halves the
parallel-plate capacitance.  Kirchhoff's edge correction for a circular plate capacitor
(G. Kirchhoff 1877; C = eps [pi r^2 / d + r (ln(16 pi r / d) - 1)], quoted from memory, e.g. in
Norgren and Jonsson, PIER 97 (2009)) makes the change a little smaller than -50 %.
"""

from __future__ import annotations

import math

import pytest

from sensorcheck.physics.model import SolverOptions

from sensorcheck.compare.changes import compare_sides
from sensorcheck.design.model import Finger
from sensorcheck.physics.cache import WindowCache

from .helpers import buttons, side_of


def _one(old, new):
    cmp = compare_sides(side_of(old, "old"), side_of(new, "new"))
    return {s.name: s for s in cmp.sensors}


def test_a_larger_electrode_under_the_same_overlay_gains_touch_delta() -> None:
    s = _one(buttons((5.0,)), buttons((7.0,)))["B1"]
    assert s.status == "changed" and s.matched_by == "geometry"
    assert s.values["touch_delta_pf"].relative_percent > 10.0
    # the baseline grows with the area too, so the % change may fall: the loss the gate reads is the
    # larger of the two falls, here the % change's (never the delta's, which rose)
    pc = s.values["percent_change"].relative_percent
    assert s.loss_percent == pytest.approx(max(-pc, -s.values["touch_delta_pf"].relative_percent))
    # copper inside the zone (the union of the old and new outline grown by 1 mm: a disc of r 8): the
    # old gap ring r 5-6.5 is copper now (electrode), the old ground ring r 7-8 is gone (the new gap
    # r 7-8.5); copper of any net, as the layer's image holds it (24-gons: within 2 %)
    top = {c.layer: c for c in s.copper}["top-copper"]
    assert top.added_mm2 == pytest.approx(math.pi * (6.5 ** 2 - 5 ** 2), rel=0.02)
    assert top.removed_mm2 == pytest.approx(math.pi * (8 ** 2 - 7 ** 2), rel=0.02)


def test_a_thicker_overlay_loses_touch_delta() -> None:
    s = _one(buttons((5.0,), overlay_mm=1.0), buttons((5.0,), overlay_mm=2.0))["B1"]
    assert s.values["touch_delta_pf"].relative_percent < -10.0
    assert s.loss_percent > 10.0
    assert s.copper == []  # the copper did not change, the overlay did


def test_ground_added_under_a_self_button_raises_parasitic_and_lowers_percent_change() -> None:
    s = _one(buttons((5.0,)), buttons((5.0,), ground_under=True))["B1"]
    assert s.values["parasitic_pf"].relative_percent > 20.0
    assert s.values["percent_change"].relative_percent < -10.0
    bottom = {c.layer: c for c in s.copper}["bottom-copper"]
    assert bottom.added_mm2 > 0 and bottom.removed_mm2 == 0


@pytest.mark.slow
def test_doubling_a_thin_overlay_over_a_large_pad_halves_the_touch_delta() -> None:
    # a 30 mm pad, a 16 mm finger earthed through a very large body capacitance (so the plate pair is
    # the whole series chain), 0.25 mm -> 0.5 mm of eps_r 2.8; default mesh
    finger = Finger(16.0, 20.0, 1e5, None)
    s = _one(buttons((15.0,), overlay_mm=0.25, estimate={}, finger=finger),
             buttons((15.0,), overlay_mm=0.5, estimate={}, finger=finger))["B1"]
    r, eps0, eps = 8.0, 8.854187817e-3, 2.8  # mm, pF/mm
    # the model puts the finger on a film of air of SolverOptions.touch_gap_mm (a stated model
    # choice): in series with the overlay it reads as eps * gap more dielectric thickness
    film_mm = eps * SolverOptions().touch_gap_mm

    def kirchhoff_pf(d: float) -> float:  # edge-corrected circular capacitor (Kirchhoff; from memory)
        return eps0 * eps * (math.pi * r * r / d + r * (math.log(16 * math.pi * r / d) - 1))

    assert 100.0 * (kirchhoff_pf(0.5) / kirchhoff_pf(0.25) - 1.0) == pytest.approx(-47.7, abs=0.1)  # no film
    closed = 100.0 * (kirchhoff_pf(0.5 + film_mm) / kirchhoff_pf(0.25 + film_mm) - 1.0)  # -42.5 %
    rel = s.values["touch_delta_pf"].relative_percent
    # parallel-plate limit -50 % (-44.9 % with the film), edge-corrected -42.5 %: the solver within
    # 2 points of the corrected one
    assert rel == pytest.approx(closed, abs=2.0)
    # the plate pair's size itself: within 15 % of the closed form at both thicknesses
    for d, c in ((0.25, s.values["touch_delta_pf"].old), (0.5, s.values["touch_delta_pf"].new)):
        assert c == pytest.approx(kirchhoff_pf(d + film_mm), rel=0.15)
    # the pad's own capacitance (no finger) barely moves with the overlay
    assert abs(s.values["baseline_pf"].relative_percent) < 3.0


def test_an_unchanged_window_is_not_solved_again() -> None:
    # two buttons; the new revision enlarges B2 only: the old side solves two windows, the new one
    # solves B2 alone and takes B1 from the cache (counted, not timed)
    cache = WindowCache()
    old = side_of(buttons((5.0, 5.0)), "old", cache)
    assert (cache.solved, cache.hits) == (1, 0)  # B1 and B2 are twins: one solve
    new = side_of(buttons((5.0, 6.0)), "new", cache)
    assert (cache.solved, cache.hits) == (2, 1)
    cmp = compare_sides(old, new)
    by = {s.name: s for s in cmp.sensors}
    assert by["B1"].status == "unchanged" and by["B2"].status == "changed"
