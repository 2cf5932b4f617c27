"""The examples of the Gerber Layer Format Specification against the image the specification defines.

Source of the files: ../shared/gerber-suites/pcb-tools-resources (pcb-tools' copies of the
specification's examples). Source of every expected value: the specification's semantics
(Ucamco, "The Gerber Layer Format Specification", revisions 2021.02 to 2023.08; section
numbers from memory of those revisions), worked out by hand below: areas from elementary
geometry, not from any reader. Tolerances: area within 0.1 %, bounds within 1 um, hole count exact.

Curves are flattened with vertices on the curve; the small apertures here (radius 0.1 mm) need a
chord tolerance finer than the 1 um default to keep the area error below 0.1 % (the area error
of an inscribed polygon is about 4/3 x sagitta / radius), so these tests read at 0.01 um.
"""

from __future__ import annotations

import math
from pathlib import Path

import pytest
from shapely.geometry.base import BaseGeometry

from sensorcheck.errors import InputError
from sensorcheck.fab.gerber import read_gerber

pytestmark = pytest.mark.corpus  # reads ../shared; skips where absent

TOL_MM = 1e-5
IN = 25.4  # mm per inch
IN2 = IN * IN


@pytest.fixture(scope="module")
def spec_dir(shared_dir: Path) -> Path:
    path = shared_dir / "gerber-suites" / "pcb-tools-resources"
    if not path.is_dir():
        pytest.skip("pcb-tools-resources suite absent")
    return path


def _read(spec_dir: Path, name: str, patch: tuple[str, str] | None = None) -> BaseGeometry:
    data = (spec_dir / name).read_bytes()
    if patch is not None:
        data = data.replace(patch[0].encode(), patch[1].encode())
    got = read_gerber(data, name, arc_tolerance_mm=TOL_MM)
    assert got.dark is not None
    return got.dark


def _holes(geom: BaseGeometry) -> int:
    parts = getattr(geom, "geoms", [geom])
    return sum(len(p.interiors) for p in parts)


def _check(geom: BaseGeometry, area_mm2: float, holes: int, bounds_mm: tuple[float, float, float, float]) -> None:
    assert geom.area == pytest.approx(area_mm2, rel=1e-3)
    assert _holes(geom) == holes
    for got, want in zip(geom.bounds, bounds_mm):
        assert got == pytest.approx(want, abs=1e-3)


def _strip_disc(radius: float, half_width: float) -> float:
    """Area of a disc of ``radius`` inside a strip |v| <= half_width through its centre."""
    h = min(half_width, radius)
    return 2 * (h * math.sqrt(radius * radius - h * h) + radius * radius * math.asin(h / radius))


def _stadium(length: float, width: float) -> float:
    return length * width + math.pi * (width / 2) ** 2


def test_two_square_boxes(spec_dir: Path) -> None:
    # spec example "two square boxes": two closed 5 mm square paths drawn with a 0.01 mm circle.
    # Stroked closed square: (s+w)^2 - (s-w)^2 minus the four rounded outer corners (4 - pi) (w/2)^2.
    s, w = 5.0, 0.01
    one = (s + w) ** 2 - (s - w) ** 2 - (4 - math.pi) * (w / 2) ** 2
    _check(_read(spec_dir, "example_two_square_boxes.gbr"), 2 * one, 2, (-w / 2, -w / 2, 11 + w / 2, 5 + w / 2))


def test_simple_contour(spec_dir: Path) -> None:
    # spec example "simple contour" (inch): a 5 x 4 in rectangle plus a triangle of base 8 in, height 4 in.
    _check(_read(spec_dir, "example_simple_contour.gbr"), (20 + 16) * IN2, 0, (2 * IN, 1 * IN, 11 * IN, 9 * IN))


def test_single_quadrant_arcs(spec_dir: Path) -> None:
    # spec example "single quadrant" (G74, inch): four quarter arcs make a circle r = 0.4 in about
    # (0.7, 0.6), drawn 0.01 in wide, plus a horizontal and a vertical 0.8 in diameter line.
    r, w = 0.4, 0.01
    h = w / 2
    ring = math.pi * ((r + h) ** 2 - (r - h) ** 2)
    line = _stadium(2 * r, w)
    # each of the four line ends overlaps the ring: from the ring's inner edge to the cap's tip
    end = r * 2 * h + math.pi * h * h / 2 - (h * math.sqrt((r - h) ** 2 - h * h) + (r - h) ** 2 * math.asin(h / (r - h)))
    area = ring + 2 * line - w * w - 4 * end
    b = (0.7 - r - h, 0.6 - r - h, 0.7 + r + h, 0.6 + r + h)
    _check(_read(spec_dir, "example_single_quadrant.gbr"), area * IN2, 4, tuple(v * IN for v in b))  # type: ignore[arg-type]


