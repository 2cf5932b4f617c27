"""The demo pair: revision B -> revision C (boards/README.md, "Revision C and its comparison").

Outside sources: the direction and rough size of the overlay's effect (a plate pair through the
overlay, C = eps0 eps_r A / d: 2 -> 3 mm of PMMA is -33 % for the plate term alone; fringing and
the finger's series path keep every loss between 20 and 50 %), and the geometry the demo script
states for revision C (the LED line under BTN2, its via 1.7 mm from BTN2's edge).  The window
count is a count: every window changes with the overlay, so ten are solved.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from sensorcheck.commands.compare import compare_paths
from sensorcheck.compare.changes import apply_gate
from sensorcheck.compare.sides import SideSpec

BOARDS = Path(__file__).resolve().parents[2] / "boards"


@pytest.mark.slow
def test_revision_c_loses_signal_everywhere_and_btn2_gets_the_led_line() -> None:
    cmp = compare_paths(SideSpec("old", str(BOARDS / "tm1-clean")), SideSpec("new", str(BOARDS / "tm1-revc")))
    assert cmp.windows_solved == 10 and cmp.windows_reused == 0
    by = {s.name: s for s in cmp.sensors}
    assert set(by) == {"K1", "K2", "BTN1", "BTN2", "minutes"}
    for s in by.values():
        assert s.matched_by == "geometry" and s.overlap == pytest.approx(1.0) and not s.renamed
        assert 20.0 < s.loss_percent < 50.0, (s.name, s.loss_percent)
        assert s.values["touch_delta_pf"].relative_percent < -20.0
    btn2 = by["BTN2"]
    assert {f.rule_id for f in btn2.new_findings} >= {"routing.aggressor-near-sensor", "routing.foreign-via-in-zone"}
    bottom = {c.layer: c for c in btn2.copper}["bottom-copper"]
    assert bottom.added_mm2 > 40.0  # the line and the pour's rims along it
    assert not by["BTN1"].copper  # nothing moved near BTN1
    gate = apply_gate(cmp, 10.0, "error")
    assert len(gate.losses) == 5 and gate.losses[0][0] in ("BTN1", "BTN2")
