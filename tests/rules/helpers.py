"""Running one rule on a design and picking its findings."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from sensorcheck.rules.engine import registry
from sensorcheck.findings import Finding


def run_one(rule_id: str, design: Any, estimates: Mapping[str, Any] | None = None, **params: Any) -> list[Finding]:
    """Run one rule's check with its default parameters (overridden by ``params``)."""
    cls = registry()[rule_id]
    full = {n: p.default for n, p in cls.params.items()}
    full.update(params)
    out = list(cls().check(design, estimates or {}, full))
    for f in out:
        f.rule_id = rule_id
    return out
