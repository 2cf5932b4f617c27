"""Window fingerprints: sensors whose solve windows hold the same thing are solved once.

A sensor's estimate depends only on what lies in its solve window (the box around its electrodes
grown by ``window_mm``): the copper of every net on every layer there, as conductors of a kind
(the sensor's own nets, a neighbour sensor's nets, the shield, everything else held at ground),
the stackup and overlay, the finger and the solver options.  Two sensors whose windows hold the
same copper *up to a translation* get the same numbers (the mesher grades from each polygon's own
bounds and from the sensor's zone, both of which move with it; the field solver sees only
relative positions), so the second one is the first one's estimate, moved and renamed:
:func:`translated`.

The fingerprint (:func:`window_key`) is a SHA-256 over

* the design-wide context: the layered medium, the copper heights, overlay, finger, solver options,
  approach heights and the panel limit;
* the sensor's kind and its electrode outline;
* one entry per conductor, sorted: its kind, the roles its nets play in their sensor, and its
  copper per layer, moved so that the window's centre is the origin and snapped to
  :data:`GRID_MM` (a micrometre, below the 2 um the solver already simplifies copper by), in
  GEOS's normal form (rings in a fixed orientation and starting vertex);
* which conductors belong to the same neighbour sensor (crosstalk is reported per sensor).

Net names are not in it: a key and its twin have different names and the same physics.  Two
windows that differ by less than the grid may share an estimate; two that are the same but are
snapped differently (a vertex on a rounding boundary) are simply solved twice: the fingerprint
can miss a twin, never invent one.  Mirror and rotation symmetries are not looked for.
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING

import shapely
from shapely.geometry import box

from sensorcheck.physics.model import CENTRE_NOTE_PREFIX, centre_note

if TYPE_CHECKING:
    from sensorcheck.design.model import Design, Sensor
    from sensorcheck.physics.estimate import SensorEstimate
    from sensorcheck.physics.model import Conductor

#: copper is snapped to this grid (mm) before it is compared
GRID_MM = 1e-3
#: the note estimate_with writes when the turnaround came from the approach over the node centre


@dataclass(frozen=True, slots=True)
class WindowKey:
    """A sensor's window fingerprint and what is needed to move an estimate onto a twin."""

    digest: str
    centre_mm: tuple[float, float]  # centre of the window (of the electrode outline's bounds)
    names: tuple[str, ...]  # conductor names in fingerprint order
    sensors: tuple[str | None, ...]  # the sensor each conductor belongs to, same order
    notes: tuple[str, ...]  # what gathering the window's conductors noted (names differ between twins)


def _geom_bytes(g: object, cx: float, cy: float) -> bytes:
    moved = shapely.transform(g, lambda xy: xy - (cx, cy))
    snapped = shapely.set_precision(moved, GRID_MM)
    return shapely.to_wkb(shapely.normalize(snapped), output_dimension=2)


def _net_roles(design: "Design") -> dict[str, tuple[str, str]]:
    """net -> (role of its electrodes in its sensor, that sensor's kind), for every sensor net."""
    out: dict[str, tuple[str, str]] = {}
    for s in design.sensors:
        for e in s.electrodes:
            role, kind = out.get(e.net, ("", s.kind))
            if e.role not in role.split("+"):
                role = "+".join(sorted(filter(None, [*role.split("+"), e.role])))
            out[e.net] = (role, kind)
    return out


def context_digest(parts: list[object]) -> str:
    """The design-wide part of every fingerprint of one run (medium, overlay, finger, options...)."""
    return hashlib.sha256(repr(parts).encode()).hexdigest()


