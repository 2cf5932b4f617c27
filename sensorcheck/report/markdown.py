"""Markdown review checklist (GitHub-flavoured): what a layout reviewer signs off, sensor by sensor.

Per board: a summary line; per sensor its key numbers, the estimate with its model, the
findings on it, and ``- [ ]`` items a reviewer must still confirm by eye or on the prototype
(the sensor's own checklist and each finding's review text); then the rules with pass/fail,
board-level findings, waived findings with their reasons, notes and the cautions.

All text from the board or the config is escaped for CommonMark (backslash before ASCII
punctuation that could start markup, line breaks flattened), so a net named ``<script>`` or
``a|b`` stays plain text and never breaks a table. Suitable for ``$GITHUB_STEP_SUMMARY``: a
checklist longer than a job summary may be (:data:`SUMMARY_LIMIT_BYTES`) is cut at a line, with a
note saying so, and the cautions are always kept.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Sequence

from sensorcheck.report.common import (
    board_labels,
    counts,
    estimate_notes_of,
    estimate_scalars,
    finding_sensors,
    is_problem,
    kind_label,
    num,
    ordered,
    overlay_lines,
    sensor_verdict,
    rule_catalogue,
    rule_ids_run,
    safe_text,
    sensors_sorted,
    summary_line,
    value_text,
    where_text,
)
from sensorcheck.findings import Finding, Result, RuleInfo, SensorSummary

# CommonMark 0.31 section 2.4: any ASCII punctuation may be backslash-escaped. These can open
# markup (emphasis, links, HTML, code, tables, strikethrough, math, entities, autolinks).
_MD_SPECIAL = set("\\`*_{}[]<>#!|~&$")

#: GitHub's job summary takes at most 1024 KiB per step and drops a larger one whole (the runner
#: says "supports content up to a size of 1024k"); we stay a little below for what the step adds.
SUMMARY_LIMIT_BYTES = 1_000_000


def md(text: object) -> str:
    """Text as inert inline Markdown: one line, markup characters backslash-escaped."""
    s = safe_text(text)
    return "".join("\\" + ch if ch in _MD_SPECIAL else ch for ch in s)


def _cell(text: object) -> str:
    return md(text) if str(text) else " "


def _table(header: Sequence[str], rows: Iterable[Sequence[str]]) -> list[str]:
    out = ["| " + " | ".join(header) + " |", "|" + "|".join("---" for _ in header) + "|"]
    out += ["| " + " | ".join(row) + " |" for row in rows]
    return out


def _finding_row(f: Finding) -> list[str]:
    return [
        md(f.rule_id),
        kind_label(f) if is_problem(f) else f.severity,
        md(f.message),
        md(value_text(f) or ""),
        md(where_text(f.location) + (f" (+{f.places - 1} more places)" if f.places > 1 else "")),
        md(f.fix or "") + (f" (`{f.rule_id}`: see `sensorcheck rules {f.rule_id}`)" if f.reference and _PLAIN_ID.fullmatch(f.rule_id) else ""),
        f"`{f.fingerprint}`" if _PLAIN_ID.fullmatch(f.fingerprint) else md(f.fingerprint),
    ]


_PLAIN_ID = re.compile(r"[0-9A-Za-z._-]+")
_FINDING_HEAD = ["Rule", "Severity", "Finding", "Measured / limit", "Where", "Fix", "Fingerprint"]


def _estimate_lines(estimate: dict[str, object] | None) -> list[str]:
    if not estimate:
        return []
    model = estimate.get("model") or estimate.get("model_label") or "model not named"
    text = ", ".join(f"{md(label)} {md(value)}{(' ' + unit) if unit else ''}"
                     for label, value, unit in estimate_scalars(estimate))
    out = [f"Estimate (field solver, {md(model)}; an estimate, not a measurement): {text or 'no scalar values'}", ""]
    notes = estimate_notes_of(estimate)
    if notes:
        out += [f"- {md(n)}" for n in notes] + [""]
    return out


def _sensor_section(s: SensorSummary, findings: list[Finding], rules_run: list[str]) -> list[str]:
    out = [f"### Sensor {md(s.name)} ({md(s.kind)}{', ' + md(s.layer) if s.layer else ''})", ""]
    out += [f"**Result: {sensor_verdict(findings)}**", ""]
    if s.nets:
        out += ["Nets: " + ", ".join(md(n) for n in s.nets), ""]
    if s.values:
        out += _table(["Quantity", "Value"], ([md(k), md(num(v))] for k, v in sorted(s.values.items())))
        out.append("")
    out += _estimate_lines(s.estimate)
    mine = [f for f in findings if not f.waived]
    if mine:
        out += _table(_FINDING_HEAD, (_finding_row(f) for f in mine))
    else:
        out.append("No open findings on this sensor.")
    out.append("")
    hit = {f.rule_id for f in findings}
    quiet = [r for r in rules_run if r not in hit]
    if quiet:
        out += [f"Found nothing on this sensor ({len(quiet)} rules): " + ", ".join(md(r) for r in quiet), ""]
    items = list(dict.fromkeys([*s.checklist, *(f.review for f in findings if f.review)]))
    out.append("Reviewer checks:")
    out.append("")
    out += [f"- [ ] {md(item)}" for item in items] or ["- [ ] Nothing specific listed: confirm the layout by eye."]
    out.append("")
    return out


def _rule_status(rule_id: str, findings: list[Finding]) -> str:
    mine = [f for f in findings if f.rule_id == rule_id]
    if not mine:
        return "pass"
    c = counts(mine)
    parts = []
    if c["input"]:
        parts.append("input not read")
    if c["internal"]:
        parts.append("did not run (internal error)")
    for key in ("error", "warning", "note"):
        if c[key]:
            parts.append(f"{c[key]} {key}{'s' if c[key] > 1 else ''}")
    if c["waived"]:
        parts.append(f"{c['waived']} waived")
    verdict = "fail" if c["error"] or c["internal"] or c["input"] else ("waived" if not (c["warning"] or c["note"]) else "pass with remarks")
    return f"{verdict}: {', '.join(parts)}"


def _board_section(result: Result, label: str, catalogue: dict[str, RuleInfo]) -> list[str]:
    findings = ordered(result.findings)
    out = [f"## Board {md(label)}", ""]
    out.append(f"Source: {md(result.source)}  ")
    out.append(f"Config: {md(result.config_file) if result.config_file else 'none found, defaults applied'}  ")
    out.append(f"sensorcheck {md(result.tool_version)}{'  ' if result.timestamp else ''}")
    if result.timestamp:
        out.append(f"Checked: {md(result.timestamp)}")
    ov = overlay_lines(result.overlay)
    if ov:
        out += ["", "Overlay (as configured):", ""] + [f"- {md(line)}" for line in ov]
    out += ["", f"**Summary:** {summary_line(findings)}", ""]
    for s in sensors_sorted(result):
        out += _sensor_section(s, [f for f in findings if s.name in finding_sensors(f)], sorted(set(result.rules_run)))
    names = {s.name for s in result.sensors}
    loose = [f for f in findings if not f.waived and not any(n in names for n in finding_sensors(f))]
    if loose:
        out += ["### Findings not tied to a sensor", ""]
        out += _table(_FINDING_HEAD, (_finding_row(f) for f in loose))
        reviews = list(dict.fromkeys(f.review for f in loose if f.review))
        if reviews:
            out += ["", "Reviewer checks:", ""] + [f"- [ ] {md(r)}" for r in reviews]
        out.append("")
    out += ["### Rules", ""]
    out += _table(
        ["Rule", "Title", "Result"],
        ([md(rid), md(catalogue[rid].title) if rid in catalogue else " ", md(_rule_status(rid, findings))] for rid in rule_ids_run(result)),
    )
    out.append("")
    waived = [f for f in findings if f.waived]
    if waived:
        out += ["### Waived findings", ""]
        rows = []
        for f in waived:
            w = f.waived_by
            assert w is not None
            rows.append([md(f.rule_id), md(f.message), md(w.reason), md(w.expires or "no expiry"), md(where_text(f.location))])
        out += _table(["Rule", "Finding", "Reason", "Expires", "Where"], rows)
        out.append("")
    if result.notes:
        out += ["### Notes", ""] + [f"- {md(n)}" for n in result.notes] + [""]
    return out


def render(results: Sequence[Result], *, limit_bytes: int = SUMMARY_LIMIT_BYTES) -> str:
    """The checklist for a batch of results, ending in one newline, at most ``limit_bytes`` of UTF-8."""
    catalogue = rule_catalogue(results)
    multi = len(results) > 1
    out = ["# sensorcheck review checklist", ""]
    if multi:
        out += [f"{len(results)} boards. " + summary_line(f for r in results for f in r.findings), ""]
    for result, label in zip(results, board_labels(results), strict=True):
        out += _board_section(result, label, catalogue)
    cautions = list(dict.fromkeys(c for r in results for c in r.cautions))
    tail = ["## Before you rely on this", ""] + [f"- {md(c)}" for c in cautions] if cautions else []
    return _fit(out, tail, limit_bytes)


def _fit(body: list[str], tail: list[str], limit_bytes: int) -> str:
    """``body`` then ``tail`` as text; where that is over ``limit_bytes``, ``body`` is cut at a line
    and a note says how much was left out (``tail``, the cautions, is always kept)."""
    while body and body[-1] == "":
        body.pop()
    full = "\n".join([*body, "", *tail] if tail else body) + "\n"
    size = len(full.encode("utf-8"))
    if size <= limit_bytes:
        return full
    kept: list[str] = []
    used = len("\n".join(tail).encode("utf-8")) + 400  # the tail and the note
    for line in body:
        n = len(line.encode("utf-8")) + 1
        if used + n > limit_bytes:
            break
        kept.append(line)
        used += n
    note = (f"> **Cut here:** this checklist is {size // 1024} KiB, more than a CI job summary takes "
            f"({limit_bytes // 1000} kB here); {len(body) - len(kept)} more lines are left out. "
            "The json and html reports hold every finding.")
    return "\n".join([*kept, "", note, "", *tail]) + "\n"
