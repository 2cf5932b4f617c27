"""Boards of our own without net names, checked end to end (Gerber -> board -> design -> findings).

Issue 16: a board whose files carry no net attributes must be checked as fully as a named one.  Each
board here is written with our Gerber writer *without* any ``.N`` attribute and without a netlist;
the sensors are given by place (``[[roles.place]]``), as a user of such a board gives them.  Every
expected number is computed by hand from the construction (circle and rectangle areas, widths
written into the apertures); the Gerber specification (2023.08) is the reference for what the files
mean.
"""

from __future__ import annotations

import math
from pathlib import Path

import pytest
from shapely.geometry import Point

from sensorcheck.check import build_design_for
from sensorcheck.design.sensors import FACING_GAP_MM
from sensorcheck.fab.writer import DrillHole, GerberWriter, excellon_bytes
from sensorcheck.rules.engine import run_rules

R_RX_MM = 3.5  # receiver disc of a key
R_TX_IN_MM, R_TX_OUT_MM = 4.5, 7.5  # transmitter ring around it (1.0 mm TX-RX gap)
PITCH_MM = 20.0
LINE_MM = 0.25  # every trace


def _profile(w: GerberWriter, x0: float, y0: float, x1: float, y1: float) -> None:
    ap = w.circle(0.1, "Profile")
    w.track([(x0, y0), (x1, y0), (x1, y1), (x0, y1), (x0, y0)], ap)


def _write(folder: Path, top: GerberWriter, bottom: GerberWriter, holes: list[DrillHole],
           box_mm: tuple[float, float, float, float], config: str) -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "board-F_Cu.gbr").write_bytes(top.to_bytes())
    (folder / "board-B_Cu.gbr").write_bytes(bottom.to_bytes())
    edge = GerberWriter("Profile,NP")
    _profile(edge, *box_mm)
    (folder / "board-Edge_Cuts.gbr").write_bytes(edge.to_bytes())
    if holes:
        (folder / "board-PTH.drl").write_bytes(excellon_bytes(holes, plated=True))
    cfg = folder.parent / f"{folder.name}.toml"
    cfg.write_text(config)
    return cfg


OVERLAY = """
[board]
face = "top"

[[overlay.layers]]
material = "polycarbonate"
thickness_mm = 1.0
kind = "overlay"
"""


def _check(cfg: Path):  # noqa: ANN202 - (design, rule run)
    """Check the board beside ``cfg`` (same name): it must carry no net names."""
    design = build_design_for(cfg.with_suffix(""), cfg)
    assert design.board.net_source == "geometry"
    return design, run_rules(design, group=False)  # one finding per place: each is worked out by hand below


def _place(layer: str, x: float, y: float, role: str, sensor: str | None = None) -> str:
    extra = f'\nsensor = "{sensor}"' if sensor else ""
    return f'\n[[roles.place]]\nlayer = "{layer}"\npoint_mm = [{x}, {y}]\nrole = "{role}"{extra}\n'


# --------------------------------------------------------------------------- a 4 x 3 matrix keypad


def matrix_keypad(tmp_path: Path) -> Path:
    """12 mutual keys wired as 4 TX lines (rows, on top) x 3 RX lines (columns, on the bottom).

    Key (i, j) at (20 j, -20 i): RX disc r 3.5 and TX ring 4.5-7.5 on top.  TX row i joins its rings on
    top; RX column j goes down a via at each disc's centre and runs on the bottom under the TX ring of
    every key of its column (its own keys: entering a key through the partner electrode).  One foreign
    crossing on purpose: RX column 0 has a leg on the bottom at y = -61.5 from x = 0 to x = 14, ending
    under the TX ring of key (3, 1), a key RX0 is no line of.
    """
    top, bottom = GerberWriter("Copper,L1,Top"), GerberWriter("Copper,L2,Bot")
    line_top, line_bot = top.circle(LINE_MM, "Conductor"), bottom.circle(LINE_MM, "Conductor")
    holes = []
    for i in range(4):
        y = -PITCH_MM * i
        for j in range(3):
            x = PITCH_MM * j
            top.disc((x, y), R_RX_MM, function="Conductor")
            top.annulus((x, y), R_TX_IN_MM, R_TX_OUT_MM, function="Conductor")
            holes.append(DrillHole(x, y, 0.3, "ViaDrill"))
            if j < 2:
                top.track([(x + R_TX_OUT_MM - 0.1, y), (x + PITCH_MM - R_TX_OUT_MM + 0.1, y)], line_top)
    for j in range(3):
        x = PITCH_MM * j
        end = -61.5 if j == 0 else -PITCH_MM * 3
        bottom.track([(x, 0.0), (x, end)], line_bot)
    bottom.track([(0.0, -61.5), (14.0, -61.5)], line_bot)
    places = "".join(_place("top-copper", R_TX_IN_MM + 1.5, -PITCH_MM * i, "transmitter") for i in range(4))
    places += "".join(_place("bottom-copper", PITCH_MM * j, -10.0, "receiver") for j in range(3))
    return _write(tmp_path / "matrix", top, bottom, holes, (-15, -75, 55, 15), OVERLAY + places)


