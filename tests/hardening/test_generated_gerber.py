"""Valid generated Gerber programs read back to the image their generator intended (issue 6, item 1).

The generator below writes its own RS-274X text (independently of sensorcheck/fab/writer.py, on
purpose) and computes its own expected image with shapely from the same parameters, without
sensorcheck's conversion code:

* circle flash: ``Point.buffer(d/2)`` minus the hole disk (Gerber spec 2023.08 s. 4.4.2: a hole
  is cut from the flash only, it does not clear what lies below);
* rectangle / obround / polygon flash: ``box`` / a buffered centre segment / the regular polygon's
  vertices (first vertex at the rotation angle, s. 4.4.3-4.4.5), then ``affinity.rotate`` by the
  LR angle about the flash point (s. 4.9.4, counterclockwise);
* round draw: ``LineString.buffer(d/2)`` (s. 4.7.1: the stroke of a circle along the segment);
* rectangular draw: the convex hull of the rectangle at both ends (the Minkowski sum of the
  segment and the rectangle, s. 4.7.1);
* arc (G75 multi-quadrant, G02 clockwise / G03 counterclockwise, s. 4.7.2): the arc sampled here
  with its own angle step, then buffered; a full circle (start = end in G75) is an annulus;
* region (G36/G37, s. 4.10): the polygon of its vertices (star-shaped, hence simple);
* polarity (LPD/LPC, s. 4.9.2): painted in file order (dark: union, clear: difference).

Tolerance (stated): every curved boundary is approximated by chords on both sides. An inscribed
(or circumscribed) chord of sagitta s moves the boundary by at most s, so the area between the two
approximations of one object is at most ``L * (s_reader + s_gen)`` with L the object's curved
boundary length (circle 2*pi*r; round draw 2*pi*r (the two caps); arc 2*R*|sweep| + 2*pi*r; obround
pi*min(w, h)); overlaps only shorten boundaries, so the sum over objects bounds the symmetric
difference of the final images. s_reader is read_gerber's ``arc_tolerance_mm``, s_gen this
generator's sagitta. A small absolute term per object covers floating-point noise of the boolean
operations (1e-6 mm^2).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from shapely import affinity
from shapely.geometry import LineString, MultiPoint, Point, Polygon, box
from shapely.geometry.base import BaseGeometry

from sensorcheck.fab.gerber import read_gerber

#: read_gerber's chord tolerance in these tests, and this generator's own sagitta
READER_TOL_MM = 0.001
GEN_TOL_MM = 0.0002
#: floating-point slack of shapely's boolean operations, per object
FP_SLACK_MM2 = 1e-6

UM = 1000  # file units (format 4.6 mm: 1e-6 mm) per micrometre


def _quad_segs(r_mm: float) -> int:
    """Segments per quarter circle so that the chord sagitta stays <= GEN_TOL_MM."""
    if r_mm <= GEN_TOL_MM:
        return 1
    return max(1, math.ceil((math.pi / 2) / math.acos(1 - GEN_TOL_MM / r_mm)))


def _disk(x: float, y: float, r: float) -> BaseGeometry:
    return Point(x, y).buffer(r, quad_segs=_quad_segs(r))


def _mm(um: int) -> str:
    return f"{um / 1000:.3f}"


@dataclass
class Program:
    """Gerber text being written, with the expected image and the error bound beside it."""

    lines: list[str] = field(default_factory=list)
    image: BaseGeometry = field(default_factory=Polygon)
    tol_mm2: float = 0.0
    apertures: dict[tuple, int] = field(default_factory=dict)
    polarity: str = "D"
    current: int | None = None
    objects: int = 0

    def aperture(self, template: str, key: tuple) -> None:
        if key not in self.apertures:
            code = 10 + len(self.apertures)
            self.apertures[key] = code
            self.lines.append(f"%ADD{code}{template}*%")
        code = self.apertures[key]
        if self.current != code:
            self.lines.append(f"D{code}*")
            self.current = code

    def paint(self, shape: BaseGeometry, dark: bool, curved_len_mm: float) -> None:
        want = "D" if dark else "C"
        if want != self.polarity:
            self.lines.append(f"%LP{want}*%")
            self.polarity = want
        self.image = self.image.union(shape) if dark else self.image.difference(shape)
        self.tol_mm2 += curved_len_mm * (READER_TOL_MM + GEN_TOL_MM) + FP_SLACK_MM2
        self.objects += 1

    def text(self) -> str:
        head = ["G04 independent test generator (tests/hardening)*", "%FSLAX46Y46*%", "%MOMM*%", "G75*", "G01*"]
        return "\n".join(head + self.lines + ["M02*", ""])


def _xy(x_um: int, y_um: int) -> str:
    return f"X{x_um * UM}Y{y_um * UM}"


# ----------------------------------------------------------------------------- objects


def flash(p: Program, shape: str, dims: tuple[int, int], hole_um: int, nverts: int, prot: int,
          lr_deg: int, x: int, y: int, dark: bool) -> None:
    a, b = dims
    xm, ym = x / 1000, y / 1000
    if shape == "C":
        d = a
        hole = hole_um if 0 < hole_um < d - 20 else 0
        tpl = f"C,{_mm(d)}" + (f"X{_mm(hole)}" if hole else "")
        g = _disk(xm, ym, d / 2000)
        curved = math.pi * d / 1000
        if hole:
            g = g.difference(_disk(xm, ym, hole / 2000))
            curved += math.pi * hole / 1000
        lr_deg = 0  # rotating a circle changes nothing; keep the flash plain
    elif shape == "R":
        tpl = f"R,{_mm(a)}X{_mm(b)}"
        g = box(xm - a / 2000, ym - b / 2000, xm + a / 2000, ym + b / 2000)
        curved = 0.0
    elif shape == "O":
        tpl = f"O,{_mm(a)}X{_mm(b)}"
        r = min(a, b) / 2000
        if a == b:
            g = _disk(xm, ym, r)
        else:
            half = (max(a, b) - min(a, b)) / 2000
            seg = [(xm - half, ym), (xm + half, ym)] if a > b else [(xm, ym - half), (xm, ym + half)]
            g = LineString(seg).buffer(r, quad_segs=_quad_segs(r))
        curved = 2 * math.pi * r
    else:  # "P": regular polygon, outer diameter a, first vertex at the aperture's rotation
        r = a / 2000
        pts = [(xm + r * math.cos(math.radians(prot) + 2 * math.pi * k / nverts),
                ym + r * math.sin(math.radians(prot) + 2 * math.pi * k / nverts)) for k in range(nverts)]
        tpl = f"P,{_mm(a)}X{nverts}X{prot}"
        g = Polygon(pts)
        curved = 0.0
    if lr_deg:
        g = affinity.rotate(g, lr_deg, origin=(xm, ym))
    p.aperture(tpl, (shape, a, b, hole_um if shape == "C" else 0, nverts if shape == "P" else 0,
                     prot if shape == "P" else 0))
    if lr_deg:
        p.lines.append(f"%LR{lr_deg}*%")
    p.paint(g, dark, curved)
    p.lines.append(f"{_xy(x, y)}D03*")
    if lr_deg:
        p.lines.append("%LR0*%")


def draw(p: Program, shape: str, w: int, h: int, x0: int, y0: int, x1: int, y1: int, dark: bool) -> None:
    if shape == "C":
        p.aperture(f"C,{_mm(w)}", ("C", w, 0, 0, 0, 0))
        r = w / 2000
        line = LineString([(x0 / 1000, y0 / 1000), (x1 / 1000, y1 / 1000)]) if (x0, y0) != (x1, y1) \
            else Point(x0 / 1000, y0 / 1000)
        g = line.buffer(r, quad_segs=_quad_segs(r))
        curved = 2 * math.pi * r
    else:
        p.aperture(f"R,{_mm(w)}X{_mm(h)}", ("R", w, h, 0, 0, 0))
        corners = [((x + sx * w / 2) / 1000, (y + sy * h / 2) / 1000)
                   for x, y in ((x0, y0), (x1, y1)) for sx in (-1, 1) for sy in (-1, 1)]
        g = MultiPoint(corners).convex_hull
        curved = 0.0
    p.paint(g, dark, curved)
    p.lines.append(f"{_xy(x0, y0)}D02*")
    p.lines.append(f"G01{_xy(x1, y1)}D01*")


def arc(p: Program, w: int, cx: int, cy: int, r_um: int, start_deg: int, sweep_deg: int, dark: bool) -> None:
    """Arc of radius r about (cx, cy) from start_deg through sweep_deg (+: counterclockwise, G03)."""
    p.aperture(f"C,{_mm(w)}", ("C", w, 0, 0, 0, 0))
    rw = w / 2000
    R = r_um / 1000
    a0 = math.radians(start_deg)
    # start on the micrometre grid; the end on the file's 1e-6 mm grid (the exact circle point rounded)
    sx, sy = round(cx + r_um * math.cos(a0)), round(cy + r_um * math.sin(a0))
    R = math.hypot(sx - cx, sy - cy) / 1000
    a0 = math.atan2(sy - cy, sx - cx)
    full = abs(sweep_deg) == 360
    if full:
        ex_nm, ey_nm = sx * UM, sy * UM
        a1 = a0 + math.copysign(2 * math.pi, sweep_deg)
    else:
        a1 = a0 + math.radians(sweep_deg)
        ex_nm = round((cx / 1000 + R * math.cos(a1)) * 1e6)
        ey_nm = round((cy / 1000 + R * math.sin(a1)) * 1e6)
    cxm, cym = cx / 1000, cy / 1000
    if full and R > rw:
        g = _disk(cxm, cym, R + rw).difference(_disk(cxm, cym, R - rw))
    else:
        # own sampling: n chords of sagitta <= GEN_TOL_MM at the centre line (the stroke's edges are
        # offsets of it: the same angular step gives sagitta <= GEN_TOL_MM * (R + rw) / R there)
        step = 2 * math.acos(1 - GEN_TOL_MM / (R + rw)) if R + rw > GEN_TOL_MM else math.pi / 8
        n = max(8, math.ceil(abs(a1 - a0) / step))
        pts = [(cxm + R * math.cos(a0 + (a1 - a0) * k / n), cym + R * math.sin(a0 + (a1 - a0) * k / n))
               for k in range(n + 1)]
        if not full:
            pts[-1] = (ex_nm / 1e6, ey_nm / 1e6)
        g = LineString(pts).buffer(rw, quad_segs=_quad_segs(rw))
    p.paint(g, dark, 2 * (R + rw) * abs(a1 - a0) + 2 * math.pi * rw)
    p.lines.append(f"{_xy(sx, sy)}D02*")
    p.lines.append(f"{'G03' if sweep_deg > 0 else 'G02'}X{ex_nm}Y{ey_nm}I{(cx - sx) * UM}J{(cy - sy) * UM}D01*")
    p.lines.append("G01*")


def region(p: Program, cx: int, cy: int, radii: list[int], angles: list[int], dark: bool) -> None:
    """A star-shaped polygon (vertices at distinct increasing angles about a centre): simple."""
    pts = [(round(cx + r * math.cos(math.radians(a / 10))), round(cy + r * math.sin(math.radians(a / 10))))
           for r, a in zip(radii, angles)]
    poly = Polygon([(x / 1000, y / 1000) for x, y in pts])
    if not poly.is_valid or poly.area < 1e-3:
        return  # rounding made a degenerate vertex: skip this object rather than test a bad region
    p.paint(poly, dark, 0.0)
    p.lines.append("G36*")
    p.lines.append(f"{_xy(*pts[0])}D02*")
    for x, y in pts[1:] + pts[:1]:
        p.lines.append(f"G01{_xy(x, y)}D01*")
    p.lines.append("G37*")


# ----------------------------------------------------------------------------- strategies

coord = st.integers(0, 20_000)  # micrometres
size = st.integers(100, 3000)
polarity = st.booleans().map(lambda clear: not clear) | st.just(True)  # mostly dark

flash_op = st.tuples(st.just("flash"), st.sampled_from("CROP"), st.tuples(size, size), st.integers(0, 2000),
                     st.integers(3, 12), st.integers(0, 359), st.sampled_from([0, 0, 30, 45, 90, 137]),
                     coord, coord, polarity)
draw_op = st.tuples(st.just("draw"), st.sampled_from("CCR"), size, size, coord, coord, coord, coord, polarity)
arc_op = st.tuples(st.just("arc"), st.integers(100, 1500), coord, coord, st.integers(500, 8000),
                   st.integers(0, 359),
                   st.integers(10, 350).flatmap(lambda s: st.sampled_from([s, -s])) | st.sampled_from([360, -360]),
                   polarity)
region_op = st.integers(3, 12).flatmap(lambda n: st.tuples(
    st.just("region"), coord, coord, st.lists(st.integers(300, 6000), min_size=n, max_size=n),
    st.lists(st.integers(0, 3599), min_size=n, max_size=n, unique=True).map(sorted), polarity))

programs = st.lists(st.one_of(flash_op, draw_op, arc_op, region_op), min_size=1, max_size=12)


def build(ops: list[tuple]) -> Program:
    p = Program()
    for op in ops:
        kind, args = op[0], op[1:]
        if kind == "flash":
            flash(p, *args)
        elif kind == "draw":
            draw(p, *args)
        elif kind == "arc":
            arc(p, *args)
        else:
            region(p, *args)
    return p


def generated_gerber(ops: list[tuple]) -> bytes:
    """The generator's text for ``ops`` (used by the mutation tests as a valid seed file)."""
    return build(ops).text().encode()


