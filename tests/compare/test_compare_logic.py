"""Matching, findings, the gate and the Markdown comment's size, on sides written as plain data.

Outside sources: GitHub refuses a comment body over 65 536 characters ("Body is too long (maximum
is 65536 characters)", GitHub's REST and web error for issue and pull-request comments); GitLab a
note over 1 000 000 characters (GitLab's Note model validation, from memory).  The Markdown must
stay valid when cut: every ``<details>`` closed.
"""

from __future__ import annotations

from typing import Any

import pytest

from sensorcheck.compare.changes import apply_gate, compare_sides, loss_percent
from sensorcheck.compare.model import Side
from sensorcheck.errors import SensorcheckError
from sensorcheck.report import compare_json, compare_markdown, compare_text
from sensorcheck.report.compare_markdown import GITHUB_COMMENT_LIMIT, GITLAB_NOTE_LIMIT


def sensor(name: str, box: tuple[float, float, float, float], nets: tuple[str, ...] | None = None, *,
           delta: float = -0.5, base: float = 2.0, kind: str = "mutual-button") -> dict[str, Any]:
    return {"name": name, "kind": kind, "nets": list(nets or (name + "_TX", name + "_RX")), "box_mm": list(box),
            "estimate": {"baseline_pf": base, "touch_delta_pf": delta, "percent_change": 100 * delta / base,
                         "turning_point_mm": None, "crosstalk_pf": {}, "parasitic_pf": None,
                         "curve": [[10.0, base], [0.0, base + delta]]}}


def finding(rule: str, sensor: str | None, x: float, y: float, severity: str = "warning", **kw: Any) -> dict[str, Any]:
    return {"rule_id": rule, "severity": severity, "kind": "finding", "message": f"{rule} at {x},{y}",
            "fingerprint": f"fp-{rule}-{sensor}-{x}", "location": {"layer": "top-copper", "x_mm": x, "y_mm": y},
            "sensor": sensor, "sensors": [], "nets": [], "places": 1, **kw}


def side(which: str, sensors: list[dict[str, Any]], findings: list[dict[str, Any]] | None = None) -> Side:
    return Side(which, which, "json", {"board": which, "sensors": sensors, "findings": findings or []})  # type: ignore[arg-type]


def test_sensors_are_matched_by_geometry_then_nets_then_name() -> None:
    old = side("old", [sensor("K1", (0, 0, 10, 10)), sensor("K2", (20, 0, 30, 10)), sensor("K3", (40, 0, 50, 10)),
                       sensor("K4", (60, 0, 70, 10)), sensor("GONE", (80, 0, 90, 10))])
    new = side("new", [sensor("START", (0, 0, 10, 10), ("K1_TX", "K1_RX")),  # same place, new name: renamed
                       sensor("K2", (21, 0, 31, 10)),  # moved 1 mm: 82 % overlap
                       sensor("K3", (140, 0, 150, 10), ("K3_TX", "K3_RX")),  # moved far, same nets
                       sensor("K4", (260, 0, 270, 10), ("X", "Y")),  # moved far, new nets: by name
                       sensor("NEW", (300, 0, 310, 10))])
    cmp = compare_sides(old, new)
    by = {s.name: s for s in cmp.sensors}
    assert (by["START"].old_name, by["START"].matched_by) == ("K1", "geometry")
    assert by["K2"].matched_by == "geometry" and by["K2"].overlap == pytest.approx(9 / 11, abs=1e-6)
    assert by["K3"].matched_by == "nets" and by["K4"].matched_by == "name"
    assert by["GONE"].status == "removed" and by["NEW"].status == "added"
    assert cmp.renamed == [("K1", "START")]
    text = compare_text.render(cmp)
    assert "K1 -> START (renamed)" in text and "GONE (mutual-button): removed" in text


def test_revisions_sharing_no_sensor_are_refused() -> None:
    with pytest.raises(SensorcheckError, match="share no sensor"):
        compare_sides(side("old", [sensor("A", (0, 0, 1, 1))]), side("new", [sensor("B", (50, 0, 51, 1), kind="self-button")]))


def test_loss_is_the_larger_fall_of_delta_and_percent_change() -> None:
    # a mutual delta is negative: its magnitude is the signal
    assert loss_percent({"touch_delta_pf": -0.5, "percent_change": -25}, {"touch_delta_pf": -0.4, "percent_change": -25}) \
        == pytest.approx(20.0)
    assert loss_percent({"touch_delta_pf": 1.0, "percent_change": 50}, {"touch_delta_pf": 1.2, "percent_change": 40}) \
        == pytest.approx(20.0)
    assert loss_percent({"touch_delta_pf": 1.0, "percent_change": 50}, {"touch_delta_pf": 1.5, "percent_change": 60}) \
        == pytest.approx(-20.0)
    assert loss_percent(None, {"touch_delta_pf": 1.0}) is None