def test_matrix_keypad_without_names(tmp_path: Path) -> None:
    design, run = _check(matrix_keypad(tmp_path))
    nodes = [s for s in design.sensors if s.kind == "mutual-button"]
    assert len(nodes) == 12
    # every node's electrodes are on the layer where its two lines face each other: the top
    assert {e.layer for s in nodes for e in s.electrodes} == {"top-copper"}
    under = [f for f in run.findings if f.rule_id == "routing.trace-under-electrode"]
    # the only crossing that is not a line entering its own key: RX0's leg under the TX electrode of key
    # (3, 1), reported once (not once per node of RX0).  The key's TX electrode is its ring within the
    # node's footprint: where both lines lie within the facing gap (RX disc grown by the gap), grown by
    # the gap again, a disc of r = 3.5 + 2 x 1.5 = 6.5 mm (sensors.py's node definition).  By hand: the
    # leg (0.25 mm wide, centre line 1.5 mm below the key's centre) from that circle to x = 14, plus
    # its round half-end.
    assert len(under) == 1, [f.message for f in under]
    f = under[0]
    cx = PITCH_MM
    r_fp = R_RX_MM + 2 * FACING_GAP_MM
    n = 2000
    strip = 0.0
    for k in range(n):  # midpoint rule across the leg's width
        t = -LINE_MM / 2 + (k + 0.5) * LINE_MM / n
        x_in = cx - math.sqrt(r_fp ** 2 - (1.5 + t) ** 2)
        strip += (14.0 - x_in) * LINE_MM / n
    expected_mm2 = strip + math.pi * (LINE_MM / 2) ** 2 / 2
    assert f.value == pytest.approx(expected_mm2, rel=0.03)  # polygonal circles (arcs flattened, buffers)
    assert f.location.layer == "bottom-copper"
    key31 = next(s for s in nodes if s.outline.contains(Point(PITCH_MM, -PITCH_MM * 3)))
    assert f.sensor == key31.name


# --------------------------------------------------------------------------- parts under a key


def parts_under_key(tmp_path: Path) -> Path:
    """Two self keys (discs r 6 on top at (0, 0) and (30, 0)); under key 1 on the bottom, six
    1.0 x 1.5 mm pads of six different (unnamed) nets; under key 2 a ground pour given by place."""
    top, bottom = GerberWriter("Copper,L1,Top"), GerberWriter("Copper,L2,Bot")
    for x in (0.0, 30.0):
        top.disc((x, 0.0), 6.0, function="Conductor")
    pad = bottom.rect(1.0, 1.5, "SMDPad,CuDef")
    for k in range(6):
        bottom.flash((-3.0 + 1.5 * k, 0.0), pad)
    bottom.polygon([(22.0, -8.0), (38.0, -8.0), (38.0, 8.0), (22.0, 8.0)], function="Conductor")
    places = _place("top-copper", 0.0, 0.0, "self", "key1") + _place("top-copper", 30.0, 0.0, "self", "key2")
    places += _place("bottom-copper", 37.0, 7.0, "ground")
    return _write(tmp_path / "parts", top, bottom, [], (-15, -15, 45, 15), OVERLAY + places)


def test_parts_under_a_key_without_names(tmp_path: Path) -> None:
    _, run = _check(parts_under_key(tmp_path))
    found = [f for f in run.findings if f.rule_id == "routing.foreign-copper-in-zone"]
    # each of the six pads is foreign copper under key1's electrode: 1.0 x 1.5 = 1.5 mm2 each; the
    # ground pour under key2 is ground (by place) and is not reported
    assert sorted((f.sensor, f.severity) for f in found) == [("key1", "error")] * 6
    assert all(f.value == pytest.approx(1.5, rel=1e-6) for f in found)


# --------------------------------------------------------------------------- a trace over the width limit


