"""Excellon reader against peer fixtures, real generators' files and bad input.

External references:
* tracespace fixtures gerbers/drill/*.drl with the SVG their authors expect (MIT,
  github.com/tracespace/tracespace packages/fixtures @ ef2a3f0): SVG user units are mils.
* Real drill files in ../shared/corpus and their generators' own reports: b07's Altium
  ``.DRR`` report states tool sizes, hole counts and plating; KiCad writes X2 plating comments.
* The Excellon format (number formats LZ/TZ, G85 slots, G00/M15/G01/M16 routing) as described in
  the Excellon Format manual (Excellon Automation), from memory.
"""

from __future__ import annotations

import math
import re
from pathlib import Path

import pytest
from shapely.geometry import LineString, Point
from shapely.ops import unary_union

from sensorcheck.errors import InputError
from sensorcheck.fab.excellon import read_excellon

MIL_MM = 0.0254


def _hole_shapes(holes) -> object:  # noqa: ANN001
    shapes = []
    for h in holes:
        if h.end_x_mm is None:
            shapes.append(Point(h.x_mm, h.y_mm).buffer(h.diameter_mm / 2, quad_segs=256))
        else:
            shapes.append(LineString([(h.x_mm, h.y_mm), (h.end_x_mm, h.end_y_mm)]).buffer(h.diameter_mm / 2, quad_segs=256))
    return unary_union(shapes)


def _fixture(shared: Path, name: str) -> bytes:
    return (shared / "gerber-suites/tracespace-fixtures/gerbers/drill" / name).read_bytes()


def test_hit_matches_tracespace_svg(shared_dir: Path) -> None:
    # hit.svg: <circle cx="0" cy="0" r="250"/> (mils)
    svg = _fixture(shared_dir, "hit.svg").decode()
    r_mil = float(re.search(r'r="([\d.]+)"', svg).group(1))
    holes = read_excellon(_fixture(shared_dir, "hit.drl"), "hit.drl").holes
    assert len(holes) == 1
    assert holes[0].diameter_mm == pytest.approx(2 * r_mil * MIL_MM, rel=1e-9)
    assert (holes[0].x_mm, holes[0].y_mm) == (0.0, 0.0)


def test_g85_slot_matches_tracespace_svg(shared_dir: Path) -> None:
    # slot.svg: <rect x="-250" y="-250" rx="250" width="1000" height="500"/>: a stadium
    rect = re.search(r"<rect[^>]*>", _fixture(shared_dir, "slot.svg").decode()).group(0)
    w, h, rx = (float(re.search(rf' {k}="([\d.]+)"', rect).group(1)) for k in ("width", "height", "rx"))
    expected_area = ((w - 2 * rx) * h + math.pi * rx**2) * MIL_MM**2
    shape = _hole_shapes(read_excellon(_fixture(shared_dir, "slot.drl"), "slot.drl").holes)
    assert shape.area == pytest.approx(expected_area, rel=1e-4)
    minx, miny, maxx, maxy = shape.bounds
    assert (maxx - minx, maxy - miny) == pytest.approx((w * MIL_MM, h * MIL_MM), abs=1e-6)


def test_linear_route_matches_tracespace_svg(shared_dir: Path) -> None:
    # linear-route.svg: stroke-width 250, path "M125 375 375 125 625 375" in a 0..500 y-down view
    svg = _fixture(shared_dir, "linear-route.svg").decode()
    width = float(re.search(r'stroke-width="(\d+)" fill', svg).group(1))
    nums = [float(v) for v in re.search(r'd="M([\d\s]+)"', svg).group(1).split()]
    pts = [((x - 125) * MIL_MM, (375 - y) * MIL_MM) for x, y in zip(nums[::2], nums[1::2])]
    expected = LineString(pts).buffer(width / 2 * MIL_MM, quad_segs=256)
    got = _hole_shapes(read_excellon(_fixture(shared_dir, "linear-route.drl"), "r.drl").holes)
    assert got.symmetric_difference(expected).area < 1e-4 * expected.area


