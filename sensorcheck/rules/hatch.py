"""Hatch rules: copper fill measured from the copper image around and under sensors."""

from __future__ import annotations

import math
from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
import shapely
from shapely.geometry.base import BaseGeometry

from sensorcheck.board.model import Feature
from sensorcheck.design.model import Design
from sensorcheck.physics.parasitics import parallel_plate_pf
from sensorcheck.rules.common import (
    FR4_PARAM,
    SELF_KINDS,
    bbox_overlap,
    box_mask,
    clipped_union,
    finding,
    fmt,
    layer_separation,
    sensing_nets,
    source_near,
    union,
)
from sensorcheck.rules.base import MissingInput, Param, Rule
from sensorcheck.rules.effects import COUPLING_PARAM, CopperReader, copper_effect
from sensorcheck.findings import Finding


@dataclass(frozen=True, slots=True)
class HatchMeasure:
    """Copper fill of a window, with line width and opening inferred from the image."""

    fill: float  # 0..1
    openings: int  # closed openings (holes in the copper) inside the window
    opening_mm: float | None  # equivalent square side of the most common opening
    line_mm: float | None  # line width that, with that opening, gives the measured fill


def _typical_area(areas: list[float]) -> float:
    """The hatch's own opening area: the most common size (5 % bins), not a mean or median.

    Near pads, traces and clearances many openings are cut to odd sizes (on a real board they can
    outnumber the whole ones); the whole openings all have the same area and form the largest bin.
    """
    bins: dict[int, list[float]] = {}
    for a in areas:
        bins.setdefault(round(math.log(a) / math.log(1.05)), []).append(a)
    best = max(bins.values(), key=lambda v: (len(v), float(np.median(v))))
    return float(np.median(best))


def measure_hatch(copper_geom: BaseGeometry, window: BaseGeometry) -> HatchMeasure:
    """Fill = copper area / window area, with the hatch's opening and line width read from the image.

    The opening g is the side of a square of the most common area among the copper's closed
    openings inside the window (clearances around what the window excludes do not count, and the
    openings that pads and traces cut to odd sizes do not pull it down); the line width w is the
    median distance from each opening to its nearest neighbour (the copper line between them), so
    it does not depend on how the window cuts the hatch.  For a square hatch the fill of a whole
    number of periods is then 1 - (g/(g+w))^2 (derived), which the tests check.  Solid copper (no
    openings) gives no opening and no width.
    """
    if window.is_empty or window.area <= 0:
        return HatchMeasure(0.0, 0, None, None)
    c = copper_geom.intersection(window) if not copper_geom.is_empty else copper_geom
    fill = min(1.0, c.area / window.area) if not c.is_empty else 0.0
    polys = shapely.get_parts(c) if not c.is_empty else np.empty(0, dtype=object)
    polys = polys[shapely.get_type_id(polys) == 3]
    counts = shapely.get_num_interior_rings(polys)
    rings = [shapely.get_interior_ring(p, i) for p, n in zip(polys, counts) for i in range(int(n))]
    openings: list[BaseGeometry] = []
    if rings:
        cand = shapely.polygons(np.array(rings, dtype=object))
        cand = cand[shapely.area(cand) > 1e-4]
        if len(cand):
            # an opening that covers part of the window's own hole (the cut-out around the sensor)
            # is a clearance, not a hatch opening
            shapely.prepare(window)
            openings = list(cand[shapely.covers(window, cand)])
    if not openings:
        return HatchMeasure(fill, 0, None, None)
    g = math.sqrt(_typical_area([o.area for o in openings]))
    if len(openings) < 2:
        return HatchMeasure(fill, 1, g, None)
    tree = shapely.STRtree(openings)
    idx, dist = tree.query_nearest(openings, exclusive=True, return_distance=True)
    nearest: dict[int, float] = {}
    for i, d in zip(idx[0], dist):
        nearest[int(i)] = min(float(d), nearest.get(int(i), math.inf))
    w = float(np.median(list(nearest.values())))
    return HatchMeasure(fill, len(openings), g, w)


