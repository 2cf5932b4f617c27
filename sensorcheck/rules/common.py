"""Small pure helpers the rule families share: copper per net and layer, distances, locations."""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping, Sequence
from typing import Any

import numpy as np
import shapely
import shapely.ops
from shapely.geometry import LineString, MultiLineString, Point
from shapely.geometry.base import BaseGeometry

from sensorcheck.board.model import Board, Feature, Hole, Layer
from sensorcheck.design.model import Design, Sensor
from sensorcheck.errors import ConfigError
from sensorcheck.findings import Finding, Location, Severity
from sensorcheck.materials import FR4_EPSILON_R, MATERIALS
from sensorcheck.rules.base import Param

SELF_KINDS = frozenset({"self-button", "slider", "wheel", "proximity"})
#: nets with these roles are not "foreign" copper near a sensor
REFERENCE_ROLES = frozenset({"ground", "shield", "guard"})

EMPTY = shapely.Polygon()


def fmt(v: float, digits: int = 2) -> str:
    return f"{v:.{digits}f}"


def union(geoms: Iterable[BaseGeometry | None]) -> BaseGeometry:
    parts = [g for g in geoms if g is not None and not g.is_empty]
    if not parts:
        return EMPTY
    if len(parts) == 1:
        return parts[0]
    return shapely.union_all(parts)


def location(layer: str | None, geom: BaseGeometry | None = None, *, point: tuple[float, float] | None = None,
             source: Any = None) -> Location:
    """A Location for a geometry (a point on it and its box) with the source file/line if known."""
    x = y = None
    box = None
    if geom is not None and not geom.is_empty:
        p = geom.representative_point() if point is None else Point(point)
        x, y = round(p.x, 4), round(p.y, 4)
        b = geom.bounds
        box = (round(b[0], 4), round(b[1], 4), round(b[2], 4), round(b[3], 4))
    elif point is not None:
        x, y = round(point[0], 4), round(point[1], 4)
    file = getattr(source, "file", None)
    line = getattr(source, "line", None)
    return Location(layer=layer, x_mm=x, y_mm=y, box_mm=box, file=file, line=line)


def finding(severity: Severity, message: str, *, value: float | None = None, limit: float | None = None,
            unit: str | None = None, layer: str | None = None, geom: BaseGeometry | None = None,
            point: tuple[float, float] | None = None, nets: Sequence[str] = (), sensor: str | None = None,
            source: Any = None, related: list[Location] | None = None, review: str | None = None) -> Finding:
    """Build a finding (rule_id is filled by the engine)."""
    return Finding(
        rule_id="",
        severity=severity,
        message=message,
        value=None if value is None else round(float(value), 6),
        limit=None if limit is None else round(float(limit), 6),
        unit=unit,
        location=location(layer, geom, point=point, source=source),
        related=related or [],
        nets=tuple(sorted(dict.fromkeys(nets))),
        sensor=sensor,
        review=review,
    )


def copper(board: Board, layer: str) -> Layer | None:
    lay = board.layer(layer)
    return lay if lay is not None and lay.function == "copper" else None


def net_copper(board: Board, layer: str, nets: Iterable[str]) -> BaseGeometry:
    lay = copper(board, layer)
    if lay is None:
        return EMPTY
    return union(lay.by_net.get(n) for n in nets)


def role(design: Design, net: str) -> str | None:
    r = design.roles.get(net)
    return r[0] if r else None


def aggressor_kind(design: Design, net: str) -> str | None:
    r = design.roles.get(net)
    return (r[1] or "other") if r and r[0] == "aggressor" else None


def ground_copper(design: Design, layer: str) -> BaseGeometry:
    return net_copper(design.board, layer, design.ground_nets())


def sensing_nets(design: Design) -> set[str]:
    return {n for s in design.sensors for n in s.nets}


def foreign_nets(design: Design, layer: str, own: Iterable[str]) -> list[str]:
    """Nets on ``layer`` that are not ``own`` and not ground/shield/guard."""
    lay = copper(design.board, layer)
    if lay is None:
        return []
    own_set = set(own)
    return sorted(n for n in lay.by_net if n not in own_set and role(design, n) not in REFERENCE_ROLES)


def is_floating_id(net: str) -> bool:
    """Copper no net could be found for carries an id like ``~n<hash>`` (board/model.py)."""
    return net.startswith("~")