def test_findings_new_fixed_unchanged_and_the_gate() -> None:
    old = side("old", [sensor("K1", (0, 0, 10, 10)), sensor("K2", (20, 0, 30, 10))],
               [finding("gap.a", "K1", 5, 5), finding("gap.b", "K1", 5, 5), finding("board.x", None, 50, 50)])
    new = side("new", [sensor("K1", (0, 0, 10, 10), delta=-0.45), sensor("K2b", (20, 0, 30, 10), ("K2_TX", "K2_RX"))],
               [finding("gap.a", "K1", 5.2, 5.1),  # same place on the 0.5 mm grid: unchanged
                finding("trace.c", "K2b", 25, 5, "error"),  # new, on the renamed sensor
                finding("board.y", None, 60, 60, "note")])
    cmp = compare_sides(old, new)
    by = {s.name: s for s in cmp.sensors}
    assert [f.rule_id for f in by["K1"].unchanged_findings] == ["gap.a"]
    assert [f.rule_id for f in by["K1"].fixed_findings] == ["gap.b"]
    assert [f.rule_id for f in by["K2b"].new_findings] == ["trace.c"]
    assert [f.rule_id for f in cmp.board_fixed] == ["board.x"] and [f.rule_id for f in cmp.board_new] == ["board.y"]
    assert by["K1"].loss_percent == pytest.approx(10.0)
    # a mutual delta is negative: -0.5 -> -0.45 pF is a fall of its magnitude, -10 %
    assert by["K1"].values["touch_delta_pf"].relative_percent == pytest.approx(-10.0)
    assert not apply_gate(cmp, 10.0, None).failed  # 10 % is not more than 10 %
    assert apply_gate(cmp, 9.9, None).failures == ["K1 loses 10.0 % of its signal (more than --fail-on-loss 9.9)"]
    assert len(apply_gate(cmp, None, "error").failures) == 1
    assert len(apply_gate(cmp, None, "note").failures) == 2  # the error and the board's new note
    data = compare_json.report_data(cmp)
    assert data["gate"]["failed"] and [s["name"] for s in data["sensors"]][0] == "K1"  # the loss first


def test_a_grouped_finding_of_an_earlier_report_compares_place_by_place() -> None:
    grouped = finding("hatch.x", None, 5, 5, places=2, sensors=["K1", "K2"],
                      related=[{"layer": "top-copper", "x_mm": 5, "y_mm": 5}, {"layer": "top-copper", "x_mm": 25, "y_mm": 5}])
    old = side("old", [sensor("K1", (0, 0, 10, 10)), sensor("K2", (20, 0, 30, 10))], [grouped])
    new = side("new", [sensor("K1", (0, 0, 10, 10)), sensor("K2", (20, 0, 30, 10))], [finding("hatch.x", "K2", 25, 5)])
    by = {s.name: s for s in compare_sides(old, new).sensors}
    assert [f.rule_id for f in by["K1"].fixed_findings] == ["hatch.x"]
    assert by["K2"].new_findings == [] and [f.rule_id for f in by["K2"].unchanged_findings] == ["hatch.x"]


@pytest.mark.parametrize("limit", [GITHUB_COMMENT_LIMIT, 6000])
def test_the_markdown_comment_is_cut_at_the_limit_and_stays_valid(limit: int) -> None:
    n = 400
    old = side("old", [sensor(f"K{i}", (20 * i, 0, 20 * i + 10, 10)) for i in range(n)],
               [finding("gap.a", f"K{i}", 20 * i + 5, 5) for i in range(n)])
    new = side("new", [sensor(f"K{i}", (20 * i, 0, 20 * i + 10, 10), delta=-0.5 + 0.001 * i) for i in range(n)],
               [finding("gap.z", f"K{i}", 20 * i + 5, 5, "error") for i in range(n)])
    cmp = compare_sides(old, new)
    apply_gate(cmp, 5.0, "error")
    full = compare_markdown.render(cmp, limit_chars=GITLAB_NOTE_LIMIT)
    assert len(full) > GITHUB_COMMENT_LIMIT and "**Cut:**" not in full  # GitLab takes all of it
    text = compare_markdown.render(cmp, limit_chars=limit)
    assert len(text) <= limit
    assert "**Cut:**" in text and text.count("<details>") == text.count("</details>")
    assert "Estimates are not measurements" in text  # the caution is always kept
    # sorted by loss: the biggest loss (the last key, 0.001 x 399 less delta) comes first in the table
    rows = [line for line in text.splitlines() if line.startswith("| K")]
    assert rows[0].startswith("| K399 ")
