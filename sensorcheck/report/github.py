"""GitHub Actions workflow commands: one annotation per finding, within GitHub's limits.

Syntax and escaping as GitHub documents them (github/docs ``workflow-commands.md``) and as the
actions toolkit writes them (``packages/core/src/command.ts``): in the message ``%``, CR and LF
become ``%25``, ``%0D``, ``%0A``; in a property value also ``:`` -> ``%3A`` and ``,`` -> ``%2C``.

GitHub shows at most 10 error and 10 warning annotations per step (and 10 notices): the worst
findings in report order are annotated, and one closing notice counts everything and names what
was left out. Waived findings are not annotated (the notice counts them).
"""

from __future__ import annotations

from collections.abc import Sequence

from sensorcheck.report.common import board_labels, counts, full_message, is_problem, kind_label, ordered, plural, source_file, source_line
from sensorcheck.findings import Finding, Result

MAX_PER_LEVEL = 10
_COMMAND = {"error": "error", "warning": "warning", "note": "notice"}


def escape_data(text: str) -> str:
    """Escape a command's message (toolkit ``escapeData``)."""
    return text.replace("%", "%25").replace("\r", "%0D").replace("\n", "%0A")


def escape_property(text: str) -> str:
    """Escape a property value (toolkit ``escapeProperty``)."""
    return escape_data(text).replace(":", "%3A").replace(",", "%2C")


def command(name: str, message: str, **props: str | int | None) -> str:
    """One workflow command line: ``::name k=v,k=v::message``."""
    fields = ",".join(f"{k}={escape_property(str(v))}" for k, v in props.items() if v is not None)
    return f"::{name}{' ' + fields if fields else ''}::{escape_data(message)}"


def _annotation(f: Finding, result: Result, label: str, batch: bool) -> str:
    level = "error" if is_problem(f) else f.severity
    title = f.rule_id if not is_problem(f) else f"{kind_label(f)} ({f.rule_id})"
    if batch:
        title = f"{label}: {title}"
    # Only a real source file is attached; a finding on the whole board gets a file-less annotation.
    path = source_file(f.location.file, result)
    line = source_line(f, result) or 1
    return command(_COMMAND[level], full_message(f), file=path, line=line if path else None, title=title)


def lines(results: Sequence[Result]) -> list[str]:
    """The workflow command lines for a batch of results (annotations, then one summary notice)."""
    batch = len(results) > 1
    shown = {"error": 0, "warning": 0, "note": 0}
    left = {"error": 0, "warning": 0, "note": 0}
    out: list[str] = []
    candidates: list[tuple[Finding, Result, str]] = []
    for result, label in zip(results, board_labels(results), strict=True):
        candidates += [(f, result, label) for f in result.findings if not f.waived]
    # Worst first across the batch; input and internal errors rank as errors.
    order = ordered(f for f, _, _ in candidates)
    where = {id(f): (r, label) for f, r, label in candidates}
    for f in order:
        level = "error" if is_problem(f) else f.severity
        # One notice slot is kept for the summary.
        cap = MAX_PER_LEVEL - 1 if level == "note" else MAX_PER_LEVEL
        if shown[level] >= cap:
            left[level] += 1
            continue
        shown[level] += 1
        result, label = where[id(f)]
        out.append(_annotation(f, result, label, batch))
    total = counts(f for r in results for f in r.findings)
    text = f"sensorcheck: {plural(total['error'], 'error')}, {plural(total['warning'], 'warning')}, "
    text += f"{plural(total['note'], 'note')}, {total['waived']} waived"
    if total["input"]:
        text += f", {plural(total['input'], 'input error')}"
    if total["internal"]:
        text += f", {plural(total['internal'], 'internal error')}"
    omitted = sum(left.values())
    if omitted:
        text += f"; {omitted} not annotated here (GitHub shows {MAX_PER_LEVEL} per level): see the full report"
    out.append(command("notice", text, title="sensorcheck summary"))
    return out


def render(results: Sequence[Result]) -> str:
    return "".join(line + "\n" for line in lines(results))
