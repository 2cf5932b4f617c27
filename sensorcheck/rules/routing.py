"""Routing rules: what else runs through, under or beside a sensor."""

from __future__ import annotations

import math
from dataclasses import dataclass
from collections.abc import Iterable, Iterator, Mapping
from typing import Any

import numpy as np
import shapely
from shapely.geometry import LineString, Point
from shapely.geometry.base import BaseGeometry

from sensorcheck.board.model import Board, Feature
from sensorcheck.design.model import Design, Electrode, Sensor
from sensorcheck.rules.common import (
    VIA_DIAMETER_PARAM,
    REFERENCE_ROLES,
    SELF_KINDS,
    aggressor_kind,
    box_mask,
    finding,
    fmt,
    hole_nets,
    is_via,
    midpoint,
    nearest_points,
    paths,
    require_role,
    role,
    source_near,
    union,
)
from sensorcheck.rules.base import Param, Rule
from sensorcheck.rules.effects import (
    COUPLING_PARAM,
    CROSSTALK_PARAM,
    CopperReader,
    copper_effect,
    covers,
    crosstalk_percent,
    inside_window,
)
from sensorcheck.findings import Finding, Severity


class FeatureIndex:
    """A board's dark copper features by layer and net, made once per rule run.

    ``net(layer, net)`` is ``net_features(board, layer, [net])`` (same features, same order)
    without a pass over the whole layer per call; ``trace(electrode)`` is the draws and arcs of the
    electrode's net on every layer that are not inside the electrode (shrunk by 1 um); the electrode is shrunk for the containment test only when one of its
    net's draws lies inside the electrode's box (a path inside the shrunk electrode lies inside
    that box), and only those draws are tested.
    """

    def __init__(self, board: Board) -> None:
        self.board = board
        self._by: dict[str, dict[str | None, list[Feature]]] = {}
        self._traces: dict[int, tuple[Electrode, dict[str, list[Feature]]]] = {}

    def _layer(self, layer: str) -> dict[str | None, list[Feature]]:
        got = self._by.get(layer)
        if got is None:
            got = {}
            lay = self.board.layer(layer)
            for f in lay.features if lay is not None else ():
                if f.polarity == "dark":
                    got.setdefault(f.net, []).append(f)
            self._by[layer] = got
        return got

    def net(self, layer: str, net: str) -> list[Feature]:
        return list(self._layer(layer).get(net, ()))

    def trace(self, electrode: Electrode) -> dict[str, list[Feature]]:
        hit = self._traces.get(id(electrode))
        if hit is not None and hit[0] is electrode:
            return hit[1]
        out: dict[str, list[Feature]] = {}
        for lay in self.board.copper_layers():
            feats = [f for f in self._layer(lay.name).get(electrode.net, ()) if f.path is not None]
            if lay.name == electrode.layer and feats:
                inside = _paths_inside_box(feats, electrode.geometry)
                if inside.any():
                    shrunk = electrode.geometry.buffer(-1e-3)
                    held = np.zeros(len(feats), dtype=bool)
                    k = np.flatnonzero(inside)
                    held[k] = shapely.contains(shrunk, np.array([feats[int(i)].path for i in k], dtype=object))
                    feats = [f for f, h in zip(feats, held) if not h]
            if feats:
                out[lay.name] = feats
        self._traces[id(electrode)] = (electrode, out)
        return out


#: a region of a sensing net mostly (at least half of it) outside its electrode whose mean width there
#: (2 x area / perimeter; a strip of width w and length L >> w gives w) is at most this is a trace
#: drawn as a polygon (the same bound as the electrode/trace split's thin draws, design/sensors.py)
REGION_TRACE_WIDTH_MAX_MM = 1.0


def region_trace_nets(design: Design, index: FeatureIndex) -> list[str]:
    """Sensing nets with trace copper drawn only as regions on some layer (no draw or arc of the net
    there outside its electrode): what the rules that read trace centre lines cannot measure."""
    out: list[str] = []
    seen: set[str] = set()
    for s in design.sensors:
        for e in s.electrodes:
            if e.net in seen:
                continue
            seen.add(e.net)
            drawn = index.trace(e)
            for layer, g in sorted(e.trace.items()):
                if g.is_empty or layer in drawn:
                    continue
                for f in index.net(layer, e.net):
                    if f.kind != "region":
                        continue
                    rest = f.geometry.difference(e.geometry) if layer == e.layer else f.geometry
                    # mostly outside the electrode (not an electrode's own edge cut by a node's footprint)
                    # and thin
                    if (rest.area > 0.05 and rest.area >= 0.5 * f.geometry.area
                            and 2 * rest.area / max(rest.length, 1e-9) <= REGION_TRACE_WIDTH_MAX_MM):
                        out.append(e.net)
                        break
                if out and out[-1] == e.net:
                    break
    return out


def traces_not_measured(rule_id: str, design: Design, index: FeatureIndex, what: str) -> Iterator[Finding]:
    """One "not checked" line for the sensing nets whose traces are drawn as regions (none if none)."""
    nets = region_trace_nets(design, index)
    if nets:
        from sensorcheck.rules.base import not_checked_note

        shown = ", ".join(nets[:5]) + (f" and {len(nets) - 5} more" if len(nets) > 5 else "")
        note = not_checked_note(
            rule_id, f"the {what} of {len(nets)} sensing net(s) ({shown}): their traces are drawn as regions "
            "(polygons), which carry no aperture width or centre line",
            "export traces as draws (most EDA tools do), or check these traces by eye")
        if any(index.trace(e) for s in design.sensors for e in s.electrodes):
            # the other nets' traces were measured: the rule ran, this part of it did not
            note.message = "partly " + note.message
        yield note


def _paths_inside_box(feats: list[Feature], geom: BaseGeometry) -> np.ndarray:
    """Which features' paths have a box inside the box of ``geom`` (edges included, 1e-9 mm slack)."""
    if geom.is_empty:
        return np.zeros(len(feats), dtype=bool)
    x0, y0, x1, y1 = geom.bounds
    b = shapely.bounds(np.array([f.path for f in feats], dtype=object)).reshape(-1, 4)
    tol = 1e-9
    return (b[:, 0] >= x0 - tol) & (b[:, 1] >= y0 - tol) & (b[:, 2] <= x1 + tol) & (b[:, 3] <= y1 + tol)


def _other_electrodes(design: Design, s: Sensor) -> BaseGeometry:
    return union(e.geometry for o in design.sensors if o is not s for e in o.electrodes)


def _with_effect(f: Finding, physical: tuple[bool, str, float, float] | None) -> Finding:
    """A rule-of-thumb finding the estimate did not clear: the physical verdict first, its metric the
    finding's value, the geometric number beside it as the rule of thumb."""
    if physical is None:
        return f
    _, text, pct, limit = physical
    f.message = f"{text}; rule of thumb: {f.message}"
    f.value, f.limit, f.unit = round(pct, 6), round(limit, 6), "% of delta"
    return f


