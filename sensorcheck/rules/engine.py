"""The rule engine: the registry, parameters and profiles, waivers, and running the rules.

A rule is a small class (see :class:`Rule`) declared in its family module beside its check:

* ``id``: a readable, stable id of our own, ``<family>.<kebab-name>``;
* ``title`` and a docstring with the same headings for every rule (:data:`DOC_HEADINGS`);
* ``params``: typed parameters, units in their names, each default with its source class;
* ``default_severity``; ``needs``: the inputs it cannot work without;
* ``check(design, estimates, params) -> Iterable[Finding]``.

The engine applies, in this order: rule defaults < rule profile (``rules/<profile>.toml`` or a
path) < the config's ``[rules."<id>"]`` tables.  A severity of ``"off"`` disables a rule; any other
severity set in a ``[rules."<id>"]`` table replaces the severity of the findings a rule yields at
its default severity AND caps every finding of the rule: ``severity = "note"`` never gives an
error.  A table may opt out of the cap for the hard cases a rule raises on purpose (solid ground
close to a sensor, an aggressor on top of one) with ``keep_errors = true``; the shipped default
profile does so, so that an unchanged configuration keeps them.  A rule
whose inputs are missing yields ONE note saying what is missing and how to give it.  A rule that
raises becomes an internal-error finding; the other rules still run.  Waivers are applied to
each place, then findings of one rule that share a cause are merged into one finding listing its
places (:func:`group_by_cause`).  Every finding gets the direction of its limit, the rule's fix in
one line and its catalogue reference.

The registry is an immutable tuple of rule classes collected from the family modules that
:mod:`sensorcheck.rules.catalogue` lists: no global mutable state.  The family modules import
:mod:`sensorcheck.rules.base` (``Rule``, ``Param``), never this module, so there is no import loop.
"""

from __future__ import annotations

import datetime as _dt
import fnmatch
import json
import tomllib
import math
import traceback
from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any, Literal

from sensorcheck.errors import ConfigError, SensorcheckError
from sensorcheck.design.model import readable
from sensorcheck.findings import (
    SEVERITY_ORDER,
    is_not_checked,
    Severity,
    Finding,
    Location,
    RuleInfo,
    Waiver,
    assign_fingerprints,
    fingerprint_for,
    sort_key,
)
from sensorcheck.rules.base import (
    DOC_HEADINGS,
    HOW_TO_GIVE,
    MissingInput,
    Rule,
    RunCache,
    doc_sections,
    missing_note,
    rule_doc,
)
from sensorcheck.rules.catalogue import FAMILIES

if TYPE_CHECKING:
    from sensorcheck.design.model import Config, Design
    from sensorcheck.physics.estimate import SensorEstimate

SeverityOrOff = Literal["error", "warning", "note", "off"]
Progress = Callable[[str], None]

# --------------------------------------------------------------------------- registry


class WaiverExpired(Rule):
    """A waiver in the config has passed its expiry date.

    What it checks:
        Each waiver with an ``expires`` date before today.
    Why it matters:
        A waiver records a decision a person took for a reason; an expired one must be looked at
        again, so it stops waiving and the findings it covered come back.
    Known limitations:
        "Today" is the date of the machine running the check (or the config's date for tests).
    Example:
        ``expires = 2025-01-31`` checked on 2025-02-01.
    Fix:
        Renew the waiver with a new date and reason, or fix the layout and remove the waiver.
    Parameters:
        None.
    References:
        Our own policy.
    """

    id = "waiver.expired"
    title = "Expired waiver"
    default_severity = "note"
    engine_only = True


class WaiverUnused(Rule):
    """A waiver in the config matched no finding.

    What it checks:
        Each waiver that is not expired and matched no finding of its rule in this run.
    Why it matters:
        A stale waiver hides nothing today but may hide a new problem tomorrow at the same place;
        a mistyped rule id or net name waives nothing at all.
    Known limitations:
        A waiver for a rule that is switched off in the profile also matches nothing.
    Example:
        ``rule = "gap.tx-rx-vs-overlay", sensor = "K9"`` when K9 has no such finding.
    Fix:
        Remove the waiver, or correct its rule id and place.
    Parameters:
        None.
    References:
        Our own policy.
    """

    id = "waiver.unused"
    title = "Waiver matched nothing"
    default_severity = "note"
    engine_only = True


