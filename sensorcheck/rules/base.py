"""What every rule is made of: the :class:`Rule` base, its :class:`Param` parameters, the inputs it
may need, and the per-run geometry cache.

The family modules import this (never the engine), and the engine finds them through
:mod:`sensorcheck.rules.catalogue`, so the rules package has no import loop:
``base <- family modules <- catalogue <- engine``.
"""

from __future__ import annotations

import functools
import inspect
import math
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, ClassVar, Literal

from sensorcheck.findings import NOT_CHECKED, Finding, Severity, SourceClass

if TYPE_CHECKING:
    from sensorcheck.design.model import Design
    from sensorcheck.physics.estimate import SensorEstimate

Need = Literal["overlay", "sensors", "roles", "stackup", "outline", "max_parasitic_pf", "estimates"]

#: every rule docstring has exactly these headings, in this order
DOC_HEADINGS: tuple[str, ...] = (
    "What it checks",
    "Why it matters",
    "Known limitations",
    "Example",
    "Fix",
    "Parameters",
    "References",
)

#: how to give each missing input (the text of the one note a rule yields when it lacks it)
HOW_TO_GIVE: dict[str, tuple[str, str]] = {
    "overlay": (
        "no overlay (cover plate) was given",
        "add [[overlay.layers]] with material or epsilon_r and thickness_mm to sensorcheck.toml",
    ),
    "sensors": (
        "no sensors were found",
        "name the sensing nets in [roles] (transmitter, receiver, self) or list [[sensors]] groups",
    ),
    "roles": (
        "no net roles were given",
        "add [roles] patterns (transmitter, receiver, self, ground, aggressor) to sensorcheck.toml",
    ),
    "stackup": (
        "no stackup is known (no job file)",
        "add [stackup] with board_thickness_mm and [[stackup.layers]] to sensorcheck.toml",
    ),
    "outline": (
        "no board outline was read",
        "include the outline (profile) Gerber in the fabrication outputs",
    ),
    "max_parasitic_pf": (
        "the controller's parasitic capacitance limit was not given",
        "add [controller] max_parasitic_pf = <pF from the controller datasheet> to sensorcheck.toml",
    ),
    "estimates": (
        "no field-solver estimates are available",
        "run the check with estimates enabled ([estimate] enabled = true, no --no-estimate)",
    ),
}


@dataclass(frozen=True, slots=True)
class Param:
    """A rule parameter: default value, unit, and the source class of the default."""

    default: float | int | bool | str
    unit: str
    source: SourceClass
    doc: str

    @property
    def type(self) -> type:
        return type(self.default)


class MissingInput(Exception):
    """Raised by a check that finds, while running, that an input it needs is missing.

    The engine turns it into one note finding for the rule (what is missing, how to give it).
    """

    def __init__(self, what: str, how: str) -> None:
        self.what = what
        self.how = how
        super().__init__(f"{what}: {how}")


class RunCache:
    """Per-sensor geometry several rules need, made once per run of the rules (the engine hands one
    cache to every rule of a run; a rule made on its own has its own).  Same calls as the rules
    made before, so the same numbers: only the repetition goes."""

    def __init__(self) -> None:
        self._outline: dict[int, tuple[Any, Any]] = {}
        self._grown: dict[tuple[int, float], tuple[Any, Any]] = {}

    def outline(self, sensor: Any) -> Any:
        """``sensor.outline`` (the union of its electrodes)."""
        hit = self._outline.get(id(sensor))
        if hit is None or hit[0] is not sensor:
            hit = (sensor, sensor.outline)
            self._outline[id(sensor)] = hit
        return hit[1]

    def grown(self, sensor: Any, distance_mm: float) -> Any:
        """``sensor.outline.buffer(distance_mm)`` (see :func:`grow_outline`)."""
        key = (id(sensor), float(distance_mm))
        hit = self._grown.get(key)
        if hit is None or hit[0] is not sensor:
            hit = (sensor, grow_outline(self.outline(sensor), sensor.zone, sensor.zone_margin_mm, distance_mm))
            self._grown[key] = hit
        return hit[1]


