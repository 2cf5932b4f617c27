"""Terminal report (rich): a summary per sensor, findings grouped by severity and rule, waivers, notes.

Colour only when asked for (a terminal); otherwise plain ASCII text with no
control codes, whatever the environment says (``FORCE_COLOR`` and the like are overridden by
an explicit choice). All text from the board goes into rich ``Text`` objects, never into markup,
and control characters are shown as escapes, so a net name cannot style or rewrite the screen.
"""

from __future__ import annotations

import io
from collections.abc import Sequence
from typing import Literal

from rich.console import Console, Group, RenderableType
from rich.padding import Padding
from rich.table import Table
from rich.text import Text

from sensorcheck.report.common import (
    board_labels,
    estimate_notes,
    finding_sensors,
    fold_notes,
    open_not_checked,
    is_problem,
    not_checked_summary,
    num,
    ordered,
    overlay_lines,
    plural,
    rule_catalogue,
    safe_text,
    sensor_verdict,
    sensors_sorted,
    sig,
    summary_line,
    value_text,
    where_text,
    xy_text,
)
from sensorcheck.findings import NOTHING_CHECKED, Finding, is_not_checked, Result, RuleInfo, SensorSummary
from sensorcheck.report.table import Column, table

_STYLE = {"error": "bold red", "warning": "yellow", "note": "cyan", "waived": "dim", "internal": "bold magenta"}
_LABEL = {"error": "ERROR", "warning": "WARNING", "note": "NOTE"}


def _t(text: object, style: str = "") -> Text:
    return Text(safe_text(text), style=style)


Detail = Literal["quiet", "normal", "verbose"]

#: sensor values the table shows as their own column or once for the board (not per row)
_AREA_KEY = "electrode_area_mm2"
_BOARD_WIDE = frozenset({"overlay_thickness_mm", "overlay_d_eff_mm"})
#: values shown only with --verbose (the electrode count and per-role areas repeat the area)
_DETAIL_KEYS = frozenset({"zone_margin_mm", "electrodes", "transmitter_area_mm2", "receiver_area_mm2", "self_area_mm2"})
_UNITS = ("mm2", "mm", "pf", "ff", "percent", "pct")
_UNIT_LABEL = {"mm2": "mm2", "mm": "mm", "pf": "pF", "ff": "fF", "percent": "%", "pct": "%"}
#: places listed under a grouped finding before "+N more" (all of them with --verbose)
_PLACES_SHOWN = 4


def _label(key: str) -> str:
    """``rx_area_mm2`` -> ``rx area mm2``: a key for people, its unit last."""
    parts = key.split("_")
    if len(parts) > 1 and parts[-1] in _UNITS:
        return " ".join(parts[:-1]) + " " + _UNIT_LABEL[parts[-1]]
    return " ".join(parts)


def _other_values(s: SensorSummary, detail: Detail) -> str:
    skip = {_AREA_KEY, *_BOARD_WIDE} | (set() if detail == "verbose" else set(_DETAIL_KEYS))
    return "; ".join(f"{safe_text(_label(k))} {sig(v) if isinstance(v, (int, float)) and not isinstance(v, bool) else num(v)}"
                     for k, v in sorted(s.values.items()) if k not in skip)


def _est_number(est: dict[str, object] | None, key: str, scale: float = 1.0, signed: bool = False) -> str:
    v = (est or {}).get(key)
    if not isinstance(v, (int, float)) or isinstance(v, bool):
        return "-"
    text = sig(float(v) * scale)
    return f"+{text}" if signed and float(v) > 0 else text


def _turn(est: dict[str, object] | None) -> str:
    if not est or "turning_point_mm" not in est:
        return "-"
    tp = est.get("turning_point_mm")
    return "none" if tp is None else sig(tp)  # type: ignore[arg-type]


