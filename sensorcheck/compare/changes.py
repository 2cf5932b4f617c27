"""What a revision does to each sensor: numbers old -> new, findings new / fixed / unchanged, copper.

Plain data for the compare reports (:mod:`sensorcheck.report.compare_text` and its siblings): a
report knows nothing of how the sides were read.

* Numbers: the estimate's baseline, touch delta, % change, turning point, parasitic and crosstalk
  (the largest to any neighbour, and each neighbour) of the old and the new revision, with the
  relative change ``(new - old) / |old|``; for the touch delta, % change and crosstalk, whose sign
  is a convention (negative for a mutual sensor), the change of the magnitude.
* Loss: how much a sensor's signal fell, in % of the old: the larger of the fall of the touch
  delta's magnitude and the fall of the % change's magnitude (negative: it gained).  The gate
  ``--fail-on-loss`` reads this.
* Findings are matched place by place by fingerprint: the parts of
  :func:`sensorcheck.findings.fingerprint_for` (rule, layer, sensor, place on a 0.5 mm grid)
  without the board's name and the nets, with the old sensor names replaced by the names the
  sensors have in the new revision: a renamed board, sensor or net does not turn every finding
  into a new one, and a report grouped by cause compares with one written place by place.  A finding whose place moves by more than the fingerprint's
  0.5 mm grid is one fixed and one new, as it is for ``--baseline``.
* Copper: per layer, the copper added and removed inside the sensor's zone (the union of its old
  and new zone), in mm2 and as geometry for the review page.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Literal

import shapely
from shapely.geometry import Polygon, box
from shapely.geometry.base import BaseGeometry

from sensorcheck.board.drawing import rings_for_drawing as _rings
from sensorcheck.compare.match import MatchedBy, match_sensors
from sensorcheck.compare.model import Side
from sensorcheck.findings import SEVERITY_ORDER

#: a relative change below this (%) is rounding, not a change
SAME_PERCENT = 0.05
#: a turning point moving less than this (mm) is the same
SAME_TURN_MM = 0.05
#: copper added or removed below this (mm2) inside a zone is geometry noise, not a change
MIN_COPPER_MM2 = 1e-3

#: the review page shows this much (mm) round a sensor's zone
VIEW_MARGIN_MM = 3.0
Ring = list[tuple[float, float]]

#: the numbers whose magnitude is the signal (see :attr:`Change.magnitude`)
MAGNITUDES = frozenset({"touch_delta_pf", "percent_change", "crosstalk_pf"})

#: (key, label, unit) of the numbers compared, in report order
METRICS: tuple[tuple[str, str, str], ...] = (
    ("baseline_pf", "baseline", "pF"),
    ("touch_delta_pf", "touch delta", "pF"),
    ("percent_change", "% change", "%"),
    ("turning_point_mm", "turning point", "mm"),
    ("crosstalk_pf", "crosstalk (largest)", "pF"),
    ("parasitic_pf", "parasitic", "pF"),
)

Status = Literal["changed", "unchanged", "added", "removed"]


@dataclass(frozen=True, slots=True)
class Change:
    """One number in the old and the new revision (None: not there)."""

    old: float | None
    new: float | None
    #: a signal whose sign is a convention (a mutual sensor's delta is negative): the relative
    #: change is that of its magnitude, so a fall always reads as a negative change
    magnitude: bool = False

    @property
    def relative_percent(self) -> float | None:
        """(new - old) / |old| in % (of |new| and |old| for a magnitude); None where either is missing or old is 0."""
        if self.old is None or self.new is None or self.old == 0:
            return None
        if self.magnitude:
            return 100.0 * (abs(self.new) - abs(self.old)) / abs(self.old)
        return 100.0 * (self.new - self.old) / abs(self.old)

    @property
    def changed(self) -> bool:
        if (self.old is None) != (self.new is None):
            return True
        rel = self.relative_percent
        if rel is None:
            return self.old != self.new
        return abs(rel) > SAME_PERCENT


@dataclass(frozen=True, slots=True)
class FindingRef:
    """A finding as the comparison lists it."""

    fingerprint: str  # as the revision's own report writes it
    key: str  # the fingerprint both revisions are compared by (see the module docstring)
    rule_id: str
    severity: str
    message: str
    sensor: str | None
    sensors: tuple[str, ...]
    waived: bool


@dataclass(slots=True)
class CopperChange:
    """Copper added and removed on one layer inside a sensor's zone."""

    layer: str
    side: str
    added_mm2: float
    removed_mm2: float
    added_rings: list[Ring] = field(default_factory=list)  # for drawing: rings (x, y) mm
    removed_rings: list[Ring] = field(default_factory=list)