class ForeignCopperInZone(Rule):
    """Copper of foreign nets inside a sensor's sensing zone, on any layer.

    What it checks:
        For every sensor and every copper layer, copper of nets that are neither the sensor's own
        nor ground, shield or guard (and not aggressors, which ``routing.aggressor-near-sensor``
        judges), whatever their name (copper of nets known only by connectivity, ``~n...``, too;
        so unconnected copper near a named board's sensor is reported here as well as by
        ``fab.floating-copper``), inside the sensing
        zone (the electrodes grown by the zone margin).  Another sensor's electrodes are not
        counted; its traces are.  Copper under the electrode itself is an error, in the rest of
        the zone a warning.  Where the field solver has an estimate for the sensor, its bound
        decides (physics/effects.py): the capacitance the net's copper within the zone adds and
        the touch delta it takes away are at most the charge the sensor's drive puts on it; no
        finding when that is at most ``max_coupling_percent`` of the sensor's touch delta.
    Why it matters:
        Every conductor in the sensing field is an electrode too: it adds parasitic capacitance,
        couples its own signals into the sensor and makes it respond where it should not.
    Known limitations:
        Zone margin is set by the design step; copper on a layer shielded by a solid ground layer
        in between is still reported.
    Example:
        A 0.2 mm signal trace crossing a button's zone on the bottom layer.
    Fix:
        Route the net around the zone, or put ground or shield between it and the electrode.
    Parameters:
        See the table.
    References:
        No components or traces adjacent to or under electrodes: common practice (vendor
        guidance, anonymous).
    """

    id = "routing.foreign-copper-in-zone"
    cause_includes_nets = False  # one sensor's zone on one layer is the cause, whichever nets intrude
    title = "Foreign copper in a sensing zone"
    default_severity = "warning"
    needs = ("sensors",)
    params = {
        "min_area_mm2": Param(0.01, "mm2", "derived", "smaller overlaps are ignored as numerical slivers"),
        "max_coupling_percent": COUPLING_PARAM,
    }

    def check(self, design: Design, estimates: Mapping[str, Any], params: Mapping[str, Any]) -> Iterable[Finding]:
        reader = CopperReader(design)
        # trees made once per run: every sensor's electrodes, and each layer's copper by net
        els = [(o, e.geometry) for o in design.sensors for e in o.electrodes if not e.geometry.is_empty]
        el_tree = shapely.STRtree([g for _, g in els])
        layers = []
        for lay in design.board.copper_layers():
            names = sorted(n for n, g in lay.by_net.items() if not g.is_empty)
            layers.append((lay, names, shapely.STRtree([lay.by_net[n] for n in names])))
        index = FeatureIndex(design.board)
        skip = REFERENCE_ROLES | {"aggressor"}
        # whatever the name: copper of an unnamed net (``~n...``) is foreign as much as a named one
        judged = {n: role(design, n) not in skip for _, names, _ in layers for n in names}
        for s in design.sensors:
            own = set(s.nets)
            others_el: BaseGeometry | None = None
            zone_ready = False
            for lay, names, tree in layers:
                nets = [n for n in sorted(names[int(i)] for i in tree.query(s.zone)) if n not in own and judged[n]]
                if not nets:
                    continue
                if not zone_ready:
                    shapely.prepare(s.zone)
                    zone_ready = True
                # copper that does not touch the zone has nothing inside it: only the rest is clipped
                meets = shapely.intersects(s.zone, np.array([lay.by_net[n] for n in nets], dtype=object))
                for net in (n for n, m in zip(nets, meets) if m):
                    geom = lay.by_net[net]
                    inside = geom.intersection(s.zone)
                    if inside.is_empty:
                        continue
                    if others_el is None:
                        # other sensors' electrodes whose box meets the zone's: the rest cannot touch it
                        others_el = union(els[int(i)][1] for i in sorted(el_tree.query(s.zone)) if els[int(i)][0] is not s)
                    if not others_el.is_empty:
                        inside = inside.difference(others_el)
                    if inside.is_empty or inside.area < params["min_area_mm2"]:
                        continue
                    under = inside.intersection(self.cache.outline(s))
                    is_under = not under.is_empty and under.area >= params["min_area_mm2"]
                    physical = copper_effect(reader, estimates.get(s.name), [net], [lay.name], s.zone_margin_mm,
                                              f"net {net} on {lay.name} within the zone", params["max_coupling_percent"])
                    if physical is not None and physical[0]:
                        continue  # the estimated effect is negligible
                    src = source_near(index.net(lay.name, net), inside)
                    if is_under:
                        msg = (f"net {net} has {fmt(under.area, 2)} mm2 of copper on {lay.name} under the electrodes of "
                               f"{s.name} (limit 0 mm2)")
                        sev: Severity = "error"
                        geom, area = under, under.area
                    else:
                        msg = (f"net {net} has {fmt(inside.area, 2)} mm2 of copper on {lay.name} inside the sensing zone "
                               f"of {s.name} ({fmt(s.zone_margin_mm, 1)} mm around the electrodes; limit 0 mm2)")
                        sev = "warning"
                        geom, area = inside, inside.area
                    yield _with_effect(finding(
                        sev, msg, value=area, limit=0.0, unit="mm2", layer=lay.name, geom=geom,
                        nets=(net,), sensor=s.name, source=src,
                    ), physical)