class EstimateUnavailable(Rule):
    """The field solver could not estimate a sensor.

    What it checks:
        Each sensor the field solver was asked to estimate and could not (a model it cannot
        build, a limit on the mesh it would pass, copper with no coupling in the window).
    Why it matters:
        The rules that judge the signal (turnaround, touch floor, parasitic limit) and the
        estimates that decide the physical rules then fall back to geometry for that sensor: its
        touch signal is not known before a prototype.
    Known limitations:
        Emitted by the check, not by a rule of its own; estimates off (``--no-estimate``) give no
        finding here (the signal rules then say once that no estimates were asked for).
    Example:
        A 3 000-panel matrix window above ``max_mesh_panels``.
    Fix:
        Measure the sensor's touch signal on a prototype, or raise the limit the message names.
    Parameters:
        None.
    References:
        Our own policy: a check that could not be made is said, never passed silently.
    """

    id = "estimate.unavailable"
    title = "No field-solver estimate for a sensor"
    default_severity = "warning"
    engine_only = True


def _family_modules() -> tuple[Any, ...]:
    return FAMILIES


def registry() -> dict[str, type[Rule]]:
    """Every rule class by id, in catalogue order (families, then declaration order)."""
    out: dict[str, type[Rule]] = {}
    for mod in _family_modules():
        for cls in mod.RULES:
            if cls.id in out:
                raise RuntimeError(f"duplicate rule id {cls.id}")
            out[cls.id] = cls
    out[WaiverExpired.id] = WaiverExpired
    out[WaiverUnused.id] = WaiverUnused
    out[EstimateUnavailable.id] = EstimateUnavailable
    return out


def known_rules() -> dict[str, dict[str, type]]:
    """Rule id -> parameter name -> type, for config validation (``[rules."<id>"]`` tables)."""
    return {rid: {name: p.type for name, p in cls.params.items()} for rid, cls in registry().items()}


def catalogue() -> list[RuleInfo]:
    """The catalogue entries of every rule (what SARIF, JUnit and the docs print)."""
    return [
        RuleInfo(
            id=cls.id,
            title=cls.title,
            family=cls.family(),
            default_severity=cls.default_severity,
            doc=rule_doc(cls),
            parameters={name: (p.default, p.unit, p.source) for name, p in cls.params.items()},
        )
        for cls in registry().values()
    ]


# --------------------------------------------------------------------------- parameters and profiles


def _coerce(rule_id: str, name: str, value: Any, want: type, file: str | None, where: str) -> Any:
    key = f"{where}.{name}"
    if want is float and isinstance(value, int) and not isinstance(value, bool):
        return float(value)
    if want is bool and not isinstance(value, bool):
        raise ConfigError(file, key, f"expected true or false, got {value!r}")
    if want in (int, float) and (isinstance(value, bool) or not isinstance(value, want)):
        raise ConfigError(file, key, f"expected a {want.__name__}, got {value!r}")
    if want is str and not isinstance(value, str):
        raise ConfigError(file, key, f"expected a string, got {value!r}")
    if want in (int, float) and value < 0:
        raise ConfigError(file, key, f"expected a value >= 0, got {value!r}")
    return value


#: the opt-in, in a ``[rules."<id>"]`` table, that keeps a rule's hard cases as errors under a
#: lower severity (see the module docstring); not a parameter of the rule
KEEP_ERRORS = "keep_errors"


def validate_rule_table(rule_id: str, table: Mapping[str, Any], file: str | None, where: str) -> tuple[str | None, dict[str, Any]]:
    """Check one ``[rules."<id>"]`` table; return (severity or None, params).  Raises ConfigError."""
    reg = registry()
    if rule_id not in reg:
        close = difflib_close(rule_id, list(reg))
        hint = f" (did you mean {close}?)" if close else ""
        raise ConfigError(file, where, f"unknown rule id {rule_id!r}{hint}; `sensorcheck rules` lists them")
    cls = reg[rule_id]
    severity: str | None = None
    params: dict[str, Any] = {}
    for name, value in table.items():
        if name == "severity":
            if value not in ("error", "warning", "note", "off"):
                raise ConfigError(file, f"{where}.severity", f"expected error, warning, note or off, got {value!r}")
            severity = value
            continue
        if name == KEEP_ERRORS:
            if not isinstance(value, bool):
                raise ConfigError(file, f"{where}.{name}", f"expected true or false, got {value!r}")
            params[name] = value
            continue
        if name not in cls.params:
            known = ", ".join(sorted(cls.params)) or "none"
            raise ConfigError(file, f"{where}.{name}", f"unknown parameter for {rule_id} (known: {known})")
        params[name] = _coerce(rule_id, name, value, cls.params[name].type, file, where)
    return severity, params