@dataclass(slots=True)
class SensorComparison:
    """One sensor, old -> new."""

    name: str  # its name in the new revision (the old one for a removed sensor)
    old_name: str | None
    new_name: str | None
    kind: str
    status: Status
    matched_by: MatchedBy | None = None
    overlap: float = 0.0
    values: dict[str, Change] = field(default_factory=dict)
    crosstalk: dict[str, Change] = field(default_factory=dict)  # neighbour (new name) -> pF
    loss_percent: float | None = None
    new_findings: list[FindingRef] = field(default_factory=list)
    fixed_findings: list[FindingRef] = field(default_factory=list)
    unchanged_findings: list[FindingRef] = field(default_factory=list)
    copper: list[CopperChange] = field(default_factory=list)
    old_curve: list[list[float]] = field(default_factory=list)
    new_curve: list[list[float]] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    #: what the review page draws, as rings of (x, y) mm: the view box (zone grown by VIEW_MARGIN_MM),
    #: the electrode outlines and the zone, and each side's copper per layer inside the view box
    view_box_mm: tuple[float, float, float, float] | None = None
    old_outline_rings: list[Ring] = field(default_factory=list)
    new_outline_rings: list[Ring] = field(default_factory=list)
    zone_rings: list[Ring] = field(default_factory=list)
    old_copper_rings: dict[str, list[Ring]] = field(default_factory=dict)
    new_copper_rings: dict[str, list[Ring]] = field(default_factory=dict)
    layer_sides: dict[str, str] = field(default_factory=dict)

    @property
    def renamed(self) -> bool:
        return self.old_name is not None and self.new_name is not None and self.old_name != self.new_name


@dataclass(slots=True)
class Gate:
    """The compare gate: what was asked and what failed it."""

    fail_on_loss_percent: float | None
    fail_on_new: str | None
    failures: list[str] = field(default_factory=list)
    #: (sensor, loss %) of every sensor over the loss limit, the biggest first; the new findings that failed it
    losses: list[tuple[str, float]] = field(default_factory=list)
    new_failing: list[FindingRef] = field(default_factory=list)

    @property
    def failed(self) -> bool:
        return bool(self.failures)


@dataclass(slots=True)
class Comparison:
    """Everything one compare produced; what every compare report renders."""

    old_label: str
    new_label: str
    old_kind: str
    new_kind: str
    old_board: str
    new_board: str
    sensors: list[SensorComparison]
    board_new: list[FindingRef] = field(default_factory=list)  # findings of no sensor
    board_fixed: list[FindingRef] = field(default_factory=list)
    board_unchanged: list[FindingRef] = field(default_factory=list)
    copper_compared: bool = True
    notes: list[str] = field(default_factory=list)
    windows_solved: int | None = None
    windows_reused: int | None = None
    gate: Gate = field(default_factory=lambda: Gate(None, None))
    cautions: tuple[str, ...] = (
        "Estimates are not measurements: a change the model shows must be confirmed on a prototype "
        "under the real overlay before a product relies on it.",
    )

    @property
    def changed(self) -> list[SensorComparison]:
        """Sensors that changed, added or were removed: the biggest loss first."""
        out = [s for s in self.sensors if s.status != "unchanged"]
        return sorted(out, key=_loss_order)

    @property
    def renamed(self) -> list[tuple[str, str]]:
        return [(s.old_name, s.new_name) for s in self.sensors if s.renamed]  # type: ignore[misc]


def _loss_order(s: SensorComparison) -> tuple[Any, ...]:
    status = {"removed": 0, "changed": 1, "added": 2, "unchanged": 3}[s.status]
    loss = s.loss_percent if s.loss_percent is not None else float("-inf")
    return (status if s.status != "changed" else 1, -loss, s.name)


def _num(v: Any) -> float | None:
    return float(v) if isinstance(v, (int, float)) and not isinstance(v, bool) else None


