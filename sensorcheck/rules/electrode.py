"""Electrode rules: size against the finger and overlay, spacing, slider coverage, diamond pitch."""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping
from typing import Any

import numpy as np
import shapely
from shapely.geometry import LineString

from sensorcheck.design.model import Design, Sensor
from sensorcheck.rules.common import (
    contact_diameter_mm,
    ESTIMATE_FLOOR_PARAMS,
    estimate_decides,
    finding,
    fmt,
    midpoint,
    min_inscribed_width_mm,
    nearest_points,
    overlay_thickness_mm,
    sensor_source,
    union,
)
from sensorcheck.rules.base import Param, Rule
from sensorcheck.rules.effects import CROSSTALK_PARAM, crosstalk_percent
from sensorcheck.findings import Finding

_CONTACT = Param(8.0, "mm", "common practice",
                 "finger contact diameter when the config gives no [finger] (fingertip modelled as an 8 mm disc)")


class SizeVsContact(Rule):
    """Electrode size against the finger contact and the overlay.

    What it checks:
        Self buttons and proximity electrodes: the width of the widest disc that fits in the
        electrode (and its equivalent diameter sqrt(4A/pi), reported).  Mutual nodes: the same for
        the convex hull of the node's TX and RX copper.  Below D_f + 2 t (finger contact
        diameter plus twice the overlay's geometric thickness) is a warning.
    Why it matters:
        The field spreads sideways about as far as the overlay is thick, so a contact must sit about
        t inside the edge to couple its whole area; a smaller electrode loses signal and position
        tolerance.
    Known limitations:
        Electrodes with cut-outs (LED holes) count only their copper.
    Example:
        A 9 mm button under a 2 mm overlay with an 8 mm contact: limit 12 mm.
    Fix:
        Enlarge the electrode or use a thinner overlay.
    Parameters:
        See the table.
    References:
        Electrode at least D_f + 2t: common practice (vendor guidance, anonymous); geometric t for
        lateral rules: derived (field shape in a uniform overlay does not depend on eps_r).
        Where the field solver has an estimate for the sensor, the estimate decides (floors as in
        ``signal.touch-below-floor``).
    """

    id = "electrode.size-vs-contact"
    title = "Electrode size against contact and overlay"
    default_severity = "warning"
    needs = ("sensors", "overlay")
    params = {"contact_diameter_mm": _CONTACT, **ESTIMATE_FLOOR_PARAMS}

    def check(self, design: Design, estimates: Mapping[str, Any], params: Mapping[str, Any]) -> Iterable[Finding]:
        t = overlay_thickness_mm(design)
        df = contact_diameter_mm(design, params["contact_diameter_mm"])
        limit = df + 2 * t
        for s in design.sensors:
            if s.kind in ("self-button", "proximity"):
                shapes = [(e.net, e.layer, e.geometry) for e in s.electrodes if e.role == "self"]
            elif s.kind == "mutual-button":
                node = union(e.geometry for e in s.electrodes if e.role in ("transmitter", "receiver"))
                shapes = [(",".join(s.nets), s.layer, node.convex_hull)] if not node.is_empty else []
            else:
                continue
            for net, layer, g in shapes:
                width = min_inscribed_width_mm(g)
                eq = math.sqrt(4 * g.area / math.pi)
                if width >= limit - 0.05:
                    continue
                msg = (
                    f"electrode fits a {fmt(width, 1)} mm disc (equivalent diameter {fmt(eq, 1)} mm); limit "
                    f"{fmt(limit, 1)} mm = contact {fmt(df, 1)} mm + 2 x overlay {fmt(t, 2)} mm"
                )
                msg = estimate_decides(msg, estimates.get(s.name), params)
                if msg is None:
                    continue
                yield finding(
                    "warning",
                    msg,
                    value=width, limit=limit, unit="mm", layer=layer, geom=g, nets=tuple(net.split(",")), sensor=s.name,
                    source=sensor_source(design, s, g),
                )


