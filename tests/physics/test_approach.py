"""Adaptive approach heights (physics/approach.py): the interpolation error is bounded.

Checked two ways: against closed-form curves (the exact value at every fixed height is known), and,
as issue 10 asks, against the fixed 12-height curve of the field solver on an invented button whose
signal turns around.  The work is bounded by counting solves, never by timing.
"""

from __future__ import annotations

import numpy as np
import pytest

from .designs import button
from sensorcheck.design.model import Finger
from sensorcheck.physics.approach import adaptive_curve
from sensorcheck.physics.finger import turning_point
from sensorcheck.physics.sensors import SolverOptions, approach_heights, estimate_with

HEIGHTS = approach_heights(12, 20.0)
FAST = {"h_edge_mm": 1.0, "h_near_mm": 1.5, "h_far_mm": 4.0, "window_mm": 10.0, "finger_sides": 16, "search": False}
WEAK = Finger(8.0, 20.0, 150.0, 15.0)  # a battery product: 15 pF device ground to earth (scenario)


def _dipole(h: float) -> float:
    # a monotonic approach (closed form of our own): baseline 1, signal like a finger's image charge
    return 1.0 - 0.2 / (1.0 + (h / 3.0) ** 2) ** 1.5


def _turning(h: float) -> float:
    # a signal that peaks near 1.5 mm and falls back at touch (a weak return path), closed form
    x = np.log(h + 0.05)
    return 2.0 - 0.3 * np.exp(-((x - np.log(1.55)) ** 2) / 1.2)


@pytest.mark.parametrize("f,base", [(_dipole, 1.0), (_turning, 2.0)])
def test_adaptive_points_are_within_one_percent_of_the_swing_of_the_exact_curve(f, base) -> None:
    calls: list[float] = []

    def solve(h: float) -> float:
        calls.append(h)
        return float(f(h))

    curve, solved = adaptive_curve(solve, HEIGHTS, base)
    exact = [f(h) for h in HEIGHTS]
    swing = max(abs(v - base) for v in exact)
    assert max(abs(v - e) for (_, v), e in zip(curve, exact)) <= 0.01 * swing
    assert len(calls) == sum(solved) <= len(HEIGHTS)  # none twice
    assert solved[-1]  # the touch is always solved
    # the turning point rests on solved values only: the same as from the exact curve
    tp_exact = turning_point(list(zip(HEIGHTS, exact)), base)
    tp = turning_point(curve, base)
    assert (tp is None) == (tp_exact is None)
    if tp is not None:
        assert abs(tp - tp_exact) <= 1e-9


def test_a_curve_straight_in_log_height_needs_only_the_first_solves() -> None:
    # every stencil interpolates a straight line exactly: nothing to refine beyond the start set
    # (every third height, the last but one and the touch: 6 of 12)
    curve, solved = adaptive_curve(lambda h: 5.0 - 1e-3 * np.log(h + 0.05), HEIGHTS, 5.0 - 1e-3 * np.log(20.05))
    assert sum(solved) == 6
    assert max(abs(v - (5.0 - 1e-3 * np.log(h + 0.05))) for h, v in curve) < 1e-12


def test_solver_curve_matches_the_fixed_twelve_heights() -> None:
    # issue 10: adaptive heights tested against the fixed 12-height curve of the same model; the
    # case turns around above the surface (large receiver, no ground pour, weak return path)
    d = button(rx_radius_mm=12.5, ground=False, finger=WEAK, estimate=FAST)
    fixed = estimate_with(d, d.sensors[0], opts=SolverOptions.from_config({**FAST, "adaptive_heights": False}), heights=12)
    adapt = estimate_with(d, d.sensors[0], opts=SolverOptions.from_config(FAST), heights=12)
    swing = max(abs(v - fixed.baseline_pf) for _, v in fixed.curve)
    assert max(abs(a[1] - b[1]) for a, b in zip(adapt.curve, fixed.curve)) <= 0.01 * swing
    assert fixed.turning_point_mm is not None and adapt.turning_point_mm is not None
    assert abs(adapt.turning_point_mm - fixed.turning_point_mm) <= 0.1
    # the touch is solved in both; its finger solve goes through the basis of the positions solved
    # before it (physics/operator.py, recycled to 1e-7 of the right-hand side), which differ
    assert adapt.touch_delta_pf == pytest.approx(fixed.touch_delta_pf, rel=1e-6)
    assert any(n.startswith("approach: ") and " of 12 heights solved" in n for n in adapt.notes)


@pytest.mark.parametrize("n", range(4, 16))
def test_curves_that_turn_and_reverse_sign_rest_on_solved_values_at_every_count_of_heights(n: int) -> None:
    # closed form of tests/physics/test_turnarounds.py: s(h) = 1/(h + 0.5) - 4/(h + 5) turns at 4 mm
    # and crosses zero at 1 mm (solved by hand); every turn and reversal is found from solved
    # values only, so the adaptive curve reports the same changes as the exact one
    from sensorcheck.physics.finger import turnarounds

    hs = approach_heights(n, 20.0)

    def f(h: float) -> float:
        return 3.0 + 1.0 / (h + 0.5) - 4.0 / (h + 5.0)

    curve, solved = adaptive_curve(f, hs, 3.0)
    exact = turnarounds([(h, f(h)) for h in hs], 3.0)
    assert [(t.kind, round(t.height_mm, 9)) for t in turnarounds(curve, 3.0)] == \
        [(t.kind, round(t.height_mm, 9)) for t in exact]
