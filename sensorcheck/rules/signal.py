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


def turns_of(est: Any) -> list[Any]:
    """The estimate's turnarounds (:class:`~sensorcheck.physics.estimate.Turn`), highest first.

    An estimate made by the solver carries them; one that carries only its curves and turning
    point (built by hand) gets them from its curves, or one turn at its turning point.
    """
    from sensorcheck.physics.estimate import Turn
    from sensorcheck.physics.finger import turnarounds

    turns = list(getattr(est, "turnarounds", None) or [])
    if not turns and est.turning_point_mm is not None:
        turns = turnarounds(list(est.curve), est.baseline_pf) + turnarounds(
            list(getattr(est, "curve_centre", None) or []), est.baseline_pf, over="centre")
        turns = turns or [Turn(est.turning_point_mm, "turns")]
    return sorted(turns, key=lambda t: -t.height_mm)


def turning_place(est: Any) -> tuple[tuple[float, float] | None, str]:
    """Where the estimated signal turns: the finger's (x, y) in mm and which approach curve turns
    there, "centre" (over the node's centre) or "best" (over the most sensitive point).

    The solver approaches over the most sensitive point and, when that is not the node's centre,
    over the centre too; the place is that of the curve with the highest turn or sign reversal.
    The finding goes where that curve was computed, never to a point where the signal does not turn.
    """
    turns = turns_of(est)
    centre = getattr(est, "centre_mm", None)
    if turns and turns[0].curve == "centre" and centre is not None:
        return (float(centre[0]), float(centre[1])), "centre"
    return est.best_point_mm, "best"


def _press_reads_weaker(curve: list[tuple[float, float]], baseline: float, above_mm: float) -> bool:
    """At the surface the signal is weaker than, or opposite to, the signal at some height above
    ``above_mm`` (beyond the tolerance): at that height a finger reads more of a touch than a press.

    Without the curve (an estimate that gives only its turning point) the turn is taken to be a
    peak, as a turning point was reported before the kinds were told apart."""
    from sensorcheck.physics.finger import TURN_REL_TOL

    if not curve:
        return True
    s = [(h, v - baseline) for h, v in curve]
    touch = s[-1][1]
    tol = TURN_REL_TOL * max(abs(v) for _, v in s)
    return any(h > above_mm and abs(v) > tol and touch * (1 if v > 0 else -1) < abs(v) - tol for h, v in s[:-1])


class Turnaround(Rule):
    """The estimated signal turns or reverses sign between the far field and the overlay surface.

    What it checks:
        The field solver's approach curves of every sensor, mutual and self (over the most
        sensitive point and, where it differs, over the node's centre, where users press): every
        change of course of the touch signal above ``margin_mm`` over the surface is reported with
        its height and its kind: the signal *turns* (its slope changes sign: it peaks, or recovers
        from a dip) or *reverses sign* (the finger's effect flips, e.g. a mutual key's Cm first
        falls, then rises above its baseline).  Changes within 1 % of the signal's swing are
        numerical noise, not changes.  Severity: an error when the signal reverses sign, or when
        at the surface it is weaker than (or opposite to) the signal at some height above the
        margin; a warning when the signal turns but no height above the margin reads more of a
        touch than the surface does (a dip on the way in that recovers).  The message gives the
        receiver's share of the surrounding ground (the lever).
    Why it matters:
        Past a turn a closer finger gives less signal: a firm press looks like a release and a
        hovering finger like a touch.  A sign reversal is at least as bad: the press reads as the
        opposite of a touch (a baseline that drifts up, a negative count) or, near the crossing,
        as nothing at all.  A dip that recovers leaves the touch readable, but a finger passing
        through the dip reads weaker than one above it (thresholds and hysteresis see a bounce).
        The causes are conductors that cannot take the field to earth: a finger on a product with
        a weak return path (a battery product: the body and the device ground in series), and
        floating objects (a coin, a water film), which couple the transmitter to the receiver and
        raise Cm instead of lowering it (a floating conductor carries no net charge: it can only
        pass the field on; electrostatics of conductors).
    Known limitations:
        An estimate of a model (finger or object shape, body and device coupling from the config)
        at the approach heights solved; a change between two heights is placed by interpolation.
        Measure a prototype under the real overlay.
    Example:
        The flawed demo key (a 20 mm receiver with no ground near it, boards/tm1-flawed) in a
        product with 10 pF to earth: the signal peaks 1.9 mm above the overlay and falls back
        (error); with 2 pF to earth it falls to -24 fF at 3.5 mm, turns, reverses sign at 0.7 mm
        and reads +37 fF at touch (error).
    Fix:
        Make the receiver a small fraction of the ground (narrow RX fingers, more ground around the
        node), thin the overlay, or improve the device's ground coupling.
    Parameters:
        See the table.
    References:
        Finger return-path physics: derived (this project's field solver); a floating conductor's
        zero net charge: textbook electrostatics of conductors (Landau and Lifshitz,
        Electrodynamics of Continuous Media, chapter 1; from memory)
    """

    id = "signal.turnaround"
    title = "Signal turns or reverses sign above the overlay"
    default_severity = "error"
    needs = ("sensors", "estimates")
    params = {"margin_mm": Param(0.0, "mm", "derived", "turns and sign reversals at or below this height above the surface pass")}

    def check(self, design: Design, estimates: Mapping[str, Any], params: Mapping[str, Any]) -> Iterable[Finding]:
        from sensorcheck.physics.estimate import turns_by_curve

        for s in design.sensors:
            est = estimates.get(s.name)
            if est is None:
                continue
            turns = [t for t in turns_of(est) if t.height_mm > params["margin_mm"]]
            if not turns:
                continue
            place, which = turning_place(est)
            centre = getattr(est, "centre_mm", None)
            curves = {"best": list(est.curve), "centre": list(getattr(est, "curve_centre", None) or [])}
            reverses = any(t.kind == "reverses sign" for t in turns)
            weaker = any(_press_reads_weaker(curves[c], est.baseline_pf, params["margin_mm"]) for c in {t.curve for t in turns})
            def at(c: str) -> str:
                p = centre if c == "centre" else est.best_point_mm
                return f" ({fmt(p[0], 1)}, {fmt(p[1], 1)}) mm" if p else ""

            names = {"best": "the most sensitive point" + at("best"), "centre": "the node centre" + at("centre")}
            parts = turns_by_curve(turns, {c: names[c] for c in ((which, "centre" if which == "best" else "best"))}, fmt)
            if reverses:
                effect = "a press reads as the opposite of a touch, or near the crossing as nothing"
            elif weaker:
                effect = "a press reads as a release"
            else:
                effect = "at the surface it is strongest, but a finger passing the dip reads weaker than one above it"
            yield finding(
                "error" if reverses or weaker else "warning",
                f"the estimated signal of {s.name} {'; and '.join(parts)} (limit {fmt(params['margin_mm'])} mm): "
                f"{effect}{_rx_ground_text(design, s)} (estimate: {est.model})",
                value=turns[0].height_mm, limit=params["margin_mm"], unit="mm", layer=s.layer, geom=s.outline,
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