def _sub_windows(own: BaseGeometry, ring_mm: float, clip: BaseGeometry | None,
                 grow: Callable[[float], BaseGeometry] | None = None) -> list[tuple[float, float, BaseGeometry]]:
    """The rings 0-20 %, 20-50 % and 50-100 % of ``ring_mm`` out from the electrodes (0-2, 2-5, 5-10 mm).

    ``grow(d)`` grows the electrodes by d (the run's cache; ``own.buffer`` without one); ``clip``
    cuts the rings to the board (None when the board covers them all).
    """
    edges = (0.0, 0.2 * ring_mm, 0.5 * ring_mm, ring_mm)
    out = []
    inner = own
    for a, b in zip(edges, edges[1:]):
        outer = grow(b) if grow is not None else own.buffer(b)
        band = outer.difference(inner)
        out.append((a, b, band.intersection(clip) if clip is not None else band))
        inner = outer
    return out


def _sub_rings(windows: list[tuple[float, float, BaseGeometry]], other: BaseGeometry) -> str:
    fills = [100 * other.intersection(w).area / w.area if w.area > 0 else 0.0 for _, _, w in windows]
    spans = "/".join(f"{fmt(a, 0)}-{fmt(b, 0)}" for a, b, _ in windows)
    return f"rings {spans} mm: " + "/".join(fmt(f, 0) for f in fills) + " %"


def _hatch_text(m: HatchMeasure) -> str:
    if m.opening_mm is None or m.line_mm is None:
        return "no hatch openings (solid or sparse copper)"
    return f"hatch line {fmt(m.line_mm)} mm, opening {fmt(m.opening_mm)} mm ({m.openings} openings)"


@dataclass(frozen=True, slots=True)
class _OtherCopper:
    """One layer's copper of the nets that do not sense, split into its polygons, with their index."""

    parts: np.ndarray  # Polygons, in net order
    tree: shapely.STRtree


@dataclass(frozen=True, slots=True)
class _Near:
    """The polygons of one layer's other copper whose box meets a window's box."""

    parts: np.ndarray  # Polygons, whole
    box: tuple[float, float, float, float]  # the window's box

    def box_area_bound(self) -> float:
        """Area of those polygons cut to the box: at least the area of that copper inside the window.

        GEOS's fast rectangle clip may leave invalid polygons, and polygons of two nets that
        overlap are counted twice; both only make the bound larger, never smaller.
        """
        return float(shapely.area(shapely.clip_by_rect(self.parts, *self.box)).sum())

    def copper(self) -> BaseGeometry:
        """Their union cut to the box, exact: what the window's intersection is taken from.

        Polygons of different nets do not meet on a good board (so they already are their union:
        no union is made); when some do (a bad export), they are merged.  The fast clip is kept
        only when it gives a valid geometry.
        """
        parts = self.parts
        if len(parts) > 1:
            a, b = shapely.STRtree(parts).query(parts, predicate="intersects")
            if np.any(a != b):
                return union(shapely.clip_by_rect(parts, *self.box))
        whole = shapely.MultiPolygon(list(parts))
        clipped = shapely.clip_by_rect(whole, *self.box)
        return clipped if clipped.is_valid else whole


def _other_near(layer: str, window: BaseGeometry, boxes: dict[str, _OtherCopper]) -> _Near | None:
    """The other copper on ``layer`` whose box meets ``window``'s box (None when there is none)."""
    oc = boxes.get(layer)
    if oc is None or window.is_empty:
        return None
    hits = oc.tree.query(window.envelope)
    if len(hits) == 0:
        return None
    hits.sort()
    return _Near(oc.parts[hits], window.bounds)


def _other_boxes(design: Design) -> dict[str, _OtherCopper]:
    """Per copper layer: the polygons of the nets that do not sense, in net order, with an index."""
    skip = sensing_nets(design)
    out: dict[str, _OtherCopper] = {}
    for lay in design.board.copper_layers():
        geoms = [g for n, g in lay.by_net.items() if n not in skip and not g.is_empty]
        if not geoms:
            continue
        parts = shapely.get_parts(np.array(geoms, dtype=object))
        parts = parts[shapely.get_type_id(parts) == 3]  # polygons: area copper only
        if len(parts):
            out[lay.name] = _OtherCopper(parts, shapely.STRtree(parts))
    return out


