"""Polarity in file order (the backward sweep of gerber_geometry.effective_dark) and the vertex
count made before the geometry is built (gerber_geometry.VertexBudget).

Expected images are worked out by hand from the Gerber specification's polarity rule (Ucamco,
"The Gerber Layer Format Specification", revision 2023.08, section 4.9.2 from memory: objects are
applied in file order, a dark object darkens, a clear one clears what is under it), or built by
applying that rule literally, object by object, with plain shapely union / difference. Vertex
counts are checked against the geometry that is actually built (shapely's coordinate count).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import shapely
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from shapely.geometry import Point, Polygon, box

from sensorcheck.board.model import Feature, SourceRef
from sensorcheck.errors import LimitError
from sensorcheck.fab.gerber import read_gerber
from sensorcheck.fab.gerber_geometry import circle_segments, effective_dark, objects_to_features
from sensorcheck.fab.gerber_parser import decode_gerber, parse_gerber_text
from sensorcheck.limits import Limits

HEAD = "%FSLAX46Y46*%\n%MOMM*%\n"
TOL = 0.001


def mm(v: float) -> str:
    return str(round(v * 1_000_000))


def square_aperture(code: int, side_mm: float) -> str:
    return f"%ADD{code}R,{side_mm}X{side_mm}*%\n"


def dark_area(body: str) -> float:
    return read_gerber((HEAD + body + "M02*\n").encode(), "pol.gbr").dark.area


# --------------------------------------------------------------------------- polarity, by hand


def test_dark_clear_dark_squares() -> None:
    # dark 10 x 10, then clear 6 x 6, then dark 2 x 2, all centred at the origin:
    # 100 - 36 + 4 = 68 mm2 (hand-worked); the centre is dark, a point 2 mm out is clear, 4 mm out dark
    body = (square_aperture(10, 10) + square_aperture(11, 6) + square_aperture(12, 2)
            + "%LPD*%\nD10*\nX0Y0D03*\n%LPC*%\nD11*\nX0Y0D03*\n%LPD*%\nD12*\nX0Y0D03*\n")
    got = read_gerber((HEAD + body + "M02*\n").encode(), "pol.gbr").dark
    assert got.area == pytest.approx(68.0, abs=1e-9)
    assert got.contains(Point(0, 0)) and not got.contains(Point(2, 0)) and got.contains(Point(4, 0))


def test_clear_before_dark_removes_nothing() -> None:
    # a clear object only acts on what came before it: clear 6 x 6 then dark 10 x 10 = 100 mm2
    body = square_aperture(10, 10) + square_aperture(11, 6) + "%LPC*%\nD11*\nX0Y0D03*\n%LPD*%\nD10*\nX0Y0D03*\n"
    assert dark_area(body) == pytest.approx(100.0, abs=1e-9)


def test_nested_squares_alternating() -> None:
    # squares of side 2N, 2N - 2, ..., 2 centred at the origin, largest first, alternating dark,
    # clear, dark ...: a point ends in the state of the smallest square holding it, so the image is
    # the rings of the dark squares. Ring k (side 2(N - k) less side 2(N - k - 1)) has area
    # 4 (2 (N - k) - 1); for N = 6 the dark rings k = 0, 2, 4 give 4 (11 + 7 + 3) = 84 mm2 (by hand).
    n = 6
    body = "".join(square_aperture(10 + k, 2 * (n - k)) for k in range(n))
    body += "".join(("%LPD*%\n" if k % 2 == 0 else "%LPC*%\n") + f"D{10 + k}*\nX0Y0D03*\n" for k in range(n))
    assert dark_area(body) == pytest.approx(84.0, abs=1e-9)


@pytest.mark.parametrize("count, expected", [(300, 0.0), (301, 4.0)])
def test_stacked_alternating_squares(count: int, expected: float) -> None:
    # the same 2 x 2 square flashed `count` times on one spot, dark, clear, dark ...: the last one
    # decides (by hand: an even count ends clear, area 0; an odd count ends dark, area 4)
    body = square_aperture(10, 2) + "D10*\n"
    body += "".join(("%LPD*%\n" if k % 2 == 0 else "%LPC*%\n") + "X0Y0D03*\n" for k in range(count))
    assert dark_area(body) == pytest.approx(expected, abs=1e-9)


def test_overlapping_alternating_squares_in_a_row() -> None:
    # pair k: a dark unit square centred at x = k, then a clear one centred at x = k + 0.5. The clear
    # one of pair k clears [k, k + 1]; the dark of pair k + 1 then covers [k + 0.5, k + 1.5] again.
    # What stays of each dark square is its left half: n pieces of 0.5 x 1 = n / 2 mm2 (by hand).
    # The clear squares touch one another in a chain: the sweep merges them as it goes.
    n = 200
    body = square_aperture(10, 1) + "D10*\n"
    body += "".join(f"%LPD*%\nX{mm(k)}Y0D03*\n%LPC*%\nX{mm(k + 0.5)}Y0D03*\n" for k in range(n))
    got = read_gerber((HEAD + body + "M02*\n").encode(), "row.gbr").dark
    assert got.area == pytest.approx(n / 2, abs=1e-9)
    assert got.contains(Point(-0.25, 0)) and not got.contains(Point(0.25, 0)) and got.contains(Point(0.75, 0))


def test_hatch_of_clear_openings_in_a_dark_pour() -> None:
    # a 20 x 20 dark pour and 100 clear 1 x 1 openings on a 2 mm pitch, none touching: 400 - 100 = 300
    # mm2 (by hand); then a dark 1 x 1 pad over one opening fills it again: 301 mm2
    body = square_aperture(10, 20) + square_aperture(11, 1) + "%LPD*%\nD10*\nX0Y0D03*\n%LPC*%\nD11*\n"
    body += "".join(f"X{mm(-9 + 2 * i)}Y{mm(-9 + 2 * j)}D03*\n" for i in range(10) for j in range(10))
    assert dark_area(body) == pytest.approx(300.0, abs=1e-9)
    assert dark_area(body + "%LPD*%\nX-9000000Y-9000000D03*\n") == pytest.approx(301.0, abs=1e-9)


# --------------------------------------------------------------------------- polarity, literally


def literal_image(objects: list[tuple[bool, shapely.Geometry]]) -> shapely.Geometry:
    """The spec's rule applied literally: one object after the other onto the image."""
    image = shapely.Polygon()
    for dark, geom in objects:
        image = shapely.union(image, geom) if dark else shapely.difference(image, geom)
    return image


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(st.tuples(st.booleans(), st.integers(0, 12), st.integers(0, 12), st.integers(1, 6), st.integers(1, 6)),
                min_size=1, max_size=90))
