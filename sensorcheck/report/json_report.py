"""JSON report: our own documented format, the one ``--baseline`` reads back.

Layout (``"format": "sensorcheck-report"``, ``"version": 1``; :data:`REPORT_SCHEMA` is its JSON
Schema, draft 2020-12)::

    {
      "format": "sensorcheck-report", "version": 1,
      "tool": {"name": "sensorcheck", "version": "0.1.0"},
      "summary": {"error": 0, "warning": 0, "note": 0, "waived": 0, "input": 0, "internal": 0},
      "boards": [
        {"board": ..., "source": ..., "config_file": ..., "timestamp": ... (only when set),
         "summary": {...}, "overlay": {...} | null, "files": [...], "notes": [...],
         "cautions": [...], "rules_run": [...],
         "rules": [{"id", "title", "family", "default_severity", "doc", "parameters"}],
         "sensors": [{"name", "kind", "layer", "nets", "box_mm", "values", "estimate", "checklist"}],
         "findings": [{"fingerprint", "rule_id", "severity", "kind", "message", "value", "limit",
                       "unit", "location", "related", "nets", "sensor", "review", "waived",
                       "waiver", "direction" ("max"/"min": how the limit bounds the value), "fix"
                       (the rule's fix in one line), "reference" (its catalogue entry), "places"
                       (a finding of one cause lists every place in "related"), "sensors",
                       "members" (the fingerprints its places had alone)}]}
      ]
    }

Keys are sorted, findings are in ``finding.sort_key`` order and sensors by name, so the same
result gives the same bytes. The text is pure ASCII (``\\uXXXX`` escapes): names keep every
character exactly, yet no terminal escape or bidi override ever appears raw in the file. Numbers that are not finite become ``null``. Drawing geometry
(outline rings, board layers) is not included: the HTML page carries it.
"""

from __future__ import annotations

import dataclasses
import json
import math
from collections.abc import Sequence
from typing import Any

from sensorcheck.report.common import TOOL_NAME, board_labels, counts, ordered, sensors_sorted
from sensorcheck.findings import Finding, Location, Result, RuleInfo, SensorSummary, Waiver

FORMAT_ID = "sensorcheck-report"
FORMAT_VERSION = 1

_NUM_OR_NULL: dict[str, Any] = {"type": ["number", "null"]}
_STR_OR_NULL: dict[str, Any] = {"type": ["string", "null"]}
_BOX: dict[str, Any] = {
    "oneOf": [{"type": "null"}, {"type": "array", "items": {"type": "number"}, "minItems": 4, "maxItems": 4}]
}
_LOCATION: dict[str, Any] = {
    "type": "object",
    "required": ["layer", "x_mm", "y_mm", "box_mm", "file", "line"],
    "additionalProperties": False,
    "properties": {
        "layer": _STR_OR_NULL,
        "x_mm": _NUM_OR_NULL,
        "y_mm": _NUM_OR_NULL,
        "box_mm": _BOX,
        "file": _STR_OR_NULL,
        "line": {"type": ["integer", "null"], "minimum": 1},
    },
}
_COUNTS: dict[str, Any] = {
    "type": "object",
    "required": ["error", "warning", "note", "waived", "input", "internal"],
    "additionalProperties": False,
    "properties": {k: {"type": "integer", "minimum": 0} for k in ("error", "warning", "note", "waived", "input", "internal")},
}
_SEVERITY: dict[str, Any] = {"enum": ["error", "warning", "note"]}

