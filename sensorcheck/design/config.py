"""Load and validate sensorcheck.toml into a :class:`~sensorcheck.design.model.Config`.

Validation is strict: an unknown key, a wrong type or an out-of-range value raises
:class:`~sensorcheck.errors.ConfigError` naming the file and the dotted key path
(``overlay.layers[0].thickness_mm``).  A TOML syntax error names the line.

Finger defaults (used when ``[finger]`` leaves a value out) are
:data:`sensorcheck.finger.FINGER_DEFAULTS`, with their sources there; the device is earthed
unless ``device_ground`` gives the device-to-earth coupling in pF.  Materials are looked up in
the ground floor's table, :mod:`sensorcheck.materials`.
"""

from __future__ import annotations

import datetime as _dt
import difflib
import math
import re
import tomllib
from collections.abc import Mapping
from dataclasses import fields as _dc_fields
from pathlib import Path
from typing import Any, get_args

from sensorcheck import CONFIG_NAME  # the name sits on the ground floor: fab/ knows it too
from sensorcheck.board.model import Stackup, StackupLayer
from sensorcheck.design.model import (
    AggressorKind,
    Config,
    Finger,
    Overlay,
    OverlayLayer,
    Role,
    RoleByPlace,
    RolePattern,
    SensorGroup,
    SensorKind,
)
from sensorcheck.errors import ConfigError
from sensorcheck.findings import Waiver
from sensorcheck.finger import FINGER_DEFAULTS, LOWEST_APPROACH_MM
from sensorcheck.limits import Limits
from sensorcheck.materials import lookup_material, material_names

MAX_CONFIG_BYTES = 1024 * 1024  # a config is a page of text; refuse anything far larger

#: physical ranges of the overlay the config and ``estimate --sweep`` accept: a layer thicker than
#: 0 mm and at most 200 mm; a relative permittivity from 1 (vacuum; nothing is lower) to 1000
OVERLAY_THICKNESS_MAX_MM = 200.0
EPSILON_R_MAX = 1000.0

#: defaults of [estimate]
ESTIMATE_DEFAULTS: dict[str, Any] = {"enabled": True, "max_height_mm": 20.0, "heights": 12}

ROLE_KEYS: tuple[Role, ...] = ("transmitter", "receiver", "self", "shield", "guard", "ground", "aggressor")
AGGRESSOR_KINDS: tuple[str, ...] = get_args(AggressorKind)
SENSOR_KINDS: tuple[str, ...] = get_args(SensorKind)
#: old spellings of sensor kinds still read from configs (with a note): old -> new
DEPRECATED_SENSOR_KINDS: dict[str, str] = {"mutual-node": "mutual-button"}
SEVERITIES = ("error", "warning", "note", "off")
OVERLAY_KINDS = ("overlay", "adhesive", "air", "mask")
STACKUP_KINDS = ("copper", "dielectric", "mask", "silk", "paste", "other")

_FIXED_LAYERS = (
    "top-copper", "bottom-copper", "top-mask", "bottom-mask", "top-paste", "bottom-paste",
    "top-silk", "bottom-silk", "outline", "top-components", "bottom-components", "drill",
)
_INNER_RE = re.compile(r"^inner([1-9][0-9]*)-copper$")
_COPPER_RE = re.compile(r"^(top|bottom|inner[1-9][0-9]*)-copper$")
_RULE_ID_RE = re.compile(r"^[a-z0-9]+(?:[.-][a-z0-9]+)*$")
_LINE_RE = re.compile(r"\(at line (\d+), column (\d+)\)")


# --------------------------------------------------------------------------- helpers


class _Ctx:
    """The file being read, for error messages."""

    def __init__(self, file: str | None) -> None:
        self.file = file
        #: what reading noticed that is not an error (deprecated spellings), for Config.notes
        self.notes: list[str] = []

    def err(self, key: str | None, message: str) -> ConfigError:
        return ConfigError(self.file, key, message)


def _type_name(value: Any) -> str:
    if isinstance(value, bool):
        return "a boolean"
    if isinstance(value, int):
        return "an integer"
    if isinstance(value, float):
        return "a number"
    if isinstance(value, str):
        return "a string"
    if isinstance(value, list):
        return "an array"
    if isinstance(value, dict):
        return "a table"
    if isinstance(value, (_dt.date, _dt.datetime, _dt.time)):
        return "a date/time"
    return type(value).__name__


def _join(prefix: str, key: str) -> str:
    if not re.fullmatch(r"[A-Za-z0-9_-]+", key):
        key = '"' + key.replace('"', '\\"') + '"'
    return f"{prefix}.{key}" if prefix else key


def _check_keys(ctx: _Ctx, table: Mapping[str, Any], allowed: tuple[str, ...] | set[str], where: str) -> None:
    for key in table:
        if key not in allowed:
            hint = difflib.get_close_matches(key, list(allowed), n=1)
            extra = f"; did you mean '{hint[0]}'?" if hint else f"; allowed: {', '.join(sorted(allowed))}"
            raise ctx.err(_join(where, key), f"unknown key '{key}'{extra}")


def _table(ctx: _Ctx, value: Any, where: str) -> dict[str, Any]:
    if not isinstance(value, dict):
        raise ctx.err(where, f"expected a table, got {_type_name(value)}")
    return value


