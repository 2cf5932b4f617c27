"""Turns and sign reversals of an approach curve (physics/finger.py: turnarounds), on closed forms.

Outside reference: curves written in closed form whose extremum and zero are solved by hand (no
solver involved).  The main one is the difference of two 1/h-like terms, a near coupling
``A / (h + d)`` (the parallel-plate form of a finger's coupling at height h over an electrode,
plate spacing h + d) against a longer-range coupling of the other sign ``-B / (h + D)``:

    s(h) = A / (h + d) - B / (h + D)

    zero:     A (h + D) = B (h + d)                ->  h0 = (B d - A D) / (A - B)
    extremum: ds/dh = 0 <=> A (h + D)^2 = B (h + d)^2  ->  h* = (sqrt(B) d - sqrt(A) D) / (sqrt(A) - sqrt(B))

With A = 1, d = 0.5, B = 4, D = 5: h0 = (2 - 5) / (1 - 4) = 1.0 mm, h* = (2 x 0.5 - 5) / (1 - 2) = 4.0 mm,
s(h*) = 1/4.5 - 4/9 = -2/9, s(0) = 2 - 0.8 = +1.2: the signal falls to -0.222 at 4 mm, turns, crosses
zero at 1 mm and reads +1.2 at touch: the shape of a floating object over a mutual key.
"""

from __future__ import annotations

import numpy as np
import pytest

from .designs import button, self_button
from sensorcheck.design.model import Finger
from sensorcheck.physics.finger import turn_indices, turnarounds, turning_point
from sensorcheck.physics.sensors import SolverOptions, approach_heights, estimate_with

A, D_NEAR, B, D_FAR = 1.0, 0.5, 4.0, 5.0
H_ZERO = (B * D_NEAR - A * D_FAR) / (A - B)  # 1.0 mm
H_EXT = (np.sqrt(B) * D_NEAR - np.sqrt(A) * D_FAR) / (np.sqrt(A) - np.sqrt(B))  # 4.0 mm
BASE = 3.0  # any baseline: the signal is value - baseline


def _s(h: float) -> float:
    return A / (h + D_NEAR) - B / (h + D_FAR)


def _curve(f, heights: list[float], base: float = BASE) -> list[tuple[float, float]]:
    return [(h, base + f(h)) for h in heights]


def test_hand_solved_constants() -> None:
    assert H_ZERO == pytest.approx(1.0) and H_EXT == pytest.approx(4.0)
    assert _s(H_ZERO) == pytest.approx(0.0, abs=1e-15)
    assert _s(H_EXT) == pytest.approx(-2.0 / 9.0)


def test_fine_curve_finds_the_turn_and_the_zero_where_the_hand_put_them() -> None:
    hs = [float(h) for h in np.geomspace(20.0, 0.05, 60)] + [0.0]
    turns = turnarounds(_curve(_s, hs), BASE)
    assert [t.kind for t in turns] == ["turns", "reverses sign"]  # highest first
    assert turns[0].height_mm == pytest.approx(H_EXT, rel=0.01)  # parabola in log(h + 0.05)
    assert turns[1].height_mm == pytest.approx(H_ZERO, rel=0.01)  # linear interpolation, fine grid
    assert turning_point(_curve(_s, hs), BASE) == turns[0].height_mm
    assert all(t.curve == "best" for t in turns)


def test_the_default_heights_bracket_the_turn_and_the_zero() -> None:
    # the 12 heights the estimate uses (20 mm down to 0.25 mm, then touch): each change lies between
    # the two solved heights around the exact one, and within 15 % of it
    hs = approach_heights(12, 20.0)
    turns = turnarounds(_curve(_s, hs), BASE, over="centre")
    assert [t.kind for t in turns] == ["turns", "reverses sign"] and turns[0].curve == "centre"
    for t, exact in zip(turns, (H_EXT, H_ZERO)):
        below = max(h for h in hs if h < exact)
        above = min(h for h in hs if h > exact)
        assert below <= t.height_mm <= above
        assert t.height_mm == pytest.approx(exact, rel=0.15)