class NeighbourSpacing(Rule):
    """Edge-to-edge spacing between the electrodes of neighbouring sensors.

    What it checks:
        For every pair of sensors with electrodes on the same layer, the smallest edge-to-edge
        distance, against max(2 t, ``min_spacing_mm``) (t = overlay geometric thickness).
        Segments of one slider or wheel are one sensor and are not compared with each other.
    Why it matters:
        Fringe fields reach about t sideways: a finger on one button must not reach the gap of the
        next, or both respond (crosstalk, ambiguous keys).
        Where the field solver has an estimate for either sensor, the crosstalk decides: the
        neighbour's delta with the finger on this sensor, as % of this sensor's own delta (the
        worse of the two directions), for every pair the estimates give it for, whatever their
        spacing: no warning when it is at most ``max_crosstalk_percent``, else a warning that
        gives it with the spacing and its rule-of-thumb limit beside it.
    Known limitations:
        Mutual nodes share a TX line by design; they are compared like any other sensors.  The
        crosstalk is estimated with the finger at each sensor's most sensitive point.
    Example:
        Two buttons 3 mm apart under a 2 mm overlay: limit 5 mm.
    Fix:
        Move the sensors apart, or put a ground hatch between.
    Parameters:
        See the table.
    References:
        At least 2 t and more than 5 mm: common practice (vendor guidance, anonymous).  Crosstalk
        limit: common practice (see the parameter).
    """

    id = "electrode.neighbour-spacing"
    title = "Spacing between neighbouring sensors"
    default_severity = "warning"
    needs = ("sensors", "overlay")
    params = {
        "min_spacing_mm": Param(5.0, "mm", "common practice", "smallest spacing whatever the overlay"),
        "overlay_factor": Param(2.0, "1", "common practice", "spacing at least this many overlay thicknesses"),
        "max_crosstalk_percent": CROSSTALK_PARAM,
    }

    def check(self, design: Design, estimates: Mapping[str, Any], params: Mapping[str, Any]) -> Iterable[Finding]:
        t = overlay_thickness_mm(design)
        limit = max(params["overlay_factor"] * t, params["min_spacing_mm"])
        ss = design.sensors
        for i, a in enumerate(ss):
            for b in ss[i + 1 :]:
                best = None
                for ea in a.electrodes:
                    for eb in b.electrodes:
                        if ea.layer != eb.layer or ea.net == eb.net:
                            continue
                        d = ea.geometry.distance(eb.geometry)
                        if best is None or d < best[0]:
                            best = (d, ea, eb)
                cross = crosstalk_percent(estimates, a.name, b.name)
                if cross is None and (best is None or best[0] >= limit):
                    continue  # no estimate and the rule of thumb is met
                if cross is not None and cross[0] <= params["max_crosstalk_percent"]:
                    continue  # the estimated crosstalk is negligible, whatever the spacing
                if best is None:  # crosstalk between sensors on different layers: their nearest electrodes
                    best = min(((ea.geometry.distance(eb.geometry), ea, eb) for ea in a.electrodes
                                for eb in b.electrodes if ea.net != eb.net), key=lambda t: t[0])
                d, ea, eb = best
                pa, pb = nearest_points(ea.geometry, eb.geometry)
                thumb = (f"{a.name} and {b.name} are {fmt(d)} mm apart; limit {fmt(limit, 1)} mm = max("
                         f"{fmt(params['overlay_factor'], 0)} x overlay {fmt(t, 2)} mm, "
                         f"{fmt(params['min_spacing_mm'], 1)} mm)" + (" (met)" if d >= limit else ""))
                if cross is None:  # no estimate: the rule of thumb is the verdict
                    msg, value, lim, unit = thumb, d, limit, "mm"
                else:
                    msg = (f"{cross[1]}; limit {fmt(params['max_crosstalk_percent'], 0)} % (common practice); "
                           f"rule of thumb: {thumb}")
                    value, lim, unit = cross[0], params["max_crosstalk_percent"], "%"
                yield finding(
                    "warning", msg,
                    value=value, limit=lim, unit=unit, layer=ea.layer, point=midpoint(pa, pb),
                    geom=ea.geometry.union(eb.geometry), nets=(ea.net, eb.net), sensor=a.name,
                    source=sensor_source(design, a, ea.geometry),
                )


def _segments_in_order(s: Sensor) -> list[Any]:
    by_net: dict[str, list[Any]] = {}
    for e in s.electrodes:
        by_net.setdefault(e.net, []).append(e)
    order = list(s.order) if s.order else []
    if not order:
        role = "self" if any(e.role == "self" for e in s.electrodes) else "transmitter"
        order = list(dict.fromkeys(e.net for e in s.electrodes if e.role == role))
    return [union(e.geometry for e in by_net[n]) for n in order if n in by_net]


