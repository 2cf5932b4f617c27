"""Findings and the check result: plain data that every report reads.

A report knows nothing of Gerber or geometry beyond what is here.
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass, field
from typing import Any, Literal

Severity = Literal["error", "warning", "note"]
SEVERITY_ORDER: dict[str, int] = {"note": 0, "warning": 1, "error": 2}
#: how a rule's note saying what it could not measure begins (see :func:`is_not_checked`)
NOT_CHECKED = "not checked: "
#: the check's own finding for a board where nothing was checked (no data, no copper, no sensor)
NOTHING_CHECKED = "input.nothing-checked"
SourceClass = Literal["standard", "handbook", "paper", "common practice", "derived", "input"]


@dataclass(frozen=True, slots=True)
class Location:
    """Where a finding is: a layer, a point and a box in mm, and the source where known."""

    layer: str | None = None
    x_mm: float | None = None
    y_mm: float | None = None
    box_mm: tuple[float, float, float, float] | None = None  # (xmin, ymin, xmax, ymax)
    file: str | None = None
    line: int | None = None


@dataclass(frozen=True, slots=True)
class Waiver:
    """A waiver as the config gives it (rule + where, or a fingerprint, + reason, + optional expiry)."""

    rule: str
    reason: str
    sensor: str | None = None
    net: str | None = None
    layer: str | None = None
    box_mm: tuple[float, float, float, float] | None = None
    fingerprint: str | None = None
    expires: str | None = None  # ISO date
    index: int = 0  # position in the config, for messages


@dataclass(slots=True)
class Finding:
    """One result of one rule: the measured value against its limit, and where."""

    rule_id: str
    severity: Severity
    message: str
    value: float | None = None
    limit: float | None = None
    unit: str | None = None
    location: Location = field(default_factory=Location)
    related: list[Location] = field(default_factory=list)
    nets: tuple[str, ...] = ()
    sensor: str | None = None
    fingerprint: str = ""
    waived_by: Waiver | None = None
    #: "finding"; "internal-error" for a rule/estimate that raised; "input-error" for a file
    #: that could not be read (the run goes on with the others, the exit code is 2)
    kind: Literal["finding", "internal-error", "input-error"] = "finding"
    #: a short text for the reviewer checklist: what must still be confirmed by eye or on a prototype
    review: str | None = None
    #: how ``limit`` bounds ``value``: "max" (the value must stay at or below it), "min" (at or
    #: above it); None where the finding has no limit or the engine cannot tell
    direction: Literal["max", "min"] | None = None
    #: the rule's fix in one line, and where the rule is documented (filled in by the engine)
    fix: str | None = None
    reference: str | None = None
    #: a finding that stands for several places of one cause (one bus, one pour, one row of keys):
    #: every place is in ``related``; ``places`` counts them (1 for a plain finding), ``sensors``
    #: names every sensor the places belong to and ``members`` the fingerprints the places had
    #: on their own (a baseline written before grouping still matches)
    places: int = 1
    sensors: tuple[str, ...] = ()
    members: tuple[str, ...] = ()

    @property
    def waived(self) -> bool:
        return self.waived_by is not None


def _round(v: float | None, step: float = 0.5) -> str:
    if v is None:
        return "-"
    return f"{round(v / step) * step:.1f}"



def is_not_checked(f: Finding) -> bool:
    """A rule's one note saying what it is listed for but could not measure ("not checked: ...")."""
    return f.kind == "finding" and f.severity == "note" and f.message.startswith(NOT_CHECKED)

def fingerprint_for(finding: Finding, board: str = "") -> str:
    """A stable fingerprint from rule, layer, sensor, nets and place (rounded to 0.5 mm).

    Not from object order or run time, so the same design exported again gets the same one.
    A grouped finding (``places`` > 1) is fingerprinted from its cause (rule, layer, sensors,
    nets), not from its places: a place more or less does not make it a new finding.
    """
    loc = finding.location
    if finding.places > 1:
        cause = [board, finding.rule_id, loc.layer or "-", ",".join(finding.sensors or (finding.sensor or "-",)),
                 ",".join(sorted(finding.nets)), "group"]
        return hashlib.sha256("|".join(cause).encode()).hexdigest()[:20]
    parts = [
        board,
        finding.rule_id,
        loc.layer or "-",
        finding.sensor or "-",
        ",".join(sorted(finding.nets)),
        _round(loc.x_mm),
        _round(loc.y_mm),
    ]
    return hashlib.sha256("|".join(parts).encode()).hexdigest()[:20]


