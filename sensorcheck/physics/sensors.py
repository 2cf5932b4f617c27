"""Per-sensor estimates from the board's own copper: baseline, touch signal, approach curve.

Model (each estimate carries a one-line summary in ``SensorEstimate.model``):

* the sensor's copper and everything within ``window_mm`` of it (neighbour sensors as their own
  conductors, ground, shield, other nets) on every copper layer, as zero-thickness sheets at
  the copper heights of the stackup; copper of nets with no sensing role is held at ground;
* the overlay layers, the board dielectrics and air above and below as a layered medium
  (:mod:`sensorcheck.physics.greens`);
* a finger (:mod:`sensorcheck.physics.finger`) above the sensor's most sensitive point (a coarse
  search over the node at touch), moved from ``max_height_mm`` down to the overlay surface (the
  heights where the curve bends or turns solved, the smooth stretches interpolated:
  :mod:`sensorcheck.physics.approach`; the notes say how many were solved);
* mutual sensors: Cm between TX and RX with everything else at the device ground; self sensors:
  capacitance of the electrode (plus its trace in the window) with the other copper grounded, a
  shield net driven at the electrode's potential.

Every number is an estimate of this model; a prototype must be measured.
"""

from __future__ import annotations

import copy
from collections.abc import Callable
from concurrent.futures import Executor
from dataclasses import replace
from typing import Literal

import numpy as np
import shapely
from shapely.geometry import Polygon, box
from shapely.geometry.base import BaseGeometry

from sensorcheck.board.model import Stackup, StackupLayer
from sensorcheck.design.model import Design, Finger, Overlay, OverlayLayer, Sensor
from sensorcheck.errors import ConfigError, InputError, LimitError
from sensorcheck.limits import DEFAULT_LIMITS, Limits
from sensorcheck.materials import FR4_EPSILON_R
from sensorcheck.physics.bem import BoardSystem, Panels
from sensorcheck.physics.estimate import SensorEstimate
from sensorcheck.physics.approach import solved_note
from sensorcheck.physics.finger import FINGER_DEFAULTS, PF, turnarounds, validate_finger
from sensorcheck.physics.greens import LayeredMedium
from sensorcheck.physics.model import (  # the shared model pieces (re-exported for older imports)
    MM,
    Conductor,
    SensorModel,
    SolverOptions,
    Stack,
    _neighbour_channels,
    approach_curve,
    approach_heights,
    centre_note,
    describe,
    finger_panels,
)
from sensorcheck.physics.mesh import ESTIMATE_FACTORS, MeshSpec, estimate_panels, flat_panels

FR4_EPS = FR4_EPSILON_R  # the material table's FR-4 (IPC-4101 4.2-4.8 at 1 MHz; see sensorcheck.materials)
DEFAULT_STACKUP = Stackup(
    layers=[
        StackupLayer("top copper", "copper", 0.035, copper_layer="top-copper"),
        StackupLayer("core", "dielectric", 1.53, material="FR-4", epsilon_r=FR4_EPS),
        StackupLayer("bottom copper", "copper", 0.035, copper_layer="bottom-copper"),
    ],
    board_thickness_mm=1.6,
    source="default",
)




# --------------------------------------------------------------------------------------------
# the layered medium from the stackup and overlay