def test_the_old_blind_spot_a_reversal_whose_touch_is_the_largest_value() -> None:
    # |signal| is largest at touch (+1.2 against -0.22): a peak search alone found nothing here
    hs = approach_heights(12, 20.0)
    s = [abs(_s(h)) for h in hs]
    assert int(np.argmax(s)) == len(hs) - 1
    assert turning_point(_curve(_s, hs), BASE) is not None


def test_monotonic_curves_have_no_turnaround_even_with_noise_within_the_tolerance() -> None:
    # a plain parallel-plate approach -A/(h + d) (a finger over a key) grows monotonically
    hs = approach_heights(12, 20.0)
    clean = _curve(lambda h: -A / (h + D_NEAR), hs)
    assert turnarounds(clean, BASE) == [] and turning_point(clean, BASE) is None
    # alternating noise of 0.4 % of the swing (2 / 1 = 2 pF at touch): below the 1 % tolerance
    rng_noise = [0.004 * 2.0 * (-1) ** i for i in range(len(hs))]
    noisy = [(h, v + e) for (h, v), e in zip(clean, rng_noise)]
    assert turnarounds(noisy, BASE) == []
    # the same noise at 3 % is reported (not hidden by the tolerance)
    loud = [(h, v + 7.5 * e) for (h, v), e in zip(clean, rng_noise)]
    assert turnarounds(loud, BASE)


def test_a_peak_that_falls_back_at_touch_is_one_turn() -> None:
    # the classic turnaround (a weak return path), same sign throughout: A/(h+d) - B/(h+D) with
    # B/D > A/d so the touch stays negative: A = 1, d = 0.5, B = 20, D = 5 -> s(0) = 2 - 4 = -2,
    # extremum h* = (sqrt(20) x 0.5 - 5) / (1 - sqrt(20)) = -2.7639 / -3.4721 = 0.7960 mm (by hand), no zero for h >= 0
    def f(h: float) -> float:
        return 1.0 / (h + 0.5) - 20.0 / (h + 5.0)

    h_ext = (np.sqrt(20.0) * 0.5 - 5.0) / (1.0 - np.sqrt(20.0))
    assert h_ext == pytest.approx(0.7960, abs=1e-4)
    hs = [float(h) for h in np.geomspace(20.0, 0.05, 60)] + [0.0]
    (t,) = turnarounds(_curve(f, hs), BASE)
    assert t.kind == "turns" and t.height_mm == pytest.approx(h_ext, rel=0.01)


def test_a_dip_that_recovers_turns_twice_and_a_signal_largest_far_turns_at_the_top() -> None:
    # a signal that grows, dips back by 20 % and grows again to its largest at touch (far to near)
    values = [-0.1, -0.5, -0.4, -0.8, -1.0]
    assert turn_indices([BASE + v for v in values], BASE) == [(1, "turns"), (2, "turns")]
    # a signal largest at the farthest height: it turned above the computed range (far field 0)
    assert turn_indices([BASE - 1.0, BASE - 0.5, BASE - 0.2], BASE) == [(0, "turns")]
    (t,) = turnarounds([(20.0, BASE - 1.0), (5.0, BASE - 0.5), (0.0, BASE - 0.2)], BASE)
    assert t.height_mm == 20.0


def test_a_sign_change_within_the_tolerance_is_no_reversal() -> None:
    # a far value of the other sign within 1 % of the swing is noise: the curve counts as
    # growing monotonically
    values = [+0.005, -0.1, -0.5, -1.0]
    assert turn_indices([BASE + v for v in values], BASE) == []
    # at 2 % the far value is a real (small) effect of the other sign: reversal and turn reported
    values = [+0.02, -0.1, -0.5, -1.0]
    assert turn_indices([BASE + v for v in values], BASE) == [(0, "turns"), (1, "reverses sign")]