def overlay_thickness_mm(design: Design) -> float:
    ov = design.config.overlay
    if ov is None:
        from sensorcheck.rules.base import HOW_TO_GIVE, MissingInput

        raise MissingInput(*HOW_TO_GIVE["overlay"])
    return ov.thickness_mm


def contact_diameter_mm(design: Design, default_mm: float) -> float:
    f = design.config.finger
    return f.contact_diameter_mm if f is not None else default_mm


def touch_layer(design: Design) -> str:
    face = design.config.overlay.face if design.config.overlay is not None else "top"
    if face == "top":
        return "top-copper"
    return "bottom-copper"


def layer_separation(board: Board, a: str, b: str, default_epsilon_r: float) -> tuple[float, float] | None:
    """Distance (mm) and effective permittivity between copper layers ``a`` and ``b`` from the stackup.

    Copper thicknesses between them are skipped; dielectrics in series.  None if unknown.
    """
    st = board.stackup
    if st is None or a == b:
        return None
    names = [lay.copper_layer for lay in st.layers]
    if a not in names or b not in names:
        return None
    ia, ib = sorted((names.index(a), names.index(b)))
    diel = [(lay.thickness_mm, lay.epsilon_r or default_epsilon_r) for lay in st.layers[ia + 1 : ib]
            if lay.kind == "dielectric" and lay.thickness_mm > 0]
    if not diel:
        return None
    from sensorcheck.physics.parasitics import series_epsilon_r

    return sum(t for t, _ in diel), series_epsilon_r(diel)


def net_features(board: Board, layer: str, nets: Iterable[str]) -> list[Feature]:
    lay = board.layer(layer)
    if lay is None:
        return []
    ns = set(nets)
    return [f for f in lay.features if f.net in ns and f.polarity == "dark"]


def paths(features: Iterable[Feature]) -> BaseGeometry:
    """Centre lines of draws and arcs."""
    lines = []
    for f in features:
        if f.path is None or f.path.is_empty:
            continue
        if isinstance(f.path, MultiLineString):
            lines.extend(f.path.geoms)
        elif isinstance(f.path, LineString):
            lines.append(f.path)
    if not lines:
        return shapely.MultiLineString()
    return shapely.MultiLineString(lines)


def source_near(features: Sequence[Feature], geom: BaseGeometry) -> Any:
    """The source (file, line) of the feature nearest to ``geom`` (None if there are none).

    The first of the nearest in the given order, as ``min`` would pick; exact distances are only
    computed for features whose bounding box is no farther from the box of some part of ``geom``
    than the best distance found so far (that box distance is a lower bound), nearest box first.
    """
    if not features or geom is None or geom.is_empty:
        return None
    if len(features) == 1:
        return features[0].source
    # box of every feature against the box of every part of ``geom`` (a slider's segments apart)
    gb = shapely.bounds(shapely.get_parts(geom)).reshape(1, -1, 4)
    fb = shapely.bounds(np.array([f.geometry for f in features], dtype=object)).reshape(-1, 1, 4)
    dx = np.maximum(0.0, np.maximum(fb[..., 0] - gb[..., 2], gb[..., 0] - fb[..., 2]))
    dy = np.maximum(0.0, np.maximum(fb[..., 1] - gb[..., 3], gb[..., 1] - fb[..., 3]))
    lower = np.hypot(dx, dy).min(axis=1)
    dist = np.full(len(features), np.inf)
    best = np.inf
    for i in np.flatnonzero(np.isnan(lower)):  # empty geometries: whatever distance says, as before
        dist[i] = features[int(i)].geometry.distance(geom)
    for i in np.argsort(lower, kind="stable"):
        if np.isnan(lower[i]):
            continue
        if lower[i] > best:
            break
        d = features[int(i)].geometry.distance(geom)
        dist[i] = d
        if d < best:
            best = d
    return features[min(range(len(features)), key=lambda k: dist[k])].source


