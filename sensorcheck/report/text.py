"""Terminal report (rich): per-sensor numbers, findings grouped by severity and rule, waivers, notes.

Colour and box drawing only when asked for (a terminal); otherwise plain ASCII text with no
control codes, whatever the environment says (``FORCE_COLOR`` and the like are overridden by
an explicit choice). All text from the board goes into rich ``Text`` objects, never into markup,
and control characters are shown as escapes, so a net name cannot style or rewrite the screen.
"""

from __future__ import annotations

import io
from collections.abc import Sequence

from rich import box
from rich.console import Console, Group, RenderableType
from rich.padding import Padding
from rich.table import Table
from rich.text import Text

from sensorcheck.report.common import (
    board_labels,
    estimate_notes,
    is_problem,
    num,
    ordered,
    overlay_lines,
    rule_catalogue,
    safe_text,
    sensor_verdict,
    sensors_sorted,
    summary_line,
    value_text,
    where_text,
)
from sensorcheck.findings import Finding, Result, RuleInfo, SensorSummary

_STYLE = {"error": "bold red", "warning": "yellow", "note": "cyan", "waived": "dim", "internal": "bold magenta"}
_LABEL = {"error": "ERROR", "warning": "WARNING", "note": "NOTE"}


def _t(text: object, style: str = "") -> Text:
    return Text(safe_text(text), style=style)


def _values_text(s: SensorSummary) -> Text:
    parts = [f"{safe_text(k)} = {num(v)}" for k, v in sorted(s.values.items())]
    return Text("\n".join(parts) if parts else "-")


def _estimate_text(s: SensorSummary) -> Text:
    est = s.estimate
    if not est:
        return Text("-")
    model = est.get("model") or est.get("model_label") or "model not named"
    scalars = [
        f"{safe_text(k)} = {num(v)}"
        for k, v in sorted(est.items())
        if k not in ("model", "model_label") and isinstance(v, (int, float, str)) and not isinstance(v, bool)
    ]
    return Text("\n".join([f"model: {safe_text(model)}", *scalars]))


def _sensor_table(result: Result, fancy: bool, findings: list[Finding]) -> Table:
    table = Table(
        title="Sensors",
        title_justify="left",
        box=box.ROUNDED if fancy else box.ASCII2,
        show_lines=False,
        expand=False,
    )
    for col in ("Sensor", "Nets", "Key numbers", "Estimate", "Result"):
        table.add_column(col, overflow="fold", no_wrap=col in ("Key numbers", "Result"), min_width=12 if col == "Sensor" else None)
    for s in sensors_sorted(result):
        name = _t(s.name, "bold")
        name.append(f"\n{safe_text(s.kind)}\n{safe_text(s.layer or '-')}", style="")
        table.add_row(
            name,
            Text("\n".join(safe_text(n) for n in s.nets) or "-"),
            _values_text(s),
            _estimate_text(s),
            _verdict(sensor_verdict(f for f in findings if f.sensor == s.name)),
        )
    return table


def _verdict(text: str) -> Text:
    style = {"FAIL": _STYLE["error"], "REVIEW": _STYLE["warning"], "PASS": "green"}[text.split(" ", 1)[0]]
    word, _, rest = text.partition(" (")
    return Text("\n".join([word, *rest.rstrip(")").split(", ")]) if rest else word, style=style)


def _finding_lines(f: Finding) -> RenderableType:
    """One finding: a bullet, then the block indented so wrapped lines keep their margin."""
    body = Text()
    if f.sensor:
        body.append(f"[{safe_text(f.sensor)}] ", style="bold")
    body.append(safe_text(f.message))
    vt = value_text(f)
    if vt:
        body.append(f" ({vt})")
    where = Text(f"at {where_text(f.location)}")
    if f.location.file:
        where.append(f"  {safe_text(f.location.file)}{':' + str(f.location.line) if f.location.line else ''}", style="dim")
    extra = []
    if f.nets:
        extra.append(f"nets {safe_text(', '.join(f.nets))}")
    if f.fingerprint:
        extra.append(f"fingerprint {safe_text(f.fingerprint)}")
    rows: list[RenderableType] = [body, Padding(where, (0, 0, 0, 2))]
    if extra:
        rows.append(Padding(Text("  ".join(extra), style="dim"), (0, 0, 0, 2)))
    grid = Table.grid(padding=0)
    grid.add_column(width=4, no_wrap=True)
    grid.add_column(overflow="fold")
    grid.add_row(Text("  - "), Group(*rows))
    return grid


def _findings_block(findings: list[Finding], catalogue: dict[str, RuleInfo]) -> list[RenderableType]:
    out: list[RenderableType] = []
    open_findings = [f for f in findings if not f.waived and f.kind == "finding"]
    for sev in ("error", "warning", "note"):
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
            out.extend(_finding_lines(f) for f in by_rule[rule_id])
        out.append(Text(""))
    unread = [f for f in findings if f.kind == "input-error" and not f.waived]
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
    if waived:
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


def _board(result: Result, label: str, catalogue: dict[str, RuleInfo], fancy: bool) -> list[RenderableType]:
    findings = ordered(result.findings)
    head = Text(f"Board {safe_text(label)}", style="bold underline")
    head.append(f"  ({safe_text(result.source)})", style="")
    parts: list[RenderableType] = [head]
    cfg = safe_text(result.config_file) if result.config_file else "none found, defaults applied"
    info = Text(f"config: {cfg}   sensorcheck {safe_text(result.tool_version)}")
    if result.timestamp:
        info.append(f"   {safe_text(result.timestamp)}")
    parts.append(info)
    for i, line in enumerate(overlay_lines(result.overlay)):
        parts.append(Text(("overlay: " if i == 0 else "         ") + line))
    parts.append(Text(""))
    if result.sensors:
        parts.append(_sensor_table(result, fancy, findings))
        for s in sensors_sorted(result):
            for note in estimate_notes(s):
                parts.append(Text(f"  {safe_text(s.name)} estimate: {safe_text(note)}", style="italic"))
    else:
        parts.append(Text("No sensors recognised."))
    parts.append(Text(""))
    parts += _findings_block(findings, catalogue)
    if result.notes:
        parts.append(Text("Notes", style="bold"))
        parts += [Text(f"  - {safe_text(n)}") for n in result.notes]
        parts.append(Text(""))
    ran = len(set(result.rules_run))  # the rules that measured
    blind = len({f.rule_id for f in result.findings if f.kind == "finding" and f.severity == "note"
                 and f.message.startswith("not checked")} - set(result.rules_run))
    counted = f"{ran} rule{'s' if ran != 1 else ''} measured" + (f", {blind} not checked" if blind else "")
    parts.append(Text(f"{summary_line(findings)}; {counted}", style="bold"))
    return parts


def render(results: Sequence[Result], *, color: bool = False, width: int = 100) -> str:
    """The terminal report as a string; ANSI styles and rounded boxes only when ``color``."""
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
        parts += _board(result, label, catalogue, color)
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
