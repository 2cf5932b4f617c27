"""Deprecated Gerber constructs and Excellon dialects: read with a warning, refused when strict.

Sources named beside each test:
* Gerber: Ucamco, "The Gerber Layer Format Specification", revision 2023.08, chapter 8
  (deprecated format elements: 8.1 deprecated commands AS/IN/IP/IR/LN/MI/OF/SF, 8.2 deprecated
  options, 8.3 deprecated syntax variations); section numbers from memory.
* Excellon: the Excellon CNC-7 programming conventions (M48 header, INCH/METRIC = M72/M71 with
  LZ/TZ, G93 zero set, F/S feed and speed words, T<n>C<diameter> tools); from memory of the
  format as drill machines and exporters use it.
Every expected image is worked out by hand in the test (elementary geometry). Where a construct
has two readings in the wild, the test pins ours and says why.
"""

from __future__ import annotations

import math
from pathlib import Path

import pytest
from shapely.geometry import Point

from sensorcheck.errors import InputError
from sensorcheck.fab.excellon import DEFAULT_UNKNOWN_TOOL_MM, read_excellon, read_tool_table
from sensorcheck.fab.gerber import read_gerber

HEAD = "%FSLAX46Y46*%\n%MOMM*%\n"


def gbr(body: str, head: str = HEAD) -> bytes:
    return (head + body + "M02*\n").encode()


def mm(v: float) -> str:
    return str(round(v * 1_000_000))


def read(data: bytes, construct: str | None = None) -> object:
    """Read leniently; the construct (when given) is named in a warning with file and line."""
    got = read_gerber(data, "old.gbr")
    if construct is not None:
        assert construct in got.constructs
        assert any(w.startswith("old.gbr:") and construct in w for w in got.warnings), got.warnings
    return got


def strict_refuses(data: bytes) -> InputError:
    with pytest.raises(InputError) as err:
        read_gerber(data, "old.gbr", strict=True)
    assert "refused by --strict" in err.value.message and err.value.line is not None
    return err.value


RECT = "%ADD10R,1X2*%\nD10*\n"
#: circles are polygons within the 1 um arc tolerance: a 1 mm circle loses at most its perimeter x
#: 1 um = 0.0031 mm2 of pi/4 (0.4 %)
CIRCLE_REL = 5e-3  # a 1 x 2 mm rectangle: its orientation shows mirroring and rotation


# --------------------------------------------------------------------------- Gerber image commands


def test_mirror_image_mirrors_coordinates_and_shapes() -> None:
    # spec 8.1 (MI): A1 mirrors the A (x) axis of the whole image. A 1 x 2 rectangle flashed at
    # (5, 0) lands at (-5, 0), still 1 wide and 2 high (mirroring a symmetric pad keeps its size).
    got = read(gbr(f"%MIA1B0*%\n{RECT}X{mm(5)}Y0D03*\n"), "%MI (image mirror)")
    assert got.bounds_mm == pytest.approx((-5.5, -1.0, -4.5, 1.0))


def test_mirror_image_missing_b_is_no_mirror() -> None:
    # spec 8.1 (MI): A or B omitted is 0. gerbonara 1.6.3 takes a missing B as 1 (mirrors y
    # too); the specification decides: only x is mirrored.
    got = read(gbr(f"%MIA1*%\n{RECT}X{mm(5)}Y{mm(3)}D03*\n"), "%MI (image mirror)")
    assert got.bounds_mm == pytest.approx((-5.5, 2.0, -4.5, 4.0))


@pytest.mark.parametrize("cmd, construct", [("%IR90*%", "%IR (image rotation)"), ("%ROA90*%", "%RO (rotation)")])
def test_image_rotation_turns_the_whole_image(cmd: str, construct: str) -> None:
    # spec 8.1 (IR): the image turns counter-clockwise about the origin, pads included: the 1 x 2
    # rectangle at (5, 0) becomes a 2 x 1 one at (0, 5). RO read as IR (gerbv's reading, from memory).
    got = read(gbr(f"{cmd}\n{RECT}X{mm(5)}Y0D03*\n"), construct)
    assert got.bounds_mm == pytest.approx((-1.0, 4.5, 1.0, 5.5))