class ForeignViaInZone(Rule):
    """Vias of other nets inside a sensing zone.

    What it checks:
        Every via (a plated hole no larger than ``max_via_diameter_mm`` where the drill file does
        not say) whose net is not the sensor's: inside the sensing zone when the net is a signal,
        or inside the electrode grown by ``clearance_mm`` when it is ground, shield or guard.
    Why it matters:
        A via is a short vertical conductor straight into the sensing field: it behaves like a
        component under the electrode and brings its net's noise with it.
    Known limitations:
        The via's net comes from the drill file or, failing that, the copper it lands on.
    Example:
        A 0.3 mm signal via 2 mm beside a button.
    Fix:
        Move the via out of the zone (ground stitching vias: out of the electrode and its gap).
    Parameters:
        See the table.
    References:
        No vias of other nets inside an electrode or its gap: common practice (vendor guidance,
        anonymous).
    """

    id = "routing.foreign-via-in-zone"
    cause_includes_nets = False  # one sensor's zone on one layer is the cause, whichever nets intrude
    title = "Foreign via in a sensing zone"
    default_severity = "error"
    needs = ("sensors",)
    params = {
        "max_via_diameter_mm": VIA_DIAMETER_PARAM,
        "clearance_mm": Param(0.5, "mm", "common practice", "ground/shield vias must stay this far out of the electrode"),
    }

    def check(self, design: Design, estimates: Mapping[str, Any], params: Mapping[str, Any]) -> Iterable[Finding]:
        nets_of = hole_nets(design)
        clear = float(params["clearance_mm"])
        vias = [(h, nets_of[i]) for i, h in enumerate(design.board.holes) if is_via(h, params["max_via_diameter_mm"])]
        if not vias or not design.sensors:
            return
        # every via's point, net and net role once per run; per sensor only a box test, then the exact
        # containment test for the vias inside the box (a point inside an area lies inside its box)
        xs = np.array([h.x_mm for h, _ in vias], dtype=float)
        ys = np.array([h.y_mm for h, _ in vias], dtype=float)
        pts = shapely.points(xs, ys)
        net_ids = {net: k for k, net in enumerate(dict.fromkeys(net for _, net in vias))}
        via_net = np.array([net_ids[net] for _, net in vias], dtype=np.intp)
        ref_net = np.array([net is not None and role(design, net) in REFERENCE_ROLES for net in net_ids], dtype=bool)
        is_ref = ref_net[via_net]
        for s in design.sensors:
            own_net = np.zeros(len(net_ids), dtype=bool)
            for net in s.nets:
                if net in net_ids:
                    own_net[net_ids[net]] = True
            foreign = ~own_net[via_net]
            hits = np.zeros(len(vias), dtype=bool)
            # signal vias: inside the sensing zone
            cand = foreign & ~is_ref & _in_box(xs, ys, s.zone.bounds if not s.zone.is_empty else None, 0.0)
            if cand.any():
                hits[cand] = shapely.contains(s.zone, pts[cand])
            # ground/shield/guard vias: inside the electrodes grown by the clearance, whose box lies within the
            # electrodes' box grown by the clearance (plus the zone's tolerance, see grow_outline): the
            # grown outline is only made when a via lies inside that box
            cand = foreign & is_ref & _in_box(xs, ys, _electrodes_box(s), clear + 0.02 * max(clear, s.zone_margin_mm) + 1e-3)
            if cand.any():
                hits[cand] = shapely.contains(self.cache.grown(s, clear), pts[cand])
            for k in np.flatnonzero(hits):
                h, net = vias[int(k)]
                ref = bool(is_ref[k])
                p = Point(h.x_mm, h.y_mm)
                d = self.cache.outline(s).distance(p)
                what = "inside the electrode" if d == 0 else f"{fmt(d)} mm from the electrode"
                where = f"the electrode's {fmt(clear)} mm clearance" if ref else "the sensing zone"
                yield finding(
                    "error",
                    f"via of net {net or '(unknown)'} ({fmt(h.diameter_mm)} mm) is {what}, inside {where} of {s.name}",
                    value=d, limit=params["clearance_mm"] if ref else s.zone_margin_mm, unit="mm",
                    layer=s.layer, point=(h.x_mm, h.y_mm), nets=(net,) if net else (), sensor=s.name,
                    source=h.source,
                )


def _electrodes_box(s: Sensor) -> tuple[float, float, float, float] | None:
    """The box of a sensor's electrodes together (that of its outline), None when they are empty."""
    b = shapely.bounds(np.array([e.geometry for e in s.electrodes], dtype=object)).reshape(-1, 4)
    b = b[~np.isnan(b).any(axis=1)]
    if len(b) == 0:
        return None
    return float(b[:, 0].min()), float(b[:, 1].min()), float(b[:, 2].max()), float(b[:, 3].max())


def _in_box(xs: np.ndarray, ys: np.ndarray, box: tuple[float, float, float, float] | None, grow_mm: float) -> np.ndarray:
    """Which points (``xs``, ``ys``) lie inside ``box`` grown by ``grow_mm``, edges included."""
    if box is None:
        return np.zeros(len(xs), dtype=bool)
    x0, y0, x1, y1 = box
    return (xs >= x0 - grow_mm) & (xs <= x1 + grow_mm) & (ys >= y0 - grow_mm) & (ys <= y1 + grow_mm)


class TraceUnderElectrode(Rule):
    """A sensor's trace under or over another sensor's electrode.

    What it checks:
        The trace copper of every sensing net (its copper outside its own electrode, any layer)
        projected onto the electrodes of other nets.  An error when the electrode belongs to a
        self-capacitance sensor, a warning for mutual sensors.  Where the field solver has an
        estimate for the sensor the trace runs under, the estimate decides: the charge its drive
        puts on the trace's net (a bound on the capacitance added and the delta taken away,
        physics/effects.py) within ``max_coupling_percent`` of its touch delta, and the trace's
        own sensor's delta with the finger there within ``max_crosstalk_percent``: no finding.
    Why it matters:
        The trace loads the other electrode with parasitic capacitance and makes its own channel
        respond to touches on the other sensor (ghost keys).
    Known limitations:
        A ground or shield layer between trace and electrode would make the mutual case harmless;
        that is not detected.  Within one mutual node the RX trace may cross its own TX (a centre
        RX leaves through its TX ring): not reported, and in a matrix wired by lines that holds for
        the pair of lines at every node they form.  A line's trace under one electrode is one
        finding, however many nodes the line belongs to (named after the first of them).
    Example:
        Button B1's trace on the bottom layer running under button B2.
    Fix:
        Route the trace around the other electrode, or behind a ground/shield layer.
    Parameters:
        See the table.
    References:
        No sensor trace under another sensor's electrode: common practice (vendor guidance,
        anonymous).
    """

    id = "routing.trace-under-electrode"
    title = "Sensor trace under another electrode"
    default_severity = "error"
    needs = ("sensors",)
    params = {
        "min_area_mm2": Param(0.01, "mm2", "derived", "smaller overlaps are ignored as numerical slivers"),
        "max_coupling_percent": COUPLING_PARAM,
        "max_crosstalk_percent": CROSSTALK_PARAM,
    }

    def check(self, design: Design, estimates: Mapping[str, Any], params: Mapping[str, Any]) -> Iterable[Finding]:
        reader = CopperReader(design)
        flat = [(b, eb) for b in design.sensors for eb in b.electrodes]  # every electrode, in design order
        if not flat:
            return
        boxes = shapely.bounds(np.array([eb.geometry for _, eb in flat], dtype=object))
        net_ids = {n: i for i, n in enumerate(dict.fromkeys(eb.net for _, eb in flat))}
        flat_net = np.array([net_ids[eb.net] for _, eb in flat], dtype=np.intp)
        flat_sensor = np.array([i for i, b in enumerate(design.sensors) for _ in b.electrodes], dtype=np.intp)
        index = FeatureIndex(design.board)
        raw = _trace_hits([eb for _, eb in flat])  # which electrodes each whole trace touches
        raw_by: dict[tuple[int, str], list[int]] = {}
        for i, layer, k in raw:
            raw_by.setdefault((i, layer), []).append(k)
        # the mutual sensors each net is an electrode of: in a matrix wired by lines, every node the
        # line forms with another line is that pair's own node
        mutual_of: dict[int, np.ndarray] = {}
        for i, b in enumerate(design.sensors):
            if b.kind not in SELF_KINDS:
                for eb in b.electrodes:
                    mutual_of.setdefault(net_ids[eb.net], np.zeros(len(design.sensors), dtype=bool))[i] = True
        reported: set[tuple[str, str, int]] = set()  # (net, layer, electrode): one finding per crossing
        ia_flat = -1
        for ia, a in enumerate(design.sensors):
            for ea in a.electrodes:
                ia_flat += 1
                # the electrodes that can be reported at all: other nets, and not an own mutual node (its RX
                # trace leaves through its own TX ring by design) -- any mutual node the trace's net is an
                # electrode of, so a matrix line entering each of its keys is exempt at every key
                judged = flat_net != net_ids[ea.net]
                if a.kind not in SELF_KINDS:
                    judged &= ~mutual_of.get(net_ids[ea.net], np.zeros(len(design.sensors), dtype=bool))[flat_sensor]
                traces: list[tuple[str, BaseGeometry]] = []
                meets: dict[str, set[int]] = {}
                for layer, geom in sorted(ea.trace.items()):
                    # the trace without the electrode is part of the trace: where the whole trace meets no
                    # judged electrode, neither does the part, and the difference is not made
                    if not any(judged[k] for k in raw_by.get((ia_flat, layer), ())):
                        continue
                    tg = _trace_without_electrode(ea, layer, geom)
                    if tg is None:
                        continue
                    traces.append((layer, tg))
                    # which judged electrodes the trace's box meets (as bbox_overlap), and of those the ones
                    # it really touches (else the overlap is empty)
                    cand = np.flatnonzero(box_mask(tg, boxes) & judged)
                    if len(cand):
                        shapely.prepare(tg)
                        touch = shapely.intersects(tg, np.array([flat[k][1].geometry for k in cand], dtype=object))
                        meets[layer] = {int(k) for k, t in zip(cand, touch) if t}
                    else:
                        meets[layer] = set()
                hit = sorted(set().union(*meets.values())) if meets else []
                for k in hit:
                    b, eb = flat[k]
                    for layer, tg in traces:
                        if k not in meets[layer]:
                            continue
                        if (ea.net, layer, k) in reported:
                            continue  # the same line under the same electrode, seen from another node of it
                        ov = tg.intersection(eb.geometry)
                        if ov.is_empty or ov.area < params["min_area_mm2"]:
                            continue
                        reported.add((ea.net, layer, k))
                        physical = _trace_effect(reader, estimates, b.name, a.name, ea.net, layer, ov, params)
                        if physical is not None and physical[0]:
                            continue  # the estimated effect on the electrode's sensor is negligible
                        sev = "error" if b.kind in SELF_KINDS else "warning"
                        yield _with_effect(finding(
                            sev,
                            f"trace of {ea.net} ({a.name}) on {layer} runs under the electrode {eb.net} of {b.name} "
                            f"({eb.layer}) over {fmt(ov.area, 2)} mm2 (limit 0 mm2)",
                            value=ov.area, limit=0.0, unit="mm2", layer=layer, geom=ov,
                            nets=(ea.net, eb.net), sensor=b.name,
                            source=source_near(index.net(layer, ea.net), ov),
                        ), physical)