def test_cut_in(spec_dir: Path) -> None:
    # spec example "cut-in": a 10 x 8 rectangle whose contour runs in to a full circle r = 3 (G75,
    # start = end) and back out along itself: the circle is a hole. The file predates the rule that
    # MO is mandatory; we add %MOMM*% (the reader refuses a file without a unit: tested below).
    geom = _read(spec_dir, "example_cutin.gbr", ("%FSLAX24Y24*%", "%FSLAX24Y24*%\n%MOMM*%"))
    _check(geom, 80 - 9 * math.pi, 1, (2, 2, 12, 10))


def test_cut_in_without_unit_is_refused(spec_dir: Path) -> None:
    # Gerber spec section 4.2.1 (MO): the unit is mandatory before any object.
    with pytest.raises(InputError) as err:
        _read(spec_dir, "example_cutin.gbr")
    assert err.value.line == 7
    assert "MO" in (err.value.expected or "")


def test_multiple_cut_ins(spec_dir: Path) -> None:
    # 9 x 15 mm rectangle, two cut-in holes 4 x 4 and 4 x 3 mm; the run between them is coincident
    # both ways (zero width), so it adds nothing.
    _check(_read(spec_dir, "example_cutin_multiple.gbr"), 135 - 16 - 12, 2, (122, 257, 131, 272))


def test_fully_coincident_contour(spec_dir: Path) -> None:
    # square 10 x 10 mm and, reached by a segment run out and back, a diamond with 8 mm diagonals
    # outside it: two areas, no hole.
    _check(_read(spec_dir, "example_fully_coincident.gbr"), 100 + 32, 0, (-9, 0, 10, 10))


def test_coincident_hole(spec_dir: Path) -> None:
    # the same diamond inside the square, reached by a cut-in: a hole (spec section 4.10.3 cut-ins).
    _check(_read(spec_dir, "example_coincident_hole.gbr"), 100 - 32, 1, (0, 0, 10, 10))


@pytest.mark.parametrize(
    ("name", "area", "bounds"),
    [
        # Spec section 4.10.1: every contour of a region statement (a D02 starts the next) is a
        # separate region object; two dark objects overlap into their union, so a contour inside
        # another makes no hole (holes need cut-ins or clear polarity).
        ("example_not_overlapping_contour.gbr", 100 + 32, (-9, 0, 10, 10)),
        ("example_not_overlapping_touching.gbr", 100 + 9 * 8 / 2, (-9, 0, 10, 10)),
        ("example_overlapping_contour.gbr", 100, (0, 0, 10, 10)),
        ("example_overlapping_touching.gbr", 100, (0, 0, 10, 10)),
    ],
)
def test_contours(spec_dir: Path, name: str, area: float, bounds: tuple[float, float, float, float]) -> None:
    _check(_read(spec_dir, name), area, 0, bounds)


@pytest.mark.parametrize("name", ["example_single_contour_1.gbr", "example_single_contour_2.gbr",
                                  "example_single_contour_3.gbr"])
def test_malformed_single_contour_examples_are_refused(spec_dir: Path, name: str) -> None:
    # These copies carry "Y50000Y50000D01" (a coordinate word twice), which the grammar of spec
    # section 4.7 does not allow: the reader must refuse and name the line, not guess.
    with pytest.raises(InputError) as err:
        _read(spec_dir, name)
    assert err.value.line == 13


