"""Fabrication rules: paste and mask on electrodes, floating and balancing copper, holes and edges."""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from typing import Any

import numpy as np
import shapely

from sensorcheck.board.connectivity import hole_shape
from sensorcheck.board.model import Board, Feature
from sensorcheck.design.model import Design
from sensorcheck.rules.common import (
    VIA_DIAMETER_PARAM,
    box_mask,
    finding,
    fmt,
    hole_nets,
    is_floating_id,
    is_via,
    midpoint,
    nearest_points,
    sensor_source,
    source_near,
    union,
)
from sensorcheck.rules.base import Param, Rule
from sensorcheck.findings import Finding


def _side_layer(copper_layer: str, kind: str) -> str | None:
    if copper_layer == "top-copper":
        return f"top-{kind}"
    if copper_layer == "bottom-copper":
        return f"bottom-{kind}"
    return None


def _openings_on_electrodes(design: Design, kind: str, min_area_mm2: float) -> Iterable[tuple[Any, Any, str, Any, list[Any]]]:
    for s in design.sensors:
        for e in s.electrodes:
            name = _side_layer(e.layer, kind)
            lay = design.board.layer(name) if name else None
            if lay is None or lay.dark is None or lay.dark.is_empty:
                continue
            ov = lay.dark.intersection(e.geometry)
            if ov.is_empty or ov.area < min_area_mm2:
                continue
            feats = [f for f in lay.features if f.polarity == "dark" and f.geometry.intersects(e.geometry)]
            yield s, e, lay.name, ov, feats


class PasteOnElectrode(Rule):
    """Solder paste openings on electrodes.

    What it checks:
        The paste layer on the electrode's side, against every electrode: any overlap is an error.
    Why it matters:
        An electrode drawn as an SMD pad gets a solder bump: under the overlay that is an air gap
        and an uneven bond, and the sensitivity varies from unit to unit.
    Known limitations:
        Intentional spring-contact pads need a waiver.
    Example:
        A button footprint with paste on its pad.
    Fix:
        Remove the paste layer from the electrode footprint.
    Parameters:
        See the table.
    References:
        No paste on electrodes: common practice (a fix recorded in an open hardware project).
    """

    id = "fab.paste-on-electrode"
    title = "Paste opening on an electrode"
    default_severity = "error"
    needs = ("sensors",)
    params = {"min_area_mm2": Param(0.01, "mm2", "derived", "smaller overlaps are ignored as numerical slivers")}

    def check(self, design: Design, estimates: Mapping[str, Any], params: Mapping[str, Any]) -> Iterable[Finding]:
        for s, e, layer, ov, feats in _openings_on_electrodes(design, "paste", params["min_area_mm2"]):
            yield finding(
                "error",
                f"paste opening of {fmt(ov.area, 2)} mm2 on electrode {e.net} ({fmt(100 * ov.area / e.geometry.area, 1)} % "
                "of it); limit 0 mm2",
                value=ov.area, limit=0.0, unit="mm2", layer=layer, geom=ov, nets=(e.net,), sensor=s.name,
                source=feats[0].source if feats else None,
            )


class MaskOpeningOnElectrode(Rule):
    """Solder mask openings on electrodes.

    What it checks:
        The solder-mask layer on the electrode's side (its dark areas are openings): any overlap with
        an electrode is a warning.
    Why it matters:
        Exposed copper is a direct ESD path, corrodes, and a finger or film touching it changes the
        measurement.
    Known limitations:
        Designs that touch bare copper on purpose (springs, direct-touch pads) need a waiver.
    Example:
        A button drawn as a pad with a mask opening.
    Fix:
        Cover the electrode with solder mask.
    Parameters:
        See the table.
    References:
        Keep electrodes under mask unless intended: common practice.
    """

    id = "fab.mask-opening-on-electrode"
    title = "Mask opening on an electrode"
    default_severity = "warning"
    needs = ("sensors",)
    params = {"min_area_mm2": Param(0.01, "mm2", "derived", "smaller overlaps are ignored as numerical slivers")}

    def check(self, design: Design, estimates: Mapping[str, Any], params: Mapping[str, Any]) -> Iterable[Finding]:
        for s, e, layer, ov, feats in _openings_on_electrodes(design, "mask", params["min_area_mm2"]):
            yield finding(
                "warning",
                f"solder-mask opening of {fmt(ov.area, 2)} mm2 exposes electrode {e.net}; limit 0 mm2",
                value=ov.area, limit=0.0, unit="mm2", layer=layer, geom=ov, nets=(e.net,), sensor=s.name,
                source=feats[0].source if feats else None,
            )