def difflib_close(word: str, options: list[str]) -> str | None:
    import difflib

    m = difflib.get_close_matches(word, options, n=1)
    return m[0] if m else None


def profiles_dir() -> Path:
    """Where the shipped profiles live: ``<repo>/rules`` in a checkout, ``sensorcheck/profiles`` when installed."""
    here = Path(__file__).resolve()
    for cand in (here.parents[2] / "rules", here.parents[1] / "profiles"):
        if (cand / "default.toml").is_file():
            return cand
    return here.parents[2] / "rules"


def shipped_profiles() -> list[str]:
    return sorted(p.stem for p in profiles_dir().glob("*.toml"))


def _profile_file(name_or_path: str, base_dir: Path | None) -> Path:
    is_path = name_or_path.endswith(".toml") or "/" in name_or_path or "\\" in name_or_path
    if is_path:
        path = Path(name_or_path)
        if not path.is_absolute() and base_dir is not None:
            path = base_dir / path
    else:
        path = profiles_dir() / f"{name_or_path}.toml"
    if not path.is_file():
        shipped = ", ".join(shipped_profiles()) or "none found"
        raise ConfigError(None, "profile", f"rule profile {name_or_path!r} not found at {path} (shipped: {shipped})")
    return path


def load_profile(name_or_path: str, base_dir: Path | None = None,
                 _chain: tuple[Path, ...] = ()) -> dict[str, tuple[str | None, dict[str, Any]]]:
    """Read a rule profile: rule id -> (severity or None, params).  Raises ConfigError on any problem.

    A profile may start from another (``profile = "strict"`` or a path, relative to itself); its
    own tables then override the parent's, parameter by parameter.
    """
    path = _profile_file(name_or_path, base_dir)
    if path.resolve() in _chain:
        raise ConfigError(str(path), "profile", "profiles extend each other in a circle")
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8"))
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
        raise ConfigError(str(path), None, f"not valid TOML: {exc}") from None
    unknown = set(data) - {"rules", "description", "profile"}
    if unknown:
        raise ConfigError(str(path), sorted(unknown)[0], "unknown key in a rule profile (expected profile, description, rules)")
    out: dict[str, tuple[str | None, dict[str, Any]]] = {}
    if "profile" in data:
        if not isinstance(data["profile"], str):
            raise ConfigError(str(path), "profile", "expected a profile name or a path to a .toml file")
        out = load_profile(data["profile"], path.parent, (*_chain, path.resolve()))
    rules = data.get("rules", {})
    if not isinstance(rules, dict):
        raise ConfigError(str(path), "rules", "expected a table of rule tables")
    for rid, table in rules.items():
        if not isinstance(table, dict):
            raise ConfigError(str(path), f'rules."{rid}"', "expected a table")
        sev, params = validate_rule_table(rid, table, str(path), f'rules."{rid}"')
        old_sev, old_params = out.get(rid, (None, {}))
        out[rid] = (sev or old_sev, {**old_params, **params})
    return out


def severity_cap(rule_cls: type[Rule], severity: SeverityOrOff, params: dict[str, Any]) -> Severity | None:
    """The highest severity a rule's findings may have, or None (no cap); pops ``keep_errors``.

    A severity that differs from the rule's default, or one the board config's own table sets
    (``keep_errors`` is then False unless the table says true), caps every finding; a table with
    ``keep_errors = true`` keeps the rule's hard cases at the severity the rule gives them.
    """
    keep = params.pop(KEEP_ERRORS, None)
    if severity == "off" or keep is True:
        return None
    if keep is False or severity != rule_cls.default_severity:
        return severity  # type: ignore[return-value]
    return None