def _trace_effect(reader: CopperReader, estimates: Mapping[str, Any], victim: str, owner: str, net: str, layer: str,
                  where: BaseGeometry, params: Mapping[str, Any]) -> tuple[bool, str, float, float] | None:
    """The physical verdict on ``net``'s trace (of sensor ``owner``) under an electrode of ``victim``: the
    copper bound on the victim, and the crosstalk into the owner with the finger on the victim."""
    est = estimates.get(victim)
    if est is None or not inside_window(est, where):
        return None
    effect = copper_effect(reader, est, [net], [layer], None, f"the trace of {net} on {layer}",
                            params["max_coupling_percent"])
    if effect is None:
        return None
    cross = crosstalk_percent({victim: est}, victim, owner)
    if cross is None or cross[0] <= params["max_crosstalk_percent"]:
        return effect
    ok, text, pct, limit = effect
    text = f"{text}; {cross[1]} (limit {fmt(params['max_crosstalk_percent'], 0)} %)"
    return False, text, (pct if not ok else cross[0]), (limit if not ok else params["max_crosstalk_percent"])


def _trace_hits(electrodes: list[Electrode]) -> set[tuple[int, str, int]]:
    """(i, layer, k) for every electrode i whose whole trace on ``layer`` touches electrode k of another net.

    The electrodes of one net in several sensors (a matrix column in every key) carry equal traces as
    separate objects: each distinct trace (same layer, box, size and ``equals_identical``) is tested
    once, its polygons queried against a tree of the electrodes' polygons all at once (a geometry meets
    another exactly when one of its parts meets one of the other's).
    """
    firsts: list[BaseGeometry] = []  # one of each distinct trace
    users: list[list[tuple[int, str]]] = []  # the (electrode, layer) carrying it
    seen: dict[tuple[Any, ...], list[int]] = {}
    for i, e in enumerate(electrodes):
        for layer, g in e.trace.items():
            if g.is_empty:
                continue
            key = (layer, g.geom_type, int(shapely.get_num_coordinates(g)), g.bounds)
            for u in seen.get(key, ()):
                if shapely.equals_identical(firsts[u], g):
                    users[u].append((i, layer))
                    break
            else:
                seen.setdefault(key, []).append(len(firsts))
                firsts.append(g)
                users.append([(i, layer)])
    if not firsts:
        return set()
    parts, part_of = shapely.get_parts(np.array(firsts, dtype=object), return_index=True)
    eparts, epart_of = shapely.get_parts(np.array([e.geometry for e in electrodes], dtype=object), return_index=True)
    if len(parts) == 0 or len(eparts) == 0:
        return set()
    qi, ti = shapely.STRtree(eparts).query(parts)  # boxes that meet
    # an electrode of the trace's own net is never reported: not tested
    net_id = {n: j for j, n in enumerate(dict.fromkeys(e.net for e in electrodes))}
    enet = np.array([net_id[e.net] for e in electrodes], dtype=np.intp)
    tnet = np.array([enet[u[0][0]] for u in users], dtype=np.intp)
    other = tnet[part_of[qi]] != enet[epart_of[ti]]
    qi, ti = qi[other], ti[other]
    touch = shapely.intersects(parts[qi], eparts[ti])
    pairs = {(int(part_of[q]), int(epart_of[t])) for q, t in zip(qi[touch], ti[touch])}
    return {(i, layer, k) for u, k in pairs for i, layer in users[u]}


def _trace_without_electrode(e: Electrode, layer: str, geom: BaseGeometry) -> BaseGeometry | None:
    """The electrode's trace copper on ``layer`` (``geom``), without the electrode itself; None where
    nothing of area is left."""
    g = geom.difference(e.geometry) if layer == e.layer else geom
    if not g.is_empty and g.area > 1e-6:
        return g
    return None


def _sensor_copper(design: Design, s: Sensor, layer: str) -> BaseGeometry:
    parts = []
    for e in s.electrodes:
        if e.layer == layer:
            parts.append(e.geometry)
        g = e.trace.get(layer)
        if g is not None:
            parts.append(g)
    return union(parts)


