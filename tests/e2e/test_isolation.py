"""Failure isolation: one sensor's estimate that fails loses only that sensor, and a bug becomes
an internal-error entry (exit code 2) while the rules still run."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

import sensorcheck.physics.schedule as sched
import sensorcheck.physics.sensors as ps
from sensorcheck.check import CheckOptions, build_design_for, check_board, exit_code

REPO = Path(__file__).resolve().parents[2]
CLEAN = REPO / "boards" / "tm1-clean"


def test_one_failing_sensor_keeps_the_others(monkeypatch: pytest.MonkeyPatch) -> None:
    design = build_design_for(CLEAN)
    calls: list[str] = []

    def fake(design, sensor, **kw):  # noqa: ANN001
        calls.append(sensor.name)
        if sensor.name == "BTN1":
            raise ZeroDivisionError("seeded failure")
        return ps.SensorEstimate(sensor.name, "self", "fake", 1.0, 0.1, 10.0, None)

    monkeypatch.setattr(ps, "estimate_sensor", fake)
    errors: list[str] = []
    got = sched.estimate_design(design, workers=1, errors=errors)
    assert set(calls) == {s.name for s in design.sensors}
    assert "BTN1" not in got and len(got) == len(design.sensors) - 1
    assert errors == [f"BTN1: {ps.INTERNAL_PREFIX}ZeroDivisionError: seeded failure"]


def test_failed_estimates_become_entries_of_the_report(monkeypatch: pytest.MonkeyPatch) -> None:
    def fake_design(design, *, errors=None, **kw):  # noqa: ANN001
        assert errors is not None  # check.py must collect, not lose every estimate
        errors.append(f"BTN1: {ps.INTERNAL_PREFIX}ZeroDivisionError: seeded failure")
        errors.append("BTN2: sensor BTN2 needs more than 12000 panels (expected a smaller sensor)")
        return {}

    monkeypatch.setattr(sched, "estimate_design", fake_design)
    result = check_board(CLEAN, CheckOptions())
    by_rule = {f.rule_id: f for f in result.findings}
    assert by_rule["internal.estimate"].kind == "internal-error" and by_rule["internal.estimate"].sensor == "BTN1"
    assert by_rule["estimate.unavailable"].sensor == "BTN2" and by_rule["estimate.unavailable"].severity == "warning"
    assert result.rules_run  # the rules still ran
    assert exit_code([result]) == 2