def test_scale_factor_scales_the_whole_image() -> None:
    # spec 8.1 (SF): scale of the image about the origin. Two readings exist: gerbonara 1.6.3
    # scales coordinates only (pad at x 10, still 1 wide); we scale the whole image as a film
    # plotter's scale does, so the 1 mm circle becomes 2 x 1 (an ellipse of area pi/2).
    got = read(gbr(f"%SFA2B1*%\n%ADD10C,1*%\nD10*\nX{mm(5)}Y0D03*\n"), "%SF (image scale)")
    assert got.bounds_mm == pytest.approx((9.0, -0.5, 11.0, 0.5), abs=1e-6)
    assert got.dark.area == pytest.approx(math.pi / 2, rel=CIRCLE_REL)


def test_offset_moves_the_image_in_the_file_unit() -> None:
    # spec 8.1 (OF): A/B move the image, in the file's unit (here inch: 0.1 in = 2.54 mm).
    head = "%FSLAX24Y24*%\n%MOIN*%\n"
    got = read(gbr("%OFA0.1B0.2*%\n%ADD10C,0.1*%\nD10*\nX10000Y0D03*\n", head), "%OF (image offset)")
    cx, cy = (got.bounds_mm[0] + got.bounds_mm[2]) / 2, (got.bounds_mm[1] + got.bounds_mm[3]) / 2
    assert (cx, cy) == pytest.approx((25.4 + 2.54, 5.08))


def test_negative_image_is_the_box_minus_the_objects() -> None:
    # spec 8.1 (IP): a negative image exposes the background and clears the objects. The extent of
    # the background is not in the file: ours is the box around the objects (stated in the warning).
    # Circle d=1 at (0,0) and square 1x1 at (5,0): box (-0.5,-0.5)-(5.5,0.5) = 6 mm2, minus pi/4, minus 1.
    got = read(gbr("%IPNEG*%\n%ADD10C,1*%\n%ADD11R,1X1*%\nD10*\nX0Y0D03*\nD11*\nX{0}Y0D03*\n".format(mm(5))),
               "%IPNEG (negative image)")
    assert got.dark.area == pytest.approx(6.0 - math.pi / 4 - 1.0, rel=1e-3)
    assert not got.dark.contains(Point(0, 0)) and got.dark.contains(Point(2.5, 0))


def test_axis_select_swaps_x_and_y() -> None:
    # spec 8.1 (AS): AYBX puts A data on the y axis: (5, 0) -> (0, 5), the 1 x 2 pad becomes 2 x 1.
    got = read(gbr(f"%ASAYBX*%\n{RECT}X{mm(5)}Y0D03*\n"), "%AS (axis select)")
    assert got.bounds_mm == pytest.approx((-1.0, 4.5, 1.0, 5.5))


def test_image_transform_order_mirror_then_rotate() -> None:
    # Two readings of MI with IR: we mirror first, then rotate (the order gerbonara 1.6.3's
    # graphics state applies, and the order the spec lists the image transformations). Point (5,0):
    # mirror x -> (-5,0), rotate 90 ccw -> (0,-5). Rotating first would give (0,5) -> (0,5).
    got = read(gbr(f"%MIA1B0*%\n%IR90*%\n%ADD10C,1*%\nD10*\nX{mm(5)}Y0D03*\n"))
    assert got.bounds_mm == pytest.approx((-0.5, -5.5, 0.5, -4.5))


@pytest.mark.parametrize("cmd, construct", [("%INPANEL_1*%", "%IN (image name)"), ("%LNTOP*%", "%LN (load name)")])
def test_names_are_ignored_with_a_warning(cmd: str, construct: str) -> None:
    # spec 8.1 (IN, LN): names only; the image is the one without them.
    got = read(gbr(f"{cmd}\n%ADD10C,1*%\nD10*\nX0Y0D03*\n"), construct)
    assert got.dark.area == pytest.approx(math.pi / 4, rel=CIRCLE_REL)
    assert got.warnings[0].startswith("old.gbr:3: ")


