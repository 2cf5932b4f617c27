"""Pins for each fix our parser subclass makes to gerbonara 1.6.3.

Each fix is tested twice: our reader gives what the Gerber specification says (the source
named beside each check: "The Gerber Layer Format Specification", Ucamco, revision 2023.08,
section numbers from memory of that revision), and gerbonara alone still behaves as measured in
DESIGN.md section 4. When an upstream release changes, the second test fails and tells us to
review (and maybe drop) our fix, instead of the change passing unnoticed.
"""

from __future__ import annotations

import contextlib
import io
import math
import warnings

import pytest
from gerbonara.apertures import RectangleAperture
from gerbonara.rs274x import GerberFile
from gerbonara.utils import MM

from sensorcheck.errors import InputError, LimitError
from sensorcheck.fab.gerber import read_gerber
from sensorcheck.limits import Limits

HEAD = "%FSLAX46Y46*%\n%MOMM*%\n"


def gbr(body: str, head: str = HEAD, end: str = "M02*\n") -> str:
    return head + body + end


def read(text: str, tol: float = 0.001):  # type: ignore[no-untyped-def]
    return read_gerber(text.encode(), "t.gbr", arc_tolerance_mm=tol)


def plain(text: str) -> GerberFile:
    """gerbonara's own parse, warnings silenced."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return GerberFile.from_string(text)


def mm(v: float) -> str:
    return str(round(v * 1_000_000))


# --------------------------------------------------------------------------- step and repeat

SR = "%ADD10C,1*%\n%SRX3Y2I5J4*%\nD10*\nX0Y0D03*\n%SR*%\n"


def test_step_and_repeat_is_expanded() -> None:
    # spec section 4.11.1 (SR): the block is repeated X times along x by I and Y times along y by J.
    got = read(gbr(SR), tol=1e-5)  # fine chords: the area check below is to 0.1 %
    assert got.object_count == 6
    centres = sorted((round(f.geometry.centroid.x, 6), round(f.geometry.centroid.y, 6)) for f in got.features)
    assert centres == [(x, y) for x in (0.0, 5.0, 10.0) for y in (0.0, 4.0)]
    assert got.dark is not None
    assert got.dark.area == pytest.approx(6 * math.pi / 4, rel=1e-3)


def test_step_and_repeat_offsets_are_in_the_file_unit() -> None:
    # SR I/J are in the file's unit (spec section 4.11.1); an inch file steps by inches.
    text = "%FSLAX24Y24*%\n%MOIN*%\n%ADD10C,0.1*%\n%SRX2Y1I0.5J0*%\nD10*\nX0Y0D03*\n%SR*%\nM02*\n"
    xs = sorted(round(f.geometry.centroid.x, 6) for f in read(text).features)
    assert xs == [0.0, 12.7]


def test_step_and_repeat_repeats_regions_and_keeps_lines() -> None:
    body = (f"%SRX2Y1I{3}J0*%\nG36*\nX0Y0D02*\nX{mm(1)}Y0D01*\nX{mm(1)}Y{mm(1)}D01*\nX0Y0D01*\nG37*\n%SR*%\n")
    got = read(gbr(body))
    assert [f.kind for f in got.features] == ["region", "region"]
    assert [f.source.line for f in got.features] == [4, 4]
    assert got.dark is not None and got.dark.area == pytest.approx(1.0)


def test_gerbonara_alone_still_drops_step_and_repeat() -> None:
    # DESIGN.md section 4: gerbonara 1.6.3 tests an empty list for truth and never repeats.
    assert len(plain(gbr(SR)).objects) == 1


# --------------------------------------------------------------------------- attributes on regions

REGION_ATTRS = (
    "%TA.AperFunction,Conductor*%\n%TO.N,GND*%\n%TO.C,R1*%\n"
    f"G36*\nX0Y0D02*\nX{mm(2)}Y0D01*\nX{mm(2)}Y{mm(1)}D01*\nX0Y{mm(1)}D01*\nX0Y0D01*\nG37*\n%TD*%\n"
)


def test_regions_carry_object_and_aperture_attributes() -> None:
    # spec section 5.2 / 5.6.4: a region takes the object attributes current when it is created
    # and .AperFunction from the aperture attribute dictionary.
    f = read(gbr(REGION_ATTRS)).features[0]
    assert (f.kind, f.net, f.component, f.aperture_function) == ("region", "GND", "R1", "Conductor")
    assert f.source.line == 6


def test_gerbonara_alone_still_drops_region_attributes() -> None:
    region = plain(gbr(REGION_ATTRS)).objects[0]
    assert not isinstance(region.attrs, dict) or ".N" not in region.attrs


# --------------------------------------------------------------------------- attributes as comments

COMMENT_ATTRS = (
    "G04 #@! TF.FileFunction,Copper,L1,Top*\n"
    "G04 #@! TA.AperFunction,SMDPad,CuDef*\n%ADD10C,1*%\nG04 #@! TD*\n"
    "G04 #@! TO.N,SENSE1*\nG04 #@! TO.P,U1,7,RX*\nD10*\nX0Y0D03*\nG04 #@! TD*\nX5000000Y0D03*\n"
)


def test_attributes_in_comment_form_are_read() -> None:
    # spec section 5.1: X2 attributes may be written inside G04 comments starting "#@!".
    got = read(gbr(COMMENT_ATTRS))
    assert got.file_attributes[".FileFunction"] == ["Copper", "L1", "Top"]
    first, second = got.features
    assert (first.net, first.component, first.pin, first.aperture_function) == ("SENSE1", "U1", "7", "SMDPad,CuDef")
    assert second.net is None  # TD deleted the object attributes
    assert second.aperture_function == "SMDPad,CuDef"  # the aperture keeps its own attributes


def test_gerbonara_alone_still_ignores_comment_attributes() -> None:
    flash = plain(gbr(COMMENT_ATTRS)).objects[0]
    assert ".N" not in flash.attrs


# --------------------------------------------------------------------------- LM / LR / LS


def _bounds(text: str) -> tuple[float, ...]:
    dark = read(text).dark
    assert dark is not None
    return tuple(round(v, 6) for v in dark.bounds)


def test_aperture_rotation_scaling_and_mirroring() -> None:
    # spec section 4.9.3-4.9.5: LR rotates (degrees, counterclockwise), LS scales, LM mirrors the
    # aperture about its own origin for the objects that follow.
    rect = "%ADD10R,2X1*%\nD10*\n"
    assert _bounds(gbr(rect + "%LR90*%\nX0Y0D03*\n")) == (-0.5, -1.0, 0.5, 1.0)
    assert _bounds(gbr(rect + "%LS2*%\nX0Y0D03*\n")) == (-2.0, -1.0, 2.0, 1.0)
    tri = "%AMTRI*\n4,1,3,0,0,1,0,0,2,0,0,0*%\n%ADD11TRI*%\nD11*\n"  # right triangle in the first quadrant
    assert _bounds(gbr(tri + "%LMX*%\nX0Y0D03*\n")) == (-1.0, 0.0, 0.0, 2.0)
    assert _bounds(gbr(tri + "%LMY*%\nX0Y0D03*\n")) == (0.0, -2.0, 1.0, 0.0)
    assert _bounds(gbr(tri + "%LMXY*%\nX0Y0D03*\n")) == (-1.0, -2.0, 0.0, 0.0)
    # LR applies to draws too: a rectangle rotated 90 degrees swept along x is 1 wide, 2 tall at its ends
    assert _bounds(gbr(rect + f"%LR90*%\nX0Y0D02*\nX{mm(10)}Y0D01*\n")) == (-0.5, -1.0, 10.5, 1.0)
    # and stays until changed
    assert _bounds(gbr(rect + "%LR90*%\n%LR0*%\nX0Y0D03*\n")) == (-1.0, -0.5, 1.0, 0.5)


def test_gerbonara_alone_still_ignores_lr() -> None:
    with warnings.catch_warnings(record=True) as seen:
        warnings.simplefilter("always")
        flash = GerberFile.from_string(gbr("%ADD10R,2X1*%\n%LR90*%\nD10*\nX0Y0D03*\n")).objects[0]
    assert any("LR90" in str(w.message) for w in seen)
    assert flash.bounding_box() == ((-1.0, -0.5), (1.0, 0.5))


# --------------------------------------------------------------------------- AB block apertures

BLOCK = "%ADD10C,1*%\n%ABD12*%\nD10*\nX0Y0D03*\n%LPC*%\nX0Y0D03*\n%LPD*%\nX2000000Y0D03*\n%AB*%\nD12*\nX10000000Y0D03*\nX10000000Y5000000D03*\n"


def test_block_apertures_are_placed_at_each_flash() -> None:
    # spec section 4.11.2 (AB): flashing a block places its objects with the block origin at the
    # flash point, in their order and with their polarities.
    got = read(gbr(BLOCK), tol=1e-5)
    assert [f.polarity for f in got.features] == ["dark", "clear", "dark"] * 2
    centres = sorted((round(f.geometry.centroid.x, 6), round(f.geometry.centroid.y, 6))
                     for f in got.features if f.polarity == "dark")
    assert centres == [(10.0, 0.0), (10.0, 5.0), (12.0, 0.0), (12.0, 5.0)]
    assert got.dark is not None and got.dark.area == pytest.approx(2 * math.pi / 4, rel=1e-3)


def test_gerbonara_alone_still_fails_on_block_apertures() -> None:
    with pytest.raises(SyntaxError):
        plain(gbr(BLOCK))


def nested_blocks(top_flashes: int = 1, levels: int = 3, fan: int = 4) -> tuple[str, list[int]]:
    """``levels`` nested blocks, each flashing the one below ``fan`` times, then the outer block
    flashed ``top_flashes`` times, at (100 + 100 t, 5) mm for t = 0, 1, ...

    Level k (k = 0, 1, ...) places its flashes at x = j * fan**k mm (j = 0 .. fan - 1), so the
    leaves of one outer flash land on the integers 0 .. fan**levels - 1 (plus the flash point),
    each once. Returns the text and the 1-based line of every flash, in file order.
    """
    lines = ["%FSLAX46Y46*%", "%MOMM*%", "%ADD10C,0.5*%"]
    flash_lines: list[int] = []
    for k in range(levels):
        lines += [f"%ABD{20 + k}*%", "D10*" if k == 0 else f"D{19 + k}*"]
        for j in range(fan):
            lines.append(f"X{mm(j * fan**k)}Y0D03*")
            flash_lines.append(len(lines))
        lines.append("%AB*%")
    lines.append(f"D{19 + levels}*")
    for t in range(top_flashes):
        lines.append(f"X{mm(100 + 100 * t)}Y{mm(5)}D03*")
        flash_lines.append(len(lines))
    lines.append("M02*")
    return "\n".join(lines) + "\n", flash_lines


@pytest.mark.parametrize("top_flashes", [1, 2])
def test_nested_blocks_just_under_the_object_limit_are_placed(top_flashes: int) -> None:
    # spec section 4.11.2 (AB): a block may flash blocks defined before it; each flash places the
    # flashed block's objects at the flash point. Worked out by hand: 3 levels of 4 flashes place
    # 4 x 4 x 4 = 64 flashes of D10 per outer flash, at x = X + a + 4 b + 16 c mm for a, b, c in
    # 0..3, i.e. X .. X + 63 mm, all at y = 5 mm. A limit of exactly 64 objects per outer flash
    # lets them through.
    text, _ = nested_blocks(top_flashes)
    limits = Limits(max_gerber_objects=64 * top_flashes)
    got = read_gerber(text.encode(), "t.gbr", arc_tolerance_mm=1e-3, limits=limits)
    assert got.object_count == 64 * top_flashes
    centres = sorted((round(f.geometry.centroid.x, 3), round(f.geometry.centroid.y, 3)) for f in got.features)
    assert centres == [(100.0 + 100 * t + k, 5.0) for t in range(top_flashes) for k in range(64)]


@pytest.mark.parametrize(("top_flashes", "limit", "flash"), [
    # 2 x 64 objects against 127: the second flash outside the blocks (the last flash line)
    (2, 127, -1),
    # the objects of the block being defined count too (as they always have): against 63, the
    # fourth flash of D21 (16 objects each) inside D22 makes 64. Flashes are listed level by
    # level, 4 per level, so that is flash 4 + 4 + 4 (index 11); against 40, the third (index 10)
    (1, 63, 11),
    (1, 40, 10),
])
def test_nested_blocks_past_the_object_limit_are_refused_at_the_flash(top_flashes: int, limit: int,
                                                                        flash: int) -> None:
    text, flash_lines = nested_blocks(top_flashes)
    with pytest.raises(LimitError) as info:
        read_gerber(text.encode(), "t.gbr", limits=Limits(max_gerber_objects=limit))
    assert info.value.file == "t.gbr"
    assert info.value.line == flash_lines[flash]
    assert info.value.message == f"more than {limit} graphical objects"
    assert "max_gerber_objects" in (info.value.expected or "")


def test_regions_in_a_block_flashed_twice_are_two_regions() -> None:
    # spec section 4.11.2 (AB): each flash places its own copy of the block. A 1 mm square region
    # flashed at x = 10 and x = 20 mm: two squares with their lower-left corners there (a copy that
    # shared its outline with the block, or with the other copy, would be moved twice).
    square = "G36*\nX0Y0D02*\nX1000000Y0D01*\nX1000000Y1000000D01*\nX0Y1000000D01*\nX0Y0D01*\nG37*\n"
    body = f"%ABD20*%\n{square}%AB*%\nD20*\nX{mm(10)}Y0D03*\nX{mm(20)}Y0D03*\n"
    got = read(gbr(body))
    assert sorted(tuple(round(v, 6) for v in f.geometry.bounds) for f in got.features) == [
        (10.0, 0.0, 11.0, 1.0), (20.0, 0.0, 21.0, 1.0)]


def test_nested_clear_flashes_toggle_polarity_at_each_level() -> None:
    # spec section 4.11.2 (AB, from memory): a block flashed with clear polarity (LPC) has the
    # polarity of each of its objects toggled. Flashed clear inside a block that is itself flashed
    # clear, a dark object toggles twice: dark again. One more clear level above the dark top
    # flash of D21 makes it clear.
    body = ("%ADD10C,1*%\n%ABD20*%\nD10*\nX0Y0D03*\n%AB*%\n"
            "%ABD21*%\n%LPC*%\nD20*\nX0Y0D03*\n%LPD*%\n%AB*%\n"
            "%ABD22*%\n%LPC*%\nD21*\nX0Y0D03*\n%LPD*%\n%AB*%\n"
            f"D21*\nX{mm(10)}Y0D03*\nD22*\nX{mm(20)}Y0D03*\n")
    got = read(gbr(body))
    assert [(f.polarity, round(f.geometry.centroid.x, 3)) for f in got.features] == [("clear", 10.0), ("dark", 20.0)]


def test_step_and_repeat_inside_a_block_counts_the_blocks_it_flashes() -> None:
    # spec section 4.11 (from memory): SR and AB may be nested. D21 repeats a flash of D20 (2 flashes)
    # 3 times along x: 6 objects, at x = {0, 0.5} + {0, 5, 10} mm, placed at (0, 0). A limit of 5
    # refuses it at the SR line (the step-and-repeat check, before any copy is made).
    body = ("%ADD10C,0.2*%\n%ABD20*%\nD10*\nX0Y0D03*\nX500000Y0D03*\n%AB*%\n"
            "%ABD21*%\n%SRX3Y1I5J0*%\nD20*\nX0Y0D03*\n%SR*%\n%AB*%\nD21*\nX0Y0D03*\n")
    got = read_gerber(gbr(body).encode(), "t.gbr", limits=Limits(max_gerber_objects=6))
    assert got.object_count == 6
    assert sorted(round(f.geometry.centroid.x, 3) for f in got.features) == [0.0, 0.5, 5.0, 5.5, 10.0, 10.5]
    with pytest.raises(LimitError) as info:
        read_gerber(gbr(body).encode(), "t.gbr", limits=Limits(max_gerber_objects=5))
    assert info.value.line == 2 + 8  # the %SRX3Y1I5J0*% line
    assert "step-and-repeat expands to 6 objects" in info.value.message


# --------------------------------------------------------------------------- objects made by copying

# limits.max_expanded_objects counts the objects the reader makes by copying: a flash of a block
# aperture placing N objects makes N - 1 (the flash statement itself is one object of the file), a
# step-and-repeat of X x Y copies of a block of N objects makes (X*Y - 1) * N. Checked before the
# copies are made, refused at the line of the flash or SR that would pass the limit.

#: spec section 4.11.2 (AB) and 4.11.1 (SR). Line numbers, 1-based (HEAD is lines 1-2):
#: 3 %ADD10C,0.2*%, 4-9 block D20 (three flashes at x = 0, 1, 2 mm), 10 D20*, 11 and 12 its flashes
#: at (10, 0) and (20, 0) mm, 13 D10*, 14 %SRX2Y2I5J7*%, 15 the flash at (30, 0), 16 %SR*%.
MIXED = ("%ADD10C,0.2*%\n%ABD20*%\nD10*\nX0Y0D03*\nX1000000Y0D03*\nX2000000Y0D03*\n%AB*%\n"
         "D20*\nX10000000Y0D03*\nX20000000Y0D03*\nD10*\n%SRX2Y2I5J7*%\nX30000000Y0D03*\n%SR*%\n")


def _expanded(text: str, limits: Limits) -> int:
    from sensorcheck.fab.gerber_parser import parse_gerber_text

    return parse_gerber_text(text, "t.gbr", limits).expanded_objects


def test_objects_made_by_copying_just_under_the_limit_are_read() -> None:
    # counted by hand: each D20 flash places 3 objects (makes 2): 4; the SR places 2 x 2 copies of
    # one flash (makes 3): 7 in all. The image: the block at x = 10 + {0, 1, 2} and 20 + {0, 1, 2},
    # and the SR flash at (30 + 5 i, 7 j) for i, j in {0, 1} (spec 4.11.1: I and J are the steps).
    limits = Limits(max_expanded_objects=7)
    assert _expanded(gbr(MIXED), limits) == 7
    got = read_gerber(gbr(MIXED).encode(), "t.gbr", limits=limits)
    assert got.object_count == 10
    centres = sorted((round(f.geometry.centroid.x, 3), round(f.geometry.centroid.y, 3)) for f in got.features)
    assert centres == sorted([(10.0, 0.0), (11.0, 0.0), (12.0, 0.0), (20.0, 0.0), (21.0, 0.0), (22.0, 0.0),
                              (30.0, 0.0), (35.0, 0.0), (30.0, 7.0), (35.0, 7.0)])


@pytest.mark.parametrize(("limit", "line", "what"), [
    # 6: the two block flashes make 4, the SR's 3 more would make 7: refused at the SR line (14)
    (6, 14, "step-and-repeat of 4 copies of 1 object would bring the objects made by copying (AB flashes, "
            "SR repeats) to 7"),
    # 3: the first D20 flash makes 2, the second 2 more: refused at the second flash (line 12)
    (3, 12, "flash of block aperture D20 placing 3 objects would bring the objects made by copying "
            "(AB flashes, SR repeats) to 4"),
    # 1: the first flash already makes 2 (line 11)
    (1, 11, "flash of block aperture D20 placing 3 objects would bring the objects made by copying "
            "(AB flashes, SR repeats) to 2"),
])
def test_objects_made_by_copying_past_the_limit_are_refused_at_the_line(limit: int, line: int, what: str) -> None:
    with pytest.raises(LimitError) as info:
        read_gerber(gbr(MIXED).encode(), "t.gbr", limits=Limits(max_expanded_objects=limit))
    err = info.value
    assert (err.file, err.line) == ("t.gbr", line)
    assert err.message == f"{what}, more than limits.max_expanded_objects = {limit}"
    assert "max_expanded_objects" in (err.expected or "") and "[limits]" in (err.expected or "")
    assert "sensorcheck.toml" in (err.expected or "")


@pytest.mark.parametrize("top_flashes", [1, 2])
def test_nested_blocks_count_what_each_outer_flash_places(top_flashes: int) -> None:
    # the nested blocks above place 4 x 4 x 4 = 64 objects per outer flash (worked out by hand
    # there): 63 made per outer flash. Exactly that is read; one less refuses the last outer flash.
    text, flash_lines = nested_blocks(top_flashes)
    made = 63 * top_flashes
    assert _expanded(text, Limits(max_expanded_objects=made)) == made
    assert read_gerber(text.encode(), "t.gbr", limits=Limits(max_expanded_objects=made)).object_count == 64 * top_flashes
    with pytest.raises(LimitError) as info:
        read_gerber(text.encode(), "t.gbr", limits=Limits(max_expanded_objects=made - 1))
    assert info.value.line == flash_lines[-1]
    assert "placing 64 objects" in info.value.message


def test_step_and_repeat_inside_a_block_counts_its_copies_when_made_and_when_placed() -> None:
    # D21 holds 3 copies of one flash, made when its SR (line 5) closes: 2 made; each flash of D21
    # places those 3 (2 made each). One flash: 4 in all, read with a limit of 4; against 3 the
    # flash of D21 (line 11) is refused; against 1 the SR inside the block (named by its line, 5).
    body = "%ADD10C,0.2*%\n%ABD21*%\n%SRX3Y1I5J0*%\nD10*\nX0Y0D03*\n%SR*%\n%AB*%\nD21*\nX0Y0D03*\n"
    text = gbr(body)
    assert _expanded(text, Limits(max_expanded_objects=4)) == 4
    got = read_gerber(text.encode(), "t.gbr", limits=Limits(max_expanded_objects=4))
    assert sorted(round(f.geometry.centroid.x, 3) for f in got.features) == [0.0, 5.0, 10.0]
    with pytest.raises(LimitError) as info:
        read_gerber(text.encode(), "t.gbr", limits=Limits(max_expanded_objects=3))
    assert info.value.line == 11
    with pytest.raises(LimitError) as info:
        read_gerber(text.encode(), "t.gbr", limits=Limits(max_expanded_objects=1))
    assert info.value.line == 5 and info.value.message.startswith("step-and-repeat of 3 copies")


def test_objects_written_out_one_by_one_are_not_counted() -> None:
    # an honest file writes its objects out: 200 flashes and a region, none made by copying, are
    # read under a limit of 1 (max_gerber_objects bounds such a file, not this limit)
    body = "%ADD10C,0.2*%\nD10*\n" + "".join(f"X{mm(k)}Y0D03*\n" for k in range(200))
    body += "G36*\nX0Y5000000D02*\nX1000000Y5000000D01*\nX1000000Y6000000D01*\nX0Y5000000D01*\nG37*\n"
    limits = Limits(max_expanded_objects=1)
    assert _expanded(gbr(body), limits) == 0
    assert read_gerber(gbr(body).encode(), "t.gbr", limits=limits).object_count == 201


def test_the_demo_boards_and_a_demo_panel_stay_far_under_the_default() -> None:
    # what honest files make by copying, against the default: the demo boards (boards/tm1-*/fab)
    # write every object out (none made); the clean demo's top copper stepped 3 x 2 in one SR block
    # (bench/make_large_board.py, the panel tests/boards checks) makes 5 copies of each of its
    # objects, which must stay under half the default.
    import importlib.util
    from pathlib import Path

    from sensorcheck.fab.gerber_parser import decode_gerber, parse_gerber_text
    from sensorcheck.limits import DEFAULT_LIMITS

    repo = Path(__file__).resolve().parents[2]
    gerbers = [p for p in sorted(repo.glob("boards/tm1-*/fab/*")) if p.is_file() and b"%FS" in p.read_bytes()]
    assert len(gerbers) >= 10
    for p in gerbers:
        assert parse_gerber_text(decode_gerber(p.read_bytes(), p.name), p.name).expanded_objects == 0, p
    spec = importlib.util.spec_from_file_location("make_large_board", repo / "bench" / "make_large_board.py")
    assert spec and spec.loader
    large = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(large)
    writer = large.demo_top_copper()
    one = parse_gerber_text(decode_gerber(writer.panel_bytes([(0.0, 0.0)]), "one.gtl"), "one.gtl")
    panel = parse_gerber_text(decode_gerber(writer.step_repeat_bytes(3, 2, 115.0, 75.0), "sr.gtl"), "sr.gtl")
    n = len(one.gerber.objects)
    assert n > 1000 and len(panel.gerber.objects) == 6 * n
    assert panel.expanded_objects == 5 * n
    assert 2 * panel.expanded_objects <= DEFAULT_LIMITS.max_expanded_objects


# --------------------------------------------------------------------------- rectangle sweeps


def test_rectangle_draw_is_the_exact_sweep() -> None:
    # spec section 4.7.1: a draw covers what the aperture sweeps. Rectangle 2 x 1 along (10, 10):
    # Minkowski sum area = 2 x 1 + 1 x 10 + 2 x 10 = 32, bounds the end rectangles'.
    got = read(gbr(f"%ADD10R,2X1*%\nD10*\nX0Y0D02*\nX{mm(10)}Y{mm(10)}D01*\n"))
    assert got.dark is not None
    assert got.dark.area == pytest.approx(32.0)
    assert tuple(got.dark.bounds) == pytest.approx((-1.0, -0.5, 11.0, 10.5))
    assert got.features[0].width_mm == pytest.approx(1.0)  # the smaller side


def test_gerbonara_alone_still_rounds_rectangle_draws() -> None:
    line = plain(gbr(f"%ADD10R,2X1*%\nD10*\nX0Y0D02*\nX{mm(10)}Y0D01*\n")).objects[0]
    (prim,) = list(line.to_primitives(MM))
    assert prim.width == pytest.approx(math.hypot(2, 1))
    assert RectangleAperture(2, 1, unit=MM).equivalent_width(MM) == pytest.approx(math.hypot(2, 1))


# --------------------------------------------------------------------------- rotated rectangles


def test_rotated_macro_rectangle_is_exact() -> None:
    # spec section 4.5.1.6 (centre line, code 21) rotated 30 degrees about the macro origin:
    # the rectangle itself, area 2, half extents a cos t + b sin t and a sin t + b cos t.
    got = read(gbr("%AMROT*\n21,1,2,1,0,0,30*%\n%ADD10ROT*%\nD10*\nX0Y0D03*\n"))
    c, s = math.cos(math.radians(30)), math.sin(math.radians(30))
    hx, hy = 1 * c + 0.5 * s, 1 * s + 0.5 * c
    assert got.dark is not None
    assert got.dark.area == pytest.approx(2.0)
    assert tuple(got.dark.bounds) == pytest.approx((-hx, -hy, hx, hy))


def test_gerbonara_alone_still_gives_rotated_rectangles_their_bounding_box() -> None:
    flash = plain(gbr("%AMROT*\n21,1,2,1,0,0,30*%\n%ADD10ROT*%\nD10*\nX0Y0D03*\n")).objects[0]
    (prim,) = list(flash.to_primitives(MM))
    pts = prim.to_arc_poly().outline  # gerbonara's polygon for the rotated rectangle
    area = 0.5 * abs(sum(x0 * y1 - x1 * y0 for (x0, y0), (x1, y1) in zip(pts, pts[1:] + pts[:1])))
    c, s = math.cos(math.radians(30)), math.sin(math.radians(30))
    assert area == pytest.approx(4 * (c + 0.5 * s) * (s + 0.5 * c))  # the bounding box, not 2


# --------------------------------------------------------------------------- truncated files


def test_truncated_file_is_refused_with_the_last_line() -> None:
    # spec section 4.13: M02 ends every file; without it the file is incomplete.
    text = HEAD + "%ADD10C,1*%\nD10*\nX0Y0D03*\n"
    with pytest.raises(InputError) as err:
        read(text)
    assert err.value.line == 5 and "M02" in (err.value.expected or "")


def test_gerbonara_alone_still_accepts_truncated_files() -> None:
    with warnings.catch_warnings(record=True) as seen:
        warnings.simplefilter("always")
        got = GerberFile.from_string(HEAD + "%ADD10C,1*%\nD10*\nX0Y0D03*\n")
    assert len(got.objects) == 1
    assert any("M02" in str(w.message) for w in seen)


# --------------------------------------------------------------------------- stdout stays clean

POLY_MACRO = "%AMPOLY*\n5,1,6,0,0,2,0*%\n%ADD10POLY*%\nD10*\nX0Y0D03*\n"


def test_reading_prints_nothing(capsys: pytest.CaptureFixture[str]) -> None:
    got = read(gbr(POLY_MACRO))
    # regular hexagon, circumscribed diameter 2: area 3 sqrt(3) / 2
    assert got.dark is not None and got.dark.area == pytest.approx(1.5 * math.sqrt(3))
    assert capsys.readouterr().out == ""


def test_gerbonara_alone_still_prints_for_macro_polygons() -> None:
    buf = io.StringIO()
    with contextlib.redirect_stdout(buf):
        flash = plain(gbr(POLY_MACRO)).objects[0]
        list(flash.to_primitives(MM))
    assert buf.getvalue() != ""
