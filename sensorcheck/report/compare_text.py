"""The compare report for the terminal, and the number formats every compare report shares.

Touch delta and crosstalk in fF (as every check report writes them), baseline and parasitic in
pF, % change in %, turning point in mm above the overlay surface; every relative change is
``(new - old) / |old|``.  Sensors in order of loss (the biggest first).
"""

from __future__ import annotations

from sensorcheck.compare.changes import METRICS, Change, Comparison, SensorComparison

#: display unit and factor from the stored unit (pF -> fF for the signal-sized numbers)
DISPLAY: dict[str, tuple[str, float]] = {
    "baseline_pf": ("pF", 1.0),
    "touch_delta_pf": ("fF", 1000.0),
    "percent_change": ("%", 1.0),
    "turning_point_mm": ("mm", 1.0),
    "crosstalk_pf": ("fF", 1000.0),
    "parasitic_pf": ("pF", 1.0),
}


def number(key: str, v: float | None) -> str:
    """One value in its display unit, 3 significant digits (``-`` where missing; ``none`` for no turning point)."""
    if v is None:
        return "none" if key == "turning_point_mm" else "-"
    unit, factor = DISPLAY.get(key, ("", 1.0))
    x = v * factor
    text = f"{x:.3g}" if abs(x) >= 1e-3 or x == 0 else f"{x:.2e}"
    if "e" not in text and abs(x) >= 1000:
        text = f"{x:.0f}"
    return f"{text} {unit}".strip()


def relative(c: Change) -> str:
    rel = c.relative_percent
    if rel is None:
        return ""
    return f"{rel:+.1f} %"


def change(key: str, c: Change) -> str:
    """``93.5 fF -> 81.2 fF (-13.2 %)``"""
    rel = relative(c)
    return f"{number(key, c.old)} -> {number(key, c.new)}" + (f" ({rel})" if rel else "")


def loss(s: SensorComparison) -> str:
    if s.loss_percent is None:
        return "-"
    if s.loss_percent > 0:
        return f"{s.loss_percent:.1f} % lost"
    return f"{-s.loss_percent:.1f} % gained"


def title(s: SensorComparison) -> str:
    if s.status == "added":
        return f"{s.name} ({s.kind}): added"
    if s.status == "removed":
        return f"{s.name} ({s.kind}): removed"
    name = f"{s.old_name} -> {s.new_name} (renamed)" if s.renamed else s.name
    return f"{name} ({s.kind})"


def matched(s: SensorComparison) -> str:
    if s.matched_by == "geometry":
        return f"matched by geometry (outlines overlap {100 * s.overlap:.0f} %)"
    if s.matched_by:
        return f"matched by {s.matched_by}"
    return ""


def verdict(cmp: Comparison) -> str:
    gate = cmp.gate
    if gate.failed:
        parts = []
        if gate.losses:
            (worst, pct), more = gate.losses[0], len(gate.losses) - 1
            parts.append(f"{worst} loses {pct:.1f} % of its signal" + (f" (and {more} more sensor(s))" if more else "")
                         + f", more than --fail-on-loss {gate.fail_on_loss_percent:g}")
        if gate.new_failing:
            f, more = gate.new_failing[0], len(gate.new_failing) - 1
            parts.append(f"new {f.severity} {f.rule_id} on {f.sensor or ', '.join(f.sensors) or 'the board'}"
                         + (f" (and {more} more new finding(s))" if more else "")
                         + f", at or above --fail-on-new {gate.fail_on_new}")
        return "FAIL: " + "; ".join(parts)
    asked = []
    if cmp.gate.fail_on_loss_percent is not None:
        asked.append(f"no sensor lost more than {cmp.gate.fail_on_loss_percent:g} %")
    if cmp.gate.fail_on_new is not None:
        asked.append(f"no new finding at or above {cmp.gate.fail_on_new}")
    return "PASS" + (": " + ", ".join(asked) if asked else "")


def counts_line(cmp: Comparison) -> str:
    n = {st: sum(1 for s in cmp.sensors if s.status == st) for st in ("changed", "unchanged", "added", "removed")}
    new = sum(len(s.new_findings) for s in cmp.sensors) + len(cmp.board_new)
    fixed = sum(len(s.fixed_findings) for s in cmp.sensors) + len(cmp.board_fixed)
    return (f"{n['changed']} sensor(s) changed, {n['unchanged']} unchanged, {n['added']} added, {n['removed']} removed, "
            f"{len(cmp.renamed)} renamed; findings: {new} new, {fixed} fixed")


def detail_items(s: SensorComparison) -> list[str]:
    """A changed sensor's details, one plain line each (every compare report lists the same)."""
    out = []
    for key, label, _ in METRICS:
        c = s.values.get(key)
        if c is not None and (c.old is not None or c.new is not None):
            out.append(f"{label}: {change(key, c)}")
    out += [f"crosstalk to {nb}: {change('crosstalk_pf', c)}" for nb, c in s.crosstalk.items() if c.changed]
    out += [f"copper in its zone on {cu.layer}: {cu.added_mm2:.2f} mm2 added, {cu.removed_mm2:.2f} mm2 removed"
            for cu in s.copper]
    out += [f"{tag} {f.severity} {f.rule_id}: {f.message}"
            for tag, items in (("new", s.new_findings), ("fixed", s.fixed_findings)) for f in items]
    if s.unchanged_findings:
        out.append(f"{len(s.unchanged_findings)} finding(s) unchanged")
    out += [f"note: {n}" for n in s.notes]
    return out


def render(cmp: Comparison) -> str:
    lines = [f"sensorcheck compare: {cmp.old_label} -> {cmp.new_label}", counts_line(cmp), verdict(cmp), ""]
    for s in cmp.changed:
        lines.append(f"{title(s)}: {loss(s)}" + (f"; {matched(s)}" if matched(s) else ""))
        lines.extend(f"  {item}" for item in detail_items(s))
        lines.append("")
    unchanged = [s.name for s in cmp.sensors if s.status == "unchanged"]
    if unchanged:
        lines += [f"unchanged: {', '.join(unchanged)}", ""]
    for tag, items in (("new", cmp.board_new), ("fixed", cmp.board_fixed)):
        for f in items:
            lines.append(f"board: {tag} {f.severity} {f.rule_id}: {f.message}")
    lines.extend(cmp.notes)
    lines.extend(cmp.cautions)
    return "\n".join(lines).rstrip() + "\n"
