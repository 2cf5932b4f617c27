"""The touched face per sensor (issue 12): ``face`` in a ``[[sensors]]`` table.

A sensor touched from the other face than the board's takes its electrode from the copper nearest
that face, says so on ``Sensor.face``, and its estimate stands on the stack turned over for it, as
a board touched from that face would.  Sources: the electrode areas are analytic (pi r^2 of the
discs drawn); the stack is compared with the one the board-wide face gives (our own contract).
"""

from __future__ import annotations

import math
from pathlib import Path

from shapely.geometry import box

from sensorcheck.design.config import load_config
from sensorcheck.design.sensors import build_design
from tests.design.synth import disc, make_board


def _board():
    # one net with a 10 mm disc on the top copper and a 6 mm disc on the bottom copper, and a
    # second button on the top only; a ground frame on both faces
    frame = box(-40, -40, 40, 40).difference(box(-30, -30, 30, 30))
    return make_board({"top-copper": {"TOUCH_A": disc(0, 0, 5.0), "TOUCH_B": disc(20, 0, 5.0), "GND": frame},
                       "bottom-copper": {"TOUCH_A": disc(0, 0, 3.0), "GND": frame}})


def _design(tmp_path: Path, sensors: str, board_face: str = "top"):
    text = (f'[board]\nface = "{board_face}"\n[[overlay.layers]]\nmaterial = "pmma"\nthickness_mm = 2.0\n'
            '[roles]\nself = ["TOUCH_*"]\nground = ["GND"]\n' + sensors)
    (tmp_path / "c.toml").write_text(text, encoding="utf-8")
    return build_design(_board(), load_config(tmp_path / "c.toml"))


def test_a_sensor_with_its_own_face_takes_its_copper_from_that_face(tmp_path: Path) -> None:
    d = _design(tmp_path, '[[sensors]]\nname = "A"\nkind = "self-button"\nnets = ["TOUCH_A"]\nface = "bottom"\n')
    a = next(s for s in d.sensors if s.name == "A")
    assert a.face == "bottom"
    (e,) = a.electrodes
    assert e.layer == "bottom-copper"
    assert math.isclose(e.geometry.area, math.pi * 3.0 ** 2, rel_tol=1e-3)  # the 6 mm disc
    b = next(s for s in d.sensors if s.nets == ("TOUCH_B",))
    assert b.face == "top" and b.electrodes[0].layer == "top-copper"  # the others keep the board's face


def test_without_its_own_face_a_sensor_takes_the_boards(tmp_path: Path) -> None:
    d = _design(tmp_path, '[[sensors]]\nname = "A"\nkind = "self-button"\nnets = ["TOUCH_A"]\n')
    a = next(s for s in d.sensors if s.name == "A")
    assert a.face == "top" and a.electrodes[0].layer == "top-copper"
    assert math.isclose(a.electrodes[0].geometry.area, math.pi * 5.0 ** 2, rel_tol=1e-3)  # the 10 mm disc
    d = _design(tmp_path, '[[sensors]]\nname = "A"\nkind = "self-button"\nnets = ["TOUCH_A"]\n', board_face="bottom")
    assert all(s.face == "bottom" for s in d.sensors)


def test_the_estimate_turns_the_stack_over_for_a_sensor_with_its_own_face(tmp_path: Path) -> None:
    from sensorcheck.physics.sensors import SolverOptions, build_model

    fast = SolverOptions.from_config({"h_edge_mm": 1.5, "h_near_mm": 2.0, "h_far_mm": 5.0, "window_mm": 8.0,
                                      "finger_sides": 12, "search": False})
    own = _design(tmp_path, '[[sensors]]\nname = "A"\nkind = "self-button"\nnets = ["TOUCH_A"]\nface = "bottom"\n')
    whole = _design(tmp_path, '[[sensors]]\nname = "A"\nkind = "self-button"\nnets = ["TOUCH_A"]\n',
                    board_face="bottom")
    m_own = build_model(own, next(s for s in own.sensors if s.name == "A"), opts=fast)
    m_whole = build_model(whole, next(s for s in whole.sensors if s.name == "A"), opts=fast)
    # touched face up: the bottom copper lies above the top copper, exactly as for a bottom-touched board
    assert m_own.stack.copper_z_m["bottom-copper"] > m_own.stack.copper_z_m["top-copper"]
    assert m_own.stack.copper_z_m == m_whole.stack.copper_z_m
    assert m_own.stack.surface_m == m_whole.stack.surface_m