def grow_outline(outline: Any, zone: Any, margin_mm: float, distance_mm: float) -> Any:
    """The points within ``distance_mm`` of ``outline``, grown from the sensing zone where that is exact.

    Growing fine copper (flattened arcs, interleaved fingers) by 10 mm costs GEOS a lot: every
    offset segment overlaps every other.  The zone is the outline with its holes filled, grown by
    ``margin_mm``, with the holes that growth enclosed filled too; growing that smooth shape by
    the rest, ``distance_mm - margin_mm``, costs about 1 % as much.  It is the same set when no
    filled point lies farther than ``distance_mm`` from the copper (derived): a point of a filled
    hole is within r of the hole's edge, r being the largest circle the hole holds, and that edge
    is copper (a hole of the outline) or ``margin_mm`` from it (a hole the growth enclosed);
    a hole lies inside the outline's smallest enclosing rectangle, so r is at most half its short
    side.  A point the second growth reaches from inside a hole crosses the hole's edge on the way,
    so it too is within ``distance_mm``.  Where the test fails (a wheel with a wide centre, a large
    matrix) or the zone is not the outline grown by its margin, the outline is grown directly.
    """
    m = float(margin_mm)
    d = float(distance_mm)
    if (zone is not None and not zone.is_empty and not outline.is_empty and 0.0 < m <= d
            and _zone_matches(outline, zone, m)):
        rect = outline.minimum_rotated_rectangle
        xs, ys = rect.exterior.coords.xy if rect.geom_type == "Polygon" else ((0.0,), (0.0,))
        short = min(math.hypot(xs[1] - xs[0], ys[1] - ys[0]), math.hypot(xs[2] - xs[1], ys[2] - ys[1])) \
            if len(xs) >= 3 else 0.0
        if short / 2.0 + m <= d:
            return zone.buffer(d - m) if d > m else zone
    return outline.buffer(d)


def _zone_matches(outline: Any, zone: Any, margin_mm: float) -> bool:
    """Is ``zone``'s box the outline's box grown by ``margin_mm`` (how the design step makes it)?"""
    tol = 0.02 * margin_mm + 1e-6
    ox0, oy0, ox1, oy1 = outline.bounds
    zx0, zy0, zx1, zy1 = zone.bounds
    return (abs(zx0 - (ox0 - margin_mm)) <= tol and abs(zy0 - (oy0 - margin_mm)) <= tol
            and abs(zx1 - (ox1 + margin_mm)) <= tol and abs(zy1 - (oy1 + margin_mm)) <= tol)


class Rule:
    """Base of every rule.  Subclasses set the class attributes and implement :meth:`check`.

    ``self.cache`` is the run's :class:`RunCache` (set by the engine; a fresh one otherwise).
    """

    def __init__(self) -> None:
        self.cache = RunCache()

    id: ClassVar[str]
    title: ClassVar[str]
    default_severity: ClassVar[Severity]
    params: ClassVar[dict[str, Param]] = {}
    needs: ClassVar[tuple[Need, ...]] = ()
    #: rules the engine itself emits (waiver notes); they have no check of their own
    engine_only: ClassVar[bool] = False
    #: how the limit bounds the measured value ("max": at most, "min": at least); None: the
    #: engine infers it from each finding (a value above its limit was checked against a maximum)
    limit_direction: ClassVar[Literal["max", "min"] | None] = None
    #: findings of this rule on several sensors with the same measured value are one cause (a
    #: row of keys at one spacing, one pour under every key): merged across sensors.  "layer":
    #: the rule judges one thing per layer (the pour around the sensors), so its findings on one
    #: layer with the same nets are one cause whatever their values; False: never merged across
    group_across_sensors: ClassVar[bool | Literal["layer"]] = True
    #: the nets are part of a finding's cause (one bus, one pour); False: every finding of the rule
    #: on one sensor and layer is one cause whichever nets it names (copper of several nets of one
    #: footprint in one sensing zone), listed with all their nets
    cause_includes_nets: ClassVar[bool] = True

    @classmethod
    def family(cls) -> str:
        return cls.id.split(".", 1)[0]

    def check(self, design: Design, estimates: Mapping[str, SensorEstimate],
              params: Mapping[str, Any]) -> Iterable[Finding]:
        raise NotImplementedError


def rule_doc(cls: type[Rule]) -> str:
    """The rule's docstring, dedented."""
    return inspect.cleandoc(cls.__doc__ or "")


def doc_sections(cls: type[Rule]) -> dict[str, str]:
    """Split a rule docstring into its headings (``Heading:`` lines) -> text (parsed once per rule:
    the engine reads the fix and the references for every finding)."""
    return dict(_doc_sections(cls))


@functools.cache
def _doc_sections(cls: type[Rule]) -> tuple[tuple[str, str], ...]:
    out: dict[str, str] = {}
    current: str | None = None
    lines: list[str] = []
    for line in rule_doc(cls).splitlines():
        stripped = line.strip()
        head = stripped[:-1] if stripped.endswith(":") else None
        if head in DOC_HEADINGS:
            if current is not None:
                out[current] = "\n".join(lines).strip()
            current, lines = head, []
        elif current is not None:
            lines.append(line)
    if current is not None:
        out[current] = "\n".join(lines).strip()
    return tuple(out.items())



def missing_note(rule_id: str, what: list[tuple[str, str]]) -> Finding:
    """One note naming what a rule is missing and how to give it."""
    parts = "; ".join(f"{w}: {h}" for w, h in what)
    return Finding(rule_id=rule_id, severity="note", message=f"{NOT_CHECKED}{parts}")


def not_checked_note(rule_id: str, what: str, how: str) -> Finding:
    """The one line a rule yields for something it is listed for but could not measure (why, and
    how to make it measurable); a rule that yields nothing else did not measure (``rules_run``)."""
    return missing_note(rule_id, [(what, how)])

