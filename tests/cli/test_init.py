"""`sensorcheck init`: a starter config from net names and the job file that loads as written."""

from __future__ import annotations

import argparse
import tomllib
from pathlib import Path

import pytest
from shapely.geometry import box

from sensorcheck.board.model import Board, Stackup, StackupLayer
from sensorcheck.commands import init
from sensorcheck.design.config import load_config
from sensorcheck.design.sensors import build_design

import importlib.util
import sys

_SYNTH = Path(__file__).resolve().parents[1] / "design" / "synth.py"
_spec = importlib.util.spec_from_file_location("_init_synth", _SYNTH)
assert _spec is not None and _spec.loader is not None
synth = importlib.util.module_from_spec(_spec)
sys.modules["_init_synth"] = synth
_spec.loader.exec_module(synth)


def _known_rules() -> dict[str, dict[str, type]] | None:
    try:
        from sensorcheck.rules.engine import known_rules
    except ImportError:
        return None
    return known_rules()


def demo_board(stackup: Stackup | None = None) -> Board:
    top = {
        "GND": box(-30, -30, -20, -20),
        "/TOUCH1": synth.disc(0, 0, 5),
        "SLD0": box(20, 0, 27.5, 12),
        "SLD1": box(28, 0, 35.5, 12),
        "SLD2": box(36, 0, 43.5, 12),
        "TX1": synth.ring(0, 30, 4.5, 6),
        "RX1": synth.disc(0, 30, 4),
        "LED_RED": box(50, 50, 60, 51),
        "SCL": box(50, 60, 60, 61),
        "SW": box(50, 70, 60, 71),
        "UART_TX": box(50, 80, 60, 81),
        'ODD"NAME[1]*': box(70, 80, 71, 81),
        "Net-(R1-Pad2)": box(70, 70, 71, 71),
    }
    board = synth.make_board({"top-copper": top, "bottom-copper": {"GND": box(-50, -50, 80, 90)}}, name="demo")
    board.stackup = stackup
    return board


JOB_STACKUP = Stackup(
    layers=[
        StackupLayer("F.Cu", "copper", 0.035, copper_layer="top-copper"),
        StackupLayer("core", "dielectric", 1.53, material="FR4", epsilon_r=4.5),
        StackupLayer("B.Cu", "copper", 0.035, copper_layer="bottom-copper"),
    ],
    board_thickness_mm=1.6,
    source="jobfile",
)


def args(path: Path, output: Path | None = None, force: bool = False) -> argparse.Namespace:
    return argparse.Namespace(path=str(path), output=output, force=force)


def test_guesses_by_name() -> None:
    g = init.guess_roles(["KEYBOARD_EN", "TP1", "GND", "GNDA", "VSS", "TX3", "RX_2", "X0", "Y4", "TOUCH_A", "BTN2", "KEY10", "SLIDER1",
                          "WHEEL0", "PAD3", "SW1", "SW", "PWM_FAN", "LED1", "SCK", "ANT", "UART_TX", "RXD", "VCC",
                          "SHIELD", "GUARD1"])
    role = {n: v[0] for n, v in g.items()}
    kind = {n: v[1] for n, v in g.items() if v[1]}
    assert role["GND"] == role["GNDA"] == role["VSS"] == "ground"
    assert role["TX3"] == role["X0"] == "transmitter"
    assert role["RX_2"] == role["Y4"] == "receiver"
    for n in ("TOUCH_A", "BTN2", "KEY10", "SLIDER1", "WHEEL0", "PAD3", "SW1"):
        assert role[n] == "self", n
    assert kind == {"SW": "switching", "PWM_FAN": "switching", "LED1": "led", "SCK": "clock", "ANT": "radio"}
    assert "KEYBOARD_EN" not in g and "TP1" not in g
    assert "UART_TX" not in g and "RXD" not in g and "VCC" not in g  # serial lines and supplies: no guess
    assert role["SHIELD"] == "shield" and role["GUARD1"] == "guard"


