"""Growing a sensor's outline by a distance: the fast path from the zone against closed forms.

Every expected area below is the Minkowski sum of the shape and a disc, worked out by hand
(Steiner's formula for convex shapes: A + P d + pi d^2, derived); the tolerance covers the
polygonal circles GEOS draws (16 segments a quarter, and 8 in the zone).
"""

from __future__ import annotations

import math

import pytest
from shapely.geometry import Point, Polygon, box

from sensorcheck.design.zones import sensing_zone
from sensorcheck.rules.base import grow_outline


def _grow(outline: Polygon, margin_mm: float, d_mm: float) -> Polygon:
    return grow_outline(outline, sensing_zone([outline], margin_mm), margin_mm, d_mm)


@pytest.mark.parametrize("margin_mm", [1.0, 2.0, 3.0])
def test_disc_grown_by_ten(margin_mm: float) -> None:
    r, d = 5.0, 10.0  # 10 mm disc: short side 10, 5 + margin <= 10, the zone path is taken
    got = _grow(Point(0, 0).buffer(r, quad_segs=64), margin_mm, d)
    assert got.area == pytest.approx(math.pi * (r + d) ** 2, rel=2e-3)  # Steiner, derived


def test_square_grown_keeps_round_corners() -> None:
    a, d = 12.0, 10.0
    got = _grow(box(0, 0, a, a), 1.0, d)
    assert got.area == pytest.approx(a * a + 4 * a * d + math.pi * d * d, rel=2e-3)  # Steiner, derived


def test_wide_ring_keeps_its_far_centre_out() -> None:
    """A wheel-like ring (inner radius 15 mm): points of its centre farther than 10 mm stay out."""
    r_in, r_out, d = 15.0, 20.0, 10.0
    ring = Point(0, 0).buffer(r_out, quad_segs=64).difference(Point(0, 0).buffer(r_in, quad_segs=64))
    got = _grow(ring, 2.0, d)
    expected = math.pi * (r_out + d) ** 2 - math.pi * (r_in - d) ** 2  # annulus grown both ways, derived
    assert got.area == pytest.approx(expected, rel=2e-3)
    assert not got.contains(Point(0, 0))


def test_enclosed_concavity_is_not_filled_beyond_the_distance() -> None:
    """A C shape whose zone closes its mouth: the filled inside is far from the copper at its middle."""
    outer = box(-20, -20, 20, 20)
    c_shape = outer.difference(box(-18, -18, 18, 18)).difference(box(17, -0.5, 21, 0.5))  # 1 mm slot
    d = 10.0
    got = _grow(c_shape, 2.0, d)  # the 2 mm zone bridges the 1 mm slot and fills the whole inside
    assert got.area == pytest.approx(c_shape.buffer(d, quad_segs=64).area, rel=2e-3)
    assert not got.contains(Point(0, 0))  # 18 mm from every copper edge


def test_a_zone_that_is_not_the_grown_outline_is_not_trusted() -> None:
    disc = Point(0, 0).buffer(5.0, quad_segs=64)
    odd_zone = Point(3, 3).buffer(4.0)  # a hand-made zone elsewhere
    got = grow_outline(disc, odd_zone, 1.0, 10.0)
    assert got.area == pytest.approx(math.pi * 15.0**2, rel=2e-3)
    assert got.covers(Point(-14.5, 0))
