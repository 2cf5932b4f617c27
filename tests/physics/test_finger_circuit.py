"""The finger's circuit: eliminating the floating finger node (and a floating device ground)."""

from __future__ import annotations

import numpy as np
import pytest

from sensorcheck.physics.finger import FINGER_DEFAULTS, mutual_f, self_f, turning_point

PF = 1e-12


def _maxwell(rng: np.random.Generator, n: int) -> np.ndarray:
    """A valid Maxwell matrix: negative off-diagonals, positive row sums (capacitance to infinity)."""
    mutual = rng.uniform(0.1, 2.0, (n, n)) * PF
    mutual = (mutual + mutual.T) / 2
    np.fill_diagonal(mutual, 0.0)
    to_inf = rng.uniform(0.5, 3.0, n) * PF
    c = -mutual
    np.fill_diagonal(c, mutual.sum(axis=1) + to_inf)
    return c


def test_grounded_finger_is_the_plain_maxwell_entry() -> None:
    # a finger tied to earth by an infinite capacitance is at 0 V: Cm = -C[rx, tx] (definition)
    c = _maxwell(np.random.default_rng(1), 4)  # TX, RX, GND, finger
    cm = mutual_f(c, [0], [1], floating=3, body_f=1e6, device_f=None)
    assert cm == pytest.approx(-c[1, 0], rel=1e-6, abs=0.0)


def test_isolated_finger_is_kron_reduction() -> None:
    # a finger with no path to earth: eliminating its node gives C' = C_bb - C_bf C_fb / C_ff
    # (Kron reduction of a floating node; circuit theory)
    c = _maxwell(np.random.default_rng(2), 4)
    reduced = c[:3, :3] - np.outer(c[:3, 3], c[3, :3]) / c[3, 3]
    assert mutual_f(c, [0], [1], floating=3, body_f=0.0, device_f=None) == pytest.approx(-reduced[1, 0], rel=1e-9, abs=0.0)


def test_body_capacitance_in_series_matches_augmented_matrix() -> None:
    # the body capacitance to earth simply adds to the finger's own capacitance to infinity
    c = _maxwell(np.random.default_rng(3), 4)
    body = 150 * PF
    aug = c.copy()
    aug[3, 3] += body
    reduced = aug[:3, :3] - np.outer(aug[:3, 3], aug[3, :3]) / aug[3, 3]
    assert mutual_f(c, [0], [1], floating=3, body_f=body, device_f=None) == pytest.approx(-reduced[1, 0], rel=1e-9, abs=0.0)
    assert self_f(c, [1], floating=3, body_f=body, device_f=None) == pytest.approx(reduced[1, 1], rel=1e-9, abs=0.0)


def test_device_coupling_limits() -> None:
    # a very large device-to-earth coupling is the same as an earthed device
    c = _maxwell(np.random.default_rng(4), 4)
    earthed = mutual_f(c, [0], [1], floating=3, body_f=100 * PF, device_f=None)
    assert mutual_f(c, [0], [1], floating=3, body_f=100 * PF, device_f=1e3) == pytest.approx(earthed, rel=1e-6, abs=0.0)
    # a weak device coupling (battery product) changes what the controller measures
    weak = mutual_f(c, [0], [1], floating=3, body_f=100 * PF, device_f=10 * PF)
    assert abs(weak / earthed - 1) > 1e-3


def test_turning_point_detection() -> None:
    # synthetic curve (far to near): |signal| peaks at 1 mm and falls by touch -> about 1 mm
    h = [20.0, 8.0, 3.0, 1.0, 0.3, 0.0]
    sig = [-0.01, -0.05, -0.12, -0.15, -0.10, -0.02]
    tp = turning_point(list(zip(h, [1.0 + s for s in sig])), 1.0)
    assert tp is not None and 0.3 < tp < 3.0
    mono = [-0.01, -0.05, -0.12, -0.15, -0.17, -0.2]
    assert turning_point(list(zip(h, [1.0 + s for s in mono])), 1.0) is None


def test_finger_defaults_have_stated_sources() -> None:
    # common practice 8 mm; IEC 61000-4-2 human-body model 150 pF (standard); earthed by default
    assert FINGER_DEFAULTS.contact_diameter_mm == 8.0
    assert FINGER_DEFAULTS.body_capacitance_pf == 150.0
    assert FINGER_DEFAULTS.device_ground_coupling_pf is None