class AggressorNearSensor(Rule):
    """Aggressor nets (LED, clock, switching, radio) near or under sensors.

    What it checks:
        For every sensor and every aggressor net (``[roles] aggressor``): copper of the aggressor
        under or over the electrodes on any layer (an error: an LED under a button); on the
        sensor's layers, the distance from the aggressor to the electrodes and their traces; on the
        other layers, the projected distance to the electrodes.  Closer than
        ``min_distance_led_mm`` (LED nets) or ``min_distance_mm`` (others) is a warning.  Where
        the field solver has an estimate for the sensor, the coupling decides: the charge the
        sensor's drive puts on the aggressor's copper in the solve window is the capacitance
        through which the aggressor's edges reach the sensor (and bounds the signal it takes),
        whatever the distance: no finding when it is at most ``max_coupling_percent`` of the
        sensor's touch delta, else one that gives it with the distance rule beside it.
    Why it matters:
        A fast edge next to a high-impedance sensing input couples straight in: LED drive lines
        beside a button make it trigger when the LED blinks.
    Known limitations:
        Ground copper between the two is not credited.
    Example:
        An LED anode trace 1.2 mm from a button on the same layer: limit 4 mm.
    Fix:
        Move the aggressor away, or put ground between; keep LEDs behind the electrode or in a
        cutout with the same clearance as ground.
    Parameters:
        See the table.
    References:
        LED-drive traces at least 4 mm from sensors, about 1 mm for other signals: common practice
        (vendor guidance, anonymous).
    """

    id = "routing.aggressor-near-sensor"
    title = "Aggressor net near or under a sensor"
    default_severity = "warning"
    needs = ("sensors",)
    params = {
        "min_distance_led_mm": Param(4.0, "mm", "common practice", "LED-drive nets (kind led) keep this far"),
        "min_distance_mm": Param(1.0, "mm", "common practice", "other aggressor nets keep this far"),
        "max_coupling_percent": COUPLING_PARAM,
    }

    def check(self, design: Design, estimates: Mapping[str, Any], params: Mapping[str, Any]) -> Iterable[Finding]:
        board = design.board
        aggressors = require_role(design, "aggressor")
        index = FeatureIndex(board)
        layers = board.copper_layers()
        reader = CopperReader(design)
        for s in design.sensors:
            sensor_layers = {e.layer for e in s.electrodes} | {k for e in s.electrodes for k in e.trace}
            targets: dict[str, BaseGeometry] = {}  # layer -> the sensor's copper there (else its outline), once

            def target(layer: str) -> BaseGeometry:
                if layer not in targets:
                    own = _sensor_copper(design, s, layer) if layer in sensor_layers else union([])
                    targets[layer] = own if not own.is_empty else self.cache.outline(s)
                return targets[layer]

            for net in aggressors:
                kind = aggressor_kind(design, net) or "other"
                limit = params["min_distance_led_mm"] if kind == "led" else params["min_distance_mm"]
                cu = [(lay.name, lay.by_net.get(net)) for lay in layers]
                cu = [(name, ag) for name, ag in cu if ag is not None and not ag.is_empty]
                # the (layer, electrode) where the aggressor lies most under an electrode of another layer (the
                # first of the largest, in layer and electrode order: the order of a slider's segments, which
                # may come from names or from geometry, does not decide); copper that does not touch the
                # electrode has no overlap, so only the rest is cut
                under_hit = None
                for name, ag in cu:
                    for e in s.electrodes:
                        if e.layer != name and _boxes_within(ag, e.geometry, 0.0) and ag.intersects(e.geometry):
                            ov = ag.intersection(e.geometry)
                            if not ov.is_empty and ov.area > 1e-3 and (under_hit is None or ov.area > under_hit[1].area + 1e-9):
                                under_hit = (name, ov, e)
                est = estimates.get(s.name)
                physical = None
                if cu and est is not None and covers(design, est, limit):  # the window saw the copper near
                    physical = copper_effect(reader, est, [net], None, None, f"{kind} net {net}",
                                             params["max_coupling_percent"])
                if physical is not None and physical[0]:
                    continue  # the estimated coupling is negligible, wherever the copper runs
                if under_hit is not None:
                    layer, ov, e = under_hit
                    yield _with_effect(finding(
                        "error",
                        f"{kind} net {net} has {fmt(ov.area, 2)} mm2 of copper on {layer} under the electrode {e.net} of "
                        f"{s.name} (limit: none under, {fmt(limit, 1)} mm away)",
                        value=ov.area, limit=0.0, unit="mm2", layer=layer, geom=ov, nets=(net, e.net), sensor=s.name,
                        source=source_near(index.net(layer, net), ov),
                    ), physical)
                    continue
                # the closest layer (the first of the closest): a layer whose box is at least the limit away, or
                # farther than the closest so far, cannot be it or be reported, and is not measured
                worst: tuple[float, str, BaseGeometry, tuple[float, float]] | None = None
                for name, ag in cu:
                    tgt = target(name)
                    gap = _box_gap(ag, tgt)
                    if gap > limit + 1e-6 or (worst is not None and gap > worst[0] + 1e-6):
                        continue
                    d = ag.distance(tgt)
                    if worst is None or d < worst[0]:
                        pa, pb = nearest_points(ag, tgt)
                        worst = (d, name, ag, midpoint(pa, pb))
                if physical is not None and (worst is None or worst[0] >= limit):
                    # the rule of thumb is met, the coupling is not negligible: the nearest copper is the place
                    worst = min(((ag.distance(target(name)), name, ag, midpoint(*nearest_points(ag, target(name))))
                                 for name, ag in cu), key=lambda t: t[0])
                if worst is not None and (worst[0] < limit or physical is not None):
                    d, layer, ag, pt = worst
                    yield _with_effect(finding(
                        "warning",
                        f"{kind} net {net} on {layer} is {fmt(d)} mm from {s.name}; keep at least {fmt(limit, 1)} mm "
                        "or put ground between (common practice)" + (" (met)" if d >= limit else ""),
                        value=d, limit=limit, unit="mm", layer=layer, point=pt, geom=None, nets=(net, *s.nets),
                        sensor=s.name, source=source_near(index.net(layer, net), Point(pt)),
                    ), physical)


def _box_gap(a: BaseGeometry, b: BaseGeometry) -> float:
    """Distance between the boxes of ``a`` and ``b``: never more than the distance between the two."""
    if a.is_empty or b.is_empty:
        return 0.0
    ax0, ay0, ax1, ay1 = a.bounds
    bx0, by0, bx1, by1 = b.bounds
    return math.hypot(max(0.0, bx0 - ax1, ax0 - bx1), max(0.0, by0 - ay1, ay0 - by1))


