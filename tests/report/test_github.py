"""GitHub workflow commands: syntax and escaping as documented (github/docs workflow-commands.md;
actions/toolkit packages/core/src/command.ts escapeData / escapeProperty), read back with a parser
written here from the runner's documented rules, and GitHub's per-step annotation limits (10 errors,
10 warnings; actions/toolkit PR #734)."""

from __future__ import annotations

import re

from sensorcheck.report import render
from sensorcheck.report.github import escape_data, escape_property
from sensorcheck.findings import Finding, Location, Result, assign_fingerprints

from .sample import HOSTILE_NETS, HOSTILE_SENSOR

_LINE = re.compile(r"^::(?P<cmd>[a-z-]+)(?: (?P<props>[^:]*))?::(?P<data>.*)$")


def unescape_data(s: str) -> str:
    return s.replace("%0D", "\r").replace("%0A", "\n").replace("%25", "%")


def unescape_property(s: str) -> str:
    return s.replace("%0D", "\r").replace("%0A", "\n").replace("%3A", ":").replace("%2C", ",").replace("%25", "%")


def parse(line: str) -> tuple[str, dict[str, str], str]:
    """A workflow command the way the runner splits it: the first '::' after the command ends
    the properties, which are comma-separated key=value pairs."""
    m = _LINE.match(line)
    assert m, line
    props: dict[str, str] = {}
    if m.group("props"):
        for pair in m.group("props").split(","):
            k, _, v = pair.partition("=")
            props[k] = unescape_property(v)
    return m.group("cmd"), props, unescape_data(m.group("data"))


def test_escaping_matches_toolkit_rules() -> None:
    # Expected strings written by hand from command.ts's replacement table.
    assert escape_data("50% a\r\nb: c, d") == "50%25 a%0D%0Ab: c, d"
    assert escape_property("50% a\r\nb: c, d") == "50%25 a%0D%0Ab%3A c%2C d"
    for s in [*HOSTILE_NETS, HOSTILE_SENSOR, "%0A", "%%3A"]:
        assert unescape_data(escape_data(s)) == s
        assert unescape_property(escape_property(s)) == s


def test_annotations(one_board: list[Result]) -> None:
    lines = render(one_board, "github").splitlines()
    assert all(line.startswith("::") for line in lines)
    parsed = [parse(line) for line in lines]
    cmds = [c for c, _, _ in parsed]
    res = one_board[0]
    n_err = sum(1 for f in res.findings if not f.waived and (f.severity == "error" or f.kind == "internal-error"))
    assert cmds.count("error") == n_err
    assert cmds.count("warning") == sum(1 for f in res.findings if not f.waived and f.severity == "warning")
    assert cmds[-1] == "notice" and parsed[-1][1]["title"] == "sensorcheck summary"
    led = next(p for p in parsed if "LED1 runs" in p[2])
    assert led[1] == {"file": "fab/panel-a-F_Cu.gbr", "line": "120", "title": "routing.aggressor-near-trace"}
    # Hostile names: still one command per line (open findings + the summary), read back intact.
    assert len(lines) == sum(1 for f in res.findings if not f.waived) + 1
    hostile = next(p for p in parsed if "around K<i>9</i>" in p[2])
    assert hostile[0] == "notice" and "\\n::warning::x" in hostile[2]
    assert not any(c not in ("error", "warning", "notice") for c in cmds)


def test_limits_per_step() -> None:
    findings = [
        Finding("gap.x", sev, f"finding {i}", location=Location("top-copper", float(i), 0.0, None, "a.gbr", i + 1))
        for sev in ("error", "warning", "note")
        for i in range(25)
    ]
    assign_fingerprints(findings, "big")
    res = Result("big", "fab", "0.1.0", None, findings=findings, rules_run=["gap.x"])
    parsed = [parse(line) for line in render([res], "github").splitlines()]
    cmds = [c for c, _, _ in parsed]
    assert cmds.count("error") == 10 and cmds.count("warning") == 10 and cmds.count("notice") <= 10
    summary = parsed[-1][2]
    assert "25 errors, 25 warnings, 25 notes" in summary
    omitted = 75 - (len(parsed) - 1)
    assert f"{omitted} not annotated here" in summary
    # The worst are kept: the first ten errors in report order (sorted by place).
    assert [p[2].split(" [")[0] for p in parsed[:10]] == [f"finding {i}" for i in range(10)]
