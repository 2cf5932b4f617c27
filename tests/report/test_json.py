"""JSON report against its own published schema (json_report.REPORT_SCHEMA, validated as a
draft 2020-12 schema by jsonschema), and the baseline reader."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from sensorcheck.errors import InputError
from sensorcheck.report import load_baseline, render
from sensorcheck.report.json_report import REPORT_SCHEMA
from sensorcheck.findings import Result

from .sample import HOSTILE_NETS

jsonschema = pytest.importorskip("jsonschema")


def test_schema_is_a_valid_schema_and_report_fits(results: list[Result]) -> None:
    jsonschema.Draft202012Validator.check_schema(REPORT_SCHEMA)
    data = json.loads(render(results, "json"))
    jsonschema.Draft202012Validator(REPORT_SCHEMA).validate(data)
    bad = json.loads(render(results, "json"))
    bad["boards"][0]["findings"][0]["severity"] = "fatal"
    assert not jsonschema.Draft202012Validator(REPORT_SCHEMA).is_valid(bad)


def test_content(results: list[Result]) -> None:
    data = json.loads(render(results, "json"))
    assert data["format"] == "sensorcheck-report" and data["version"] == 1
    assert data["summary"] == {"error": 4, "warning": 4, "note": 4, "waived": 1, "input": 1, "internal": 1}
    a = data["boards"][0]
    assert [s["name"] for s in a["sensors"]] == sorted(s.name for s in results[0].sensors)
    via = next(f for f in a["findings"] if f["rule_id"] == "routing.via-in-zone")
    assert via["nets"] == list(HOSTILE_NETS)  # exact, JSON escapes what it must
    waived = next(f for f in a["findings"] if f["waived"])
    assert waived["waiver"]["reason"] == "thin <b>glass</b> | front\npanel, 50% approved"
    assert "timestamp" not in a
    results[0].timestamp = "2026-12-02T05:00:00Z"
    assert json.loads(render(results, "json"))["boards"][0]["timestamp"] == "2026-12-02T05:00:00Z"


def test_non_finite_numbers_become_null(one_board: list[Result]) -> None:
    one_board[0].findings[0].value = float("nan")
    one_board[0].sensors[0].values["x"] = float("inf")
    data = json.loads(render(one_board, "json"))
    assert any(f["value"] is None and f["rule_id"] == "routing.aggressor-near-trace" for f in data["boards"][0]["findings"])


def test_baseline_round_trip(tmp_path: Path, results: list[Result]) -> None:
    path = tmp_path / "base.json"
    path.write_text(render(results, "json"), encoding="utf-8")
    assert load_baseline(path) == {f.fingerprint for r in results for f in r.findings}


@pytest.mark.parametrize(
    ("content", "line", "words"),
    [
        ('{"format": "sensorcheck-report",\n "version": 1,\n "boards": [,]}', 3, "not valid JSON"),
        ('{"format": "other", "version": 1, "boards": []}', None, "not a sensorcheck JSON report"),
        ('{"format": "sensorcheck-report", "version": 99, "boards": []}', None, "version 99"),
        ('{"format": "sensorcheck-report", "version": 1, "boards": [{"findings": [{}]}]}', None, "no fingerprint"),
        ("[1, 2]", None, "not a sensorcheck JSON report"),
    ],
)
def test_bad_baseline(tmp_path: Path, content: str, line: int | None, words: str) -> None:
    path = tmp_path / "bad.json"
    path.write_text(content, encoding="utf-8")
    with pytest.raises(InputError) as info:
        load_baseline(path)
    assert info.value.file == str(path) and info.value.line == line
    assert words in info.value.describe()


def test_missing_baseline(tmp_path: Path) -> None:
    with pytest.raises(InputError, match="cannot read the baseline"):
        load_baseline(tmp_path / "nope.json")