def effective_settings(config: Config) -> dict[str, tuple[SeverityOrOff, dict[str, Any]]]:
    """Rule id -> (severity or "off", full params) after defaults < profile < config.

    ``params`` may hold ``keep_errors`` (see :func:`severity_cap`), which is not a rule parameter.
    """
    base_dir = Path(config.file).parent if getattr(config, "file", None) else None
    profile = load_profile(config.profile or "default", base_dir)
    out: dict[str, tuple[SeverityOrOff, dict[str, Any]]] = {}
    for rid, cls in registry().items():
        severity: SeverityOrOff = cls.default_severity
        params = {name: p.default for name, p in cls.params.items()}
        if rid in profile:
            sev, prm = profile[rid]
            severity = sev or severity  # type: ignore[assignment]
            params.update(prm)
        cfg_params = config.rule_params(rid)
        for name, value in cfg_params.items():
            if name == KEEP_ERRORS and isinstance(value, bool):
                params[name] = value
                continue
            if name not in cls.params:
                raise ConfigError(config.file, f'rules."{rid}".{name}', f"unknown parameter for {rid}")
            params[name] = _coerce(rid, name, value, cls.params[name].type, config.file, f'rules."{rid}"')
        if rid in config.severities:
            severity = config.severities[rid]  # type: ignore[assignment]
        keep = getattr(config, "keep_errors", {}).get(rid)
        if keep is not None:
            params[KEEP_ERRORS] = keep
        out[rid] = (severity, params)
    for rid in list(config.thresholds) + list(config.severities):
        if rid not in out:
            raise ConfigError(config.file, f'rules."{rid}"', "unknown rule id; `sensorcheck rules` lists them")
    return out


# --------------------------------------------------------------------------- running


@dataclass(slots=True)
class RuleRun:
    """What one run of the rules produced."""

    findings: list[Finding] = field(default_factory=list)
    rules_run: list[str] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)


def _missing_needs(cls: type[Rule], design: Design, estimates: Mapping[str, SensorEstimate] | None) -> list[str]:
    missing: list[str] = []
    config = design.config
    for need in cls.needs:
        if need == "overlay" and config.overlay is None:
            missing.append(need)
        elif need == "sensors" and not design.sensors:
            missing.append(need)
        elif need == "roles" and not design.roles:
            missing.append(need)
        elif need == "stackup" and design.board.stackup is None:
            missing.append(need)
        elif need == "outline" and design.board.outline is None:
            missing.append(need)
        elif need == "max_parasitic_pf" and not config.controller.get("max_parasitic_pf"):
            missing.append(need)
        elif need == "estimates" and estimates is None:
            missing.append(need)
    return missing


def _how_to_give(need: str, design: Design) -> tuple[str, str]:
    """What is missing and how to give it; on a board without net names, roles go by place."""
    what, how = HOW_TO_GIVE[need]
    if need in ("sensors", "roles") and design.board.net_source == "geometry":
        how = ("the board carries no net names: give each sensor's copper by place with [[roles.place]] "
               "(layer, point_mm, role, sensor) in sensorcheck.toml")
    return what, how


def _internal(rule_id: str, exc: BaseException) -> Finding:
    tb = traceback.extract_tb(exc.__traceback__)
    where = f" (at {Path(tb[-1].filename).name}:{tb[-1].lineno})" if tb else ""
    return Finding(
        rule_id=rule_id,
        severity="error",
        message=f"internal error in rule {rule_id}: {type(exc).__name__}: {exc}{where}; the other rules still ran",
        kind="internal-error",
    )


def _parse_date(text: str | None) -> _dt.date | None:
    if text is None:
        return None
    if isinstance(text, _dt.date):
        return text
    return _dt.date.fromisoformat(str(text))


def waiver_matches(w: Waiver, f: Finding, board: str = "") -> bool:
    """Does waiver ``w`` cover finding ``f``?  Every place the waiver names must match."""
    if f.kind != "finding":
        return False
    if not fnmatch.fnmatchcase(f.rule_id, w.rule):
        return False
    if w.fingerprint is not None:
        if w.fingerprint not in (f.fingerprint, fingerprint_for(f, board), fingerprint_for(f, "")):
            return False
    if w.sensor is not None and f.sensor != w.sensor:
        return False
    if w.net is not None and not any(fnmatch.fnmatchcase(n.lower(), w.net.lower()) for n in f.nets):
        return False
    if w.layer is not None and f.location.layer != w.layer:
        return False
    if w.box_mm is not None:
        loc = f.location
        if loc.x_mm is None or loc.y_mm is None:
            return False
        x0, y0, x1, y1 = w.box_mm
        if not (min(x0, x1) <= loc.x_mm <= max(x0, x1) and min(y0, y1) <= loc.y_mm <= max(y0, y1)):
            return False
    return True