def box_mask(geom: BaseGeometry, boxes: np.ndarray) -> np.ndarray:
    """Which of ``boxes`` (rows x0, y0, x1, y1) meet the box of ``geom``, edges included, all at
    once (as :func:`bbox_overlap` for each; an empty ``geom`` meets none, a NaN box nothing)."""
    if geom.is_empty:
        return np.zeros(len(boxes), dtype=bool)
    x0, y0, x1, y1 = geom.bounds
    return (boxes[:, 0] <= x1) & (x0 <= boxes[:, 2]) & (boxes[:, 1] <= y1) & (y0 <= boxes[:, 3])


def bbox_overlap(a: BaseGeometry, b: BaseGeometry) -> bool:
    if a.is_empty or b.is_empty:
        return False
    ax0, ay0, ax1, ay1 = a.bounds
    bx0, by0, bx1, by1 = b.bounds
    return ax0 <= bx1 and bx0 <= ax1 and ay0 <= by1 and by0 <= ay1


def clipped_union(geoms: Iterable[BaseGeometry], window: BaseGeometry) -> BaseGeometry:
    """Union of ``geoms`` clipped to ``window`` (clipping first: the union of a whole layer is slow)."""
    return union(g.intersection(window) for g in geoms if bbox_overlap(g, window))


def hole_nets(design: Design) -> dict[int, str | None]:
    """Net of every hole (by index in ``board.holes``): the drill file's, else the copper it lands on.

    The holes' points are made at once; per layer, the box query finds the candidate copper and the
    prepared copper decides, in the tree's order (the first net found wins, layer by layer).
    """
    holes = design.board.holes
    out: dict[int, str | None] = {i: h.net for i, h in enumerate(holes) if h.net}
    todo = [i for i, h in enumerate(holes) if not h.net]
    if not todo:
        return out
    pts = shapely.points(np.array([holes[i].x_mm for i in todo], dtype=float),
                         np.array([holes[i].y_mm for i in todo], dtype=float))
    for i in todo:
        out[i] = None
    for lay in design.board.copper_layers():
        names = list(lay.by_net)
        if not names:
            continue
        geoms = np.array([lay.by_net[n] for n in names], dtype=object)
        left = [k for k, i in enumerate(todo) if out[i] is None]
        if not left:
            break
        src, tgt = shapely.STRtree(geoms).query(pts[left])
        if len(src) == 0:
            continue
        shapely.prepare(geoms[np.unique(tgt)])
        keep = shapely.intersects(geoms[tgt], pts[left][src])
        for a, b in zip(src[keep], tgt[keep]):
            i = todo[left[int(a)]]
            if out[i] is None:
                out[i] = names[int(b)]
    return out


def hole_net(design: Design, hole: Hole) -> str | None:
    """The hole's net: from the drill file, else the copper it lands on (any copper layer)."""
    if hole.net:
        return hole.net
    p = Point(hole.x_mm, hole.y_mm)
    for lay in design.board.copper_layers():
        for net, geom in lay.by_net.items():
            if geom.intersects(p):
                return net
    return None


#: the parameter every rule that tells vias from other holes shares (one default, one source class)
#: permittivity of dielectrics the stackup leaves blank: the material table's FR-4, with its source
FR4_PARAM = Param(FR4_EPSILON_R, "1", MATERIALS["fr4"].source_class,
                  f"permittivity of dielectrics the stackup leaves blank (FR-4: {MATERIALS['fr4'].source})")
VIA_DIAMETER_PARAM = Param(0.6, "mm", "derived", "plated holes up to this size count as vias when the drill file does not say")


def is_via(hole: Hole, max_via_diameter_mm: float) -> bool:
    if hole.function is not None:
        return hole.function == "via"
    return bool(hole.plated is not False and hole.diameter_mm <= max_via_diameter_mm)


def min_inscribed_width_mm(geom: BaseGeometry, tol_mm: float = 0.02) -> float:
    """Width of the widest disc that fits (2 x largest inscribed radius), by bisection on buffer(-r)."""
    if geom.is_empty:
        return 0.0
    lo, hi = 0.0, math.sqrt(geom.area)
    while hi - lo > tol_mm:
        mid = 0.5 * (lo + hi)
        if geom.buffer(-mid).is_empty:
            hi = mid
        else:
            lo = mid
    return 2.0 * lo


def nearest_points(a: BaseGeometry, b: BaseGeometry) -> tuple[tuple[float, float], tuple[float, float]]:
    pa, pb = shapely.ops.nearest_points(a, b)  # noqa
    return (pa.x, pa.y), (pb.x, pb.y)


