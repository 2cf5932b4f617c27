"""Kept for older imports: the findings and the check result live in :mod:`sensorcheck.findings`.

New code imports ``sensorcheck.findings`` (the ground floor every layer may import).
"""

from sensorcheck.findings import (
    SEVERITY_ORDER,
    DrawLayer,
    Drawing,
    Finding,
    Location,
    Result,
    RuleInfo,
    SensorSummary,
    Severity,
    SourceClass,
    Waiver,
    assign_fingerprints,
    fingerprint_for,
    sort_key,
)

__all__ = [
    "SEVERITY_ORDER", "DrawLayer", "Drawing", "Finding", "Location", "Result", "RuleInfo", "SensorSummary",
    "Severity", "SourceClass", "Waiver", "assign_fingerprints", "fingerprint_for", "sort_key",
]