def _sensor_table(result: Result, findings: list[Finding], width: int, detail: Detail) -> list[RenderableType]:
    """The compact per-sensor summary: one row a sensor, units in the headers, the verdict first.

    Never cuts a number: when the columns do not fit ``width``, the least needed columns are
    dropped (and the table says which) instead (:mod:`sensorcheck.report.table`).
    """
    sensors = sensors_sorted(result)
    ests = [s.estimate for s in sensors]
    verdicts = [sensor_verdict(f for f in findings if s.name in finding_sensors(f)) for s in sensors]
    area = [s.values.get(_AREA_KEY) for s in sensors]
    cols = [
        Column("sensor", [safe_text(s.name) for s in sensors]),
        Column("verdict", verdicts),
        Column("kind", [safe_text(s.kind) for s in sensors], drop=3),
        Column("layer", [safe_text(s.layer or "-") for s in sensors], drop=5),
        Column("area mm2", [sig(a) if isinstance(a, (int, float)) else "-" for a in area], right=True, drop=4),
        Column("base pF", [_est_number(e, "baseline_pf") for e in ests], right=True, drop=2),
        Column("touch fF", [_est_number(e, "touch_delta_pf", 1000.0, signed=True) for e in ests], right=True, drop=1),
        Column("change %", [_est_number(e, "percent_change", signed=True) for e in ests], right=True, drop=1),
        Column("turns mm", [_turn(e) for e in ests], right=True, drop=2),
        Column("other", [_other_values(s, detail) for s in sensors], drop=6, wrap=True),
    ]
    # a column with nothing in it (no estimates for these sensors) says nothing
    cols = [c for c in cols if c.head in ("sensor", "verdict") or any(x not in ("-", "") for x in c.cells)]
    out: list[RenderableType] = []
    for i, line in enumerate(table(cols, len(sensors), width)):
        if i >= 2 + len(sensors):  # the line saying which columns went: wrapped under the table
            out.append(Padding(Text(line.strip(), style="dim"), (0, 0, 0, 2)))
            continue
        text = Text(line, style="bold" if i == 0 else "")
        if 2 <= i < 2 + len(sensors):
            for word in ("FAIL", "REVIEW", "PASS"):
                text.highlight_regex(rf"(?<=  ){word}\b", _verdict_style(word))
        out.append(text)
    return out


def _verdict_style(text: str) -> str:
    word = text.split(" ", 1)[0]
    return {"FAIL": _STYLE["error"], "REVIEW": _STYLE["warning"], "PASS": "green"}.get(word, "")


def _model_lines(result: Result, detail: Detail = "normal") -> list[Text]:
    """The estimates' model, stated once (numbered when sensors use several), and their notes once."""
    models: dict[str, list[str]] = {}
    notes: dict[str, list[str]] = {}
    for s in sensors_sorted(result):
        if not s.estimate:
            continue
        model = s.estimate.get("model") or s.estimate.get("model_label") or "model not named"
        models.setdefault(safe_text(model), []).append(s.name)
        for n in estimate_notes(s):
            notes.setdefault(n, []).append(s.name)
    out: list[Text] = []
    if not models:
        return out
    if len(models) == 1:
        out.append(Text(f"Estimates (all sensors): {next(iter(models))}. Estimates of a model, not measurements."))
    else:
        out.append(Text("Estimates of a model, not measurements:"))
        for m, names in models.items():
            out.append(Text(f"  {', '.join(safe_text(n) for n in names)}: {m}"))
    for who, n in fold_notes(notes, len(result.sensors), every=detail == "verbose"):
        out.append(Text(f"estimate note ({who}): {n}", style="italic"))
    return out


def _overlay_short(overlay: dict[str, object]) -> str:
    """``overlay: 2 mm over the top face: pmma 2 mm (eps_r 2.8)`` (the sources with --verbose)."""
    parts: list[str] = []
    layers = overlay.get("layers")
    for layer in layers if isinstance(layers, (list, tuple)) else []:
        if isinstance(layer, dict):
            name = safe_text(layer.get("name") or layer.get("material") or "layer")
            t = layer.get("thickness_mm")
            eps = layer.get("epsilon_r")
            parts.append(name + (f" {sig(t)} mm" if isinstance(t, (int, float)) else "")
                         + (f" (eps_r {sig(eps)})" if isinstance(eps, (int, float)) else ""))
    t = overlay.get("thickness_mm")
    face = overlay.get("face")
    head = "overlay:" + (f" {sig(t)} mm" if isinstance(t, (int, float)) else "") + (f" over the {safe_text(face)} face" if face else "")
    return head + (": " + ", ".join(parts) if parts else "")


def _places_text(f: Finding, detail: Detail) -> str | None:
    if f.places <= 1 or not f.related:
        return None
    pts = [xy_text(loc) or where_text(loc) for loc in f.related]
    pts = [p.replace(" mm", "") for p in pts]
    shown = pts if detail == "verbose" else pts[:_PLACES_SHOWN]
    more = len(pts) - len(shown)
    text = f"{f.places} places (mm): " + ", ".join(shown)
    if more:
        text += f", +{more} more (all in --verbose, JSON and SARIF)"
    return text