def _number(
    ctx: _Ctx,
    value: Any,
    where: str,
    *,
    min_value: float | None = None,
    min_exclusive: bool = False,
    max_value: float | None = None,
) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise ctx.err(where, f"expected a number, got {_type_name(value)}")
    try:
        v = float(value)
    except OverflowError:  # a TOML integer too large for a float
        raise ctx.err(where, f"expected a finite number, got an integer of {len(str(value))} digits") from None
    if not math.isfinite(v):
        raise ctx.err(where, f"expected a finite number, got {value}")
    low = min_value is not None and (v <= min_value if min_exclusive else v < min_value)
    if low or (max_value is not None and v > max_value):
        raise ctx.err(where, f"must be {range_text(min_value, min_exclusive, max_value)}, got {v:g}")
    return v


def range_text(min_value: float | None, min_exclusive: bool, max_value: float | None) -> str:
    """The expected range in words: "greater than 0 and at most 200", "from 1 to 1000", ..."""
    parts = []
    if min_value is not None:
        parts.append(f"{'greater than' if min_exclusive else 'at least'} {min_value:g}")
    if max_value is not None:
        parts.append(f"at most {max_value:g}")
    if min_value is not None and max_value is not None and not min_exclusive:
        return f"from {min_value:g} to {max_value:g}"
    return " and ".join(parts)


def _integer(ctx: _Ctx, value: Any, where: str, *, min_value: int | None = None, max_value: int | None = None) -> int:
    if isinstance(value, bool) or not isinstance(value, int):
        raise ctx.err(where, f"expected an integer, got {_type_name(value)}")
    if (min_value is not None and value < min_value) or (max_value is not None and value > max_value):
        raise ctx.err(where, f"must be an integer {range_text(min_value, False, max_value)}, got {value}")
    return value


def _string(ctx: _Ctx, value: Any, where: str, *, choices: tuple[str, ...] | None = None, nonempty: bool = True) -> str:
    if not isinstance(value, str):
        raise ctx.err(where, f"expected a string, got {_type_name(value)}")
    if nonempty and not value.strip():
        raise ctx.err(where, "must not be empty")
    if choices is not None and value not in choices:
        raise ctx.err(where, f"expected one of {', '.join(repr(c) for c in choices)}, got {value!r}")
    return value


def _boolean(ctx: _Ctx, value: Any, where: str) -> bool:
    if not isinstance(value, bool):
        raise ctx.err(where, f"expected true or false, got {_type_name(value)}")
    return value


def _string_list(ctx: _Ctx, value: Any, where: str) -> tuple[str, ...]:
    if not isinstance(value, list):
        raise ctx.err(where, f"expected an array of strings, got {_type_name(value)}")
    out = tuple(_string(ctx, v, f"{where}[{i}]") for i, v in enumerate(value))
    seen: set[str] = set()
    for i, v in enumerate(out):
        if v in seen:
            raise ctx.err(f"{where}[{i}]", f"'{v}' is listed twice")
        seen.add(v)
    return out


def _numbers(ctx: _Ctx, value: Any, where: str, count: int) -> tuple[float, ...]:
    if not isinstance(value, list) or len(value) != count:
        raise ctx.err(where, f"expected an array of {count} numbers, got {_type_name(value)}"
                      + (f" of length {len(value)}" if isinstance(value, list) else ""))
    return tuple(_number(ctx, v, f"{where}[{i}]") for i, v in enumerate(value))


def _box(ctx: _Ctx, value: Any, where: str) -> tuple[float, float, float, float]:
    x0, y0, x1, y1 = _numbers(ctx, value, where, 4)
    if x1 <= x0 or y1 <= y0:
        raise ctx.err(where, "expected [x0, y0, x1, y1] with x0 < x1 and y0 < y1")
    return (x0, y0, x1, y1)


def _layer_name(ctx: _Ctx, value: Any, where: str, *, copper_only: bool = False, allow_drill: bool = True) -> str:
    name = _string(ctx, value, where)
    ok = bool(_COPPER_RE.match(name)) if copper_only else (name in _FIXED_LAYERS or bool(_INNER_RE.match(name)))
    if ok and not allow_drill and name == "drill":
        ok = False
    if not ok:
        what = "a copper layer name (top-copper, inner1-copper, ..., bottom-copper)" if copper_only else \
            "one of our layer names (top-copper, inner1-copper, ..., bottom-copper, top-mask, ..., outline, drill)"
        raise ctx.err(where, f"expected {what}, got {name!r}")
    return name


def _iso_date(ctx: _Ctx, value: Any, where: str) -> str:
    if isinstance(value, _dt.datetime) or isinstance(value, _dt.time):
        raise ctx.err(where, "expected a date without a time, e.g. 2027-06-30")
    if isinstance(value, _dt.date):
        return value.isoformat()
    if isinstance(value, str):
        try:
            return _dt.date.fromisoformat(value.strip()).isoformat()
        except ValueError:
            raise ctx.err(where, f"expected a date like 2027-06-30, got {value!r}") from None
    raise ctx.err(where, f"expected a date like 2027-06-30, got {_type_name(value)}")


# --------------------------------------------------------------------------- finger


def finger_defaults() -> Finger:
    """The finger used when the config says nothing (sources in :mod:`sensorcheck.finger`)."""
    return FINGER_DEFAULTS


