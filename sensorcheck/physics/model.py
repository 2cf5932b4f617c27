"""The pieces of a sensor's field-solver model that every estimator shares: the solver options,
the layered stack, the conductors of a solve window, the finger's mesh, and the solved model
itself (:class:`SensorModel`), with the approach heights and the neighbours' channels.

:mod:`sensorcheck.physics.sensors` builds these models and estimates one sensor from them; the
matrix scan (:mod:`~sensorcheck.physics.scan`), the per-segment estimate
(:mod:`~sensorcheck.physics.segments`) and the coarsening step (:mod:`~sensorcheck.physics.coarsen`)
read them from here, so that no physics module imports another round a loop.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np
from shapely.geometry.base import BaseGeometry

from sensorcheck.design.model import Design, Finger, Overlay, Sensor
from sensorcheck.design.config import range_text
from sensorcheck.errors import ConfigError
from sensorcheck.finger import LOWEST_APPROACH_MM
from sensorcheck.physics.bem import BoardSystem, Panels
from sensorcheck.physics.finger import PF, mutual_f, self_f
from sensorcheck.physics.greens import LayeredMedium
from sensorcheck.physics.mesh import cylinder_panels

MM = 1e-3

@dataclass(frozen=True, slots=True)
class SolverOptions:
    """Mesh and model options (mm); ``refine`` divides every panel size (the bench uses 4)."""

    window_mm: float = 15.0
    h_edge_mm: float = 0.8  # width of the edge band (rows at 0.08 and 0.3 of it) and panel length along edges
    h_near_mm: float | None = None  # None: 1.2 x the overlay thickness, within 0.8-2.0 mm
    h_far_mm: float = 3.0
    finger_edge_mm: float = 0.7
    finger_max_mm: float = 3.0
    finger_sides: int = 20
    finger_rim_band: bool = True  # thin rows of panels along the finger's bottom rim (mesh.cylinder_panels)
    touch_gap_mm: float = 0.02  # the finger "on" the overlay: this thin film of air
    refine: float = 1.0
    edge_band: bool = True  # thin rows of panels along edges near the sensor (off: plain graded quadtree)
    search: bool = True
    proximity_floor_pf: float = 0.01  # assumption: a resolvable change of 10 fF; a parameter
    hand_diameter_mm: float = 80.0  # hand-sized target for proximity range (stated model choice)
    hand_max_height_mm: float = 200.0
    adaptive_heights: bool = True  # solve the approach heights where the curve bends (physics/approach.py)

    @classmethod
    def from_config(cls, options: dict[str, Any], file: str | None = None) -> "SolverOptions":
        """The options of a config's ``estimate`` table (other keys ignored); an option outside its
        physical range (:data:`SOLVER_RANGES`) is a ConfigError naming ``estimate.<option>``."""
        known = {f for f in cls.__dataclass_fields__}
        for k in sorted(known & set(options)):
            problem = _out_of_range(k, options[k])
            if problem:
                raise ConfigError(file, f"estimate.{k}", problem)
        return cls(**{k: v for k, v in options.items() if k in known})

    def __post_init__(self) -> None:
        for k in SOLVER_RANGES:
            problem = _out_of_range(k, getattr(self, k))
            if problem:
                raise ValueError(f"solver option {k}: {problem}")


#: physical range of every numeric solver option: (lowest, lowest excluded, highest).  Sizes and
#: distances are positive; the touch gap (the air film of a finger resting on the overlay) is at
#: most the lowest approach height, or the touch would be farther than the curve's last height;
#: the hand-sized target's search starts above its lowest height of 1 mm.
SOLVER_RANGES: dict[str, tuple[float, bool, float]] = {
    "window_mm": (0.0, True, 1000.0),
    "h_edge_mm": (0.0, True, 100.0),
    "h_near_mm": (0.0, True, 100.0),  # None (the default) picks it from the overlay
    "h_far_mm": (0.0, True, 100.0),
    "finger_edge_mm": (0.0, True, 100.0),
    "finger_max_mm": (0.0, True, 100.0),
    "finger_sides": (3.0, False, 1000.0),
    "touch_gap_mm": (0.0, True, LOWEST_APPROACH_MM),
    "refine": (0.0, True, 100.0),
    "proximity_floor_pf": (0.0, True, 1e6),
    "hand_diameter_mm": (0.0, True, 1000.0),
    "hand_max_height_mm": (1.0, True, 10000.0),
}


def _out_of_range(key: str, value: Any) -> str | None:
    """Why ``value`` is no physical value of solver option ``key`` (None when it is, or not numeric)."""
    if key not in SOLVER_RANGES or value is None:
        return None
    low, low_open, high = SOLVER_RANGES[key]
    if isinstance(value, bool) or not isinstance(value, int | float):
        return f"expected a number, got {type(value).__name__}"
    if not (math.isfinite(value) and (value > low if low_open else value >= low) and value <= high):
        return f"must be {range_text(low, low_open, high)}, got {value:g}"
    return None

@dataclass(slots=True)
class Stack:
    medium: LayeredMedium
    copper_z_m: dict[str, float]  # our layer name -> z (m), touched face up
    surface_m: float  # top of the overlay
    notes: list[str]

@dataclass(slots=True)
class Conductor:
    name: str
    kind: Literal["sensor", "neighbour", "ground", "shield"]
    copper: dict[str, BaseGeometry]  # layer -> geometry (mm)
    sensor: str | None = None
    role: str | None = None

_FINGER_MESHES: dict[tuple[object, ...], Panels] = {}

def finger_panels(finger: Finger, x_mm: float, y_mm: float, z_bottom_m: float, opts: SolverOptions, coarse: bool = False) -> Panels:
    """The finger's panels standing at (x, y); the one at the origin is made once per process
    (every finger position asks for it: the body's own block is keyed by it), so treat it as read-only."""
    key = (repr(finger), repr(opts), coarse, z_bottom_m)
    at_origin = _FINGER_MESHES.get(key)
    if at_origin is None:
        if len(_FINGER_MESHES) > 200:
            _FINGER_MESHES.clear()
        v = _finger_mesh(finger, z_bottom_m, opts, coarse)
        at_origin = _FINGER_MESHES[key] = Panels(v, np.zeros(len(v), dtype=int))
    if x_mm == 0.0 and y_mm == 0.0:
        return at_origin
    return Panels(at_origin.verts + np.array([x_mm * MM, y_mm * MM, 0.0]), np.zeros(len(at_origin), dtype=int))

def _finger_mesh(finger: Finger, z_bottom_m: float, opts: SolverOptions, coarse: bool) -> np.ndarray:
    """The finger's cylinder standing at x = y = 0 (metres)."""
    f = 2.0 if coarse else 1.0
    sides = max(12, int(round(opts.finger_sides * (opts.refine if not coarse else 0.67))))
    # the cylinder is a prism of ``sides`` faces: its corners on a circle of the radius that gives
    # the prism the contact's cross-section area (an inscribed polygon of 20 sides has 1.6 % less,
    # and over an electrode the touch delta follows the contact area)
    equal_area = float(np.sqrt(2.0 * np.pi / (sides * np.sin(2.0 * np.pi / sides))))
    v = cylinder_panels(
        0.0,
        0.0,
        z_bottom_m,
        finger.contact_diameter_mm / 2.0 * MM * equal_area,
        finger.length_mm * MM,
        h_edge=opts.finger_edge_mm * f / opts.refine * MM,
        h_max=opts.finger_max_mm * f / opts.refine * MM,
        n_theta=sides,
        rim_band=opts.finger_edge_mm * f / opts.refine * MM if opts.finger_rim_band else None,
    )
    return v

@dataclass(slots=True)
class SensorModel:
    """A sensor's solved board block, ready for finger positions."""

    design: Design
    sensor: Sensor
    overlay: Overlay
    finger: Finger
    stack: Stack
    conductors: list[Conductor]
    system: BoardSystem
    opts: SolverOptions
    notes: list[str]
    kind: Literal["mutual", "self"]
    main: dict[str, list[int]]  # "tx"/"rx" or "electrode"; plus "shield"

    @property
    def body_f(self) -> float:
        return self.finger.body_capacitance_pf * PF

    @property
    def device_f(self) -> float | None:
        d = self.finger.device_ground_coupling_pf
        return None if d is None else d * PF

    def value_f(self, c: np.ndarray, floating: int | None, which: dict[str, list[int]] | None = None) -> float:
        w = which or self.main
        if "tx" in w:
            return mutual_f(c, w["tx"], w["rx"], floating=floating, body_f=self.body_f, device_f=self.device_f)
        return self_f(c, w["electrode"], shield=w.get("shield"), floating=floating, body_f=self.body_f, device_f=self.device_f)

    def with_finger(self, x_mm: float, y_mm: float, h_mm: float, coarse: bool = False, max_h_mm: float = 20.0) -> np.ndarray:
        z_b = self.stack.surface_m + max(h_mm, self.opts.touch_gap_mm) * MM
        body = finger_panels(self.finger, x_mm, y_mm, z_b, self.opts, coarse)
        z_lo = self.stack.surface_m + self.opts.touch_gap_mm * MM
        z_hi = self.stack.surface_m + (max(max_h_mm, h_mm) + self.finger.length_mm + 1.0) * MM
        return self.system.with_body(body, (z_lo, z_hi), self_key=("finger", repr(self.finger), repr(self.opts), coarse, z_b),
                                     body_at_origin=finger_panels(self.finger, 0.0, 0.0, z_b, self.opts, coarse))

def describe(model: SensorModel) -> str:
    """The one-line model summary every estimate of this model carries."""
    f = model.finger
    ground = "earthed device" if f.device_ground_coupling_pf is None else f"device ground {f.device_ground_coupling_pf:g} pF to earth"
    return (
        f"3-D boundary elements (collocation, layered-media images); finger {f.contact_diameter_mm:g} mm x "
        f"{f.length_mm:g} mm cylinder, body {f.body_capacitance_pf:g} pF, {ground}; overlay {model.overlay.thickness_mm:g} mm"
    )

def approach_heights(n: int, max_height_mm: float) -> list[float]:
    """Far to near: geometric from max_height_mm down to LOWEST_APPROACH_MM (0.25 mm), then 0 (touching)."""
    if n < 2:
        raise ValueError("need at least 2 heights")
    if max_height_mm <= LOWEST_APPROACH_MM:
        raise ValueError(f"max height must exceed {LOWEST_APPROACH_MM:g} mm")
    far = np.geomspace(max_height_mm, LOWEST_APPROACH_MM, n - 1)
    return [float(h) for h in far] + [0.0]

def approach_curve(model: SensorModel, x: float, y: float, hs: list[float], base_pf: float, max_h_mm: float,
                   mats: dict[float, np.ndarray], which: dict[str, list[int]] | None = None) -> tuple[list[tuple[float, float]], int]:
    """The approach curve over (x, y) at the heights ``hs`` of the channel ``which`` (default: the
    sensor's own): every height solved, or (the default, ``SolverOptions.adaptive_heights``) those
    :func:`sensorcheck.physics.approach.adaptive_curve` picks.  Returns the curve (pF) and the number
    of heights solved; ``mats`` receives the solved Maxwell matrices (the touch is always solved)."""
    from sensorcheck.physics.approach import adaptive_curve

    k = len(model.conductors)

    def at(h: float) -> float:
        c = mats[h] = model.with_finger(x, y, h, max_h_mm=max_h_mm)
        return model.value_f(c, k, which) / PF

    if not model.opts.adaptive_heights:
        return [(h, at(h)) for h in hs], len(hs)
    curve, solved = adaptive_curve(at, hs, base_pf)
    return curve, sum(solved)


def _neighbour_channels(model: SensorModel) -> dict[str, dict[str, list[int]]]:
    out: dict[str, dict[str, list[int]]] = {}
    design = model.design
    by_name = {s.name: s for s in design.sensors}
    idx = {c.name: i for i, c in enumerate(model.conductors)}
    for c in model.conductors:
        if c.kind != "neighbour" or c.sensor is None or c.sensor in out or c.sensor not in by_name:
            continue
        s = by_name[c.sensor]
        tx = [idx[e.net] for e in s.electrodes_with("transmitter") if e.net in idx]
        rx = [idx[e.net] for e in s.electrodes_with("receiver") if e.net in idx]
        if tx and rx:
            out[s.name] = {"tx": tx, "rx": rx}
        else:
            el = [idx[n] for n in s.nets if n in idx]
            if el:
                out[s.name] = {"electrode": el, "shield": model.main.get("shield", [])}
    return out


#: how the note of an estimate whose turn was found over the node centre starts
CENTRE_NOTE_PREFIX = "turning point from the approach over the node centre"


def centre_note(centre: tuple[float, float], best: tuple[float, float], turns_lower: bool) -> str:
    """The note of a turning point found over the node centre rather than the most sensitive point."""
    return (f"{CENTRE_NOTE_PREFIX} ({centre[0]:.1f}, {centre[1]:.1f}) mm; over the most sensitive point "
            f"({best[0]:.1f}, {best[1]:.1f}) mm the signal " + ("turns lower" if turns_lower else "does not turn"))
