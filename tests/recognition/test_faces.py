"""The touched face per sensor (issue 12, item 1): from which side the electrodes face free of other
copper, with a REVIEW note when the copper cannot tell.

A synthetic Gerber board (written as tests/recognition/synth_boards.py writes its boards, named and
unnamed, mm and inch) whose answer is known by construction: three buttons on the top copper; on
the bottom copper one button under a solid ground pour on the top (shielded towards the top: it
can only be touched from the bottom) and one under an opening in that pour (nothing tells whether
it is touched from the bottom or through the board from the top).
"""

from __future__ import annotations

from pathlib import Path

import pytest
import shapely

from sensorcheck.board.build import load_board
from sensorcheck.commands.init import recognise_board, starter_config
from sensorcheck.design.config import load_config
from sensorcheck.design.sensors import build_design
from tests.recognition.synth_boards import _gerber, _ground, _outline, disc

TOP_KEYS = {"KEY_A": (10, 10), "KEY_B": (30, 10), "KEY_C": (50, 10)}
OPEN_KEY, SHIELDED_KEY = ("KEY_D", (70, 10)), ("KEY_E", (90, 10))


def _write(folder: Path, named: bool, units: str) -> None:
    top = {n: disc(x, y, 5) for n, (x, y) in TOP_KEYS.items()}
    bottom = {OPEN_KEY[0]: disc(*OPEN_KEY[1], 5), SHIELDED_KEY[0]: disc(*SHIELDED_KEY[1], 5)}
    # the top pour: openings round the top keys and over the open bottom key, solid over the shielded one
    top["GND"] = _ground(0, 0, 100, 20, [*top.values(), bottom[OPEN_KEY[0]]])
    folder.mkdir(parents=True)
    (folder / "t-top.gbr").write_text(_gerber("Copper,L1,Top", units, top, named))
    (folder / "t-bottom.gbr").write_text(_gerber("Copper,L2,Bot", units, bottom, named))
    (folder / "t-outline.gbr").write_text(_outline(units, (0, 0, 100, 20)))


def _at(sensors, xy: tuple[float, float]):
    (f,) = [f for f in sensors if any(abs(p[1] - xy[0]) < 6 and abs(p[2] - xy[1]) < 6 for p in f.points.values())]
    return f


@pytest.mark.parametrize(("named", "units"), [(True, "mm"), (False, "inch")], ids=["named-mm", "unnamed-inch"])
def test_each_sensor_has_its_face_and_a_review_where_the_copper_cannot_tell(tmp_path: Path, named: bool,
                                                                           units: str) -> None:
    _write(tmp_path / "b", named, units)
    board = load_board(tmp_path / "b")
    rec, _ = recognise_board(board)
    assert sorted(f.kind for f in rec.sensors) == ["self-button"] * 5
    for xy in TOP_KEYS.values():
        f = _at(rec.sensors, xy)
        assert f.face == "top" and not f.review
    shielded = _at(rec.sensors, SHIELDED_KEY[1])
    assert shielded.face == "bottom" and not shielded.review
    assert any("covers 100 %" in e for e in shielded.evidence)
    open_ = _at(rec.sensors, OPEN_KEY[1])
    assert open_.face == "bottom"
    assert any("cannot tell the touched face" in r for r in open_.review)
    # init writes the board's face and each bottom key's own face; the design follows them
    text = starter_config(board)
    assert 'face = "top"' in text and sum(ln.startswith('face = "bottom"') for ln in text.splitlines()) == 2
    (tmp_path / "c.toml").write_text(text, encoding="utf-8")
    d = build_design(board, load_config(tmp_path / "c.toml"))
    assert len(d.sensors) == 5
    for s in d.sensors:
        x = s.outline.centroid.x
        want = "bottom" if x > 60 else "top"
        assert s.face == want and all(e.layer == f"{want}-copper" for e in s.electrodes), (s.name, x)
        assert shapely.Point(x, 10).distance(s.outline) < 1e-6