def midpoint(a: tuple[float, float], b: tuple[float, float]) -> tuple[float, float]:
    return ((a[0] + b[0]) / 2.0, (a[1] + b[1]) / 2.0)


def require_positive(rule_id: str, name: str, value: float) -> float:
    if value <= 0:
        raise ConfigError(None, f'rules."{rule_id}".{name}', f"must be > 0, got {value}")
    return value


def sensor_of_net(design: Design) -> dict[str, Sensor]:
    out: dict[str, Sensor] = {}
    for s in design.sensors:
        for n in s.nets:
            out.setdefault(n, s)
    return out


#: the floors an estimated touch signal must clear for the estimate to decide (rules whose
#: geometric number is a rule of thumb: the estimate, where there is one, is the verdict)
ESTIMATE_FLOOR_PARAMS: dict[str, Param] = {
    "min_delta_pf": Param(0.1, "pF", "common practice",
                          "estimated touch delta below which the estimate does not clear the layout "
                          "(the smallest finger signal used in tuning examples; vendor guidance, anonymous)"),
    "min_percent_self": Param(3.0, "%", "common practice",
                              "estimated relative change floor for self electrodes (vendor guidance, anonymous)"),
    "min_percent_mutual": Param(10.0, "%", "common practice",
                                "estimated relative change floor for mutual buttons (10-30 % expected for well-"
                                "proportioned keys)"),
}


def estimate_decides(message: str, est: Any, params: Mapping[str, Any]) -> str | None:
    """A rule-of-thumb finding where the field solver has an estimate for the sensor: None when the
    estimate clears the floors of :data:`ESTIMATE_FLOOR_PARAMS` (no finding), else ``message`` with
    the estimate's numbers appended (``message`` itself when there is no estimate)."""
    if est is None:
        return message
    ok, text = estimate_ok(est, params["min_delta_pf"], params["min_percent_self"], params["min_percent_mutual"])
    return None if ok else f"{message}; {text}"


def estimate_ok(est: Any, min_delta_pf: float, min_percent_self: float, min_percent_mutual: float) -> tuple[bool, str]:
    """Does the estimated touch signal clear its floors?  Returns (ok, text citing the estimate)."""
    floor_pct = min_percent_mutual if est.kind == "mutual" else min_percent_self
    delta = abs(est.touch_delta_pf)
    pct = abs(est.percent_change)
    turned = est.turning_point_mm is not None and est.turning_point_mm > 0
    ok = delta >= min_delta_pf and pct >= floor_pct and not turned
    text = (
        f"field-solver estimate: touch delta {1000 * est.touch_delta_pf:+.1f} fF ({est.percent_change:+.1f} %), "
        f"floors {1000 * min_delta_pf:.0f} fF and {floor_pct:.1f} %"
    )
    if turned:
        text += f", signal turns around {est.turning_point_mm:.2f} mm above the overlay"
    return ok, text


def require_role(design: Design, role_name: str) -> list[str]:
    """The nets with ``role_name``; none -> MissingInput (the rule then says once what to give)."""
    nets = design.nets_with(role_name)  # type: ignore[arg-type]
    if not nets:
        from sensorcheck.rules.base import MissingInput

        if design.board.net_source == "geometry":
            # no names to match: a pattern like ground = ["GND"] cannot work, a place can
            raise MissingInput(f"no {role_name} nets were given",
                               f"the board carries no net names: add [[roles.place]] with layer, point_mm on its "
                               f'copper and role = "{role_name}" to sensorcheck.toml')
        example = {"aggressor": 'aggressor = [{pattern = "LED*", kind = "led"}]', "ground": 'ground = ["GND"]'}.get(
            role_name, f'{role_name} = ["..."]')
        raise MissingInput(f"no {role_name} nets were named", f"add {example} under [roles] in sensorcheck.toml")
    return nets


def sensor_source(design: Design, s: Sensor, near: BaseGeometry | None = None) -> Any:
    """Source (file, line) of the sensor's electrode feature nearest to ``near`` (or to its outline)."""
    feats: list[Feature] = []
    for layer in dict.fromkeys(e.layer for e in s.electrodes):
        feats += net_features(design.board, layer, [e.net for e in s.electrodes if e.layer == layer])
    return source_near(feats, near if near is not None else s.outline)