class AggressorParallel(Rule):
    """Sensor traces running alongside aggressor nets.

    What it checks:
        The length of every sensor trace (the centre lines of its draws, outside the electrode)
        that lies within ``parallel_distance_mm`` of aggressor copper, on the same layer or
        projected from another layer.  Longer than ``max_parallel_mm`` is a warning.
    Why it matters:
        Coupling grows with the length of the parallel run; a long run beside a clock or PWM line
        injects its edges into the sensing input along the whole length.
    Known limitations:
        Needs draws with centre lines (traces drawn as regions are not measured).
    Example:
        A 20 mm run 0.5 mm beside an LED line: limit 5 mm.
    Fix:
        Separate the runs, cross at right angles on different layers, or put ground between.
    Parameters:
        See the table.
    References:
        Avoid parallel runs with aggressors; if unavoidable, short and at a right angle:
        common practice (vendor guidance, anonymous).
    """

    id = "routing.aggressor-parallel"
    title = "Sensor trace parallel to an aggressor"
    default_severity = "warning"
    needs = ("sensors",)
    params = {
        "parallel_distance_mm": Param(1.0, "mm", "common practice", "runs closer than this count as parallel"),
        "max_parallel_mm": Param(5.0, "mm", "common practice", "longest accepted parallel run"),
    }

    def check(self, design: Design, estimates: Mapping[str, Any], params: Mapping[str, Any]) -> Iterable[Finding]:
        board = design.board
        aggressors = require_role(design, "aggressor")
        index = FeatureIndex(board)
        dist, limit = params["parallel_distance_mm"], params["max_parallel_mm"]
        # each aggressor's copper on every layer and its zone within the distance, made once per run (and the
        # zone only when a trace's box meets the copper's box grown by the distance, which holds the zone)
        ag_all = {net: union(lay.by_net.get(net) for lay in board.copper_layers()) for net in aggressors}
        near: dict[str, BaseGeometry] = {}
        for s in design.sensors:
            for e in s.electrodes:
                tp = {layer: paths(feats) for layer, feats in index.trace(e).items()}
                for net in aggressors:
                    other = ag_all[net]
                    for layer, path in sorted(tp.items()):
                        if path.is_empty or other.is_empty:
                            length, piece = 0.0, shapely.MultiLineString()  # nothing to measure
                        elif limit >= 0 and not _boxes_within(path, other, dist):
                            continue  # nothing of the path within the distance: length 0, within the limit
                        else:
                            if net not in near:
                                near[net] = other.buffer(dist)
                            piece = path.intersection(near[net])
                            length = piece.length
                        if length > limit:
                            kind = aggressor_kind(design, net)
                            yield finding(
                                "warning",
                                f"trace of {e.net} on {layer} runs {fmt(length, 1)} mm within "
                                f"{fmt(params['parallel_distance_mm'])} mm of {kind} net {net}; limit "
                                f"{fmt(params['max_parallel_mm'], 1)} mm",
                                value=length, limit=params["max_parallel_mm"], unit="mm", layer=layer, geom=piece,
                                nets=(e.net, net), sensor=s.name,
                                source=source_near(index.net(layer, e.net), piece),
                            )
        yield from traces_not_measured(self.id, design, index, "parallel runs beside aggressors")


def _boxes_within(a: BaseGeometry, b: BaseGeometry, distance_mm: float) -> bool:
    """May ``a`` come within ``distance_mm`` of ``b``?  False only when their boxes are farther apart than
    that (with 1e-6 mm to spare for the buffer's rounding), so a False is a proof."""
    ax0, ay0, ax1, ay1 = a.bounds
    bx0, by0, bx1, by1 = b.bounds
    g = distance_mm + 1e-6
    return ax0 <= bx1 + g and bx0 - g <= ax1 and ay0 <= by1 + g and by0 - g <= ay1


def _net_trace_paths(index: FeatureIndex, electrodes: list[Electrode]) -> dict[str, BaseGeometry]:
    """Centre lines of a net's draws outside ALL of its electrodes (a net can be in several sensors), per layer.

    A draw is left out when it lies inside an electrode shrunk by 1 um; an electrode is only shrunk
    when some draw lies inside its box (as it must to lie inside the shrunk electrode).
    """
    out: dict[str, BaseGeometry] = {}
    by_layer: dict[str, list[BaseGeometry]] = {}
    for e in electrodes:
        by_layer.setdefault(e.layer, []).append(e.geometry)
    net = electrodes[0].net
    for lay in index.board.copper_layers():
        feats = [f for f in index.net(lay.name, net) if f.path is not None]
        for geom in by_layer.get(lay.name, []):
            if not feats:
                break
            inside = _paths_inside_box(feats, geom)
            if inside.any():
                shrunk = geom.buffer(-1e-3)
                held = np.zeros(len(feats), dtype=bool)
                k = np.flatnonzero(inside)
                held[k] = shapely.contains(shrunk, np.array([feats[int(i)].path for i in k], dtype=object))
                feats = [f for f, h in zip(feats, held) if not h]
        p = paths(feats)
        if not p.is_empty:
            out[lay.name] = p
    return out