def coverage_sweep(segments: list[Any], closed: bool, contact_mm: float, step_mm: float) -> list[tuple[tuple[float, float], list[float]]]:
    """Overlap area of a contact disc with each segment, at points along the segments' centre line.

    The centre line joins the segment centroids in order (closed for a wheel), cut into equal
    intervals of at most ``step_mm``; the disc sits at the middle of each interval (so a dead
    stretch is measured by the midpoint rule).  Returns (point, overlaps in segment order) per interval.
    """
    cs = [g.centroid for g in segments]
    pts = [(c.x, c.y) for c in cs]
    if closed:
        pts.append(pts[0])
    line = LineString(pts)
    n = max(1, int(math.ceil(line.length / step_mm)))
    seg_arr = np.array(segments, dtype=object)
    out = []
    for d in (np.arange(n) + 0.5) * (line.length / n):
        p = line.interpolate(float(d))
        disc = p.buffer(contact_mm / 2.0, quad_segs=32)
        areas = shapely.area(shapely.intersection(seg_arr, disc))
        out.append(((p.x, p.y), [float(a) for a in areas]))
    return out


def _centre_line_length(segments: list[Any], closed: bool) -> float:
    pts = [(g.centroid.x, g.centroid.y) for g in segments]
    if closed:
        pts.append(pts[0])
    return LineString(pts).length


class SliderCoverage(Rule):
    """Slider and wheel coverage by a finger-sized disc.

    What it checks:
        A disc of the contact diameter is swept along the centre line through the segment
        centroids (end to end for a slider, all the way round for a wheel).  At every step the
        disc must overlap at least two segments, the second-largest overlap being at least
        ``min_second_fraction`` of the largest; no position may overlap nothing (a dead zone).  At
        the two ends of a slider the finger's centre cannot reach the edge, so the end stretches
        where only the end segment sees it are judged by their length only (at most
        ``max_end_fraction`` of the contact).
    Why it matters:
        The position comes from interpolating between neighbouring segments: where only one
        segment sees the finger, the position jumps; where none does, the finger is lost.
    Known limitations:
        Geometric overlap stands for signal (same overlay everywhere, no fringing).
    Example:
        12 mm segments at a 12.5 mm pitch with an 8 mm finger: single-segment stretches.
    Fix:
        Narrow the segments (pitch about half the contact) or interleave them.
    Parameters:
        See the table.
    References:
        Contact must span two or three segments, pitch about half the contact width: common
        practice (vendor guidance, anonymous); the sweep and its ratio: derived.
    """

    id = "electrode.slider-coverage"
    title = "Slider/wheel coverage by a finger"
    default_severity = "warning"
    needs = ("sensors",)
    params = {
        "contact_diameter_mm": _CONTACT,
        "min_second_fraction": Param(0.1, "1", "derived", "second-largest overlap / largest overlap, at least"),
        "step_mm": Param(0.25, "mm", "derived", "sweep step along the centre line"),
        "max_end_fraction": Param(0.5, "1", "common practice",
                                  "slider end travel seen by one segment only, at most this fraction of the contact "
                                  "(the finger centre cannot reach the ends: about half a contact is lost)"),
    }

    def check(self, design: Design, estimates: Mapping[str, Any], params: Mapping[str, Any]) -> Iterable[Finding]:
        df = contact_diameter_mm(design, params["contact_diameter_mm"])
        for s in design.sensors:
            if s.kind not in ("slider", "wheel"):
                continue
            segs = _segments_in_order(s)
            if len(segs) < 2:
                yield finding("warning", f"{s.name} has {len(segs)} segment(s); a {s.kind} needs at least 2",
                              value=len(segs), limit=2, unit="segments", layer=s.layer, geom=s.outline,
                              nets=s.nets, sensor=s.name)
                continue
            sweep = coverage_sweep(segs, s.kind == "wheel", df, params["step_mm"])
            step = _centre_line_length(segs, s.kind == "wheel") / len(sweep)
            ratios: list[float] = []
            dead_mm = 0.0
            dead_pt = None
            for pt, areas in sweep:
                srt = sorted(areas, reverse=True)
                if srt[0] <= 1e-9:
                    dead_mm += step
                    dead_pt = dead_pt or pt
                    ratios.append(0.0)
                else:
                    ratios.append(srt[1] / srt[0])
            ok = [r >= params["min_second_fraction"] for r in ratios]
            lo, hi = 0, len(ok)
            end_mm = 0.0
            if s.kind == "slider" and any(ok):
                # the finger's centre cannot reach the physical ends: the stretches before the first
                # and after the last two-segment position are end travel, judged on their length only
                lo = ok.index(True)
                hi = len(ok) - ok[::-1].index(True)
                end_mm = max(lo, len(ok) - hi) * step
            worst_i = min(range(lo, hi), key=lambda i: ratios[i]) if hi > lo else 0
            worst_ratio, worst_pt = (ratios[worst_i], sweep[worst_i][0]) if hi > lo else (0.0, sweep[0][0])
            max_end = params["max_end_fraction"] * df
            if dead_mm > 0:
                yield finding(
                    "warning",
                    f"a {fmt(df, 1)} mm contact swept along {s.name} overlaps no segment over {fmt(dead_mm, 2)} mm "
                    "(dead zone; limit 0 mm)",
                    value=dead_mm, limit=0.0, unit="mm", layer=s.layer, point=dead_pt, geom=s.outline,
                    nets=s.nets, sensor=s.name, source=sensor_source(design, s),
                )
            elif worst_ratio < params["min_second_fraction"]:
                yield finding(
                    "warning",
                    f"a {fmt(df, 1)} mm contact on {s.name} sees a second segment at only {fmt(100 * worst_ratio, 1)} % "
                    f"of the first at worst; limit {fmt(100 * params['min_second_fraction'], 0)} % (every position must "
                    "cover two segments)",
                    value=100 * worst_ratio, limit=100 * params["min_second_fraction"], unit="%", layer=s.layer,
                    point=worst_pt, geom=s.outline, nets=s.nets, sensor=s.name, source=sensor_source(design, s),
                )
            elif end_mm > max_end + step:
                yield finding(
                    "warning",
                    f"at the ends of {s.name} a {fmt(df, 1)} mm contact sees a single segment over {fmt(end_mm, 1)} mm of "
                    f"travel; limit {fmt(max_end, 1)} mm ({fmt(params['max_end_fraction'], 2)} x contact)",
                    value=end_mm, limit=max_end, unit="mm", layer=s.layer, geom=s.outline, nets=s.nets, sensor=s.name,
                    source=sensor_source(design, s),
                )