def _finger(ctx: _Ctx, value: Any) -> Finger:
    t = _table(ctx, value, "finger")
    _check_keys(ctx, t, ("contact_diameter_mm", "length_mm", "body_capacitance_pf", "device_ground"), "finger")
    base = finger_defaults()
    contact = base.contact_diameter_mm
    if "contact_diameter_mm" in t:
        contact = _number(ctx, t["contact_diameter_mm"], "finger.contact_diameter_mm", min_value=1.0, max_value=40.0)
    length = base.length_mm
    if "length_mm" in t:
        length = _number(ctx, t["length_mm"], "finger.length_mm", min_value=0.0, min_exclusive=True, max_value=500.0)
    body = base.body_capacitance_pf
    if "body_capacitance_pf" in t:
        # 0 pF: a floating object (a coin, a water film), no path to earth beyond its own capacitance
        body = _number(ctx, t["body_capacitance_pf"], "finger.body_capacitance_pf", min_value=0.0,
                       max_value=10000.0)
    device = base.device_ground_coupling_pf
    if "device_ground" in t:
        v = t["device_ground"]
        if isinstance(v, str):
            _string(ctx, v, "finger.device_ground", choices=("earthed",))
            device = None
        elif isinstance(v, (int, float)) and not isinstance(v, bool):
            device = _number(ctx, v, "finger.device_ground", min_value=0.0, min_exclusive=True, max_value=1e6)
        else:
            raise ctx.err("finger.device_ground",
                          f"expected \"earthed\" or the device-to-earth coupling in pF, got {_type_name(v)}")
    return Finger(contact_diameter_mm=contact, length_mm=length, body_capacitance_pf=body,
                  device_ground_coupling_pf=device)


# --------------------------------------------------------------------------- overlay, stackup


def _overlay(ctx: _Ctx, value: Any, face: str) -> Overlay:
    t = _table(ctx, value, "overlay")
    _check_keys(ctx, t, ("layers",), "overlay")
    layers_v = t.get("layers")
    if not isinstance(layers_v, list) or not layers_v:
        raise ctx.err("overlay.layers", "expected at least one [[overlay.layers]] table")
    layers: list[OverlayLayer] = []
    for i, lv in enumerate(layers_v):
        where = f"overlay.layers[{i}]"
        lt = _table(ctx, lv, where)
        _check_keys(ctx, lt, ("material", "epsilon_r", "thickness_mm", "kind"), where)
        if "thickness_mm" not in lt:
            raise ctx.err(f"{where}.thickness_mm", "missing: every overlay layer needs its thickness in mm")
        thickness = _number(ctx, lt["thickness_mm"], f"{where}.thickness_mm", min_value=0.0, min_exclusive=True,
                            max_value=OVERLAY_THICKNESS_MAX_MM)
        kind = _string(ctx, lt["kind"], f"{where}.kind", choices=OVERLAY_KINDS) if "kind" in lt else None
        material = None
        if "material" in lt:
            mname = _string(ctx, lt["material"], f"{where}.material")
            material = lookup_material(mname)
            if material is None:
                hint = difflib.get_close_matches(mname.lower(), material_names(), n=3)
                raise ctx.err(f"{where}.material",
                              f"unknown material {mname!r}"
                              + (f"; did you mean {', '.join(hint)}?" if hint else "")
                              + "; or give epsilon_r instead")
        if kind is None and material is None and "epsilon_r" not in lt:
            raise ctx.err(where, "give a material (built-in table) or epsilon_r")
        if kind == "air" and material is None and "epsilon_r" not in lt:
            material = lookup_material("air")
        if "epsilon_r" in lt:
            eps = _number(ctx, lt["epsilon_r"], f"{where}.epsilon_r", min_value=1.0, max_value=EPSILON_R_MAX)
            source = "config" if material is None else f"config (overrides the table's {material.name})"
            name = material.name if material is not None else "custom"
        elif material is not None:
            eps, source, name = material.epsilon_r, f"{material.source_class}: {material.source}", material.name
        else:
            raise ctx.err(where, "give a material (built-in table) or epsilon_r")
        if kind is None:
            kind = material.kind if material is not None else "overlay"
        layers.append(OverlayLayer(name=name, thickness_mm=thickness, epsilon_r=eps, epsilon_source=source,
                                   kind=kind))  # type: ignore[arg-type]
    return Overlay(layers=tuple(layers), face=face)  # type: ignore[arg-type]


