"""The compare report as a merge-request comment (GitHub- and GitLab-flavoured Markdown).

First the verdict of the gate and one table of the sensors that changed, the biggest loss first;
then one collapsible ``<details>`` block per changed sensor (every number old -> new, the copper
changed in its zone, findings new and fixed); then the unchanged sensors by name, notes and the
caution.  Text from the boards is escaped (:func:`sensorcheck.report.markdown.md`).

Size: a comment longer than the platform takes is refused by it, so the comment is cut to
:data:`GITHUB_COMMENT_LIMIT` characters (GitHub's limit on a comment body, the smaller of the
two, so one comment fits both) or :data:`GITLAB_NOTE_LIMIT`; details blocks are dropped whole
from the smallest loss up, then table rows, and a note says what was left out.  The caution is
always kept.
"""

from __future__ import annotations

from sensorcheck.compare.changes import Comparison, SensorComparison
from sensorcheck.report.compare_text import counts_line, detail_items, loss, matched, number, relative, title, verdict
from sensorcheck.report.markdown import _table, md

#: GitHub: "Body is too long (maximum is 65536 characters)" for an issue or pull-request comment
GITHUB_COMMENT_LIMIT = 65_536
#: GitLab: a note (merge-request comment) holds at most 1 000 000 characters
GITLAB_NOTE_LIMIT = 1_000_000
LIMITS = {"github": GITHUB_COMMENT_LIMIT, "gitlab": GITLAB_NOTE_LIMIT}

HEADER = ("sensor", "signal", "touch delta", "% change", "turning point", "parasitic", "crosstalk", "findings")


def _cell(key: str, s: SensorComparison) -> str:
    c = s.values.get(key)
    if c is None or (c.old is None and c.new is None):
        return "-"
    rel = relative(c)
    if s.status == "added":
        return md(number(key, c.new))
    if s.status == "removed":
        return md(number(key, c.old))
    text = f"{number(key, c.old)} → {number(key, c.new)}"
    return md(text) + (f" ({md(rel)})" if rel and c.changed else "")


def _findings_cell(s: SensorComparison) -> str:
    parts = []
    if s.new_findings:
        worst = max(s.new_findings, key=lambda f: {"error": 2, "warning": 1}.get(f.severity, 0)).severity
        parts.append(f"{len(s.new_findings)} new (worst: {worst})")
    if s.fixed_findings:
        parts.append(f"{len(s.fixed_findings)} fixed")
    return ", ".join(parts) or "-"


def _row(s: SensorComparison) -> list[str]:
    name = md(title(s).split(" (")[0] if s.status in ("added", "removed") else title(s))
    status = {"added": "added", "removed": "**removed**"}.get(s.status, md(loss(s)))
    if s.loss_percent is not None and s.loss_percent > 0:
        status = f"**{status}**"
    return [name, status] + [_cell(k, s) for k in ("touch_delta_pf", "percent_change", "turning_point_mm",
                                                     "parasitic_pf", "crosstalk_pf")] + [md(_findings_cell(s))]


def _details(s: SensorComparison) -> list[str]:
    out = [f"<details><summary>{md(title(s))}: {md(loss(s))}</summary>", ""]
    if matched(s):
        out.append(f"{md(matched(s))}.")
        out.append("")
    out += [f"- {md(item)}" for item in detail_items(s)]
    out += ["", "</details>"]
    return out


def render(cmp: Comparison, *, limit_chars: int = GITHUB_COMMENT_LIMIT) -> str:
    """The comment, ending in one newline, at most ``limit_chars`` characters."""
    changed = cmp.changed
    head = ["## sensorcheck compare: what this change does to the touch sensors", "",
            f"**{md(verdict(cmp))}**", "",
            f"`{md(cmp.old_label)}` → `{md(cmp.new_label)}`: {md(counts_line(cmp))}.", ""]
    rows = [_row(s) for s in changed]
    blocks = [_details(s) for s in changed]
    board: list[str] = []
    for tag, items in (("new", cmp.board_new), ("fixed", cmp.board_fixed)):
        for f in items:
            board.append(f"- board, {tag}: **{f.severity}** `{md(f.rule_id)}` {md(f.message)}")
    unchanged = [s.name for s in cmp.sensors if s.status == "unchanged"]
    rest = ([f"Unchanged: {md(', '.join(unchanged))}.", ""] if unchanged else []) + \
        (board + [""] if board else []) + [f"- {md(n)}" for n in cmp.notes]
    tail = ["", *[f"> {md(c)}" for c in cmp.cautions]]

    def text(n_rows: int, n_blocks: int, cut_note: str | None) -> str:
        body = list(head)
        if changed:
            body += _table(HEADER, rows[:n_rows]) + [""]
        else:
            body += ["No sensor changed.", ""]
        for b in blocks[:n_blocks]:
            body += b + [""]
        if cut_note:
            body += [f"> **Cut:** {cut_note}", ""]
        body += rest
        return "\n".join([*body, *tail]).rstrip() + "\n"

    full = text(len(rows), len(blocks), None)
    if len(full) <= limit_chars:
        return full
    n_rows, n_blocks = len(rows), len(blocks)
    while True:
        if n_blocks > 0:
            n_blocks -= 1
        elif n_rows > 0:
            n_rows -= 1
        left = (len(blocks) - n_blocks, len(rows) - n_rows)
        note = (f"this comment would be {len(full)} characters, more than the {limit_chars} a comment may hold; "
                f"the details of {left[0]} sensor(s) and {left[1]} table row(s) with the smallest losses are left "
                "out. The json and html compare reports hold everything.")
        out = text(n_rows, n_blocks, note)
        if len(out) <= limit_chars or (n_rows == 0 and n_blocks == 0):
            return out if len(out) <= limit_chars else out[:limit_chars - 2].rstrip() + "\n"