def build_stack(design: Design, overlay: Overlay) -> Stack:
    """The layered medium with the touched face up (a bottom-touched board is turned over)."""
    notes: list[str] = []
    cfg_file = design.config.file
    for i, layer in enumerate(overlay.layers):
        key = f"overlay.layers[{i}]"
        if not np.isfinite(layer.thickness_mm) or layer.thickness_mm <= 0:
            raise ConfigError(cfg_file, key + ".thickness_mm", f"overlay layer thickness must be > 0 mm, got {layer.thickness_mm}")
        if not np.isfinite(layer.epsilon_r) or layer.epsilon_r < 1.0:
            raise ConfigError(cfg_file, key + ".epsilon_r", f"relative permittivity must be >= 1, got {layer.epsilon_r}")
    stackup = design.config.stackup_override or design.board.stackup
    if stackup is None:
        stackup = DEFAULT_STACKUP
        notes.append(f"no stackup given: assumed 1.6 mm FR-4 (eps_r {FR4_EPS}), two copper layers")
    # board segments from the top face down: (thickness_mm, eps)
    segs: list[tuple[float, float]] = []
    pending = 0.0
    for i, layer in enumerate(stackup.layers):
        if layer.thickness_mm < 0 or not np.isfinite(layer.thickness_mm):
            raise ConfigError(cfg_file, f"stackup.layers[{i}].thickness_mm", f"negative thickness {layer.thickness_mm}")
        if layer.kind == "dielectric":
            eps = layer.epsilon_r if layer.epsilon_r is not None else FR4_EPS
            if layer.epsilon_r is None:
                notes.append(f"stackup layer {layer.name!r}: no permittivity given, FR-4 {FR4_EPS} assumed (IPC-4101 range, material table)")
            if eps < 1.0:
                raise ConfigError(cfg_file, f"stackup.layers[{i}].epsilon_r", f"relative permittivity must be >= 1, got {eps}")
            if layer.thickness_mm <= 0:
                raise ConfigError(cfg_file, f"stackup.layers[{i}].thickness_mm", "a dielectric layer must be thicker than 0 mm")
            segs.append((layer.thickness_mm + pending, eps))
            pending = 0.0
        elif layer.kind == "copper":
            pending += layer.thickness_mm  # copper thickness goes to the next dielectric below
        elif layer.kind == "mask":
            notes.append("solder mask not modelled as a layer (thin); its thickness is ignored")
    if segs and pending:
        segs[-1] = (segs[-1][0] + pending, segs[-1][1])
    cz = stackup.copper_z_mm()
    total = stackup.total_thickness_mm()
    if not cz:
        raise ConfigError(cfg_file, "stackup", "the stackup names no copper layers")
    if sum(t for t, _ in segs) <= 0:
        segs = [(total, FR4_EPS)]
        notes.append(f"stackup has no dielectric layers: one FR-4 core of {total} mm assumed")
    board_t = sum(t for t, _ in segs)
    top_face = overlay.face == "top"
    # z of copper with the touched face up; board spans [0, board_t]
    scale = board_t / total if total > 0 else 1.0
    copper_z = {name: (z * scale if top_face else (total - z) * scale) for name, z in cz.items()}
    if not top_face:
        # the bottom copper's top surface is its far side from the bottom face: keep planes inside
        copper_z = {name: min(max(z, 0.0), board_t) for name, z in copper_z.items()}
        segs = segs[::-1]
    # layers top to bottom: air, overlay..., board segments..., air
    eps_list: list[float] = [1.0]
    interfaces: list[float] = []
    z = board_t + overlay.thickness_mm
    for layer in overlay.layers:
        interfaces.append(z)
        eps_list.append(layer.epsilon_r)
        z -= layer.thickness_mm
    for t, eps in segs:
        interfaces.append(z)
        eps_list.append(eps)
        z -= t
    interfaces.append(z)
    eps_list.append(1.0)
    # merge neighbours of equal permittivity (fewer images, same field)
    m_eps = [eps_list[0]]
    m_if: list[float] = []
    for zi, e in zip(interfaces, eps_list[1:]):
        if abs(e - m_eps[-1]) < 1e-12:
            continue
        m_if.append(zi)
        m_eps.append(e)
    medium = LayeredMedium(eps_r=tuple(m_eps), interfaces_m=tuple(x * MM for x in m_if), tol=1e-6)
    return Stack(medium, {k: v * MM for k, v in copper_z.items()}, (board_t + overlay.thickness_mm) * MM, notes)


# --------------------------------------------------------------------------------------------
# conductors in the window




def _clean(geom: BaseGeometry, where: str, design: Design) -> BaseGeometry:
    if geom.is_empty:
        return geom
    if not geom.is_valid:
        raise InputError(
            design.board.source, None, f"{where}: copper polygon is not valid ({shapely.is_valid_reason(geom)})", "simple, non-self-intersecting polygons"
        )
    polys = [p for p in shapely.get_parts(geom) if isinstance(p, Polygon) and p.area > 1e-4]
    if not polys:
        return Polygon()
    return shapely.union_all(polys).simplify(0.002, preserve_topology=True)