# ----------------------------------------------------------------------------- the property


@settings(max_examples=120, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(ops=programs)
def test_generated_program_reads_back_to_the_generators_image(ops: list[tuple]) -> None:
    p = build(ops)
    got = read_gerber(p.text().encode(), "generated.gbr", arc_tolerance_mm=READER_TOL_MM)
    assert got.object_count == p.objects
    dark = got.dark if got.dark is not None else Polygon()
    expected = p.image
    diff = dark.symmetric_difference(expected).area
    assert diff <= p.tol_mm2, (f"symmetric difference {diff:.6g} mm^2 > bound {p.tol_mm2:.6g} mm^2 "
                               f"(expected area {expected.area:.6f}, read {dark.area:.6f})\n{p.text()}")


def test_the_bound_is_tight_enough_to_see_a_missing_object() -> None:
    # The check above must be able to fail: dropping the smallest object the generator makes (a
    # 0.1 mm square, 0.01 mm^2) from a program with a few arcs changes the image by more than the
    # bound (the bound of 3 arcs of R = 8 mm, w = 1.5 mm is about 3 * 2 * 8.75 * 2 pi * 1.2e-3 = 0.4 mm^2:
    # so the dropped object here is a 2 x 2 mm rectangle, 4 mm^2, far from the arcs).
    ops = [("arc", 1500, 10_000, 10_000, 8000, 0, 90, True), ("arc", 1500, 10_000, 10_000, 8000, 90, -200, True),
           ("arc", 1500, 10_000, 10_000, 8000, 0, 360, True),
           ("flash", "R", (2000, 2000), 0, 4, 0, 0, 30_000, 30_000, True)]
    full, partial = build(ops), build(ops[:-1])
    got = read_gerber(full.text().encode(), "generated.gbr", arc_tolerance_mm=READER_TOL_MM).dark
    assert got is not None
    assert got.symmetric_difference(full.image).area <= full.tol_mm2
    assert got.symmetric_difference(partial.image).area > full.tol_mm2


def test_polarity_and_hole_semantics_on_a_hand_checked_case() -> None:
    # Gerber spec 2023.08 s. 4.9.2 and 4.4.2, checked by hand: a 10 x 10 mm dark square, a clear
    # 2 mm circle flash in it, then a dark 4 mm circle with a 2 mm hole at the same point: the hole
    # shows the clear flash below it (the hole does not re-darken nor clear), so the final area is
    # 100 - pi*1^2 (the cleared disk stays cleared only where the holed flash leaves it open).
    p = Program()
    flash(p, "R", (10_000, 10_000), 0, 4, 0, 0, 5000, 5000, True)
    flash(p, "C", (2000, 2000), 0, 4, 0, 0, 5000, 5000, False)
    flash(p, "C", (4000, 4000), 2000, 4, 0, 0, 5000, 5000, True)
    got = read_gerber(p.text().encode(), "hand.gbr", arc_tolerance_mm=READER_TOL_MM).dark
    assert got is not None
    assert abs(got.area - (100 - math.pi)) <= p.tol_mm2
    assert abs(p.image.area - (100 - math.pi)) <= p.tol_mm2
