"""Component positions from X3 component layers and pick-and-place files.

External references: the Gerber Layer Format Specification 2023.08 section 6.9 (component layers:
``ComponentMain`` flashes carrying ``.C``, ``.CRot``, ``.CVal``, ``.CFtp``), written out here from
memory of the specification's example; KiCad's ``.pos`` and CSV layouts, from memory of its
exporter's output. The expected numbers are the coordinates written in the files.
"""

from __future__ import annotations

import pytest

from sensorcheck.errors import InputError
from sensorcheck.fab.placement import read_component_layer, read_pick_and_place

X3 = b"""%TF.FileFunction,Component,L1,Top*%
%FSLAX46Y46*%
%MOMM*%
%LPD*%
%TA.AperFunction,ComponentMain*%
%ADD10C,0.300000*%
%TA.AperFunction,ComponentOutline,Body*%
%ADD11C,0.100000*%
%TA.AperFunction,ComponentPin*%
%ADD12P,0.360000X4X0.000000*%
%TD*%
%TO.C,R1*%
%TO.CRot,90*%
%TO.CVal,10k*%
%TO.CFtp,R_0603*%
D10*
X12500000Y-3250000D03*
D11*
X11700000Y-3700000D02*
X13300000Y-3700000D01*
D12*
%TO.P,R1,1*%
X11700000Y-3250000D03*
%TD*%
G04 #@! TO.C,LED1*
%TO.CRot,-45.5*%
D10*
X20000000Y5000000D03*
%TD*%
M02*
"""


def test_x3_component_layer() -> None:
    comps = read_component_layer(X3, "top.cmp.gbr", "top")
    assert [(c.ref, c.x_mm, c.y_mm, c.rotation_deg, c.value, c.footprint) for c in comps] == [
        ("R1", 12.5, -3.25, 90.0, "10k", "R_0603"),
        ("LED1", 20.0, 5.0, -45.5, None, None),
    ]
    assert all(c.side == "top" for c in comps) and comps[0].source.line == 17


def test_kicad_pos_text() -> None:
    pos = b"""### Footprint positions - created on 2024-06-15 ###
### Printed by KiCad version 8.0.2
## Unit = mm, Angle = deg.
## Side : All
# Ref     Val        Package                 PosX       PosY       Rot  Side
C1        100nF      C_0402_1005Metric    100.5000   -50.2500  180.0000  top
D3        LED        LED_0603             12.0000     -7.5000   90.0000  bottom
## End
"""
    comps = read_pick_and_place(pos, "board-all.pos")
    assert [(c.ref, c.x_mm, c.y_mm, c.rotation_deg, c.side, c.value, c.footprint) for c in comps] == [
        ("C1", 100.5, -50.25, 180.0, "top", "100nF", "C_0402_1005Metric"),
        ("D3", 12.0, -7.5, 90.0, "bottom", "LED", "LED_0603"),
    ]


def test_csv_styles_and_units() -> None:
    kicad = b'Ref,Val,Package,PosX,PosY,Rot,Side\n"R1","10k","R_0603",1.5,-2.25,90.000000,top\n'
    (r1,) = read_pick_and_place(kicad, "b-pos.csv")
    assert (r1.ref, r1.x_mm, r1.y_mm, r1.rotation_deg, r1.side) == ("R1", 1.5, -2.25, 90.0, "top")
    other = b'Designator,Mid X,Mid Y,Layer,Rotation\nLED1,100mil,2.54mm,Bottom,270\n'
    (led,) = read_pick_and_place(other, "pnp.csv")
    assert (led.ref, led.x_mm, led.y_mm, led.side, led.rotation_deg) == ("LED1", pytest.approx(2.54), 2.54, "bottom", 270.0)
    inch = b"## Unit = inches\n# Ref Val Package PosX PosY Rot Side\nU1 X Y 1.0 -0.5 0 top\n"
    (u1,) = read_pick_and_place(inch, "b.pos")
    assert (u1.x_mm, u1.y_mm) == (25.4, -12.7)


@pytest.mark.parametrize(
    "data, line, expected",
    [
        (b"hello,world\n1,2\n", 1, "header"),
        (b"Ref,PosX,PosY,Rot\nR1,abc,1.0,0\n", 2, "X position"),
        (b"Ref,PosX,PosY,Rot\nR1,1.0,2.0,left\n", 2, "degrees"),
        (b"Ref,Val,PosX\nR1,1,2\n", 1, "X and Y"),
    ],
)
def test_bad_placement_files(data: bytes, line: int, expected: str) -> None:
    with pytest.raises(InputError) as exc:
        read_pick_and_place(data, "bad.csv")
    assert exc.value.file == "bad.csv" and exc.value.line == line and expected in (exc.value.expected or "")


def test_component_flash_without_reference_is_an_error() -> None:
    bad = X3.replace(b"%TO.C,R1*%\n", b"")
    with pytest.raises(InputError) as exc:
        read_component_layer(bad, "c.gbr", "top")
    assert exc.value.line == 16 and ".C" in (exc.value.expected or "")


# --- robustness: mutated real files either read or raise our InputError (issue 6, item 1) ----------
from hypothesis import HealthCheck, given, settings  # noqa: E402

from board.fuzz import MUTATIONS, apply  # noqa: E402  (tests/board/fuzz.py)


@settings(max_examples=150, deadline=None)
@given(ops=MUTATIONS)
def test_mutated_placement_files_read_or_raise_input_error(ops: list) -> None:
    src = b'Ref,Val,Package,PosX,PosY,Rot,Side\n"R1","10k","R_0603",1.5,-2.25,90.000000,top\nLED1,red,LED,2mm,3mm,0,bottom\n'
    for reader, data in ((read_pick_and_place, apply(src, ops)), (lambda d, n: read_component_layer(d, n, "top"), apply(X3, ops))):
        try:
            reader(data, "m.csv")
        except InputError as exc:
            assert exc.file == "m.csv" and exc.expected
