"""The compare report as JSON (``"format": "sensorcheck-compare"``, ``"version": 1``).

::

    {"format", "version", "old": {"label", "kind", "board"}, "new": {...},
     "gate": {"fail_on_loss_percent", "fail_on_new", "failed", "failures": [...]},
     "windows": {"solved", "reused"},
     "sensors": [{"name", "old_name", "new_name", "kind", "status" (changed/unchanged/added/removed),
                  "matched_by", "overlap", "loss_percent",
                  "values": {KEY: {"old", "new", "relative_percent"}}   (KEY with its unit: baseline_pf ...),
                  "crosstalk_pf": {NEIGHBOUR: {"old", "new", "relative_percent"}},
                  "findings": {"new": [...], "fixed": [...], "unchanged": [...]},
                  "copper": [{"layer", "side", "added_mm2", "removed_mm2"}], "notes": [...]}],
     "board_findings": {"new", "fixed", "unchanged"}, "notes": [...], "cautions": [...]}

Sensors in order of loss (the biggest first), unchanged ones last; keys sorted; the same
comparison gives the same bytes.  Numbers in the units their keys name (pF, %, mm).
"""

from __future__ import annotations

import json
from typing import Any

from sensorcheck.compare.changes import Change, Comparison, FindingRef, SensorComparison
from sensorcheck.report.json_report import jsonable

FORMAT_ID = "sensorcheck-compare"
FORMAT_VERSION = 1


def _change(c: Change) -> dict[str, Any]:
    rel = c.relative_percent
    return {"old": jsonable(c.old), "new": jsonable(c.new), "relative_percent": None if rel is None else round(rel, 3)}


def _finding(f: FindingRef) -> dict[str, Any]:
    return {"fingerprint": f.fingerprint, "compare_key": f.key, "rule_id": f.rule_id, "severity": f.severity,
            "message": f.message, "sensor": f.sensor, "sensors": list(f.sensors), "waived": f.waived}


def _sensor(s: SensorComparison) -> dict[str, Any]:
    return {
        "name": s.name, "old_name": s.old_name, "new_name": s.new_name, "kind": s.kind, "status": s.status,
        "matched_by": s.matched_by, "overlap": round(s.overlap, 4),
        "loss_percent": None if s.loss_percent is None else round(s.loss_percent, 3),
        "values": {k: _change(c) for k, c in s.values.items()},
        "crosstalk_pf": {k: _change(c) for k, c in s.crosstalk.items()},
        "findings": {"new": [_finding(f) for f in s.new_findings], "fixed": [_finding(f) for f in s.fixed_findings],
                     "unchanged": [_finding(f) for f in s.unchanged_findings]},
        "copper": [{"layer": c.layer, "side": c.side, "added_mm2": c.added_mm2, "removed_mm2": c.removed_mm2}
                   for c in s.copper],
        "notes": list(s.notes),
    }


def report_data(cmp: Comparison) -> dict[str, Any]:
    unchanged = [s for s in cmp.sensors if s.status == "unchanged"]
    return {
        "format": FORMAT_ID,
        "version": FORMAT_VERSION,
        "old": {"label": cmp.old_label, "kind": cmp.old_kind, "board": cmp.old_board},
        "new": {"label": cmp.new_label, "kind": cmp.new_kind, "board": cmp.new_board},
        "gate": {"fail_on_loss_percent": cmp.gate.fail_on_loss_percent, "fail_on_new": cmp.gate.fail_on_new,
                 "failed": cmp.gate.failed, "failures": list(cmp.gate.failures)},
        "windows": {"solved": cmp.windows_solved, "reused": cmp.windows_reused},
        "copper_compared": cmp.copper_compared,
        "sensors": [_sensor(s) for s in [*cmp.changed, *sorted(unchanged, key=lambda s: s.name)]],
        "board_findings": {"new": [_finding(f) for f in cmp.board_new], "fixed": [_finding(f) for f in cmp.board_fixed],
                           "unchanged": [_finding(f) for f in cmp.board_unchanged]},
        "notes": list(cmp.notes),
        "cautions": list(cmp.cautions),
    }


def render(cmp: Comparison) -> str:
    return json.dumps(report_data(cmp), indent=2, sort_keys=True, ensure_ascii=True, allow_nan=False) + "\n"