def test_sweep_matches_the_literal_rule(objs: list[tuple[bool, int, int, int, int]]) -> None:
    # many objects (past the sweep index's tail of 64) on a small grid, so that they stack and touch
    objects = [(dark, box(x, y, x + w, y + h)) for dark, x, y, w, h in objs]
    features = [Feature(geometry=g, polarity="dark" if d else "clear", kind="flash", source=SourceRef("t.gbr", k))
                for k, (d, g) in enumerate(objects)]
    got = shapely.union_all([g for _, g in effective_dark(features)])
    want = literal_image(objects)
    assert got.symmetric_difference(want).area == pytest.approx(0.0, abs=1e-9)
    assert got.area == pytest.approx(want.area, abs=1e-9)


# --------------------------------------------------------------------------- vertex count


def features_of(body: str) -> tuple[list[Feature], int]:
    """(features, the vertices their geometry really has)."""
    text = HEAD + body + "M02*\n"
    feats = objects_to_features(parse_gerber_text(decode_gerber(text.encode(), "v.gbr"), "v.gbr"), "v.gbr", TOL)
    actual = int(shapely.get_num_coordinates(np.array([f.geometry for f in feats], dtype=object)).sum())
    return feats, actual


def estimate_bounds(body: str, actual: int, factor: float) -> None:
    """The count made before building is >= the real count (refused one below it) and within
    ``factor`` of it (accepted at factor x the real count)."""
    text = (HEAD + body + "M02*\n").encode()
    parsed = lambda: parse_gerber_text(decode_gerber(text, "v.gbr"), "v.gbr")  # noqa: E731
    with pytest.raises(LimitError):
        objects_to_features(parsed(), "v.gbr", TOL, limits=Limits(max_vertices=actual - 1))
    objects_to_features(parsed(), "v.gbr", TOL, limits=Limits(max_vertices=math.ceil(factor * actual)))


