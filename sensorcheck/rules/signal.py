"""Signal rules: judgements on the field solver's estimates (turnaround, touch signal, parasitics)."""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from typing import Any

from sensorcheck.design.model import Design
from sensorcheck.rules.common import finding, fmt, ground_copper, union
from sensorcheck.rules.base import Param, Rule
from sensorcheck.findings import Finding


def _rx_ground_text(design: Design, s: Any, surround_mm: float = 10.0) -> str:
    rxs = s.electrodes_with("receiver")
    if not rxs:
        return ""
    rx_area = sum(e.geometry.area for e in rxs)
    window = s.outline.buffer(surround_mm)
    gnd = sum(ground_copper(design, lay.name).intersection(window).area for lay in design.board.copper_layers())
    if gnd <= 0:
        return f"; receiver {fmt(rx_area, 1)} mm2 with no ground within {fmt(surround_mm, 0)} mm"
    return f"; receiver {fmt(rx_area, 1)} mm2 is {fmt(100 * rx_area / gnd, 1)} % of the ground within {fmt(surround_mm, 0)} mm"


def turning_place(est: Any) -> tuple[tuple[float, float] | None, str]:
    """Where the estimated signal turns: the finger's (x, y) in mm and which approach curve turns
    there, "centre" (over the node's centre) or "best" (over the most sensitive point).

    The solver approaches over the most sensitive point and, when that is not the node's centre,
    over the centre too; its turning point is the higher of the two curves' turning points.  The
    finding goes where that curve was computed, never to a point where the signal does not turn.
    """
    from sensorcheck.physics.finger import turning_point

    tp = est.turning_point_mm
    centre = getattr(est, "centre_mm", None)
    curve_c = getattr(est, "curve_centre", None) or []
    if tp is None or not curve_c or centre is None:
        return est.best_point_mm, "best"
    tp_best = turning_point(list(est.curve), est.baseline_pf)
    tp_centre = turning_point(list(curve_c), est.baseline_pf)
    if tp_centre is not None and (tp_best is None or tp_centre >= tp_best):
        return (float(centre[0]), float(centre[1])), "centre"
    return est.best_point_mm, "best"


class Turnaround(Rule):
    """The estimated signal turns around above the overlay surface.

    What it checks:
        The field solver's approach curve for every sensor: when the signal peaks and reverses at a
        finger height above the overlay surface (more than ``margin_mm``), that is an error; the
        message gives the receiver's share of the surrounding ground (the lever).
    Why it matters:
        Past the turning point a closer finger gives less signal: a firm press looks like a release
        and a hovering finger like a touch.  The finger's weak return path to earth (a battery
        product) and a receiver large against its ground make it happen.
    Known limitations:
        An estimate of a model (finger shape, body and device coupling from the config); measure a
        prototype under the real overlay.
    Example:
        A 20 mm receiver on a battery product: the dip peaks 1.5 mm above the overlay.
    Fix:
        Make the receiver a small fraction of the ground (narrow RX fingers, more ground around the
        node), thin the overlay, or improve the device's ground coupling.
    Parameters:
        See the table.
    References:
        Finger return-path physics: derived (this project's field solver).
    """

    id = "signal.turnaround"
    title = "Signal turns around above the overlay"
    default_severity = "error"
    needs = ("sensors", "estimates")
    params = {"margin_mm": Param(0.0, "mm", "derived", "turning points at or below this height above the surface pass")}

    def check(self, design: Design, estimates: Mapping[str, Any], params: Mapping[str, Any]) -> Iterable[Finding]:
        for s in design.sensors:
            est = estimates.get(s.name)
            if est is None or est.turning_point_mm is None or est.turning_point_mm <= params["margin_mm"]:
                continue
            place, which = turning_place(est)
            over = "over the node centre" if which == "centre" else "over the most sensitive point"
            at = f" ({fmt(place[0], 1)}, {fmt(place[1], 1)}) mm" if place is not None else ""
            yield finding(
                "error",
                f"the estimated signal of {s.name} turns around {fmt(est.turning_point_mm)} mm above the overlay "
                f"surface with the finger {over}{at} (limit {fmt(params['margin_mm'])} mm): a press reads as a "
                f"release{_rx_ground_text(design, s)} (estimate: {est.model})",
                value=est.turning_point_mm, limit=params["margin_mm"], unit="mm", layer=s.layer, geom=s.outline,
                point=place, nets=s.nets, sensor=s.name,
                review="Confirm on the prototype: press firmly and hover just above the overlay.",
            )


