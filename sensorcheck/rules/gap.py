"""Gap rules: how far the sensing copper stands from the copper its field returns to, against the overlay."""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from typing import Any

from sensorcheck.design.model import Design
from sensorcheck.rules.common import (
    SELF_KINDS,
    clipped_union,
    ESTIMATE_FLOOR_PARAMS,
    estimate_decides,
    finding,
    fmt,
    union,
    midpoint,
    nearest_points,
    require_role,
    net_features,
    overlay_thickness_mm,
    source_near,
)
from sensorcheck.rules.base import Param, Rule
from sensorcheck.findings import Finding


class TxRxGapVsOverlay(Rule):
    """TX-RX gap of a mutual node against the overlay thickness.

    What it checks:
        For every sensor with transmitter and receiver copper on the same layer, the smallest
        edge-to-edge gap between TX and RX, as a ratio of the overlay's geometric thickness t.
        It warns when the ratio lies outside ``ratio`` x (1 +- ``tolerance_fraction``).  Where the
        field solver has an estimate for the sensor, the estimate decides: no warning when its
        touch signal clears the floors, a warning that cites the estimate when it does not.
    Why it matters:
        A finger only takes away the field lines that arch above the copper through the overlay.
        A gap that is small for the overlay adds mostly direct, untouchable TX-RX capacitance (a
        large baseline, a small percentage change); a gap that is large weakens the coupling.
    Known limitations:
        The coefficient 0.6 is a rule of thumb of common practice with no published source; the
        controlling variable is rather the TX-centre to RX-centre distance (field height scales with
        the electrode period).  It is a warning only, never a block; the estimate is the better number.
    Example:
        A 2 mm PMMA overlay and a 0.4 mm gap: ratio 0.20, expected about 0.6 (0.30-0.90).
    Fix:
        Widen the gap toward 0.6 t (or narrow it), or enlarge the node; check with ``sensorcheck estimate``.
    Parameters:
        See the table.
    References:
        Rule of thumb gap ~ 0.6 x overlay thickness: common practice (no published source).
        Field height vs electrode period: Mamishev et al., "Interdigital sensors and transducers",
        Proc. IEEE 92(5), 2004.
    """

    id = "gap.tx-rx-vs-overlay"
    title = "TX-RX gap against overlay thickness"
    default_severity = "warning"
    needs = ("sensors", "overlay")
    params = {
        "ratio": Param(0.6, "1", "common practice", "expected gap / overlay thickness (rule of thumb, no published source)"),
        "tolerance_fraction": Param(0.5, "1", "derived", "accepted band around the ratio, as a fraction of it (uncalibrated)"),
        **ESTIMATE_FLOOR_PARAMS,
    }

    def check(self, design: Design, estimates: Mapping[str, Any], params: Mapping[str, Any]) -> Iterable[Finding]:
        t = overlay_thickness_mm(design)
        lo = params["ratio"] * (1 - params["tolerance_fraction"])
        hi = params["ratio"] * (1 + params["tolerance_fraction"])
        for s in design.sensors:
            if s.kind == "matrix":
                continue
            best: tuple[float, Any, Any] | None = None
            for tx in s.electrodes_with("transmitter"):
                for rx in s.electrodes_with("receiver"):
                    if tx.layer != rx.layer:
                        continue
                    d = tx.geometry.distance(rx.geometry)
                    if best is None or d < best[0]:
                        best = (d, tx, rx)
            if best is None:
                continue
            gap, tx, rx = best
            ratio = gap / t
            if lo <= ratio <= hi:
                continue
            too = "small" if ratio < lo else "large"
            msg = (
                f"TX-RX gap {fmt(gap)} mm is {fmt(ratio)} x the {fmt(t)} mm overlay; expected "
                f"{fmt(params['ratio'])} x ({fmt(lo)}-{fmt(hi)}, i.e. {fmt(lo * t)}-{fmt(hi * t)} mm): "
                f"too {too} (rule of thumb, common practice)"
            )
            msg = estimate_decides(msg, estimates.get(s.name), params)
            if msg is None:
                continue
            pa, pb = nearest_points(tx.geometry, rx.geometry)
            yield finding(
                "warning", msg, value=ratio, limit=lo if ratio < lo else hi, unit="gap/overlay",
                layer=tx.layer, geom=tx.geometry.union(rx.geometry), point=midpoint(pa, pb),
                nets=(tx.net, rx.net), sensor=s.name,
                source=source_near(net_features(design.board, tx.layer, [rx.net]), rx.geometry),
            )


