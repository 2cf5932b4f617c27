"""GitLab code-quality report (``artifacts:reports:codequality``).

GitLab's documentation (doc/ci/testing/code_quality.md, "Code Quality report format") asks for
one JSON array of objects, each with ``description``, ``check_name``, ``fingerprint`` (unique:
issues with the same fingerprint are merged), ``severity`` (info, minor, major, critical,
blocker), ``location.path`` (relative to the repository) and ``location.lines.begin``; no byte
order mark. Waived findings are left out (GitLab has no way to show a suppression); a file that
could not be read or a rule that raised is reported as ``critical``, so a check that could not be
made is never quieter than a finding.
"""

from __future__ import annotations

import json
from collections.abc import Sequence
from typing import Any

from sensorcheck.report.common import board_labels, finding_path, full_message, is_problem, kind_label, ordered, source_line
from sensorcheck.findings import Finding, Result

SEVERITY_MAP: dict[str, str] = {"error": "major", "warning": "minor", "note": "info"}


def _severity(f: Finding) -> str:
    return "critical" if is_problem(f) else SEVERITY_MAP[f.severity]


def issues(results: Sequence[Result]) -> list[dict[str, Any]]:
    """The code-quality issues, fingerprints unique across the batch (a repeat gets ``-bN``)."""
    out: list[dict[str, Any]] = []
    seen: dict[str, int] = {}
    batch = len(results) > 1
    for result, label in zip(results, board_labels(results), strict=True):
        for f in ordered(result.findings):
            if f.waived:
                continue
            fp = f.fingerprint or f"{f.rule_id}-{len(out)}"
            n = seen.get(fp, 0)
            seen[fp] = n + 1
            if n:
                fp = f"{fp}-b{n}"
            prefix = f"{label}: " if batch else ""
            kind = f"{kind_label(f)}: " if is_problem(f) else ""
            out.append(
                {
                    "description": f"{prefix}{kind}{f.rule_id}: {full_message(f)}",
                    "check_name": f.rule_id,
                    "fingerprint": fp,
                    "severity": _severity(f),
                    "location": {
                        "path": finding_path(f, result),
                        "lines": {"begin": source_line(f, result) or 1},
                    },
                }
            )
    return out


def render(results: Sequence[Result]) -> str:
    """The report: a JSON array (``[]`` when there is nothing), newline at the end, no BOM."""
    return json.dumps(issues(results), indent=2, sort_keys=True, ensure_ascii=True) + "\n"
