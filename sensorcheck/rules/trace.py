"""Trace rules: width, length and vias of sensor traces, and the parasitic capacitance budget."""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from typing import Any

import shapely

from sensorcheck.design.model import Design, Electrode
from sensorcheck.physics.parasitics import microstrip_pf_per_mm, parallel_plate_pf, via_capacitance_pf
from sensorcheck.rules.common import (
    FR4_PARAM,
    VIA_DIAMETER_PARAM,
    finding,
    fmt,
    hole_nets,
    is_via,
    layer_separation,
    net_features,
    paths,
    sensing_nets,
    source_near,
    union,
)
from sensorcheck.rules.base import Param, Rule
from sensorcheck.findings import Finding
from sensorcheck.rules.routing import FeatureIndex, traces_not_measured


def _channels(design: Design) -> Iterable[tuple[Any, Electrode]]:
    """Every (sensor, electrode) once per net."""
    seen: set[str] = set()
    for s in design.sensors:
        for e in s.electrodes:
            if e.net not in seen:
                seen.add(e.net)
                yield s, e


class TraceWidth(Rule):
    """Width of sensor traces.

    What it checks:
        The width of every draw on a sensing net outside its electrode (from the draw's aperture).
        Wider than ``max_width_mm`` is a warning; narrower than the config's fabrication minimum
        ``[fabrication] min_width_mm`` is an error.
    Why it matters:
        Trace capacitance to ground grows with width, and a wide trace is a small electrode of its
        own; thin traces keep the parasitic load and the stray sensitivity down.
    Known limitations:
        Traces drawn as regions (pours) have no aperture width and are not measured: the rule says so
        in one "not checked" line naming the nets.
    Example:
        A 0.5 mm sensor trace: limit 0.25 mm.
    Fix:
        Route sensor traces as thin as the fabricator allows (about 0.15-0.18 mm).
    Parameters:
        See the table.
    References:
        Sensor traces at most 0.18 mm, warn above 0.25 mm: common practice (vendor guidance,
        anonymous).
    """

    id = "trace.width"
    title = "Sensor trace width"
    default_severity = "warning"
    needs = ("sensors",)
    params = {
        "max_width_mm": Param(0.25, "mm", "common practice", "widest accepted sensor trace"),
    }

    def check(self, design: Design, estimates: Mapping[str, Any], params: Mapping[str, Any]) -> Iterable[Finding]:
        fab_min = design.config.fabrication.get("min_width_mm")
        index = FeatureIndex(design.board)
        for s, e in _channels(design):
            for layer, feats in sorted(index.trace(e).items()):
                widths = [f for f in feats if f.width_mm is not None]
                if not widths:
                    continue
                widest = max(widths, key=lambda f: f.width_mm or 0.0)
                thinnest = min(widths, key=lambda f: f.width_mm or 0.0)
                if widest.width_mm is not None and widest.width_mm > params["max_width_mm"] + 1e-9:
                    yield finding(
                        "warning",
                        f"trace of {e.net} on {layer} is {fmt(widest.width_mm, 3)} mm wide; limit "
                        f"{fmt(params['max_width_mm'], 3)} mm",
                        value=widest.width_mm, limit=params["max_width_mm"], unit="mm", layer=layer,
                        geom=widest.geometry, nets=(e.net,), sensor=s.name, source=widest.source,
                    )
                if fab_min and thinnest.width_mm is not None and thinnest.width_mm < fab_min - 1e-9:
                    yield finding(
                        "error",
                        f"trace of {e.net} on {layer} is {fmt(thinnest.width_mm, 3)} mm wide, below the fabrication "
                        f"minimum {fmt(fab_min, 3)} mm",
                        value=thinnest.width_mm, limit=fab_min, unit="mm", layer=layer,
                        geom=thinnest.geometry, nets=(e.net,), sensor=s.name, source=thinnest.source,
                    )
        yield from traces_not_measured(self.id, design, index, "width")