def assign_fingerprints(findings: list[Finding], board: str = "") -> None:
    """Fill ``fingerprint`` on every finding; collisions get an ordinal (in a stable order)."""
    seen: dict[str, int] = {}
    for f in sorted(findings, key=sort_key):
        base = fingerprint_for(f, board)
        n = seen.get(base, 0)
        seen[base] = n + 1
        f.fingerprint = base if n == 0 else f"{base}-{n}"


def sort_key(f: Finding) -> tuple[Any, ...]:
    """Deterministic order: severity (worst first), rule, sensor, layer, place, message."""
    loc = f.location
    return (
        -SEVERITY_ORDER[f.severity],
        f.rule_id,
        f.sensor or "",
        loc.layer or "",
        round(loc.x_mm, 4) if loc.x_mm is not None else -1e18,
        round(loc.y_mm, 4) if loc.y_mm is not None else -1e18,
        f.message,
    )


@dataclass(slots=True)
class SensorSummary:
    """Key numbers of one sensor for reports (name -> value with unit in the key)."""

    name: str
    kind: str  # "self-button", "mutual-button", "slider", "wheel", "matrix", "proximity"
    layer: str | None
    nets: tuple[str, ...]
    box_mm: tuple[float, float, float, float] | None
    values: dict[str, float | str | None] = field(default_factory=dict)
    #: outline of the electrodes and zone for drawing, as lists of rings of (x, y) in mm
    outline_rings: list[list[tuple[float, float]]] = field(default_factory=list)
    zone_rings: list[list[tuple[float, float]]] = field(default_factory=list)
    #: estimates from the field solver (model name, numbers and the approach curve)
    estimate: dict[str, Any] | None = None
    #: what a reviewer must still confirm by eye or on a prototype
    checklist: list[str] = field(default_factory=list)


@dataclass(slots=True)
class RuleInfo:
    """Catalogue entry of a rule for reports (SARIF rules, JUnit test cases)."""

    id: str
    title: str
    family: str
    default_severity: Severity
    doc: str
    parameters: dict[str, tuple[Any, str, str]] = field(default_factory=dict)  # name -> (default, unit, source class)


@dataclass(slots=True)
class DrawLayer:
    """A layer for drawing: name, function, side, and simplified polygons as rings of (x, y) mm."""

    name: str
    function: str
    side: str
    polygons: list[list[list[tuple[float, float]]]] = field(default_factory=list)  # polygon -> rings (exterior first)


@dataclass(slots=True)
class Drawing:
    """What the HTML/Gerber outputs need to draw the board (geometry already simplified)."""

    box_mm: tuple[float, float, float, float]
    layers: list[DrawLayer] = field(default_factory=list)
    outline: list[list[tuple[float, float]]] = field(default_factory=list)
    holes: list[tuple[float, float, float, bool | None]] = field(default_factory=list)  # x, y, d, plated
    simplify_tolerance_mm: float = 0.0


@dataclass(slots=True)
class Result:
    """Everything one check of one board produced; what every report renders."""

    board: str
    source: str
    tool_version: str
    config_file: str | None
    findings: list[Finding] = field(default_factory=list)
    sensors: list[SensorSummary] = field(default_factory=list)
    rules: list[RuleInfo] = field(default_factory=list)
    #: rule ids that measured (passed or produced findings; not those that only said "not checked"),
    #: for JUnit "passing" test cases and the summary's count
    rules_run: list[str] = field(default_factory=list)
    files: list[dict[str, Any]] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    drawing: Drawing | None = None
    overlay: dict[str, Any] | None = None
    timestamp: str | None = None  # ISO 8601, only when asked for
    cautions: tuple[str, ...] = (
        "Estimates are not measurements: build a prototype and measure it under the real overlay.",
        "Touch controls on appliances and machines fall under safety standards; licensed practice "
        "and local codes decide, not this report.",
    )

    def unwaived(self) -> list[Finding]:
        return [f for f in self.findings if not f.waived]