def test_image_command_after_objects_is_refused() -> None:
    # an image-wide transformation that changes mid-file has no agreed reading: refused either way
    with pytest.raises(InputError) as err:
        read_gerber(gbr(f"%ADD10C,1*%\nD10*\nX0Y0D03*\n%MIA1B0*%\nX{mm(1)}Y0D03*\n"), "m.gbr")
    assert err.value.line == 6


# --------------------------------------------------------------------------- older syntax


def test_several_g_codes_in_one_command_and_words_out_of_order() -> None:
    # spec 8.3.1: mode codes combined in one command (RS-274-D blocks); words I J X Y read by
    # letter. CCW half circle from (0,0) to (2,0) about (1,0): passes (1,-1). With a 0.1 mm pen
    # the image spans y -1.05 .. +0.05.
    data = gbr("%ADD10C,0.1*%\nD10*\nX0Y0D02*\nG75G03I1000000J0X2000000Y0D01*\n")
    got = read(data, "several G codes in one command")
    assert "coordinate words out of order" in got.constructs
    assert got.bounds_mm == pytest.approx((-0.05, -1.05, 2.05, 0.05), abs=2e-3)


def test_duplicate_coordinate_word_is_refused() -> None:
    # "Y50000Y50000D01" (in a published spec example): which Y was meant is unknown: refused
    with pytest.raises(InputError) as err:
        read_gerber(gbr("%ADD10C,0.1*%\nD10*\nX0Y0D02*\nY50000Y50000D01*\n"), "d.gbr")
    assert err.value.line == 6 and "Y given twice" in err.value.message


@pytest.mark.parametrize(
    "body, count, area",
    [
        # after D01: D01 repeats (spec 8.3.2): two 1 mm-wide round-capped draws of 10 mm at right
        # angles (an L): 2 x (10 + pi/4) less their overlap at the corner, 0.25 + pi/16 + pi/8
        (f"X0Y0D02*\nX{mm(10)}Y0D01*\nX{mm(10)}Y{mm(10)}*\n", 2, 19.75 + 5 * math.pi / 16),
        # after D03: the flash repeats (RS-274-D modal D codes): two round pads
        (f"X0Y0D03*\nX{mm(5)}Y0*\n", 2, 2 * math.pi / 4),
        # after D02: a move; gerbonara 1.6.3 refuses this unless the file looks like a Mentor export,
        # where it repeats the last code too: nothing is drawn
        (f"X0Y0D02*\nX{mm(5)}Y0*\n", 0, 0.0),
    ],
)
def test_coordinates_without_d_code_repeat_the_last_operation(body: str, count: int, area: float) -> None:
    got = read(gbr("%ADD10C,1*%\nD10*\n" + body), "coordinates without a D code")
    assert got.object_count == count
    assert got.dark.area == pytest.approx(area, rel=CIRCLE_REL, abs=1e-9)


def test_aperture_before_the_unit_takes_the_unit_set_next() -> None:
    # spec 4.2.1: MO is file-wide; an AD before it is read in the unit the file then sets:
    # C 0.01 inch = 0.254 mm wide.
    got = read(b"%FSLAX24Y24*%\n%ADD10C,0.01*%\n%MOIN*%\nD10*\nX0Y0D03*\nM02*\n", "%AD before %MO")
    assert got.bounds_mm == pytest.approx((-0.127, -0.127, 0.127, 0.127))


def test_aperture_without_any_unit_is_refused() -> None:
    with pytest.raises(InputError) as err:
        read_gerber(b"%FSLAX46Y46*%\n%ADD10C,1*%\nM02*\n", "u.gbr")
    assert err.value.line == 2