def apply_waivers(findings: list[Finding], waivers: Iterable[Waiver], today: _dt.date, board: str = "") -> list[Finding]:
    """Mark waived findings (in place); return the engine's notes about expired and unused waivers."""
    notes: list[Finding] = []
    for w in waivers:
        expires = _parse_date(w.expires)
        label = f"waiver #{w.index + 1} (rule {w.rule})"
        if expires is not None and expires < today:
            hits = [f for f in findings if waiver_matches(w, f, board)]
            notes.append(
                Finding(
                    rule_id=WaiverExpired.id,
                    severity="note",
                    message=(
                        f"{label} expired on {expires.isoformat()} and no longer waives "
                        f"({len(hits)} finding(s) it matched are reported again); renew it with a new "
                        f"date and reason, or remove it. Its reason was: {w.reason}"
                    ),
                    sensor=w.sensor,
                    nets=(w.net,) if w.net else (),
                    location=Location(layer=w.layer, box_mm=w.box_mm),
                )
            )
            continue
        hits = [f for f in findings if f.waived_by is None and waiver_matches(w, f, board)]
        for f in hits:
            f.waived_by = w
        if not hits:
            notes.append(
                Finding(
                    rule_id=WaiverUnused.id,
                    severity="note",
                    message=f"{label} matched no finding in this run; remove it or correct its rule id and place",
                    sensor=w.sensor,
                    nets=(w.net,) if w.net else (),
                    location=Location(layer=w.layer, box_mm=w.box_mm),
                )
            )
    return notes


def _apply_severity(findings: Iterable[Finding], cls: type[Rule], severity: SeverityOrOff,
                    cap: Severity | None) -> None:
    """The configured severity replaces the rule's default one; the cap bounds every finding."""
    for f in findings:
        if f.kind != "finding":
            continue
        if severity != cls.default_severity and f.severity == cls.default_severity:
            f.severity = severity  # type: ignore[assignment]
        if cap is not None and SEVERITY_ORDER[f.severity] > SEVERITY_ORDER[cap]:
            f.severity = cap


def one_line(text: str) -> str:
    """A docstring section as one line: its first sentence, whitespace folded."""
    flat = " ".join(text.split())
    for stop in (". ", "; "):
        head, sep, _ = flat.partition(stop)
        if sep and len(head) >= 20:
            return head + "."
    return flat


def describe(findings: Iterable[Finding]) -> None:
    """Give each finding the direction of its limit, its rule's fix in one line and its reference.

    The direction comes from the rule where it declares one, else from the finding itself: a value
    above its limit was checked against a maximum, one below against a minimum.
    """
    reg = registry()
    for f in findings:
        cls = reg.get(f.rule_id)
        if f.direction is None and f.value is not None and f.limit is not None:
            if cls is not None and cls.limit_direction is not None:
                f.direction = cls.limit_direction
            elif f.value > f.limit:
                f.direction = "max"
            elif f.value < f.limit:
                f.direction = "min"
        if cls is None:
            continue
        secs = doc_sections(cls)
        if f.fix is None and secs.get("Fix"):
            f.fix = one_line(secs["Fix"])
        if f.reference is None:
            refs = one_line(secs.get("References", ""))
            f.reference = f"sensorcheck rules {cls.id}" + (f" ({refs.rstrip('.')})" if refs else "")


def _value_key(f: Finding) -> tuple[Any, ...] | None:
    """The measured number, rounded to 3 significant digits, with its limit and unit; None without one."""
    if f.value is None or f.limit is None or not math.isfinite(f.value):
        return None
    v = float(f"{f.value:.3g}")
    return (v, round(float(f.limit), 6), f.unit, f.direction)


