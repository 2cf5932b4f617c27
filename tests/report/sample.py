"""Results built by hand from the dataclasses (no board reading): two boards, findings of every
severity, a waived one, an internal error, one without a place, and hostile net names."""

from __future__ import annotations

from sensorcheck.findings import (
    Finding,
    Location,
    Result,
    RuleInfo,
    SensorSummary,
    Waiver,
    assign_fingerprints,
)

#: Net and sensor names a board file could carry: markup, a line break that starts a workflow
#: command, separators of every format, terminal escapes, a right-to-left override.
HOSTILE_NETS = (
    "<script>alert(1)</script>",
    "RX|1 *x* [y](z)",
    "TX\n::error file=x::pwned",
    "50%,a:b\r\n%0A",
    "\x1b[31mRED\x1b[0m",
    "[bold]B[/bold] & <b>",
    "\u202egnp.exe",
    "back\\slash'\"`",
)
HOSTILE_SENSOR = "K<i>9</i>|\n::warning::x"

DOC = """Checks the gap between the transmitter and receiver electrodes against the overlay thickness.

What it checks: the smallest TX-RX gap of each mutual node.
Why it matters: the fringing field must reach through the overlay.
Known limitations: rule of thumb only.
Example: 2 mm overlay, 1.2 mm gap.
Fix: widen the gap.
Parameters: ratio (common practice).
References: common practice."""


def rules() -> list[RuleInfo]:
    return [
        RuleInfo("gap.tx-rx-vs-overlay", "TX-RX gap against overlay thickness", "gap", "warning", DOC,
                 {"ratio": (0.6, "1", "common practice")}),
        RuleInfo("gap.electrode-ground", "Self electrode to ground gap", "gap", "warning", "Gap to ground.\n\nMore."),
        RuleInfo("area.rx-to-ground", "Receiver area against ground area", "area", "note", "RX area fraction."),
        RuleInfo("hatch.fill-near-sensor", "Hatch fill near sensors", "hatch", "warning", "Hatch fill."),
        RuleInfo("routing.aggressor-near-trace", "Aggressor nets near sensor traces", "routing", "error", "LED lines."),
        RuleInfo("routing.via-in-zone", "Vias in sensing zones", "routing", "error", "Vias."),
        RuleInfo("estimate.turnaround", "Touch signal turnaround", "estimate", "error", "Solver."),
    ]


