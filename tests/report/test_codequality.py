"""GitLab code-quality JSON, field by field against GitLab's documentation
(doc/ci/testing/code_quality.md, "Code Quality report format", as summarised in
reference/output-formats.md B.3): one JSON array; each object has description, check_name,
fingerprint (unique: duplicates are merged), severity in info|minor|major|critical|blocker,
location.path and location.lines.begin; no byte-order mark."""

from __future__ import annotations

import json

from sensorcheck.report import render
from sensorcheck.findings import Result

GITLAB_SEVERITIES = {"info", "minor", "major", "critical", "blocker"}


def test_documented_fields(results: list[Result]) -> None:
    text = render(results, "codequality")
    raw = text.encode("utf-8")
    assert not raw.startswith(b"\xef\xbb\xbf")  # no BOM
    data = json.loads(text)
    assert isinstance(data, list)
    for issue in data:
        assert isinstance(issue["description"], str) and issue["description"]
        assert isinstance(issue["check_name"], str) and issue["check_name"]
        assert isinstance(issue["fingerprint"], str) and issue["fingerprint"]
        assert issue["severity"] in GITLAB_SEVERITIES
        assert isinstance(issue["location"]["path"], str) and issue["location"]["path"]
        assert not issue["location"]["path"].startswith("/")  # relative to the repository
        begin = issue["location"]["lines"]["begin"]
        assert isinstance(begin, int) and begin >= 1
    fps = [i["fingerprint"] for i in data]
    assert len(fps) == len(set(fps))


def test_severity_mapping_and_waivers(results: list[Result]) -> None:
    data = json.loads(render(results, "codequality"))
    open_findings = [f for r in results for f in r.findings if not f.waived]
    assert len(data) == len(open_findings)  # waived ones are left out
    by_fp = {i["fingerprint"]: i for i in data}
    for f in open_findings:
        issue = by_fp[f.fingerprint]
        expected = "critical" if f.kind != "finding" else {"error": "major", "warning": "minor", "note": "info"}[f.severity]
        assert issue["severity"] == expected
        assert issue["check_name"] == f.rule_id
    led = next(i for i in data if "LED1 runs" in i["description"])
    assert led["location"] == {"path": "fab/panel-a-F_Cu.gbr", "lines": {"begin": 120}}


def test_fingerprint_collision_across_boards_is_made_unique(results: list[Result]) -> None:
    results[1].findings[0].fingerprint = results[0].findings[0].fingerprint
    data = json.loads(render(results, "codequality"))
    fps = [i["fingerprint"] for i in data]
    assert len(fps) == len(set(fps))


def test_empty_is_an_empty_array() -> None:
    assert json.loads(render([], "codequality")) == []
