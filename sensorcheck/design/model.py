"""The design model: the contract between config/sensor recognition, rules, physics and reports.

Plain data.  ``design/config.py`` fills :class:`Config` from sensorcheck.toml,
``design/sensors.py`` builds :class:`Design` from a Board and a Config.
"""

from __future__ import annotations

import datetime as _dt
import re
from dataclasses import dataclass, field
from typing import Any, Literal

from shapely.geometry.base import BaseGeometry

from sensorcheck.board.model import Board
from sensorcheck.findings import Waiver
from sensorcheck.finger import Finger  # the finger record sits on the ground floor; re-exported here
from sensorcheck.limits import Limits

Role = Literal["transmitter", "receiver", "self", "shield", "guard", "ground", "aggressor"]
AggressorKind = Literal["led", "clock", "switching", "radio", "other"]
SensorKind = Literal["self-button", "mutual-button", "slider", "wheel", "matrix", "proximity"]


@dataclass(frozen=True, slots=True)
class OverlayLayer:
    """One layer of the cover stack over the touch face, listed from the touch surface down."""

    name: str  # material name or "custom"
    thickness_mm: float
    epsilon_r: float
    epsilon_source: str  # where the permittivity comes from (handbook name, or "config")
    kind: Literal["overlay", "adhesive", "air", "mask"] = "overlay"


@dataclass(frozen=True, slots=True)
class Overlay:
    """The cover plate stack and which board face it covers."""

    layers: tuple[OverlayLayer, ...]
    face: Literal["top", "bottom"] = "top"

    @property
    def thickness_mm(self) -> float:
        """Geometric thickness (lateral/fringe rules use this)."""
        return sum(layer.thickness_mm for layer in self.layers)

    @property
    def d_eff_mm(self) -> float:
        """Electrical thickness sum(t_i / eps_i) (coupling magnitudes use this)."""
        return sum(layer.thickness_mm / layer.epsilon_r for layer in self.layers)


@dataclass(frozen=True, slots=True)
class RolePattern:
    """Net-name pattern (fnmatch-style, case-insensitive) -> role."""

    pattern: str
    role: Role
    aggressor_kind: AggressorKind | None = None
    sensor: str | None = None  # optional sensor name the matching nets belong to


@dataclass(frozen=True, slots=True)
class RoleByPlace:
    """A point or box on a layer -> role (and sensor name) for boards without net names."""

    layer: str
    role: Role
    point_mm: tuple[float, float] | None = None
    box_mm: tuple[float, float, float, float] | None = None
    sensor: str | None = None
    aggressor_kind: AggressorKind | None = None  # aggressors only; None: "other"


@dataclass(frozen=True, slots=True)
class SensorGroup:
    """An explicit sensor group: a slider/wheel (ordered nets), a matrix (rows, columns), or a named mutual button."""

    name: str
    kind: SensorKind
    nets: tuple[str, ...] = ()  # slider/wheel segments in order, or a self electrode's net
    tx: tuple[str, ...] = ()
    rx: tuple[str, ...] = ()
    rows: tuple[str, ...] = ()
    columns: tuple[str, ...] = ()
    #: the face this sensor is touched from ([[sensors]] face); None: the board's face ([board] face)
    face: Literal["top", "bottom"] | None = None


@dataclass(slots=True)
class Config:
    """A validated sensorcheck.toml (or the defaults when there is none)."""

    file: str | None = None
    profile: str = "default"
    overlay: Overlay | None = None  # None: nobody said; rules that need it report one note
    finger: Finger | None = None
    stackup_override: Any = None  # board.model.Stackup or None
    roles: list[RolePattern] = field(default_factory=list)
    roles_by_place: list[RoleByPlace] = field(default_factory=list)
    groups: list[SensorGroup] = field(default_factory=list)
    file_overrides: dict[str, str] = field(default_factory=dict)  # file-name glob -> layer name
    controller: dict[str, float] = field(default_factory=dict)  # e.g. max_parasitic_pf, pin_capacitance_pf
    fabrication: dict[str, float] = field(default_factory=dict)  # min_clearance_mm, min_width_mm
    esd_kv: float | None = None
    esd_mode: Literal["contact", "air"] = "air"
    thresholds: dict[str, dict[str, Any]] = field(default_factory=dict)  # rule id -> param -> value
    severities: dict[str, str] = field(default_factory=dict)  # rule id -> severity or "off"
    #: rule id -> keep_errors: False where a board config's table set a severity (it caps the rule),
    #: True where a table opts to keep the rule's hard cases as errors (see rules.engine.severity_cap)
    keep_errors: dict[str, bool] = field(default_factory=dict)
    waivers: list[Waiver] = field(default_factory=list)
    estimate: dict[str, Any] = field(default_factory=dict)  # solver options (enabled, heights...)
    today: _dt.date = field(default_factory=_dt.date.today)
    #: resource limits ([limits] overrides of sensorcheck.limits.Limits)
    limits: Limits = field(default_factory=Limits)
    #: the touched face ([board] face); also on ``overlay.face`` when an overlay is given
    face: Literal["top", "bottom"] = "top"
    #: sensing-zone margin ([board] zone_margin_mm); None: overlay thickness, at least 1 mm (design/zones.py)
    zone_margin_mm: float | None = None
    #: how many copper layers the board has ([board] copper_layers): confirms a stack-up the files disagree with
    copper_layers: int | None = None
    #: what loading the config noticed that is not an error (reported as notes)
    notes: list[str] = field(default_factory=list)

    def rule_params(self, rule_id: str) -> dict[str, Any]:
        return dict(self.thresholds.get(rule_id, {}))