def _stackup(ctx: _Ctx, value: Any) -> Stackup:
    t = _table(ctx, value, "stackup")
    _check_keys(ctx, t, ("board_thickness_mm", "layers"), "stackup")
    layers: list[StackupLayer] = []
    if "layers" in t:
        if not isinstance(t["layers"], list):
            raise ctx.err("stackup.layers", f"expected an array of tables, got {_type_name(t['layers'])}")
        seen_copper: set[str] = set()
        for i, lv in enumerate(t["layers"]):
            where = f"stackup.layers[{i}]"
            lt = _table(ctx, lv, where)
            _check_keys(ctx, lt, ("name", "kind", "thickness_mm", "copper_layer", "material", "epsilon_r"), where)
            for req in ("name", "kind", "thickness_mm"):
                if req not in lt:
                    raise ctx.err(f"{where}.{req}", "missing")
            name = _string(ctx, lt["name"], f"{where}.name")
            kind = _string(ctx, lt["kind"], f"{where}.kind", choices=STACKUP_KINDS)
            thickness = _number(ctx, lt["thickness_mm"], f"{where}.thickness_mm", min_value=0.0,
                                min_exclusive=True, max_value=50.0)
            copper_layer = None
            if "copper_layer" in lt:
                if kind != "copper":
                    raise ctx.err(f"{where}.copper_layer", "only copper layers take copper_layer")
                copper_layer = _layer_name(ctx, lt["copper_layer"], f"{where}.copper_layer", copper_only=True)
                if copper_layer in seen_copper:
                    raise ctx.err(f"{where}.copper_layer", f"{copper_layer} is given twice")
                seen_copper.add(copper_layer)
            material_name = _string(ctx, lt["material"], f"{where}.material") if "material" in lt else None
            eps: float | None = None
            if "epsilon_r" in lt:
                eps = _number(ctx, lt["epsilon_r"], f"{where}.epsilon_r", min_value=1.0, max_value=EPSILON_R_MAX)
            elif material_name is not None and (m := lookup_material(material_name)) is not None:
                eps = m.epsilon_r
            layers.append(StackupLayer(name=name, kind=kind, thickness_mm=thickness,  # type: ignore[arg-type]
                                       material=material_name, epsilon_r=eps, copper_layer=copper_layer))
    if "board_thickness_mm" in t:
        total = _number(ctx, t["board_thickness_mm"], "stackup.board_thickness_mm", min_value=0.0,
                        min_exclusive=True, max_value=50.0)
    elif layers:
        total = sum(layer.thickness_mm for layer in layers)
    else:
        raise ctx.err("stackup", "give board_thickness_mm or [[stackup.layers]]")
    return Stackup(layers=layers, board_thickness_mm=total, source="config")


# --------------------------------------------------------------------------- roles, groups


def _roles(ctx: _Ctx, value: Any) -> tuple[list[RolePattern], list[RoleByPlace]]:
    t = _table(ctx, value, "roles")
    _check_keys(ctx, t, (*ROLE_KEYS, "place"), "roles")
    patterns: list[RolePattern] = []
    for role in ROLE_KEYS:
        if role not in t:
            continue
        where = f"roles.{role}"
        items = t[role]
        if isinstance(items, (str, dict)):
            items = [items]
        if not isinstance(items, list):
            raise ctx.err(where, f"expected an array of net-name patterns, got {_type_name(items)}")
        for i, item in enumerate(items):
            w = f"{where}[{i}]"
            kind: str | None = "other" if role == "aggressor" else None
            sensor: str | None = None
            if isinstance(item, str):
                pattern = _string(ctx, item, w)
            elif isinstance(item, dict):
                allowed = ("pattern", "kind", "sensor") if role == "aggressor" else ("pattern", "sensor")
                _check_keys(ctx, item, allowed, w)
                if "pattern" not in item:
                    raise ctx.err(f"{w}.pattern", "missing")
                pattern = _string(ctx, item["pattern"], f"{w}.pattern")
                if "kind" in item:
                    kind = _string(ctx, item["kind"], f"{w}.kind", choices=AGGRESSOR_KINDS)
                if "sensor" in item:
                    sensor = _string(ctx, item["sensor"], f"{w}.sensor")
            else:
                raise ctx.err(w, f"expected a pattern string or a table, got {_type_name(item)}")
            patterns.append(RolePattern(pattern=pattern, role=role, aggressor_kind=kind,  # type: ignore[arg-type]
                                        sensor=sensor))
    places: list[RoleByPlace] = []
    if "place" in t:
        if not isinstance(t["place"], list):
            raise ctx.err("roles.place", f"expected an array of tables ([[roles.place]]), got {_type_name(t['place'])}")
        for i, pv in enumerate(t["place"]):
            where = f"roles.place[{i}]"
            pt = _table(ctx, pv, where)
            _check_keys(ctx, pt, ("layer", "point_mm", "box_mm", "role", "sensor", "kind"), where)
            for req in ("layer", "role"):
                if req not in pt:
                    raise ctx.err(f"{where}.{req}", "missing")
            layer = _layer_name(ctx, pt["layer"], f"{where}.layer", copper_only=True)
            role = _string(ctx, pt["role"], f"{where}.role", choices=ROLE_KEYS)
            if ("point_mm" in pt) == ("box_mm" in pt):
                raise ctx.err(where, "give exactly one of point_mm = [x, y] or box_mm = [x0, y0, x1, y1]")
            point = None
            box = None
            if "point_mm" in pt:
                x, y = _numbers(ctx, pt["point_mm"], f"{where}.point_mm", 2)
                point = (x, y)
            else:
                box = _box(ctx, pt["box_mm"], f"{where}.box_mm")
            sensor = _string(ctx, pt["sensor"], f"{where}.sensor") if "sensor" in pt else None
            place_kind: str | None = None  # an aggressor's kind, as in roles.aggressor (default "other")
            if "kind" in pt:
                if role != "aggressor":
                    raise ctx.err(f"{where}.kind", "only an aggressor place takes a kind")
                place_kind = _string(ctx, pt["kind"], f"{where}.kind", choices=AGGRESSOR_KINDS)
            places.append(RoleByPlace(layer=layer, role=role, point_mm=point, box_mm=box,  # type: ignore[arg-type]
                                      sensor=sensor, aggressor_kind=place_kind))  # type: ignore[arg-type]
    return patterns, places


_GROUP_FIELDS = ("nets", "tx", "rx", "rows", "columns")


