"""Closed-form parasitic capacitances: microstrip traces, parallel plates, vias.

SI inside, mm and pF at the edges (names say which).  These are first-order estimates for
rule budgets, labelled as such; the boundary-element solver is the better number where it ran.

Sources:

* Microstrip: the Hammerstad-Jensen formulas (E. Hammerstad, O. Jensen, "Accurate models for
  microstrip computer-aided design", IEEE MTT-S Digest 1980, pp. 407-409), as collected in
  B. C. Wadell, *Transmission Line Design Handbook*, Artech House 1991, section 4.5.
  Quasi-static; the handbook quotes better than 0.2 % for Z0 in air for 0.01 <= w/h <= 100,
  and about 1 % overall with the thickness correction.
* Parallel plate: C = eps0 eps_r A / h (any electrostatics textbook); a lower bound for a
  finite electrode (fringing adds).
* Via barrel: C[pF] = 1.41 eps_r T D1 / (D2 - D1) with T, D1, D2 in inches (H. Johnson,
  M. Graham, *High-Speed Digital Design*, Prentice Hall 1993, section 7.1).
"""

from __future__ import annotations

import math
from collections.abc import Sequence

EPS0_F_PER_M = 8.8541878128e-12  # CODATA 2018
C0_M_PER_S = 299_792_458.0
ETA0_OHM = 376.730313668  # free-space impedance, CODATA 2018


def parallel_plate_pf(area_mm2: float, gap_mm: float, epsilon_r: float) -> float:
    """Parallel-plate capacitance eps0 eps_r A / h in pF (no fringing: a lower bound)."""
    if gap_mm <= 0:
        raise ValueError(f"plate gap must be > 0 mm, got {gap_mm}")
    if epsilon_r < 1:
        raise ValueError(f"relative permittivity must be >= 1, got {epsilon_r}")
    return EPS0_F_PER_M * epsilon_r * (area_mm2 * 1e-6) / (gap_mm * 1e-3) * 1e12


def series_epsilon_r(layers: Sequence[tuple[float, float]]) -> float:
    """Effective permittivity of stacked dielectric layers (thickness_mm, eps_r) between two plates.

    Plates in series: h_total / sum(h_i / eps_i) (exact for a parallel-plate field).
    """
    total = sum(t for t, _ in layers)
    if total <= 0:
        raise ValueError("dielectric stack has no thickness")
    return total / sum(t / e for t, e in layers)


def _z01_air(u: float) -> float:
    """Hammerstad-Jensen impedance of a zero-thickness microstrip in air (ohm), u = w/h."""
    f_u = 6.0 + (2.0 * math.pi - 6.0) * math.exp(-((30.666 / u) ** 0.7528))
    return ETA0_OHM / (2.0 * math.pi) * math.log(f_u / u + math.sqrt(1.0 + (2.0 / u) ** 2))


def _eps_eff_zero_t(u: float, eps_r: float) -> float:
    """Hammerstad-Jensen effective permittivity for zero strip thickness, u = w/h."""
    a = (
        1.0
        + math.log((u**4 + (u / 52.0) ** 2) / (u**4 + 0.432)) / 49.0
        + math.log(1.0 + (u / 18.1) ** 3) / 18.7
    )
    b = 0.564 * ((eps_r - 0.9) / (eps_r + 3.0)) ** 0.053
    return (eps_r + 1.0) / 2.0 + (eps_r - 1.0) / 2.0 * (1.0 + 10.0 / u) ** (-a * b)


def microstrip(width_mm: float, height_mm: float, epsilon_r: float, thickness_mm: float = 0.0) -> tuple[float, float]:
    """Characteristic impedance (ohm) and effective permittivity of a microstrip.

    Hammerstad-Jensen (1980) with their strip-thickness correction, as in Wadell (1991) 4.5.
    ``height_mm`` is the dielectric thickness between the strip and its ground plane.
    """
    if width_mm <= 0 or height_mm <= 0:
        raise ValueError(f"microstrip needs width and height > 0 mm, got w={width_mm}, h={height_mm}")
    if epsilon_r < 1:
        raise ValueError(f"relative permittivity must be >= 1, got {epsilon_r}")
    u = width_mm / height_mm
    if thickness_mm > 0:
        t = thickness_mm / height_mm
        coth2 = 1.0 / math.tanh(math.sqrt(6.517 * u)) ** 2
        du1 = t / math.pi * math.log(1.0 + 4.0 * math.e / (t * coth2))
        dur = 0.5 * (1.0 + 1.0 / math.cosh(math.sqrt(max(epsilon_r - 1.0, 0.0)))) * du1
        u1, ur = u + du1, u + dur
    else:
        u1 = ur = u
    eps_eff_r = _eps_eff_zero_t(ur, epsilon_r)
    z0 = _z01_air(ur) / math.sqrt(eps_eff_r)
    eps_eff = eps_eff_r * (_z01_air(u1) / _z01_air(ur)) ** 2
    return z0, eps_eff


def microstrip_pf_per_mm(width_mm: float, height_mm: float, epsilon_r: float, thickness_mm: float = 0.0) -> float:
    """Capacitance per unit length of a microstrip to its plane, pF/mm: C' = sqrt(eps_eff) / (c0 Z0)."""
    z0, eps_eff = microstrip(width_mm, height_mm, epsilon_r, thickness_mm)
    c_f_per_m = math.sqrt(eps_eff) / (C0_M_PER_S * z0)
    return c_f_per_m * 1e12 * 1e-3


def via_capacitance_pf(epsilon_r: float, length_mm: float, pad_diameter_mm: float, antipad_diameter_mm: float) -> float:
    """Via barrel capacitance to the planes it passes, Johnson & Graham (1993): 1.41 eps_r T D1/(D2-D1) pF (inches)."""
    if antipad_diameter_mm <= pad_diameter_mm:
        raise ValueError(
            f"via antipad ({antipad_diameter_mm} mm) must be larger than its pad ({pad_diameter_mm} mm)"
        )
    inch = 25.4
    return 1.41 * epsilon_r * (length_mm / inch) * (pad_diameter_mm / inch) / (
        (antipad_diameter_mm - pad_diameter_mm) / inch
    )