#: JSON Schema (draft 2020-12) of the report; tests validate every rendered report against it.
REPORT_SCHEMA: dict[str, Any] = {
    "$schema": "https://json-schema.org/draft/2020-12/schema",
    "title": "sensorcheck report",
    "type": "object",
    "required": ["format", "version", "tool", "summary", "boards"],
    "additionalProperties": False,
    "properties": {
        "format": {"const": FORMAT_ID},
        "version": {"const": FORMAT_VERSION},
        "tool": {
            "type": "object",
            "required": ["name", "version"],
            "properties": {"name": {"type": "string"}, "version": {"type": "string"}},
        },
        "summary": _COUNTS,
        "boards": {
            "type": "array",
            "items": {
                "type": "object",
                "required": [
                    "board",
                    "source",
                    "config_file",
                    "summary",
                    "findings",
                    "sensors",
                    "rules",
                    "rules_run",
                    "notes",
                    "cautions",
                    "files",
                    "overlay",
                ],
                "additionalProperties": False,
                "properties": {
                    "board": {"type": "string"},
                    "label": {"type": "string"},
                    "source": {"type": "string"},
                    "config_file": _STR_OR_NULL,
                    "timestamp": {"type": "string"},
                    "tool_version": {"type": "string"},
                    "summary": _COUNTS,
                    "overlay": {"type": ["object", "null"]},
                    "files": {"type": "array", "items": {"type": "object"}},
                    "notes": {"type": "array", "items": {"type": "string"}},
                    "cautions": {"type": "array", "items": {"type": "string"}},
                    "rules_run": {"type": "array", "items": {"type": "string"}},
                    "rules": {
                        "type": "array",
                        "items": {
                            "type": "object",
                            "required": ["id", "title", "family", "default_severity", "doc", "parameters"],
                            "additionalProperties": False,
                            "properties": {
                                "id": {"type": "string"},
                                "title": {"type": "string"},
                                "family": {"type": "string"},
                                "default_severity": _SEVERITY,
                                "doc": {"type": "string"},
                                "parameters": {
                                    "type": "object",
                                    "additionalProperties": {
                                        "type": "object",
                                        "required": ["default", "unit", "source"],
                                    },
                                },
                            },
                        },
                    },
                    "sensors": {
                        "type": "array",
                        "items": {
                            "type": "object",
                            "required": ["name", "kind", "layer", "nets", "box_mm", "values", "estimate", "checklist"],
                            "additionalProperties": False,
                            "properties": {
                                "name": {"type": "string"},
                                "kind": {"type": "string"},
                                "layer": _STR_OR_NULL,
                                "nets": {"type": "array", "items": {"type": "string"}},
                                "box_mm": _BOX,
                                "values": {"type": "object"},
                                "estimate": {"type": ["object", "null"]},
                                "checklist": {"type": "array", "items": {"type": "string"}},
                            },
                        },
                    },
                    "findings": {
                        "type": "array",
                        "items": {
                            "type": "object",
                            "required": [
                                "fingerprint",
                                "rule_id",
                                "severity",
                                "kind",
                                "message",
                                "location",
                                "waived",
                            ],
                            "additionalProperties": False,
                            "properties": {
                                "fingerprint": {"type": "string"},
                                "rule_id": {"type": "string"},
                                "severity": _SEVERITY,
                                "kind": {"enum": ["finding", "internal-error", "input-error"]},
                                "message": {"type": "string"},
                                "value": _NUM_OR_NULL,
                                "limit": _NUM_OR_NULL,
                                "unit": _STR_OR_NULL,
                                "location": _LOCATION,
                                "related": {"type": "array", "items": _LOCATION},
                                "nets": {"type": "array", "items": {"type": "string"}},
                                "sensor": _STR_OR_NULL,
                                "review": _STR_OR_NULL,
                                "waived": {"type": "boolean"},
                                "direction": {"enum": ["max", "min", None]},
                                "fix": _STR_OR_NULL,
                                "reference": _STR_OR_NULL,
                                "places": {"type": "integer", "minimum": 1},
                                "sensors": {"type": "array", "items": {"type": "string"}},
                                "members": {"type": "array", "items": {"type": "string"}},
                                "waiver": {
                                    "oneOf": [
                                        {"type": "null"},
                                        {
                                            "type": "object",
                                            "required": ["rule", "reason"],
                                            "properties": {"reason": {"type": "string", "minLength": 1}},
                                        },
                                    ]
                                },
                            },
                        },
                    },
                },
            },
        },
    },
}