def _worst(members: list[Finding]) -> Finding:
    with_value = [m for m in members if m.value is not None and math.isfinite(m.value)]
    if not with_value:
        return members[0]
    if members[0].direction == "min":
        return min(with_value, key=lambda m: m.value)  # type: ignore[arg-type, return-value]
    return max(with_value, key=lambda m: m.value)  # type: ignore[arg-type, return-value]


def _merge(members: list[Finding]) -> Finding:
    """One finding for several places of one cause: the worst place leads, every place is related."""
    members = sorted(members, key=sort_key)
    worst = _worst(members)
    sensors = tuple(sorted({s for m in members for s in (m.sensors or ((m.sensor,) if m.sensor else ()))}))
    related: list[Location] = []
    seen: set[Location] = set()
    for m in members:
        for loc in (m.location, *m.related):
            if loc not in seen:
                seen.add(loc)
                related.append(loc)
    n = sum(m.places for m in members)
    on = f" on {len(sensors)} sensors ({', '.join(sensors)})" if len(sensors) > 1 else ""
    if len({tuple(sorted(m.nets)) for m in members}) > 1 and len(sensors) <= 1:
        nets = sorted({net for m in members for net in m.nets})
        on += f", nets {', '.join(nets[:6])}" + (f" and {len(nets) - 6} more" if len(nets) > 6 else "")
    lead = worst.message
    if worst.places > 1 and lead.endswith("]") and " places" in lead:
        lead = lead[: lead.rfind(" [")]
    members_fp = tuple(sorted({fp for m in members for fp in (m.members or (m.fingerprint,)) if fp}))
    return Finding(
        rule_id=worst.rule_id,
        severity=worst.severity,
        message=f"{lead} [worst of {n} places{on}]",
        value=worst.value,
        limit=worst.limit,
        unit=worst.unit,
        location=worst.location,
        related=related,
        nets=tuple(sorted({net for m in members for net in m.nets})),
        sensor=sensors[0] if len(sensors) == 1 else None,
        waived_by=worst.waived_by,
        kind=worst.kind,
        review=worst.review,
        direction=worst.direction,
        fix=worst.fix,
        reference=worst.reference,
        places=n,
        sensors=sensors,
        members=members_fp,
    )


#: how the board names a copper island that carries no net name (``board.connectivity``)
UNNAMED_NET_PREFIX = "~n"


def _cause_nets(nets: Iterable[str]) -> tuple[str, ...]:
    """The nets that identify a cause: named nets as they are; the islands of a board without net
    names are one unknown net (a bus cut into islands by the reading is still one bus)."""
    named = sorted({n for n in nets if not n.startswith(UNNAMED_NET_PREFIX)})
    return (*named, "~") if any(n.startswith(UNNAMED_NET_PREFIX) for n in nets) else tuple(named)


def group_by_cause(findings: list[Finding]) -> list[Finding]:
    """Merge the findings of one rule that share a cause into one finding listing its places.

    First the places of one rule on one sensor, layer and set of nets (one bus under a slider,
    one pour in a zone; unnamed copper islands count as one unknown net); then, for rules that
    allow it, the findings of one rule on one layer with the same measured value and limit on
    several sensors (a row of keys at one spacing, the same pour under every key), or with any
    value for a rule that judges one thing per layer (``group_across_sensors = "layer"``).
    Only findings of the same severity and the same waiver merge; errors of a tool (input,
    internal) never do.  A finding alone stays as it was (its
    fingerprint is unchanged).
    """
    reg = registry()
    keep: list[Finding] = []
    rest: list[Finding] = []
    for f in findings:
        (keep if f.kind != "finding" or f.rule_id in (WaiverExpired.id, WaiverUnused.id) else rest).append(f)

    def waiver_key(f: Finding) -> int:
        return id(f.waived_by) if f.waived_by is not None else 0

    buckets: dict[tuple[Any, ...], list[Finding]] = {}
    for f in rest:
        cls = reg.get(f.rule_id)
        nets = _cause_nets(f.nets) if cls is None or cls.cause_includes_nets else ()
        key = (f.rule_id, f.severity, f.sensor, f.location.layer, nets, waiver_key(f))
        buckets.setdefault(key, []).append(f)
    first = [b[0] if len(b) == 1 else _merge(b) for b in buckets.values()]
    buckets = {}
    out: list[Finding] = []
    for f in first:
        cls = reg.get(f.rule_id)
        mode = cls.group_across_sensors if cls is not None else False
        vk = ("layer", _cause_nets(f.nets)) if mode == "layer" else _value_key(f)
        if not mode or vk is None or not (f.sensor or f.sensors):
            out.append(f)
            continue
        buckets.setdefault((f.rule_id, f.severity, f.location.layer, vk, waiver_key(f)), []).append(f)
    for bucket in buckets.values():
        # across sensors only: two findings of one sensor with the same number are two causes
        # (two foreign nets in one zone), so each group holds a sensor at most once
        groups: list[tuple[set[str], list[Finding]]] = []
        for f in bucket:
            mine = set(f.sensors or (f.sensor,))  # type: ignore[arg-type]
            for names, members in groups:
                if not names & mine:
                    names |= mine
                    members.append(f)
                    break
            else:
                groups.append((mine, [f]))
        out += [m[0] if len(m) == 1 else _merge(m) for _, m in groups]
    return keep + out


