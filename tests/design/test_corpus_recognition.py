"""Real boards (../shared/corpus): `init` writes a config that loads, and the sensors it leads to
match what the boards' designers published (corpus README, "sensors on the board").

Each expected count below is the designers' statement, not our output; skipped without ../shared.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from sensorcheck.commands.init import starter_config
from sensorcheck.design.config import load_config
from sensorcheck.design.sensors import build_design

pytestmark = pytest.mark.corpus


def _known_rules() -> dict[str, dict[str, type]] | None:
    try:
        from sensorcheck.rules.engine import known_rules
    except ImportError:
        return None
    return known_rules()


def design_from_init(shared_dir: Path, board_id: str, tmp_path: Path):
    build = pytest.importorskip("sensorcheck.board.build")
    fab = shared_dir / "corpus" / board_id / "fab"
    if not fab.is_dir():
        pytest.skip(f"{board_id} not in the corpus")
    board = build.load_board(fab)
    p = tmp_path / "sensorcheck.toml"
    p.write_text(starter_config(board), encoding="utf-8")
    config = load_config(p, known_rules=_known_rules())
    return build_design(board, config), p.read_text(encoding="utf-8")


def test_b03_wheel(shared_dir: Path, tmp_path: Path) -> None:
    # designers: "a 3-electrode interleaved wheel on the bottom copper"; nets /TOUCH0..2 (X2 names)
    d, text = design_from_init(shared_dir, "b03-wheel", tmp_path)
    assert 'face = "bottom"' in text
    wheels = [s for s in d.sensors if s.kind == "wheel"]
    assert len(wheels) == 1
    w = wheels[0]
    assert w.layer == "bottom-copper" and len(w.electrodes) == 3
    assert sorted(w.order) == ["/TOUCH0", "/TOUCH1", "/TOUCH2"]
    # the three electrodes of one wheel are the same shape rotated: equal areas
    areas = [e.geometry.area for e in w.electrodes]
    assert max(areas) == pytest.approx(min(areas), rel=0.02)


def test_b06_two_thirteen_key_keyboards(shared_dir: Path, tmp_path: Path) -> None:
    # designers: "two 13-key keyboards on one panel"; the key nets carry only generated names
    d, text = design_from_init(shared_dir, "b06-keyboard", tmp_path)
    buttons = [s for s in d.sensors if s.kind == "self-button"]
    assert len(buttons) == 26
    assert "REVIEW" in text


def test_b02_eighteen_buttons(shared_dir: Path, tmp_path: Path) -> None:
    # designers: "18 self-capacitance buttons" (pads with LED windows: one hole each)
    d, _ = design_from_init(shared_dir, "b02-buttons-4layer", tmp_path)
    buttons = [s for s in d.sensors if s.kind == "self-button"]
    assert len(buttons) == 18
    assert all(len(s.electrodes[0].geometry.interiors if hasattr(s.electrodes[0].geometry, "interiors") else []) <= 2
               for s in buttons)


def test_b07_eight_pad_slider_without_net_names(shared_dir: Path, tmp_path: Path) -> None:
    # designers: "an 8-pad self-capacitance slider"; the files carry no net names, so init gives roles by place
    d, text = design_from_init(shared_dir, "b07-slider-inch", tmp_path)
    assert "[[roles.place]]" in text
    sliders = [s for s in d.sensors if s.kind == "slider"]
    assert len(sliders) == 1 and len(sliders[0].order) == 8
    assert sliders[0].how_found == "place"
    # ordered by position along the slider: centroid x strictly monotonic
    xs = [e.geometry.centroid.x for e in sliders[0].electrodes]
    assert xs == sorted(xs) or xs == sorted(xs, reverse=True)


def test_cli_init_on_a_real_board(shared_dir: Path, tmp_path: Path) -> None:
    """`sensorcheck init PATH --output FILE` end to end: exit 0, a file that loads, then exit 2 without --force."""
    pytest.importorskip("sensorcheck.board.build")
    from sensorcheck.cli import main

    fab = shared_dir / "corpus" / "b06-keyboard" / "fab"
    if not fab.is_dir():
        pytest.skip("b06 not in the corpus")
    out = tmp_path / "b06.toml"
    assert main(["init", str(fab), "--output", str(out)]) == 0
    config = load_config(out, known_rules=_known_rules())
    assert config.stackup_override is not None  # b06 has a Gerber job file with its stackup
    assert config.stackup_override.source == "config"
    assert main(["init", str(fab), "--output", str(out)]) == 2
    assert main(["init", str(fab), "--output", str(out), "--force"]) == 0


def test_b04_thirty_six_keys_and_hand_sense(shared_dir: Path, tmp_path: Path) -> None:
    # designers: "36 capacitive keys scanned as strobed columns and sensed rows, plus a hand-sense
    # electrode" (two board halves, nets .../c0..c4 and .../r0..r3, .../handsense)
    d, text = design_from_init(shared_dir, "b04-keys-4layer", tmp_path)
    keys = [s for s in d.sensors if s.kind == "mutual-button"]
    assert len(keys) == 36
    assert not [s for s in d.sensors if s.kind == "matrix"]  # separate keys, not a touchpad
    # every key pairs one column (TX) with one row (RX) of the same half
    for k in keys:
        (tx,) = {e.net for e in k.electrodes_with("transmitter")}
        (rx,) = {e.net for e in k.electrodes_with("receiver")}
        assert tx.rsplit("/", 1)[-1].startswith("c") and rx.rsplit("/", 1)[-1].startswith("r")
        assert tx.rsplit("/", 1)[0] == rx.rsplit("/", 1)[0]
    assert sorted(s.name.rsplit("/", 1)[-1] for s in d.sensors if s.kind == "proximity") == ["handsense", "handsense"]


def test_b01_jumper_lines_are_not_a_slider(shared_dir: Path, tmp_path: Path) -> None:
    # designers' netlist (see tests/corpus/configs/b01-slider-proto.toml): SLIDER_KEY0-2 join the
    # jumpers JP1-JP3 to the controller; they are routing, not electrodes
    d, text = design_from_init(shared_dir, "b01-slider-proto", tmp_path)
    assert not [s for s in d.sensors if any("SLIDER_KEY" in n for n in s.nets)]
    assert "named like sensors but not taken" in text and "SLIDER_KEY" in text
    # and the two mutual sliders (README: "two 7-segment mutual-capacitance sliders") are found as sliders
    sliders = [s for s in d.sensors if s.kind == "slider"]
    assert any(all("P9-Pad" in n for n in s.nets) for s in sliders)
    assert any(all("P8-Pad" in n for n in s.nets) for s in sliders)


def test_b02_buttons_on_the_bottom_are_named_in_a_review(shared_dir: Path, tmp_path: Path) -> None:
    # issue 12: 6 of b02's 18 buttons exist only on the bottom copper
    _, text = design_from_init(shared_dir, "b02-buttons-4layer", tmp_path)
    (line,) = [ln for ln in text.splitlines() if "face the top, but" in ln]
    assert line.startswith("# REVIEW:")
    assert len(line.split("but ", 1)[1].split(" have", 1)[0].split(", ")) == 6


def test_b02_buttons_on_the_bottom_carry_their_own_face(shared_dir: Path, tmp_path: Path) -> None:
    # issue 12: the touched face per sensor.  Source: the board's copper, read here apart from the
    # recogniser: 6 of the 18 button nets have no area copper on the top copper (a via's pad at most,
    # under 3 mm2) but a pad of over 100 mm2 on the bottom copper
    d, text = design_from_init(shared_dir, "b02-buttons-4layer", tmp_path)
    assert d.config.face == "top" and sum(ln.startswith('face = "bottom"') for ln in text.splitlines()) == 6
    board = d.board
    top, bottom = board.layer("top-copper").by_net, board.layer("bottom-copper").by_net
    bottom_only = {n for n in board.net_names() if n in bottom and bottom[n].area > 100
                   and (n not in top or top[n].area < 3.0)}
    buttons = [s for s in d.sensors if s.kind == "self-button"]
    assert len(buttons) == 18
    on_bottom = [s for s in buttons if s.face == "bottom"]
    assert len(on_bottom) == 6
    for s in on_bottom:
        (net,) = s.nets
        assert net in bottom_only
        assert all(e.layer == "bottom-copper" for e in s.electrodes)
    assert all(s.face == "top" and s.nets[0] not in bottom_only for s in buttons if s not in on_bottom)
    # nothing shields them towards the top either: the copper cannot tell, and init says so
    assert text.count("cannot tell the touched face from the copper") >= 6


def test_b07_findings_name_the_slider_segments(shared_dir: Path, tmp_path: Path) -> None:
    # issue 12: b07's unnamed segments were reported by their geometry ids although init named the sensor
    from sensorcheck.rules.engine import run_rules

    d, _ = design_from_init(shared_dir, "b07-slider-inch", tmp_path)
    (s,) = [s for s in d.sensors if s.kind == "slider"]
    assert sorted(d.labels[n] for n in s.nets) == sorted(f"{s.name}.{i}" for i in range(1, 9))
    msgs = [f.message for f in run_rules(d).findings]
    assert any(f"{s.name}.1" in m or f"{s.name}.8" in m for m in msgs)
    assert not any(n in m for n in s.nets for m in msgs)