def test_level_holes(spec_dir: Path) -> None:
    # spec example "levels": dark 15 mm square, clear circle r 5, dark 5 mm square, clear circle r 2.5
    # about (14, 10), applied in file order (spec section 4.9.2).
    R, r, d = 5.0, 2.5, 4.0
    lens = (
        r * r * math.acos((d * d + r * r - R * R) / (2 * d * r))
        + R * R * math.acos((d * d + R * R - r * r) / (2 * d * R))
        - 0.5 * math.sqrt((-d + r + R) * (d + r - R) * (d - r + R) * (d + r + R))
    )
    small_circle_outside_big = math.pi * r * r - lens
    dist = 1.5  # small circle centre to the small square's right edge
    segment = r * r * math.acos(dist / r) - dist * math.sqrt(r * r - dist * dist)
    area = 225 - math.pi * R * R + 25 - segment - small_circle_outside_big
    geom = _read(spec_dir, "example_level_holes.gbr")
    _check(geom, area, 1, (2.5, 2.5, 17.5, 17.5))
    assert len(getattr(geom, "geoms", [geom])) == 2  # the frame and the island inside its hole


def test_holes_do_not_clear(spec_dir: Path) -> None:
    # spec example: a flash of a circle with a hole over a line; the hole cuts only its own flash,
    # so the line stays dark inside it (spec section 4.4.1). Inch. Line (-1,-0.25) to (1,0.25),
    # 0.1 in wide; flash diameter 1 in, hole 0.5 in: the line splits the hole in two.
    L, w = math.hypot(2, 0.5), 0.1
    annulus = math.pi * (0.5**2 - 0.25**2)
    overlap = _strip_disc(0.5, w / 2) - _strip_disc(0.25, w / 2)
    area = _stadium(L, w) + annulus - overlap
    geom = _read(spec_dir, "example_holes_dont_clear.gbr")
    _check(geom, area * IN2, 2, (-1.05 * IN, -0.5 * IN, 1.05 * IN, 0.5 * IN))


def test_exposure_modifier(spec_dir: Path) -> None:
    # spec example "exposure modifier": a macro square 1 x 1 in with an exposure-off circle (hole)
    # flashed over a 1 in wide line; the hole cuts only the flash, so the line fills it (section
    # 4.5.1). The file writes the square's exposure as 0.1: not 0, so on. Union = the stadium plus
    # the two square corners outside the strip (right triangles, worked out below).
    L, w = math.hypot(2, 0.5), 1.0
    th = math.atan2(0.5, 2)
    s, c = math.sin(th), math.cos(th)
    leg_x = 0.5 - (0.5 - 0.5 * c) / s  # top edge: -x s + y c = 0.5 at y = 0.5
    leg_y = 0.5 - (0.5 - 0.5 * s) / c  # left edge: x = -0.5
    corners = 2 * 0.5 * leg_x * leg_y
    area = _stadium(L, w) + corners
    geom = _read(spec_dir, "example_am_exposure_modifier.gbr")
    _check(geom, area * IN2, 0, (-1.5 * IN, -0.75 * IN, 1.5 * IN, 0.75 * IN))


def _obround(wd: float, ht: float) -> float:
    r = min(wd, ht) / 2
    return (max(wd, ht) - 2 * r) * 2 * r + math.pi * r * r


@pytest.mark.parametrize(
    ("name", "solid", "bounds"),
    [
        # standard apertures (spec section 4.4): C 0.5; R 0.44 x 0.25; O 0.46 x 0.26;
        # P outer diameter 0.40, 6 vertices (area 3 sqrt(3)/2 r^2, first vertex on +x).
        ("example_flash_circle.gbr", math.pi * 0.25**2, (-0.25, -0.25, 1.25, 0.25)),
        ("example_flash_rectangle.gbr", 0.44 * 0.25, (-0.22, -0.125, 1.22, 0.125)),
        ("example_flash_obround.gbr", _obround(0.46, 0.26), (-0.23, -0.13, 1.23, 0.13)),
        ("example_flash_polygon.gbr", 1.5 * math.sqrt(3) * 0.2**2,
         (-0.2, -0.2 * math.sin(math.pi / 3), 1.2, 0.2 * math.sin(math.pi / 3))),
    ],
)
def test_flashes_with_and_without_hole(
    spec_dir: Path, name: str, solid: float, bounds: tuple[float, float, float, float]
) -> None:
    # D10 solid at x = 0, D11 the same with a round hole at x = 1 mm (0.25 mm for the circle, 0.19 mm else)
    hole_d = 0.25 if "circle" in name else 0.19
    area = 2 * solid - math.pi * (hole_d / 2) ** 2
    _check(_read(spec_dir, name), area, 1, bounds)