def _features_meeting(features: list[Feature], skip: set[str], window: BaseGeometry) -> list[Feature]:
    """Dark features of nets not in ``skip`` whose box meets the box of ``window`` (boxes compared all at once)."""
    cand = [f for f in features if f.net not in skip and f.polarity == "dark"]
    if not cand or window.is_empty:
        return []
    keep = box_mask(window, shapely.bounds(np.array([f.geometry for f in cand], dtype=object)))
    return [f for f, k in zip(cand, keep) if k]


class FillNearSensor(Rule):
    """Copper fill in a ring around each sensor, per layer, measured from the image.

    What it checks:
        For every sensor and every copper layer, the fill of non-sensing copper (ground hatch,
        pours) in the ring from the electrode outline out to ``ring_mm``, clipped to the board
        outline when known, with the hatch line width and opening inferred from the copper image
        (not from CAD settings), and the fill in the rings 0-2, 2-5 and 5-10 mm (for the default
        10 mm) reported beside it.  Self-capacitance sensors: a warning above
        ``max_fill_sensor_layer_percent`` on the sensor's layer or ``max_fill_other_layers_percent``
        elsewhere.  Mutual sensors: a note at the same limits (they tolerate more ground).  Where
        the field solver has an estimate for the sensor and its window covers the ring, the
        estimate decides: the charge the sensor's drive puts on that layer's copper in the ring
        bounds the capacitance it adds and the touch delta it takes away (physics/effects.py);
        no finding when that is at most ``max_coupling_percent`` of the touch delta.
    Why it matters:
        Ground around a self electrode adds parasitic capacitance and pulls the fringe field away
        from the finger; a light hatch keeps some noise shielding at a fraction of the cost.
    Known limitations:
        Line width and opening assume a square hatch and whole openings in the ring; a ring that
        holds a gap and a hatch reports their average fill.
    Example:
        0.18 mm lines with 1.14 mm openings: 1 - (1.14/1.32)^2 = 25 %.
    Fix:
        Use a lighter hatch (thinner lines or larger openings) around self-capacitance sensors.
    Parameters:
        See the table.
    References:
        Fill of a square hatch 1 - (g/(g+w))^2: derived.  Typical sensor-layer hatch 19-25 %, warn
        above about 35-40 %; 25-50 % on other layers when a rear shield is needed: common practice
        (vendor guidance, anonymous).
    """

    id = "hatch.fill-near-sensor"
    # the pour around the sensors on one layer is one cause (one fix), whatever each key's share
    group_across_sensors = "layer"
    title = "Hatch fill around sensors"
    default_severity = "warning"
    needs = ("sensors",)
    params = {
        "ring_mm": Param(10.0, "mm", "common practice", "outer edge of the ring measured around the electrodes"),
        "max_fill_sensor_layer_percent": Param(40.0, "%", "common practice", "largest fill on the sensor's own layer"),
        "max_fill_other_layers_percent": Param(50.0, "%", "common practice", "largest fill on the other copper layers"),
        "max_coupling_percent": COUPLING_PARAM,
    }

    def check(self, design: Design, estimates: Mapping[str, Any], params: Mapping[str, Any]) -> Iterable[Finding]:
        outline_board = design.board.outline
        board_shape = None
        if outline_board is not None and outline_board.area > 0:
            board_shape = shapely.Polygon(outline_board.exterior) if outline_board.geom_type == "Polygon" else outline_board
            shapely.prepare(board_shape)  # most rings lie inside the board: a prepared test says so cheaply
        boxes = _other_boxes(design)  # once per run
        reader = CopperReader(design)
        for s in design.sensors:
            own = self.cache.outline(s)
            ring = self.cache.grown(s, params["ring_mm"]).difference(own)
            clipped_to_board = board_shape is not None and not board_shape.covers(ring)
            if clipped_to_board:
                ring = ring.intersection(board_shape)
            self_kind = s.kind in SELF_KINDS
            skip = sensing_nets(design)
            windows: list[tuple[float, float, BaseGeometry]] | None = None  # only when something is reported
            for lay in design.board.copper_layers():
                near = _other_near(lay.name, ring, boxes)
                if near is None:
                    continue
                limit = params["max_fill_sensor_layer_percent"] if lay.name == s.layer else params["max_fill_other_layers_percent"]
                if 100 * near.box_area_bound() <= limit * ring.area:
                    continue  # even all the copper in the ring's box is within the limit: so is the ring's
                other = near.copper()
                m = measure_hatch(other, ring)
                if m.fill <= 0:
                    continue
                pct = 100 * m.fill
                if pct <= limit:
                    continue
                physical = copper_effect(reader, estimates.get(s.name), _other_nets(lay, skip), [lay.name], params["ring_mm"],
                                   f"the copper on {lay.name} within {fmt(params['ring_mm'], 1)} mm",
                                   params["max_coupling_percent"])
                if physical is not None and physical[0]:
                    continue  # the estimated effect of the fill is negligible
                sev = "warning" if self_kind else "note"
                windows = windows or _sub_windows(own, params["ring_mm"], ring if clipped_to_board else None,
                                                  lambda d, s=s: self.cache.grown(s, d))
                dense = ring.intersection(other)
                thumb = (f"copper fill {fmt(pct, 1)} % within {fmt(params['ring_mm'], 1)} mm of the electrodes on "
                         f"{lay.name} is above {fmt(limit, 1)} % ({_hatch_text(m)}; {_sub_rings(windows, other)}; "
                         "common practice)")
                yield finding(
                    sev, thumb if physical is None else f"{physical[1]}; rule of thumb: {thumb}",
                    value=pct, limit=limit, unit="%", layer=lay.name, geom=dense,
                    nets=(), sensor=s.name,
                    # the feature that drew the copper at the finding's own point (a hatch drawn as
                    # lines has thousands; the nearest to the whole electrode cost a distance each)
                    source=source_near(_features_meeting(lay.features, skip, ring), dense.representative_point()),
                )


