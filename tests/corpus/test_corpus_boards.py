"""All eight corpus boards read without error, with the right layers identified.

The expected layer of each file was written down by looking at the files themselves (their X2
headers where they have them, else their names and contents) and at ../shared/corpus/README.md
(copper layer counts, units, what else each folder holds); ``None`` = not understood (not
fabrication data), ``"other"`` = identified but not used by the checks (drawings, user layers).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from sensorcheck.board.build import load_board
from sensorcheck.board.model import Board

KICAD_EXTRA_OTHER = ["B_Adhesive.gba", "B_Courtyard.gbr", "B_Fab.gbr", "F_Adhesive.gta", "F_Courtyard.gbr", "F_Fab.gbr",
                     "Margin.gbr", "NPTH-drl_map.gbr", "PTH-drl_map.gbr", "User_Comments.gbr", "User_Drawings.gbr",
                     "User_Eco1.gbr", "User_Eco2.gbr"] + [f"User_{i}.gbr" for i in range(1, 10)]
KICAD8_LAYERS = {
    "F_Cu.gtl": "top-copper", "B_Cu.gbl": "bottom-copper", "F_Mask.gts": "top-mask", "B_Mask.gbs": "bottom-mask",
    "F_Paste.gtp": "top-paste", "B_Paste.gbp": "bottom-paste", "F_Silkscreen.gto": "top-silk",
    "B_Silkscreen.gbo": "bottom-silk", "Edge_Cuts.gm1": "outline", "PTH.drl": "drill", "NPTH.drl": "drill",
    **{k: "other" for k in KICAD_EXTRA_OTHER},
}

EXPECTED: dict[str, dict[str, str | None]] = {
    "b01-slider-proto": {**{f"slider_rev_1_0-{k}": v for k, v in KICAD8_LAYERS.items()}, "netlist.ipc": "netlist"},
    "b02-buttons-4layer": {
        "button-board-CuTop.gbr": "top-copper", "button-board-CuIn1.gbr": "inner1-copper",
        "button-board-CuIn2.gbr": "inner2-copper", "button-board-CuBottom.gbr": "bottom-copper",
        "button-board-MaskTop.gbr": "top-mask", "button-board-MaskBottom.gbr": "bottom-mask",
        "button-board-PasteTop.gbr": "top-paste", "button-board-PasteBottom.gbr": "bottom-paste",
        "button-board-SilkTop.gbr": "top-silk", "button-board-SilkBottom.gbr": "bottom-silk",
        "button-board-EdgeCuts.gbr": "outline", "button-board-PTH.drl": "drill", "button-board-NPTH.drl": "drill",
        "button-board-VScore.gbr": "other",
    },
    "b03-wheel": {**{f"TouchwheelSAO-{k}": v for k, v in KICAD8_LAYERS.items()}, "netlist.ipc": "netlist"},
    "b04-keys-4layer": {
        "unmechanical-sweep-F_Cu.gtl": "top-copper", "unmechanical-sweep-In1_Cu.g2": "inner1-copper",
        "unmechanical-sweep-In2_Cu.g3": "inner2-copper", "unmechanical-sweep-B_Cu.gbl": "bottom-copper",
        "unmechanical-sweep-F_Mask.gts": "top-mask", "unmechanical-sweep-B_Mask.gbs": "bottom-mask",
        "unmechanical-sweep-F_Paste.gtp": "top-paste", "unmechanical-sweep-B_Paste.gbp": "bottom-paste",
        "unmechanical-sweep-F_Silkscreen.gto": "top-silk", "unmechanical-sweep-B_Silkscreen.gbo": "bottom-silk",
        "unmechanical-sweep-Edge_Cuts.gm1": "outline", "unmechanical-sweep-PTH.drl": "drill",
        "unmechanical-sweep-NPTH.drl": "drill", "unmechanical-sweep-B_Fab.gbr": "other",
        "unmechanical-sweep-User_1.gbr": "other",
    },
    "b06-keyboard": {
        "MPR121TouchKeyboard-F_Cu.gbr": "top-copper", "MPR121TouchKeyboard-B_Cu.gbr": "bottom-copper",
        "MPR121TouchKeyboard-F_Mask.gbr": "top-mask", "MPR121TouchKeyboard-B_Mask.gbr": "bottom-mask",
        "MPR121TouchKeyboard-F_Silkscreen.gbr": "top-silk", "MPR121TouchKeyboard-B_Silkscreen.gbr": "bottom-silk",
        "MPR121TouchKeyboard-Edge_Cuts.gbr": "outline", "MPR121TouchKeyboard.drl": "drill",
        "MPR121TouchKeyboard-job.gbrjob": "job",
    },
    "b07-slider-inch": {
        **{f"TouchSlider_ESP32_CAP1208.{ext}": layer for ext, layer in {
            "GTL": "top-copper", "GBL": "bottom-copper", "GTS": "top-mask", "GBS": "bottom-mask", "GTP": "top-paste",
            "GBP": "bottom-paste", "GTO": "top-silk", "GBO": "bottom-silk", "GM3": "outline", "TXT": "drill",
            "DRR": None, "LDP": None, "RUL": None, "EXTREP": None, "apr": None}.items()},
        "TouchSlider_ESP32_CAP1208-macro.APR_LIB": None,
        "NC_Drill/TouchSlider_ESP32_CAP1208.TXT": "drill",
        "NC_Drill/TouchSlider_ESP32_CAP1208.DRR": None, "NC_Drill/TouchSlider_ESP32_CAP1208.LDP": None,
    },
    "b08-usb-key": {
        "fido2-lpc55-Front.gtl": "top-copper", "fido2-lpc55-Back.gbl": "bottom-copper",
        "fido2-lpc55-F_Mask.gts": "top-mask", "fido2-lpc55-B_Mask.gbs": "bottom-mask",
        "fido2-lpc55-F_Paste.gtp": "top-paste", "fido2-lpc55-B_Paste.gbp": "bottom-paste",
        "fido2-lpc55-F_SilkS.gto": "top-silk", "fido2-lpc55-B_SilkS.gbo": "bottom-silk",
        "fido2-lpc55-Edge_Cuts.gm1": "outline", "fido2-lpc55-PTH.drl": "drill", "fido2-lpc55-NPTH.drl": "drill",
        "fido2-lpc55-PTH-drl_map.gbr": "other", "fido2-lpc55-NPTH-drl_map.gbr": "other",
        "nk3an133-gaia.cad": None, "nk3an133-gaia-PCB-info.txt": None,
    },
    "b09-usb-stick": {
        "tomu-F.Cu.gtl": "top-copper", "tomu-B.Cu.gbl": "bottom-copper", "tomu-F.Mask.gts": "top-mask",
        "tomu-B.Mask.gbs": "bottom-mask", "tomu-F.Paste.gtp": "top-paste", "tomu-B.Paste.gbp": "bottom-paste",
        "tomu-F.SilkS.gto": "top-silk", "tomu-B.SilkS.gbo": "bottom-silk", "tomu-Edge.Cuts.gm1": "outline",
        "tomu.drl": "drill",
    },
}
COPPER_COUNT = {"b02-buttons-4layer": 4, "b04-keys-4layer": 4}

_CACHE: dict[str, Board] = {}


def _board(shared: Path, board_id: str) -> Board:
    if board_id not in _CACHE:
        _CACHE[board_id] = load_board(shared / "corpus" / board_id / "fab")
    return _CACHE[board_id]


@pytest.mark.corpus
@pytest.mark.parametrize("board_id", sorted(EXPECTED))
def test_board_reads_without_error_with_the_right_layers(shared_dir: Path, board_id: str) -> None:
    board = _board(shared_dir, board_id)
    files = {f.path: f for f in board.files}
    assert sorted(files) == sorted(EXPECTED[board_id])  # every file listed, nothing dropped
    for path, layer in EXPECTED[board_id].items():
        f = files[path]
        assert f.error is None, f.error
        if layer is None:
            assert f.role is None and f.note, path
        elif layer in ("other", "drill", "netlist", "job"):
            assert f.role == layer, (path, f.role)
        else:
            assert f.layer == layer, (path, f.layer)
    copper = board.copper_layers()
    assert [c.copper_index for c in copper] == list(range(1, COPPER_COUNT.get(board_id, 2) + 1))
    assert copper[0].name == "top-copper" and copper[-1].name == "bottom-copper"
    assert board.outline is not None and board.outline.area > 50
    assert board.holes
    # every hole lies on the board (the sanity check found nothing wrong)
    minx, miny, maxx, maxy = board.outline.bounds
    assert all(minx - 1 <= h.x_mm <= maxx + 1 and miny - 1 <= h.y_mm <= maxy + 1 for h in board.holes)
    # copper lies on the board too (1 mm of slack for pads at the edge)
    for c in copper:
        b = c.dark.bounds
        assert b[0] >= minx - 1 and b[1] >= miny - 1 and b[2] <= maxx + 1 and b[3] <= maxy + 1, c.name


@pytest.mark.corpus
def test_corpus_facts_stated_by_the_readme(shared_dir: Path) -> None:
    # ../shared/corpus/README.md: nets from X2 (both forms) on b01-b06; none on b07-b09
    for board_id in ("b01-slider-proto", "b02-buttons-4layer", "b03-wheel", "b06-keyboard"):
        assert "x2" in _board(shared_dir, board_id).net_source
    for board_id in ("b07-slider-inch", "b09-usb-stick"):
        assert _board(shared_dir, board_id).net_source == "geometry"
    b07 = _board(shared_dir, "b07-slider-inch")
    assert {f.units for f in b07.files if f.role in ("copper", "drill") and f.units} == {"inch"}
    # Altium's drill file is there twice (NC_Drill/ holds a byte-identical copy): read once
    assert len(b07.holes) == 81  # the .DRR report's total
    assert sum(1 for f in b07.files if f.note and "read once" in f.note) == 1
    b08 = _board(shared_dir, "b08-usb-key")
    cad = next(f for f in b08.files if f.path.endswith(".cad"))
    assert "GenCAD" in (cad.note or "")
    b06 = _board(shared_dir, "b06-keyboard")
    assert b06.stackup is not None and b06.stackup.source == "jobfile" and b06.stackup.board_thickness_mm == 1.6
    b09 = _board(shared_dir, "b09-usb-stick")
    assert b09.stackup is not None and b09.stackup.source == "default"
