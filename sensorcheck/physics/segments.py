"""Sliders and wheels per segment: each segment as its own channel, and the position response.

A controller scans a slider one segment (channel) at a time; here the scanned segment is driven,
the other segments are held at ground (the conservative choice: a controller that drives them as
a shield sees less) and a driven shield net follows the scanned segment.  From the sensor's one
solved board block:

* per segment: its baseline (the channel's parasitic capacitance to ground, no finger), its touch
  delta with the finger touching over the segment's centre, and its neighbours' deltas then
  (crosstalk);
* the position response: the finger, touching, is stepped along the travel (through the segment
  centres of a slider; round the circle of the segment centres of a wheel) and the position a
  controller reads is the centroid of the strongest segment and its two neighbours (common
  practice), weighted by their touch deltas; its error in mm, and the dead zones where the
  strongest segment's delta falls below ``DEAD_FLOOR_FRACTION`` of the median segment signal.

Every number is an estimate of this model; slide a finger on the prototype.
"""

from __future__ import annotations

import math

import numpy as np
import shapely

from sensorcheck.physics.estimate import PositionResponse, SegmentEstimate, SensorEstimate
from sensorcheck.physics.finger import PF
from sensorcheck.physics.model import SensorModel

STEPS_PER_PITCH = 3  # finger positions per segment pitch (the segment centres among them)
#: assumption: a touch is detected above half the signal a segment gives with the finger centred on it
DEAD_FLOOR_FRACTION = 0.5


def segment_nets(model: SensorModel) -> list[str]:
    """The modelled segment nets in the sensor's position order (its ``order``, else electrode order)."""
    names = [model.conductors[i].name for i in model.main["electrode"]]
    order = [n for n in model.sensor.order if n in names]
    return order + [n for n in names if n not in order]


def centroid_position(deltas: np.ndarray, positions: np.ndarray, *, cyclic: bool, period: float) -> float | None:
    """Position (mm) read from the segments' touch deltas: the peak segment and its two neighbours.

    Negative deltas count as 0.  ``positions`` are the segment centres along the travel; a wheel
    (``cyclic``) wraps with ``period`` (its circumference) and averages on the circle.
    """
    w = np.maximum(np.asarray(deltas, dtype=float), 0.0)
    n = w.size
    if n == 0 or not np.any(w > 0):
        return None
    k = int(np.argmax(w))
    if cyclic:
        idx = [(k - 1) % n, k, (k + 1) % n]
        ang = 2.0 * math.pi * positions[idx] / period
        zx = float(np.sum(w[idx] * np.cos(ang)))
        zy = float(np.sum(w[idx] * np.sin(ang)))
        return (math.atan2(zy, zx) % (2.0 * math.pi)) * period / (2.0 * math.pi)
    idx = [i for i in (k - 1, k, k + 1) if 0 <= i < n]
    return float(np.sum(w[idx] * positions[idx]) / np.sum(w[idx]))


def dead_zones(positions: list[float], strongest: list[float], floor: float) -> list[tuple[float, float]]:
    """Runs of consecutive finger positions where the strongest delta is below ``floor``: (from, to) mm."""
    out: list[tuple[float, float]] = []
    start: float | None = None
    last = 0.0
    for p, s in zip(positions, strongest):
        if s < floor:
            if start is None:
                start = p
            last = p
        elif start is not None:
            out.append((start, last))
            start = None
    if start is not None:
        out.append((start, last))
    return out


def _path(centres: np.ndarray, cyclic: bool) -> tuple[np.ndarray, np.ndarray, float]:
    """(segment positions mm, finger points (m, 2) mm with their positions in column 2, travel mm)."""
    n = len(centres)
    if cyclic:
        mid = centres.mean(axis=0)
        radius = float(np.mean(np.hypot(*(centres - mid).T)))
        ang = np.arctan2(centres[:, 1] - mid[1], centres[:, 0] - mid[0])
        rel = np.unwrap(ang - ang[0])
        sign = 1.0 if rel[-1] >= 0 else -1.0  # the wheel's direction: that of its segment order
        rel = (sign * (ang - ang[0])) % (2.0 * math.pi)
        period = 2.0 * math.pi * radius
        seg_pos = rel * radius
        m = n * STEPS_PER_PITCH
        t = np.arange(m) * (2.0 * math.pi / m)
        a = ang[0] + sign * t
        pts = np.column_stack([mid[0] + radius * np.cos(a), mid[1] + radius * np.sin(a), t * radius])
        return seg_pos, pts, period
    seglen = np.hypot(*np.diff(centres, axis=0).T)
    seg_pos = np.concatenate([[0.0], np.cumsum(seglen)])
    pts_list: list[tuple[float, float, float]] = []
    for i in range(n - 1):
        for s in range(STEPS_PER_PITCH):
            f = s / STEPS_PER_PITCH
            xy = centres[i] + f * (centres[i + 1] - centres[i])
            pts_list.append((float(xy[0]), float(xy[1]), float(seg_pos[i] + f * seglen[i])))
    pts_list.append((float(centres[-1, 0]), float(centres[-1, 1]), float(seg_pos[-1])))
    return seg_pos, np.array(pts_list), float(seg_pos[-1])