class RxParallelTx(Rule):
    """Receiver traces running alongside the transmitter of another node.

    What it checks:
        For every receiver net and transmitter net that are not only ever in one and the same
        sensor, and every layer the receiver's traces run on: the total length of the receiver's
        trace centre lines (draws outside all of its electrodes) within ``parallel_distance_mm``
        of the transmitter's copper (traces or electrodes, on the same layer or projected from
        another layer).  ONE finding per (RX net, TX net, layer) when the total is longer than
        ``max_parallel_mm``: the total is the value; the message gives the longest single run
        and the closest approach of the RX centre line to the TX copper; the location is the
        longest run.  A warning when the two nets form no node anywhere on the board.  A note
        when they already form a node elsewhere (keys scanned as a matrix of strobed columns
        and sensed rows, each key its own sensor): the controller measures that pair anyway, so
        the run does not make a new channel; it adds to that key's baseline and makes a touch
        over the run read as a press of that key.  The reviewer should know where, but on such
        a board every row passes many columns by design, and a warning per pair would be noise.
        Where the field solver has an estimate for the RX's sensor and the runs lie in its solve
        window, the ghost node decides, whatever the run's length: the mutual capacitance between
        the RX and the TX net in the window (the charge RX at 1 V puts on the TX copper,
        physics/effects.py) bounds what a finger over the run can change; no finding when it is
        at most ``max_crosstalk_percent`` of the RX sensor's own touch delta, else one that gives
        it with the run's length and its rule-of-thumb limit beside it.
    Why it matters:
        Every place where an RX runs beside a TX is an extra, touchable mutual node: ghost keys
        and baseline shifts when a finger passes over the traces.
    Known limitations:
        Needs draws with centre lines; ground between the runs is not credited.  An RX net that
        is in several sensors is reported under the first of them.  Within a single mutual node
        (nets in no other sensor) the RX trace leaving through its own TX ring is not reported.
    Example:
        RX1's trace running 15 mm 0.3 mm beside TX2's trace: limit 5 mm.
    Fix:
        Separate the runs, cross them at right angles on different layers, or put ground between.
    Parameters:
        See the table.
    References:
        Avoid RX-TX parallel runs of different nodes (5-10 mm at under 1 mm at most): common practice.
    """

    id = "routing.rx-parallel-tx"
    title = "RX trace parallel to another node's TX"
    default_severity = "warning"
    needs = ("sensors",)
    params = {
        "parallel_distance_mm": Param(1.0, "mm", "common practice", "runs closer than this count as parallel"),
        "max_parallel_mm": Param(5.0, "mm", "common practice",
                                 "longest accepted total parallel length per RX net, TX net and layer"),
        "max_crosstalk_percent": CROSSTALK_PARAM,
    }

    def check(self, design: Design, estimates: Mapping[str, Any], params: Mapping[str, Any]) -> Iterable[Finding]:
        board = design.board
        index = FeatureIndex(board)
        reader = CopperReader(design)
        dist, limit = params["parallel_distance_mm"], params["max_parallel_mm"]
        rx_in: dict[str, list[Sensor]] = {}  # net -> sensors it is a receiver of (design order)
        tx_in: dict[str, list[Sensor]] = {}
        rx_el: dict[str, list[Electrode]] = {}
        tx_nets_seen: set[str] = set()
        for s in design.sensors:
            for e in s.electrodes_with("receiver"):
                rx_in.setdefault(e.net, []).append(s)
                rx_el.setdefault(e.net, []).append(e)
            for e in s.electrodes_with("transmitter"):
                tx_in.setdefault(e.net, []).append(s)
                tx_nets_seen.add(e.net)
        if not rx_el or not tx_nets_seen:
            return
        tx_nets = sorted(tx_nets_seen)
        # the TX net's copper on every layer (electrodes and traces; a net in several sensors is counted once)
        tx_cu = [union(lay.by_net.get(n) for lay in board.copper_layers()) for n in tx_nets]
        tx_near = shapely.buffer(np.array(tx_cu, dtype=object), dist)
        tree = shapely.STRtree(tx_near)
        for rx in sorted(rx_el):
            for layer, path in sorted(_net_trace_paths(index, rx_el[rx]).items()):
                for j in sorted(int(k) for k in tree.query(path)):
                    tx = tx_nets[j]
                    a_set, b_set = rx_in[rx], tx_in[tx]
                    if len(a_set) == 1 and len(b_set) == 1 and a_set[0] is b_set[0]:
                        continue  # one node: its RX leaves through its own TX by design
                    piece = path.intersection(tx_near[j])  # the path within the distance, the buffer made once
                    length = piece.length
                    if length <= 0 or (length <= limit and not any(o.name in estimates for o in a_set)):
                        continue  # no run, or within the rule of thumb and no estimate to say otherwise
                    runs = sorted(shapely.get_parts(shapely.line_merge(piece) if piece.geom_type == "MultiLineString"
                                                    else piece), key=lambda g: -g.length)
                    longest = runs[0] if runs else piece
                    closest = float(shapely.distance(piece, tx_cu[j]))
                    node = next((s for s in a_set if s in b_set), None)
                    # the run is reported under the node it adds to, else under the RX's node nearest to it
                    # (a matrix line is in several: the names' order does not pick)
                    a = node if node is not None else (a_set[0] if len(a_set) == 1 else min(
                        a_set, key=lambda o: self.cache.outline(o).distance(longest)))
                    what = (f"RX trace {rx} ({a.name}) on {layer} runs {fmt(length, 1)} mm in all within "
                            f"{fmt(dist)} mm of TX {tx} of {b_set[0].name} (longest run {fmt(longest.length, 1)} mm, "
                            f"centre line {fmt(closest)} mm from the TX copper at the closest); limit {fmt(limit, 1)} mm")
                    est = estimates.get(a.name)
                    physical = None
                    if est is not None and est.kind == "mutual" and inside_window(est, piece):
                        ghost = reader.bound_pf(est, [tx], excitation="rx")
                        if ghost is not None:
                            physical = _ghost_verdict(est, rx, tx, ghost, params["max_crosstalk_percent"])
                    if physical is not None and physical[0]:
                        continue  # the ghost node the runs make is negligible against the RX's own signal
                    if physical is None and length <= limit:
                        continue  # the estimate does not cover the runs: the rule of thumb is met
                    if node is None:
                        sev: Severity = "warning"
                    else:
                        sev = "note"
                        what += (f"; {rx} and {tx} already form the node {node.name}, so a touch over the run reads "
                                 f"as a press of {node.name} and the run adds to its baseline")
                    yield _with_effect(finding(
                        sev, what, value=length, limit=limit, unit="mm", layer=layer, geom=longest,
                        nets=(rx, tx), sensor=a.name,
                        source=source_near(index.net(layer, rx), longest),
                    ), physical)
        yield from traces_not_measured(self.id, design, index, "parallel runs beside TX lines")


def _ghost_verdict(est: Any, rx: str, tx: str, ghost_pf: float, limit_percent: float) -> tuple[bool, str, float, float]:
    """(negligible, text, % of the delta, limit %) of the mutual capacitance an RX forms with another TX."""
    delta = abs(est.touch_delta_pf)
    pct = 100.0 * ghost_pf / delta if delta > 0 else float("inf")
    text = (f"field-solver estimate: {rx} and {tx} couple {1000 * ghost_pf:.1f} fF in the solve window, which bounds "
            f"what a finger over the run changes: {fmt(pct, 1)} % of the {1000 * est.touch_delta_pf:+.1f} fF touch "
            f"delta of {est.sensor}; limit {fmt(limit_percent, 0)} %")
    return pct <= limit_percent, text, pct, limit_percent


def _segments(geom: BaseGeometry) -> Iterator[tuple[tuple[float, float], tuple[float, float]]]:
    for line in getattr(geom, "geoms", [geom]):
        if not isinstance(line, LineString):
            continue
        cs = list(line.coords)
        for p, q in zip(cs, cs[1:]):
            if p != q:
                yield (p[0], p[1]), (q[0], q[1])


@dataclass(slots=True)
class _Segs:
    """The straight segments of a set of centre lines, as LineStrings, with a tree made when first asked."""

    ends: list[tuple[tuple[float, float], tuple[float, float]]]
    lines: np.ndarray
    _tree: shapely.STRtree | None = None

    @classmethod
    def of(cls, geom: BaseGeometry) -> _Segs:
        ends = list(_segments(geom))
        lines = shapely.linestrings(np.array(ends, dtype=float).reshape(-1, 2, 2)) if ends else np.empty(0, dtype=object)
        return cls(ends, lines)

    @property
    def tree(self) -> shapely.STRtree:
        if self._tree is None:
            self._tree = shapely.STRtree(self.lines)
        return self._tree


def _crossings(a: _Segs, b: _Segs) -> list[tuple[float, tuple[float, float]]]:
    """Acute angle and point of every crossing between the segments of ``a`` and ``b`` (all pairs at once)."""
    out: list[tuple[float, tuple[float, float]]] = []
    if not a.ends or not b.ends:
        return out
    ia, ib = b.tree.query(a.lines, predicate="intersects")
    if len(ia) == 0:
        return out
    xs = shapely.intersection(a.lines[ia], b.lines[ib])
    is_point = shapely.get_type_id(xs) == 0
    for k in np.flatnonzero(is_point & ~shapely.is_empty(xs)):
        (p, q), (r, t) = a.ends[int(ia[k])], b.ends[int(ib[k])]
        x = xs[k]
        ang_a = math.atan2(q[1] - p[1], q[0] - p[0])
        ang_b = math.atan2(t[1] - r[1], t[0] - r[0])
        d = abs(math.degrees(ang_a - ang_b)) % 180.0
        out.append((min(d, 180.0 - d), (x.x, x.y)))
    return out


def crossing_angles(a: BaseGeometry, b: BaseGeometry) -> list[tuple[float, tuple[float, float]]]:
    """Acute angle (degrees, 0-90) and point of every crossing between the segments of ``a`` and ``b``."""
    return _crossings(_Segs.of(a), _Segs.of(b))