# ------------------------------------------------------------------------------------------------
# the field solver: floating and weakly coupled bodies (the directions are textbook physics; the
# heights are the solver's own and are not pinned, since the near-field coupling is being refined)

FAST = {"h_edge_mm": 1.0, "h_near_mm": 1.5, "h_far_mm": 4.0, "window_mm": 10.0, "finger_sides": 16, "search": False}


def _solve(design, heights: int = 8):
    return estimate_with(design, design.sensors[0], opts=SolverOptions.from_config(FAST), heights=heights)


def _signals(est) -> list[tuple[float, float]]:
    return [(h, v - est.baseline_pf) for h, v in est.curve]


def _reversal_bracketed(est) -> None:
    """Every reported reversal lies between two heights of the curve whose signals have opposite signs."""
    s = _signals(est)
    for t in est.turnarounds:
        if t.kind != "reverses sign":
            continue
        above = [v for h, v in s if h >= t.height_mm]
        below = [v for h, v in s if h <= t.height_mm]
        assert above and below and above[-1] * below[0] <= 0


@pytest.mark.slow  # four field solves of a small button
def test_a_battery_product_reverses_sign_where_an_earthed_one_does_not() -> None:
    # The case: a product whose ground reaches earth through 2 pF.  The finger's return
    # path is the 150 pF body in series with those 2 pF (1.97 pF, circuit theory), weaker than its
    # coupling to TX and RX at touch: near the surface the finger acts as a floating conductor,
    # which carries no net charge and passes the transmitter's field on to the receiver (textbook
    # electrostatics of conductors), so Cm rises; far away the finger still takes field to earth
    # and Cm falls.  The same key with an earthed device falls all the way (field knowledge).
    weak = _solve(button(ground=False, finger=Finger(8.0, 20.0, 150.0, 2.0), estimate=FAST))
    earthed = _solve(button(ground=False, finger=Finger(8.0, 20.0, 150.0, None), estimate=FAST))
    assert earthed.touch_delta_pf < 0 and earthed.turnarounds == [] and earthed.turning_point_mm is None
    assert weak.touch_delta_pf > 0  # reads the opposite of a touch
    assert min(v for _, v in _signals(weak)) < -0.05 * weak.touch_delta_pf  # and fell first, clearly
    kinds = [t.kind for t in weak.turnarounds]
    assert kinds[0] == "turns" and "reverses sign" in kinds  # the highest change is the turn above the zero
    assert weak.turning_point_mm == weak.turnarounds[0].height_mm
    _reversal_bracketed(weak)


@pytest.mark.slow  # two field solves of a small button
def test_floating_objects_raise_the_self_capacitance_at_every_height_and_cm_at_touch() -> None:
    # A floating conductor brought into the field of a conductor system never lowers a conductor's
    # capacitance (Thomson's theorem: the field inside the added conductor vanishes, the energy at
    # fixed charges falls; Landau and Lifshitz, Electrodynamics of Continuous Media, section 2,
    # from memory): a coin (16 mm, no path to earth: body 0 pF) over a self button raises C at every
    # height, no turn, no reversal.  A water film (20 mm, 0.5 mm thick; water conducts at the
    # controllers' frequencies: its relaxation time eps/sigma is tens of ns for tap water) lying on
    # a mutual key couples TX to RX: Cm rises at touch, the opposite of a finger.
    d = self_button()
    d.config.finger = Finger(16.0, 1.5, 0.0, None)
    coin = _solve(d)
    s = _signals(coin)
    assert all(v > -0.01 * coin.touch_delta_pf for _, v in s) and coin.touch_delta_pf > 0
    assert not any(t.kind == "reverses sign" for t in coin.turnarounds)
    film = _solve(button(finger=Finger(20.0, 0.5, 0.0, None), estimate=FAST))
    assert film.touch_delta_pf > 0
    _reversal_bracketed(film)