def clamp(v: float, lo: float, hi: float) -> float:
    return max(lo, min(hi, v))


class ElectrodeGroundGapVsOverlay(Rule):
    """Gap from a self electrode to ground copper on its layer, against the overlay thickness.

    What it checks:
        For every self-capacitance electrode (buttons, slider and wheel segments, proximity), the
        smallest edge-to-edge distance to ground copper on the same layer, against the target
        t clamped to ``min_gap_mm``-``max_gap_mm`` (t = the overlay's geometric thickness).  Where
        the field solver has an estimate for the sensor, the estimate decides.
    Why it matters:
        The fringe field spreads sideways about as far as the overlay is thick.  Ground closer
        than that takes the field before it reaches the finger: the parasitic capacitance rises
        and the relative signal falls.
    Known limitations:
        Only too-small gaps are reported (a gap much wider than t weakens noise immunity, which
        this rule does not judge).  Ground on other layers is the job of ``hatch.ground-under-self``.
    Example:
        A 1.5 mm overlay and ground 0.3 mm from a button: target 1.5 mm.
    Fix:
        Pull the ground pour back to about the overlay thickness (0.5-2 mm).
    Parameters:
        See the table.
    References:
        Electrode-to-ground gap = overlay thickness clamped to 0.5-2 mm: common practice (vendor
        guidance, anonymous).
    """

    id = "gap.electrode-ground-vs-overlay"
    title = "Self electrode to ground gap against overlay thickness"
    default_severity = "warning"
    needs = ("sensors", "overlay")
    params = {
        "min_gap_mm": Param(0.5, "mm", "common practice", "lower clamp of the target gap"),
        "max_gap_mm": Param(2.0, "mm", "common practice", "upper clamp of the target gap"),
        "tolerance_mm": Param(0.05, "mm", "derived", "measurement slack below the target before warning"),
        **ESTIMATE_FLOOR_PARAMS,
    }

    def check(self, design: Design, estimates: Mapping[str, Any], params: Mapping[str, Any]) -> Iterable[Finding]:
        t = overlay_thickness_mm(design)
        target = clamp(t, params["min_gap_mm"], params["max_gap_mm"])
        gnd_nets = require_role(design, "ground")
        for s in design.sensors:
            if s.kind not in SELF_KINDS:
                continue
            for e in s.electrodes:
                if e.role != "self":
                    continue
                # only ground nearer than the target matters: clip before measuring (whole pours are slow)
                lay = design.board.layer(e.layer)
                window = e.geometry.envelope.buffer(target + 1.0)
                gnd = clipped_union((lay.by_net[n] for n in gnd_nets if n in lay.by_net), window) if lay else union([])
                if gnd.is_empty:
                    continue
                gap = e.geometry.distance(gnd)
                if gap >= target - params["tolerance_mm"]:
                    continue
                msg = (
                    f"electrode-to-ground gap {fmt(gap)} mm is below the target {fmt(target)} mm "
                    f"(overlay {fmt(t)} mm clamped to {fmt(params['min_gap_mm'])}-{fmt(params['max_gap_mm'])} mm; "
                    f"ratio gap/overlay {fmt(gap / t)}; common practice)"
                )
                msg = estimate_decides(msg, estimates.get(s.name), params)
                if msg is None:
                    continue
                pa, pb = nearest_points(e.geometry, gnd)
                yield finding(
                    "warning", msg, value=gap, limit=target, unit="mm", layer=e.layer, geom=e.geometry,
                    point=midpoint(pa, pb), nets=(e.net,), sensor=s.name,
                    source=source_near(net_features(design.board, e.layer, [e.net]), e.geometry),
                )


RULES: tuple[type[Rule], ...] = (TxRxGapVsOverlay, ElectrodeGroundGapVsOverlay)
