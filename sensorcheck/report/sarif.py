"""SARIF 2.1.0 log: one run for the whole batch, for code scanning and any SARIF viewer.

How a place on a board is told (SARIF has no board coordinate object; see
reference/output-formats.md B.1):

- ``physicalLocation.artifactLocation.uri``: the Gerber file of the layer, relative to the working
  folder (the repository root in CI; readers name files relative to the board's folder, which is
  put in front), with ``region.startLine`` = the line that drew the object where the reader knew
  it, else 1 (code scanning needs a start line); for a .zip input the archive itself, the member
  and its line in the location's properties;
- ``logicalLocations``: the board, the layer (custom kind ``layer``), the sensor and the nets
  (spec 3.33.7 lets a tool use its own kinds);
- a property bag on the location with the layer, the unit and x/y/box in mm, repeated in the
  message text because viewers show only text;
- ``partialFingerprints``: our geometric fingerprint, also as ``primaryLocationLineHash`` so code
  scanning does not hash the Gerber line text (which changes with every export);
- waived findings carry a ``suppressions`` entry (kind ``external``: the waiver lives in
  sensorcheck.toml, outside the analysed files) whose justification is the waiver's reason;
- a file that could not be read or a rule or estimate that raised is a tool execution
  notification (with the file and line where known), not a result, and marks the invocation
  unsuccessful.
"""

from __future__ import annotations

import json
from collections.abc import Sequence
from typing import Any

from sensorcheck.report.common import (
    TOOL_NAME,
    project_url,
    artifact_path,
    artifact_uri,
    board_labels,
    finding_sensors,
    first_paragraph,
    full_message,
    is_archive,
    is_problem,
    kind_label,
    ordered,
    rule_catalogue,
    safe_text,
    source_file,
    where_text,
)
from sensorcheck.report.json_report import jsonable
from sensorcheck.findings import Finding, Location, Result, RuleInfo

SCHEMA_URI = "https://json.schemastore.org/sarif-2.1.0.json"
SARIF_VERSION = "2.1.0"
FINGERPRINT_KEY = "sensorcheck/v1"


def _rule(info: RuleInfo) -> dict[str, Any]:
    doc = info.doc.strip() or info.title
    return {
        "id": info.id,
        "name": info.id,
        "shortDescription": {"text": info.title or info.id},
        "fullDescription": {"text": first_paragraph(doc) or info.title or info.id},
        "help": {"text": doc, "markdown": doc},
        "defaultConfiguration": {"level": info.default_severity, "enabled": True},
        "properties": {
            "tags": [info.family] if info.family else [],
            "family": info.family,
            "parameters": {
                name: {"default": jsonable(default), "unit": unit, "source": source}
                for name, (default, unit, source) in sorted(info.parameters.items())
            },
        },
    }


def _region(loc: Location, result: Result) -> dict[str, Any]:
    line = loc.line if loc.line and loc.line > 0 and not is_archive(result.source) else 1
    return {"startLine": line}


def _place_properties(loc: Location) -> dict[str, Any]:
    props: dict[str, Any] = {"unit": "mm"}
    if loc.layer is not None:
        props["layer"] = loc.layer
    if loc.x_mm is not None and loc.y_mm is not None:
        props["x"] = jsonable(loc.x_mm)
        props["y"] = jsonable(loc.y_mm)
    if loc.box_mm is not None:
        props["bbox"] = jsonable(loc.box_mm)
    if loc.file is not None:
        props["file"] = loc.file  # as the reader named it, relative to the board's input
        if loc.line is not None:
            props["line"] = loc.line
    return props


def _physical(loc: Location, result: Result) -> dict[str, Any] | None:
    path = source_file(loc.file, result)
    if path is not None:
        return {"artifactLocation": {"uri": artifact_uri(path)}, "region": _region(loc, result)}
    source = artifact_path(result.source)
    if source:
        # The board's folder or archive: no line to point at.
        return {"artifactLocation": {"uri": artifact_uri(source)}}
    return None


def _location(loc: Location, f: Finding, result: Result, label: str, text: str, *, primary: bool) -> dict[str, Any]:
    out: dict[str, Any] = {"message": {"text": text}, "properties": _place_properties(loc)}
    physical = _physical(loc, result)
    if physical is not None:
        out["physicalLocation"] = physical
    logical: list[dict[str, Any]] = [{"kind": "board", "name": label, "fullyQualifiedName": label}]
    if loc.layer:
        logical.append({"kind": "layer", "name": loc.layer, "fullyQualifiedName": f"{label}/{loc.layer}"})
    if primary:
        for sensor in finding_sensors(f):  # a grouped finding may cover several
            logical.append({"kind": "sensor", "name": sensor, "fullyQualifiedName": f"{label}/sensor/{sensor}"})
        for net in f.nets:
            logical.append({"kind": "net", "name": net, "fullyQualifiedName": f"{label}/net/{net}"})
    out["logicalLocations"] = logical
    return out


