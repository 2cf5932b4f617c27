"""The layered-media image series against direct numerical Sommerfeld integration, and its limits."""

from __future__ import annotations

import numpy as np
import pytest

from sensorcheck.physics.greens import EPS0, LayeredMedium, sommerfeld_potential

# air / 2 mm overlay (eps 2.8) / 0.1 mm adhesive (eps 3.3) / 1.6 mm FR-4 (eps 4.4) / air
STACK = LayeredMedium(eps_r=(1.0, 2.8, 3.3, 4.4, 1.0), interfaces_m=(3.7e-3, 1.7e-3, 1.6e-3, 0.0), tol=1e-8)


@pytest.mark.parametrize(
    "src, obs",
    [
        ((0.0, 0.0, 1.6e-3), (0.7e-3, 0.2e-3, 1.9e-3)),  # copper plane -> inside the overlay
        ((0.0, 0.0, 1.6e-3), (2.0e-3, 0.0, 5.0e-3)),  # copper plane -> finger in air
        ((0.0, 0.0, 0.0), (1.0e-3, 0.5e-3, 1.6e-3)),  # bottom copper -> top copper
        ((0.0, 0.0, 6.0e-3), (3.0e-3, 0.0, 4.5e-3)),  # air -> air (reflections only)
        ((0.0, 0.0, 0.8e-3), (0.3e-3, 0.0, 1.65e-3)),  # inside the core -> adhesive
    ],
)
def test_image_series_matches_sommerfeld_integration(src: tuple[float, float, float], obs: tuple[float, float, float]) -> None:
    # independent check: the spectral-domain kernel solved from the interface conditions at each
    # k and Hankel-transformed with scipy.integrate.quad; agreement 1e-6 relative (image pruning 1e-8)
    img = STACK.potential(np.array(src), np.array(obs))[0]
    ref = sommerfeld_potential(STACK, src, obs)
    assert img == pytest.approx(ref, rel=1e-6, abs=0.0)


def test_charge_on_an_interface_sees_the_mean_permittivity() -> None:
    # exact (image charges): a point charge on a plane interface between eps1 and eps2 has the
    # potential q / (4 pi eps0 (eps1 + eps2)/2 r) everywhere
    m = LayeredMedium(eps_r=(1.0, 5.0), interfaces_m=(0.0,))
    for obs in ((1.0, 0.0, 0.0), (0.0, 0.0, 1.0), (0.0, 0.0, -1.0), (0.6, 0.0, 0.8)):
        v = m.potential(np.zeros(3), np.array(obs))[0]
        assert v == pytest.approx(1.0 / (4 * np.pi * EPS0 * 3.0), rel=1e-12, abs=0.0)


def test_point_charge_over_dielectric_half_space_single_image() -> None:
    # Jackson, Classical Electrodynamics, section 4.4: charge q in eps1 at height d over eps2:
    # image -q (eps2 - eps1)/(eps2 + eps1) at -d; the potential in eps1 is the sum of the two
    m = LayeredMedium(eps_r=(1.0, 4.0), interfaces_m=(0.0,))
    src, obs = np.array([0.0, 0.0, 1.0]), np.array([0.5, 0.0, 0.3])
    r1 = np.linalg.norm(obs - src)
    r2 = np.linalg.norm(obs - np.array([0.0, 0.0, -1.0]))
    ref = (1 / r1 - 0.6 / r2) / (4 * np.pi * EPS0)
    assert m.potential(src, obs)[0] == pytest.approx(ref, rel=1e-12, abs=0.0)


@pytest.mark.parametrize(
    "eps, interfaces",
    [((1.0, 0.5), (0.0,)), ((1.0, 2.0, 1.0), (1e-3, 1e-3)), ((1.0, 2.0, 1.0), (0.0, 1e-3))],
)
def test_bad_layers_are_refused(eps: tuple[float, ...], interfaces: tuple[float, ...]) -> None:
    # permittivity below vacuum, zero-thickness and inverted layers: a clear error, never a number
    with pytest.raises(ValueError):
        LayeredMedium(eps_r=eps, interfaces_m=interfaces)