def _svg_arc_centre(p0, p1, r, large, sweep):  # noqa: ANN001, ANN202
    # SVG 1.1 implementation notes F.6.5 (endpoint to centre parameterisation), rotation 0
    x1p, y1p = (p0[0] - p1[0]) / 2, (p0[1] - p1[1]) / 2
    k = math.sqrt(max(0.0, (r * r * r * r - r * r * y1p * y1p - r * r * x1p * x1p) / (r * r * y1p * y1p + r * r * x1p * x1p)))
    if large == sweep:
        k = -k
    cxp, cyp = k * y1p, -k * x1p
    return cxp + (p0[0] + p1[0]) / 2, cyp + (p0[1] + p1[1]) / 2


def test_arc_route_lies_on_the_tracespace_svg_arcs(shared_dir: Path) -> None:
    svg = _fixture(shared_dir, "arc-route.svg").decode()
    d = re.search(r'd="([^"]+)"', svg).group(1)
    tokens = re.findall(r"[MA]|-?[\d.]+", d)
    arcs = []  # (start, end, centre) in the SVG's y-down mils
    i, cur = 0, None
    while i < len(tokens):
        if tokens[i] == "M":
            cur = (float(tokens[i + 1]), float(tokens[i + 2]))
            i += 3
        else:
            r, _rx, _rot, large, sweep, x, y = (float(t) for t in tokens[i + 1 : i + 8])
            end = (x, y)
            arcs.append((cur, end, _svg_arc_centre(cur, end, r, int(large), int(sweep)), r))
            cur = end
            i += 8
    holes = read_excellon(_fixture(shared_dir, "arc-route.drl"), "a.drl").holes
    # file origin (0,0) is SVG (125, 625); SVG y grows downwards
    to_svg = lambda x_mm, y_mm: (x_mm / MIL_MM + 125, 625 - y_mm / MIL_MM)  # noqa: E731
    assert len(arcs) == 4
    for h in holes:
        a = to_svg(h.x_mm, h.y_mm)
        b = to_svg(h.end_x_mm, h.end_y_mm)
        on_arc = [
            arc for arc in arcs
            if abs(math.dist(a, arc[2]) - arc[3]) < 0.05 and abs(math.dist(b, arc[2]) - arc[3]) < 0.05
        ]
        assert on_arc, (a, b)  # every routed piece lies on one of the expected arcs (0.05 mil)
    ends = {(round(x), round(y)) for h in holes for x, y in [to_svg(h.end_x_mm, h.end_y_mm)]}
    assert {(round(arc[1][0]), round(arc[1][1])) for arc in arcs} <= ends


def test_altium_leading_zero_format_and_type_comments_match_its_drill_report(shared_dir: Path) -> None:
    fab = shared_dir / "corpus/b07-slider-inch/fab"
    read = read_excellon((fab / "TouchSlider_ESP32_CAP1208.TXT").read_bytes(), "b07.TXT")
    # The generator's own report (.DRR) lists: T1 14mil x47 PTH, T2 24mil x2 PTH, T3 35mil x28 PTH,
    # T4 98mil x2 PTH, T5 87mil x2 NPTH; total 81
    report = (fab / "TouchSlider_ESP32_CAP1208.DRR").read_text(errors="replace")
    rows = re.findall(r"^T(\d+)\s+(\d+)mil.*?Round\s+(\d+)\s+(N?PTH)", report, re.M)
    assert len(rows) == 5
    for tool, mil, count, plating in rows:
        holes = [h for h in read.holes if abs(h.diameter_mm - read.tools_mm[int(tool)]) < 1e-12]
        assert len(holes) == int(count)
        assert read.tools_mm[int(tool)] == pytest.approx(int(mil) * MIL_MM, abs=0.5 * MIL_MM)  # report rounds to 1 mil
        assert all(h.plated is (plating == "PTH") for h in holes)
    assert read.units == "inch"
    # LZ with FILE_FORMAT=2:5: "X00825" is 0.825 inch; the board outline (GM3) spans +-1.0 x +-0.45 inch
    assert max(abs(h.x_mm) for h in read.holes) <= 25.4
    assert max(abs(h.y_mm) for h in read.holes) <= 0.45 * 25.4