def _touching(lay: Any, geom: Any, boxes: dict[str, np.ndarray]) -> list[Any]:
    """The features of ``lay`` that intersect ``geom``, in file order (boxes compared first, all at once)."""
    if lay.name not in boxes:
        boxes[lay.name] = shapely.bounds(np.array([f.geometry for f in lay.features], dtype=object)).reshape(-1, 4)
    b = boxes[lay.name]
    near = np.flatnonzero(box_mask(geom, b))
    return [lay.features[int(k)] for k in near if lay.features[int(k)].geometry.intersects(geom)]


def _is_pad(f: Feature, pins_given: bool) -> bool:
    """A component pad: a pin (X2 ``.P``) where the files give pins, else a flash or a pad function."""
    if pins_given:
        return f.pin is not None
    fn = (f.aperture_function or "").split(",")[0]
    if fn == "FiducialPad":
        return False
    return f.kind == "flash" or fn.endswith("Pad")


def unconnected_by_geometry(board: Board) -> set[str]:
    """Nets of a board without net names that reach no component pad and no plated component hole.

    Every connected piece of copper (islands joined through plated holes) has one net there, given
    by connectivity; a piece is connected when a dark copper object of it is a pad (:func:`_is_pad`)
    or a plated hole that is not a via meets it.
    """
    copper = board.copper_layers()
    nets = {n for lay in copper for n in lay.by_net}
    pins_given = any(f.pin is not None for lay in copper for f in lay.features)
    connected = {f.net for lay in copper for f in lay.features
                 if f.polarity == "dark" and f.net is not None and _is_pad(f, pins_given)}
    holes = [hole_shape(h) for h in board.holes if h.plated is not False and h.function != "via"]
    if holes:
        shapes = np.array(holes, dtype=object)
        for lay in copper:
            names = [n for n in lay.by_net if n not in connected]
            if not names:
                continue
            tree = shapely.STRtree(np.array([lay.by_net[n] for n in names], dtype=object))
            _, hit = tree.query(shapes, predicate="intersects")
            connected.update(names[int(k)] for k in hit)
    return nets - connected


class FloatingCopper(Rule):
    """Unconnected copper near sensors.

    What it checks:
        Copper islands with no net (not connected to any pad) on any copper layer within
        ``distance_mm`` of a sensor's electrodes.  Each island is a warning.

        Where the files name nets (X2 ``.N``, IPC-D-356), floating copper is copper no name reaches:
        its connected piece (islands joined through plated holes) carries no X2 net and no netlist
        point.  Where they name none, every piece has a net from connectivity, so the rule judges by
        geometry instead: a piece is floating when it meets no component pad and no plated
        component hole.  A pad is an object with a pin attribute (X2 ``.P``) where the files give
        pins at all, else a flash or an object whose aperture function is a pad (``...Pad``), but not
        a fiducial (``FiducialPad``); a plated hole counts unless the drill file calls it a via (a
        via only joins layers, it connects to nothing).
    Why it matters:
        Floating metal couples neighbouring sensors to each other and drifts with humidity and touch.
    Known limitations:
        Net assignment comes from the board's connectivity; copper whose net could not be found
        counts as floating.  By geometry (boards without net names) the two readings can differ:
        copper the files name but that is cut off from every pad (a pour island a CAD tool kept,
        stitched by vias only) is floating by geometry, not by name; a pad the files give no net (an
        unconnected pin, a fiducial written as an ordinary pad flash on files without pin
        attributes) connects by geometry but is floating by name; a netless via or plated hole that
        the drill file does not call a via connects by geometry.  On the corpus boards with names
        (b01, b02, b03, b04, b06) both readings give the same findings.
    Example:
        A leftover copper square 3 mm from a button.
    Fix:
        Remove the island or connect it to ground.
    Parameters:
        See the table.
    References:
        No floating copper near sensors: common practice.
    """

    id = "fab.floating-copper"
    title = "Floating copper near a sensor"
    default_severity = "warning"
    needs = ("sensors",)
    params = {
        "distance_mm": Param(10.0, "mm", "common practice", "how far around the electrodes islands are looked for"),
        "min_area_mm2": Param(0.05, "mm2", "derived", "smaller islands are ignored"),
    }

    def check(self, design: Design, estimates: Mapping[str, Any], params: Mapping[str, Any]) -> Iterable[Finding]:
        if design.board.net_source == "geometry":
            unconnected = unconnected_by_geometry(design.board)
            floating = unconnected.__contains__
        else:
            floating = is_floating_id
        feature_boxes: dict[str, np.ndarray] = {}  # layer -> bounds of its features, made when first needed
        islands = {lay.name: sorted((n, g) for n, g in lay.by_net.items() if floating(n))
                   for lay in design.board.copper_layers()}  # once per run, not per sensor
        # the islands' boxes, as arrays, once per run (empty islands get NaN boxes, which meet nothing)
        island_boxes = {name: shapely.bounds(np.array([g for _, g in isl], dtype=object)).reshape(-1, 4)
                        for name, isl in islands.items()}
        for s in design.sensors:
            near = self.cache.grown(s, params["distance_mm"])
            if near.is_empty:
                continue
            for lay in design.board.copper_layers():
                for k in np.flatnonzero(box_mask(near, island_boxes[lay.name])):
                    net, geom = islands[lay.name][int(k)]
                    ov = geom.intersection(near)
                    if ov.is_empty or ov.area < params["min_area_mm2"]:
                        continue
                    d = geom.distance(self.cache.outline(s))
                    yield finding(
                        "warning",
                        f"unconnected copper ({fmt(geom.area, 2)} mm2) on {lay.name} is {fmt(d)} mm from {s.name}; "
                        f"none accepted within {fmt(params['distance_mm'], 1)} mm",
                        value=d, limit=params["distance_mm"], unit="mm", layer=lay.name, geom=geom,
                        sensor=s.name, source=source_near(_touching(lay, geom, feature_boxes), geom),
                    )