def test_mid_file_unit_change_applies_from_there_on() -> None:
    # spec 4.2.1 allows one MO; read as gerbv and gerbonara do: later coordinates in the new unit,
    # the aperture keeps its own (0.1 inch = 2.54 mm). Flash at 1 inch = 25.4 mm, then at 10 mm.
    data = b"%FSLAX24Y24*%\n%MOIN*%\n%ADD10C,0.1*%\nD10*\nX10000Y0D03*\n%MOMM*%\nX100000Y0D03*\nM02*\n"
    got = read(data, "mid-file %MO change")
    xs = sorted((f.geometry.bounds[0] + f.geometry.bounds[2]) / 2 for f in got.features)
    assert xs == pytest.approx([10.0, 25.4])
    assert all(f.geometry.bounds[2] - f.geometry.bounds[0] == pytest.approx(2.54, abs=1e-3) for f in got.features)


def test_mid_file_unit_change_keeps_the_current_point() -> None:
    # a draw that starts before the change starts where the pen is: 1 inch = 25.4 mm
    data = b"%FSLAX24Y24*%\n%MOIN*%\n%ADD10C,0.01*%\nD10*\nX10000Y0D02*\n%MOMM*%\nX300000Y0D01*\nM02*\n"
    got = read(data)
    path = got.features[0].path
    assert path.coords[0] == pytest.approx((25.4, 0.0)) and path.coords[-1] == pytest.approx((30.0, 0.0))


def test_arc_with_a_rectangle_sweeps_the_rectangle() -> None:
    # spec 4.7: a draw's image is the aperture swept along its path; 4.7.2 asks for circles on arcs.
    # A 1 x 1 square translated along a quarter circle of radius 10 (from (10,0) to (0,10), CCW):
    # swept area = square + integral of its width across the motion, (|cos t| + |sin t|) * 10 dt
    # over t in [pi/2, pi] = 1 + 10 * 2 = 21 mm2 (Cauchy's formula for a translated convex body).
    data = gbr(f"%ADD10R,1X1*%\nD10*\nG75*\nX{mm(10)}Y0D02*\nG03X0Y{mm(10)}I-{mm(10)}J0D01*\n")
    got = read(data, "arc with a non-circular aperture")
    assert got.dark.area == pytest.approx(21.0, rel=1e-3)
    assert got.bounds_mm == pytest.approx((-0.5, -0.5, 10.5, 10.5), abs=1e-3)


def test_arc_with_a_macro_aperture_is_still_refused() -> None:
    data = gbr("%AMBOX*21,1,1,1,0,0,0*%\n%ADD10BOX*%\nD10*\nG75*\nX0Y0D02*\nG03X2000000Y0I1000000J0D01*\n")
    with pytest.raises(InputError):
        read_gerber(data, "m.gbr")


# --------------------------------------------------------------------------- bytes and line ends


def test_trailing_nul_padding_is_dropped() -> None:
    got = read(gbr("%ADD10C,1*%\nD10*\nX0Y0D03*\n") + b"\x00" * 512, "NUL padding after the last command")
    assert got.object_count == 1


def test_binary_inside_the_command_stream_is_still_refused() -> None:
    with pytest.raises(InputError) as err:
        read_gerber(gbr("%ADD10C,1*%\nD10*\n\x00\x00X0Y0D03*\n"), "b.gbr")
    assert err.value.line == 5


def test_bare_carriage_returns_count_lines() -> None:
    # old Mac line ends: read, and an error names the right line (line 4: an undefined aperture)
    good = gbr("%ADD10C,1*%\nD10*\nX0Y0D03*\n").replace(b"\n", b"\r")
    assert read_gerber(good, "cr.gbr").object_count == 1
    with pytest.raises(InputError) as err:
        read_gerber(gbr("%ADD10C,1*%\nD11*\nX0Y0D03*\n").replace(b"\n", b"\r"), "cr.gbr")
    assert err.value.line == 4


# --------------------------------------------------------------------------- strict


