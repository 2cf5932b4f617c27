"""Sliders and wheels per segment (issue 10, item 4): channels, crosstalk, position response.

Outside checks: mirror symmetry (a symmetric slider's centroid with the finger over its middle
segment is the middle; its end channels are alike), the centroid formula worked by hand, and
geometry (a finger over a wide bare gap gives less signal than over copper).
"""

from __future__ import annotations

import numpy as np
import pytest

from .designs import slider
from sensorcheck.physics.segments import DEAD_FLOOR_FRACTION, centroid_position, dead_zones
from sensorcheck.physics.sensors import SolverOptions, estimate_with

FAST = {"h_edge_mm": 1.0, "h_near_mm": 1.5, "h_far_mm": 4.0, "window_mm": 6.0, "finger_sides": 16, "search": False}


def test_centroid_by_hand() -> None:
    pos = np.array([0.0, 5.0, 10.0, 15.0])
    # peak at 5 mm, neighbours 0 and 10 mm: (1*0 + 3*5 + 1*10) / 5 = 5 (by hand)
    assert centroid_position(np.array([1.0, 3.0, 1.0, 0.0]), pos, cyclic=False, period=0.0) == pytest.approx(5.0)
    # (2*5 + 4*10 + 2*15) / 8 = 10; the far segment (weight 0.5 at 0 mm) is outside the window
    assert centroid_position(np.array([0.5, 2.0, 4.0, 2.0]), pos, cyclic=False, period=0.0) == pytest.approx(10.0)
    # negative deltas weigh nothing; none positive: no position
    assert centroid_position(np.array([-1.0, -1.0, -1.0, -1.0]), pos, cyclic=False, period=0.0) is None
    # a wheel of 4 segments (period 20 mm): peak at 0 with equal neighbours at 15 and 5 -> 0 on the circle
    got = centroid_position(np.array([3.0, 1.0, 0.0, 1.0]), pos, cyclic=True, period=20.0)
    assert min(got, 20.0 - got) == pytest.approx(0.0, abs=1e-9)


def test_dead_zones_by_hand() -> None:
    assert dead_zones([0, 1, 2, 3, 4], [5, 1, 1, 5, 1], 2.0) == [(1, 2), (4, 4)]
    assert dead_zones([0, 1], [5, 5], 2.0) == []


@pytest.fixture(scope="module")
def symmetric():
    d = slider(estimate=FAST)
    return estimate_with(d, d.sensors[0], opts=SolverOptions.from_config(FAST), heights=2, max_height_mm=10.0)


def test_each_segment_is_a_channel(symmetric) -> None:
    est = symmetric
    assert [s.net for s in est.segments] == ["SEG1", "SEG2", "SEG3", "SEG4", "SEG5"]
    par = [s.parasitic_pf for s in est.segments]
    # mirror symmetry: the end channels alike, the second and fourth alike
    assert par[0] == pytest.approx(par[4], rel=0.02) and par[1] == pytest.approx(par[3], rel=0.02)
    # a channel alone is less than all segments driven together, and the estimate reports the largest channel
    lumped = float(next(n for n in est.notes if "all segments driven together" in n).split("together: ")[1].split(" pF")[0])
    assert est.parasitic_pf == pytest.approx(max(par), abs=0.01) and max(par) < lumped
    for s in est.segments:
        assert s.touch_delta_pf > 0  # self capacitance rises under a finger
        for nb, d in s.crosstalk_pf.items():
            assert 0 < d < s.touch_delta_pf  # a neighbour sees less than the segment under the finger


def test_symmetric_slider_reads_the_middle_at_the_middle(symmetric) -> None:
    pr = symmetric.position
    assert pr is not None and not pr.cyclic
    mid = symmetric.segments[2].position_mm
    assert pr.travel_mm == pytest.approx(4 * 4.5)
    p, got, err = min(pr.points, key=lambda t: abs(t[0] - mid))
    assert p == pytest.approx(mid) and got == pytest.approx(mid, abs=0.05)  # symmetry (mesh asymmetry only)
    reads = [q[1] for q in pr.points]
    assert all(b > a for a, b in zip(reads, reads[1:]))  # further along reads further along
    assert pr.dead_zones_mm == []
    assert pr.max_error_mm == pytest.approx(max(abs(q[2]) for q in pr.points))


def test_a_wide_bare_gap_is_a_dead_zone() -> None:
    # 2 mm segments with a 12 mm bare gap in the middle: the finger (8 mm) over the gap's centre
    # is over no copper (geometry); the floor is half the median segment signal (stated assumption)
    d = slider(n=4, seg_width_mm=3.0, gaps_mm=[0.5, 12.0, 0.5], estimate=FAST)
    est = estimate_with(d, d.sensors[0], opts=SolverOptions.from_config(FAST), heights=2, max_height_mm=10.0)
    pr = est.position
    assert pr is not None and pr.floor_pf == pytest.approx(DEAD_FLOOR_FRACTION * float(np.median([s.touch_delta_pf for s in est.segments])))
    gap_mid = 0.5 * (est.segments[1].position_mm + est.segments[2].position_mm)
    assert any(a <= gap_mid <= b for a, b in pr.dead_zones_mm)


def test_wheel_reads_each_segment_centre_by_rotational_symmetry() -> None:
    from .designs import wheel

    d = wheel(estimate=FAST)
    est = estimate_with(d, d.sensors[0], opts=SolverOptions.from_config(FAST), heights=2, max_height_mm=10.0)
    pr = est.position
    assert pr is not None and pr.cyclic
    # the circle through the segment centres, and six segments alike under rotation (symmetry)
    radius = float(np.hypot(*est.segments[0].centre_mm))
    assert pr.travel_mm == pytest.approx(2 * np.pi * radius, rel=1e-6)
    par = [s.parasitic_pf for s in est.segments]
    assert max(par) == pytest.approx(min(par), rel=0.03)
    assert len(pr.points) == 3 * 6
    for s in est.segments:
        assert set(s.crosstalk_pf) == {n for n in ("W1", "W2", "W3", "W4", "W5", "W6")
                                       if abs(int(n[1]) - int(s.net[1])) in (1, 5)}  # neighbours round the wheel
        p, got, err = min(pr.points, key=lambda t: abs(t[0] - s.position_mm))
        assert abs(err) < 0.1  # over a segment's centre its two neighbours weigh alike: the centre is read
    assert pr.dead_zones_mm == []
