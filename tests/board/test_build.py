"""Board assembly: stack order, outline rings, stackup choice, duplicates, per-file errors.

The boards here are our own, written by tests/board/gerbers.py; expected values follow from their
construction (areas of squares and circles, the order of layers the file names state).
"""

from __future__ import annotations

import math
from pathlib import Path

import pytest
from shapely.geometry import LineString, Point

from sensorcheck.board.build import default_stackup, load_board, outline_polygon
from sensorcheck.board.model import Stackup, StackupLayer
from sensorcheck.errors import ConfigError, InputError

from .gerbers import excellon, flash, gerber, square_outline


def _ring(pts: list[tuple[float, float]]) -> list[LineString]:
    return [LineString([a, b]) for a, b in zip(pts, pts[1:] + pts[:1])]


def test_outline_rings_cutouts_partitions_and_gaps() -> None:
    square = _ring([(0, 0), (40, 0), (40, 30), (0, 30)])
    cut = [LineString(list(Point(20, 15).buffer(5, quad_segs=64).exterior.coords))]
    shape, note = outline_polygon(square + cut, None)
    assert note is None and shape.area == pytest.approx(1200 - math.pi * 25, rel=1e-3)
    # a line across the board (a score line drawn on the profile) does not lose half the board
    split = square + [LineString([(20, 0), (20, 30)])]
    shape, _ = outline_polygon(split, None)
    assert shape.area == pytest.approx(1200)
    # ends 5 um apart (arc end points rounded by the generator) still close the ring
    nudged = _ring([(0, 0), (40, 0), (40, 30), (0, 30)])
    nudged[-1] = LineString([(0, 30), (0.000005, 0.000003)])
    shape, note = outline_polygon(nudged, None)
    assert note is None and shape.area == pytest.approx(1200, rel=1e-6)
    # a ring that does not close: no face; without a drawn image there is no outline, and a note
    shape, note = outline_polygon(square[:-1], None)
    assert shape is None and note


def test_copper_order_from_names_only(tmp_path: Path) -> None:
    # Altium/Protel extensions: .GTL top, .G1/.G2 mid layers 1 and 2, .GBL bottom (no X2 anywhere)
    for ext in ("GTL", "G1", "G2", "GBL"):
        (tmp_path / f"board.{ext}").write_bytes(gerber([flash(5, 5)]))
    (tmp_path / "board.GKO").write_bytes(square_outline(0, 0, 10, 10).replace(b"%TF.FileFunction,Profile,NP*%\n", b""))
    board = load_board(tmp_path)
    assert [(c.name, c.copper_index, Path(c.file).suffix) for c in board.copper_layers()] == [
        ("top-copper", 1, ".GTL"), ("inner1-copper", 2, ".G1"), ("inner2-copper", 3, ".G2"), ("bottom-copper", 4, ".GBL")]
    assert all(f.identified_by == "filename" for f in board.files)
    assert board.stackup is not None and board.stackup.source == "default"
    assert [sl.copper_layer for sl in board.stackup.layers if sl.kind == "copper"] == [
        "top-copper", "inner1-copper", "inner2-copper", "bottom-copper"]


def test_two_files_claiming_one_layer_is_an_error_on_the_second(tmp_path: Path) -> None:
    (tmp_path / "a-F_Cu.gbr").write_bytes(gerber([flash(5, 5)], function="Copper,L1,Top"))
    (tmp_path / "b-F_Cu.gbr").write_bytes(gerber([flash(6, 6)], function="Copper,L1,Top"))
    board = load_board(tmp_path)
    errs = board.errors()
    assert len(errs) == 1 and errs[0].path == "b-F_Cu.gbr" and "a-F_Cu.gbr" in (errs[0].error or "")
    assert "layer map" in (errs[0].error or "")


def test_identical_copies_are_read_once(tmp_path: Path) -> None:
    (tmp_path / "sub").mkdir()
    data = excellon([(1, 1), (2, 2)])
    (tmp_path / "b.drl").write_bytes(data)
    (tmp_path / "sub" / "b.drl").write_bytes(data)
    (tmp_path / "b-F_Cu.gbr").write_bytes(gerber([flash(1, 1)], function="Copper,L1,Top"))
    board = load_board(tmp_path)
    assert len(board.holes) == 2
    assert [f.path for f in board.files if f.note and "read once" in f.note] == ["sub/b.drl"]