@pytest.mark.parametrize(
    "data",
    [
        gbr(f"%MIA1B0*%\n{RECT}X0Y0D03*\n"),
        gbr(f"%IPNEG*%\n{RECT}X0Y0D03*\n"),
        gbr(f"%SFA2B1*%\n{RECT}X0Y0D03*\n"),
        gbr(f"%ROA90*%\n{RECT}X0Y0D03*\n"),
        gbr(f"%INX*%\n{RECT}X0Y0D03*\n"),
        gbr(f"%LNX*%\n{RECT}X0Y0D03*\n"),
        gbr("%ADD10C,0.1*%\nD10*\nX0Y0D02*\nG75G03I1000000J0X2000000Y0D01*\n"),
        gbr("%ADD10C,1*%\nD10*\nX0Y0D02*\nX1000000Y0*\n"),
        b"%FSLAX24Y24*%\n%ADD10C,0.01*%\n%MOIN*%\nD10*\nX0Y0D03*\nM02*\n",
        gbr("%ADD10C,1*%\n%MOIN*%\nD10*\nX0Y0D03*\n"),
        gbr("%ADD10R,1X1*%\nD10*\nG75*\nX0Y0D02*\nG03X2000000Y0I1000000J0D01*\n"),
        gbr("%ADD10C,1*%\nD10*\nX0Y0D03*\n") + b"\x00\x00",
    ],
)
def test_strict_refuses_every_deprecated_construct(data: bytes) -> None:
    strict_refuses(data)
    assert read_gerber(data, "old.gbr").constructs  # and the default reads it, naming it


# --------------------------------------------------------------------------- Excellon dialects


def drill(body: str, head: str = "M48\nMETRIC,TZ\nT1C0.8\n%\n") -> bytes:
    return (head + body + "M30\n").encode()


def xread(data: bytes, construct: str | None = None, **kw: object) -> object:
    got = read_excellon(data, "old.drl", **kw)  # type: ignore[arg-type]
    if construct is not None:
        assert construct in got.constructs
        assert any(w.startswith("old.drl:") and construct in w for w in got.warnings), got.warnings
    return got


def xy(got: object) -> list[tuple[float, float, float]]:
    return [(round(h.x_mm, 6), round(h.y_mm, 6), round(h.diameter_mm, 6)) for h in got.holes]  # type: ignore[attr-defined]


def test_g93_zero_set_offsets_later_holes() -> None:
    # Excellon G93 zero set: the program zero lies at (10, 5) mm, so X1Y1 is drilled at (11, 6).
    # A reader that ignores G93 would put it at (1, 1); with G93X0Y0 (what most exports write)
    # both readings agree, which the second file checks.
    assert xy(xread(drill("G93X10.0Y5.0\nT1\nX1.0Y1.0\n"), "G93 zero set")) == [(11.0, 6.0, 0.8)]
    assert xy(xread(drill("G93X0Y0\nT1\nX1.0Y1.0\n"), "G93 zero set")) == [(1.0, 1.0, 0.8)]


def test_feed_and_speed_words_are_ignored() -> None:
    # F (feed) and S (spindle speed) set how, not where: the same hole and routed slot as without
    data = drill("T1F200S65\nF1\nX1.0Y1.0\nG00X0Y0\nM15\nG01X5.0Y0F1\nM16\n", head="M48\nMETRIC\nT1C0.8F200S65\n%\n")
    got = xread(data, "feed or speed code")
    assert xy(got) == [(1.0, 1.0, 0.8), (0.0, 0.0, 0.8)]
    assert (got.holes[1].end_x_mm, got.holes[1].end_y_mm) == pytest.approx((5.0, 0.0))


def test_tool_never_sized_is_drawn_at_the_stated_default_and_flagged() -> None:
    got = xread(drill("T1\nX1.0Y1.0\nT2\nX2.0Y2.0\n", head="M48\nMETRIC\n%\n"), "tool never sized")
    assert [h.diameter_mm for h in got.holes] == [DEFAULT_UNKNOWN_TOOL_MM] * 2
    assert not any(h.size_known for h in got.holes)


def test_tool_sized_by_a_holesize_comment() -> None:
    # the "; Holesize 1. = 35.000000 ... MILS" header lines some exports write: 35 mil = 0.889 mm
    head = "M48\n; Holesize 1. = 35.000000 Tolerance = +0.000000/-0.000000 PLATED MILS Quantity = 1\nINCH,LZ\n%\n"
    got = xread(drill("T1\nX010000Y010000\n", head=head), "tool sized in a comment")
    assert xy(got) == [(25.4, 25.4, 0.889)] and got.holes[0].size_known