def window_key(design: "Design", sensor: "Sensor", window_mm: float, context: str,
               net_roles: dict[str, tuple[str, str]] | None = None) -> WindowKey:
    """The fingerprint of ``sensor``'s solve window of ``window_mm`` (see the module docstring)."""
    from sensorcheck.physics.sensors import gather_conductors

    outline = sensor.outline
    x0, y0, x1, y1 = outline.bounds
    cx, cy = (x0 + x1) / 2.0, (y0 + y1) / 2.0
    notes: list[str] = []
    conductors: list[Conductor] = gather_conductors(design, sensor, box(x0 - window_mm, y0 - window_mm,
                                                                        x1 + window_mm, y1 + window_mm), notes)
    roles = net_roles if net_roles is not None else _net_roles(design)
    entries: list[tuple[bytes, int]] = []
    for i, c in enumerate(conductors):
        role, kind = roles.get(c.name, ("", ""))
        h = hashlib.sha256(f"{c.kind}|{role}|{kind if c.kind == 'neighbour' else ''}".encode())
        for layer in sorted(c.copper):
            h.update(layer.encode() + b"\0" + _geom_bytes(c.copper[layer], cx, cy))
        entries.append((h.digest(), i))
    entries.sort()
    order = [i for _, i in entries]
    pos = {conductors[i].name: k for k, i in enumerate(order)}
    groups: dict[str, list[int]] = {}
    for c in conductors:
        if c.kind == "neighbour" and c.sensor is not None:
            groups.setdefault(c.sensor, []).append(pos[c.name])
    total = hashlib.sha256(context.encode())
    total.update(f"{sensor.kind}|".encode() + _geom_bytes(outline, cx, cy))
    for d, _ in entries:
        total.update(d)
    total.update(repr(sorted(sorted(g) for g in groups.values())).encode())
    return WindowKey(total.hexdigest(), (cx, cy), tuple(conductors[i].name for i in order),
                     tuple(conductors[i].sensor for i in order), tuple(notes))




def translated(est: "SensorEstimate", src: WindowKey, dst: WindowKey, dst_name: str,
               stack_notes: int, src_notes: tuple[str, ...], dst_notes: tuple[str, ...]) -> "SensorEstimate":
    """``est`` (of the sensor with key ``src``) as the estimate of its twin ``dst_name`` (key ``dst``).

    Points move by the offset between the windows; crosstalk and channels take the names of the
    twin's conductors at the same place.  Notes: the first ``stack_notes`` (the stackup's) stay,
    the window notes ``src_notes`` give way to the twin's ``dst_notes``, the turning-point note is
    written again with the twin's coordinates.
    """
    if src.digest != dst.digest:
        raise ValueError("not twins")
    dx, dy = dst.centre_mm[0] - src.centre_mm[0], dst.centre_mm[1] - src.centre_mm[1]
    name_map = dict(zip(src.names, dst.names))
    sensor_map = {a: b for a, b in zip(src.sensors, dst.sensors) if a is not None}

    def mv(p: tuple[float, float] | None) -> tuple[float, float] | None:
        return None if p is None else (p[0] + dx, p[1] + dy)

    best = mv(est.best_point_mm)
    centre = mv(est.centre_mm)
    notes = list(est.notes[:stack_notes]) + list(dst_notes)
    dropped = set(src_notes)
    for n in est.notes[stack_notes:]:
        if n in dropped:
            continue
        if n.startswith(CENTRE_NOTE_PREFIX) and centre is not None and best is not None:
            n = centre_note(centre, best, n.endswith("turns lower"))
        notes.append(n)
    return replace(
        est,
        sensor=dst_name,
        best_point_mm=best,
        centre_mm=centre,
        search=[(x + dx, y + dy, v) for x, y, v in est.search],
        crosstalk_pf={sensor_map.get(k, k): v for k, v in est.crosstalk_pf.items()},
        channels={name_map.get(k, k): v for k, v in est.channels.items()},
        notes=list(dict.fromkeys(notes)),
        curve=list(est.curve),
        curve_centre=list(est.curve_centre),
        # the copper moves with the window; its nets are found again from the twin's board by point
        copper=[replace(g, point_mm=(g.point_mm[0] + dx, g.point_mm[1] + dy)) for g in est.copper],
        window_box_mm=None if est.window_box_mm is None else (
            est.window_box_mm[0] + dx, est.window_box_mm[1] + dy, est.window_box_mm[2] + dx, est.window_box_mm[3] + dy),
    )
