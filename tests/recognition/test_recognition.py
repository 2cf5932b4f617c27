"""Sensor recognition (`sensorcheck init`'s config, loaded and built as a user's first check would)
against truth from outside the recogniser:

- synthetic boards (tests/recognition/synth_boards.py): the answer is known by construction; every
  kind on a named and an unnamed board, in mm and inch, on both faces (Gerber X2 files read by the
  real reader);
- corpus boards (../shared/corpus, skipped without it): tests/corpus/truth/<board>.toml, written
  from what the boards' designers published (corpus README; their netlists, GenCAD file and
  firmware where the README is not enough, cited in each file).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from sensorcheck.board.build import load_board
from sensorcheck.commands.init import starter_config
from sensorcheck.design.config import load_config
from sensorcheck.design.sensors import build_design
from tests.recognition.synth_boards import variants, write_board
from tests.recognition.truth import TRUTH_DIR, load_truth, score

#: variants the recogniser gets wrong today (kept visible, not hidden): issue 12 follow-up
KNOWN_WRONG: dict[tuple[str, bool], str] = {}


def _design(folder: Path, tmp_path: Path):
    board = load_board(folder)
    cfg = tmp_path / "sensorcheck.toml"
    cfg.write_text(starter_config(board), encoding="utf-8")
    return build_design(board, load_config(cfg))


@pytest.mark.parametrize(("kind", "named", "units", "face"), variants(),
                         ids=[f"{k}-{'named' if n else 'unnamed'}-{u}-{f}" for k, n, u, f in variants()])
def test_synthetic_board(kind: str, named: bool, units: str, face: str, tmp_path: Path) -> None:
    # source: the board is made with these sensors (synth_boards.py), nothing else that senses
    if (kind, named) in KNOWN_WRONG:
        pytest.xfail(KNOWN_WRONG[(kind, named)])
    truth = write_board(tmp_path / "board", kind, named=named, units=units, face=face)
    sc = score(kind, _design(tmp_path / "board", tmp_path), truth)
    assert (sc.right, sc.false) == (sc.truth, 0), sc.details


def test_every_kind_is_on_a_named_and_an_unnamed_synthetic_board() -> None:
    # issue 12: "each recognised kind has a test on both a named and an unnamed board"; the boards
    # above are test_synthetic_board's, every variant of which must be right (KNOWN_WRONG is empty)
    from typing import get_args

    from sensorcheck.design.model import SensorKind
    from tests.recognition.synth_boards import MAKERS

    seen = {(e["kind"], named) for kind, named, _u, _f in variants() for e in MAKERS[kind]()[1]}
    assert {(k, named) for k in get_args(SensorKind) for named in (True, False)} <= seen
    assert not KNOWN_WRONG


@pytest.mark.corpus
@pytest.mark.parametrize("board_id", sorted(p.stem for p in TRUTH_DIR.glob("*.toml")))
def test_corpus_board_against_its_designers(board_id: str, shared_dir: Path, tmp_path: Path) -> None:
    fab = shared_dir / "corpus" / board_id / "fab"
    if not fab.is_dir():
        pytest.skip(f"{board_id} not in the corpus")
    # source: tests/corpus/truth/<board>.toml, from the corpus README's "sensors on the board" and,
    # where the README is not enough, the designers' own netlist, GenCAD file and firmware (cited there)
    sc = score(board_id, _design(fab, tmp_path), load_truth(TRUTH_DIR / f"{board_id}.toml"))
    assert sc.share >= 0.8, sc.details
    assert sc.false == 0, sc.details  # no false sensor on the board's non-sensing copper (issue 12 target)


def test_scanned_keypad_keys_share_lines_and_the_ring_is_the_tx() -> None:
    """A 3 x 2 keypad scanned by lines: each column's rings on one net, each row's centres on one net
    (nets named as parts, so the names say nothing).  Source: the board is made so; six separate keys,
    the ring (surrounding) side is the TX, and every key names its column and row."""
    from sensorcheck.design.recognise import recognise
    from tests.design.synth import disc, make_board, ring

    top: dict = {}
    for c in range(3):
        top[f"Net-(J{c}-Pad1)"] = [ring(20 * c, 20 * r, 5, 7) for r in range(2)]
    for r in range(2):
        top[f"Net-(J{r + 5}-Pad2)"] = [disc(20 * c, 20 * r, 4.3) for c in range(3)]
    rec = recognise(make_board({"top-copper": top}), {})
    keys = [f for f in rec.sensors if f.kind == "mutual-button"]
    assert len(keys) == 6 and len(rec.sensors) == 6
    assert {f.tx[0] for f in keys} == {f"Net-(J{c}-Pad1)" for c in range(3)}
    assert {f.rx[0] for f in keys} == {"Net-(J5-Pad2)", "Net-(J6-Pad2)"}
    assert all("by shape" in f.evidence[0] and not f.review for f in keys)
    assert len({(f.tx, f.rx) for f in keys}) == 6  # each column-row crossing once


def test_keys_whose_sides_cannot_be_told_say_so() -> None:
    """Two crossed bars (one per layer) without names: nothing tells TX from RX; the key is found and
    the choice is marked for review.  Source: the board is made so."""
    from shapely.geometry import box

    from sensorcheck.design.recognise import recognise
    from tests.design.synth import make_board

    board = make_board({"top-copper": {"~na": box(0, 4, 12, 8)}, "bottom-copper": {"~nb": box(4, 0, 8, 12)}})
    rec = recognise(board, {})
    (key,) = rec.sensors
    assert key.kind == "mutual-button" and key.review
    assert any("TX" in r and "RX" in r for r in key.review)
