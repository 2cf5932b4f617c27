"""gap.* rules on hand-drawn nodes whose gaps are known by construction (squares: exact distances)."""

from __future__ import annotations

import pytest
from shapely.geometry import box

from sensorcheck.physics.estimate import SensorEstimate

from .build import electrode, make_board, make_config, make_design, region, sensor
from .helpers import run_one


def mutual_node(gap_mm: float, overlay_mm: float = 2.0):
    """8 x 8 mm RX square inside a 2 mm wide TX square ring, ``gap_mm`` apart on every side."""
    rx = box(-4, -4, 4, 4)
    inner = 4 + gap_mm
    tx = box(-inner - 2, -inner - 2, inner + 2, inner + 2).difference(box(-inner, -inner, inner, inner))
    board = make_board([region("top-copper", rx, "RX0"), region("top-copper", tx, "TX0")])
    s = sensor("K1", "mutual-button", [electrode("TX0", "transmitter", tx), electrode("RX0", "receiver", rx)])
    return make_design(board, make_config(overlay_mm), {"TX0": "transmitter", "RX0": "receiver"}, [s])


def estimate(delta_pf: float, pct: float, kind: str = "mutual", turn: float | None = None) -> SensorEstimate:
    return SensorEstimate(sensor="K1", kind=kind, model="test model", baseline_pf=abs(100 * delta_pf / pct) if pct else 1.0,
                          touch_delta_pf=delta_pf, percent_change=pct, turning_point_mm=turn)


# ratio = gap / overlay; band 0.6 x (1 +- 0.5) = 0.3..0.9 (rule of thumb: common practice)
@pytest.mark.parametrize(
    "gap_mm, overlay_mm, expect",
    [
        (1.2, 2.0, None),  # GOOD: ratio 0.6 exactly
        (0.4, 2.0, "small"),  # BAD: ratio 0.2 < 0.3
        (0.65, 1.0, None),  # GOOD: 0.65 inside 0.3..0.9
        (2.0, 2.0, "large"),  # BAD: ratio 1.0 > 0.9
    ],
)
def test_tx_rx_gap_ratio(gap_mm: float, overlay_mm: float, expect: str | None) -> None:
    found = run_one("gap.tx-rx-vs-overlay", mutual_node(gap_mm, overlay_mm))
    if expect is None:
        assert found == []
        return
    (f,) = found
    # the gap between the squares is exactly gap_mm by construction
    assert f.value == pytest.approx(gap_mm / overlay_mm, rel=1e-6)
    assert f"too {expect}" in f.message and f"{gap_mm:.2f} mm" in f.message
    assert f.unit == "gap/overlay" and f.sensor == "K1" and set(f.nets) == {"TX0", "RX0"}
    assert f.location.layer == "top-copper"
    # the point lies in the gap: between the RX edge (4 mm) and the TX ring (4 + gap)
    assert 4 - 1e-6 <= max(abs(f.location.x_mm), abs(f.location.y_mm)) <= 4 + gap_mm + 1e-6


def test_estimate_decides_for_tx_rx_gap() -> None:
    design = mutual_node(0.4)
    # a healthy estimate (-0.2 pF, -15 %) clears the floors 0.1 pF and 10 %: no gap warning
    assert run_one("gap.tx-rx-vs-overlay", design, {"K1": estimate(-0.2, -15.0)}) == []
    # a weak one (-0.05 pF, -4 %) does not: the warning cites it
    (f,) = run_one("gap.tx-rx-vs-overlay", design, {"K1": estimate(-0.05, -4.0)})
    assert "field-solver estimate" in f.message and "touch delta -50.0 fF" in f.message  # the estimate in fF, as every report shows it


def self_button(gap_mm: float, overlay_mm: float):
    """12 x 12 mm button with a ground pour around it, ``gap_mm`` away on every side."""
    pad = box(-6, -6, 6, 6)
    g = 6 + gap_mm
    gnd = box(-g - 5, -g - 5, g + 5, g + 5).difference(box(-g, -g, g, g))
    board = make_board([region("top-copper", pad, "TOUCH1"), region("top-copper", gnd, "GND")])
    s = sensor("B1", "self-button", [electrode("TOUCH1", "self", pad)])
    return make_design(board, make_config(overlay_mm), {"TOUCH1": "self", "GND": "ground"}, [s])


# target = overlay thickness clamped to 0.5..2 mm (common practice)
@pytest.mark.parametrize(
    "gap_mm, overlay_mm, target_mm",
    [
        (1.5, 1.5, None),  # GOOD: gap = t
        (0.3, 1.5, 1.5),  # BAD: 0.3 < 1.5
        (1.8, 3.0, 2.0),  # BAD: t = 3 clamps to 2.0
        (0.5, 0.3, None),  # GOOD: t = 0.3 clamps up to 0.5
        (2.0, 3.0, None),  # GOOD: at the upper clamp
    ],
)
def test_self_gap(gap_mm: float, overlay_mm: float, target_mm: float | None) -> None:
    found = run_one("gap.electrode-ground-vs-overlay", self_button(gap_mm, overlay_mm))
    if target_mm is None:
        assert found == []
        return
    (f,) = found
    assert f.value == pytest.approx(gap_mm) and f.limit == pytest.approx(target_mm) and f.unit == "mm"
    assert f"{gap_mm:.2f} mm" in f.message and f"{target_mm:.2f} mm" in f.message
    assert f"ratio gap/overlay {gap_mm / overlay_mm:.2f}" in f.message


def test_estimate_decides_for_self_gap() -> None:
    design = self_button(0.3, 1.5)
    ok = estimate(0.8, 4.0, kind="self")  # 0.8 pF, 4 % > floors 0.1 pF and 3 %
    ok.sensor = "B1"
    assert run_one("gap.electrode-ground-vs-overlay", design, {"B1": ok}) == []
    weak = estimate(0.3, 1.2, kind="self")  # 1.2 % < 3 %
    (f,) = run_one("gap.electrode-ground-vs-overlay", design, {"B1": weak})
    assert "1.2 %" in f.message
