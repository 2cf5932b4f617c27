"""The touched face per sensor (issue 12, item 1): from which side the electrodes face free of other
copper, with a REVIEW note when the copper cannot tell.

The synthetic Gerber board ``two_faces`` (tests/recognition/synth_boards.py, named and unnamed, mm
and inch, either face as the sensing one), whose answer is known by construction: three buttons on
the sensing face in openings of a ground pour there; on the other face one button under the pour
(shielded towards the sensing face: it can only be touched from its own face) and one under an
opening in it (nothing tells whether it is touched directly or through the board).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from sensorcheck.board.build import load_board
from sensorcheck.commands.init import recognise_board, starter_config
from sensorcheck.design.config import load_config
from sensorcheck.design.sensors import build_design
from tests.recognition.synth_boards import write_board

SENSING_X, OPEN_X, SHIELDED_X = (10, 30, 50), 70, 90  # button centres (mm), all at y = 10


def _at(sensors, x: float):
    (f,) = [f for f in sensors if any(abs(p[1] - x) < 6 and abs(p[2] - 10) < 6 for p in f.points.values())]
    return f


@pytest.mark.parametrize(("named", "units", "face"), [(True, "mm", "top"), (False, "inch", "bottom")],
                         ids=["named-mm-top", "unnamed-inch-bottom"])
def test_each_sensor_has_its_face_and_a_review_where_the_copper_cannot_tell(tmp_path: Path, named: bool,
                                                                           units: str, face: str) -> None:
    write_board(tmp_path / "b", "two-faces", named=named, units=units, face=face)
    other = "bottom" if face == "top" else "top"
    board = load_board(tmp_path / "b")
    rec, _ = recognise_board(board)
    assert sorted(f.kind for f in rec.sensors) == ["self-button"] * 5
    for x in SENSING_X:
        f = _at(rec.sensors, x)
        assert f.face == face and not f.review
    shielded = _at(rec.sensors, SHIELDED_X)
    assert shielded.face == other and not shielded.review
    assert any("covers 100 %" in e for e in shielded.evidence)
    open_ = _at(rec.sensors, OPEN_X)
    assert open_.face == other
    assert any("cannot tell the touched face" in r for r in open_.review)
    # init writes the board's face and each other-face key's own face; the design follows them
    text = starter_config(board)
    assert f'face = "{face}"' in text and sum(ln.startswith(f'face = "{other}"') for ln in text.splitlines()) == 2
    (tmp_path / "c.toml").write_text(text, encoding="utf-8")
    d = build_design(board, load_config(tmp_path / "c.toml"))
    assert len(d.sensors) == 5
    for s in d.sensors:
        want = other if s.outline.centroid.x > 60 else face
        assert s.face == want and all(e.layer == f"{want}-copper" for e in s.electrodes), s.name