def _dehatch(geom: BaseGeometry, notes: list[str], what: str) -> BaseGeometry:
    """A hatch (many small openings, low fill) becomes a solid sheet; the approximation is noted.

    Only the hatch's own openings are filled (those no larger than three times the median
    opening): cut-outs around electrodes and other copper stay open.
    """
    out = []
    copper = sheet = 0.0
    for p in shapely.get_parts(geom):
        if isinstance(p, Polygon) and len(p.interiors) >= 12:
            areas = np.array([Polygon(r).area for r in p.interiors])
            small = areas <= 3.0 * float(np.median(areas))
            solid = Polygon(p.exterior, [r for r, keep in zip(p.interiors, ~small) if keep])
            fill = p.area / solid.area if solid.area > 0 else 1.0
            if fill < 0.85:
                copper += p.area
                sheet += solid.area
                out.append(solid)
                continue
        out.append(p)
    if sheet > 0:
        notes.append(
            f"{what}: hatched copper (coverage {100 * copper / sheet:.0f} %) modelled as a solid sheet "
            "(an approximation: it overestimates the coupling to that copper)"
        )
    return shapely.union_all(out) if out else geom


def gather_conductors(design: Design, sensor: Sensor, window: Polygon, notes: list[str]) -> list[Conductor]:
    """Conductors within the window: this sensor's nets, neighbours' nets, shield, ground (+ other copper)."""
    x0, y0, x1, y1 = window.bounds
    own = list(sensor.nets)
    roles = {n: r for n, (r, _) in design.roles.items()}
    net_sensor: dict[str, str] = {}
    for s in design.sensors:
        for n in s.nets:
            net_sensor.setdefault(n, s.name)
    conductors: dict[str, Conductor] = {}

    def add(name: str, kind: str, layer: str, g: BaseGeometry, sensor_name: str | None = None) -> None:
        if g.is_empty:
            return
        c = conductors.setdefault(name, Conductor(name, kind, {}, sensor_name, roles.get(name)))  # type: ignore[arg-type]
        c.copper[layer] = shapely.union(c.copper[layer], g) if layer in c.copper else g

    layers = design.board.copper_layers()
    have_nets = any(layer.by_net for layer in layers)
    other_nets: set[str] = set()
    for layer in layers:
        if have_nets:
            for net, g in layer.by_net.items():
                gi = shapely.clip_by_rect(g, x0, y0, x1, y1)
                if gi.is_empty:
                    continue
                if net in own:
                    add(net, "sensor", layer.name, gi, sensor.name)
                elif net in net_sensor:
                    add(net, "neighbour", layer.name, gi, net_sensor[net])
                elif roles.get(net) == "shield":
                    add("shield", "shield", layer.name, gi)
                else:
                    if roles.get(net) != "ground":
                        other_nets.add(net)
                    add("ground", "ground", layer.name, gi)
        # electrodes from the design (when the board has no per-net copper, or to be sure)
        for s in design.sensors:
            for e in s.electrodes:
                parts = [e.geometry] if e.layer == layer.name else []
                if layer.name in e.trace:
                    parts.append(e.trace[layer.name])
                for g in parts:
                    gi = shapely.clip_by_rect(g, x0, y0, x1, y1)
                    if gi.is_empty:
                        continue
                    kind = "sensor" if e.net in own else "neighbour"
                    if e.net in conductors and layer.name in conductors[e.net].copper:
                        continue
                    add(e.net, kind, layer.name, gi, s.name)
        if not have_nets and layer.dark is not None:
            sens = shapely.union_all(
                [c.copper[layer.name] for c in conductors.values() if layer.name in c.copper] or [Polygon()]
            )
            rest = shapely.difference(shapely.clip_by_rect(layer.dark, x0, y0, x1, y1), sens.buffer(0.01))
            add("ground", "ground", layer.name, rest)
    if not have_nets:
        notes.append("no per-net copper on the board: copper outside the sensors' electrodes treated as ground")
    if other_nets:
        shown = ", ".join(sorted(other_nets)[:5]) + (" ..." if len(other_nets) > 5 else "")
        notes.append(f"nets without a sensing role in the window held at ground: {shown}")
    out = []
    for c in conductors.values():
        for layer in list(c.copper):
            g = _clean(c.copper[layer], f"net {c.name} on {layer}", design)
            if c.kind in ("ground", "shield"):
                g = _dehatch(g, notes, f"{c.name} on {layer}")
            if g.is_empty:
                del c.copper[layer]
            else:
                c.copper[layer] = g
        if c.copper:
            out.append(c)
    return out


# --------------------------------------------------------------------------------------------
# meshing


def _h_near_mm(opts: SolverOptions, overlay: Overlay) -> float:
    if opts.h_near_mm is not None:
        return opts.h_near_mm
    return float(np.clip(1.2 * overlay.thickness_mm, 0.8, 2.0))