def add_segments(model: SensorModel, est: SensorEstimate, *, max_height_mm: float) -> None:
    """Fill ``est.segments`` and ``est.position``; ``est.parasitic_pf`` becomes the largest channel's."""
    idx = {c.name: i for i, c in enumerate(model.conductors)}
    nets = segment_nets(model)
    if len(nets) < 2:
        return
    k = len(model.conductors)
    shield = model.main.get("shield", [])
    which = [{"electrode": [idx[n]], "shield": shield} for n in nets]
    geoms = {e.net: e.geometry for e in model.sensor.electrodes}
    centres = np.array([[shapely.centroid(geoms[n]).x, shapely.centroid(geoms[n]).y] for n in nets])
    cyclic = model.sensor.kind == "wheel" and len(nets) >= 3
    seg_pos, pts, period = _path(centres, cyclic)
    base = np.array([model.value_f(model.system.c0, None, w) for w in which])
    deltas = np.zeros((len(pts), len(nets)))
    for r, (x, y, _) in enumerate(pts):
        c = model.with_finger(float(x), float(y), 0.0, max_h_mm=max_height_mm)
        deltas[r] = [model.value_f(c, k, w) for w in which]
        deltas[r] -= base
    deltas /= PF
    # the finger over each segment's centre: the path point at that segment's position
    at = [int(np.argmin(np.abs(pts[:, 2] - p))) for p in seg_pos]
    segs: list[SegmentEstimate] = []
    for i, n in enumerate(nets):
        row = deltas[at[i]]
        nb = [(i + d) % len(nets) if cyclic else i + d for d in (-1, 1)]
        cross = {nets[j]: float(row[j]) for j in nb if 0 <= j < len(nets) and j != i}
        segs.append(SegmentEstimate(n, (float(centres[i, 0]), float(centres[i, 1])), float(seg_pos[i]), float(base[i] / PF),
                                    float(row[i]), dict(sorted(cross.items()))))
    floor = DEAD_FLOOR_FRACTION * float(np.median([s.touch_delta_pf for s in segs]))
    points: list[tuple[float, float | None, float | None]] = []
    errors: list[float] = []
    for r in range(len(pts)):
        p = float(pts[r, 2])
        got = centroid_position(deltas[r], seg_pos, cyclic=cyclic, period=period)
        err = None
        if got is not None:
            err = got - p
            if cyclic:
                err = (err + period / 2.0) % period - period / 2.0
            errors.append(abs(err))
        points.append((p, got, err))
    strongest = [float(np.max(deltas[r])) for r in range(len(pts))]
    dz = dead_zones([q[0] for q in points], strongest, floor)
    est.segments = segs
    est.position = PositionResponse(period, cyclic, points, max(errors) if errors else None, dz, floor)
    lumped = est.parasitic_pf
    worst = max(segs, key=lambda s: s.parasitic_pf)
    est.parasitic_pf = worst.parasitic_pf
    est.notes.append(
        f"{model.sensor.kind} scanned one segment at a time, the others at ground: parasitic capacitance of the largest "
        f"channel ({worst.net}) {worst.parasitic_pf:.2f} pF"
        + (f" (all segments driven together: {lumped:.2f} pF)" if lumped is not None else "")
        + f"; position response from {len(pts)} finger positions, centroid of the strongest segment and its neighbours; "
        f"dead zones below {DEAD_FLOOR_FRACTION:g} x the median segment signal (assumed threshold)"
    )