def _finding_lines(f: Finding, detail: Detail, models: Sequence[str] = ()) -> RenderableType:
    """One finding: a bullet, then the block indented so wrapped lines keep their margin."""
    body = Text()
    sensors = finding_sensors(f)
    if len(sensors) == 1:
        body.append(f"[{safe_text(sensors[0])}] ", style="bold")
    message = f.message
    for model in models:  # the model is stated once above the findings, not in each
        message = message.replace(f"(estimate: {model})", "(estimate of the model above)")
    body.append(safe_text(message))
    rows: list[RenderableType] = [body]
    vt = value_text(f)
    where = Text((f"{vt}; " if vt else "") + f"at {where_text(f.location)}")
    if f.location.file:
        where.append(f"  {safe_text(f.location.file)}{':' + str(f.location.line) if f.location.line else ''}", style="dim")
    rows.append(Padding(where, (0, 0, 0, 2)))
    places = _places_text(f, detail)
    if places:
        rows.append(Padding(Text(places), (0, 0, 0, 2)))
    if f.fix:
        rows.append(Padding(Text(f"fix: {safe_text(f.fix)}"), (0, 0, 0, 2)))
    if detail == "verbose":
        extra = []
        if f.nets:
            extra.append(f"nets {safe_text(', '.join(f.nets))}")
        if f.fingerprint:
            extra.append(f"fingerprint {safe_text(f.fingerprint)}")
        if f.reference:
            extra.append(f"see {safe_text(f.reference)}")
        if extra:
            rows.append(Padding(Text("  ".join(extra), style="dim"), (0, 0, 0, 2)))
    grid = Table.grid(padding=0)
    grid.add_column(width=4, no_wrap=True)
    grid.add_column(overflow="fold")
    grid.add_row(Text("  - "), Group(*rows))
    return grid


def _findings_block(findings: list[Finding], catalogue: dict[str, RuleInfo], detail: Detail,
                    models: Sequence[str] = ()) -> list[RenderableType]:
    out: list[RenderableType] = []
    open_findings = [f for f in findings if not f.waived and f.kind == "finding" and not open_not_checked(f)]
    for sev in ("error", "warning", "note"):
        if detail == "quiet" and sev != "error":
            continue
        group = [f for f in open_findings if f.severity == sev]
        if not group:
            continue
        out.append(Text(f"{_LABEL[sev]}S ({len(group)})", style=_STYLE[sev]))
        by_rule: dict[str, list[Finding]] = {}
        for f in group:
            by_rule.setdefault(f.rule_id, []).append(f)
        for rule_id in sorted(by_rule):
            title = catalogue[rule_id].title if rule_id in catalogue else ""
            head = Text(f" {_LABEL[sev]:<7} ", style=_STYLE[sev])
            head.append(safe_text(rule_id), style="bold")
            if title:
                head.append(f"  {safe_text(title)}")
            out.append(head)
            out.extend(_finding_lines(f, detail, models) for f in by_rule[rule_id])
        out.append(Text(""))
    skipped = not_checked_summary(findings)
    if skipped is not None and detail != "quiet":
        rules, reasons = skipped
        line = Text(f"NOT CHECKED ({plural(len(rules), 'rule')}): ", style=_STYLE["note"])
        line.append(safe_text(" | ".join(reasons)))
        if detail == "verbose":
            line.append(f" [{', '.join(rules)}]", style="dim")
        out += [line, Text("")]
    unread = [f for f in findings if f.kind == "input-error" and not f.waived and f.rule_id != NOTHING_CHECKED]
    if unread:
        out.append(Text(f"INPUT ERRORS ({len(unread)}): these inputs could not be read, so nothing in them was checked", style=_STYLE["internal"]))
        for f in unread:
            line = Text(f"  - {safe_text(f.message)}")
            if f.location.file:
                line.append(f"\n      {safe_text(f.location.file)}{':' + str(f.location.line) if f.location.line else ''}", style="dim")
            out.append(line)
        out.append(Text(""))
    internal = [f for f in findings if is_problem(f) and f.kind != "input-error" and not f.waived]
    if internal:
        out.append(Text(f"INTERNAL ERRORS ({len(internal)}): these checks did not run", style=_STYLE["internal"]))
        for f in internal:
            out.append(Text(f"  - {safe_text(f.rule_id)}: {safe_text(f.message)}"))
        out.append(Text(""))
    waived = [f for f in findings if f.waived]
    if waived and detail != "quiet":
        out.append(Text(f"WAIVED ({len(waived)})", style=_STYLE["waived"]))
        for f in waived:
            w = f.waived_by
            assert w is not None
            line = Text(f"  - {safe_text(f.rule_id)}: {safe_text(f.message)} at {where_text(f.location)}")
            line.append(f"\n      reason: {safe_text(w.reason)}", style="italic")
            if w.expires:
                line.append(f" (until {safe_text(w.expires)})")
            out.append(line)
        out.append(Text(""))
    if not findings:
        out.append(Text("No findings.", style="green"))
    return out


