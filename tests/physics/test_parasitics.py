"""Closed-form parasitics against handbook values and exact limits (sources beside each check)."""

from __future__ import annotations

import math

import pytest

from sensorcheck.physics.parasitics import (
    EPS0_F_PER_M,
    microstrip,
    microstrip_pf_per_mm,
    parallel_plate_pf,
    series_epsilon_r,
    via_capacitance_pf,
)


def test_microstrip_pozar_worked_example() -> None:
    # D. M. Pozar, Microwave Engineering (3rd ed., Wiley 2005), Example 3.7 (from memory):
    # 50-ohm line on a 0.127 cm substrate with eps_r = 2.20 -> W/d = 3.081, W = 0.391 cm, eps_e = 1.87.
    # Pozar uses Hammerstad's simpler 1975 formulas; the 1980 Hammerstad-Jensen set agrees within 1 %.
    z0, eps_eff = microstrip(3.081 * 1.27, 1.27, 2.20)
    assert z0 == pytest.approx(50.0, rel=0.01)
    assert eps_eff == pytest.approx(1.87, rel=0.01)


def test_microstrip_fr4_50_ohm_width() -> None:
    # Common handbook figure (from memory, e.g. Wadell 1991 design charts): 50 ohm on 1.6 mm FR-4
    # (eps_r 4.4) is about 3.0-3.1 mm wide.  Check Z0 at 3.06 mm within 2 %.
    z0, _ = microstrip(3.06, 1.6, 4.4)
    assert z0 == pytest.approx(50.0, rel=0.02)


def test_microstrip_in_air_has_eps_eff_one() -> None:
    # Exact: a homogeneous medium (eps_r = 1) gives eps_eff = 1 for any width.
    for u in (0.1, 1.0, 10.0):
        assert microstrip(u, 1.0, 1.0)[1] == pytest.approx(1.0, abs=1e-12)


def test_wide_microstrip_tends_to_parallel_plate() -> None:
    # Exact limit: for w/h -> infinity the per-length capacitance tends to eps0 eps_r w / h
    # (fringing adds a term growing only like ln(w/h), so the ratio -> 1 as (ln u)/u).
    w, h, er = 1000.0, 1.0, 4.0
    c = microstrip_pf_per_mm(w, h, er)
    plate = EPS0_F_PER_M * er * w / h * 1e12 * 1e-3
    assert c / plate == pytest.approx(1.0, abs=0.01)
    assert c > plate  # fringing only adds


def test_strip_thickness_lowers_impedance() -> None:
    # Physical trend (Wadell 1991, thickness correction): a thicker strip has a lower Z0.
    assert microstrip(0.2, 0.2, 4.5, 0.035)[0] < microstrip(0.2, 0.2, 4.5, 0.0)[0]


def test_parallel_plate_exact() -> None:
    # C = eps0 eps_r A / h: 100 mm2 at 1 mm in vacuum = 0.8854 pF (CODATA eps0).
    assert parallel_plate_pf(100.0, 1.0, 1.0) == pytest.approx(0.88541878128, rel=1e-10)
    # catalogue's worked figure: a 10 mm disc 0.2 mm over ground on FR-4 (4.5) is about 15 pF
    assert parallel_plate_pf(math.pi * 25.0, 0.2, 4.5) == pytest.approx(15.6, rel=0.01)
    with pytest.raises(ValueError):
        parallel_plate_pf(1.0, 0.0, 4.5)


def test_series_permittivity() -> None:
    # plates in series (exact for a parallel-plate field): 1 mm of eps 2 + 1 mm of eps 4 -> 2 / (1/2 + 1/4)
    assert series_epsilon_r([(1.0, 2.0), (1.0, 4.0)]) == pytest.approx(8.0 / 3.0)


def test_via_capacitance_johnson_graham_example() -> None:
    # H. Johnson, M. Graham, High-Speed Digital Design (1993), section 7.1 (from memory): a via through a
    # 0.063 in board, 0.028 in pad, 0.050 in clearance hole, eps_r 4.4 -> about 0.5 pF.
    c = via_capacitance_pf(4.4, 0.063 * 25.4, 0.028 * 25.4, 0.050 * 25.4)
    assert c == pytest.approx(0.50, abs=0.01)
    with pytest.raises(ValueError):
        via_capacitance_pf(4.4, 1.6, 1.0, 0.8)
