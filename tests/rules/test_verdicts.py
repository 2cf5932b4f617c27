"""Verdicts a reviewer can trust: one finding per cause, severity caps, the metric with its direction,
the fix and reference on every finding, estimate.unavailable as a rule, and where the signal turns.

Outside references: the grouping and cap expectations follow from the issue's contract (places of
one cause -> one finding listing them; a configured severity caps the rule) on findings built by
hand; the turning point checks use approach curves written by hand whose peak is known by
construction (a curve whose |signal| is largest at 2 mm and smaller at touch turns; a curve
growing monotonically to touch does not), not the solver.
"""

from __future__ import annotations

from sensorcheck.physics.estimate import SensorEstimate
from sensorcheck.rules import engine
from sensorcheck.rules.engine import describe, group_by_cause, registry, run_rules
from sensorcheck.findings import Finding, Location, assign_fingerprints, fingerprint_for
from sensorcheck.rules.signal import turning_place

from .test_gap import mutual_node


def _f(x: float, value: float = 1.0, sensor: str = "S1", nets: tuple[str, ...] = ("GND",),
       rule: str = "routing.foreign-copper-in-zone", severity: str = "warning") -> Finding:
    return Finding(rule_id=rule, severity=severity, message=f"copper at {x}", value=value, limit=0.0, unit="mm2",
                   location=Location(layer="top-copper", x_mm=x, y_mm=0.0), nets=nets, sensor=sensor)


def _grouped(findings: list[Finding]) -> list[Finding]:
    describe(findings)
    assign_fingerprints(findings, "b")
    out = group_by_cause(findings)
    assign_fingerprints(out, "b")
    return out


def test_places_of_one_cause_become_one_finding_listing_them() -> None:
    singles = [_f(x, value=v) for x, v in ((0.0, 1.0), (5.0, 3.0), (10.0, 2.0))]
    originals = {fingerprint_for(f, "b") for f in singles}
    (g,) = _grouped(singles)
    assert g.places == 3 and len(g.related) == 3
    assert {(loc.x_mm) for loc in g.related} == {0.0, 5.0, 10.0}  # every place stays
    assert g.value == 3.0 and g.location.x_mm == 5.0  # the worst place leads (a maximum was exceeded)
    assert set(g.members) == originals  # a baseline of the places still matches
    assert "worst of 3 places" in g.message


def test_group_fingerprint_comes_from_the_cause_not_the_places() -> None:
    (a,) = _grouped([_f(0.0), _f(5.0)])
    (b,) = _grouped([_f(0.0), _f(5.0), _f(7.5)])
    assert a.fingerprint == b.fingerprint


def test_single_findings_keep_their_fingerprint() -> None:
    f = _f(1.0)
    expected = fingerprint_for(f, "b")
    (g,) = _grouped([f])
    assert g.places == 1 and g.fingerprint == expected and not g.related


def test_different_causes_stay_apart() -> None:
    r = "routing.trace-under-electrode"  # a rule whose cause includes the net (one bus)
    out = _grouped([_f(0.0, nets=("GND",), rule=r), _f(5.0, nets=("LED",), rule=r), _f(9.0, severity="error", rule=r)])
    assert len(out) == 3


def test_a_row_of_sensors_at_one_spacing_is_one_finding_but_other_spacings_are_not() -> None:
    rows = [_f(0.0, 2.71, "K1", ("K1", "K2"), "electrode.neighbour-spacing"),
            _f(5.0, 2.71, "K2", ("K2", "K3"), "electrode.neighbour-spacing"),
            _f(9.0, 1.88, "K3", ("K3", "K4"), "electrode.neighbour-spacing")]
    for f in rows:
        f.limit = 5.0
    out = sorted(_grouped(rows), key=lambda f: f.places)
    assert [f.places for f in out] == [1, 2]
    assert out[1].sensors == ("K1", "K2") and out[1].sensor is None
    assert out[0].direction == "min"  # 1.88 mm against a 5 mm spacing: a minimum


def test_unnamed_islands_of_one_bus_are_one_cause() -> None:
    out = _grouped([_f(0.0, nets=("~naaaa",)), _f(5.0, nets=("~nbbbb",))])
    assert len(out) == 1 and out[0].places == 2


def test_every_finding_carries_direction_fix_and_reference() -> None:
    run = run_rules(mutual_node(0.4))
    assert run.findings
    for f in run.findings:
        assert f.fix and "\n" not in f.fix, f.rule_id
        assert f.reference and f.reference.startswith(f"sensorcheck rules {f.rule_id}")
        if f.value is not None and f.limit is not None and f.value != f.limit:
            assert f.direction == ("max" if f.value > f.limit else "min"), f.rule_id