def jsonable(value: Any) -> Any:
    """Plain JSON data: tuples become lists, non-finite floats ``null``, keys strings, others text."""
    if value is None or isinstance(value, (bool, int, str)):
        return value
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, dict):
        return {str(k): jsonable(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [jsonable(v) for v in value]
    try:  # numpy scalars and arrays
        return jsonable(value.tolist())
    except AttributeError:
        return str(value)


def _record(obj: Location | Waiver) -> dict[str, Any]:
    """A plain record of the ground floor as JSON: its fields by name, in declaration order (the
    schema above names the same keys, so a field added there without the schema fails its test)."""
    return {f.name: jsonable(getattr(obj, f.name)) for f in dataclasses.fields(obj)}


def _location(loc: Location) -> dict[str, Any]:
    return _record(loc)


def _waiver(w: Waiver | None) -> dict[str, Any] | None:
    return None if w is None else _record(w)


def _finding(f: Finding) -> dict[str, Any]:
    return {
        "fingerprint": f.fingerprint,
        "rule_id": f.rule_id,
        "severity": f.severity,
        "kind": f.kind,
        "message": f.message,
        "value": jsonable(f.value),
        "limit": jsonable(f.limit),
        "unit": f.unit,
        "location": _location(f.location),
        "related": [_location(r) for r in f.related],
        "nets": list(f.nets),
        "sensor": f.sensor,
        "review": f.review,
        "waived": f.waived,
        "waiver": _waiver(f.waived_by),
        "direction": f.direction,
        "fix": f.fix,
        "reference": f.reference,
        "places": f.places,
        "sensors": list(f.sensors),
        "members": list(f.members),
    }


def _sensor(s: SensorSummary) -> dict[str, Any]:
    return {
        "name": s.name,
        "kind": s.kind,
        "layer": s.layer,
        "nets": list(s.nets),
        "box_mm": jsonable(s.box_mm),
        "values": jsonable(s.values),
        "estimate": jsonable(s.estimate),
        "checklist": list(s.checklist),
    }


def _rule(r: RuleInfo) -> dict[str, Any]:
    return {
        "id": r.id,
        "title": r.title,
        "family": r.family,
        "default_severity": r.default_severity,
        "doc": r.doc,
        "parameters": {
            name: {"default": jsonable(default), "unit": unit, "source": source}
            for name, (default, unit, source) in r.parameters.items()
        },
    }


def _board(result: Result, label: str) -> dict[str, Any]:
    data: dict[str, Any] = {
        "board": result.board,
        "label": label,
        "source": result.source,
        "tool_version": result.tool_version,
        "config_file": result.config_file,
        "summary": counts(result.findings),
        "overlay": jsonable(result.overlay),
        "files": jsonable(result.files),
        "notes": list(result.notes),
        "cautions": list(result.cautions),
        "rules_run": sorted(set(result.rules_run)),
        "rules": [_rule(r) for r in sorted(result.rules, key=lambda r: r.id)],
        "sensors": [_sensor(s) for s in sensors_sorted(result)],
        "findings": [_finding(f) for f in ordered(result.findings)],
    }
    if result.timestamp:
        data["timestamp"] = result.timestamp
    return data


def report_data(results: Sequence[Result]) -> dict[str, Any]:
    """The report as plain data (what :func:`render` serialises)."""
    total = counts(f for r in results for f in r.findings)
    version = results[0].tool_version if results else ""
    return {
        "format": FORMAT_ID,
        "version": FORMAT_VERSION,
        "tool": {"name": TOOL_NAME, "version": version},
        "summary": total,
        "boards": [_board(r, label) for r, label in zip(results, board_labels(results), strict=True)],
    }


def render(results: Sequence[Result]) -> str:
    """The JSON report, indented, keys sorted, ending in a newline."""
    return json.dumps(report_data(results), indent=2, sort_keys=True, ensure_ascii=True, allow_nan=False) + "\n"