class GroundUnderSelf(Rule):
    """Copper under self electrodes on other layers, weighted by its distance in the stackup.

    What it checks:
        For every self-capacitance electrode and every other copper layer, the copper of other
        nets inside the electrode's outline projected onto that layer: its fill, its distance h and
        permittivity from the stackup, and the capacitance it adds, eps0 eps_r A / h.  An error
        when the copper is solid (fill >= ``solid_fill_percent``) and close (h <= ``close_mm``); a
        warning when it is denser than ``max_fill_percent`` or adds more than ``max_added_pf``.
        Where the field solver has an estimate for the sensor, the estimate decides: the charge
        the sensor's drive puts on the copper under its electrodes on that layer bounds the
        capacitance it adds and the touch delta it takes away (physics/effects.py); no finding
        when that is at most ``max_coupling_percent`` of the touch delta.  The parallel-plate
        number stays in the message as the rule of thumb.
    Why it matters:
        A plane under a pad becomes the dominant parasitic capacitance and steals the field from
        the finger: a 10 mm pad over solid ground 0.2 mm below adds about 15 pF, which drowns a
        1 pF touch.
    Known limitations:
        Parallel-plate, no fringing (a lower bound); a hatch counts as a sheet of its fill.
    Example:
        A 12 mm pad over solid inner-layer ground 0.2 mm down (FR-4 4.5): about 22.5 pF.
    Fix:
        Remove the ground under the electrode, or hatch it (25-50 %) on the farthest layer.
    Parameters:
        See the table.
    References:
        Parallel-plate capacitance: any electrostatics textbook.  No ground under electrodes, or a
        25-50 % hatch on the farthest layer; solid close ground is the classic four-layer mistake:
        common practice (vendor guidance, anonymous).
    """

    id = "hatch.ground-under-self"
    title = "Copper under self electrodes"
    default_severity = "warning"
    needs = ("sensors", "stackup")
    params = {
        "solid_fill_percent": Param(70.0, "%", "common practice", "fill from which copper counts as solid"),
        "close_mm": Param(0.5, "mm", "derived", "solid copper this close under an electrode is an error"),
        "max_fill_percent": Param(50.0, "%", "common practice", "densest hatch accepted under an electrode"),
        "max_added_pf": Param(5.0, "pF", "derived", "largest added plate capacitance accepted (a fraction of a typical 20 pF budget)"),
        "default_epsilon_r": FR4_PARAM,
        "max_coupling_percent": COUPLING_PARAM,
    }

    def check(self, design: Design, estimates: Mapping[str, Any], params: Mapping[str, Any]) -> Iterable[Finding]:
        board = design.board
        reader = CopperReader(design)
        for s in design.sensors:
            if s.kind not in SELF_KINDS:
                continue
            for e in s.electrodes:
                if e.role != "self" or e.geometry.area <= 0:
                    continue
                for lay in board.copper_layers():
                    if lay.name == e.layer:
                        continue
                    under = clipped_union((g for n, g in lay.by_net.items() if n != e.net), e.geometry)
                    if under.is_empty or under.area < 1e-3:
                        continue
                    sep = layer_separation(board, e.layer, lay.name, params["default_epsilon_r"])
                    if sep is None:
                        raise MissingInput(
                            f"the stackup does not place {e.layer} and {lay.name}",
                            "list both copper layers in [[stackup.layers]] with the dielectrics between them",
                        )
                    h, eps = sep
                    fill = 100 * under.area / e.geometry.area
                    added = parallel_plate_pf(under.area, h, eps)
                    stack_src = board.stackup.source if board.stackup else "?"
                    nets = tuple(sorted(n for n, g in lay.by_net.items()
                                        if n != e.net and bbox_overlap(g, e.geometry) and g.intersects(e.geometry)))
                    src = source_near([f for f in lay.features if f.net in nets and bbox_overlap(f.geometry, e.geometry)],
                                      e.geometry)
                    solid = fill >= params["solid_fill_percent"] and h <= params["close_mm"]
                    if not solid and not (fill > params["max_fill_percent"] or added > params["max_added_pf"]):
                        continue
                    physical = copper_effect(reader, estimates.get(s.name), nets, [lay.name], 0.0,
                                       f"the copper under the electrodes on {lay.name}", params["max_coupling_percent"])
                    if physical is not None and physical[0]:
                        continue  # the estimated effect of the copper under the electrode is negligible
                    base = (
                        f"{fmt(fill, 1)} % of the electrode ({fmt(under.area, 1)} mm2) has copper under it on {lay.name}, "
                        f"{fmt(h, 3)} mm below (eps_r {fmt(eps, 2)}, stackup from {stack_src}): adds about "
                        f"{fmt(added, 2)} pF (parallel plate, lower bound)"
                    )
                    if physical is not None:
                        base = f"{physical[1]}; rule of thumb: {base}"
                    if solid:
                        yield finding(
                            "error", f"{base}; solid copper within {fmt(params['close_mm'])} mm under a self electrode",
                            value=h, limit=params["close_mm"], unit="mm", layer=lay.name, geom=under,
                            nets=(e.net, *nets), sensor=s.name, source=src,
                        )
                    elif fill > params["max_fill_percent"] or added > params["max_added_pf"]:
                        # the metric that triggered it: the fill where the fill is over its limit
                        by_fill = fill > params["max_fill_percent"]
                        yield finding(
                            "warning",
                            f"{base}; limits {fmt(params['max_fill_percent'], 0)} % fill and {fmt(params['max_added_pf'], 1)} pF",
                            value=fill if by_fill else added,
                            limit=params["max_fill_percent"] if by_fill else params["max_added_pf"],
                            unit="%" if by_fill else "pF", layer=lay.name, geom=under,
                            nets=(e.net, *nets), sensor=s.name, source=src,
                        )


def _other_nets(lay: Any, skip: set[str]) -> list[str]:
    return [n for n in lay.by_net if n not in skip]


RULES: tuple[type[Rule], ...] = (FillNearSensor, GroundUnderSelf)
