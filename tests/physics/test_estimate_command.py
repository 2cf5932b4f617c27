"""``sensorcheck estimate``: table, JSON, figure, sweep parsing, and a run on an invented design."""

from __future__ import annotations

import argparse
import json
from pathlib import Path

import pytest

from sensorcheck.commands import estimate as cmd
from sensorcheck.errors import SensorcheckError
from sensorcheck.physics.estimate import SensorEstimate

from .designs import button


def _est(name: str = "K1", turn: float | None = 1.2) -> SensorEstimate:
    return SensorEstimate(
        sensor=name,
        kind="mutual",
        model="estimate: test model",
        baseline_pf=1.30,
        touch_delta_pf=-0.15,
        percent_change=-11.5,
        turning_point_mm=turn,
        curve=[(20.0, 1.299), (2.0, 1.20), (0.0, 1.15)],
        best_point_mm=(1.0, -4.0),
        crosstalk_pf={"K2": -0.004},
        panels=1234,
        notes=["window 15 mm"],
    )


def test_rows_label_units_and_values() -> None:
    rows = cmd.estimate_rows({"K1": _est(), "A0": _est("A0", None)})
    assert [r["sensor"] for r in rows] == ["A0", "K1"]
    k1 = rows[1]
    # 3 significant digits, the touch delta and crosstalk in fF (the check's unit too)
    assert k1["baseline_pf"] == "1.3" and k1["touch_delta_ff"] == "-150" and k1["turning_point_mm"] == "1.2"
    assert rows[0]["turning_point_mm"] == "none"
    assert k1["crosstalk"] == "K2 -4"


@pytest.mark.parametrize("width", [80, 120])
def test_table_fits_the_width_and_never_cuts_a_number(width: int) -> None:
    import io

    est = {"K1": _est(), "A0": _est("A0", None)}
    for e in est.values():
        e.crosstalk_pf = {f"N{i}": -0.001234 * i for i in range(12)}  # a long neighbours cell
    out = io.StringIO()
    cmd.print_table(est, out, width=width)
    text = out.getvalue()
    assert max(len(line) for line in text.splitlines()) <= width
    assert text.isascii()
    for row in cmd.estimate_rows(est):
        for key in ("touch_delta_ff", "percent_change"):
            assert f" {row[key]}" in text  # whole, never truncated with an ellipsis
    assert text.count("model: ") == 1 and text.count("window 15 mm") == 1


def test_json_is_deterministic_and_says_estimate() -> None:
    a = json.dumps(cmd.estimates_json({"K1": _est()}), sort_keys=True)
    b = json.dumps(cmd.estimates_json({"K1": _est()}), sort_keys=True)
    assert a == b
    data = json.loads(a)
    assert "measure a prototype" in data["disclaimer"]
    assert data["estimates"][0]["curve"][0] == [20.0, 1.299]


@pytest.mark.parametrize("suffix, magic", [(".png", b"\x89PNG"), (".svg", b"<?xml")])
def test_plot_writes_png_or_svg(tmp_path: Path, suffix: str, magic: bytes) -> None:
    out = tmp_path / f"curves{suffix}"
    cmd.plot_curves({"K1": _est()}, out)
    assert out.read_bytes().startswith(magic)


def test_plot_refuses_other_formats(tmp_path: Path) -> None:
    with pytest.raises(SensorcheckError, match="png or .svg"):
        cmd.plot_curves({"K1": _est()}, tmp_path / "curves.pdf")


@pytest.mark.parametrize("text", ["thickness=1,2", "overlay_thickness_mm=", "overlay_epsilon_r=a,b"])
def test_bad_sweep_specs(text: str) -> None:
    with pytest.raises(SensorcheckError):
        cmd.parse_sweep(text)


def test_sweep_spec() -> None:
    assert cmd.parse_sweep("overlay_epsilon_r=2.8,7") == ("overlay_epsilon_r", [2.8, 7.0])