def wide_trace(tmp_path: Path) -> Path:
    """A self key (disc r 5 on top) whose trace is drawn 0.254 mm wide (10 mil) for 20 mm."""
    top, bottom = GerberWriter("Copper,L1,Top"), GerberWriter("Copper,L2,Bot")
    top.disc((0.0, 0.0), 5.0, function="Conductor")
    top.track([(4.9, 0.0), (25.0, 0.0)], top.circle(0.254, "Conductor"))
    pad = bottom.rect(1.0, 1.0, "SMDPad,CuDef")
    bottom.flash((40.0, 10.0), pad)  # the bottom layer holds something, far away
    return _write(tmp_path / "wide", top, bottom, [], (-10, -10, 45, 15),
                  OVERLAY + _place("top-copper", 0.0, 0.0, "self", "key"))


def test_trace_width_without_names(tmp_path: Path) -> None:
    _, run = _check(wide_trace(tmp_path))
    width = [f for f in run.findings if f.rule_id == "trace.width"]
    # the aperture says 0.254 mm; the rule's default limit is 0.25 mm (common practice)
    assert len(width) == 1 and width[0].sensor == "key"
    assert width[0].value == pytest.approx(0.254, abs=1e-6) and width[0].limit == pytest.approx(0.25)
    assert "trace.width" in run.rules_run


# --------------------------------------------------------------------------- a legacy edge file name


def legacy_edge(x0_mm: float, y0_mm: float, x1_mm: float, y1_mm: float) -> str:
    """A legacy RS-274X edge layer (no X2 attributes): a rectangle drawn with a 0.1 mm line, 4.6 mm format."""
    c = [(x0_mm, y0_mm), (x1_mm, y0_mm), (x1_mm, y1_mm), (x0_mm, y1_mm), (x0_mm, y0_mm)]
    moves = "".join(f"X{round(x * 1e6)}Y{round(y * 1e6)}{'D02' if i == 0 else 'D01'}*\n" for i, (x, y) in enumerate(c))
    return ("G04 legacy RS-274X edge layer, no X2 attributes*\n%FSLAX46Y46*%\n%MOMM*%\n%ADD10C,0.100000*%\n"
            f"%LPD*%\nD10*\nG01*\n{moves}M02*\n")


LEGACY_EDGE = legacy_edge(-10.0, -10.0, 45.0, 15.0)


def test_legacy_edge_file_with_a_files_override(tmp_path: Path) -> None:
    """A 2012-era ``*-PCB_Edges.gbr`` (no X2 file function): with ``[files]`` mapping it to the
    outline, the board has its 55 x 25 mm outline.  (Without the mapping: the test below.)"""
    cfg = wide_trace(tmp_path)
    folder = tmp_path / "wide"
    (folder / "board-Edge_Cuts.gbr").unlink()
    (folder / "board-PCB_Edges.gbr").write_text(LEGACY_EDGE)
    cfg.write_text(cfg.read_text().replace("[board]", '[files]\n"*-PCB_Edges.gbr" = "outline"\n\n[board]', 1))
    design = build_design_for(folder, cfg)
    assert design.board.outline is not None
    assert design.board.outline.area == pytest.approx(55.0 * 25.0, rel=1e-9)


def test_legacy_edge_file_is_the_outline_without_a_files_mapping(tmp_path: Path) -> None:
    """The same legacy edge file and no ``[files]``: file identification takes ``*-PCB_Edges.gbr``
    as the outline by its name (KiCad's edge layer name before Edge.Cuts), so the rules that need
    the outline run.  The edge is drawn 1.0 mm left of the key's disc (r 5 at the origin, edge at
    x = -6): the distance by hand is 6 - 5 = 1.0 mm, under the edge rule's 2 mm (common practice)."""
    cfg = wide_trace(tmp_path)
    folder = tmp_path / "wide"
    (folder / "board-Edge_Cuts.gbr").unlink()
    (folder / "board-PCB_Edges.gbr").write_text(legacy_edge(-6.0, -10.0, 45.0, 15.0))
    assert "[files]" not in cfg.read_text()
    design, run = _check(cfg)
    outline = design.board.outline
    assert outline is not None and outline.area == pytest.approx(51.0 * 25.0, rel=1e-9)
    assert [lay.file for lay in design.board.layers if lay.function == "outline"] == ["board-PCB_Edges.gbr"]
    assert "fab.board-edge-near-sensor" in run.rules_run
    (edge,) = [f for f in run.findings if f.rule_id == "fab.board-edge-near-sensor"]
    assert edge.sensor == "key" and edge.severity == "warning"
    assert edge.value == pytest.approx(1.0, abs=1e-3)  # the disc is a polygon of many sides: within 1 um
    assert not [f for f in run.findings if f.message.startswith("not checked") and "outline" in f.message]