class CopperBalancing(Rule):
    """Copper balancing (thieving) near sensors.

    What it checks:
        Objects the Gerber files mark ``.AperFunction,CopperBalancing`` within ``distance_mm`` of a
        sensor's electrodes, on any copper layer.
    Why it matters:
        Balancing copper is floating metal added after the layout review; inside a sensor's field it
        couples sensors and drifts.
    Known limitations:
        Only balancing the files label as such is found; unlabelled dots show up as floating copper.
    Example:
        A fabricator's dot pattern 2 mm from a slider.
    Fix:
        Keep balancing out of sensor areas (say so in the fabrication notes).
    Parameters:
        See the table.
    References:
        No thieving in sensor areas: common practice.
    """

    id = "fab.copper-balancing"
    title = "Copper balancing near a sensor"
    default_severity = "warning"
    needs = ("sensors",)
    params = {"distance_mm": Param(10.0, "mm", "common practice", "how far around the electrodes balancing is looked for")}

    def check(self, design: Design, estimates: Mapping[str, Any], params: Mapping[str, Any]) -> Iterable[Finding]:
        balancing = {
            lay.name: [f for f in lay.features
                       if f.aperture_function and f.aperture_function.lower().startswith("copperbalancing")]
            for lay in design.board.copper_layers()
        }
        if not any(balancing.values()):
            return
        for s in design.sensors:
            near = s.outline.buffer(params["distance_mm"])
            for lay in design.board.copper_layers():
                hits = [f for f in balancing[lay.name] if f.geometry.intersects(near)]
                if not hits:
                    continue
                geom = union(f.geometry for f in hits)
                d = geom.distance(s.outline)
                yield finding(
                    "warning",
                    f"{len(hits)} copper-balancing object(s) ({fmt(geom.area, 2)} mm2) on {lay.name}, {fmt(d)} mm from "
                    f"{s.name}; none accepted within {fmt(params['distance_mm'], 1)} mm",
                    value=d, limit=params["distance_mm"], unit="mm", layer=lay.name, geom=geom, sensor=s.name,
                    source=hits[0].source,
                )