class CrossingAngle(Rule):
    """Crossing angle between sensor traces and aggressor or other sensors' traces on other layers.

    What it checks:
        Where a sensor trace's centre line crosses, in projection, the centre line of an
        aggressor net or of another sensor's trace on a different layer, the acute angle between
        them.  Below ``min_angle_deg`` is a warning.
    Why it matters:
        The coupling at a crossing grows with the overlap area, which is smallest at a right angle;
        a shallow crossing is a short parallel run.
    Known limitations:
        Needs draws with centre lines on both sides.
    Example:
        A sensor trace crossing an LED line at 30 degrees: limit 60.
    Fix:
        Cross at (near) 90 degrees.
    Parameters:
        See the table.
    References:
        Cross sensor traces with other signals at right angles: common practice (vendor guidance,
        anonymous).
    """

    id = "routing.crossing-angle"
    title = "Shallow crossing with another net"
    default_severity = "warning"
    needs = ("sensors",)
    params = {
        "min_angle_deg": Param(60.0, "deg", "common practice", "shallowest accepted crossing angle"),
    }

    def check(self, design: Design, estimates: Mapping[str, Any], params: Mapping[str, Any]) -> Iterable[Finding]:
        board = design.board
        index = FeatureIndex(board)
        sensing = {e.net: s for s in design.sensors for e in s.electrodes}
        others: dict[str, dict[str, BaseGeometry]] = {}  # net -> layer -> paths
        traces: dict[str, dict[str, list[Feature]]] = {}  # sensing net -> its trace features per layer, once
        for lay in board.copper_layers():
            for net in {f.net for f in lay.features if f.net}:
                if net in sensing or role(design, net) == "aggressor":
                    if net in sensing:
                        if net not in traces:
                            e = next(e for e in sensing[net].electrodes if e.net == net)
                            traces[net] = index.trace(e)
                        feats = traces[net].get(lay.name, [])
                    else:
                        feats = index.net(lay.name, net)
                    p = paths(feats)
                    if not p.is_empty:
                        others.setdefault(net, {})[lay.name] = p
        # the shallowest crossing of every (sensing net, layer) with every (net, other layer), all at once
        shallowest = _shallowest_crossings(others, set(sensing))
        for s in design.sensors:
            for e in s.electrodes:
                for layer in sorted(others.get(e.net, {})):
                    for (net, olayer), (ang, pt) in sorted(shallowest.get((e.net, layer), {}).items()):
                        if net == e.net or (net in sensing and sensing[net] is s):
                            continue
                        if ang >= params["min_angle_deg"]:
                            continue
                        yield finding(
                            "warning",
                            f"trace of {e.net} on {layer} crosses {net} on {olayer} at {fmt(ang, 1)} deg; "
                            f"limit {fmt(params['min_angle_deg'], 0)} deg",
                            value=ang, limit=params["min_angle_deg"], unit="deg", layer=layer, point=pt,
                            nets=(e.net, net), sensor=s.name,
                            source=source_near(index.net(layer, e.net), Point(pt)),
                        )
        yield from traces_not_measured(self.id, design, index, "crossing angles")


def _all_segments(geoms: list[BaseGeometry]) -> tuple[np.ndarray, np.ndarray]:
    """The straight segments of every geometry's lines, as ``_segments`` gives them (zero-length ones left out).

    Returns the end points (n x 2 x 2) and the index of the geometry each segment belongs to.
    """
    if not geoms:
        return np.empty((0, 2, 2)), np.empty(0, dtype=np.intp)
    parts, part_of = shapely.get_parts(np.array(geoms, dtype=object), return_index=True)
    lines = shapely.get_type_id(parts) == 1  # LineString parts only (as _segments)
    parts, part_of = parts[lines], part_of[lines]
    xy, line_of = shapely.get_coordinates(parts, return_index=True)
    same = line_of[:-1] == line_of[1:]  # consecutive points of one line
    moves = (xy[:-1] != xy[1:]).any(axis=1)
    k = np.flatnonzero(same & moves)
    ends = np.stack([xy[k], xy[k + 1]], axis=1)
    return ends, part_of[line_of[k]]


def _shallowest_crossings(
    paths_of: Mapping[str, Mapping[str, BaseGeometry]], sensing: set[str],
) -> dict[tuple[str, str], dict[tuple[str, str], tuple[float, tuple[float, float]]]]:
    """For every sensing (net, layer) and every (other net, other layer) whose centre lines cross, the crossing
    ``min`` picks from ``crossing_angles`` of the two (smallest angle, then point)."""
    keys = [(net, layer) for net in sorted(paths_of) for layer in sorted(paths_of[net])]
    ends, key_of = _all_segments([paths_of[n][la] for n, la in keys])
    out: dict[tuple[str, str], dict[tuple[str, str], tuple[float, tuple[float, float]]]] = {}
    if len(ends) == 0:
        return out
    lines = shapely.linestrings(ends)
    layer_ids = {la: i for i, la in enumerate(sorted({la for _, la in keys}))}
    net_ids = {n: i for i, n in enumerate(sorted(paths_of))}
    seg_layer = np.array([layer_ids[la] for _, la in keys], dtype=np.intp)[key_of]
    seg_net = np.array([net_ids[n] for n, _ in keys], dtype=np.intp)[key_of]
    seg_sensing = np.array([n in sensing for n, _ in keys], dtype=bool)[key_of]
    for lb, jb in layer_ids.items():
        on_b = np.flatnonzero(seg_layer == jb)
        from_a = np.flatnonzero(seg_sensing & (seg_layer != jb))
        if len(on_b) == 0 or len(from_a) == 0:
            continue
        qa, tb = shapely.STRtree(lines[on_b]).query(lines[from_a], predicate="intersects")
        ia, ib = from_a[qa], on_b[tb]
        keep = seg_net[ia] != seg_net[ib]
        ia, ib = ia[keep], ib[keep]
        if len(ia) == 0:
            continue
        xs = shapely.intersection(lines[ia], lines[ib])
        ok = (shapely.get_type_id(xs) == 0) & ~shapely.is_empty(xs)
        pts = shapely.get_coordinates(xs[ok])
        for (i, j), (x, y) in zip(zip(ia[ok].tolist(), ib[ok].tolist()), pts.tolist()):
            (px, py), (qx, qy) = ends[i].tolist()
            (rx, ry), (tx, ty) = ends[j].tolist()
            d = abs(math.degrees(math.atan2(qy - py, qx - px) - math.atan2(ty - ry, tx - rx))) % 180.0
            c = (min(d, 180.0 - d), (x, y))
            by = out.setdefault(keys[key_of[i]], {})
            kb = keys[key_of[j]]
            if kb not in by or c < by[kb]:
                by[kb] = c
    return out


RULES: tuple[type[Rule], ...] = (
    ForeignCopperInZone,
    ForeignViaInZone,
    TraceUnderElectrode,
    AggressorNearSensor,
    AggressorParallel,
    RxParallelTx,
    CrossingAngle,
)