def _groups(ctx: _Ctx, value: Any) -> list[SensorGroup]:
    if not isinstance(value, list):
        raise ctx.err("sensors", f"expected an array of tables ([[sensors]]), got {_type_name(value)}")
    groups: list[SensorGroup] = []
    names: set[str] = set()
    for i, gv in enumerate(value):
        where = f"sensors[{i}]"
        g = _table(ctx, gv, where)
        _check_keys(ctx, g, ("name", "kind", "face", *_GROUP_FIELDS), where)
        for req in ("name", "kind"):
            if req not in g:
                raise ctx.err(f"{where}.{req}", "missing")
        name = _string(ctx, g["name"], f"{where}.name")
        if name in names:
            raise ctx.err(f"{where}.name", f"sensor name '{name}' is used twice")
        names.add(name)
        if isinstance(g["kind"], str) and g["kind"] in DEPRECATED_SENSOR_KINDS:
            new_kind = DEPRECATED_SENSOR_KINDS[g["kind"]]
            ctx.notes.append(f"{ctx.file}: {where}.kind: {g['kind']!r} is deprecated; write {new_kind!r} "
                             "(the old spelling is still read)")
            g = {**g, "kind": new_kind}
        kind = _string(ctx, g["kind"], f"{where}.kind", choices=SENSOR_KINDS)
        lists = {f: _string_list(ctx, g[f], f"{where}.{f}") if f in g else () for f in _GROUP_FIELDS}
        allowed = {
            "self-button": ("nets",),
            "proximity": ("nets",),
            "mutual-button": ("tx", "rx"),
            "slider": ("nets", "tx", "rx"),
            "wheel": ("nets", "tx", "rx"),
            "matrix": ("rows", "columns"),
        }[kind]
        for f in _GROUP_FIELDS:
            if lists[f] and f not in allowed:
                raise ctx.err(f"{where}.{f}", f"a {kind} group takes {', '.join(allowed)}, not {f}")

        def need(f: str, n: int, why: str) -> None:
            if len(lists[f]) < n:
                raise ctx.err(f"{where}.{f}", why)

        if kind == "self-button":
            need("nets", 1, "a self-button group names its electrode net: nets = [\"NET\"]")
            if len(lists["nets"]) > 1:
                raise ctx.err(f"{where}.nets", "a self-button has one net; use kind = \"slider\" for several")
        elif kind == "proximity":
            need("nets", 1, "a proximity group names its electrode net(s)")
        elif kind == "mutual-button":
            need("tx", 1, "a mutual-button group names its transmitter net(s): tx = [...]")
            need("rx", 1, "a mutual-button group names its receiver net(s): rx = [...]")
        elif kind in ("slider", "wheel"):
            n_min = 3 if kind == "wheel" else 2
            if lists["tx"] or lists["rx"]:
                if lists["nets"]:
                    raise ctx.err(f"{where}.nets", "give nets (self segments) or tx + rx (mutual segments), not both")
                need("tx", n_min, f"a mutual {kind} lists at least {n_min} transmitter segments in order")
                need("rx", 1, f"a mutual {kind} names its receiver net(s)")
            else:
                need("nets", n_min, f"a {kind} lists at least {n_min} segment nets in order")
        else:
            need("rows", 1, "a matrix names its row nets: rows = [...]")
            need("columns", 1, "a matrix names its column nets: columns = [...]")
        all_nets = [n for f in _GROUP_FIELDS for n in lists[f]]
        dup = sorted({n for n in all_nets if all_nets.count(n) > 1})
        if dup:
            raise ctx.err(where, f"net {dup[0]!r} is listed in two places of this group")
        face = _string(ctx, g["face"], f"{where}.face", choices=("top", "bottom")) if "face" in g else None
        groups.append(SensorGroup(name=name, kind=kind, face=face, **lists))  # type: ignore[arg-type]
    return groups


# --------------------------------------------------------------------------- rules, profiles, waivers


def _type_ok(value: Any, expected: type) -> bool:
    if expected is float:
        return isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(float(value))
    if expected is int:
        return isinstance(value, int) and not isinstance(value, bool)
    if expected is bool:
        return isinstance(value, bool)
    if expected in (list, tuple):
        return isinstance(value, list)
    try:
        return isinstance(value, expected)
    except TypeError:
        return True  # a typing construct we cannot check: accept


_NONNEG_SUFFIXES = ("_mm", "_mm2", "_pf", "_ff", "_kv", "_percent", "_pct", "_deg")