#: under a thin overlay the board's panels under the rim of the finger pressed where users press
#: are graded down to this many times the finger-copper distance (touch gap + overlay), growing
#: by RIM_GRADING per mm away from the rim: the charge crowds under the rim over about that
#: distance.  Measured (tests/physics/test_finger_near.py, a 20 mm pad under 0.05 mm): the touch
#: delta 2.5 % short of the mesh refined twice without it, 0.1 % with it
RIM_PER_DISTANCE = 3.0
RIM_GRADING = 0.3


def press_rims(sensor: Sensor, finger: Finger, overlay: Overlay, opts: SolverOptions) -> tuple[BaseGeometry, float] | None:
    """The rim of the finger's contact pressed at the node centre (and at the receiver's centre of
    a mutual node), and the panel size (mm) to grade the touched copper to under it; None where the
    finger at touch is not closer to the copper than a third of the panel size near the sensor."""
    gap_mm = opts.touch_gap_mm + overlay.thickness_mm
    h_rim = RIM_PER_DISTANCE * gap_mm
    if h_rim >= _h_near_mm(opts, overlay):
        return None
    c = sensor.outline.centroid
    pts = [(c.x, c.y)]
    rx = [e.geometry for e in sensor.electrodes_with("receiver")]
    if rx and sensor.electrodes_with("transmitter"):
        r = shapely.union_all(rx).centroid
        if np.hypot(r.x - c.x, r.y - c.y) > 0.3:
            pts.append((r.x, r.y))
    radius = finger.contact_diameter_mm / 2.0
    rims = shapely.union_all([shapely.Point(x, y).buffer(radius, quad_segs=32).exterior for x, y in pts])
    return rims, h_rim


