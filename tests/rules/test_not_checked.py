"""A rule that cannot measure what it is listed for says so in one "not checked" line (issue 16).

Traces drawn as regions (polygons) carry no aperture width and no centre line (Gerber specification
2023.08, 4.10: a region is a contour, not a stroke of an aperture), so the trace rules cannot
measure them; and the summary counts the rules that measured, not the ones that only said so.
"""

from __future__ import annotations

from shapely.geometry import box

from sensorcheck.rules.engine import run_rules

from .build import draw, electrode, make_board, make_config, make_design, region, sensor, with_traces
from .helpers import run_one


def _button(trace_as_region: bool, second_drawn: bool = False):
    pad = box(-5, -5, 5, 5)
    shapes = [region("top-copper", pad, "B1")]
    if trace_as_region:
        shapes.append(region("top-copper", box(5, -0.15, 25, 0.15), "B1"))  # a 0.3 x 20 mm strip
    else:
        shapes.append(draw("top-copper", [(5, 0), (25, 0)], 0.3, "B1"))
    sensors = []
    if second_drawn:
        shapes += [region("top-copper", box(40, -5, 50, 5), "B2"), draw("top-copper", [(50, 0), (70, 0)], 0.2, "B2")]
    board = make_board(shapes)
    sensors.append(sensor("B1", "self-button", [with_traces(board, electrode("B1", "self", pad))]))
    if second_drawn:
        sensors.append(sensor("B2", "self-button", [with_traces(board, electrode("B2", "self", box(40, -5, 50, 5)))]))
    roles = {"B1": "self"} | ({"B2": "self"} if second_drawn else {})
    return make_design(board, make_config(1.0), roles, sensors)


def test_trace_drawn_as_region_is_not_checked_and_not_counted() -> None:
    design = _button(trace_as_region=True)
    found = run_one("trace.width", design)
    assert len(found) == 1 and found[0].severity == "note"
    assert found[0].message.startswith("not checked: ") and "B1" in found[0].message
    crossing = run_one("routing.crossing-angle", design)
    assert len(crossing) == 1 and crossing[0].message.startswith("not checked: the crossing angles")
    run = run_rules(design)
    assert "trace.width" not in run.rules_run and "trace.length" not in run.rules_run
    assert "routing.crossing-angle" not in run.rules_run
    # the same trace drawn with a 0.3 mm aperture is measured: over the 0.25 mm limit (common practice)
    drawn = _button(trace_as_region=False)
    widths = run_one("trace.width", drawn)
    assert [round(f.value, 3) for f in widths] == [0.3]
    assert "trace.width" in run_rules(drawn).rules_run


def test_partly_measured_says_partly() -> None:
    design = _button(trace_as_region=True, second_drawn=True)
    found = run_one("trace.width", design)
    assert [f.message.split(":")[0] for f in found] == ["partly not checked"]
    assert "B1" in found[0].message and "B2" not in found[0].message


def test_unnamed_board_is_told_to_give_roles_by_place() -> None:
    # no ground given: a named board is told the name pattern, a board without names the place
    design = _button(trace_as_region=False)
    named = [f for f in run_rules(design).findings if f.rule_id == "gap.electrode-ground-vs-overlay"]
    assert len(named) == 1 and 'ground = ["GND"]' in named[0].message
    design.board.net_source = "geometry"
    blind = [f for f in run_rules(design).findings if f.rule_id == "gap.electrode-ground-vs-overlay"]
    assert len(blind) == 1 and "[[roles.place]]" in blind[0].message and '"GND"' not in blind[0].message
    # no sensors at all on a board without names: the way to give them is by place
    design.sensors = []
    notes = [f for f in run_rules(design).findings if f.rule_id == "trace.width"]
    assert len(notes) == 1 and notes[0].message.startswith("not checked") and "[[roles.place]]" in notes[0].message