def _largest_crosstalk(est: dict[str, Any] | None) -> float | None:
    xt = (est or {}).get("crosstalk_pf") or {}
    vals = [abs(v) for v in xt.values() if _num(v) is not None]
    return max(vals) if vals else None


def _metric(est: dict[str, Any] | None, key: str) -> float | None:
    if est is None:
        return None
    if key == "crosstalk_pf":
        return _largest_crosstalk(est)
    return _num(est.get(key))


def loss_percent(old: dict[str, Any] | None, new: dict[str, Any] | None) -> float | None:
    """The larger fall (in % of the old) of |touch delta| and |% change|; None without both estimates."""
    if old is None or new is None:
        return None
    falls = []
    for key in ("touch_delta_pf", "percent_change"):
        a, b = _num(old.get(key)), _num(new.get(key))
        if a is not None and b is not None and a != 0:
            falls.append(100.0 * (abs(a) - abs(b)) / abs(a))
    return max(falls) if falls else None


def _nearest_sensor(x: float | None, y: float | None, names: tuple[str, ...], boxes: dict[str, Any]) -> str | None:
    """Of ``names``, the sensor whose box is nearest the point (a grouped finding's place)."""
    if not names:
        return None
    if x is None or y is None or len(names) == 1:
        return names[0]

    def dist(n: str) -> float:
        b = boxes.get(n)
        if not isinstance(b, list) or len(b) != 4:
            return float("inf")
        return max(b[0] - x, 0.0, x - b[2]) ** 2 + max(b[1] - y, 0.0, y - b[3]) ** 2

    return min(names, key=lambda n: (dist(n), n))


def _place_key(rule: str, layer: str | None, sensor: str | None, x: float | None, y: float | None) -> str:
    """The fingerprint of one place (:func:`sensorcheck.findings.fingerprint_for`'s parts: rule,
    layer, sensor, place on its 0.5 mm grid) without the board's name and the nets."""
    import hashlib

    from sensorcheck.findings import _round

    parts = [rule, layer or "-", sensor or "-", _round(x), _round(y)]
    return hashlib.sha256("|".join(parts).encode()).hexdigest()[:20]


def _finding_refs(side: Side, rename: dict[str, str]) -> list[FindingRef]:
    """One entry per place: a finding grouped over several places (``check``'s default) is split
    into its places, each given to the nearest of its sensors, so that a report written grouped
    compares with one written place by place."""
    boxes = {s.get("name"): s.get("box_mm") for s in side.sensors}
    out: list[FindingRef] = []
    seen: dict[str, int] = {}
    raw = [f for f in side.findings if f.get("kind", "finding") == "finding"]
    for f in sorted(raw, key=lambda f: (str(f.get("rule_id")), str(f.get("fingerprint")))):
        sensors = tuple(str(n) for n in (f.get("sensors") or ()))
        places = [f.get("location") or {}]
        if int(f.get("places") or 1) > 1 and f.get("related"):
            places = list(f.get("related") or [])
        for loc in places:
            x, y = _num(loc.get("x_mm")), _num(loc.get("y_mm"))
            own = f.get("sensor") or _nearest_sensor(x, y, sensors, boxes)
            sensor = rename.get(own, own) if own else None
            base = _place_key(str(f.get("rule_id")), loc.get("layer"), sensor, x, y)
            n = seen.get(base, 0)
            seen[base] = n + 1
            out.append(FindingRef(str(f.get("fingerprint", "")), base if n == 0 else f"{base}-{n}",
                                  str(f.get("rule_id")), str(f.get("severity", "note")), str(f.get("message", "")),
                                  sensor, () if sensor else tuple(rename.get(n, n) for n in sensors),
                                  bool(f.get("waived"))))
    return out


def _belongs(f: FindingRef, name: str) -> bool:
    return f.sensor == name or name in f.sensors


