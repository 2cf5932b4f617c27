"""Nets from connectivity: X2 nets vs IPC-D-356 + plated holes, and stable ids for unnamed copper.

External references:
* corpus b01 and b03 (KiCad 8): each carries X2 ``.N`` net attributes AND an IPC-D-356 netlist,
  two statements of the same nets by the generator. Ignoring X2, our connectivity (copper islands
  joined through plated holes, named by the IPC points on them) must give every island the net X2
  gives it. KiCad's IPC-D-356 writer upper-cases names and keeps the last 14 characters of longer
  ones (seen in these files: "/3-pad-sliders/I2C.SCL" -> "LIDERS/I2C.SCL"); the comparison applies
  that rule and nothing else.
* Tolerance for islands without any IPC point: they must be exactly the islands that carry no X2
  net either (no net to compare), and they must stay few (at most 5 % of the islands).
"""

from __future__ import annotations

import random
from pathlib import Path

import pytest

from sensorcheck.board.build import load_board
from sensorcheck.board.connectivity import assign_nets, name_islands
from sensorcheck.fab.gerber import images_by_net

from .gerbers import excellon, flash, draw, gerber, square_outline


def _ipc_form(x2_name: str) -> str:
    return x2_name.upper()[-14:]


@pytest.mark.parametrize("board_id", ["b01-slider-proto", "b03-wheel"])
def test_connectivity_and_ipc356_reproduce_the_x2_nets(shared_dir: Path, board_id: str) -> None:
    board = load_board(shared_dir / "corpus" / board_id / "fab")
    assert board.net_points and board.holes
    x2 = {layer.name: images_by_net([f for f in layer.features if not f.net_by_connectivity]) for layer in board.copper_layers()}
    with_x2 = name_islands(board, x2, use_x2=True)
    without = name_islands(board, x2, use_x2=False)
    assert len(with_x2) == len(without) > 20
    compared = 0
    no_point = []
    for a, b in zip(with_x2, without):
        assert a.polygon.equals(b.polygon)
        if b.source == "ipc356":
            assert a.source == "x2", (a.layer, b.name)
            assert _ipc_form(a.name) == b.name, (a.layer, a.name, b.name)
            compared += 1
        else:
            no_point.append((a, b))
    for a, b in no_point:
        assert a.source != "x2" and b.source == "geometry" and a.name == b.name
    assert len(no_point) <= 0.05 * len(with_x2)
    assert compared >= 0.95 * len(with_x2)
    # distinct X2 nets stay distinct through the IPC names
    pairs = {(a.name, b.name) for a, b in zip(with_x2, without) if b.source == "ipc356"}
    assert len({p[0] for p in pairs}) == len({p[1] for p in pairs}) == len(pairs)


def _board_dir(tmp: Path, order: list[int]) -> Path:
    # our own two-layer board: a top pad joined by a via to a bottom trace, and a lone top pad
    objs_top = [flash(10, 10), draw(10, 10, 20, 10), flash(40, 30)]
    objs_bot = [draw(20, 10, 20, 30), flash(20, 30)]
    tmp.mkdir()
    (tmp / "b-F_Cu.gbr").write_bytes(gerber([objs_top[i] for i in order], function="Copper,L1,Top"))
    (tmp / "b-B_Cu.gbr").write_bytes(gerber(objs_bot[::-1] if order[0] else objs_bot, function="Copper,L2,Bot"))
    (tmp / "b-Edge_Cuts.gbr").write_bytes(square_outline(0, 0, 50, 40))
    (tmp / "b.drl").write_bytes(excellon([(20, 10)]))
    return tmp


def test_unnamed_net_ids_do_not_depend_on_object_order(tmp_path: Path) -> None:
    a = load_board(_board_dir(tmp_path / "a", [0, 1, 2]))
    b = load_board(_board_dir(tmp_path / "b", [2, 1, 0]))
    assert a.net_source == "geometry"
    assert a.net_names() == b.net_names()
    top = a.layer("top-copper")
    bottom = a.layer("bottom-copper")
    assert top is not None and bottom is not None
    assert len(top.by_net) == 2  # pad+trace island, lone pad
    # the via at (20, 10) joins the top trace to the bottom trace: one net on both layers
    assert set(top.by_net) & set(bottom.by_net)
    assert all(n.startswith("~n") for n in a.net_names())


def test_x2_nets_name_the_islands_and_copper_without_a_net_joins_its_group(tmp_path: Path) -> None:
    d = tmp_path / "x2"
    d.mkdir()
    (d / "b-F_Cu.gbr").write_bytes(gerber([flash(10, 10, net="TX1"), draw(10, 10, 20, 10, net="TX1"), flash(40, 30, net="RX1")],
                                          function="Copper,L1,Top"))
    (d / "b-B_Cu.gbr").write_bytes(gerber([draw(20, 10, 20, 30)], function="Copper,L2,Bot"))  # no .N here
    (d / "b.drl").write_bytes(excellon([(20, 10)]))
    (d / "b-Edge_Cuts.gbr").write_bytes(square_outline(0, 0, 50, 40))
    board = load_board(d)
    top, bottom = board.layer("top-copper"), board.layer("bottom-copper")
    assert top is not None and bottom is not None
    assert sorted(top.by_net) == ["RX1", "TX1"]
    assert list(bottom.by_net) == ["TX1"]  # joined to TX1 through the plated via
    assert board.net_source == "x2"


def test_geometry_id_is_stable_under_float_noise() -> None:
    from shapely.geometry import box

    from sensorcheck.board.connectivity import Island, geometry_net_id

    rng = random.Random(1)
    base = [Island("top-copper", box(0, 0, 1, 1)), Island("bottom-copper", box(5, 5, 7, 6))]
    shuffled = [Island(i.layer, box(*(v + rng.uniform(-1e-7, 1e-7) for v in i.polygon.bounds))) for i in reversed(base)]
    assert geometry_net_id(base) == geometry_net_id(shuffled)


def test_assign_nets_without_copper_is_harmless() -> None:
    from sensorcheck.board.model import Board

    board = Board(name="x", source="x")
    assert assign_nets(board) == [] and board.net_source == "geometry"


def test_plated_holes_join_exactly_the_copper_of_one_x2_net_on_a_4_layer_board(shared_dir: Path) -> None:
    # corpus b02 (KiCad 7, 4 layers, X2 nets on every object): the generator's nets are the
    # reference. Connectivity (islands joined through plated holes on all four layers) must never
    # put two X2 nets in one group (that would be a short we invented) and must never leave one
    # X2 net in two groups (a via we failed to follow through the inner layers).
    board = load_board(shared_dir / "corpus/b02-buttons-4layer/fab")
    x2 = {layer.name: images_by_net([f for f in layer.features if not f.net_by_connectivity]) for layer in board.copper_layers()}
    islands = name_islands(board, x2, use_x2=True)
    nets_of_group: dict[int, set[str]] = {}
    groups_of_net: dict[str, set[int]] = {}
    for isl in islands:
        if isl.source == "x2" and isl.name:
            nets_of_group.setdefault(isl.group, set()).add(isl.name)
            groups_of_net.setdefault(isl.name, set()).add(isl.group)
    assert len(islands) > 300 and len(groups_of_net) > 100
    assert [n for n in nets_of_group.values() if len(n) > 1] == []
    assert {n: g for n, g in groups_of_net.items() if len(g) > 1} == {}
    inner = {isl.layer for isl in islands if isl.layer.startswith("inner")}
    assert inner == {"inner1-copper", "inner2-copper"}