def _rules(
    ctx: _Ctx,
    value: Any,
    known_rules: Mapping[str, Mapping[str, type]] | None,
    thresholds: dict[str, dict[str, Any]],
    severities: dict[str, str],
    board_config: bool = False,
) -> None:
    """``board_config``: the tables of the board's own config, where a severity caps the rule's
    findings unless the table says ``keep_errors = true`` (a profile's severity caps only where
    it differs from the rule's default: see ``rules.engine.severity_cap``)."""
    t = _table(ctx, value, "rules")
    for rule_id, rv in t.items():
        where = _join("rules", rule_id)
        if not _RULE_ID_RE.match(rule_id):
            raise ctx.err(where, "rule ids are lower-case words joined by '.' and '-' (e.g. gap.tx-rx-vs-overlay)")
        if known_rules is not None and rule_id not in known_rules:
            hint = difflib.get_close_matches(rule_id, list(known_rules), n=1)
            raise ctx.err(where, f"unknown rule id '{rule_id}'" + (f"; did you mean '{hint[0]}'?" if hint else "")
                          + " (`sensorcheck rules` lists them)")
        rt = _table(ctx, rv, where)
        params = known_rules.get(rule_id, {}) if known_rules is not None else None
        for key, v in rt.items():
            w = _join(where, key)
            if key == "severity":
                severities[rule_id] = _string(ctx, v, w, choices=SEVERITIES)
                if board_config and "keep_errors" not in rt:
                    thresholds.setdefault(rule_id, {})["keep_errors"] = False
                continue
            if key == "keep_errors":
                if not isinstance(v, bool):
                    raise ctx.err(w, f"expected true or false, got {_type_name(v)}")
                thresholds.setdefault(rule_id, {})[key] = v
                continue
            if params is not None:
                if key not in params:
                    allowed = ["severity", "keep_errors", *sorted(params)]
                    hint = difflib.get_close_matches(key, allowed, n=1)
                    raise ctx.err(w, f"unknown parameter '{key}' of rule {rule_id}"
                                  + (f"; did you mean '{hint[0]}'?" if hint else f"; it takes {', '.join(allowed)}"))
                expected = params[key]
                if not _type_ok(v, expected):
                    raise ctx.err(w, f"expected {getattr(expected, '__name__', str(expected))}, got {_type_name(v)}")
            elif not isinstance(v, (bool, int, float, str, list)):
                raise ctx.err(w, f"expected a number, string, boolean or array, got {_type_name(v)}")
            if isinstance(v, float) and not math.isfinite(v):
                raise ctx.err(w, f"expected a finite number, got {v}")
            if isinstance(v, (int, float)) and not isinstance(v, bool) and key.endswith(_NONNEG_SUFFIXES) and v < 0:
                raise ctx.err(w, f"must not be negative, got {v}")
            if params is not None and params.get(key) is float and isinstance(v, int):
                v = float(v)
            thresholds.setdefault(rule_id, {})[key] = v


def default_profiles_dir() -> Path:
    """The shipped profiles: ``rules/`` at the top of the source tree, else the package's ``profiles/``."""
    here = Path(__file__).resolve()
    top = here.parents[2] / "rules"
    if top.is_dir():
        return top
    return here.parents[1] / "profiles"


def _profile_path(ctx: _Ctx, name: str, base: Path | None, profiles_dir: Path, where: str) -> Path | None:
    """Resolve a profile name or path; None when the implicit default profile is not shipped."""
    if name.endswith(".toml") or "/" in name or "\\" in name:
        p = Path(name)
        if not p.is_absolute() and base is not None:
            p = base / p
        if base is not None:
            # A config comes with the board, maybe from a merge request: its profile may not
            # reach outside the repository it sits in (outside one: outside its own folder).
            home = _repo_root(base.resolve()) or base.resolve()
            if not p.resolve().is_relative_to(home):
                raise ctx.err(where, f"profile path {name!r} leads outside {str(home)!r}; a profile must "
                                     "sit inside the repository of the config (or name a shipped one)")
        if not p.is_file():
            raise ctx.err(where, f"profile file {str(p)!r} not found")
        return p
    if not re.fullmatch(r"[A-Za-z0-9_-]+", name):
        raise ctx.err(where, f"expected a shipped profile name or a path to a .toml file, got {name!r}")
    p = profiles_dir / f"{name}.toml"
    if p.is_file():
        return p
    if name == "default":
        return None
    shipped = sorted(q.stem for q in profiles_dir.glob("*.toml")) if profiles_dir.is_dir() else []
    raise ctx.err(where, f"no shipped profile {name!r}" + (f"; shipped: {', '.join(shipped)}" if shipped else ""))


def _read_toml(ctx: _Ctx, path: Path) -> dict[str, Any]:
    try:
        if path.stat().st_size > MAX_CONFIG_BYTES:
            raise ctx.err(None, f"larger than {MAX_CONFIG_BYTES // 1024} KiB: not a sensorcheck config")
        data = path.read_bytes()
    except OSError as exc:
        raise ctx.err(None, f"cannot read: {exc.strerror or exc}") from None
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = data[: exc.start].count(b"\n") + 1
        raise ctx.err(f"line {line}", "not UTF-8 text (TOML files are UTF-8)") from None
    text = text.removeprefix("\ufeff")  # a byte-order mark some editors write
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        msg = str(exc)
        m = _LINE_RE.search(msg)
        key = f"line {m.group(1)}" if m else None
        msg = _LINE_RE.sub("", msg).strip() if m else msg
        col = f" (column {m.group(2)})" if m else ""
        raise ctx.err(key, f"TOML syntax error: {msg}{col}") from None
    except RecursionError:
        raise ctx.err(None, "TOML nesting too deep") from None
    except ValueError as exc:  # tomllib lets int() refuse integers of more than 4300 digits
        raise ctx.err(None, f"TOML value cannot be read: {exc}") from None


def _load_profile(
    path: Path,
    known_rules: Mapping[str, Mapping[str, type]] | None,
    profiles_dir: Path,
    thresholds: dict[str, dict[str, Any]],
    severities: dict[str, str],
    chain: tuple[Path, ...] = (),
) -> None:
    ctx = _Ctx(str(path))
    resolved = path.resolve()
    if resolved in chain:
        raise ctx.err("profile", "profiles extend each other in a circle")
    data = _read_toml(ctx, path)
    _check_keys(ctx, data, ("profile", "description", "rules"), "")
    if "description" in data:
        _string(ctx, data["description"], "description", nonempty=False)
    if "profile" in data:
        parent = _profile_path(ctx, _string(ctx, data["profile"], "profile"), path.parent, profiles_dir, "profile")
        if parent is not None:
            _load_profile(parent, known_rules, profiles_dir, thresholds, severities, (*chain, resolved))
    if "rules" in data:
        _rules(ctx, data["rules"], known_rules, thresholds, severities)