def test_configured_severity_caps_every_finding_unless_keep_errors() -> None:
    design = mutual_node(0.4)
    rid = "gap.tx-rx-vs-overlay"
    cls = registry()[rid]

    class Loud(cls):  # a rule that raises its hard case to error, as some shipped rules do
        def check(self, design, estimates, params):
            for f in super().check(design, estimates, params):
                f.severity = "error"
                yield f

    reg = dict(registry())
    reg[rid] = Loud
    orig = engine.registry
    engine.registry = lambda: reg  # type: ignore[assignment]
    try:
        assert any(f.rule_id == rid and f.severity == "error" for f in run_rules(design).findings)
        design.config.severities[rid] = "note"
        design.config.keep_errors[rid] = False  # what a board config's table with a severity sets
        sev = {f.severity for f in run_rules(design).findings if f.rule_id == rid}
        assert sev == {"note"}
        design.config.keep_errors[rid] = True
        sev = {f.severity for f in run_rules(design).findings if f.rule_id == rid}
        assert "error" in sev
    finally:
        engine.registry = orig  # type: ignore[assignment]


def test_estimate_unavailable_is_a_documented_rule_whose_severity_can_be_set() -> None:
    cls = registry()["estimate.unavailable"]
    assert engine.doc_sections(cls)["Fix"]
    design = mutual_node(0.4)
    miss = Finding(rule_id="estimate.unavailable", severity="warning", message="no estimate for K1", sensor="K1")
    assert any(f.rule_id == "estimate.unavailable" and f.severity == "warning"
               for f in run_rules(design, extra=[miss]).findings)
    design.config.severities["estimate.unavailable"] = "note"
    miss = Finding(rule_id="estimate.unavailable", severity="warning", message="no estimate for K1", sensor="K1")
    assert [f.severity for f in run_rules(design, extra=[miss]).findings if f.rule_id == "estimate.unavailable"] == ["note"]
    design.config.severities["estimate.unavailable"] = "off"
    miss = Finding(rule_id="estimate.unavailable", severity="warning", message="no estimate for K1", sensor="K1")
    assert not [f for f in run_rules(design, extra=[miss]).findings if f.rule_id == "estimate.unavailable"]


def _est(curve: list[tuple[float, float]], curve_centre: list[tuple[float, float]]) -> SensorEstimate:
    from sensorcheck.physics.finger import turning_point

    tps = [t for t in (turning_point(curve, 1.0), turning_point(curve_centre, 1.0)) if t is not None]
    return SensorEstimate(sensor="K1", kind="mutual", model="m", baseline_pf=1.0, touch_delta_pf=-0.1,
                          percent_change=-10.0, turning_point_mm=max(tps) if tps else None, curve=curve,
                          best_point_mm=(10.0, 5.0), curve_centre=curve_centre, centre_mm=(18.0, 50.0))


# far to near; values of Cm (pF) with the baseline 1.0 pF
MONOTONIC = [(20.0, 0.99), (8.0, 0.97), (4.0, 0.94), (2.0, 0.92), (1.0, 0.91), (0.0, 0.90)]
TURNING = [(20.0, 0.99), (8.0, 0.97), (4.0, 0.93), (2.0, 0.90), (1.0, 0.93), (0.0, 0.96)]  # |signal| peaks at 2 mm


def test_turning_point_is_placed_where_the_signal_turns() -> None:
    place, which = turning_place(_est(MONOTONIC, TURNING))
    assert which == "centre" and place == (18.0, 50.0)  # not the most sensitive point, where it does not turn
    place, which = turning_place(_est(TURNING, MONOTONIC))
    assert which == "best" and place == (10.0, 5.0)


def test_one_pour_around_many_keys_is_one_finding_whatever_each_keys_share() -> None:
    pour = [_f(float(i), 95.0 + i, f"K{i}", (), "hatch.fill-near-sensor") for i in range(4)]
    other_layer = _f(9.0, 60.0, "K9", (), "hatch.fill-near-sensor")
    other_layer.location = Location(layer="bottom-copper", x_mm=9.0, y_mm=0.0)
    out = sorted(_grouped([*pour, other_layer]), key=lambda f: f.places)
    assert [f.places for f in out] == [1, 4]
    assert out[1].value == 98.0 and out[1].sensors == ("K0", "K1", "K2", "K3")


def test_a_zone_holding_copper_of_several_nets_is_one_cause_for_zone_rules() -> None:
    # routing.foreign-copper-in-zone: the zone of one sensor on one layer is the cause
    out = _grouped([_f(0.0, 1.0, nets=("+5V",)), _f(2.0, 3.9, nets=("LED-K",)), _f(4.0, 0.9, nets=("Q-G",))])
    assert len(out) == 1 and out[0].places == 3 and set(out[0].nets) == {"+5V", "LED-K", "Q-G"}
    assert "nets +5V, LED-K, Q-G" in out[0].message
    # a rule whose cause is a net keeps two nets apart
    two = _grouped([_f(0.0, 1.0, nets=("A",), rule="routing.trace-under-electrode"),
                    _f(2.0, 2.0, nets=("B",), rule="routing.trace-under-electrode")])
    assert len(two) == 2
