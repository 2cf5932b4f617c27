"""Readable names for unnamed copper (issue 12 item 2) and ground recognised by geometry where the
board has no names (issue 16 item 3), on synthetic Gerber boards whose answer is known by construction
(tests/recognition/synth_boards.py)."""

from __future__ import annotations

from pathlib import Path

from sensorcheck.board.build import load_board
from sensorcheck.commands.init import starter_config
from sensorcheck.design.config import load_config
from sensorcheck.design.model import readable
from sensorcheck.design.sensors import build_design
from sensorcheck.rules.engine import run_rules
from tests.recognition.synth_boards import write_board


def _design(tmp_path: Path, kind: str, named: bool):
    write_board(tmp_path / "b", kind, named=named, units="mm", face="top")
    board = load_board(tmp_path / "b")
    text = starter_config(board)
    (tmp_path / "c.toml").write_text(text, encoding="utf-8")
    return build_design(board, load_config(tmp_path / "c.toml")), text


def test_unnamed_slider_segments_are_named_by_sensor_and_position(tmp_path: Path) -> None:
    # source: the board has six 7.5 mm segments at x = 5 + 8k (synth_boards.self_slider)
    d, _ = _design(tmp_path, "self-slider", named=False)
    (s,) = [s for s in d.sensors if s.kind == "slider"]
    labels = [d.labels[n] for n in s.order]
    assert labels == [f"{s.name}.{i}" for i in range(1, 7)]
    xs = [e.geometry.centroid.x for e in s.electrodes]
    assert xs == sorted(xs) or xs == sorted(xs, reverse=True)  # the index follows the position
    assert readable(f"gap between {s.order[0]} and {s.order[1]}", d.labels) == f"gap between {s.name}.1 and {s.name}.2"


def test_findings_name_unnamed_copper_readably_and_keep_fingerprints(tmp_path: Path) -> None:
    d, _ = _design(tmp_path, "self-slider", named=False)
    run = run_rules(d)
    labelled = set(d.labels)
    assert run.findings
    for f in run.findings:
        assert not any(n in f.message for n in labelled), f.message
    # the fingerprint is made from the ids (the finding's nets), not from the readable names
    from sensorcheck.findings import fingerprint_for

    assert all(f.fingerprint.split("-")[0] == fingerprint_for(f, d.board.name) for f in run.findings)


def test_unnamed_ground_pour_is_recognised_by_its_span(tmp_path: Path) -> None:
    # source: synth_boards.buttons puts a pour over the whole board with openings round every pad
    d, text = _design(tmp_path, "buttons", named=False)
    assert 'role = "ground"' in text and "spanning the board" in text
    assert len(d.ground_nets()) == 1
    (g,) = d.ground_nets()
    la = d.board.layer("top-copper")
    assert la is not None and la.by_net[g].area > 0.5 * 80 * 40  # the pour, not a pad
    assert not any(g in s.nets for s in d.sensors)


def test_named_ground_stays_by_name(tmp_path: Path) -> None:
    d, text = _design(tmp_path, "buttons", named=True)
    assert d.ground_nets() == ["GND"]
    assert "ground by name" in text


def test_unnamed_mutual_button_electrodes_are_named_tx_and_rx() -> None:
    # the kind is "mutual-button" (the config's old spelling "mutual-node" is mapped to it on
    # reading), so a mutual key's two unnamed electrodes take the sensor's name and their role
    from shapely.geometry import Point, box

    from sensorcheck.design.model import Electrode, Sensor
    from sensorcheck.design.sensors import unnamed_labels

    tx = Electrode("~na", "transmitter", "top-copper", Point(0, 0).buffer(6).difference(Point(0, 0).buffer(4)))
    rx = Electrode("~nb", "receiver", "top-copper", Point(0, 0).buffer(3))
    key = Sensor("K1", "mutual-button", "top-copper", [tx, rx], box(-8, -8, 8, 8), 2.0)
    assert unnamed_labels([key]) == {"~na": "K1.TX", "~nb": "K1.RX"}
