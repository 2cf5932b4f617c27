"""The cheaper ways of the design step and the summaries give what the plain ways give.

References outside the code under test: Python's own ``round`` (correctly rounded, halves to
even on the exact binary value, as the language reference documents it) for the summary rings,
and shapely's plain overlay operations for the cuts made polygon by polygon.  Node decisions are
checked against the geometry drawn: a crossing of two thin traces cannot hold the 3.5 mm core,
two overlapping 6 mm pads on two layers can.
"""

from __future__ import annotations

import math

import numpy as np
import shapely
from shapely.geometry import MultiPolygon, Polygon

from sensorcheck.check import _rings
from sensorcheck.design.sensors import (
    CROSS_LAYER_GAP_MM,
    NODE_CORE_RADIUS_MM,
    _and_by_part,
    _minus_by_part,
    facing_nodes,
    self_electrode,
    whole_net_electrode,
)

from .synth import disc, make_board, track


def _rings_reference(geom, tolerance_mm: float = 0.02) -> list[list[tuple[float, float]]]:
    """The rings as the summaries made them before: simplify, then Python's round per value."""
    geom = geom.simplify(tolerance_mm, preserve_topology=True)
    out = []
    for poly in getattr(geom, "geoms", [geom]):
        for ring in [poly.exterior, *poly.interiors]:
            out.append([(round(x, 3), round(y, 3)) for x, y in ring.coords])
    return out


def _star(cx: float, cy: float, radii: np.ndarray) -> Polygon:
    n = len(radii)
    pts = [(cx + r * math.cos(2 * math.pi * k / n), cy + r * math.sin(2 * math.pi * k / n)) for k, r in enumerate(radii)]
    return Polygon(pts)


def test_summary_rings_round_every_value_as_python_does() -> None:
    rng = np.random.default_rng(7)
    # spiky stars (every vertex survives the 0.02 mm simplification) with a hole, centres on halves
    # of a micrometre and off them, on both sides of zero
    for cx, cy in [(0.0005, -0.0005), (2.675, -1.0015), (-120.1235, 88.8885), (0.0, 0.0)]:
        outer = _star(cx, cy, np.where(np.arange(40) % 2 == 0, 10.0, 6.0) + rng.uniform(0, 0.5, 40))
        hole = _star(cx, cy, np.full(12, 2.0) + rng.uniform(0, 0.3, 12))
        poly = Polygon(outer.exterior.coords, [hole.exterior.coords])
        assert poly.is_valid
        multi = MultiPolygon([poly, _star(cx + 40, cy, np.full(8, 3.0))])
        for g in (poly, multi):
            assert _rings(g) == _rings_reference(g)
    # coordinates exactly on halves of a micrometre (as far as binary allows) and one ulp beside them
    k = rng.integers(-200_000, 200_000, 60)
    xs = (k + 0.5) / 1000
    for shift in (xs, np.nextafter(xs, np.inf), np.nextafter(xs, -np.inf)):
        # a zigzag along x (x sorted, no two alike) closed far above: a valid polygon
        pts = [(float(x), float(10 * i % 7)) for i, x in enumerate(np.unique(shift))]
        poly = Polygon(pts + [(pts[-1][0] + 5, 50.0), (pts[0][0] - 5, 50.0)])
        assert poly.is_valid
        assert _rings(poly) == _rings_reference(poly)
    assert _rings(None) == [] and _rings(Polygon()) == []


def _keys() -> MultiPolygon:
    # four key pads of one net in a row, 20 mm apart
    return MultiPolygon([disc(20.0 * k, 0, 4.0) for k in range(4)])


def test_cut_by_part_is_the_plain_overlay() -> None:
    net = _keys()
    for footprint in (disc(0, 0, 5.0), disc(10, 0, 7.0), disc(20, 0, 2.0), disc(200, 0, 3.0),
                      shapely.box(-10, -10, 80, 10)):
        plain_and = net.intersection(footprint)
        plain_minus = net.difference(footprint)
        by_and = _and_by_part(net, footprint)
        by_minus = _minus_by_part(net, footprint)
        # the same point sets (shapely's plain overlays as the reference)
        assert by_and.symmetric_difference(plain_and).area < 1e-9
        assert by_minus.symmetric_difference(plain_minus).area < 1e-9
        assert abs(by_and.area + by_minus.area - net.area) < 1e-9


def test_crossing_traces_on_two_layers_make_no_node() -> None:
    # two 0.25 mm traces crossing at right angles: their facing region at the 1 mm cross-layer
    # reach is a 2.25 mm square, smaller than the 3.5 mm core
    tx = track([(-20, 0), (20, 0)], 0.25)
    rx = track([(0, -20), (0, 20)], 0.25)
    assert (0.25 + 2 * CROSS_LAYER_GAP_MM) < 2 * NODE_CORE_RADIUS_MM
    assert facing_nodes(tx, rx, CROSS_LAYER_GAP_MM) == []
    # at 45 degrees the square becomes a rhombus 2.25 * sqrt(2) = 3.2 mm long: still no core
    rx45 = track([(-15, -15), (15, 15)], 0.25)
    assert facing_nodes(tx, rx45, CROSS_LAYER_GAP_MM) == []


def test_overlapping_pads_on_two_layers_make_a_node() -> None:
    tx = disc(0, 0, 6.0)
    rx = shapely.union_all([disc(1.0, 0, 4.0), track([(4, 0), (30, 0)], 0.25)])
    (fp,) = facing_nodes(tx, rx, CROSS_LAYER_GAP_MM)
    # the footprint holds the RX pad, which lies over the TX pad
    assert fp.contains(disc(1.0, 0, 3.9))


def test_self_and_whole_net_traces_are_the_rest_of_the_net() -> None:
    # a 6 mm pad with its 0.25 mm trace on top, and a via pad of the net on the bottom
    pad = disc(0, 0, 6.0)
    line = track([(6, 0), (30, 0)], 0.25)
    board = make_board({"top-copper": {"B1": [pad, line]}, "bottom-copper": {"B1": disc(30, 0, 0.5)}})
    top = board.layer("top-copper")
    e = self_electrode(board, "B1", "self", "top", [])
    assert e is not None and e.layer == "top-copper"
    # the rest of the net on the electrode's layer is its copper minus the electrode (shapely's
    # plain difference as the reference), and all of it on the other layer
    assert e.trace["top-copper"].symmetric_difference(top.by_net["B1"].difference(e.geometry)).area < 1e-9
    assert e.trace["bottom-copper"].equals(board.layer("bottom-copper").by_net["B1"])
    # a whole-net electrode leaves nothing of the net on its own layer
    w = whole_net_electrode(board, "B1", "self", "top")
    assert w is not None and w.layer == "top-copper" and "top-copper" not in w.trace
    assert "bottom-copper" in w.trace