def test_tool_sized_by_a_companion_tool_table() -> None:
    table = read_tool_table(b"T01 0.0350in\nT2 0.80mm\nT3 20mil\n")
    assert table == pytest.approx({1: 0.889, 2: 0.8, 3: 0.508})
    got = xread(drill("T2\nX1.0Y1.0\n", head="M48\nMETRIC\n%\n"), "tool sized by a companion tool file",
                tool_table_mm=table)
    assert xy(got) == [(1.0, 1.0, 0.8)] and got.holes[0].size_known


def test_companion_tool_file_is_found_beside_the_drill_file(tmp_path: Path) -> None:
    from sensorcheck.board.build import load_board

    (tmp_path / "board.drl").write_bytes(drill("T1\nX1.0Y1.0\n", head="M48\nMETRIC\n%\n"))
    (tmp_path / "board.dri").write_bytes(b"T1 0.60mm\n")
    board = load_board(tmp_path)
    assert [h.diameter_mm for h in board.holes] == [0.6]
    info = next(f for f in board.files if f.path == "board.drl")
    assert any("companion tool file" in w for w in info.warnings)


def test_overlong_coordinates_are_read_by_the_digits_present() -> None:
    # INCH,LZ 2:4 (leading zeros written: the integer part is the first 2 digits): "0123456" is
    # 01.23456 inch = 31.357824 mm, format 2:5 inferred and reported.
    got = xread(drill("T1\nX0123456Y010000\n", head="M48\nINCH,LZ\nT1C0.035\n%\n"), "coordinate longer than the format")
    assert xy(got)[0][:2] == pytest.approx((31.357824, 25.4))
    assert any("format 2:5" in w for w in got.warnings)


def test_slash_lines_in_the_header_are_comments() -> None:
    got = xread(drill("T1\nX1.0Y1.0\n", head="M48\n/ DRILL DATA FROM AN OLD SYSTEM\nMETRIC\nT1C0.8\n%\n"),
                "'/' line in the header")
    assert xy(got) == [(1.0, 1.0, 0.8)]


def test_hole_before_any_tool_uses_the_first_tool() -> None:
    # two readings: the first tool of the table (ours: a machine drills with the tool it holds,
    # the first one loaded), or refusal (what --strict keeps)
    got = xread(drill("X1.0Y1.0\n", head="M48\nMETRIC\nT3C0.5\nT1C0.8\n%\n"), "hole before any tool selection")
    assert xy(got) == [(1.0, 1.0, 0.5)]


@pytest.mark.parametrize(
    "units, body, expected",
    [
        # the drill file read 25.4x too large: M71 (metric) with zeros on one line
        ("M71,TZ", "X1000Y2000", (1.0, 2.0)),
        ("M71", "X1.0Y2.0", (1.0, 2.0)),
        ("M72", "X10000Y20000", (25.4, 50.8)),  # inch, default 2.4, TZ
        ("M72,LZ", "X01Y02", (25.4, 50.8)),  # inch LZ 2.4: "01" is 01.0000
        ("METRIC,LZ,000.000", "X001Y002", (1.0, 2.0)),
        ("INCH,00.0000,TZ", "X10000Y20000", (25.4, 50.8)),
    ],
)
def test_every_unit_form_of_the_header(units: str, body: str, expected: tuple[float, float]) -> None:
    # Excellon: M71 = metric, M72 = inch, like METRIC/INCH, with LZ/TZ and a digit pattern
    got = xread(drill(f"T1\n{body}\n", head=f"M48\n{units}\nT1C0.8\n%\n"))
    assert xy(got)[0][:2] == pytest.approx(expected)
    assert got.units == ("inch" if units.startswith(("M72", "INCH")) else "mm")