def _copper(old: Side, new: Side, zone: BaseGeometry) -> list[CopperChange]:
    out: list[CopperChange] = []
    if old.copper is None or new.copper is None or zone.is_empty:
        return out
    for layer in sorted(set(old.copper) | set(new.copper)):
        side = (new.copper.get(layer) or old.copper[layer])[0]
        a = old.copper[layer][1].intersection(zone) if layer in old.copper else Polygon()
        b = new.copper[layer][1].intersection(zone) if layer in new.copper else Polygon()
        added, removed = b.difference(a), a.difference(b)
        if added.area < MIN_COPPER_MM2 and removed.area < MIN_COPPER_MM2:
            continue
        out.append(CopperChange(layer, side, round(added.area, 4) if added.area >= MIN_COPPER_MM2 else 0.0,
                                round(removed.area, 4) if removed.area >= MIN_COPPER_MM2 else 0.0,
                                _rings(added, 0.005), _rings(removed, 0.005)))
    return out


def compare_sides(old: Side, new: Side) -> Comparison:
    """Match the sensors of two revisions and say what changed for each."""
    pairs, removed, added = match_sensors(old.sensors, new.sensors,
                                          lambda n: _outline(old, n), lambda n: _outline(new, n))
    if not pairs:
        from sensorcheck.errors import SensorcheckError

        raise SensorcheckError(
            f"the revisions share no sensor (old side {old.label}: {', '.join(s['name'] for s in old.sensors) or 'none'}; "
            f"new side {new.label}: {', '.join(s['name'] for s in new.sensors) or 'none'}): nothing to compare")
    rename = {p.old: p.new for p in pairs}
    old_refs = _finding_refs(old, rename)
    new_refs = _finding_refs(new, {})
    old_keys = {f.key for f in old_refs}
    new_keys = {f.key for f in new_refs}
    by_old = {s["name"]: s for s in old.sensors}
    by_new = {s["name"]: s for s in new.sensors}
    cmp = Comparison(old.label, new.label, old.kind, new.kind, str(old.board.get("board", "")),
                     str(new.board.get("board", "")), [],
                     copper_compared=old.copper is not None and new.copper is not None)
    if not cmp.copper_compared:
        which = " and ".join(s.which for s in (old, new) if s.copper is None)
        cmp.notes.append(f"The {which} side is a JSON report: it holds no copper, so the copper near each "
                         "sensor is not compared and sensors are matched by their boxes.")
    for p in pairs:
        so, sn = by_old[p.old], by_new[p.new]
        eo, en = so.get("estimate"), sn.get("estimate")
        sc = SensorComparison(p.new, p.old, p.new, str(sn.get("kind")), "unchanged", p.matched_by, p.overlap)
        sc.values = {k: Change(_metric(eo, k), _metric(en, k), k in MAGNITUDES) for k, _, _ in METRICS}
        neighbours = {rename.get(k, k): v for k, v in ((eo or {}).get("crosstalk_pf") or {}).items()}
        now = (en or {}).get("crosstalk_pf") or {}
        sc.crosstalk = {k: Change(_num(neighbours.get(k)), _num(now.get(k)), True) for k in sorted(set(neighbours) | set(now))}
        sc.loss_percent = loss_percent(eo, en)
        sc.old_curve = list((eo or {}).get("curve") or [])
        sc.new_curve = list((en or {}).get("curve") or [])
        if eo is None or en is None:
            missing = " and ".join(w for w, e in (("old", eo), ("new", en)) if e is None)
            sc.notes.append(f"no field-solver estimate on the {missing} side: numbers not compared")
        if so.get("kind") != sn.get("kind"):
            sc.notes.append(f"kind changed: {so.get('kind')} -> {sn.get('kind')}")
        _fill(sc, old, new, old_refs, new_refs, old_keys, new_keys, p.old, p.new)
        turned = sc.values["turning_point_mm"]
        moved = (turned.old is None) != (turned.new is None) or (
            turned.old is not None and turned.new is not None and abs(turned.new - turned.old) > SAME_TURN_MM)
        numbers = any(c.changed for k, c in sc.values.items() if k != "turning_point_mm") or moved
        if numbers or sc.new_findings or sc.fixed_findings or sc.copper or sc.renamed or \
                so.get("kind") != sn.get("kind") or any(c.changed for c in sc.crosstalk.values()):
            sc.status = "changed"
        cmp.sensors.append(sc)
    for name in removed:
        so = by_old[name]
        sc = SensorComparison(name, name, None, str(so.get("kind")), "removed")
        sc.values = {k: Change(_metric(so.get("estimate"), k), None) for k, _, _ in METRICS}
        sc.old_curve = list((so.get("estimate") or {}).get("curve") or [])
        _fill(sc, old, new, old_refs, new_refs, old_keys, new_keys, name, None)
        cmp.sensors.append(sc)
    for name in added:
        sn = by_new[name]
        sc = SensorComparison(name, None, name, str(sn.get("kind")), "added")
        sc.values = {k: Change(None, _metric(sn.get("estimate"), k)) for k, _, _ in METRICS}
        sc.new_curve = list((sn.get("estimate") or {}).get("curve") or [])
        _fill(sc, old, new, old_refs, new_refs, old_keys, new_keys, None, name)
        cmp.sensors.append(sc)
    cmp.board_new = [f for f in new_refs if f.key not in old_keys and not f.sensor and not f.sensors]
    cmp.board_fixed = [f for f in old_refs if f.key not in new_keys and not f.sensor and not f.sensors]
    cmp.board_unchanged = [f for f in new_refs if f.key in old_keys and not f.sensor and not f.sensors]
    return cmp