def run_rules(design: Design, estimates: Mapping[str, SensorEstimate] | None = None, *,
              progress: Progress | None = None, extra: Iterable[Finding] = (),
              group: bool = True) -> RuleRun:
    """Run every enabled rule on ``design``; fingerprint, waive, group and sort the findings.

    ``estimates``: sensor name -> :class:`~sensorcheck.physics.estimate.SensorEstimate`, or None
    when the field solver did not run (rules that need it then say so once).  ``extra``: findings
    of engine-only rules made by the check itself (``estimate.unavailable``): their severity is
    set like any rule's.  ``group``: merge findings of one cause (:func:`group_by_cause`).
    """
    config = design.config
    settings = effective_settings(config)
    reg = registry()
    run = RuleRun()
    est: Mapping[str, SensorEstimate] = estimates if estimates is not None else {}
    active = [rid for rid, cls in reg.items() if not cls.engine_only]
    cache = RunCache()  # per-sensor geometry shared by the rules of this run
    caps = {rid: severity_cap(reg[rid], sev, prm) for rid, (sev, prm) in settings.items()}
    for f in extra:
        sev = settings[f.rule_id][0] if f.rule_id in settings else None
        if sev == "off":
            continue
        if sev is not None:
            _apply_severity([f], reg[f.rule_id], sev, caps[f.rule_id])
        run.findings.append(f)
    for i, rid in enumerate(active):
        cls = reg[rid]
        severity, params = settings[rid]
        if severity == "off":
            run.notes.append(f"rule {rid} is off (profile or config)")
            continue
        if progress is not None:
            progress(f"rule {i + 1}/{len(active)}: {rid}")
        missing = _missing_needs(cls, design, estimates)
        if missing:
            run.findings.append(missing_note(rid, [_how_to_give(m, design) for m in missing]))
            continue
        try:
            rule = cls()
            rule.cache = cache
            produced = list(rule.check(design, est, params))
        except MissingInput as mi:
            run.findings.append(missing_note(rid, [(mi.what, mi.how)]))
            continue
        except Exception as exc:  # noqa: BLE001 - one broken rule must not hide the others
            run.findings.append(_internal(rid, exc))
            continue
        # rules_run lists the rules that measured: not one that only said what it could not check
        if not produced or not all(is_not_checked(f) for f in produced):
            run.rules_run.append(rid)
        for f in produced:
            if f.rule_id != rid:
                f.rule_id = rid
        _apply_severity(produced, cls, severity, caps[rid])
        run.findings.extend(produced)
    board_name = getattr(design.board, "name", "")
    describe(run.findings)
    assign_fingerprints(run.findings, board_name)
    notes = apply_waivers(run.findings, config.waivers, config.today, board_name)
    if group:
        run.findings = group_by_cause(run.findings)
        assign_fingerprints(run.findings, board_name)
        notes = _waive_groups(run.findings, notes, config.waivers, board_name)
    notes = [n for n in notes if settings[n.rule_id][0] != "off"]
    describe(notes)
    run.findings.extend(notes)
    assign_fingerprints(run.findings, board_name)
    for f in run.findings:  # unnamed copper by its readable name (S1.3); nets and fingerprints keep the ids
        f.message = readable(f.message, design.labels)
    run.findings.sort(key=sort_key)
    return run