def test_kicad_x2_plating_and_hole_functions(shared_dir: Path) -> None:
    fab = shared_dir / "corpus/b01-slider-proto/fab"
    read = read_excellon((fab / "slider_rev_1_0-PTH.drl").read_bytes(), "PTH.drl")
    assert read.plated is True and read.units == "mm"
    assert {h.function for h in read.holes} == {"via", "component"}
    vias = [h for h in read.holes if h.function == "via"]
    assert {h.diameter_mm for h in vias} == {0.4}  # "; #@! TA.AperFunction,Plated,PTH,ViaDrill" / T2C0.400
    assert read.generator == "Kicad Pcbnew 8.0.2-1"


def test_kicad_routed_slots_and_g85_slots(shared_dir: Path) -> None:
    routed = read_excellon((shared_dir / "corpus/b08-usb-key/fab/fido2-lpc55-PTH.drl").read_bytes(), "b08.drl")
    slots = [h for h in routed.holes if h.end_x_mm is not None]
    # the file: G00X5.374Y-3.665 / M15 / G01X5.433Y-3.665 / M16 (inch)
    assert (slots[0].x_mm, slots[0].end_x_mm, slots[0].y_mm) == pytest.approx((5.374 * 25.4, 5.433 * 25.4, -3.665 * 25.4))
    g85 = read_excellon((shared_dir / "corpus/b04-keys-4layer/fab/unmechanical-sweep-PTH.drl").read_bytes(), "b04.drl")
    s = [h for h in g85.holes if h.end_x_mm is not None]
    assert len(s) == 8 and (s[0].x_mm, s[0].end_x_mm) == pytest.approx((-99.319, -100.246))


def test_plating_from_file_name_hint_only_when_the_file_is_silent() -> None:
    body = b"M48\nMETRIC,TZ\nT1C0.8\n%\nT1\nX1.0Y1.0\nM30\n"
    assert read_excellon(body, "x-NPTH.drl", plated_hint=False).holes[0].plated is False
    assert read_excellon(body, "x.drl").holes[0].plated is None
    x2 = b"M48\n; #@! TF.FileFunction,Plated,1,2,PTH\n" + body[4:]
    assert read_excellon(x2, "x-NPTH.drl", plated_hint=False).holes[0].plated is True


def test_number_formats() -> None:
    # METRIC with a digit pattern 000.000 and TZ: "X1500" is 1.500 mm; LZ: "X015" is 015.000 -> 15.0 mm
    tz = read_excellon(b"M48\nMETRIC,TZ,000.000\nT1C1.0\n%\nT1\nX1500Y-250\nM30\n", "t.drl").holes[0]
    assert (tz.x_mm, tz.y_mm) == pytest.approx((1.5, -0.25))
    lz = read_excellon(b"M48\nMETRIC,LZ,000.000\nT1C1.0\n%\nT1\nX015Y-0025\nM30\n", "l.drl").holes[0]
    assert (lz.x_mm, lz.y_mm) == pytest.approx((15.0, -2.5))
    inch = read_excellon(b"M48\nINCH,TZ\nT1C0.04\n%\nT1\nX10000Y5000\nM30\n", "i.drl").holes[0]
    assert (inch.x_mm, inch.y_mm, inch.diameter_mm) == pytest.approx((25.4, 12.7, 1.016))
    rep = read_excellon(b"M48\nMETRIC\nT1C1.0\n%\nT1\nX1.0Y1.0\nR3X2.0\nM30\n", "r.drl").holes
    assert [h.x_mm for h in rep] == pytest.approx([1.0, 3.0, 5.0, 7.0])


