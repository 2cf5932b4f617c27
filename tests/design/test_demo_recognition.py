"""The demo boards (boards/, our own invented product): recognition from roles alone finds the
same sensors, kinds and slider order as the explicit [[sensors]] groups their configs give."""

from __future__ import annotations

from pathlib import Path

import pytest

from sensorcheck.design.config import load_config
from sensorcheck.design.sensors import build_design

BOARDS = Path(__file__).resolve().parents[2] / "boards"


@pytest.mark.parametrize("name", ["tm1-clean", "tm1-flawed"])
def test_roles_alone_agree_with_the_groups(name: str) -> None:
    folder = BOARDS / name
    if not (folder / "sensorcheck.toml").is_file() or not (folder / "fab").is_dir():
        pytest.skip("demo board not built")
    build = pytest.importorskip("sensorcheck.board.build")
    config = load_config(folder / "sensorcheck.toml")
    board = build.load_board(folder / "fab", stackup_override=config.stackup_override)
    grouped = build_design(board, config)
    config.groups = []
    found = build_design(board, config)

    def signature(design):  # kind, nets and order of each sensor, independent of its name
        return sorted((s.kind, tuple(sorted(s.nets)), s.order) for s in design.sensors)

    assert signature(found) == signature(grouped)
    for a in grouped.sensors:  # the same electrode copper, to within the trace stubs kept in a node footprint
        b = next(s for s in found.sensors if sorted(s.nets) == sorted(a.nets))
        assert b.outline.symmetric_difference(a.outline).area <= 0.02 * a.outline.area
