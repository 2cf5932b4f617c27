"""signal.turnaround: every turn and sign reversal of the approach curves, with height, kind and severity.

Outside reference: approach curves in closed form whose extremum and zero are solved by hand
(see tests/physics/test_turnarounds.py for the derivation): ``s(h) = A/(h + d) - B/(h + D)``
with A = 1, d = 0.5, B = 4, D = 5 falls to its extremum at h* = 4 mm, crosses zero at h0 = 1 mm and
reads +1.2 at touch (a floating object over a mutual key); with B = 20 it peaks at 0.796 mm and
stays negative (a weak return path).  Severities are the rule's documented choice.
"""

from __future__ import annotations

import pytest

from sensorcheck.physics.estimate import SensorEstimate, Turn
from sensorcheck.physics.finger import turnarounds
from sensorcheck.physics.sensors import approach_heights
from sensorcheck.rules.signal import turning_place

from .helpers import run_one
from .test_area_signal import node_over_ground

HS = approach_heights(24, 20.0)
BASE = 1.0


def _curve(a: float, d: float, b: float, dd: float, scale: float = 0.1) -> list[tuple[float, float]]:
    return [(h, BASE + scale * (a / (h + d) - b / (h + dd))) for h in HS]


REVERSES = _curve(1.0, 0.5, 4.0, 5.0)  # turns at 4 mm, reverses sign at 1 mm
PEAKS = _curve(1.0, 0.5, 20.0, 5.0)  # turns at 0.796 mm, stays negative
MONOTONIC = [(h, BASE - 0.1 / (h + 0.5)) for h in HS]
DIP = [(h, BASE + v) for h, v in zip(HS[-5:], [-0.1, -0.5, -0.4, -0.8, -1.0])]  # recovers, strongest at touch


def _est(curve, centre=None, kind: str = "mutual") -> SensorEstimate:
    turns = turnarounds(curve, BASE) + (turnarounds(centre, BASE, over="centre") if centre else [])
    turns.sort(key=lambda t: -t.height_mm)
    return SensorEstimate("K1", kind, "test model", BASE, curve[-1][1] - BASE, 100 * (curve[-1][1] - BASE) / BASE,  # type: ignore[arg-type]
                          turns[0].height_mm if turns else None, curve=curve, best_point_mm=(1.0, 2.0),
                          curve_centre=centre or [], centre_mm=(0.0, 0.0) if centre else None, turnarounds=turns)


def test_a_sign_reversal_is_an_error_naming_both_changes_with_their_heights() -> None:
    (f,) = run_one("signal.turnaround", node_over_ground(), {"K1": _est(REVERSES)})
    assert f.severity == "error" and f.unit == "mm"
    assert f.value == pytest.approx(4.0, rel=0.05)  # the highest change: the turn at h* = 4 mm
    assert "turns at 4" in f.message and "reverses sign at 1.0" in f.message
    assert "opposite of a touch" in f.message


def test_a_peak_that_falls_back_is_an_error_as_before() -> None:
    (f,) = run_one("signal.turnaround", node_over_ground(), {"K1": _est(PEAKS)})
    assert f.severity == "error" and f.value == pytest.approx(0.796, rel=0.05)
    assert "reverses sign" not in f.message and "a press reads as a release" in f.message


def test_self_sensors_are_judged_alike() -> None:
    # a self electrode's capacitance rises at touch; the mirrored curve turns the same way
    mirrored = [(h, 2 * BASE - v) for h, v in REVERSES]
    (f,) = run_one("signal.turnaround", node_over_ground(), {"K1": _est(mirrored, kind="self")})
    assert f.severity == "error" and "reverses sign at 1.0" in f.message


def test_a_dip_that_recovers_is_a_warning() -> None:
    (f,) = run_one("signal.turnaround", node_over_ground(), {"K1": _est(DIP)})
    assert f.severity == "warning" and f.message.count("turns at") == 2
    assert "strongest" in f.message


def test_a_monotonic_curve_passes_and_the_margin_lifts_the_bar() -> None:
    assert run_one("signal.turnaround", node_over_ground(), {"K1": _est(MONOTONIC)}) == []
    # a margin above the reversal (1 mm) but below the turn (4 mm): the turn alone is reported
    (f,) = run_one("signal.turnaround", node_over_ground(), {"K1": _est(REVERSES)}, margin_mm=2.0)
    assert "reverses sign" not in f.message and f.severity == "error"  # the press still reads weaker than 4 mm
    assert run_one("signal.turnaround", node_over_ground(), {"K1": _est(REVERSES)}, margin_mm=5.0) == []


def test_the_finding_goes_to_the_curve_with_the_highest_change_and_names_both_curves() -> None:
    est = _est(PEAKS, centre=REVERSES)
    place, which = turning_place(est)
    assert which == "centre" and place == (0.0, 0.0)
    (f,) = run_one("signal.turnaround", node_over_ground(), {"K1": est})
    assert f.location.x_mm == 0.0 and f.location.y_mm == 0.0
    centre_part, best_part = f.message.split("; and ")
    assert "node centre" in centre_part and "reverses sign" in centre_part
    assert "most sensitive point" in best_part and "reverses sign" not in best_part


def test_an_estimate_built_without_turnarounds_gets_them_from_its_curves() -> None:
    est = _est(REVERSES)
    est.turnarounds = []
    (f,) = run_one("signal.turnaround", node_over_ground(), {"K1": est})
    assert "reverses sign at 1.0" in f.message
    assert [t.kind for t in _est(REVERSES).turnarounds] == ["turns", "reverses sign"]
    assert isinstance(_est(REVERSES).turnarounds[0], Turn)