def test_stackup_sources_config_then_job_then_default(tmp_path: Path) -> None:
    # DESIGN.md: the config's stackup is for a job file that is "missing or wrong", so it wins.
    (tmp_path / "b-F_Cu.gbr").write_bytes(gerber([flash(1, 1)], function="Copper,L1,Top"))
    override = Stackup([StackupLayer("F.Cu", "copper", 0.07, copper_layer="top-copper")], 0.8, "config")
    assert load_board(tmp_path).stackup.source == "default"  # type: ignore[union-attr]
    assert load_board(tmp_path, stackup_override=override).stackup is override
    (tmp_path / "b.gbrjob").write_text('{"Header": {}, "GeneralSpecs": {"BoardThickness": 1.0}, "MaterialStackup": '
                                       '[{"Type": "Copper", "Thickness": 0.035}, {"Type": "Dielectric"}, {"Type": "Copper", "Thickness": 0.035}]}')
    assert load_board(tmp_path, stackup_override=override).stackup is override
    st = load_board(tmp_path).stackup
    assert st is not None and st.source == "jobfile" and st.board_thickness_mm == 1.0


def test_default_stackup_is_fr4_with_even_dielectrics() -> None:
    st = default_stackup(["top-copper", "inner1-copper", "inner2-copper", "bottom-copper"])
    die = [sl for sl in st.layers if sl.kind == "dielectric"]
    assert len(die) == 3 and all(d.epsilon_r == 4.5 for d in die)  # IPC-4101: 4.2-4.8 at 1 MHz, the middle
    assert st.total_thickness_mm() == pytest.approx(1.6)
    assert st.copper_z_mm()["top-copper"] == pytest.approx(1.6)


def test_components_from_placement_files_and_progress(tmp_path: Path) -> None:
    (tmp_path / "b-F_Cu.gbr").write_bytes(gerber([flash(1, 1)], function="Copper,L1,Top"))
    (tmp_path / "b-top-pos.csv").write_text("Ref,Val,Package,PosX,PosY,Rot,Side\nLED1,red,LED_0603,1.0,1.0,0,top\n")
    seen: list[str] = []
    board = load_board(tmp_path, progress=seen.append)
    assert [c.ref for c in board.components] == ["LED1"]
    assert any("b-F_Cu.gbr" in s for s in seen)


def test_whole_input_problems_raise(tmp_path: Path) -> None:
    with pytest.raises(InputError, match="no such file"):
        load_board(tmp_path / "nope")
    with pytest.raises(ConfigError, match="unknown layer"):
        load_board(tmp_path, layer_map={"*.gbr": "top-coper"})


def test_a_bad_file_keeps_the_others(tmp_path: Path) -> None:
    (tmp_path / "b-F_Cu.gbr").write_bytes(gerber([flash(1, 1)], function="Copper,L1,Top"))
    (tmp_path / "b-B_Cu.gbr").write_bytes(b"%TF.FileFunction,Copper,L2,Bot*%\nthis is not gerber at all\n")
    board = load_board(tmp_path)
    assert [f.path for f in board.errors()] == ["b-B_Cu.gbr"]
    assert [c.name for c in board.copper_layers()] == ["top-copper"]


def test_gerber_drill_files_and_x3_component_layers(tmp_path: Path) -> None:
    # Gerber spec 2023.08 section 5.6.3: drill data may be written in Gerber ("Plated,1,2,PTH"),
    # each hole a flash of a round aperture; section 6.9: X3 component layers
    (tmp_path / "b-F_Cu.gbr").write_bytes(gerber([flash(10, 10), flash(20, 10)], function="Copper,L1,Top"))
    (tmp_path / "b-PTH-drill.gbr").write_bytes(gerber(["D10*", "X10000000Y10000000D03*", "X20000000Y10000000D03*"],
                                                      function="Plated,1,2,PTH"))
    (tmp_path / "b-Top-components.gbr").write_bytes(
        b"%TF.FileFunction,Component,L1,Top*%\n%FSLAX46Y46*%\n%MOMM*%\n%TA.AperFunction,ComponentMain*%\n"
        b"%ADD10C,0.300000*%\n%TD*%\n%TO.C,U1*%\n%TO.CRot,180*%\nD10*\nX15000000Y10000000D03*\n%TD*%\nM02*\n")
    board = load_board(tmp_path)
    assert not board.errors()
    assert sorted((h.x_mm, h.y_mm, h.plated) for h in board.holes) == [(10.0, 10.0, True), (20.0, 10.0, True)]
    assert all(h.diameter_mm == pytest.approx(1.0, abs=0.002) for h in board.holes)  # ADD10C,1.0 at 1 um chords
    assert [(c.ref, c.x_mm, c.y_mm, c.rotation_deg, c.side) for c in board.components] == [("U1", 15.0, 10.0, 180.0, "top")]