def _board(result: Result, label: str, catalogue: dict[str, RuleInfo], fancy: bool, width: int,
           detail: Detail) -> list[RenderableType]:
    findings = ordered(result.findings)
    head = Text(f"Board {safe_text(label)}", style="bold underline")
    head.append(f"  ({safe_text(result.source)})", style="")
    parts: list[RenderableType] = [head]
    ran = len(set(result.rules_run))  # the rules that measured
    blind = len({f.rule_id for f in findings if is_not_checked(f)} - set(result.rules_run))
    counted = f"{ran} rule{'s' if ran != 1 else ''} measured" + (f", {blind} not checked" if blind else "")
    verdict = sensor_verdict(findings).split(" ", 1)[0]
    summary = Text(f"{verdict}: {summary_line(findings)}; {counted}", style="bold")
    # a check that checked nothing says so first, with what to do (the init hint)
    nothing = [f for f in findings if f.rule_id == NOTHING_CHECKED]
    for f in nothing:
        parts.append(Text(f"NOTHING CHECKED: {safe_text(f.message)}", style=_STYLE["internal"]))
    if detail == "quiet":
        return [*parts, summary, *_findings_block(findings, catalogue, detail)]
    cfg = safe_text(result.config_file) if result.config_file else "none found, defaults applied"
    info = Text(f"config: {cfg}   sensorcheck {safe_text(result.tool_version)}")
    if result.timestamp:
        info.append(f"   {safe_text(result.timestamp)}")
    parts.append(info)
    if detail == "verbose":
        for i, line in enumerate(overlay_lines(result.overlay)):
            parts.append(Text(("overlay: " if i == 0 else "         ") + line))
    elif result.overlay:
        parts.append(Text(_overlay_short(result.overlay)))
    parts.append(Text(""))
    if result.sensors:
        n = len(result.sensors)
        parts.append(Text(f"Sensors ({n})", style="bold"))
        parts += _sensor_table(result, findings, width, detail)
        parts += [Padding(t, (0, 0, 0, 2)) for t in _model_lines(result, detail)]
        if detail == "verbose":
            for s in sensors_sorted(result):
                parts.append(Text(f"  {safe_text(s.name)}: nets {safe_text(', '.join(s.nets)) or '-'}", style="dim"))
    else:
        parts.append(Text("No sensors recognised."))
    parts.append(Text(""))
    models = sorted({str(s.estimate.get("model")) for s in result.sensors if s.estimate and s.estimate.get("model")})
    parts += _findings_block(findings, catalogue, detail, models if detail != "verbose" else ())
    if result.notes:
        parts.append(Text("Notes", style="bold"))
        parts += [Text(f"  - {safe_text(n)}") for n in result.notes]
        parts.append(Text(""))
    parts.append(summary)
    return parts


def render(results: Sequence[Result], *, color: bool = False, width: int = 100, detail: Detail = "normal") -> str:
    """The terminal report as a string; ANSI styles only when ``color``.

    Per board: a summary per sensor first (verdict and the numbers that matter, the estimates'
    model once), then the findings grouped by severity and rule (a finding of several places
    lists them), the rules that could not run on one line, waivers and notes.  ``detail``:
    "quiet" (the verdict and the errors), "normal", "verbose" (every place, nets, fingerprints).
    """
    buf = io.StringIO()
    console = Console(
        file=buf,
        width=width,
        force_terminal=color,
        color_system="standard" if color else None,
        no_color=not color,
        highlight=False,
        markup=False,
        emoji=False,
        legacy_windows=False,
        force_jupyter=False,
        force_interactive=False,
        soft_wrap=False,
    )
    catalogue = rule_catalogue(results)
    parts: list[RenderableType] = []
    for i, (result, label) in enumerate(zip(results, board_labels(results), strict=True)):
        if i:
            parts.append(Text("-" * min(width, 60)))
        parts += _board(result, label, catalogue, color, width, detail)
    if len(results) > 1:
        parts.append(Text(""))
        parts.append(Text(f"All {len(results)} boards: {summary_line(f for r in results for f in r.findings)}", style="bold"))
    cautions = list(dict.fromkeys(c for r in results for c in r.cautions))
    if cautions:
        parts.append(Text(""))
        parts += [Text(f"Caution: {safe_text(c)}", style="italic") for c in cautions]
    console.print(Group(*parts))
    text = buf.getvalue()
    # rich pads lines to the width in some layouts; trailing spaces carry nothing.
    return "\n".join(line.rstrip() for line in text.split("\n"))