def _waivers(ctx: _Ctx, value: Any, known_rules: Mapping[str, Mapping[str, type]] | None) -> list[Waiver]:
    if not isinstance(value, list):
        raise ctx.err("waivers", f"expected an array of tables ([[waivers]]), got {_type_name(value)}")
    out: list[Waiver] = []
    for i, wv in enumerate(value):
        where = f"waivers[{i}]"
        w = _table(ctx, wv, where)
        _check_keys(ctx, w, ("rule", "reason", "sensor", "net", "layer", "box_mm", "fingerprint", "expires"), where)
        if "rule" not in w:
            raise ctx.err(f"{where}.rule", "missing: which rule does this waiver waive?")
        rule = _string(ctx, w["rule"], f"{where}.rule")
        if known_rules is not None and rule not in known_rules:
            hint = difflib.get_close_matches(rule, list(known_rules), n=1)
            raise ctx.err(f"{where}.rule", f"unknown rule id '{rule}'" + (f"; did you mean '{hint[0]}'?" if hint else ""))
        if "reason" not in w:
            raise ctx.err(f"{where}.reason", "missing: every waiver needs a reason a reviewer can read")
        reason = _string(ctx, w["reason"], f"{where}.reason")
        sensor = _string(ctx, w["sensor"], f"{where}.sensor") if "sensor" in w else None
        net = _string(ctx, w["net"], f"{where}.net") if "net" in w else None
        layer = _layer_name(ctx, w["layer"], f"{where}.layer") if "layer" in w else None
        box = _box(ctx, w["box_mm"], f"{where}.box_mm") if "box_mm" in w else None
        if box is not None and layer is None:
            raise ctx.err(f"{where}.box_mm", "a box needs its layer: layer = \"top-copper\"")
        fingerprint = _string(ctx, w["fingerprint"], f"{where}.fingerprint") if "fingerprint" in w else None
        if fingerprint is not None and not re.fullmatch(r"[0-9a-f]{8,64}(-[0-9]+)?", fingerprint):
            raise ctx.err(f"{where}.fingerprint", "expected a finding fingerprint as a report prints it (hex digits)")
        if sensor is None and net is None and layer is None and fingerprint is None:
            raise ctx.err(where, "say where the waiver applies: sensor, net, layer (+ box_mm) or fingerprint "
                          "(to turn a rule off everywhere, set its severity = \"off\" under [rules])")
        expires = _iso_date(ctx, w["expires"], f"{where}.expires") if "expires" in w else None
        out.append(Waiver(rule=rule, reason=reason.strip(), sensor=sensor, net=net, layer=layer, box_mm=box,
                          fingerprint=fingerprint, expires=expires, index=i))
    return out


# --------------------------------------------------------------------------- simple sections


def _float_section(ctx: _Ctx, value: Any, section: str, keys: tuple[str, ...], *, positive: bool) -> dict[str, float]:
    t = _table(ctx, value, section)
    _check_keys(ctx, t, keys, section)
    return {
        k: _number(ctx, v, f"{section}.{k}", min_value=0.0, min_exclusive=positive, max_value=1e6)
        for k, v in t.items()
    }


def _limits(ctx: _Ctx, value: Any) -> Limits:
    t = _table(ctx, value, "limits")
    kinds = {f.name: f.type for f in _dc_fields(Limits)}
    _check_keys(ctx, t, tuple(kinds), "limits")
    vals: dict[str, Any] = {}
    for k, v in t.items():
        where = f"limits.{k}"
        if kinds[k] in ("int", int):
            vals[k] = _integer(ctx, v, where, min_value=1)
        else:
            vals[k] = _number(ctx, v, where, min_value=0.0, min_exclusive=True)
    try:
        return Limits().with_overrides(vals)
    except KeyError as exc:  # cannot happen after _check_keys; keep the error tree
        raise ctx.err("limits", f"unknown limit {exc}") from None


def _estimate(ctx: _Ctx, value: Any) -> dict[str, Any]:
    t = _table(ctx, value, "estimate")
    _check_keys(ctx, t, tuple(ESTIMATE_DEFAULTS), "estimate")
    out = dict(ESTIMATE_DEFAULTS)
    if "enabled" in t:
        out["enabled"] = _boolean(ctx, t["enabled"], "estimate.enabled")
    if "max_height_mm" in t:  # the approach starts above its lowest fixed height
        out["max_height_mm"] = _number(ctx, t["max_height_mm"], "estimate.max_height_mm", min_value=LOWEST_APPROACH_MM,
                                       min_exclusive=True, max_value=1000.0)
    if "heights" in t:
        out["heights"] = _integer(ctx, t["heights"], "estimate.heights", min_value=2, max_value=200)
    return out


def _files(ctx: _Ctx, value: Any) -> dict[str, str]:
    t = _table(ctx, value, "files")
    out: dict[str, str] = {}
    for glob, layer in t.items():
        where = _join("files", glob)
        if not glob.strip():
            raise ctx.err(where, "empty file-name pattern")
        out[glob] = _layer_name(ctx, layer, where)
    return out


# --------------------------------------------------------------------------- public


