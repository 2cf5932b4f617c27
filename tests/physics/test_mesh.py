"""The mesher: area preserved, edges refined, bad polygons refused."""

from __future__ import annotations

import numpy as np
import pytest
from shapely.geometry import Point, Polygon, box

from sensorcheck.physics.bem import Panels, polygon_integral
from sensorcheck.physics.mesh import MeshSpec, cylinder_panels, flat_panels, mesh_polygon


@pytest.mark.parametrize(
    "geom",
    [box(0, 0, 10, 4), Point(0, 0).buffer(5, quad_segs=32), box(0, 0, 20, 20).difference(Point(10, 10).buffer(4, quad_segs=16))],
)
def test_panels_cover_the_polygon_exactly(geom: Polygon) -> None:
    # the panels tile the polygon: total area equals the shapely area (to round-off of the cuts)
    v = flat_panels(geom, 0.0, MeshSpec(0.4, 2.0, 0.35))
    p = Panels(v, np.zeros(len(v), dtype=int))
    assert p.area.sum() == pytest.approx(geom.area, rel=2e-3)


def test_edge_panels_are_smaller_than_interior_ones() -> None:
    geom = box(0, 0, 20, 20)
    v = flat_panels(geom, 0.0, MeshSpec(0.5, 3.0, 0.35))
    p = Panels(v, np.zeros(len(v), dtype=int))
    d = np.minimum.reduce([p.centroid[:, 0], p.centroid[:, 1], 20 - p.centroid[:, 0], 20 - p.centroid[:, 1]])
    assert p.area[d < 0.3].max() < p.area[d > 5].min()


def test_self_intersecting_polygon_is_refused() -> None:
    bowtie = Polygon([(0, 0), (2, 2), (2, 0), (0, 2)])
    assert not bowtie.is_valid
    with pytest.raises(ValueError, match="invalid polygon"):
        mesh_polygon(bowtie, MeshSpec(0.1, 0.5))


def test_degenerate_polygon_is_refused() -> None:
    # zero-area (collinear) outline: a clear error rather than a conductor with no charge
    with pytest.raises(ValueError, match="invalid polygon"):
        mesh_polygon(Polygon([(0, 0), (1, 0), (2, 0)]), MeshSpec(0.1, 0.5))


def test_bad_mesh_sizes_are_refused() -> None:
    with pytest.raises(ValueError):
        MeshSpec(0.0, 1.0)
    with pytest.raises(ValueError):
        MeshSpec(1.0, 0.5)


def test_polygon_integral_matches_numerical_quadrature() -> None:
    # the analytic 1/R integral over a flat panel against a dense midpoint rule (observer off the panel)
    sq = np.array([[[0, 0, 0], [1, 0, 0], [1, 1, 0], [0, 1, 0]]], dtype=float)
    obs = np.array([[0.3, 0.4, 0.5]])
    n = 800
    g = (np.arange(n) + 0.5) / n
    x, y = np.meshgrid(g, g)
    num = np.sum(1.0 / np.sqrt((x - 0.3) ** 2 + (y - 0.4) ** 2 + 0.25)) / n**2
    assert polygon_integral(obs, sq)[0] == pytest.approx(num, rel=1e-5)
    # self term at the centre of a unit square: 4 ln(1 + sqrt 2) (closed form, e.g. Durand, Electrostatique)
    centre = np.array([[0.5, 0.5, 0.0]])
    assert polygon_integral(centre, sq)[0] == pytest.approx(4 * np.log(1 + np.sqrt(2)), rel=1e-12)


def test_cylinder_is_closed() -> None:
    # the finger: side area 2 pi r L (inscribed polygon), two end caps
    v = cylinder_panels(0.0, 0.0, 0.0, 4.0, 20.0, h_edge=0.5, h_max=3.0, n_theta=24)
    p = Panels(v, np.zeros(len(v), dtype=int))
    side = 24 * 2 * 4.0 * np.sin(np.pi / 24) * 20.0
    cap = 0.5 * 24 * 16.0 * np.sin(2 * np.pi / 24)
    assert p.area.sum() == pytest.approx(side + 2 * cap, rel=1e-9)