@dataclass(slots=True)
class Electrode:
    """Copper of one net that senses: its pads/area on one layer (traces excluded where they can be told)."""

    net: str
    role: Role
    layer: str
    geometry: BaseGeometry  # electrode copper on that layer
    #: the rest of this net's copper (traces, vias' pads) on every layer: layer -> geometry
    trace: dict[str, BaseGeometry] = field(default_factory=dict)


@dataclass(slots=True)
class Sensor:
    """One sensor: a self button, a mutual button, a slider/wheel, a matrix, or a proximity electrode."""

    name: str
    kind: SensorKind
    layer: str
    electrodes: list[Electrode]
    zone: BaseGeometry  # the sensing zone: electrode outline grown by zone_margin_mm
    zone_margin_mm: float
    #: slider/wheel segment nets in order; matrix rows and columns
    order: tuple[str, ...] = ()
    rows: tuple[str, ...] = ()
    columns: tuple[str, ...] = ()
    how_found: str = ""  # "roles", "group", "place"
    #: the face the sensor is touched from: its group's ``face``, else the board's (build_design sets
    #: it; None, for a sensor made by hand: the board's face, Config.face)
    face: Literal["top", "bottom"] | None = None
    #: the outline once made, with the electrode geometries it was made from (see :attr:`outline`)
    _outline_memo: tuple[tuple[BaseGeometry, ...], BaseGeometry] | None = field(
        default=None, init=False, repr=False, compare=False)

    @property
    def nets(self) -> tuple[str, ...]:
        return tuple(dict.fromkeys(e.net for e in self.electrodes))

    def electrodes_with(self, role: Role) -> list[Electrode]:
        return [e for e in self.electrodes if e.role == role]

    @property
    def outline(self) -> BaseGeometry:
        """The union of the electrodes' copper, made once: made again only when an electrode or its
        geometry has been replaced since (the geometries are compared by identity)."""
        geoms = tuple(e.geometry for e in self.electrodes)
        memo = self._outline_memo
        if memo is None or len(memo[0]) != len(geoms) or any(a is not b for a, b in zip(memo[0], geoms)):
            from shapely import union_all

            memo = (geoms, union_all(list(geoms)))
            self._outline_memo = memo
        return memo[1]


@dataclass(slots=True)
class Design:
    """A board with its config: net roles, sensors, overlay."""

    board: Board
    config: Config
    roles: dict[str, tuple[Role, AggressorKind | None]]  # net -> (role, aggressor kind)
    sensors: list[Sensor]
    #: what was guessed or could not be decided (reported as notes)
    notes: list[str] = field(default_factory=list)
    #: readable names of unnamed sensor copper (``~n...`` id -> ``S1.3``): see :func:`readable`
    labels: dict[str, str] = field(default_factory=dict)

    def nets_with(self, role: Role) -> list[str]:
        return sorted(n for n, (r, _) in self.roles.items() if r == role)

    def ground_nets(self) -> list[str]:
        return self.nets_with("ground")


_UNNAMED_ID = re.compile(r"~n[0-9a-f]{10}")


def readable(text: str, labels: dict[str, str]) -> str:
    """``text`` with every unnamed-copper id that has a label replaced by the label (``S1.3``)."""
    if not labels or "~n" not in text:
        return text
    return _UNNAMED_ID.sub(lambda m: labels.get(m.group(0), m.group(0)), text)