class HoleNearSensor(Rule):
    """Holes (mounting, component, mechanical) near sensors.

    What it checks:
        Every hole that is not a via (vias are ``routing.foreign-via-in-zone``'s job) and not on the
        sensor's own nets, closer than ``min_distance_mm`` from its edge to a sensor's electrodes.
    Why it matters:
        Screws, standoffs and chassis parts are grounded or floating metal in the fringe field.
    Known limitations:
        The hardware in the hole (metal or plastic) is not known.
    Example:
        An M3 mounting hole 2 mm from a button: limit 5 mm.
    Fix:
        Move the hole away or use plastic hardware (and waive with that reason).
    Parameters:
        See the table.
    References:
        A clear space of a few millimetres (5-10 mm) around sensing areas: common practice.
    """

    id = "fab.hole-near-sensor"
    title = "Hole near a sensor"
    default_severity = "warning"
    needs = ("sensors",)
    params = {
        "min_distance_mm": Param(5.0, "mm", "common practice", "closest accepted hole edge"),
        "max_via_diameter_mm": VIA_DIAMETER_PARAM,
    }

    def check(self, design: Design, estimates: Mapping[str, Any], params: Mapping[str, Any]) -> Iterable[Finding]:
        nets_of = hole_nets(design)
        holes = [(h, nets_of[i]) for i, h in enumerate(design.board.holes) if not is_via(h, params["max_via_diameter_mm"])]
        xy = np.array([(h.x_mm, h.y_mm) for h, _ in holes], dtype=float).reshape(-1, 2)
        radius = np.array([h.diameter_mm / 2.0 for h, _ in holes], dtype=float)
        pts = shapely.points(xy)
        for s in design.sensors:
            own = set(s.nets)
            outline = self.cache.outline(s)
            if outline.is_empty:
                continue
            # the distance to the outline's box is a lower bound: holes whose edge is the limit or
            # more from the box need no exact distance
            x0, y0, x1, y1 = outline.bounds
            box_d = np.hypot(np.maximum(0.0, np.maximum(x0 - xy[:, 0], xy[:, 0] - x1)),
                             np.maximum(0.0, np.maximum(y0 - xy[:, 1], xy[:, 1] - y1)))
            near = np.flatnonzero(box_d - radius < params["min_distance_mm"])
            centre_d = np.full(len(holes), np.inf)
            centre_d[near] = shapely.distance(outline, pts[near])  # the candidates at once
            for k in near:
                h, net = holes[int(k)]
                if net in own:
                    continue
                d = max(0.0, float(centre_d[k]) - h.diameter_mm / 2.0)
                if d >= params["min_distance_mm"]:
                    continue
                yield finding(
                    "warning",
                    f"{fmt(h.diameter_mm)} mm hole is {fmt(d)} mm from {s.name}; limit {fmt(params['min_distance_mm'], 1)} mm",
                    value=d, limit=params["min_distance_mm"], unit="mm", layer=s.layer, point=(h.x_mm, h.y_mm),
                    sensor=s.name, nets=s.nets, source=h.source,
                )


class BoardEdgeNearSensor(Rule):
    """Electrodes close to the board edge.

    What it checks:
        The distance from every sensor's electrodes to the board outline; below
        ``min_distance_mm`` is a warning.
    Why it matters:
        The edge is where ESD arrives and mechanical damage happens; the field also bends at the
        edge of the overlay.
    Known limitations:
        The enclosure's seams are not known (an input the config does not yet have).
    Example:
        A slider 0.8 mm from the edge: limit 2 mm.
    Fix:
        Move the sensor inwards, or put a ground ring along the edge.
    Parameters:
        See the table.
    References:
        At least 1-2 mm from the edge: common practice.
    """

    id = "fab.board-edge-near-sensor"
    title = "Sensor near the board edge"
    default_severity = "warning"
    needs = ("sensors", "outline")
    params = {"min_distance_mm": Param(2.0, "mm", "common practice", "closest accepted distance to the outline")}

    def check(self, design: Design, estimates: Mapping[str, Any], params: Mapping[str, Any]) -> Iterable[Finding]:
        outline = design.board.outline
        edge = outline.boundary if outline.geom_type in ("Polygon", "MultiPolygon") else outline
        shapely.prepare(edge)  # the prepared "within distance" test skips most of the edge at once
        for s in design.sensors:
            if not shapely.dwithin(edge, self.cache.outline(s), params["min_distance_mm"]):
                continue  # farther than the limit: the exact distance is not needed
            d = self.cache.outline(s).distance(edge)
            if d >= params["min_distance_mm"]:
                continue
            pa, pb = nearest_points(s.outline, edge)
            yield finding(
                "warning",
                f"{s.name} is {fmt(d)} mm from the board edge; limit {fmt(params['min_distance_mm'], 1)} mm",
                value=d, limit=params["min_distance_mm"], unit="mm", layer=s.layer, point=midpoint(pa, pb),
                geom=s.outline, nets=s.nets, sensor=s.name, source=sensor_source(design, s, edge),
            )


RULES: tuple[type[Rule], ...] = (
    PasteOnElectrode,
    MaskOpeningOnElectrode,
    FloatingCopper,
    CopperBalancing,
    HoleNearSensor,
    BoardEdgeNearSensor,
)
