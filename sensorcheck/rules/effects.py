"""The physical verdicts of the layout rules: what the field-solver estimate says a rule's cause does
to the sensor's signal.

Every rule whose concern is physical reads its verdict here when the sensor has an estimate:

* crosstalk (neighbour spacing, a trace under another sensor): the neighbour's delta with the
  finger on this sensor (``SensorEstimate.crosstalk_pf``), as % of this sensor's own delta;
* copper near a sensor (foreign copper and traces in the zone, aggressors, ground under a self
  electrode, hatch fill, an RX beside another node's TX): the charge the sensor's excitation puts
  on that copper (``SensorEstimate.copper``, see :mod:`sensorcheck.physics.effects`), which bounds
  both the capacitance it adds and the touch delta it takes away (and is the coupling through
  which its own signals reach the sensor), as % of this sensor's own touch delta.

The geometric rule of thumb stays the verdict where there is no estimate (or the estimate does not
cover the place: outside the solve window, a matrix without copper data), and its number is
written beside the physical verdict where there is one.  These functions compute nothing with the
solver: they read the estimate's numbers and the design.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from typing import Any

import numpy as np
import shapely
from shapely.geometry.base import BaseGeometry

from sensorcheck.design.model import Design
from sensorcheck.physics.estimate import COPPER_BINS_MM, SensorEstimate
from sensorcheck.rules.base import Param
from sensorcheck.rules.common import fmt

CROSSTALK_PARAM = Param(
    10.0, "%", "common practice",
    "largest neighbour delta with the finger on this sensor, as % of this sensor's own touch delta, that the "
    "estimate accepts (a tenth of the signal stays well under a touch threshold set at 50-80 % of it: common "
    "practice for thresholds, vendor guidance, anonymous)")
COUPLING_PARAM = Param(
    10.0, "%", "common practice",
    "largest bound on the capacitance the copper adds and the touch delta it takes away, as % of the sensor's "
    "own touch delta, that the estimate accepts (the same tenth of the signal as the crosstalk limit)")
#: the parameters of every rule whose verdict comes from the copper bound
COUPLING_PARAMS: dict[str, Param] = {"max_coupling_percent": COUPLING_PARAM}


def _delta_pf(est: SensorEstimate) -> float:
    return abs(est.touch_delta_pf)


def crosstalk_percent(estimates: Mapping[str, SensorEstimate], a: str, b: str) -> tuple[float, str] | None:
    """The worse of the two crosstalks between sensors ``a`` and ``b`` (the neighbour's delta with the
    finger on one, as % of that one's own delta) and its text; None when neither estimate has it."""
    worst: tuple[float, str] | None = None
    for on, other in ((a, b), (b, a)):
        est = estimates.get(on)
        if est is None or other not in est.crosstalk_pf or _delta_pf(est) <= 0:
            continue
        x = est.crosstalk_pf[other]
        pct = 100.0 * abs(x) / _delta_pf(est)
        text = (f"with the finger on {on}, {other}'s channel changes by {1000 * x:+.1f} fF, {fmt(pct, 1)} % of "
                f"{on}'s own touch delta {1000 * est.touch_delta_pf:+.1f} fF (field-solver estimate)")
        if worst is None or pct > worst[0]:
            worst = (pct, text)
    return worst


class CopperReader:
    """Reads the copper bound of a sensor's estimate for the nets a rule names (one per rule run:
    it remembers which net each of an estimate's copper groups is on the board)."""

    def __init__(self, design: Design) -> None:
        self.design = design
        self._nets: dict[tuple[int, str], tuple[SensorEstimate, list[str | None]]] = {}
        self._trees: dict[str, tuple[list[str], np.ndarray, shapely.STRtree]] = {}

    def _tree(self, layer: str) -> tuple[list[str], np.ndarray, shapely.STRtree]:
        hit = self._trees.get(layer)
        if hit is None:
            lay = self.design.board.layer(layer)
            names = sorted(n for n, g in (lay.by_net.items() if lay is not None else ()) if not g.is_empty)
            geoms = np.array([lay.by_net[n] for n in names] if lay is not None else [], dtype=object)
            hit = self._trees[layer] = (names, geoms, shapely.STRtree(geoms))
        return hit

    def group_nets(self, est: SensorEstimate) -> list[str | None]:
        """The board's net at each copper group's point (None where no copper is there)."""
        key = (id(est), est.sensor)
        hit = self._nets.get(key)
        if hit is not None and hit[0] is est:
            return hit[1]
        out: list[str | None] = []
        for g in est.copper:
            names, geoms, tree = self._tree(g.layer)
            p = shapely.Point(g.point_mm)
            found = [names[int(i)] for i in sorted(tree.query(p, predicate="intersects"))]
            out.append(found[0] if found else None)
        self._nets[key] = (est, out)
        return out

    def bound_pf(self, est: SensorEstimate | None, nets: Iterable[str], *, layers: Iterable[str] | None = None,
                 within_mm: float | None = None, excitation: str | None = None) -> float | None:
        """The bound (pF per V) on what the copper of ``nets`` (on ``layers``, all when None) within
        ``within_mm`` of the sensor's electrodes (the whole window when None) does to its signal:
        a self sensor's self excitation, a mutual node's smaller of TX and RX (``excitation`` picks one).
        None when the estimate carries no copper data, its window does not reach ``within_mm`` or a net
        is the sensor's own."""
        if est is None or not est.copper:
            return None
        if within_mm is not None and not covers(self.design, est, within_mm):
            return None
        want = set(nets)
        sensor = next((s for s in self.design.sensors if s.name == est.sensor), None)
        if sensor is None or want & set(sensor.nets):
            return None  # the sensor's own nets are driven in the solve: no bound for them (a segment's trace
            # under another segment of one slider is judged by the rule of thumb)
        k = len(COPPER_BINS_MM) - 1
        if within_mm is not None:
            k = next((i for i, e in enumerate(COPPER_BINS_MM) if e >= within_mm - 1e-9), k)
        lays = None if layers is None else set(layers)
        sums: dict[str, float] = {}
        for g, net in zip(est.copper, self.group_nets(est)):
            if net not in want or (lays is not None and g.layer not in lays):
                continue
            for exc, cum in g.charge_pf.items():
                sums[exc] = sums.get(exc, 0.0) + cum[k]
        if excitation is not None:
            return sums.get(excitation, 0.0)
        if est.kind == "mutual":
            return min(sums.get("tx", 0.0), sums.get("rx", 0.0))
        return sums.get("self", 0.0)


def covers(design: Design, est: SensorEstimate, within_mm: float) -> bool:
    """Does the estimate's solve window reach ``within_mm`` beyond the sensor's electrodes on every side?"""
    b = est.window_box_mm
    sensor = next((s for s in design.sensors if s.name == est.sensor), None)
    if b is None or sensor is None or sensor.outline.is_empty:
        return False
    x0, y0, x1, y1 = sensor.outline.bounds
    return min(x0 - b[0], y0 - b[1], b[2] - x1, b[3] - y1) >= within_mm - 1e-6


def inside_window(est: SensorEstimate, geom: BaseGeometry) -> bool:
    """Does ``geom`` lie inside the estimate's solve window (so the solver saw it)?"""
    b = est.window_box_mm
    if b is None or geom is None or geom.is_empty:
        return False
    x0, y0, x1, y1 = geom.bounds
    return b[0] <= x0 and b[1] <= y0 and x1 <= b[2] and y1 <= b[3]


def coupling_verdict(est: SensorEstimate, bound_pf: float, limit_percent: float, what: str) -> tuple[bool, str, float]:
    """(negligible, text, % of the touch delta) for a copper bound against the sensor's own signal."""
    delta = _delta_pf(est)
    pct = 100.0 * bound_pf / delta if delta > 0 else float("inf")
    base = abs(est.baseline_pf)
    text = (f"field-solver bound: {what} couples {fmt(bound_pf, 3)} pF to {est.sensor}, so it adds at most "
            f"{fmt(bound_pf, 3)} pF to the {fmt(base, 2)} pF baseline and takes at most {1000 * bound_pf:.1f} fF "
            f"({fmt(pct, 1)} %) from the {1000 * est.touch_delta_pf:+.1f} fF touch delta; limit "
            f"{fmt(limit_percent, 0)} % of the delta")
    return pct <= limit_percent, text, pct


def copper_effect(reader: CopperReader, est: SensorEstimate | None, nets: Iterable[str], layers: Iterable[str] | None,
                  within_mm: float | None, what: str, limit_percent: float) -> tuple[bool, str, float, float] | None:
    """(negligible, text, % of the touch delta, limit %) of the copper bound of ``nets`` on ``layers``
    within ``within_mm`` of the electrodes; None without an estimate whose window covers it."""
    bound = reader.bound_pf(est, nets, layers=layers, within_mm=within_mm)
    if bound is None or est is None:
        return None
    ok, text, pct = coupling_verdict(est, bound, limit_percent, what)
    return ok, text, pct, limit_percent