class TouchBelowFloor(Rule):
    """The estimated touch signal is below its floor.

    What it checks:
        For every sensor with an estimate: the absolute touch delta against ``min_delta_pf`` and the
        absolute percentage change against ``min_percent_self`` (self electrodes) or
        ``min_percent_mutual`` (mutual nodes).  Either below its floor is a warning.
    Why it matters:
        The controller digitises the relative change; a small delta or percentage leaves no margin
        over noise and drift.
    Known limitations:
        Estimates of a model; noise is not known to a layout tool (SNR is a bring-up gate).
    Example:
        A self button with +0.4 pF on 25 pF: 1.6 %, floor 3 %.
    Fix:
        Lower the parasitic capacitance, enlarge the electrode, thin the overlay.
    Parameters:
        See the table.
    References:
        0.1 pF minimum finger signal, more than 3 % relative change: common practice (vendor
        guidance, anonymous); 10-30 % for mutual keys: common practice.
    """

    id = "signal.touch-below-floor"
    title = "Touch signal below its floor"
    default_severity = "warning"
    needs = ("sensors", "estimates")
    params = {
        "min_delta_pf": Param(0.1, "pF", "common practice", "smallest accepted touch delta"),
        "min_percent_self": Param(3.0, "%", "common practice", "smallest accepted change, self electrodes"),
        "min_percent_mutual": Param(10.0, "%", "common practice", "smallest accepted change, mutual nodes"),
    }

    def check(self, design: Design, estimates: Mapping[str, Any], params: Mapping[str, Any]) -> Iterable[Finding]:
        for s in design.sensors:
            est = estimates.get(s.name)
            if est is None:
                continue
            floor_pct = params["min_percent_mutual"] if est.kind == "mutual" else params["min_percent_self"]
            delta, pct = abs(est.touch_delta_pf), abs(est.percent_change)
            if delta < params["min_delta_pf"]:
                yield finding(
                    "warning",
                    f"estimated touch delta of {s.name} is {fmt(1000 * delta, 1)} fF; floor {fmt(1000 * params['min_delta_pf'], 1)} fF "
                    f"(estimate: {est.model})",
                    # the touch delta in fF, as every report shows it; the parameter stays in pF
                    value=1000 * delta, limit=1000 * params["min_delta_pf"], unit="fF", layer=s.layer, geom=s.outline,
                    point=est.best_point_mm, nets=s.nets, sensor=s.name,
                )
            elif pct < floor_pct:
                yield finding(
                    "warning",
                    f"estimated touch change of {s.name} is {fmt(pct, 1)} % ({1000 * est.touch_delta_pf:+.1f} fF on "
                    f"{fmt(est.baseline_pf)} pF); floor {fmt(floor_pct, 1)} % (estimate: {est.model})",
                    value=pct, limit=floor_pct, unit="%", layer=s.layer, geom=s.outline,
                    point=est.best_point_mm, nets=s.nets, sensor=s.name,
                )


class ParasiticAboveLimit(Rule):
    """The estimated parasitic capacitance exceeds the controller's limit.

    What it checks:
        For every channel whose estimate has a parasitic capacitance (electrode, trace and vias to
        ground), that value plus ``[controller] pin_capacitance_pf`` against
        ``[controller] max_parasitic_pf``: above it is an error.  A slider or wheel is judged
        segment by segment (each segment is a channel, scanned with the others at ground), not
        as one lumped electrode.
    Why it matters:
        Beyond its range the controller cannot calibrate the channel, and below it the signal is
        the touch delta over this total.
    Known limitations:
        Estimate of a model; the pin capacitance is taken as 0 pF when the config does not give it
        (the message says so).
    Example:
        38 pF estimated + 5 pF pin against a 30 pF limit.
    Fix:
        Shorten traces, lighten ground near the sensor, use a driven shield.
    Parameters:
        See the table.
    References:
        The limit is an input from the controller's datasheet.
    """

    id = "signal.parasitic-above-limit"
    title = "Estimated parasitic capacitance above the controller limit"
    default_severity = "error"
    needs = ("sensors", "estimates", "max_parasitic_pf")
    params = {"margin_pf": Param(0.0, "pF", "derived", "values up to limit + margin pass")}

    def check(self, design: Design, estimates: Mapping[str, Any], params: Mapping[str, Any]) -> Iterable[Finding]:
        ctrl = design.config.controller
        limit = float(ctrl["max_parasitic_pf"])
        pin = ctrl.get("pin_capacitance_pf")
        pin_text = f"pin {fmt(float(pin))} pF" if pin is not None else "pin capacitance not given (0 pF used)"
        for s in design.sensors:
            est = estimates.get(s.name)
            if est is None or est.parasitic_pf is None:
                continue
            # a slider or wheel: every segment is a channel of its own
            channels = [(f"{s.name} channel {g.net}", g.parasitic_pf, (g.net,)) for g in getattr(est, "segments", None) or []]
            for what, board_pf, nets in channels or [(s.name, est.parasitic_pf, s.nets)]:
                total = board_pf + float(pin or 0.0)
                if total <= limit + params["margin_pf"]:
                    continue
                yield finding(
                    "error",
                    f"estimated parasitic capacitance of {what} is {fmt(total)} pF ({fmt(board_pf)} pF board + "
                    f"{pin_text}); controller limit {fmt(limit, 1)} pF (estimate: {est.model})",
                    value=total, limit=limit, unit="pF", layer=s.layer, geom=union([s.outline]), nets=nets, sensor=s.name,
                )


RULES: tuple[type[Rule], ...] = (Turnaround, TouchBelowFloor, ParasiticAboveLimit)