def test_writes_a_config_that_loads_and_finds_the_sensors(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    board = demo_board(JOB_STACKUP)
    out = tmp_path / "sensorcheck.toml"
    assert init.run(args(tmp_path, out), loader=lambda p: board) == 0
    assert "REVIEW" in capsys.readouterr().out
    text = out.read_text(encoding="utf-8")
    config = load_config(out, known_rules=_known_rules())  # loads as written, shipped profile included
    # every active guess has a REVIEW line right above it
    lines = text.splitlines()
    for i, line in enumerate(lines):
        if line.startswith(("transmitter =", "receiver =", "self =", "ground =", "aggressor =", "face =")):
            assert lines[i - 1].startswith("# REVIEW:"), line
    assert config.stackup_override is not None
    assert config.stackup_override.copper_z_mm()["top-copper"] == pytest.approx(1.6)
    assert config.overlay is None  # never guessed: only a commented template
    assert config.groups == []  # slider segments are named by pattern; the board gives their order
    assert {(r.pattern, r.sensor) for r in config.roles if r.sensor} == {("SLD*", "sld")}
    d = build_design(board, config)
    kinds = sorted((s.kind, s.name) for s in d.sensors)
    assert kinds == [("mutual-button", "TX1/RX1"), ("self-button", "/TOUCH1"), ("slider", "sld")]
    assert d.roles["LED_RED"] == ("aggressor", "led") and d.roles["SW"] == ("aggressor", "switching")
    assert "UART_TX" not in d.roles


def test_odd_names_are_escaped(tmp_path: Path) -> None:
    board = demo_board()
    board.layers[0].by_net["KEY[1]"] = synth.disc(90, 90, 4)
    board.layers[0].by_net["KEY[2]"] = synth.disc(110, 90, 4)
    board.layers[0].by_net["KEY12"] = synth.disc(130, 90, 4)
    text = init.starter_config(board)
    data = tomllib.loads(text)
    assert data["roles"]["self"]  # parses
    out = tmp_path / "sensorcheck.toml"
    out.write_text(text, encoding="utf-8")
    d = build_design(board, load_config(out, known_rules=_known_rules()))
    assert d.roles["KEY[1]"] == d.roles["KEY[2]"] == ("self", None)  # escaped patterns match the names exactly
    assert d.roles["KEY12"] == ("self", None)
    assert 'ODD"NAME[1]*' not in d.roles  # its name suggests nothing; it is only listed in a comment


def test_no_job_file_and_no_net_names(tmp_path: Path) -> None:
    board = synth.make_board({"top-copper": {"~n1": synth.disc(0, 0, 5)}})
    text = init.starter_config(board)
    assert "# [stackup]" in text and "no Gerber job file" in text
    assert "no net names" in text and "# [[roles.place]]" in text
    out = tmp_path / "x.toml"
    out.write_text(text)
    c = load_config(out, known_rules=_known_rules())
    assert c.roles == [] and c.stackup_override is None


def test_refuses_to_overwrite_without_force(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    out = tmp_path / "sensorcheck.toml"
    out.write_text("# mine\n")
    assert init.run(args(tmp_path, out), loader=lambda p: demo_board()) == 2
    assert "--force" in capsys.readouterr().err
    assert out.read_text() == "# mine\n"
    assert init.run(args(tmp_path, out, force=True), loader=lambda p: demo_board()) == 0
    assert out.read_text() != "# mine\n"


def test_never_writes_into_the_input_folder_unless_asked(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """Issue 12: the config goes to standard output by default; the input folder is left as it was."""
    before = sorted(tmp_path.iterdir())
    assert init.run(args(tmp_path), loader=lambda p: demo_board()) == 0
    assert sorted(tmp_path.iterdir()) == before
    printed = capsys.readouterr().out
    assert tomllib.loads(printed)["roles"]  # the config itself, parseable


def test_deterministic() -> None:
    assert init.starter_config(demo_board(JOB_STACKUP)) == init.starter_config(demo_board(JOB_STACKUP))


def test_cli_refuses_overwrite_with_exit_2(tmp_path: Path) -> None:
    """Through the real command line (loads the board with the real reader when it is there)."""
    pytest.importorskip("sensorcheck.board.build")
    from sensorcheck.cli import main

    (tmp_path / "sensorcheck.toml").write_text("")
    assert main(["init", str(tmp_path)]) == 2


def test_folder_without_fabrication_data_is_exit_2(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    (tmp_path / "notes.txt").write_text("not a Gerber file\n")
    empty = synth.make_board({})
    assert init.run(args(tmp_path), loader=lambda p: empty) == 2
    assert "no fabrication data" in capsys.readouterr().err


def test_explain_lists_sensors_evidence_and_rejected_copper(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    board = demo_board()
    ns = args(tmp_path)
    ns.explain = True
    assert init.run(ns, loader=lambda p: board) == 0
    text = capsys.readouterr().out
    assert "mutual-button" in text and "TX: TX1" in text and "RX: RX1" in text  # the ring round the disc
    assert "evidence:" in text and "rejected" in text
    assert "UART_TX on top-copper: only lines" in text  # a line between parts: looked at and rejected


def test_cli_folder_without_fabrication_data_is_exit_2(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """Through the real reader: a folder holding no Gerber, drill or netlist file writes nothing, exit 2."""
    pytest.importorskip("sensorcheck.board.build")
    from sensorcheck.cli import main

    (tmp_path / "readme.txt").write_text("no fabrication data here\n")
    assert main(["init", str(tmp_path)]) == 2
    assert sorted(p.name for p in tmp_path.iterdir()) == ["readme.txt"]
    assert capsys.readouterr().out == ""