def _outline(side: Side, name: str) -> BaseGeometry | None:
    shape = side.shape(name)
    return shape.outline if shape else None


def _fill(sc: SensorComparison, old: Side, new: Side, old_refs: list[FindingRef], new_refs: list[FindingRef],
          old_keys: set[str], new_keys: set[str], old_name: str | None, new_name: str | None) -> None:
    """Findings and copper of one sensor (old_name / new_name None: not on that side)."""
    # old findings carry the sensor's new name already (renamed for matching); a removed sensor keeps its own
    key_name = new_name or old_name or ""
    sc.new_findings = [f for f in new_refs if _belongs(f, key_name) and f.key not in old_keys]
    sc.unchanged_findings = [f for f in new_refs if _belongs(f, key_name) and f.key in old_keys]
    sc.fixed_findings = [f for f in old_refs if _belongs(f, key_name) and f.key not in new_keys]
    so = old.shape(old_name) if old_name else None
    sn = new.shape(new_name) if new_name else None
    sc.old_outline_rings = _rings(so.outline) if so else []
    sc.new_outline_rings = _rings(sn.outline) if sn else []
    zones = [s.zone for s in (so, sn) if s is not None]
    if not zones:
        return
    zone = shapely.union_all(zones)
    sc.copper = _copper(old, new, zone)
    sc.zone_rings = _rings(zone)
    if zone.is_empty:
        return
    x0, y0, x1, y1 = zone.bounds
    m = VIEW_MARGIN_MM
    sc.view_box_mm = (round(x0 - m, 3), round(y0 - m, 3), round(x1 + m, 3), round(y1 + m, 3))
    view = box(*sc.view_box_mm)
    for side, out in ((old, sc.old_copper_rings), (new, sc.new_copper_rings)):
        for layer, (face, img) in (side.copper or {}).items():
            sc.layer_sides[layer] = face
            clipped = img.intersection(view)
            if not clipped.is_empty:
                out[layer] = _rings(clipped)


def apply_gate(cmp: Comparison, fail_on_loss_percent: float | None, fail_on_new: str | None) -> Gate:
    """Fill ``cmp.gate``: a sensor losing more than the percentage, or a new unwaived finding at or
    above the severity, fails it."""
    gate = Gate(fail_on_loss_percent, fail_on_new)
    if fail_on_loss_percent is not None:
        for s in cmp.sensors:
            if s.loss_percent is not None and s.loss_percent > fail_on_loss_percent:
                gate.losses.append((s.name, s.loss_percent))
                gate.failures.append(f"{s.name} loses {s.loss_percent:.1f} % of its signal "
                                     f"(more than --fail-on-loss {fail_on_loss_percent:g})")
    if fail_on_new is not None:
        threshold = SEVERITY_ORDER[fail_on_new]
        news = [f for s in cmp.sensors for f in s.new_findings] + cmp.board_new
        for f in news:
            if not f.waived and SEVERITY_ORDER.get(f.severity, 0) >= threshold:
                gate.new_failing.append(f)
                where = f.sensor or ", ".join(f.sensors) or "board"
                gate.failures.append(f"new {f.severity} {f.rule_id} ({where}) at or above --fail-on-new {fail_on_new}")
    gate.losses.sort(key=lambda t: (-t[1], t[0]))
    cmp.gate = gate
    return gate