MACRO = (
    "%AMTHERM*7,0,0,2,1.2,0.2,0*%\n"           # thermal (spec 4.5.1.8)
    "%AMMIX*1,1,2,0,0*1,0,0.8,0,0*5,1,6,2,0,1,0*21,1,1,0.3,-1,0,30*%\n"  # circle, hole, polygon, centre line
    "%AMMOIRE*6,0,0,4,0.2,0.2,3,0.1,5,0*%\n"    # moire (older revisions)
)


@pytest.mark.parametrize("aperture, name", [
    ("%ADD10C,1.5*%\n", "circle"),
    ("%ADD10C,1.5X0.5*%\n", "circle with hole"),
    ("%ADD10O,3X1*%\n", "obround"),
    ("%ADD10P,2X7X15*%\n", "polygon"),
    ("%ADD10R,2X1X0.4*%\n", "rectangle with hole"),
    (MACRO + "%ADD10THERM*%\n", "thermal macro"),
    (MACRO + "%ADD10MIX*%\n", "mixed macro"),
    (MACRO + "%ADD10MOIRE*%\n", "moire macro"),
])
def test_flash_count_is_exact(aperture: str, name: str) -> None:
    # a flash is its aperture's shape moved: the count is that shape's own (factor 1)
    body = aperture + "D10*\n" + "".join(f"X{mm(3 * k)}Y0D03*\n" for k in range(7))
    _, actual = features_of(body)
    assert actual > 0, name
    estimate_bounds(body, actual, 1.0)


DRAWS = "X0Y0D02*\nX5000000Y0D01*\nX5000000Y3000000D01*\nX1000000Y7000000D01*\nX1000000Y7000000D01*\n"


@pytest.mark.parametrize("aperture, factor", [
    ("%ADD10C,0.4*%\n", 1.0),   # a stadium ring: counted exactly (zero-length draw: the circle)
    ("%ADD10R,0.4X1*%\n", 2.0),  # other apertures: at most twice the hull of the shape, plus one
    ("%ADD10O,0.4X1*%\n", 2.0),
    ("%ADD10P,1X5*%\n", 2.0),
])
def test_draw_count_is_within_the_stated_factor(aperture: str, factor: float) -> None:
    body = aperture + "D10*\nG01*\n" + DRAWS
    _, actual = features_of(body)
    estimate_bounds(body, actual, factor)


def test_arc_and_region_counts_are_exact() -> None:
    # an arc is counted from its own buffer, a region from its flattened contour (factor 1)
    body = ("%ADD10C,0.3*%\nD10*\nG75*\nX0Y0D02*\nG03X4000000Y0I2000000J0D01*\n"
            "G36*\nX0Y5000000D02*\nG01X3000000Y5000000D01*\nG03X3000000Y9000000I0J2000000D01*\n"
            "G01X0Y9000000D01*\nX0Y5000000D01*\nG37*\n")
    _, actual = features_of(body)
    estimate_bounds(body, actual, 1.0)


def test_huge_circle_flashed_often_is_refused_before_the_geometry() -> None:
    # a 10 m circle at the 1 um chord tolerance: circle_segments gives n segments, n + 1 coordinates
    # per flash; 100 flashes against max_vertices = 50 (n + 1) are refused at the 51st flash's line
    per_flash = circle_segments(5000.0, TOL) + 1
    text = HEAD + "%ADD10C,10000*%\nD10*\n" + "".join(f"X{k}Y0D03*\n" for k in range(100)) + "M02*\n"
    parsed = parse_gerber_text(decode_gerber(text.encode(), "huge.gbr"), "huge.gbr")
    with pytest.raises(LimitError) as info:
        objects_to_features(parsed, "huge.gbr", TOL, limits=Limits(max_vertices=50 * per_flash))
    err = info.value
    assert err.file == "huge.gbr" and err.line == 4 + 51
    assert f"limits.max_vertices = {50 * per_flash}" in err.message and str(51 * per_flash) in err.message
    assert "[limits]" in (err.expected or "") and "max_vertices" in (err.expected or "")