@pytest.mark.parametrize(
    "data, line, expected",
    [
        (b"", None, "Excellon program"),
        (b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR", 1, "Excellon text"),  # \x89 on line 1
        (b"M48\nMETRIC\nT1C0.8\n%\nT1\nX1.0Y1.0\nX2.0Y", 7, "M30"),  # truncated: no M30
        (b"M48\nMETRIC\nT1C0.8\n%\nT1\nhello world\nM30\n", 6, "an Excellon command"),
        (b"M48\nMETRIC\nT1C0.8\n%\nT1\nX1.0Y1.0\nM30\nX2.0Y2.0\n", 8, "nothing after M30"),
        (b"just some text\nthat is not a drill file\n", 1, None),
    ],
)
def test_bad_drill_files_name_file_line_and_expectation(data: bytes, line: int | None, expected: str | None) -> None:
    with pytest.raises(InputError) as exc:
        read_excellon(data, "bad.drl")
    err = exc.value
    assert err.file == "bad.drl"
    if line is not None:
        assert err.line == line
    if expected is not None:
        assert expected in (err.expected or "")
    assert err.expected


@pytest.mark.parametrize(
    "data, line, expected",
    [
        (b"M48\nMETRIC\nT1C0.8\n%\nT2\nX1.0Y1.0\nM30\n", 5, "T2C"),  # undefined tool
        (b"M48\nMETRIC\nT1C0.8\n%\nX1.0Y1.0\nM30\n", 5, "tool selection"),  # hole before a tool
    ],
)
def test_dialects_refused_when_strict(data: bytes, line: int, expected: str) -> None:
    # read with a warning by default (tests/fab/test_dialects.py); --strict refuses them as before
    with pytest.raises(InputError) as exc:
        read_excellon(data, "bad.drl", strict=True)
    assert exc.value.line == line and expected in (exc.value.expected or "")
    assert "refused by --strict" in exc.value.message


# --- robustness: mutated real files either read or raise our InputError (issue 6, item 1) ----------
from hypothesis import HealthCheck, given, settings  # noqa: E402

from board.fuzz import MUTATIONS, apply  # noqa: E402  (tests/board/fuzz.py)


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(ops=MUTATIONS)
def test_mutated_drill_files_read_or_raise_input_error(shared_dir: Path, ops: list) -> None:
    src = (shared_dir / "corpus/b07-slider-inch/fab/TouchSlider_ESP32_CAP1208.TXT").read_bytes()
    try:
        read_excellon(apply(src, ops), "m.drl")
    except InputError as exc:
        assert exc.file == "m.drl" and exc.expected


@pytest.mark.parametrize(
    "drill, copper",
    [
        # pcb-tools-resources (Apache-2.0): "M72" only, implied 2.4 format with leading zeros omitted
        ("pcb-tools-resources/ncdrill.DRD", "pcb-tools-resources/top_copper.GTL"),
        # tracespace fixtures boards (MIT): three more generators' drill files with their copper
        ("tracespace-fixtures/boards/8bit-mixtape/mixtape.txt", "tracespace-fixtures/boards/8bit-mixtape/mixtape.gtl"),
        ("tracespace-fixtures/boards/core/core.TXT", "tracespace-fixtures/boards/core/core.GTL"),
        ("tracespace-fixtures/boards/usbvil/pic18f14k50.txt", "tracespace-fixtures/boards/usbvil/pic18f14k50.gtl"),
    ],
)
def test_holes_land_on_the_pads_of_the_same_board(shared_dir: Path, drill: str, copper: str) -> None:
    # the board's own copper (read by the Gerber reader) is the reference for our number formats:
    # a misread format (LZ for TZ, inch for mm, wrong digits) puts the holes off the pads.
    # Holes of 3 mm and more are mounting holes that may have no copper; of the rest at least 95 %
    # must sit on top-layer copper (a few through-hole pads exist only on the bottom).
    from sensorcheck.fab.gerber import read_gerber

    root = shared_dir / "gerber-suites"
    dark = read_gerber((root / copper).read_bytes(), copper).dark
    holes = [h for h in read_excellon((root / drill).read_bytes(), drill).holes if h.diameter_mm < 3.0]
    on_pads = sum(1 for h in holes if dark.contains(Point(h.x_mm, h.y_mm)))
    assert len(holes) >= 20 and on_pads >= 0.95 * len(holes)