class DiamondPitch(Rule):
    """Pitch of row and column electrodes in a matrix (diamond pad).

    What it checks:
        For every matrix, the centre-to-centre distance between consecutive rows and between
        consecutive columns (centroids of each line's copper, in the configured order), against
        ``min_pitch_mm``-``max_pitch_mm``.
    Why it matters:
        Interpolation needs the contact to overlap at least two lines per axis; too fine a pitch
        multiplies channels and baseline capacitance for nothing.
    Known limitations:
        Lines split over two layers are measured on their combined copper.
    Example:
        Rows 12 mm apart with an 8 mm contact: limit 10 mm.
    Fix:
        Use a pitch of about 5-6 mm for an 8 mm contact.
    Parameters:
        See the table.
    References:
        Diamond pitch 4-10 mm, 6 mm typical, about 5 mm ideal for an 8 mm contact: common practice
        (vendor guidance, anonymous).
    """

    id = "electrode.diamond-pitch"
    title = "Matrix (diamond) pitch"
    default_severity = "warning"
    needs = ("sensors",)
    params = {
        "min_pitch_mm": Param(4.0, "mm", "common practice", "finest accepted line pitch"),
        "max_pitch_mm": Param(10.0, "mm", "common practice", "coarsest accepted line pitch"),
    }

    def check(self, design: Design, estimates: Mapping[str, Any], params: Mapping[str, Any]) -> Iterable[Finding]:
        lo, hi = params["min_pitch_mm"], params["max_pitch_mm"]
        for s in design.sensors:
            if s.kind != "matrix":
                continue
            for axis, nets in (("row", s.rows), ("column", s.columns)):
                geoms = [(n, union(e.geometry for e in s.electrodes if e.net == n)) for n in nets]
                geoms = [(n, g) for n, g in geoms if not g.is_empty]
                for (n1, g1), (n2, g2) in zip(geoms, geoms[1:]):
                    c1, c2 = g1.centroid, g2.centroid
                    pitch = c1.distance(c2)
                    if lo <= pitch <= hi:
                        continue
                    yield finding(
                        "warning",
                        f"{axis} pitch {n1}-{n2} of {s.name} is {fmt(pitch)} mm; accepted {fmt(lo, 1)}-{fmt(hi, 1)} mm",
                        value=pitch, limit=lo if pitch < lo else hi, unit="mm", layer=s.layer,
                        point=midpoint((c1.x, c1.y), (c2.x, c2.y)), geom=g1.union(g2), nets=(n1, n2), sensor=s.name,
                        source=sensor_source(design, s, g1),
                    )


RULES: tuple[type[Rule], ...] = (SizeVsContact, NeighbourSpacing, SliderCoverage, DiamondPitch)