def test_run_prints_table_and_writes_figure(tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]) -> None:
    fast = {"h_edge_mm": 1.0, "h_near_mm": 1.5, "h_far_mm": 4.0, "window_mm": 8.0, "finger_sides": 16, "search": False, "heights": 3}
    design = button(estimate=fast)
    import sensorcheck.check as check

    monkeypatch.setattr(check, "build_design_for", lambda path, config=None: design)
    args = argparse.Namespace(path="x", config=None, sensor=["K1"], plot=tmp_path / "c.png", sweep=None, format="text")
    assert cmd.run(args) == 0
    out = capsys.readouterr().out
    assert "estimates" in out.lower() and "K1" in out and "measure a prototype" in out
    assert (tmp_path / "c.png").exists()


def test_nodes_segments_and_position_are_shown_and_in_json() -> None:
    from sensorcheck.physics.estimate import NodeEstimate, PositionResponse, SegmentEstimate

    e = _est()
    e.nodes = [NodeEstimate("TX1", "RX2", (1.0, 2.0), 0.5, -0.05, -10.0)]
    e.segments = [SegmentEstimate("S1", (0.0, 0.0), 0.0, 6.5, 0.3, {"S2": 0.04})]
    e.position = PositionResponse(20.0, False, [(0.0, 0.3, 0.3), (10.0, None, None)], 0.3, [(10.0, 10.0)], 0.1)
    lines = cmd.channel_lines(e)
    assert lines[0] == "node TX1/RX2: Cm 0.500 pF, touch -50.0 fF (-10.0 %)"
    assert lines[1] == "segment S1: parasitic 6.50 pF, touch +300.0 fF, neighbours S2 +40.0 fF"
    assert lines[2] == "position along 20.0 mm: largest centroid error 0.30 mm; dead zones 10.0-10.0 mm"
    j = cmd.estimates_json({"K1": e})["estimates"][0]
    assert j["nodes"][0]["tx"] == "TX1" and j["segments"][0]["crosstalk_pf"] == {"S2": 0.04}
    assert j["position"]["points"][1] == [10.0, None, None] and j["position"]["dead_zones_mm"] == [[10.0, 10.0]]
    assert "nodes" not in cmd.estimates_json({"K1": _est()})["estimates"][0]  # only where estimated


def test_quiet_table_keeps_the_numbers_and_the_disclaimer_but_no_notes() -> None:
    import io

    est = {"K1": _est(), "A0": _est("A0", None)}
    loud, quiet = io.StringIO(), io.StringIO()
    cmd.print_table(est, loud, width=100)
    cmd.print_table(est, quiet, width=100, quiet=True)
    assert "window 15 mm" in loud.getvalue() and "window 15 mm" not in quiet.getvalue()
    for row in cmd.estimate_rows(est):
        assert f" {row['touch_delta_ff']}" in quiet.getvalue()
    # an estimate is never shown without saying it is one (the brief's safety line)
    assert "measure a prototype" in quiet.getvalue()
    from sensorcheck.cli import _parser

    args = _parser().parse_args(["estimate", "x", "--quiet"])
    assert args.quiet and not args.verbose
    with pytest.raises(SystemExit):
        _parser().parse_args(["estimate", "x", "--quiet", "--verbose"])


def test_turnarounds_are_printed_and_in_the_json_with_height_kind_and_curve() -> None:
    # issue 15: every change of the approach curve with its height and its kind, per curve
    import io

    from sensorcheck.physics.estimate import Turn

    e = _est()
    e.turnarounds = [Turn(4.0, "turns", "centre"), Turn(1.0, "reverses sign", "centre"), Turn(0.5, "turns", "best")]
    out = io.StringIO()
    cmd.print_table({"K1": e}, out, width=400)  # one line, not wrapped
    text = out.getvalue()
    assert ("K1: signal turns at 0.50 mm above the overlay surface with the finger over the most sensitive point; "
            "turns at 4.00 mm and reverses sign at 1.00 mm above the overlay surface with the finger over the node "
            "centre") in text
    data = cmd.estimates_json({"K1": e})["estimates"][0]
    assert data["turnarounds"] == [{"height_mm": 4.0, "kind": "turns", "curve": "centre"},
                                   {"height_mm": 1.0, "kind": "reverses sign", "curve": "centre"},
                                   {"height_mm": 0.5, "kind": "turns", "curve": "best"}]
    e.turnarounds = []
    out = io.StringIO()
    cmd.print_table({"K1": e}, out, width=200)
    assert "signal " not in out.getvalue() and cmd.estimates_json({"K1": e})["estimates"][0]["turnarounds"] == []