def _board_a() -> Result:
    top = "fab/panel-a-F_Cu.gbr"
    findings = [
        Finding("routing.aggressor-near-trace", "error", "LED1 runs 0.3 mm from the K1 RX trace over 12 mm",
                0.3, 1.0, "mm", Location("top-copper", 12.5, 30.25, (10.0, 29.0, 15.0, 31.5), top, 120),
                [Location("top-copper", 14.0, 30.0, None, top, 98)], ("LED1", "RX1"), "K1",
                review="Scope the LED1 PWM edge on the RX line of the prototype."),
        Finding("routing.aggressor-near-trace", "error", "CLK runs 0.4 mm from the B1 trace",
                0.4, 1.0, "mm", Location("bottom-copper", 40.0, 5.0, None, "fab/panel-a-B_Cu.gbr", 77),
                nets=("CLK", "TOUCH1"), sensor="B1"),
        Finding("routing.via-in-zone", "error", "a via of net " + HOSTILE_NETS[0] + " sits in the zone of K1",
                0.0, 0.0, "vias", Location("top-copper", 20.0, 20.0, None, top, None), nets=HOSTILE_NETS, sensor="K1"),
        Finding("gap.tx-rx-vs-overlay", "warning", "TX-RX gap 0.5 mm is 0.25 x the 2 mm overlay",
                0.25, 0.6, "ratio", Location("top-copper", 11.0, 28.0, None, top, 15), nets=("TX1", "RX1"), sensor="K1"),
        Finding("gap.electrode-ground", "warning", "ground is 0.2 mm from the B1 electrode",
                0.2, 1.0, "mm", Location("top-copper", 41.0, 6.5), nets=("TOUCH1", "GND"), sensor="B1"),
        Finding("hatch.fill-near-sensor", "warning", "hatch fill 72 % under B1 (limit 50 %)",
                72.0, 50.0, "%", Location("bottom-copper", None, None, (35.0, 0.0, 45.0, 10.0), "fab/panel-a-B_Cu.gbr"),
                nets=("GND",), sensor="B1", review="Confirm the hatch pitch on the fabricated board."),
        Finding("area.rx-to-ground", "note", "RX area is 18 % of the ground around K1",
                18.0, None, "%", Location("top-copper", 12.0, 29.0), nets=("RX1",), sensor="K1"),
        Finding("area.rx-to-ground", "note", "RX area is 9 % of the ground around " + HOSTILE_SENSOR,
                9.0, None, "%", Location("top-copper", 60.0, 29.0), nets=(HOSTILE_NETS[1],), sensor=HOSTILE_SENSOR),
        Finding("gap.electrode-ground", "note", "no overlay thickness given: the gap rule used none",
                None, None, None, Location()),
        Finding("gap.tx-rx-vs-overlay", "warning", "TX-RX gap 0.6 mm is 0.3 x the overlay",
                0.3, 0.6, "ratio", Location("top-copper", 61.0, 28.0, None, top, 33), nets=("TX2", HOSTILE_NETS[2]),
                sensor=HOSTILE_SENSOR,
                waived_by=Waiver("gap.tx-rx-vs-overlay", "thin <b>glass</b> | front\npanel, 50% approved", sensor="K9",
                                 expires="2027-06-30", index=0)),
        Finding("estimate.turnaround", "error", "the field solver raised: ValueError('singular matrix')",
                kind="internal-error", sensor="K1"),
    ]
    assign_fingerprints(findings, "panel-a")
    sensors = [
        SensorSummary("K1", "mutual-button", "top-copper", ("TX1", "RX1"), (8.0, 25.0, 16.0, 33.0),
                      {"gap_mm": 0.5, "rx_area_mm2": 28.27, "tx_area_mm2": 40.0, "overlay_mm": 2.0},
                      estimate={"model": "BEM 2.5-D, 412 panels", "cm_pf": 1.234, "delta_cm_pf": 0.0812,
                                "curve": [[0.0, 1.1], [1.0, 1.2]],
                                "notes": ["overlay thinner than the model's validity range"]},
                      checklist=["Measure the touch signal with a 2 mm PMMA overlay on the prototype."]),
        SensorSummary("B1", "self-button", "top-copper", ("TOUCH1",), (38.0, 3.0, 44.0, 9.0),
                      {"diameter_mm": 10.0, "parasitic_pf": 12.5, "status": "ok"}),
        SensorSummary(HOSTILE_SENSOR, "mutual-button", "top-copper", ("TX2", HOSTILE_NETS[1]), None,
                      {"gap_mm": 0.6}, checklist=["Check " + HOSTILE_NETS[0] + " by eye"]),
    ]
    return Result(
        board="panel-a",
        source="fab",
        tool_version="0.1.0",
        config_file="sensorcheck.toml",
        findings=findings,
        sensors=sensors,
        rules=rules(),
        rules_run=[r.id for r in rules()],
        files=[{"path": "fab/panel-a-F_Cu.gbr", "layer": "top-copper"}],
        notes=["no job file: stackup from sensorcheck.toml", "net " + HOSTILE_NETS[3] + " matched no role"],
        overlay={"thickness_mm": 2.0, "epsilon_r": 2.8},
    )


def _board_b() -> Result:
    findings = [
        Finding("routing.via-in-zone", "error", "a via of GND sits in the zone of S1",
                None, None, None, Location("top-copper", 5.0, 5.0, None, "b/top.gbr", 10), nets=("GND",), sensor="S1"),
        Finding("gap.tx-rx-vs-overlay", "warning", "TX-RX gap 0.8 mm is 0.4 x the overlay",
                0.4, 0.6, "ratio", Location("top-copper", 7.0, 5.0, None, "b/top.gbr", 11), nets=("TX", "RX"), sensor="S1"),
        Finding("area.rx-to-ground", "note", "RX area is 5 % of the ground", 5.0, None, "%",
                Location("top-copper", 5.0, 6.0), nets=("RX",), sensor="S1"),
        Finding("input.unreadable", "error", "b/inner.gbr:57: unknown aperture D999 (expected a defined aperture)",
                location=Location(file="b/inner.gbr", line=57), kind="input-error"),
    ]
    assign_fingerprints(findings, "panel-b")
    return Result(
        board="panel-b",
        source="b",
        tool_version="0.1.0",
        config_file=None,
        findings=findings,
        sensors=[SensorSummary("S1", "mutual-button", "top-copper", ("TX", "RX"), None, {"gap_mm": 0.8})],
        rules=rules()[:6],
        rules_run=["gap.tx-rx-vs-overlay", "gap.electrode-ground", "area.rx-to-ground", "routing.via-in-zone"],
    )


def make_results() -> list:
    """Two boards; built fresh on every call (findings are mutable)."""
    return [_board_a(), _board_b()]