def test_conflicting_file_format_comments_warn() -> None:
    # Altium's ;FILE_FORMAT=2:5 then another 3:3: the later one applies from its line (LZ: "001000"
    # at 3:3 is 1.000 mm), with a warning naming both
    head = "M48\n;FILE_FORMAT=2:5\n;FILE_FORMAT=3:3\nMETRIC,LZ\nT1C0.8\n%\n"
    got = xread(drill("T1\nX001000Y002\n", head=head), "conflicting number formats")
    assert xy(got)[0][:2] == pytest.approx((1.0, 2.0))
    assert any("FILE_FORMAT=3:3 after ;FILE_FORMAT=2:5" in w for w in got.warnings)


def test_bare_carriage_returns_in_a_drill_file() -> None:
    got = xread(drill("T1\nX1.0Y1.0\n").replace(b"\n", b"\r"))
    assert xy(got) == [(1.0, 1.0, 0.8)]


@pytest.mark.parametrize(
    "data",
    [
        drill("G93X0Y0\nT1\nX1.0Y1.0\n"),
        drill("T1\nF1\nX1.0Y1.0\n"),
        drill("T2\nX1.0Y1.0\n"),
        drill("X1.0Y1.0\n"),
        drill("T1\nX0123456Y0\n", head="M48\nINCH,LZ\nT1C0.035\n%\n"),
        drill("T1\nX1.0Y1.0\n", head="M48\n/ C\nMETRIC\nT1C0.8\n%\n"),
        drill("T1\nX1.0Y1.0\n", head="M48\n;FILE_FORMAT=2:5\n;FILE_FORMAT=3:3\nMETRIC\nT1C0.8\n%\n"),
    ],
)
def test_strict_refuses_every_drill_dialect(data: bytes) -> None:
    with pytest.raises(InputError) as err:
        read_excellon(data, "old.drl", strict=True)
    assert "refused by --strict" in err.value.message and err.value.line is not None
    assert read_excellon(data, "old.drl").constructs


# --------------------------------------------------------------------------- layers and reports