def test_the_configured_vertex_limit_reaches_the_early_count() -> None:
    """``read_gerber`` hands its limits to the geometry step: a lowered ``max_vertices`` refuses at the
    line of the flash that passes it (the after-the-fact check has no line), before any union."""
    per_flash = circle_segments(5000.0, TOL) + 1
    text = HEAD + "%ADD10C,10000*%\nD10*\n" + "".join(f"X{k}Y0D03*\n" for k in range(100)) + "M02*\n"
    with pytest.raises(LimitError) as info:
        read_gerber(text.encode(), "huge.gbr", arc_tolerance_mm=TOL, limits=Limits(max_vertices=50 * per_flash))
    assert info.value.line == 4 + 51


# --------------------------------------------------------------------------- polarity work budget


def shifted_stack(n: int, shift_mm: float) -> str:
    """n squares of 1 mm, alternating dark (even k) and clear (odd k), square k at x = k * shift.
    Object k's flash is on line 6 + 2 * k of the file (HEAD 2 lines, the aperture and its
    selection 2, then one %LP..*% line and one flash line per object)."""
    return square_aperture(10, 1.0) + "D10*\n" + "".join(
        ("%LPD*%\n" if k % 2 == 0 else "%LPC*%\n") + f"X{mm(k * shift_mm)}Y0D03*\n" for k in range(n))


def test_polarity_work_budget_refuses_a_shifted_stack_at_the_line_of_the_object() -> None:
    # 41 squares of 1 mm, each 1 um further on, dark and clear alternating: every clear square
    # touches every later one, so the sweep's clear piece grows with the file.
    n, shift = 41, 0.001
    text = (HEAD + shifted_stack(n, shift) + "M02*\n").encode()

    def sweep(limit: int) -> None:
        parsed = parse_gerber_text(decode_gerber(text, "stack.gbr"), "stack.gbr")
        limits = Limits(max_polarity_work=limit)
        effective_dark(objects_to_features(parsed, "stack.gbr", TOL, limits=limits), limits=limits)

    # Sweeping from the end of the file: object 40 (dark) has nothing after it, 39 (clear) is a
    # piece, 38 (dark) is the first to meet it (not counted), 36 (dark) meets it again together
    # with 37: that is the first work counted (by hand: 5 + 5 coordinates of two squares at the
    # least), so a budget of 1 is passed at object 36, on line 6 + 2 * 36 = 78.
    with pytest.raises(LimitError) as info:
        sweep(1)
    assert (info.value.file, info.value.line) == ("stack.gbr", 6 + 2 * 36)
    assert "limits.max_polarity_work = 1" in info.value.message
    assert "max_polarity_work in the [limits] table of sensorcheck.toml" in (info.value.expected or "")
    # a larger budget lasts further back through the file (a dark object, an even k, earlier)
    with pytest.raises(LimitError) as later:
        sweep(200)
    k = ((later.value.line or 0) - 6) // 2
    assert (later.value.line or 0) == 6 + 2 * k and k % 2 == 0 and k < 36

    # A generous budget reads it. By hand, from the polarity rule (spec 4.9.2: the last object
    # covering a point decides): for 0 <= x < 40 * shift the last square covering x is
    # k = floor(x / shift), dark when k is even: half of that strip, (n - 1) * shift / 2 = 0.02 mm2;
    # from x = 40 * shift the last square (k = 40, dark) covers 1 mm2: 1.02 mm2 in all.
    got = read_gerber(text, "stack.gbr", limits=Limits(max_polarity_work=1_000_000)).dark
    assert got.area == pytest.approx((n - 1) * shift / 2 + 1.0, abs=1e-6)
    # the rule applied literally, object by object (plain shapely), agrees
    image = Polygon()
    for k in range(n):
        sq = box(k * shift - 0.5, -0.5, k * shift + 0.5, 0.5)
        image = image.union(sq) if k % 2 == 0 else image.difference(sq)
    assert got.symmetric_difference(image).area < 1e-9


def test_polarity_work_budget_reaches_the_sweep_through_read_gerber() -> None:
    # read_gerber hands its limits to images_by_net
    text = (HEAD + shifted_stack(41, 0.001) + "M02*\n").encode()
    with pytest.raises(LimitError) as info:
        read_gerber(text, "stack.gbr", limits=Limits(max_polarity_work=1))
    assert info.value.line == 6 + 2 * 36
