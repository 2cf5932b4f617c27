"""What the files say together (issue 18): outline by content, stack-up consistency, units across files.

The boards are our own, written by tests/board/gerbers.py (Gerber Layer Format Specification
2023.08, format 4.6 mm). The file names are those the issue reports from public export suites of
about 25 EDA tools (``_L02``..``_L11``, ``Layer2.pho``, ``l2_gnd.art``, ``GND2.art``, Altium ``.GMn``,
an OrCAD ``.FAB`` drawing); what each one is follows the tools' naming conventions (from memory).
Physical facts used: a plated hole has a copper annular ring on the outer layers (IPC-2221 9.1.2),
1 inch = 25.4 mm exactly.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from sensorcheck.board import resolve
from sensorcheck.board.build import load_board, outline_polygon
from sensorcheck.board.model import Hole, SourceRef
from sensorcheck.design.config import load_config
from sensorcheck.errors import ConfigError

from .gerbers import _c, draw, flash, gerber, square_outline

PADS = [(10.0 + 10 * i, 10.0 + 8 * j) for i in range(8) for j in range(4)]  # 32 via pads on a 100 x 50 mm board


def _copper() -> bytes:
    """Pads at every hole and tracks joining them in rows: what a copper layer looks like."""
    tracks = [draw(x, y, x + 10, y) for x, y in PADS if x < 80]
    return gerber([flash(x, y) for x, y in PADS] + tracks)


def _drill(name_span: str = "1,2", *, scale: float = 1.0, units: str = "METRIC") -> bytes:
    lines = ["M48", f"; #@! TF.FileFunction,Plated,{name_span},PTH", units, f"T1C{0.4 * scale:.5f}", "%", "G90", "G05", "T1"]
    lines += [f"X{x * scale:.5f}Y{y * scale:.5f}" for x, y in PADS]
    return ("\n".join([*lines, "M30"]) + "\n").encode()


def _outline_plain(x1: float = 100.0, y1: float = 50.0) -> bytes:
    return square_outline(0, 0, x1, y1).replace(b"%TF.FileFunction,Profile,NP*%\n", b"")


def _frame(x0: float, y0: float, x1: float, y1: float) -> bytes:
    """A drawing frame (a fabrication drawing's border) and a line of 'text' beside it, drawn 0.2 mm wide."""
    return gerber(["D11*", f"X{_c(x0)}Y{_c(y0)}D02*", f"X{_c(x1)}Y{_c(y0)}D01*", f"X{_c(x1)}Y{_c(y1)}D01*",
                   f"X{_c(x0)}Y{_c(y1)}D01*", f"X{_c(x0)}Y{_c(y0)}D01*", draw(x0 + 5, y0 + 5, x0 + 30, y0 + 5, d=11)])


def _errors(board) -> dict[str, str]:  # type: ignore[no-untyped-def]
    return {f.path: f.error for f in board.files if f.error}


# --- numbered inner layers ------------------------------------------------------------------------

def test_twelve_layer_board_named_l01_to_l12_reads_as_twelve_layers(tmp_path: Path) -> None:
    # issue 18: "a 12-layer board with _L02.._L11 files read as 2 layers"
    for n in range(1, 13):
        (tmp_path / f"board_L{n:02d}.gbr").write_bytes(_copper())
    (tmp_path / "board-1-12.drl").write_bytes(_drill("1,12"))
    (tmp_path / "board.GKO").write_bytes(_outline_plain())
    board = load_board(tmp_path)
    assert not _errors(board)
    names = [(c.name, Path(c.file).stem) for c in board.copper_layers()]
    assert names == [("top-copper", "board_L01"), *[(f"inner{n - 1}-copper", f"board_L{n:02d}") for n in range(2, 12)],
                     ("bottom-copper", "board_L12")]


@pytest.mark.parametrize("span_in", ["x2", "name"])
def test_missing_inner_layers_are_an_error_until_confirmed(tmp_path: Path, span_in: str) -> None:
    (tmp_path / "board.GTL").write_bytes(_copper())
    (tmp_path / "board.GBL").write_bytes(_copper())
    (tmp_path / "board.GKO").write_bytes(_outline_plain())
    if span_in == "x2":  # KiCad writes the span as X2 in the Excellon header
        (tmp_path / "board-PTH.drl").write_bytes(_drill("1,6"))
        drill = "board-PTH.drl"
    else:  # and as a name suffix for each layer pair
        (tmp_path / "board-1-6.drl").write_bytes(_drill("1,2").replace(b"; #@! TF.FileFunction,Plated,1,2,PTH\n", b""))
        drill = "board-1-6.drl"
    errors = _errors(load_board(tmp_path))
    assert list(errors) == [drill]
    assert "6 copper layers" in errors[drill] and "2 were" in errors[drill] and "copper_layers = 2" in errors[drill]
    # confirmed: the board really has 2 (the config's [board] copper_layers)
    assert not _errors(load_board(tmp_path, copper_layers=2))
    # a confirmation that disagrees with what was found is an error too
    wrong = _errors(load_board(tmp_path, copper_layers=4))
    assert any("says the board has 4 copper layers" in e for e in wrong.values())


def test_job_file_stackup_announces_the_layer_count(tmp_path: Path) -> None:
    # Gerber job file (Ucamco job-file spec, MaterialStackup): four copper layers; only two files
    from sensorcheck.fab.writer import StackLayer, jobfile_bytes

    stack = [StackLayer("Copper", "F.Cu", 0.035), StackLayer("Dielectric", "d1", 0.5, "FR4", 4.4),
             StackLayer("Copper", "In1.Cu", 0.035), StackLayer("Dielectric", "d2", 0.5, "FR4", 4.4),
             StackLayer("Copper", "In2.Cu", 0.035), StackLayer("Dielectric", "d3", 0.5, "FR4", 4.4),
             StackLayer("Copper", "B.Cu", 0.035)]
    (tmp_path / "b.GTL").write_bytes(_copper())
    (tmp_path / "b.GBL").write_bytes(_copper())
    (tmp_path / "b-job.gbrjob").write_bytes(jobfile_bytes(
        project=("b", "00000000-0000-0000-0000-000000000000", "1"), creation_date="2024-01-01T00:00:00Z",
        size_mm=(100.0, 50.0), board_thickness_mm=1.6, files=[], stackup=stack, min_clearance_mm=0.2,
        min_width_mm=0.2))
    errors = _errors(load_board(tmp_path))
    assert list(errors) == ["b-job.gbrjob"] and "job file's stack-up says the board has 4" in errors["b-job.gbrjob"]


def test_unnamed_copper_files_fill_announced_inner_layers_by_content(tmp_path: Path) -> None:
    # two Gerber files whose names say nothing, on a board whose drill file spans 4 layers: both carry
    # a pad at every plated hole and tracks, so they are the inner layers (order: a guess, said so)
    (tmp_path / "board.GTL").write_bytes(_copper())
    (tmp_path / "board.GBL").write_bytes(_copper())
    (tmp_path / "board.GKO").write_bytes(_outline_plain())
    (tmp_path / "board-PTH.drl").write_bytes(_drill("1,4"))
    (tmp_path / "mystery_a.gbr").write_bytes(_copper())
    (tmp_path / "mystery_b.gbr").write_bytes(_copper())
    board = load_board(tmp_path)
    assert not _errors(board)
    assert [c.name for c in board.copper_layers()] == ["top-copper", "inner1-copper", "inner2-copper", "bottom-copper"]
    notes = {f.path: f.note for f in board.files}
    assert "guess" in (notes["mystery_a.gbr"] or "")
    # without the span, the same files stay "not understood", with a hint of what they look like
    (tmp_path / "board-PTH.drl").write_bytes(_drill("1,2"))
    board = load_board(tmp_path)
    assert [c.name for c in board.copper_layers()] == ["top-copper", "bottom-copper"]
    f = next(f for f in board.files if f.path == "mystery_a.gbr")
    assert f.role is None and "looks like copper" in (f.note or "")


# --- outline by content ---------------------------------------------------------------------------

def test_of_several_mechanical_layers_the_one_closing_around_the_copper_is_the_outline(tmp_path: Path) -> None:
    # Altium: .GM1 a dimension drawing beside the board, .GM13 the board contour, .GM15 a frame twice as large
    (tmp_path / "board.GTL").write_bytes(_copper())
    (tmp_path / "board.GBL").write_bytes(_copper())
    (tmp_path / "board.GM1").write_bytes(_frame(120, 0, 180, 40))
    (tmp_path / "board.GM13").write_bytes(_outline_plain())
    (tmp_path / "board.GM15").write_bytes(_frame(-50, -50, 150, 100))
    board = load_board(tmp_path)
    assert not _errors(board)
    roles = {f.path: (f.role, f.layer) for f in board.files}
    assert roles["board.GM13"] == ("outline", "outline")
    assert roles["board.GM1"][0] == "other" and roles["board.GM15"][0] == "other"
    assert board.outline is not None and board.outline.area == pytest.approx(5000)


def test_a_fabrication_drawing_beside_the_board_is_not_the_outline(tmp_path: Path) -> None:
    # issue 18: "a fabrication drawing was taken as the outline, so every real layer was refused"
    (tmp_path / "board.TOP").write_bytes(_copper())
    (tmp_path / "board.BOT").write_bytes(_copper())
    (tmp_path / "board.FAB").write_bytes(_frame(300, 0, 500, 150))
    board = load_board(tmp_path)
    assert not _errors(board)
    assert board.outline is None and len(board.copper_layers()) == 2
    assert next(f for f in board.files if f.path == "board.FAB").role == "other"


def test_an_unnamed_contour_around_the_copper_is_the_outline(tmp_path: Path) -> None:
    (tmp_path / "board.GTL").write_bytes(_copper())
    (tmp_path / "board.GBL").write_bytes(_copper())
    (tmp_path / "route.gbr").write_bytes(_outline_plain())
    board = load_board(tmp_path)
    assert not _errors(board)
    f = next(f for f in board.files if f.path == "route.gbr")
    assert (f.role, f.identified_by) == ("outline", "content")
    assert board.outline is not None and board.outline.area == pytest.approx(5000)


def test_outline_gaps_left_where_arcs_meet_lines_are_joined() -> None:
    # tracespace 8bit-mixtape .gml: loose ends 0.03-0.28 mm apart; here a 100 x 50 square with 0.2 mm gaps
    from shapely.geometry import LineString

    sides = [LineString([(0, 0), (99.8, 0)]), LineString([(100, 0.2), (100, 50)]),
             LineString([(100, 50), (0.15, 50)]), LineString([(0, 49.9), (0, 0)])]
    shape, note = outline_polygon(sides, None)
    assert shape is not None and shape.area == pytest.approx(5000, rel=2e-3)
    assert note and "joined 2 gap" in note  # (99.8,0)-(100,0.2) and (0.15,50)-(0,49.9)


def test_copper_with_text_beside_the_board_is_kept_with_a_note(tmp_path: Path) -> None:
    # tracespace arduino-uno: the top copper carries text outside the board outline (about 10 % of it)
    (tmp_path / "board.GTL").write_bytes(gerber([flash(x, y) for x, y in PADS] + [draw(200, 10, 260, 10)]))
    (tmp_path / "board.GBL").write_bytes(_copper())
    (tmp_path / "board.GKO").write_bytes(_outline_plain(100, 50))
    board = load_board(tmp_path)
    assert not _errors(board)
    assert "outside the board outline" in (next(f for f in board.files if f.path == "board.GTL").note or "")


# --- units across files ---------------------------------------------------------------------------

def test_drill_file_in_inches_read_as_millimetres_is_named(tmp_path: Path) -> None:
    # holes written in inches under a METRIC header: read as mm they all lie inside the board's box
    # (0.39..3.5 mm), so no extent check sees them; they miss every pad, and land on them x 25.4
    (tmp_path / "board.GTL").write_bytes(_copper())
    (tmp_path / "board.GBL").write_bytes(_copper())
    (tmp_path / "board.GKO").write_bytes(_outline_plain())
    (tmp_path / "board.drl").write_bytes(_drill("1,2", scale=1 / 25.4, units="METRIC"))
    errors = _errors(load_board(tmp_path))
    assert list(errors) == ["board.drl"]
    assert "units look wrong" in errors["board.drl"] and "25.4" in errors["board.drl"]
    # the same file with its true units: no error
    (tmp_path / "board.drl").write_bytes(_drill("1,2", scale=1 / 25.4, units="INCH"))
    assert not _errors(load_board(tmp_path))


def test_outline_at_25_4_times_the_copper_is_named(tmp_path: Path) -> None:
    (tmp_path / "board.GTL").write_bytes(_copper())
    (tmp_path / "board.GBL").write_bytes(_copper())
    # an outline of 2540 x 1270 "mm": the board's 100 x 50 mm written in mm under an inch header
    (tmp_path / "board.GKO").write_bytes(_outline_plain().replace(b"%MOMM*%", b"%MOIN*%"))
    errors = _errors(load_board(tmp_path))
    assert list(errors) == ["board.GKO"] and "units disagree" in errors["board.GKO"]


def test_hole_diameters_25_4_times_too_large_are_named() -> None:
    holes = [Hole(x, y, 0.4 * 25.4, True, SourceRef("d.drl", 3)) for x, y in PADS]
    text = resolve.drill_units_problem(holes, [], "mm")
    assert text is not None and "0.4 mm if read as millimetres" in text
    fine = [Hole(x, y, 0.4, True, SourceRef("d.drl", 3)) for x, y in PADS]
    assert resolve.drill_units_problem(fine, [], "mm") is None


def test_scale_mismatch() -> None:
    assert resolve.scale_mismatch(2540.0, 100.0) == 25.4
    assert resolve.scale_mismatch(4.0, 100.0) == pytest.approx(1 / 25.4)
    assert resolve.scale_mismatch(150.0, 68.6) is None  # copper with text beside the board (arduino-uno)
    assert np.isclose(resolve.MM_PER_INCH, 25.4)


# --- the config key that confirms a stack-up ------------------------------------------------------

def test_config_board_copper_layers(tmp_path: Path) -> None:
    cfg = tmp_path / "sensorcheck.toml"
    cfg.write_text("[board]\ncopper_layers = 2\n")
    assert load_config(cfg).copper_layers == 2
    cfg.write_text("[board]\ncopper_layers = 0\n")
    with pytest.raises(ConfigError, match="copper_layers"):
        load_config(cfg)
    cfg.write_text('[board]\ncopper_layers = "two"\n')
    with pytest.raises(ConfigError, match="copper_layers"):
        load_config(cfg)


def test_a_stencil_named_like_a_mask_is_told_from_the_mask_by_content(tmp_path: Path) -> None:
    # issue 18: "a stencil file was taken as the solder mask and the real mask refused as a duplicate".
    # Mask openings: every pad, 0.1 mm larger; paste openings: the SMD pads only, the pad's size
    # (IPC-7525; common practice). Both files are named as top solder mask here.
    mask = gerber(["%ADD13R,2.200000X2.200000*%", *[flash(x, y, d=13) for x, y in PADS]])
    paste = gerber([flash(x, y) for x, y in PADS[:10]])
    (tmp_path / "board.GTL").write_bytes(_copper())
    (tmp_path / "board.GBL").write_bytes(_copper())
    (tmp_path / "board.GTS").write_bytes(paste)  # the stencil, first in file order
    (tmp_path / "board-top-soldermask.gbr").write_bytes(mask)
    board = load_board(tmp_path)
    assert not _errors(board)
    layers = {f.path: f.layer for f in board.files}
    assert layers["board.GTS"] == "top-paste" and layers["board-top-soldermask.gbr"] == "top-mask"
    assert {layer.name for layer in board.layers} >= {"top-paste", "top-mask"}


def test_artwork_files_named_after_their_planes_are_inner_copper(tmp_path: Path) -> None:
    # issue 18: "GND2.art/PWR.art all missed" (Allegro artwork named after the layers, from memory)
    for name in ("TOP.art", "GND2.art", "PWR.art", "BOTTOM.art"):
        (tmp_path / name).write_bytes(_copper())
    (tmp_path / "board.drl").write_bytes(_drill("1,4"))
    board = load_board(tmp_path)
    assert not _errors(board)
    copper = [(c.name, c.file) for c in board.copper_layers()]
    assert copper[0] == ("top-copper", "TOP.art") and copper[-1] == ("bottom-copper", "BOTTOM.art")
    assert {f for _, f in copper[1:3]} == {"GND2.art", "PWR.art"}
    assert all("guess" in (f.note or "") for f in board.files if f.path in ("GND2.art", "PWR.art"))


def test_an_outer_copper_layer_at_the_wrong_scale_is_named(tmp_path: Path) -> None:
    # the bottom copper written in inches under a millimetre header: 1/25.4 of its size, inside the
    # board's box (so no extent check sees it); the holes land on the top copper and miss it
    (tmp_path / "board.GTL").write_bytes(_copper())
    small = [flash(x / 25.4, y / 25.4) for x, y in PADS]
    (tmp_path / "board.GBL").write_bytes(gerber(["%ADD13C,0.080000*%", *[f.replace("D12*", "D13*") for f in small]]))
    (tmp_path / "board.GKO").write_bytes(_outline_plain())
    (tmp_path / "board.drl").write_bytes(_drill("1,2"))
    errors = _errors(load_board(tmp_path))
    assert list(errors) == ["board.GBL"] and "units disagree" in errors["board.GBL"]


def test_layers_command_takes_the_confirmation_from_the_boards_config(tmp_path: Path,
                                                                     capsys: pytest.CaptureFixture[str]) -> None:
    # The same board as above (a KiCad drill span of 1-6 with 2 copper layers found): `layers` reads
    # the sensorcheck.toml beside the files as `check` does, so the confirmation holds there too.
    from sensorcheck.cli import main

    (tmp_path / "board.GTL").write_bytes(_copper())
    (tmp_path / "board.GBL").write_bytes(_copper())
    (tmp_path / "board.GKO").write_bytes(_outline_plain())
    (tmp_path / "board-PTH.drl").write_bytes(_drill("1,6"))
    assert main(["layers", str(tmp_path)]) == 2
    (tmp_path / "sensorcheck.toml").write_text("[board]\ncopper_layers = 2\n")
    assert main(["layers", str(tmp_path)]) == 0
    other = tmp_path / "elsewhere.toml"
    other.write_text("[board]\ncopper_layers = 4\n")
    assert main(["layers", str(tmp_path), "--config", str(other)]) == 2
    capsys.readouterr()