def test_layers_shows_the_warnings_and_strict_refuses(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    import json

    from sensorcheck.cli import main

    (tmp_path / "old-F_Cu.gtl").write_bytes(gbr(f"%MIA1B0*%\n{RECT}X{mm(5)}Y0D03*\n"))
    (tmp_path / "old.drl").write_bytes(drill("G93X0Y0\nT1\nX1.0Y1.0\n"))
    (tmp_path / "old-job.gbrjob").write_bytes(b"%TF.GenerationSoftware,X,Y,1*%\n%TJ.B_Thickness,1.6*%\nM02*\n")
    assert main(["layers", str(tmp_path)]) == 0
    out = capsys.readouterr().out
    assert "warning old-F_Cu.gtl:3: %MI (image mirror)" in out
    assert "warning old.drl:5: G93 zero set" in out
    assert "old-job.gbrjob: Gerber job file in the early Gerber syntax" in out  # not understood, no error
    assert main(["layers", str(tmp_path), "--format", "json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    by = {f["path"]: f for f in doc["files"]}
    assert by["old-F_Cu.gtl"]["warnings"][0].startswith("old-F_Cu.gtl:3: %MI (image mirror)")
    assert by["old-job.gbrjob"]["understood"] is False and by["old-job.gbrjob"]["error"] is None
    assert main(["layers", str(tmp_path), "--strict"]) == 2
    err = capsys.readouterr().err
    assert "old-F_Cu.gtl:3:" in err and "old.drl:5:" in err


def test_report_file_list_carries_the_warnings(tmp_path: Path) -> None:
    from sensorcheck.check import CheckOptions, check_board

    (tmp_path / "old-F_Cu.gtl").write_bytes(gbr(f"%LNTOP*%\n{RECT}X{mm(5)}Y0D03*\n"))
    result = check_board(tmp_path, CheckOptions(estimate=False))
    entry = next(f for f in result.files if f["path"] == "old-F_Cu.gtl")
    assert entry["warnings"] and entry["warnings"][0].startswith("old-F_Cu.gtl:3: %LN (load name)")
    strict = check_board(tmp_path, CheckOptions(estimate=False, strict=True))
    assert any(f.rule_id == "input.unreadable" and "refused by --strict" in f.message for f in strict.findings)


def test_several_parameters_in_one_block() -> None:
    # RS-274X parameter blocks may hold several parameters ("%FSLAX24Y24*MOIN*%"): each is read
    got = read_gerber(b"%FSLAX24Y24*MOIN*%\n%SFA1B1*ASAXBY*%\n%ADD10C,0.01*%\nD10*\nX0Y0D03*\nM02*\n", "p.gbr")
    assert got.units == "inch" and got.bounds_mm == pytest.approx((-0.127, -0.127, 0.127, 0.127))


def test_drill_file_nul_padding_and_tool_with_hole_on_one_line() -> None:
    got = xread(drill("T1X1.0Y1.0\n") + b"\x00" * 64, "NUL padding after the last command")
    assert xy(got) == [(1.0, 1.0, 0.8)] and "tool selection and hole on one line" in got.constructs


def test_decimal_point_coordinates_are_refused_naming_the_construct() -> None:
    # spec 4.2.2: coordinates are integers in the FS format; "X1.5" has no agreed reading
    with pytest.raises(InputError) as err:
        read_gerber(gbr("%ADD10C,1*%\nD10*\nX1.5Y2.0D03*\n"), "p.gbr")
    assert err.value.line == 5 and "decimal point" in err.value.message


def test_sequence_numbers_and_spaces_in_commands() -> None:
    # RS-274-D sequence numbers (N10) number blocks; spaces inside a command mean nothing: the
    # same two round pads as without them (pi/4 each)
    got = read_gerber(gbr("%ADD10C,1*%\nD10*\nN10X0Y0D03*\nX5000000 Y0 D03*\n"), "n.gbr")
    assert {"N sequence number", "spaces inside a command"} <= set(got.constructs)
    assert got.object_count == 2 and got.dark.area == pytest.approx(2 * math.pi / 4, rel=CIRCLE_REL)


def test_excellon_ici_on_makes_coordinates_incremental() -> None:
    # Excellon header ICI,ON: coordinates are increments from the previous hole: (1,1) then (3,1)
    got = xread(drill("T1\nX1.0Y1.0\nX2.0\n", head="M48\nMETRIC\nICI,ON\nT1C0.8\n%\n"))
    assert xy(got) == [(1.0, 1.0, 0.8), (3.0, 1.0, 0.8)]


def test_number_format_from_a_parameter_file_beside_a_headerless_drill_file(tmp_path: Path) -> None:
    # a headerless drill file (tools sized in "; Holesize" comments) and an nc_param.txt saying
    # FORMAT 2.5, inch, leading zeros suppressed (keys as Allegro-family exports write them, from
    # memory): "X100000" is 1.00000 inch = 25.4 mm. Without the parameter file the default 2.4
    # would read it as 10 inch: the reason the file is looked for.
    from sensorcheck.board.build import load_board
    from sensorcheck.fab.excellon import read_drill_parameters

    (tmp_path / "board-1-2.drl").write_bytes(
        b"; Holesize 1. = 35.000000 Tolerance = +0.000000/-0.000000 PLATED MILS Quantity = 1\n%\nG90\nT1\nX100000Y50000\nM30\n")
    (tmp_path / "nc_param.txt").write_bytes(
        b"FORMAT                  2.5\nOUTPUT-UNITS            ENGLISH\nSUPPRESS-LEAD-ZEROES    YES\n")
    fmt = read_drill_parameters((tmp_path / "nc_param.txt").read_bytes(), "nc_param.txt")
    assert fmt is not None and (fmt.inch, fmt.int_digits, fmt.dec_digits, fmt.zeros) == (True, 2, 5, "TZ")
    board = load_board(tmp_path)
    assert [(round(h.x_mm, 4), round(h.y_mm, 4), round(h.diameter_mm, 4)) for h in board.holes] == [(25.4, 12.7, 0.889)]
    info = next(f for f in board.files if f.path == "board-1-2.drl")
    assert any("number format from a parameter file" in w for w in info.warnings)