class TraceLength(Rule):
    """Routed length of sensor traces.

    What it checks:
        The summed centre-line length of every sensing net's draws outside its electrode, over all
        layers.  Longer than ``max_length_mm`` is a warning.
    Why it matters:
        Every centimetre adds about 0.4 pF (two-layer board) to 1 pF (plane close below) of
        parasitic capacitance, and picks up noise along the way.
    Known limitations:
        Traces drawn as regions are not measured (one "not checked" line names the nets).
        ``trace.parasitic-budget`` is the better check.
    Example:
        A 350 mm trace: limit 300 mm (50 mm on flex).
    Fix:
        Place the controller closer to the sensors.
    Parameters:
        See the table.
    References:
        At most 300 mm on rigid boards, 50 mm on flex: common practice (vendor guidance, anonymous).
    """

    id = "trace.length"
    title = "Sensor trace length"
    default_severity = "warning"
    needs = ("sensors",)
    params = {
        "max_length_mm": Param(300.0, "mm", "common practice", "longest accepted sensor trace"),
    }

    def check(self, design: Design, estimates: Mapping[str, Any], params: Mapping[str, Any]) -> Iterable[Finding]:
        index = FeatureIndex(design.board)
        for s, e in _channels(design):
            feats = index.trace(e)
            total = sum(paths(fs).length for fs in feats.values())
            if total > params["max_length_mm"]:
                layer = max(feats, key=lambda k: paths(feats[k]).length)
                geom = union(f.geometry for f in feats[layer])
                yield finding(
                    "warning",
                    f"trace of {e.net} is {fmt(total, 1)} mm long; limit {fmt(params['max_length_mm'], 1)} mm",
                    value=total, limit=params["max_length_mm"], unit="mm", layer=layer, geom=geom,
                    nets=(e.net,), sensor=s.name, source=feats[layer][0].source,
                )
        yield from traces_not_measured(self.id, design, index, "length")


def _net_vias(design: Design, net: str, max_via_diameter_mm: float, nets_of: dict[int, str | None] | None = None) -> list[Any]:
    nets_of = nets_of if nets_of is not None else hole_nets(design)
    return [h for i, h in enumerate(design.board.holes) if nets_of[i] == net and is_via(h, max_via_diameter_mm)]


class ViaCount(Rule):
    """Number of vias on a sensor net.

    What it checks:
        The vias (plated holes up to ``max_via_diameter_mm`` where the drill file does not say) on
        each sensing net.  More than ``max_vias`` is a warning.
    Why it matters:
        Each via's barrel, pads and antipads add parasitic capacitance (about 0.2-0.6 pF each).
    Known limitations:
        A via's net comes from the drill file or the copper it lands on.
    Example:
        Four vias on a button's net: limit 2.
    Fix:
        Route the sensor on one layer with at most one or two layer changes.
    Parameters:
        See the table.
    References:
        Keep vias on sensor nets to one or two: common practice (vendor guidance, anonymous).
    """

    id = "trace.via-count"
    title = "Vias on a sensor net"
    default_severity = "warning"
    needs = ("sensors",)
    params = {
        "max_vias": Param(2, "vias", "common practice", "most vias accepted on one sensing net"),
        "max_via_diameter_mm": VIA_DIAMETER_PARAM,
    }

    def check(self, design: Design, estimates: Mapping[str, Any], params: Mapping[str, Any]) -> Iterable[Finding]:
        nets_of = hole_nets(design)
        by_net: dict[str | None, list[Any]] = {}  # every via by net, in hole order, once per run
        for i, h in enumerate(design.board.holes):
            if is_via(h, params["max_via_diameter_mm"]):
                by_net.setdefault(nets_of[i], []).append(h)
        for s, e in _channels(design):
            vias = by_net.get(e.net, [])
            if len(vias) > params["max_vias"]:
                v = vias[0]
                yield finding(
                    "warning",
                    f"net {e.net} has {len(vias)} vias; limit {params['max_vias']}",
                    value=len(vias), limit=params["max_vias"], unit="vias", layer=e.layer,
                    point=(v.x_mm, v.y_mm), nets=(e.net,), sensor=s.name, source=v.source,
                )


@dataclass(frozen=True, slots=True)
class Budget:
    """A parasitic capacitance estimate of one channel, by part (pF)."""

    electrode_pf: float
    trace_pf: float
    vias_pf: float
    pin_pf: float
    via_count: int
    trace_mm: float

    @property
    def total_pf(self) -> float:
        return self.electrode_pf + self.trace_pf + self.vias_pf + self.pin_pf