TOP_KEYS = ("profile", "board", "overlay", "stackup", "roles", "sensors", "finger", "controller", "fabrication",
            "esd", "files", "limits", "estimate", "rules", "waivers")


def load_config(
    path: Path | None,
    *,
    known_rules: Mapping[str, Mapping[str, type]] | None = None,
    profiles_dir: Path | None = None,
) -> Config:
    """Read and validate ``path`` (None: the defaults, with the default profile's rule settings).

    ``known_rules`` (rule id -> {parameter: type}, from the rules engine) makes unknown rule
    ids and parameters errors; ``profiles_dir`` is where shipped profiles live (default:
    :func:`default_profiles_dir`).  Raises :class:`ConfigError` for every problem.
    """
    pdir = profiles_dir if profiles_dir is not None else default_profiles_dir()
    ctx = _Ctx(str(path) if path is not None else None)
    data: dict[str, Any] = _read_toml(ctx, Path(path)) if path is not None else {}
    _check_keys(ctx, data, TOP_KEYS, "")

    config = Config(file=str(path) if path is not None else None)
    config.finger = finger_defaults()
    config.estimate = dict(ESTIMATE_DEFAULTS)

    face = "top"
    if "board" in data:
        b = _table(ctx, data["board"], "board")
        _check_keys(ctx, b, ("face", "zone_margin_mm", "copper_layers"), "board")
        if "copper_layers" in b:  # confirms the stack-up where the files announce more layers than were found
            config.copper_layers = _integer(ctx, b["copper_layers"], "board.copper_layers", min_value=1, max_value=64)
        if "face" in b:
            face = _string(ctx, b["face"], "board.face", choices=("top", "bottom"))
        if "zone_margin_mm" in b:
            config.zone_margin_mm = _number(ctx, b["zone_margin_mm"], "board.zone_margin_mm", min_value=0.0,
                                            max_value=100.0)
    config.face = face  # type: ignore[assignment]
    if "overlay" in data:
        config.overlay = _overlay(ctx, data["overlay"], face)
    if "stackup" in data:
        config.stackup_override = _stackup(ctx, data["stackup"])
    if "roles" in data:
        config.roles, config.roles_by_place = _roles(ctx, data["roles"])
    if "sensors" in data:
        config.groups = _groups(ctx, data["sensors"])
    if "finger" in data:
        config.finger = _finger(ctx, data["finger"])
    if "controller" in data:
        config.controller = _float_section(ctx, data["controller"], "controller",
                                           ("max_parasitic_pf", "pin_capacitance_pf", "max_shield_load_pf"),
                                           positive=False)
    if "fabrication" in data:
        config.fabrication = _float_section(ctx, data["fabrication"], "fabrication",
                                            ("min_clearance_mm", "min_width_mm"), positive=True)
    if "esd" in data:
        e = _table(ctx, data["esd"], "esd")
        _check_keys(ctx, e, ("level_kv", "mode"), "esd")
        if "level_kv" in e:
            config.esd_kv = _number(ctx, e["level_kv"], "esd.level_kv", min_value=0.0, min_exclusive=True,
                                    max_value=50.0)
        if "mode" in e:
            config.esd_mode = _string(ctx, e["mode"], "esd.mode", choices=("air", "contact"))  # type: ignore[assignment]
    if "files" in data:
        config.file_overrides = _files(ctx, data["files"])
    if "limits" in data:
        config.limits = _limits(ctx, data["limits"])
    if "estimate" in data:
        config.estimate = _estimate(ctx, data["estimate"])

    # rules: the profile first, then the config's own tables override parameter by parameter
    profile = "default"
    if "profile" in data:
        profile = _string(ctx, data["profile"], "profile")
    config.profile = profile
    base = Path(path).parent if path is not None else None
    ppath = _profile_path(ctx, profile, base, pdir, "profile")
    thresholds: dict[str, dict[str, Any]] = {}
    severities: dict[str, str] = {}
    if ppath is not None:
        _load_profile(ppath, known_rules, pdir, thresholds, severities)
    else:
        config.notes.append("the default rule profile is not shipped here; rules use their own defaults")
    if "rules" in data:
        _rules(ctx, data["rules"], known_rules, thresholds, severities, board_config=True)
    # keep_errors is no rule parameter: it goes beside the severities
    config.keep_errors = {rid: bool(t.pop("keep_errors")) for rid, t in thresholds.items() if "keep_errors" in t}
    config.thresholds = {rid: t for rid, t in thresholds.items() if t}
    config.severities = severities
    if "waivers" in data:
        config.waivers = _waivers(ctx, data["waivers"], known_rules)
    config.notes.extend(ctx.notes)
    return config


def _repo_root(start: Path) -> Path | None:
    for folder in (start, *start.parents):
        if (folder / ".git").exists():
            return folder
    return None


def find_config(input_path: Path) -> Path | None:
    """Find the config for a board: ``sensorcheck.toml`` in PATH (beside it for a .zip or a file),
    else in PATH's parent folders up to the repository root (the first folder holding ``.git``).
    Outside a repository only PATH's own folder is searched.  None when there is none."""
    p = Path(input_path)
    try:
        start = p.resolve() if p.is_dir() else p.resolve().parent
    except OSError:
        return None
    root = _repo_root(start)
    folders = [start]
    if root is not None:
        for folder in start.parents:
            if len(folder.parts) < len(root.parts):
                break
            folders.append(folder)
    for folder in folders:
        candidate = folder / CONFIG_NAME
        if candidate.is_file():
            return candidate
    return None