def _waive_groups(findings: list[Finding], notes: list[Finding], waivers: Iterable[Waiver],
                  board: str) -> list[Finding]:
    """A waiver naming a grouped finding's own fingerprint waives the group (its places had other
    fingerprints, so the first pass found it unused); its "unused" note then goes."""
    out = list(notes)
    for w in waivers:
        if w.fingerprint is None:
            continue
        hits = [f for f in findings if f.places > 1 and f.waived_by is None and waiver_matches(w, f, board)]
        if not hits:
            continue
        for f in hits:
            f.waived_by = w
        label = f"waiver #{w.index + 1} (rule {w.rule})"
        out = [n for n in out if not (n.rule_id == WaiverUnused.id and n.message.startswith(label + " "))]
    return out


# --------------------------------------------------------------------------- catalogue text


def _unit(unit: str) -> str:
    """Units for people: a dimensionless "1" prints as nothing."""
    return "" if unit == "1" else unit


def render_catalogue(fmt: Literal["text", "markdown", "json"] = "text", ids: Iterable[str] = ()) -> str:
    """The rule catalogue, generated from the registry (so the docs cannot drift from the code).

    ``ids``: only these rules (a ConfigError names an unknown id and the closest known one).
    """
    reg = registry()
    wanted = list(ids)
    for rid in wanted:
        if rid not in reg:
            close = difflib_close(rid, list(reg))
            hint = f" (did you mean {close}?)" if close else ""
            raise SensorcheckError(f"unknown rule id {rid!r}{hint}; `sensorcheck rules` lists them")
    if wanted:
        reg = {rid: reg[rid] for rid in dict.fromkeys(wanted)}
    if fmt == "json":
        items = []
        for cls in reg.values():
            items.append(
                {
                    "id": cls.id,
                    "title": cls.title,
                    "family": cls.family(),
                    "default_severity": cls.default_severity,
                    "needs": list(cls.needs),
                    "parameters": {
                        n: {"default": p.default, "unit": p.unit, "source": p.source, "doc": p.doc}
                        for n, p in cls.params.items()
                    },
                    "doc": doc_sections(cls),
                }
            )
        return json.dumps({"rules": items}, indent=2, sort_keys=False) + "\n"
    lines: list[str] = []
    if fmt == "markdown":
        lines += ["# sensorcheck rule catalogue", "", "Generated from the rule registry (`sensorcheck rules --format markdown`).", ""]
        lines += ["| id | title | default severity |", "|---|---|---|"]
        lines += [f"| `{c.id}` | {c.title} | {c.default_severity} |" for c in reg.values()]
        lines.append("")
        for cls in reg.values():
            lines += [f"## `{cls.id}`: {cls.title}", "", f"Default severity: **{cls.default_severity}**."]
            if cls.needs:
                lines.append(f"Needs: {', '.join(cls.needs)}.")
            lines.append("")
            secs = doc_sections(cls)
            for head in DOC_HEADINGS:
                if head == "Parameters" and cls.params:
                    lines += [f"### {head}", "", "| name | default | unit | source class | meaning |", "|---|---|---|---|---|"]
                    lines += [f"| `{n}` | {p.default} | {_unit(p.unit) or '-'} | {p.source} | {p.doc} |"
                              for n, p in cls.params.items()]
                    lines.append("")
                    continue
                lines += [f"### {head}", "", secs.get(head, ""), ""]
        return "\n".join(lines).rstrip() + "\n"
    for cls in reg.values():
        lines.append(f"{cls.id}  [{cls.default_severity}]  {cls.title}")
        secs = doc_sections(cls)
        for head in DOC_HEADINGS:
            if head == "Parameters":
                if cls.params:
                    lines.append("  Parameters:")
                    for n, p in cls.params.items():
                        unit = f" {_unit(p.unit)}" if _unit(p.unit) else ""
                        lines.append(f"    {n} = {p.default}{unit} ({p.source}): {p.doc}")
                else:
                    lines.append("  Parameters: none")
                continue
            body = " ".join(secs.get(head, "").split())
            lines.append(f"  {head}: {body}")
        lines.append("")
    return "\n".join(lines).rstrip() + "\n"
