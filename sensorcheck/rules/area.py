"""Area rules: how large the receiver is against the ground around it (the lever on the turnaround)."""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from typing import Any

import shapely

from sensorcheck.design.model import Design
from sensorcheck.rules.common import finding, fmt, require_role, union
from sensorcheck.rules.base import Param, Rule
from sensorcheck.findings import Finding


class ReceiverVsGround(Rule):
    """Receiver area as a fraction of the ground around it and of the node.

    What it checks:
        For every sensor with receiver copper, the receiver area, the ground copper area within
        ``surround_mm`` of the sensor's electrodes (all copper layers added up) and the node
        footprint (the convex hull of its TX and RX copper).  It reports both fractions as a note.
        When the field solver finds that the sensor's signal turns around above the overlay
        surface, this rule stays silent: ``signal.turnaround`` reports that as an error with
        these numbers.
    Why it matters:
        The finger is not a perfect ground: it returns to earth through the body and, for a
        battery product, the device's own coupling.  Near a large receiver the direct finger-to-RX
        coupling grows faster than the field the finger takes away, and the signal turns around (a
        press looks like a release).  Keeping the receiver a small fraction of the ground is the lever.
    Known limitations:
        No published threshold exists, so the fraction is reported, never judged; the field
        solver's turning point is what decides.
    Example:
        A 10 mm RX disc (78.5 mm2) with 400 mm2 of ground within 10 mm: 19.6 %.
    Fix:
        Shrink the receiver to narrow fingers, add ground around the node, or give the product a
        better return path; confirm with ``sensorcheck estimate``.
    Parameters:
        See the table.
    References:
        Physics of the finger's return path: field-solver notes of this project (derived).
    """

    id = "area.receiver-vs-ground"
    title = "Receiver area against surrounding ground"
    default_severity = "note"
    needs = ("sensors",)
    params = {
        "surround_mm": Param(10.0, "mm", "derived", "how far around the electrodes ground copper is counted"),
    }

    def check(self, design: Design, estimates: Mapping[str, Any], params: Mapping[str, Any]) -> Iterable[Finding]:
        if any(s.electrodes_with("receiver") for s in design.sensors):
            require_role(design, "ground")
        # every ground net's copper per layer, with its box, once per run; no layer-wide union: a
        # window's pieces are merged only when two ground nets reach into it
        ground_nets = design.ground_nets()
        grounds = {lay.name: [(g, g.bounds) for n in ground_nets
                              if (g := lay.by_net.get(n)) is not None and not g.is_empty]
                   for lay in design.board.copper_layers()}
        for s in design.sensors:
            rxs = s.electrodes_with("receiver")
            if not rxs:
                continue
            est = estimates.get(s.name)
            if est is not None and est.turning_point_mm is not None and est.turning_point_mm > 0:
                continue
            rx_area = sum(e.geometry.area for e in rxs)
            outline = self.cache.outline(s)
            window = self.cache.grown(s, params["surround_mm"])
            gnd_area = 0.0
            x0, y0, x1, y1 = box = window.bounds
            for lay in design.board.copper_layers():
                pieces = [_clip_to_box(g, box) for g, (a0, b0, a1, b1) in grounds[lay.name]
                          if a0 <= x1 and x0 <= a1 and b0 <= y1 and y0 <= b1]
                if not pieces:
                    continue
                near = (pieces[0] if len(pieces) == 1 else union(pieces)).intersection(window)
                gnd_area += (near.difference(outline) if lay.name == s.layer else near).area
            # the hull of the pieces is the hull of their union (no union needed)
            footprint = shapely.GeometryCollection(
                [e.geometry for e in s.electrodes if e.role in ("transmitter", "receiver")]).convex_hull
            node_frac = rx_area / footprint.area if footprint.area > 0 else 0.0
            nets = tuple(e.net for e in rxs)
            if gnd_area <= 0:
                yield finding(
                    "note",
                    f"receiver area {fmt(rx_area, 1)} mm2 ({fmt(100 * node_frac, 1)} % of the node); no ground copper "
                    f"within {fmt(params['surround_mm'], 1)} mm on any layer, so the ratio to ground is undefined "
                    "(no published threshold)",
                    value=None, unit="%", layer=s.layer, geom=outline, nets=nets, sensor=s.name,
                )
                continue
            frac = rx_area / gnd_area
            yield finding(
                "note",
                f"receiver area {fmt(rx_area, 1)} mm2 is {fmt(100 * frac, 1)} % of the {fmt(gnd_area, 1)} mm2 of ground "
                f"within {fmt(params['surround_mm'], 1)} mm (all layers) and {fmt(100 * node_frac, 1)} % of the node "
                "footprint; no published threshold: the field-solver turning point decides",
                value=100 * frac, unit="%", layer=s.layer, geom=outline, nets=nets, sensor=s.name,
            )


def _clip_to_box(geom: Any, bounds: tuple[float, float, float, float]) -> Any:
    """``geom`` cut to a box by GEOS's fast rectangle clip, or whole when that clip is not valid.

    The exact intersection that follows then walks only the copper near the sensor, not a whole pour.
    """
    clipped = shapely.clip_by_rect(geom, *bounds)
    return clipped if clipped.is_valid else geom


RULES: tuple[type[Rule], ...] = (ReceiverVsGround,)