def _reference_copper(design: Design, layer: str, own_net: str) -> Any:
    """Copper the channel's field returns to on ``layer``: ground nets, else every non-sensing net."""
    lay = design.board.layer(layer)
    if lay is None:
        return union([])
    gnds = design.ground_nets()
    if gnds:
        return union(lay.by_net.get(n) for n in gnds)
    skip = sensing_nets(design) | {own_net}
    shield = set(design.nets_with("shield")) | set(design.nets_with("guard"))
    return union(g for n, g in lay.by_net.items() if n not in skip and n not in shield)


def _meets(ref: Any, geom: Any) -> bool:
    """Does ``geom`` touch ``ref`` (box test, then the prepared predicate)?  False: their overlap is empty."""
    rx0, ry0, rx1, ry1 = ref.bounds
    gx0, gy0, gx1, gy1 = geom.bounds
    if gx0 > rx1 or rx0 > gx1 or gy0 > ry1 or ry0 > gy1:
        return False
    shapely.prepare(ref)
    return bool(ref.intersects(geom))


def channel_budget(design: Design, e: Electrode, params: Mapping[str, Any],
                   nets_of: dict[int, str | None] | None = None, *, index: FeatureIndex | None = None,
                   refs: dict[tuple[str, str | None], Any] | None = None) -> Budget:
    """Electrode plates + microstrip traces (fill-corrected) + vias + pin capacitance, in pF.

    ``index`` and ``refs`` (reference copper by layer, filled in here) let a caller that budgets many
    channels share the board's features and reference copper between them; the numbers are the same.
    """
    board = design.board
    eps_default = params["default_epsilon_r"]
    cu_layers = [lay.name for lay in board.copper_layers()]
    refs = refs if refs is not None else {}
    own_key = None if design.ground_nets() else e.net  # ground copper does not depend on the channel
    ref = {}
    for name in cu_layers:
        if (name, own_key) not in refs:
            refs[name, own_key] = _reference_copper(design, name, e.net)
        ref[name] = refs[name, own_key]
    electrode_pf = 0.0
    for name in cu_layers:
        if name == e.layer or ref[name].is_empty:
            continue
        sep = layer_separation(board, e.layer, name, eps_default)
        if sep is None:
            continue
        ov = ref[name].intersection(e.geometry)
        if not ov.is_empty and ov.area > 0:
            electrode_pf += parallel_plate_pf(ov.area, sep[0], sep[1])
    trace_pf = 0.0
    trace_mm = 0.0
    for layer, feats in (index or FeatureIndex(board)).trace(e).items():
        seps = []
        for name in cu_layers:
            if name == layer:
                continue
            sep = layer_separation(board, layer, name, eps_default)
            if sep is not None:
                seps.append((sep[0], sep[1], name))
        seps.sort()
        for f in feats:
            if f.path is None or f.width_mm is None or f.width_mm <= 0:
                continue
            length = f.path.length
            trace_mm += length
            remaining = 1.0
            c_per_mm = 0.0
            for h, eps, name in seps:
                corridor = f.path.buffer(max(3.0 * h, f.width_mm))
                if corridor.area <= 0 or ref[name].is_empty:
                    continue
                # a corridor that misses the reference copper has no overlap: not cut
                cut = ref[name].intersection(corridor).area if _meets(ref[name], corridor) else 0.0
                fill = min(1.0, cut / corridor.area)
                c_per_mm += microstrip_pf_per_mm(f.width_mm, h, eps) * fill * remaining
                remaining *= 1.0 - fill
            trace_pf += c_per_mm * length
    vias = _net_vias(design, e.net, params["max_via_diameter_mm"], nets_of)
    vias_pf = 0.0
    if vias:
        st = board.stackup
        thick = st.total_thickness_mm() if st is not None else 1.6
        for v in vias:
            pad = v.diameter_mm + params["via_pad_extra_mm"]
            vias_pf += via_capacitance_pf(eps_default, thick, pad, pad + 2 * params["via_antipad_clearance_mm"])
    pin = float(design.config.controller.get("pin_capacitance_pf", 0.0) or 0.0)
    return Budget(electrode_pf, trace_pf, vias_pf, pin, len(vias), trace_mm)