def _result(f: Finding, result: Result, label: str, rule_index: dict[str, int]) -> dict[str, Any]:
    text = full_message(f)
    out: dict[str, Any] = {
        "ruleId": f.rule_id,
        "level": f.severity,
        "kind": "fail",
        "message": {"text": text},
        "locations": [_location(f.location, f, result, label, text, primary=True)],
        "partialFingerprints": {FINGERPRINT_KEY: f.fingerprint, "primaryLocationLineHash": f.fingerprint},
        "properties": {
            "board": label,
            "fingerprint": f.fingerprint,
            "sensor": f.sensor,
            "nets": list(f.nets),
            "value": jsonable(f.value),
            "limit": jsonable(f.limit),
            "unit": f.unit,
        },
    }
    if f.rule_id in rule_index:
        out["ruleIndex"] = rule_index[f.rule_id]
    if f.review:
        out["properties"]["review"] = f.review
    for key, value in (("direction", f.direction), ("fix", f.fix), ("reference", f.reference)):
        if value:
            out["properties"][key] = value
    if f.places > 1:  # one finding of one cause: every place is a related location below
        out["properties"]["places"] = f.places
        out["properties"]["sensors"] = list(f.sensors)
    if f.related:
        out["relatedLocations"] = [
            {"id": i + 1, **_location(r, f, result, label, f"related: {where_text(r)}", primary=False)}
            for i, r in enumerate(f.related)
        ]
    if f.waived_by is not None:
        w = f.waived_by
        suppression: dict[str, Any] = {
            "kind": "external",
            "status": "accepted",
            "justification": w.reason,
            "properties": {"waiver_index": w.index, "rule": w.rule},
        }
        if w.expires:
            suppression["properties"]["expires"] = w.expires
        out["suppressions"] = [suppression]
    return out


def _notification(f: Finding, result: Result, label: str) -> dict[str, Any]:
    """A file that could not be read or a check that raised: the tool could not do its job there."""
    out: dict[str, Any] = {
        "level": "error",
        "message": {"text": f"{label}: {kind_label(f)}: {safe_text(f.message)}"},
        "descriptor": {"id": f.rule_id},
        "properties": {"board": label, "fingerprint": f.fingerprint, "kind": f.kind},
    }
    path = source_file(f.location.file, result)
    if path is not None:
        out["locations"] = [{"physicalLocation": {"artifactLocation": {"uri": artifact_uri(path)}, "region": _region(f.location, result)}}]
    return out


def log_data(results: Sequence[Result]) -> dict[str, Any]:
    """The SARIF log as plain data."""
    catalogue = rule_catalogue(results)
    rule_index = {rid: i for i, rid in enumerate(catalogue)}
    sarif_results: list[dict[str, Any]] = []
    notifications: list[dict[str, Any]] = []
    for result, label in zip(results, board_labels(results), strict=True):
        for f in ordered(result.findings):
            if is_problem(f):
                notifications.append(_notification(f, result, label))
            else:
                sarif_results.append(_result(f, result, label, rule_index))
    invocation: dict[str, Any] = {
        "executionSuccessful": not notifications,
        "toolExecutionNotifications": notifications,
    }
    stamps = sorted(r.timestamp for r in results if r.timestamp)
    if stamps:
        invocation["startTimeUtc"] = stamps[0]
    version = results[0].tool_version if results else ""
    driver: dict[str, Any] = {"name": TOOL_NAME}
    if (uri := project_url()) is not None:  # SARIF 2.1.0 toolComponent: optional; never an address not ours
        driver["informationUri"] = uri
    driver["rules"] = [_rule(info) for info in catalogue.values()]
    if version:
        driver["version"] = version
        driver["semanticVersion"] = version
    run: dict[str, Any] = {
        "tool": {"driver": driver},
        "automationDetails": {"id": f"{TOOL_NAME}/"},
        "columnKind": "unicodeCodePoints",
        "invocations": [invocation],
        "results": sarif_results,
        "properties": {
            "boards": [
                {"board": label, "source": r.source, "config_file": r.config_file, "notes": list(r.notes)}
                for r, label in zip(results, board_labels(results), strict=True)
            ],
            "cautions": list(dict.fromkeys(c for r in results for c in r.cautions)),
        },
    }
    return {"$schema": SCHEMA_URI, "version": SARIF_VERSION, "runs": [run]}


def render(results: Sequence[Result]) -> str:
    """The SARIF 2.1.0 log as indented JSON with sorted keys."""
    return json.dumps(log_data(results), indent=2, sort_keys=True, ensure_ascii=True, allow_nan=False) + "\n"