def _mesh_sizes(
    zone: BaseGeometry, opts: SolverOptions, overlay: Overlay, rims: tuple[BaseGeometry, float] | None = None
) -> tuple[MeshSpec, Callable[[np.ndarray, np.ndarray], tuple[np.ndarray, np.ndarray]]]:
    """Panel sizes (mm) of the board's copper: fine near the sensor (``zone``), coarser away from it,
    and (``rims``: :func:`press_rims`) finer still under the rim of a finger pressed on a thin overlay."""
    h_near = _h_near_mm(opts, overlay) / opts.refine
    h_far = opts.h_far_mm / opts.refine
    h_edge = opts.h_edge_mm / opts.refine
    shapely.prepare(zone)

    def h_at(x: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        d = shapely.distance(shapely.points(x, y), zone)
        return np.minimum(h_far, h_edge + 0.15 * d), np.minimum(h_far, h_near + 0.3 * d)

    if rims is None:
        return MeshSpec(h_edge, h_far, 0.35), h_at
    rim_geom, h_rim = rims[0], rims[1] / opts.refine
    shapely.prepare(rim_geom)

    def h_at_rim(x: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        lo, hi = h_at(x, y)
        near = h_rim + RIM_GRADING * shapely.distance(shapely.points(x, y), rim_geom)
        return np.minimum(lo, near), np.minimum(hi, near)

    return MeshSpec(h_edge, h_far, 0.35), h_at_rim


def _touched_layer(stack: Stack) -> str:
    """The copper layer nearest the finger (the stack is built with the touched face up)."""
    return max(stack.copper_z_m, key=lambda name: stack.copper_z_m[name])


def estimate_conductor_panels(conductors: list[Conductor], stack: Stack, zone: BaseGeometry, opts: SolverOptions, overlay: Overlay,
                              rims: tuple[BaseGeometry, float] | None = None) -> float:
    """About how many panels :func:`mesh_conductors` makes (:func:`estimate_panels`), without meshing."""
    spec, h_plain = _mesh_sizes(zone, opts, overlay)
    h_touched = _mesh_sizes(zone, opts, overlay, rims)[1]
    top = _touched_layer(stack) if stack.copper_z_m else None
    return float(sum(
        estimate_panels(g, spec, h_max_at=h_touched if layer == top else h_plain, band_zone=zone, banded=opts.edge_band)
        for c in conductors
        for layer, g in c.copper.items()
        if layer in stack.copper_z_m
    ))


def mesh_conductors(
    conductors: list[Conductor], stack: Stack, zone: BaseGeometry, opts: SolverOptions, overlay: Overlay, notes: list[str],
    rims: tuple[BaseGeometry, float] | None = None,
) -> Panels:
    spec, h_plain = _mesh_sizes(zone, opts, overlay)
    h_touched = _mesh_sizes(zone, opts, overlay, rims)[1]
    top = _touched_layer(stack) if stack.copper_z_m else None
    parts = []
    conds = []
    for k, c in enumerate(conductors):
        for layer, g in c.copper.items():
            if layer not in stack.copper_z_m:
                notes.append(f"copper layer {layer} is not in the stackup: left out")
                continue
            h_at = h_touched if layer == top else h_plain
            v = flat_panels(g, stack.copper_z_m[layer] / MM, spec, scale=1.0, h_max_at=h_at, band_zone=zone, banded=opts.edge_band)
            v = v * MM
            parts.append(v)
            conds.append(np.full(len(v), k))
    if not parts:
        raise InputError(None, None, "no copper to solve in the sensor's window", "electrode copper on a stackup layer")
    return Panels(np.concatenate(parts), np.concatenate(conds))


#: finger meshes at the origin, per process: a finger moved sideways is the same mesh moved






# --------------------------------------------------------------------------------------------
# one sensor






def _roles_of(sensor: Sensor, conductors: list[Conductor]) -> tuple[Literal["mutual", "self"], dict[str, list[int]]]:
    idx = {c.name: i for i, c in enumerate(conductors)}
    tx = [idx[e.net] for e in sensor.electrodes_with("transmitter") if e.net in idx]
    rx = [idx[e.net] for e in sensor.electrodes_with("receiver") if e.net in idx]
    shield = [i for i, c in enumerate(conductors) if c.kind == "shield"]
    if tx and rx:
        return "mutual", {"tx": sorted(set(tx)), "rx": sorted(set(rx))}
    el = [idx[n] for n in sensor.nets if n in idx]
    if not el:
        raise InputError(None, None, f"sensor {sensor.name}: none of its nets has copper in the window", "electrode copper")
    return "self", {"electrode": el, "shield": shield}


def build_model(
    design: Design, sensor: Sensor, *, opts: SolverOptions | None = None, limits: Limits = DEFAULT_LIMITS
) -> SensorModel:
    """Window, conductors, mesh and the factorised board block of one sensor."""
    cfg = design.config
    opts = opts or SolverOptions.from_config(cfg.estimate, cfg.file)
    overlay = cfg.overlay
    if overlay is None or not overlay.layers:
        raise ConfigError(cfg.file, "overlay", "the field-solver estimate needs the overlay stack ([[overlay.layers]])")
    finger = cfg.finger or FINGER_DEFAULTS
    try:
        validate_finger(finger)
    except ValueError as exc:
        raise ConfigError(cfg.file, "finger", str(exc)) from None
    if sensor.face is not None and sensor.face != overlay.face:  # a sensor touched from the other face ([[sensors]] face)
        overlay = replace(overlay, face=sensor.face)
    stack = build_stack(design, overlay)
    notes = list(stack.notes)
    outline = sensor.outline
    if outline.is_empty:
        raise InputError(design.board.source, None, f"sensor {sensor.name} has no electrode copper", "electrode copper")
    x0, y0, x1, y1 = outline.bounds
    zone = outline.buffer(2.0)
    # over the panel budget: a smaller window first, then coarser interiors, then coarser edges
    h_near = _h_near_mm(opts, overlay)
    steps = [
        ("window", replace(opts)),
        ("window", replace(opts, window_mm=opts.window_mm * 0.6)),
        ("interior", replace(opts, window_mm=opts.window_mm * 0.6, h_near_mm=h_near * 1.6, h_far_mm=opts.h_far_mm * 1.6)),
        ("edges", replace(opts, window_mm=opts.window_mm * 0.4, h_near_mm=h_near * 2.0, h_far_mm=opts.h_far_mm * 2.0, edge_band=False)),
    ]
    # last: the same mesh sizes with the grounded copper's unresolved detail removed (physics/coarsen.py)
    steps.append(("detail", steps[-1][1]))
    # each step's panels are estimated first (mesh.estimate_panels, cheap): a step whose estimate
    # is over ESTIMATE_FACTORS[1] x the limit is surely over the limit and is not meshed, so a huge
    # sensor is refused before any meshing; the others are meshed and counted exactly
    last_count = ("no", "")
    for attempt, (what, cur) in enumerate(steps):
        w = cur.window_mm
        window = box(x0 - w, y0 - w, x1 + w, y1 + w)
        trial_notes = list(notes)
        conductors = gather_conductors(design, sensor, window, trial_notes)
        if what == "detail":
            from sensorcheck.physics.coarsen import coarsen_ground

            conductors, detail_note = coarsen_ground(conductors, cur.h_edge_mm / cur.refine)
            trial_notes.append(detail_note)
        rims = press_rims(sensor, finger, overlay, cur)
        guess = estimate_conductor_panels(conductors, stack, zone, cur, overlay, rims)
        if guess > ESTIMATE_FACTORS[1] * limits.max_mesh_panels:
            last_count = f"about {guess:.0f}", ", estimated before meshing"
            continue
        panels = mesh_conductors(conductors, stack, zone, cur, overlay, trial_notes, rims)
        last_count = str(len(panels)), ""
        if len(panels) <= limits.max_mesh_panels:
            notes = trial_notes
            if attempt:
                notes.append(
                    f"mesh reduced to stay within {limits.max_mesh_panels} panels (window {w:g} mm"
                    + (", coarser interior panels" if what != "window" else "")
                    + (", no thin edge rows" if what in ("edges", "detail") else "")
                    + "): lower accuracy"
                )
            break
    else:
        raise LimitError(
            design.board.source,
            None,
            f"sensor {sensor.name}: {last_count[0]} boundary-element panels even after coarsening "
            f"(limit {limits.max_mesh_panels}){last_count[1]}",
            "a smaller sensor or a higher [limits] max_mesh_panels",
        )
    kind, main = _roles_of(sensor, conductors)
    system = BoardSystem(panels, stack.medium, len(conductors))
    notes.append(f"window {w:g} mm around the sensor; {len(panels)} board panels")
    notes = list(dict.fromkeys(notes))
    return SensorModel(design, sensor, overlay, finger, stack, conductors, system, cur, notes, kind, main)


def _candidates(sensor: Sensor, model: SensorModel) -> list[tuple[float, float]]:
    outline = sensor.outline
    c = outline.centroid
    pts = [(c.x, c.y)]
    if model.kind == "mutual":
        rx = shapely.union_all([e.geometry for e in sensor.electrodes_with("receiver")])
        r = rx.centroid
        pts.append((r.x, r.y))
    x0, y0, x1, y1 = outline.bounds
    dx, dy = (x1 - x0) / 4.0, (y1 - y0) / 4.0
    for ox, oy in ((dx, 0.0), (-dx, 0.0), (0.0, dy), (0.0, -dy)):
        pts.append((c.x + ox, c.y + oy))
    grown = outline.buffer(1.0)
    out: list[tuple[float, float]] = []
    for p in pts:
        if grown.contains(shapely.Point(p)) and all(np.hypot(p[0] - q[0], p[1] - q[1]) > 0.3 for q in out):
            out.append((float(p[0]), float(p[1])))
    return out or [(c.x, c.y)]




def _hand_range(model: SensorModel, x: float, y: float, base_f: float) -> float | None:
    """Largest height (mm) where a hand-sized plate changes the self capacitance by the floor."""
    opts = model.opts
    hand = replace(model.finger, contact_diameter_mm=opts.hand_diameter_mm, length_mm=10.0)
    heights = np.geomspace(opts.hand_max_height_mm, 1.0, 10)
    k = len(model.conductors)
    last_ok: float | None = None
    prev_h: float | None = None
    prev_d = 0.0
    for h in heights:
        z_b = model.stack.surface_m + h * MM
        body_opts = replace(opts, finger_edge_mm=2.0, finger_max_mm=10.0, finger_sides=32)
        body = finger_panels(hand, x, y, z_b, body_opts)
        z_lo = model.stack.surface_m + 1.0 * MM
        z_hi = model.stack.surface_m + (opts.hand_max_height_mm + 12.0) * MM
        c = model.system.with_body(body, (z_lo, z_hi))
        d = abs(model.value_f(c, k) - base_f) / PF
        if d >= opts.proximity_floor_pf:
            if prev_h is None:
                return float(h)
            # log-linear interpolation between the last miss and this hit
            t = (np.log(opts.proximity_floor_pf) - np.log(max(prev_d, 1e-12))) / (np.log(d) - np.log(max(prev_d, 1e-12)))
            last_ok = float(np.exp(np.log(prev_h) + t * (np.log(h) - np.log(prev_h))))
            return last_ok
        prev_h, prev_d = float(h), d
    return None


def estimate_sensor(design: Design, sensor: Sensor, *, heights: int = 12, max_height_mm: float = 20.0) -> SensorEstimate:
    """Baseline, touch signal, approach curve and neighbours' crosstalk of one sensor."""
    opts = SolverOptions.from_config(design.config.estimate, design.config.file)
    limits = getattr(design.config, "limits", None) or DEFAULT_LIMITS
    return estimate_with(design, sensor, opts=opts, heights=heights, max_height_mm=max_height_mm, limits=limits)


def estimate_with(
    design: Design,
    sensor: Sensor,
    *,
    opts: SolverOptions,
    heights: int = 12,
    max_height_mm: float = 20.0,
    limits: Limits = DEFAULT_LIMITS,
) -> SensorEstimate:
    model = build_model(design, sensor, opts=opts, limits=limits)
    if sensor.kind == "matrix" and model.kind == "mutual":
        from sensorcheck.physics.scan import estimate_matrix

        return estimate_matrix(model, heights=heights, max_height_mm=max_height_mm)
    k = len(model.conductors)
    base_f = model.value_f(model.system.c0, None)
    if base_f <= 0:
        raise InputError(design.board.source, None, f"sensor {sensor.name}: no coupling between its electrodes in the model", "TX and RX copper near each other")
    # the most sensitive point: a coarse finger at touch over a few candidate points
    cands = _candidates(sensor, model)
    search: list[tuple[float, float, float]] = []
    if opts.search and len(cands) > 1:
        for x, y in cands:
            c = model.with_finger(x, y, 0.0, coarse=True, max_h_mm=max_height_mm)
            search.append((x, y, (model.value_f(c, k) - base_f) / PF))
        bx, by, _ = max(search, key=lambda t: abs(t[2]))
    else:
        bx, by = cands[0]
    base_pf = base_f / PF
    hs = approach_heights(heights, max_height_mm)
    mats: dict[float, np.ndarray] = {}
    curve, n_solved = approach_curve(model, bx, by, hs, base_pf, max_height_mm, mats)
    c_touch = mats[hs[-1]]
    touch_pf = curve[-1][1]
    delta = touch_pf - base_pf
    turns = turnarounds(curve, base_pf)
    # the turnaround is worst where the finger couples straight into the receiver: also approach
    # over the node's centre (where a user presses) when that is not the most sensitive point
    centre = sensor.outline.centroid
    curve_c: list[tuple[float, float]] = []
    extra_notes: list[str] = []
    if np.hypot(centre.x - bx, centre.y - by) > 1.0:
        curve_c, n_c = approach_curve(model, centre.x, centre.y, hs, base_pf, max_height_mm, {})
        n_solved += n_c
        turns_c = turnarounds(curve_c, base_pf, over="centre")
        if turns_c and (not turns or turns_c[0].height_mm > turns[0].height_mm):
            extra_notes.append(centre_note((centre.x, centre.y), (bx, by), bool(turns)))
        turns = sorted(turns + turns_c, key=lambda t: -t.height_mm)
    tp = turns[0].height_mm if turns else None
    cross: dict[str, float] = {}
    for name, which in _neighbour_channels(model).items():
        b = model.value_f(model.system.c0, None, which)
        t = model.value_f(c_touch, k, which)
        cross[name] = (t - b) / PF
    channels: dict[str, tuple[float, float]] = {}
    if model.kind == "self" and len(model.main["electrode"]) > 1:
        for i in model.main["electrode"]:
            w = {"electrode": [i], "shield": model.main.get("shield", [])}
            b = model.value_f(model.system.c0, None, w)
            t = model.value_f(c_touch, k, w)
            channels[model.conductors[i].name] = (b / PF, (t - b) / PF)
    notes = list(model.notes) + extra_notes
    n_curve = len(hs) * (2 if curve_c else 1)
    if n_solved < n_curve:
        notes.append(solved_note(n_solved, n_curve))
    if model.kind == "self" and model.main.get("shield"):
        notes.append("shield net driven at the electrode's potential")
    if sensor.kind == "matrix":
        notes.append("matrix without TX and RX lines: all its lines driven together (a whole-panel figure)")
    detection = None
    if sensor.kind == "proximity" and model.kind == "self":
        detection = _hand_range(model, bx, by, base_f)
        notes.append(
            f"proximity range: {model.opts.hand_diameter_mm:g} mm hand-sized plate, signal floor {model.opts.proximity_floor_pf * 1000:g} fF (assumed)"
        )
        if detection is not None and detection >= model.opts.hand_max_height_mm:
            notes.append(f"proximity range is at least {model.opts.hand_max_height_mm:g} mm (the search stops there)")
    est = SensorEstimate(
        sensor=sensor.name,
        kind=model.kind,
        model=describe(model),
        baseline_pf=base_pf,
        touch_delta_pf=delta,
        percent_change=100.0 * delta / base_pf,
        turning_point_mm=tp,
        turnarounds=turns,
        curve=curve,
        best_point_mm=(bx, by),
        crosstalk_pf=cross,
        parasitic_pf=base_pf if model.kind == "self" else None,
        panels=len(model.system.panels),
        notes=notes,
        channels=channels,
        detection_range_mm=detection,
        search=search,
        curve_centre=curve_c,
        centre_mm=(float(centre.x), float(centre.y)) if curve_c else None,
    )
    from sensorcheck.physics.effects import copper_groups, window_box

    est.copper = copper_groups(model)  # what each net's copper nearby can do to the signal (a bound)
    est.window_box_mm = window_box(model)
    if sensor.kind in ("slider", "wheel") and model.kind == "self" and len(model.main["electrode"]) > 1:
        from sensorcheck.physics.segments import add_segments

        add_segments(model, est, max_height_mm=max_height_mm)
    return est


# --------------------------------------------------------------------------------------------
# many sensors, sweeps


#: messages of sensors whose estimate failed through a bug of ours (not through their input) start with this
INTERNAL_PREFIX = "internal error: "


def _one(args: tuple[Design, str, int, float]) -> tuple[str, SensorEstimate | str]:
    from threadpoolctl import threadpool_limits

    design, name, heights, max_h = args
    sensor = next(s for s in design.sensors if s.name == name)
    try:
        # one BLAS thread wherever this runs (the parent, a pool worker, a cluster worker): the
        # single-precision LU (physics/operator.py) rounds differently with the thread count, and
        # an estimate must not depend on where or beside how many workers it was made
        with threadpool_limits(limits=1, user_api="blas"):
            return name, estimate_sensor(design, sensor, heights=heights, max_height_mm=max_h)
    except (InputError, ConfigError) as exc:
        return name, exc.describe()
    except Exception as exc:  # noqa: BLE001 - one sensor's bug must not lose the other sensors' estimates
        return name, f"{INTERNAL_PREFIX}{type(exc).__name__}: {exc}"


def with_overlay(design: Design, param: Literal["overlay_thickness_mm", "overlay_epsilon_r"], value: float) -> Design:
    """A copy of the design with the overlay's main layer (the first of kind "overlay") changed."""
    ov = design.config.overlay
    if ov is None or not ov.layers:
        raise ConfigError(design.config.file, "overlay", "a sweep needs the overlay stack")
    layers = list(ov.layers)
    i = next((k for k, layer in enumerate(layers) if layer.kind == "overlay"), 0)
    if param == "overlay_thickness_mm":
        layers[i] = replace(layers[i], thickness_mm=float(value))
    elif param == "overlay_epsilon_r":
        layers[i] = replace(layers[i], epsilon_r=float(value), epsilon_source="sweep")
    else:
        raise ValueError(f"unknown sweep parameter {param!r}")
    cfg = copy.copy(design.config)
    cfg.overlay = Overlay(tuple(layers), ov.face)
    d = copy.copy(design)
    d.config = cfg
    return d


def sweep(
    design: Design,
    sensor: Sensor,
    param: Literal["overlay_thickness_mm", "overlay_epsilon_r"],
    values: list[float],
    *,
    heights: int = 6,
    executor: Executor | None = None,
) -> list[SensorEstimate]:
    """How a sensor's numbers change with the overlay's thickness or permittivity (on ``executor`` when given)."""
    designs = [with_overlay(design, param, v) for v in values]
    if executor is None:
        return [estimate_sensor(d, sensor, heights=heights) for d in designs]
    from sensorcheck.cluster import map_ordered

    return map_ordered(executor, estimate_sensor, [((d, sensor), {"heights": heights}) for d in designs])


__all__ = [
    "SolverOptions",
    "build_stack",
    "build_model",
    "estimate_sensor",
    "estimate_with",
    "sweep",
    "with_overlay",
    "approach_heights",
    "OverlayLayer",
]