class ParasiticBudget(Rule):
    """Estimated parasitic capacitance of each channel against the controller's limit.

    What it checks:
        For every sensing net: electrode-to-plane capacitance (parallel plate over the reference
        copper on each other layer), trace capacitance (Hammerstad-Jensen microstrip per unit
        length over each lower layer, corrected by that layer's measured fill along the trace,
        nearest layer first), via barrels (Johnson-Graham) and the controller pin capacitance,
        against ``[controller] max_parasitic_pf``.  Above the limit is an error, above
        ``warn_fraction`` of it a warning.  Where the field solver estimated the sensor's parasitic
        capacitance, ``signal.parasitic-above-limit`` decides and this rule stays silent.
    Why it matters:
        The signal is the touch delta over the total capacitance; controllers also saturate
        beyond their range.  Trace length and ground around the sensor are the big levers.
    Known limitations:
        First-order: no fringing at the electrode, no coplanar ground beside the trace, a hatch
        treated as a sheet of its fill.  The reference copper is the ground nets, or every
        non-sensing net when no ground role is given.
    Example:
        A 200 mm 0.2 mm trace 0.2 mm over ground (about 0.8 pF/cm) is 16 pF on its own.
    Fix:
        Shorten traces, lighten ground under and around them, remove vias.
    Parameters:
        See the table.
    References:
        Microstrip: Hammerstad and Jensen 1980, as in Wadell, Transmission Line Design Handbook
        (1991).  Via: Johnson and Graham, High-Speed Digital Design (1993).  Limit: the
        controller's datasheet (input).
    """

    id = "trace.parasitic-budget"
    title = "Parasitic capacitance budget (closed forms)"
    default_severity = "error"
    needs = ("sensors", "stackup", "max_parasitic_pf")
    params = {
        "warn_fraction": Param(0.8, "1", "derived", "warn above this fraction of the controller limit"),
        "default_epsilon_r": FR4_PARAM,
        "max_via_diameter_mm": VIA_DIAMETER_PARAM,
        "via_pad_extra_mm": Param(0.3, "mm", "common practice", "via pad diameter = drill + this"),
        "via_antipad_clearance_mm": Param(0.25, "mm", "common practice", "plane clearance around a via pad"),
    }

    def check(self, design: Design, estimates: Mapping[str, Any], params: Mapping[str, Any]) -> Iterable[Finding]:
        limit = float(design.config.controller["max_parasitic_pf"])
        nets_of = hole_nets(design)
        index = FeatureIndex(design.board)
        refs: dict[tuple[str, str | None], Any] = {}
        for s, e in _channels(design):
            est = estimates.get(s.name)
            if est is not None and est.parasitic_pf is not None:
                continue
            b = channel_budget(design, e, params, nets_of, index=index, refs=refs)
            total = b.total_pf
            parts = (
                f"electrode {fmt(b.electrode_pf)} pF + trace {fmt(b.trace_pf)} pF ({fmt(b.trace_mm, 1)} mm) + "
                f"{b.via_count} via(s) {fmt(b.vias_pf)} pF + pin {fmt(b.pin_pf)} pF"
            )
            if total > limit:
                sev, what = "error", f"above the controller limit {fmt(limit, 1)} pF"
            elif total > params["warn_fraction"] * limit:
                sev, what = "warning", (
                    f"above {fmt(100 * params['warn_fraction'], 0)} % of the controller limit {fmt(limit, 1)} pF"
                )
            else:
                continue
            yield finding(
                sev, f"estimated parasitic capacitance of {e.net} is {fmt(total)} pF ({parts}), {what} (closed-form estimate)",
                value=total, limit=limit, unit="pF", layer=e.layer, geom=e.geometry, nets=(e.net,), sensor=s.name,
                source=source_near(net_features(design.board, e.layer, [e.net]), e.geometry),
            )


RULES: tuple[type[Rule], ...] = (TraceWidth, TraceLength, ViaCount, ParasiticBudget)
