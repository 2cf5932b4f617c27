"""Exact shapely 2 geometry from the objects of :mod:`sensorcheck.fab.gerber_parser`.

Semantics (Gerber Layer Format Specification 2023.08, chapter 4):

* a flash places the aperture's shape at the point (holes and exposure-off macro primitives cut
  only that shape, section 4.4 and 4.5);
* a draw (D01, linear) covers the area the aperture sweeps from start to end: for a convex
  aperture that is exactly the convex hull of the shape at both ends (so a rectangle stays a
  rectangle: no rounded caps, no "equivalent width");
* an arc (D01, circular) with a circle aperture covers the buffer of the arc by the radius;
* a region is the area inside its contour (cut-ins allowed, section 4.10);
* LM/LR/LS mirror, rotate and scale the aperture about its origin before it is placed
  (section 4.9; applied in the order mirror, rotate, scale: from memory of the specification;
  scaling commutes with both);
* polarity (LP) applies in file order: a clear object removes what lies under it from every
  object before it (section 4.9.2).

Curves are flattened with vertices on the true curve and a chord error (sagitta) of at most
``arc_tolerance_mm``. Everything is in millimetres.
"""

from __future__ import annotations

import math
from collections import defaultdict
from typing import Any

import numpy as np
import shapely
from gerbonara import graphic_objects as go
from gerbonara.utils import Inch
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components
from shapely.geometry import GeometryCollection, Polygon
from shapely.geometry.base import BaseGeometry

from sensorcheck.board.model import Feature, ObjectKind, Polarity, SourceRef
from sensorcheck.errors import InputError, LimitError
from sensorcheck.fab.gerber_parser import (
    IDENTITY_XFORM,
    ImageTransform,
    MacroAperture,
    ParseResult,
    StandardAperture,
)
from sensorcheck.limits import DEFAULT_LIMITS, Limits

MM_PER_INCH = 25.4
EMPTY = Polygon()
#: a circle never gets more segments than this (a radius of 1 m at 1 um); beyond it the chord
#: error grows past the tolerance rather than memory past reason
MAX_CIRCLE_SEGMENTS = 8192


# --------------------------------------------------------------------------------------------
# curve flattening
# --------------------------------------------------------------------------------------------

def circle_segments(radius_mm: float, tolerance_mm: float) -> int:
    """Segments of a full circle so that the sagitta of each chord is <= tolerance.

    A multiple of 4, so that a circle keeps its exact extent along both axes.
    """
    if radius_mm <= tolerance_mm:
        return 8
    half_angle = math.acos(1.0 - tolerance_mm / radius_mm)
    n = min(max(8, math.ceil(math.pi / half_angle)), MAX_CIRCLE_SEGMENTS)
    return n + (-n) % 4


def circle_coords(cx: float, cy: float, r: float, tol: float) -> np.ndarray:
    n = circle_segments(r, tol)
    t = np.linspace(0.0, 2.0 * math.pi, n, endpoint=False)
    return np.column_stack((cx + r * np.cos(t), cy + r * np.sin(t)))


def circle_polygon(cx: float, cy: float, r: float, tol: float) -> BaseGeometry:
    if r <= 0:
        return EMPTY
    return Polygon(circle_coords(cx, cy, r, tol))


def arc_points(
    x1: float, y1: float, x2: float, y2: float, cx: float, cy: float, clockwise: bool, tol: float,
    extra_radius: float = 0.0,
) -> np.ndarray:
    """Points of a circular arc from (x1, y1) to (x2, y2) about the absolute centre (cx, cy).

    Start and end equal: a full circle (multi-quadrant mode, Gerber spec section 4.7.2). The
    number of segments keeps the sagitta at radius + extra_radius below ``tol``.
    """
    r1 = math.hypot(x1 - cx, y1 - cy)
    r2 = math.hypot(x2 - cx, y2 - cy)
    a1 = math.atan2(y1 - cy, x1 - cx)
    a2 = math.atan2(y2 - cy, x2 - cx)
    if math.isclose(x1, x2, abs_tol=1e-9) and math.isclose(y1, y2, abs_tol=1e-9):
        sweep = -2 * math.pi if clockwise else 2 * math.pi
    elif clockwise:
        sweep = a2 - a1
        if sweep >= 0:
            sweep -= 2 * math.pi
    else:
        sweep = a2 - a1
        if sweep <= 0:
            sweep += 2 * math.pi
    r_max = max(r1, r2) + extra_radius
    if r_max <= 0:
        return np.array([[x1, y1], [x2, y2]])
    per_circle = circle_segments(r_max, tol)
    n = max(1, math.ceil(abs(sweep) / (2 * math.pi) * per_circle))
    t = np.linspace(0.0, 1.0, n + 1)
    ang = a1 + sweep * t
    rad = r1 + (r2 - r1) * t  # endpoints exact even where the file's centre is slightly off
    pts = np.column_stack((cx + rad * np.cos(ang), cy + rad * np.sin(ang)))
    pts[0] = (x1, y1)
    pts[-1] = (x2, y2)
    return pts


# --------------------------------------------------------------------------------------------
# aperture shapes (at the origin, in mm, transformation applied)
# --------------------------------------------------------------------------------------------

def _rotate(coords: np.ndarray, deg: float) -> np.ndarray:
    if deg == 0:
        return coords
    a = math.radians(deg)
    c, s = math.cos(a), math.sin(a)
    return coords @ np.array([[c, s], [-s, c]])


def _rect(cx: float, cy: float, w: float, h: float) -> np.ndarray:
    return np.array(
        [[cx - w / 2, cy - h / 2], [cx + w / 2, cy - h / 2], [cx + w / 2, cy + h / 2], [cx - w / 2, cy + h / 2]]
    )


def polygonal(geom: BaseGeometry) -> BaseGeometry:
    """Only the areas of a geometry (make_valid may also return the lines and points a
    degenerate contour collapses to; they have no area and are no image)."""
    if geom.geom_type in ("Polygon", "MultiPolygon"):
        return geom
    polys = [p for p in shapely.get_parts(geom) if p.geom_type == "Polygon" and not p.is_empty]
    polys += [q for p in shapely.get_parts(geom) if p.geom_type == "MultiPolygon" for q in p.geoms]
    if not polys:
        return EMPTY
    return polys[0] if len(polys) == 1 else shapely.union_all(polys)


def _poly(coords: np.ndarray) -> BaseGeometry:
    if len(coords) < 3:
        return EMPTY
    p = Polygon(coords)
    if not p.is_valid:
        p = polygonal(shapely.make_valid(p))
    return p


def _obround(w: float, h: float, tol: float) -> BaseGeometry:
    if w <= 0 or h <= 0:
        return EMPTY
    r = min(w, h) / 2
    n_half = max(4, circle_segments(r, tol) // 2)
    t = np.linspace(-math.pi / 2, math.pi / 2, n_half + 1)
    if w >= h:
        d = w / 2 - r
        right = np.column_stack((d + r * np.cos(t), r * np.sin(t)))
        left = np.column_stack((-d - r * np.cos(t), -r * np.sin(t)))
    else:
        d = h / 2 - r
        right = np.column_stack((-r * np.sin(t), d + r * np.cos(t)))
        left = np.column_stack((r * np.sin(t), -d - r * np.cos(t)))
    return Polygon(np.vstack((right, left)))


def _regular_polygon(cx: float, cy: float, diameter: float, n: int, rot_deg: float) -> np.ndarray:
    t = np.radians(rot_deg) + 2 * math.pi * np.arange(n) / n
    return np.column_stack((cx + diameter / 2 * np.cos(t), cy + diameter / 2 * np.sin(t)))


def standard_shape(ap: StandardAperture, k: float, tol: float) -> BaseGeometry:
    """Shape of a C/R/O/P aperture (Gerber spec section 4.4), holes cut, scaled by k to mm."""
    p = [v * k for v in ap.params]
    if ap.shape == "C":
        shape = circle_polygon(0, 0, p[0] / 2, tol)
        hole = p[1:]
    elif ap.shape == "R":
        shape = Polygon(_rect(0, 0, p[0], p[1])) if p[0] > 0 and p[1] > 0 else EMPTY
        hole = p[2:]
    elif ap.shape == "O":
        shape = _obround(p[0], p[1], tol)
        hole = p[2:]
    else:  # "P": outer diameter, vertices, rotation (degrees, not scaled), hole
        n = int(ap.params[1])
        rot = ap.params[2] if len(ap.params) > 2 else 0.0
        shape = Polygon(_regular_polygon(0, 0, p[0], n, rot)) if p[0] > 0 else EMPTY
        hole = p[3:]
    if len(hole) == 1 and hole[0] > 0:
        shape = shape.difference(circle_polygon(0, 0, hole[0] / 2, tol))
    elif len(hole) == 2 and hole[0] > 0 and hole[1] > 0:  # rectangular hole of older revisions
        shape = shape.difference(Polygon(_rect(0, 0, hole[0], hole[1])))
    return shape


def _macro_primitive(code: int, a: tuple[float, ...], k: float, tol: float) -> tuple[float, BaseGeometry]:
    """(exposure, shape) of one evaluated macro primitive (Gerber spec section 4.5.1)."""
    if code == 1:  # circle: exposure, diameter, cx, cy[, rotation]
        rot = a[4] if len(a) > 4 else 0.0
        c = _rotate(np.array([[a[2] * k, a[3] * k]]), rot)[0]
        return a[0], circle_polygon(c[0], c[1], a[1] * k / 2, tol)
    if code in (2, 20):  # vector line: exposure, width, x1, y1, x2, y2, rotation
        w, x1, y1, x2, y2 = (v * k for v in a[1:6])
        rot = a[6] if len(a) > 6 else 0.0
        dx, dy = x2 - x1, y2 - y1
        length = math.hypot(dx, dy)
        if length == 0 or w <= 0:
            return a[0], EMPTY
        nx, ny = -dy / length * w / 2, dx / length * w / 2
        pts = np.array([[x1 + nx, y1 + ny], [x1 - nx, y1 - ny], [x2 - nx, y2 - ny], [x2 + nx, y2 + ny]])
        return a[0], _poly(_rotate(pts, rot))
    if code == 21:  # centre line: exposure, width, height, cx, cy, rotation
        w, h, cx, cy = (v * k for v in a[1:5])
        rot = a[5] if len(a) > 5 else 0.0
        if w <= 0 or h <= 0:
            return a[0], EMPTY
        return a[0], _poly(_rotate(_rect(cx, cy, w, h), rot))
    if code == 22:  # lower-left line (older revisions): exposure, width, height, x, y, rotation
        w, h, x, y = (v * k for v in a[1:5])
        rot = a[5] if len(a) > 5 else 0.0
        if w <= 0 or h <= 0:
            return a[0], EMPTY
        return a[0], _poly(_rotate(_rect(x + w / 2, y + h / 2, w, h), rot))
    if code == 4:  # outline: exposure, n, x0, y0, ... xn, yn, rotation
        n = int(a[1])
        if n < 1 or len(a) < 2 + 2 * (n + 1):
            raise ValueError(f"outline primitive with {n} segments but {len(a) - 2} coordinates")
        coords = np.array(a[2:2 + 2 * (n + 1)], dtype=float).reshape(-1, 2) * k
        rot = a[2 + 2 * (n + 1)] if len(a) > 2 + 2 * (n + 1) else 0.0
        return a[0], _poly(_rotate(coords, rot))
    if code == 5:  # polygon: exposure, vertices, cx, cy, diameter, rotation
        n = int(a[1])
        if not 3 <= n <= 12:
            raise ValueError(f"polygon primitive with {n} vertices (3 to 12 allowed)")
        rot = a[5] if len(a) > 5 else 0.0
        pts = _regular_polygon(a[2] * k, a[3] * k, a[4] * k, n, 0.0)
        return a[0], _poly(_rotate(pts, rot))
    if code == 6:  # moire (older revisions): cx, cy, outer dia, ring thickness, gap, rings, cross thickness, cross length, rot
        cx, cy, outer, thick, gap = (v * k for v in a[0:5])
        rings = min(int(a[5]), 1000)
        ct, cl = a[6] * k, a[7] * k
        rot = a[8] if len(a) > 8 else 0.0
        parts = []
        d = outer
        for _ in range(rings):
            if d <= 0:
                break
            ring = circle_polygon(cx, cy, d / 2, tol).difference(circle_polygon(cx, cy, max(d / 2 - thick, 0), tol))
            parts.append(ring)
            d -= 2 * (thick + gap)
        if ct > 0 and cl > 0:
            parts.append(Polygon(_rect(cx, cy, cl, ct)))
            parts.append(Polygon(_rect(cx, cy, ct, cl)))
        shape = shapely.union_all(parts) if parts else EMPTY
        return 1.0, shapely.affinity.rotate(shape, rot, origin=(0, 0)) if rot else shape
    if code == 7:  # thermal: cx, cy, outer dia, inner dia, gap, rotation
        cx, cy, outer, inner, gap = (v * k for v in a[0:5])
        rot = a[5] if len(a) > 5 else 0.0
        shape = circle_polygon(cx, cy, outer / 2, tol).difference(circle_polygon(cx, cy, inner / 2, tol))
        if gap > 0:
            cross = shapely.union(Polygon(_rect(cx, cy, 2 * outer, gap)), Polygon(_rect(cx, cy, gap, 2 * outer)))
            shape = shape.difference(cross)
        return 1.0, shapely.affinity.rotate(shape, rot, origin=(0, 0)) if rot else shape
    raise ValueError(f"unknown macro primitive {code}")  # pragma: no cover - refused by the parser


def macro_shape(ap: MacroAperture, k: float, tol: float) -> BaseGeometry:
    """Shape of a macro aperture: primitives in order, exposure on adds, off cuts (section 4.5)."""
    shape: BaseGeometry = EMPTY
    for code, args in ap.primitives:
        exposure, prim = _macro_primitive(code, args, k, tol)
        if prim.is_empty:
            continue
        if exposure == 0:
            shape = shape.difference(prim)
        elif exposure == 2:  # toggle, older revisions
            shape = shape.symmetric_difference(prim)
        elif shape.is_empty:
            shape = prim
        else:
            shape = shape.union(prim)
    return shape


def transformed(shape: BaseGeometry, xform: tuple[bool, bool, float, float]) -> BaseGeometry:
    if xform == IDENTITY_XFORM or shape.is_empty:
        return shape
    mx, my, rot, scale = xform

    def fn(c: np.ndarray) -> np.ndarray:
        c = c.copy()
        if mx:
            c[:, 0] = -c[:, 0]
        if my:
            c[:, 1] = -c[:, 1]
        c = _rotate(c, rot)
        return c * scale

    out = shapely.transform(shape, fn)
    if mx != my:  # a mirror reverses ring orientation; normalise
        out = shapely.normalize(out)
    return out


class ShapeCache:
    """Aperture shapes by (aperture identity, transformation), built once per file."""

    def __init__(self, k: float, tol: float, name: str) -> None:
        self.k = k
        self.tol = tol
        self.name = name
        self._shapes: dict[tuple[int, tuple[bool, bool, float, float], bool], BaseGeometry] = {}
        self._keep: list[Any] = []

    def shape(self, ap: Any, xform: tuple[bool, bool, float, float], line: int | None,
              solid: bool = False) -> BaseGeometry:
        """The aperture's shape; ``solid``: without its hole (what a draw sweeps)."""
        key = (id(ap), xform, solid)
        got = self._shapes.get(key)
        if got is None:
            if isinstance(ap, StandardAperture):
                if solid and ap.hole:
                    n_solid = len(ap.params) - len(ap.hole)
                    ap = StandardAperture(ap.shape, ap.params[:n_solid], ap.unit)
                base = standard_shape(ap, self.k, self.tol)
            elif isinstance(ap, MacroAperture):
                try:
                    base = macro_shape(ap, self.k, self.tol)
                except (ValueError, IndexError, shapely.errors.GEOSException) as exc:
                    raise InputError(self.name, line, f"cannot build macro aperture {ap.name}: {exc}",
                                     "macro primitives with complete, valid parameters") from exc
            else:
                raise InputError(self.name, line, "object without a usable aperture", "a defined aperture")
            got = transformed(base, xform)
            self._shapes[key] = got
            self._keep.append(ap)  # keep the aperture alive so its id stays unique
        return got


# --------------------------------------------------------------------------------------------
# objects -> features
# --------------------------------------------------------------------------------------------

def _first(attrs: Any, key: str) -> str | None:
    if not isinstance(attrs, dict):
        return None
    val = attrs.get(key)
    if not val:
        return None
    first = val[0].strip()
    return first or None


def _aperture_function(attrs: Any) -> str | None:
    if not attrs:
        return None
    d = dict(attrs) if not isinstance(attrs, dict) else attrs
    val = d.get(".AperFunction")
    return ",".join(val) if val else None


def _translate_many(shapes: list[BaseGeometry], offsets: np.ndarray) -> np.ndarray:
    """Copies of ``shapes[i]`` moved by ``offsets[i]``, in one vectorised call."""
    arr = np.empty(len(shapes), dtype=object)
    arr[:] = shapes
    counts = shapely.get_num_coordinates(arr)
    shift = np.repeat(offsets, counts, axis=0)
    return shapely.transform(arr, lambda c: c + shift)


def stadium_vertices(radius_mm: float, tolerance_mm: float) -> int:
    """Coordinates of the ring :func:`stadiums` makes for a circle of this radius (closing one included)."""
    if radius_mm <= 0:
        return 0
    return 2 * (circle_segments(radius_mm, tolerance_mm) // 2 + 1) + 1


def swept_hull_vertices(shape: BaseGeometry) -> int:
    """At most the coordinates of a draw with a convex aperture: the convex hull of the shape at
    both ends has no more corners than the two copies of the shape's own hull together."""
    if shape.is_empty:
        return 0
    corners = int(shapely.get_num_coordinates(shapely.convex_hull(shape))) - 1
    return 2 * max(corners, 0) + 1


class VertexBudget:
    """Polygon vertices of one layer, counted object by object BEFORE the geometry is built.

    Each object adds the coordinates its geometry will have, by the rules that build it: a flash
    the coordinates of its aperture's shape (built once per aperture, then only moved), a draw
    with a circle the ring of :func:`stadiums`, a draw with another aperture at most twice its
    shape's hull (:func:`swept_hull_vertices`), a region its contour's flattened points, an arc
    its own geometry (built one at a time). An object that takes the count past ``limit`` is
    refused with a LimitError at its line: a file of a few kilobytes flashing a circle of
    thousands of vertices thousands of times is stopped before it takes gigabytes.
    """

    def __init__(self, limit: int, name: str) -> None:
        self.limit = limit
        self.name = name
        self.total = 0

    def add(self, count: int, line: int | None) -> None:
        self.total += count
        if self.total > self.limit:
            raise LimitError(
                self.name, line,
                f"this object brings the layer's geometry to {self.total} polygon vertices (counted "
                f"before it is built), more than limits.max_vertices = {self.limit}",
                f"at most {self.limit} polygon vertices in one layer; for a genuine file, raise "
                f"max_vertices in the [limits] table of sensorcheck.toml")


class PolarityWorkBudget:
    """Work of the polarity sweep (:func:`effective_dark`) on one layer, counted as it goes.

    The measure is polygon vertices handled again: when a dark object meets (by box) a clear
    piece that an earlier dark object of the sweep already met, the piece's vertices plus the
    object's own are counted (the exact contact test, unprepared, costs both), and again the
    piece's vertices when it is merged into a bigger piece. The first dark object to meet a
    piece is not counted: that work is at most the layer's own vertices (bounded by
    ``max_vertices``), so an honest layer however large counts little or nothing (a pour with
    its clearances, a hatch, a panel: each clear piece met once). What grows faster than the
    file is the same clear copper handled over and over: dark and clear objects alternating,
    each shifted a little, merge into one clear piece that grows with the file and every later
    dark object meets it (GEOS tests and merges it in time that grows with its vertices). The
    count follows the time there: about 2e6 vertices per CPU second, measured on such stacks of
    500 to 8 000 objects. Passing ``limit`` raises LimitError at the line of the dark object
    being processed (the sweep runs backwards: the file's later objects are already done).
    """

    def __init__(self, limit: int, name: str) -> None:
        self.limit = limit
        self.name = name
        self.total = 0

    def add(self, count: int, source: SourceRef) -> None:
        self.total += count
        if self.total > self.limit:
            raise LimitError(
                source.file or self.name, source.line,
                f"applying clear polarity (LPC) up to this object has handled {self.total} polygon "
                f"vertices, more than limits.max_polarity_work = {self.limit} (dark and clear "
                f"objects alternating over one another, each clear one touching many later ones)",
                f"at most {self.limit} vertices of polarity work in one layer; for a genuine file, "
                f"raise max_polarity_work in the [limits] table of sensorcheck.toml")


def objects_to_features(parsed: ParseResult, name: str, arc_tolerance_mm: float, *,
                        limits: Limits = DEFAULT_LIMITS) -> list[Feature]:
    """Every graphical object -> a Feature with its own exact geometry (mm), in file order.

    Raises LimitError at the line of the object whose geometry would take the layer past
    ``limits.max_vertices`` (:class:`VertexBudget`), before that geometry is built.
    """
    objects = parsed.gerber.objects
    n = len(objects)
    tol = arc_tolerance_mm
    budget = VertexBudget(limits.max_vertices, name)
    shape_vertices: dict[int, int] = {}  # by id(shape): the cache keeps every shape alive
    hull_vertices: dict[int, int] = {}
    cache_by_unit: dict[Any, ShapeCache] = {}
    geoms: list[BaseGeometry | None] = [None] * n
    paths: list[BaseGeometry | None] = [None] * n
    widths: list[float | None] = [None] * n

    def cache_for(unit: Any) -> ShapeCache:
        c = cache_by_unit.get(unit)
        if c is None:
            c = cache_by_unit[unit] = ShapeCache(MM_PER_INCH if unit == Inch else 1.0, tol, name)
        return c

    flash_idx: list[int] = []
    flash_shapes: list[BaseGeometry] = []
    flash_xy: list[tuple[float, float]] = []
    # draws grouped by (aperture shape identity): index, x1, y1, x2, y2
    draw_groups: dict[Any, tuple[BaseGeometry | None, list[int], list[tuple[float, float, float, float]]]] = {}
    region_idx: list[int] = []
    region_coords: list[np.ndarray] = []

    for i, obj in enumerate(objects):
        t = type(obj)
        d = obj.__dict__
        line = d.get("_sc_line")
        k = MM_PER_INCH if obj.unit == Inch else 1.0
        if t is go.Flash:
            # an aperture keeps the unit it was defined in (a mid-file %MO change leaves it as it was)
            shape = cache_for(getattr(obj.aperture, "unit", obj.unit)).shape(obj.aperture, d.get("_sc_xform", IDENTITY_XFORM), line)
            count = shape_vertices.get(id(shape))
            if count is None:
                count = shape_vertices[id(shape)] = int(shapely.get_num_coordinates(shape))
            budget.add(count, line)
            flash_idx.append(i)
            flash_shapes.append(shape)
            flash_xy.append((obj.x * k, obj.y * k))
        elif t is go.Line:
            ap = obj.aperture
            xform = d.get("_sc_xform", IDENTITY_XFORM)
            if not isinstance(ap, StandardAperture):
                raise InputError(name, line, "a line is drawn with a macro or block aperture",
                                 "a circle or rectangle aperture for D01 draws (Gerber spec section 4.7)")
            if ap.hole and any(ap.hole):
                parsed.warnings.append(f"{name}:{line}: aperture D{ap.original_number} has a hole; "
                                       "a draw sweeps the solid shape (the hole is ignored)")
            ka = MM_PER_INCH if ap.unit == Inch else 1.0
            if ap.shape == "C":  # a circle sweeps a stadium: built directly, grouped by radius
                key: Any = ("C", ap.params[0] * ka * xform[3])
                shape = None
                budget.add(stadium_vertices(key[1] / 2, tol), line)
            else:
                shape = cache_for(ap.unit).shape(ap, xform, line, solid=True)
                key = id(shape)
                count = hull_vertices.get(key)
                if count is None:
                    count = hull_vertices[key] = swept_hull_vertices(shape)
                budget.add(count, line)
            grp = draw_groups.get(key)
            if grp is None:
                grp = draw_groups[key] = (shape, [], [])
            grp[1].append(i)
            grp[2].append((obj.x1 * k, obj.y1 * k, obj.x2 * k, obj.y2 * k))
            scale = xform[3]
            widths[i] = (ap.params[0] if ap.shape in "CP" else min(ap.params[0], ap.params[1])) * ka * scale
        elif t is go.Arc:
            ap = obj.aperture
            if not isinstance(ap, StandardAperture):  # a macro's or block's sweep has no agreed reading
                raise InputError(name, line, "an arc is drawn with a macro or block aperture",
                                 "a circle aperture for circular interpolation (Gerber spec section 4.7.2)")
            xform = d.get("_sc_xform", IDENTITY_XFORM)
            scale = xform[3]
            ka = MM_PER_INCH if ap.unit == Inch else 1.0
            x1, y1, x2, y2 = obj.x1 * k, obj.y1 * k, obj.x2 * k, obj.y2 * k
            cx, cy = x1 + obj.cx * k, y1 + obj.cy * k
            r1, r2 = math.hypot(x1 - cx, y1 - cy), math.hypot(x2 - cx, y2 - cy)
            if abs(r1 - r2) > max(0.001, 0.001 * max(r1, r2), 3 * parsed.resolution_mm):
                # spec section 4.7.2: start and end must lie on one circle about the centre
                # (allowing for rounding to the file's coordinate resolution)
                parsed.warnings.append(f"{name}:{line}: arc radii differ ({r1:.4f} mm at the start, "
                                       f"{r2:.4f} mm at the end); drawn as a spiral between them")
            if ap.shape != "C":
                # Gerber spec 2023.08 section 4.7.2 asks for a circle aperture for arcs; older files
                # use rectangles and obrounds. A draw's image is its aperture swept along the path
                # (section 4.7): the (convex) solid shape swept along the arc, flattened within the
                # arc tolerance, as the union of its sweeps along each chord.
                parsed.dialect.accept(line, "arc with a non-circular aperture",
                                      f"an arc is drawn with the {ap.shape} aperture D{ap.original_number}",
                                      "the aperture's solid shape is swept along the arc",
                                      "a circle aperture for arcs")
                shape = cache_for(ap.unit).shape(ap, xform, line, solid=True)
                reach = float(np.abs(shapely.get_coordinates(shape)).max()) if not shape.is_empty else 0.0
                pts = arc_points(x1, y1, x2, y2, cx, cy, obj.clockwise, tol, extra_radius=reach)
                paths[i] = shapely.linestrings(pts)
                widths[i] = (ap.params[0] if ap.shape == "P" else min(ap.params[0], ap.params[1])) * ka * scale
                seg = np.concatenate((pts[:-1], pts[1:]), axis=1)
                geoms[i] = shapely.union_all(swept_convex(seg, shape)) if not shape.is_empty else EMPTY
                budget.add(int(shapely.get_num_coordinates(geoms[i])), line)
                continue
            r = ap.params[0] * ka * scale / 2
            pts = arc_points(x1, y1, x2, y2, cx, cy, obj.clockwise, tol, extra_radius=r)
            path = shapely.linestrings(pts)
            paths[i] = path
            widths[i] = 2 * r
            if r > 0:
                geoms[i] = shapely.buffer(path, r, quad_segs=max(2, circle_segments(r, tol) // 4))
                budget.add(int(shapely.get_num_coordinates(geoms[i])), line)
            else:
                geoms[i] = EMPTY
        elif t is go.Region:
            region_idx.append(i)
            region_coords.append(_region_coords(obj, k, tol))
            budget.add(len(region_coords[-1]), line)
        else:  # pragma: no cover - gerbonara makes only these four
            raise InputError(name, line, f"unexpected object {t.__name__}", "flash, draw, arc or region")

    if flash_idx:
        moved = _translate_many(flash_shapes, np.array(flash_xy))
        for j, i in enumerate(flash_idx):
            geoms[i] = moved[j]

    for key, (shape, idx, seg) in draw_groups.items():
        seg_arr = np.array(seg)
        if shape is None:
            hull = stadiums(seg_arr, key[1] / 2, tol)
        elif shape.is_empty:
            hull = [EMPTY] * len(idx)
        else:
            hull = swept_convex(seg_arr, shape)
        lines = shapely.linestrings(seg_arr.reshape(-1, 2, 2))
        for j, i in enumerate(idx):
            geoms[i] = hull[j]
            paths[i] = lines[j]

    if region_idx:
        sizes = np.array([len(c) for c in region_coords])
        ok = sizes >= 4
        polys = np.empty(len(region_idx), dtype=object)
        polys[:] = EMPTY
        if ok.any():
            good = [c for c, o in zip(region_coords, ok) if o]
            flat = np.concatenate(good)
            ring_index = np.repeat(np.arange(len(good)), [len(c) for c in good])
            rings = shapely.linearrings(flat, indices=ring_index)
            made = shapely.polygons(rings)
            bad = ~shapely.is_valid(made)
            if bad.any():
                made[bad] = [_fix_region(p) for p in made[bad]]
            polys[ok] = made
        for j, i in enumerate(region_idx):
            geoms[i] = polys[j]

    features: list[Feature] = []
    for i, obj in enumerate(objects):
        t = type(obj)
        attrs = obj.attrs if isinstance(obj.attrs, dict) else {}
        if t is go.Region:
            kind: ObjectKind = "region"
            aper = _aperture_function(obj.__dict__.get("_sc_aperture_attrs"))
        else:
            kind = "flash" if t is go.Flash else ("draw" if t is go.Line else "arc")
            aper = _aperture_function(getattr(obj.aperture, "attrs", None))
        pin_val = attrs.get(".P") if attrs else None
        component = _first(attrs, ".C")
        pin = None
        if pin_val:
            if component is None and pin_val[0].strip():
                component = pin_val[0].strip()
            if len(pin_val) > 1 and pin_val[1].strip():
                pin = pin_val[1].strip()
        polarity: Polarity = "dark" if obj.polarity_dark else "clear"
        features.append(Feature(
            geometry=geoms[i] if geoms[i] is not None else EMPTY,
            polarity=polarity,
            kind=kind,
            source=SourceRef(name, obj.__dict__.get("_sc_line")),
            aperture_function=aper,
            net=_first(attrs, ".N"),
            component=component,
            pin=pin,
            width_mm=widths[i],
            path=paths[i],
        ))
    return features


def swept_convex(seg: np.ndarray, shape: BaseGeometry) -> np.ndarray:
    """Polygons swept by ``shape`` (convex, or its convex hull) along segments (x1, y1, x2, y2).

    The sweep of a convex shape along a segment is the convex hull of the shape at both ends.
    """
    v = np.asarray(shapely.get_coordinates(shapely.convex_hull(shape)))
    p1 = seg[:, None, 0:2] + v[None, :, :]
    p2 = seg[:, None, 2:4] + v[None, :, :]
    return shapely.convex_hull(shapely.multipoints(np.concatenate((p1, p2), axis=1)))


def image_transformed(features: list[Feature], image: ImageTransform) -> list[Feature]:
    """The features with the file's deprecated image commands applied (see ImageTransform).

    The affine part (AS, MI, SF, OF, IR/RO) maps every coordinate of every geometry and path; a
    negative image (IPNEG) becomes a dark box around all objects, first in file order, with every
    object's polarity inverted after it (so a dark object clears the box, a clear one adds back).
    """
    if not image.is_identity():
        m = np.array([[0.0, 1.0], [1.0, 0.0]]) if image.swap_axes else np.eye(2)
        m = np.diag([-1.0 if image.mirror_a else 1.0, -1.0 if image.mirror_b else 1.0]) @ m
        m = np.diag([image.scale_a, image.scale_b]) @ m
        k = MM_PER_INCH if image.offset_unit == Inch else 1.0
        off = np.array(image.offset, dtype=float) * k
        t = math.radians(image.rotation_deg)
        rot = np.array([[math.cos(t), -math.sin(t)], [math.sin(t), math.cos(t)]])
        if image.rotation_deg % 90 == 0:  # exact quarter turns: no 6e-17 residues
            rot = np.round(rot)
        m, off = rot @ m, rot @ off

        def fn(c: np.ndarray) -> np.ndarray:
            return c @ m.T + off

        geoms = shapely.transform(np.array([f.geometry for f in features], dtype=object), fn)
        width_k = min(abs(image.scale_a), abs(image.scale_b))
        for f, g in zip(features, geoms):
            f.geometry = g
            if f.path is not None:
                f.path = shapely.transform(f.path, fn)
            if f.width_mm is not None:
                f.width_mm *= width_k
    if image.negative and features:
        bounds = shapely.total_bounds(np.array([f.geometry for f in features], dtype=object))
        for f in features:
            f.polarity = "clear" if f.polarity == "dark" else "dark"
        if np.isfinite(bounds).all():
            box = shapely.box(*bounds)
            features = [Feature(geometry=box, polarity="dark", kind="region", source=features[0].source), *features]
    return features


def stadiums(seg: np.ndarray, r: float, tol: float) -> np.ndarray:
    """Polygons swept by a circle of radius r along segments (x1, y1, x2, y2), vectorised.

    The convex hull of the circle at both ends: a half circle about the end point from
    direction - 90 degrees to direction + 90, then one about the start point; vertices on the
    circles, chord sagitta <= tol. A zero-length segment gives the circle.
    """
    n = len(seg)
    if r <= 0:
        out = np.empty(n, dtype=object)
        out[:] = EMPTY
        return out
    half = circle_segments(r, tol) // 2
    theta = np.arctan2(seg[:, 3] - seg[:, 1], seg[:, 2] - seg[:, 0])
    steps = np.linspace(-math.pi / 2, math.pi / 2, half + 1)
    a_end = theta[:, None] + steps[None, :]
    a_start = a_end + math.pi
    xs = np.concatenate((seg[:, 2:3] + r * np.cos(a_end), seg[:, 0:1] + r * np.cos(a_start)), axis=1)
    ys = np.concatenate((seg[:, 3:4] + r * np.sin(a_end), seg[:, 1:2] + r * np.sin(a_start)), axis=1)
    coords = np.stack((xs, ys), axis=2)
    coords = np.concatenate((coords, coords[:, :1, :]), axis=1)  # close the rings
    return shapely.polygons(coords)


def _region_coords(region: go.Region, k: float, tol: float) -> np.ndarray:
    outline = region.outline
    arcs = region.arc_centers
    if not outline:
        return np.empty((0, 2))
    if not arcs or all(a is None for a in arcs):
        pts = np.asarray(outline, dtype=float) * k
    else:
        chunks: list[np.ndarray] = [np.asarray([outline[0]], dtype=float) * k]
        for j in range(1, len(outline)):
            arc = arcs[j - 1] if j - 1 < len(arcs) else None
            if arc is not None and arc[0] is not None and arc[1][0] is not None:
                (x1, y1), (x2, y2) = outline[j - 1], outline[j]
                cx, cy = arc[1]
                pts_arc = arc_points(x1 * k, y1 * k, x2 * k, y2 * k, cx * k, cy * k, arc[0], tol)
                chunks.append(pts_arc[1:])
            else:
                chunks.append(np.asarray([outline[j]], dtype=float) * k)
        pts = np.concatenate(chunks)
    if len(pts) and (pts[0] != pts[-1]).any():
        pts = np.vstack((pts, pts[:1]))
    return pts


def _fix_region(poly: BaseGeometry) -> BaseGeometry:
    """A contour with cut-ins or self-touching points -> the area it encloses.

    Gerber spec section 4.10.3: cut-ins (the contour running along itself to reach a hole) are
    allowed; the enclosed area is what is dark.  GEOS's buffer(0) resolves such rings to the
    polygon with its holes.
    """
    fixed = shapely.buffer(poly, 0)
    if fixed.is_empty and not poly.is_empty:
        fixed = shapely.make_valid(poly)
    return polygonal(fixed)


# --------------------------------------------------------------------------------------------
# polarity and unions
# --------------------------------------------------------------------------------------------

def _polygon_parts(geoms: np.ndarray) -> np.ndarray:
    """The non-empty parts of the geometries; single polygons are kept as they are (get_parts
    would copy every one of them, doubling the memory of a large layer for a moment)."""
    geoms = geoms[~shapely.is_empty(geoms)]
    multi = shapely.get_type_id(geoms) >= 4
    if not multi.any():
        return geoms
    parts = shapely.get_parts(geoms[multi])
    return np.concatenate((geoms[~multi], parts[~shapely.is_empty(parts)]))


#: geometries prepared at one time by :func:`_contacts` (each holds an index of its edges)
PREPARE_CHUNK = 32


#: geometries queried against the tree at one time by :func:`_contacts`
QUERY_CHUNK = 256


def _box_pairs(arr: np.ndarray) -> tuple[np.ndarray, np.ndarray] | None:
    """Pairs (i < j) whose boxes overlap, or None when there are far more than a layer has.

    Objects stacked on one another make every pair a candidate (20 000 coincident flashes: 2e8
    pairs, gigabytes): the query runs in chunks and gives up past a budget that grows with the
    input, so that the caller can fall back to one plain union (which GEOS does in n log n).
    """
    tree = shapely.STRtree(arr)
    budget = 32 * len(arr) + 1_000_000
    lefts: list[np.ndarray] = []
    rights: list[np.ndarray] = []
    total = 0
    for start in range(0, len(arr), QUERY_CHUNK):
        inp, hit = tree.query(arr[start:start + QUERY_CHUNK])
        inp = inp + start
        keep = inp < hit
        lefts.append(inp[keep])
        rights.append(hit[keep])
        total += int(keep.sum())
        if total > budget:
            return None
    return np.concatenate(lefts), np.concatenate(rights)


def _contacts(arr: np.ndarray) -> tuple[np.ndarray, np.ndarray] | None:
    """Pairs (i < j) of geometries that intersect or touch.

    Boxes first (STRtree), then an exact test per pair, vectorised, with the geometry that takes
    part in more pairs on the left and prepared (a pour against the pads in its box), at most
    ``PREPARE_CHUNK`` prepared at once. Measured on a panel of the demo board (207 copies): the
    tree's own predicate query 2.7 s, unprepared tests 0.8 s, all prepared 0.3 s but +137 MB held
    at once; on corpus board b01 unprepared tests cost 0.7 s against a pour.
    """
    pairs = _box_pairs(arr)
    if pairs is None:
        return None
    left, right = pairs
    if len(left) == 0:
        return left, right
    degree = np.bincount(np.concatenate((left, right)), minlength=len(arr))
    swap = degree[right] > degree[left]
    a, b = np.where(swap, right, left), np.where(swap, left, right)
    hit = np.zeros(len(a), dtype=bool)
    busy = np.unique(a[degree[a] >= 4])
    busy = busy[~shapely.is_prepared(arr[busy])]  # leave geometries prepared elsewhere as they are
    rank = np.searchsorted(busy, a)
    in_busy = busy[np.minimum(rank, len(busy) - 1)] == a if len(busy) else np.zeros(len(a), dtype=bool)
    lone = np.flatnonzero(~in_busy)
    hit[lone] = shapely.intersects(arr[a[lone]], arr[b[lone]])
    sel = np.flatnonzero(in_busy)
    chunk_of = rank[sel] // PREPARE_CHUNK
    order = np.argsort(chunk_of, kind="stable")
    sel, chunk_of = sel[order], chunk_of[order]
    for part in np.split(sel, np.flatnonzero(np.diff(chunk_of)) + 1):
        if len(part) == 0:
            continue
        chunk = np.unique(a[part])
        shapely.prepare(arr[chunk])
        hit[part] = shapely.intersects(arr[a[part]], arr[b[part]])
        shapely.destroy_prepared(arr[chunk])  # the features' own geometries: leave them as found
    return left[hit], right[hit]


def _union(geoms: list[BaseGeometry]) -> BaseGeometry:
    """Union of many polygons: union only the pieces that touch, each connected group on its own.

    The inputs are split into their polygons first (a net's image or a panel is mostly pieces far
    apart). An STRtree finds the pairs of pieces that really intersect or touch (exact predicate,
    not only overlapping bounding boxes: a pour's box holds every pad inside it), each connected
    group is unioned on its own (small overlays) and the results, pairwise disjoint, are put
    together as one MultiPolygon without a further overlay. The cost grows with the pieces and
    their contacts, not with the square of the layer.
    """
    if not geoms:
        return EMPTY
    if len(geoms) == 1:
        return geoms[0]
    arr = _polygon_parts(np.array(geoms, dtype=object))
    if len(arr) == 0:
        return EMPTY
    if len(arr) == 1:
        return arr[0]
    contacts = _contacts(arr)
    if contacts is None:  # objects stacked on one another: one plain union is the cheaper way
        return shapely.union_all(arr)
    left, right = contacts
    if len(left) == 0:
        polys = arr
    else:
        n_groups, labels = connected_components(
            coo_matrix((np.ones(len(left), dtype=np.int8), (left, right)), shape=(len(arr), len(arr))),
            directed=False,
        )
        if n_groups == 1:
            return shapely.union_all(arr)
        counts = np.bincount(labels, minlength=n_groups)
        alone = counts[labels] == 1
        order = np.argsort(labels, kind="stable")
        order = order[~alone[order]]
        splits = np.flatnonzero(np.diff(labels[order])) + 1
        merged = [shapely.union_all(arr[group]) for group in np.split(order, splits)]
        merged_arr = np.empty(len(merged), dtype=object)
        merged_arr[:] = merged
        polys = np.concatenate((arr[alone], _polygon_parts(merged_arr)))
    polys = polys[shapely.get_type_id(polys) == 3]  # polygons only (a union of areas is areas)
    if len(polys) == 0:
        return EMPTY
    if len(polys) == 1:
        return polys[0]
    return shapely.multipolygons(polys)


#: a dark object whose box meets at least this many clear pieces is prepared for the contact
#: tests (a 200 000-vertex region over 40 000 clear flashes: 30 s unprepared)
PREPARE_FOR = 16


#: a dark polygon cut by at least this many clear objects goes through :func:`_cut_many`
MANY_CUTS = 16


def _cut_many(target: BaseGeometry, cutters: np.ndarray) -> BaseGeometry:
    """A polygon less the union of many clear shapes, mostly without an overlay.

    A clear piece that lies strictly inside the polygon (no contact with its outline or its
    holes), has no hole itself and touches no other piece removes exactly its own area as a new
    hole: such pieces (the openings of a hatch, clearances in a pour) are added as interior rings
    directly, which is the same set as the overlay gives but costs no noding of the whole pour.
    Only the other pieces go through a difference.
    """
    parts = _polygon_parts(cutters)
    if len(parts) == 0:
        return target
    shapely.prepare(target)
    free = (shapely.get_type_id(parts) == 3) & (shapely.get_num_interior_rings(parts) == 0)
    free &= shapely.contains_properly(target, parts)
    contacts = _contacts(parts)
    if contacts is None:  # cut pieces stacked on one another: none is free, one difference
        return shapely.difference(target, _union(list(parts)))
    left, right = contacts
    free[left] = False
    free[right] = False
    if not free.any():
        return shapely.difference(target, _union(list(parts)))
    rings = shapely.get_rings(target)  # exterior first, then the holes
    out = shapely.polygons(rings[0], holes=np.concatenate((rings[1:], shapely.get_exterior_ring(parts[free]))))
    rest = parts[~free]
    if len(rest):
        out = shapely.difference(out, _union(list(rest)))
    return out


#: pieces kept in the short unsorted tail of :class:`_ClearPieces` before they get a tree
INDEX_TAIL = 64


class _ClearPieces:
    """The clear copper that comes later in the file, as pieces, found by their boxes.

    Pieces are added one at a time and retired when merged into a bigger one, so a static
    STRtree will not do: the pieces live in a few trees of roughly doubling sizes (a tree is
    rebuilt with the next smaller ones, without the retired pieces, when a new one is as large;
    the logarithmic method) plus a short tail of at most ``INDEX_TAIL`` scanned directly. Adding
    costs O(log n) amortised rebuilds, a query O(log n) tree queries.
    """

    def __init__(self) -> None:
        self.geoms: list[BaseGeometry] = []
        self._alive = np.zeros(64, dtype=bool)
        #: pieces a dark object has met already (for :class:`PolarityWorkBudget`)
        self.met = np.zeros(64, dtype=bool)
        self._trees: list[tuple[shapely.STRtree, np.ndarray]] = []
        self._tail: list[int] = []
        self._tail_bounds: list[np.ndarray] = []

    def add(self, geom: BaseGeometry) -> int:
        i = len(self.geoms)
        self.geoms.append(geom)
        if i >= len(self._alive):
            self._alive = np.concatenate((self._alive, np.zeros(len(self._alive), dtype=bool)))
            self.met = np.concatenate((self.met, np.zeros(len(self.met), dtype=bool)))
        self._alive[i] = True
        self._tail.append(i)
        self._tail_bounds.append(shapely.bounds(geom))
        if len(self._tail) >= INDEX_TAIL:
            ids = np.array(self._tail, dtype=np.int64)
            self._tail, self._tail_bounds = [], []
            ids = ids[self._alive[ids]]
            while self._trees and len(self._trees[-1][1]) <= 2 * len(ids):
                older = self._trees.pop()[1]
                ids = np.concatenate((older[self._alive[older]], ids))
            if len(ids):
                self._trees.append((shapely.STRtree(np.array([self.geoms[j] for j in ids], dtype=object)), ids))
        return i

    def retire(self, ids: np.ndarray) -> None:
        self._alive[ids] = False
        for j in ids:
            self.geoms[int(j)] = EMPTY  # its area lives on in the piece it was merged into

    def query(self, geom: BaseGeometry) -> np.ndarray:
        """Live pieces whose boxes meet the box of ``geom``, oldest first."""
        found: list[np.ndarray] = []
        for k, (tree, ids) in enumerate(self._trees):
            hit = ids[tree.query(geom)]
            live = hit[self._alive[hit]]
            if len(hit) > 32 and 2 * len(live) < len(hit):  # mostly retired: rebuild without them
                keep = ids[self._alive[ids]]
                self._trees[k] = (shapely.STRtree(np.array([self.geoms[j] for j in keep], dtype=object)), keep)
            found.append(np.sort(live))
        if self._tail:
            b = np.array(self._tail_bounds)
            x0, y0, x1, y1 = shapely.bounds(geom)
            near = (b[:, 0] <= x1) & (b[:, 2] >= x0) & (b[:, 1] <= y1) & (b[:, 3] >= y0)
            tail = np.array(self._tail, dtype=np.int64)[near]
            found.append(tail[self._alive[tail]])
        return np.concatenate(found) if found else np.empty(0, dtype=np.int64)


#: up to this many pieces, :func:`_touching_groups` tests every pair directly
FEW_PIECES = 16


def _touching_groups(geoms: np.ndarray) -> list[np.ndarray]:
    """Indices of ``geoms`` in groups that touch one another (connected by contact)."""
    if len(geoms) == 1:
        return [np.zeros(1, dtype=np.int64)]
    if len(geoms) <= FEW_PIECES:  # all pairs at once; labels spread along contacts until stable
        touch = shapely.intersects(geoms[:, None], geoms[None, :])
        labels = np.arange(len(geoms))
        while True:
            spread = np.where(touch, labels[None, :], len(geoms)).min(axis=1)
            if (spread == labels).all():
                break
            labels = spread
        order = np.argsort(labels, kind="stable")
        return np.split(order, np.flatnonzero(np.diff(labels[order])) + 1)
    contacts = _contacts(geoms)
    if contacts is None:  # stacked on one another: one group
        return [np.arange(len(geoms))]
    left, right = contacts
    if len(left) == 0:
        return [np.array([j]) for j in range(len(geoms))]
    _, labels = connected_components(
        coo_matrix((np.ones(len(left), dtype=np.int8), (left, right)), shape=(len(geoms), len(geoms))),
        directed=False,
    )
    order = np.argsort(labels, kind="stable")
    return np.split(order, np.flatnonzero(np.diff(labels[order])) + 1)


def _later_clear_candidates(features: list[Feature], dark_pos: np.ndarray, clear_pos: np.ndarray) -> np.ndarray:
    """Which dark objects have a later clear object whose box meets theirs (a mask over dark_pos).

    One vectorised box query, in chunks; past a budget that grows with the input (objects stacked
    on one another make every pair a candidate) the rest are all taken as candidates: the sweep
    sorts them out at no more than its usual cost.
    """
    tree = shapely.STRtree(np.array([features[i].geometry for i in clear_pos], dtype=object))
    dark_geoms = np.array([features[i].geometry for i in dark_pos], dtype=object)
    mask = np.zeros(len(dark_pos), dtype=bool)
    budget = 32 * (len(dark_pos) + len(clear_pos)) + 100_000
    total = 0
    for start in range(0, len(dark_pos), QUERY_CHUNK):
        d, c = tree.query(dark_geoms[start:start + QUERY_CHUNK])
        later = clear_pos[c] > dark_pos[d + start]
        mask[d[later] + start] = True
        total += len(d)
        if total > budget:
            mask[start + QUERY_CHUNK:] = True
            break
    return mask


def effective_dark(features: list[Feature], *,
                   limits: Limits = DEFAULT_LIMITS) -> list[tuple[Feature, BaseGeometry]]:
    """Each dark feature with what survives of it once every later clear object is applied.

    A point is dark when the last object covering it is dark (Gerber spec section 4.9.2,
    polarity in file order). So each dark object loses exactly the clear objects after it.

    A sweep backwards through the file keeps the clear copper seen so far (all of it later than
    the object at hand) as pieces in a spatial index. A dark object is cut by the pieces it
    touches; pieces it touches that also touch each other are merged into one (their union is
    what the cut needs anyway), so clear objects stacked on one another become one piece and
    each dark object under the stack meets one piece, not every clear object after it: the
    cost stays near linear however often the polarity alternates (it grew with the square, and
    with the cube for stacked objects, when each dark object unioned all of its later clear
    objects afresh). Pieces that touch nothing else stay apart, and a polygon cut by many of
    them (the openings of a hatch, clearances in a pour) goes through :func:`_cut_many`.
    Only dark objects whose box meets a later clear object's box take part in the sweep.

    Dark and clear objects alternating over one another, each shifted a little, still make a
    clear piece that grows with the file and that every later dark object meets: the sweep's
    work is counted (:class:`PolarityWorkBudget`) and refused past
    ``limits.max_polarity_work`` with a LimitError at the line of the object being processed.
    """
    dark_pos = np.array([i for i, f in enumerate(features) if f.polarity == "dark" and not f.geometry.is_empty],
                        dtype=np.int64)
    clear_pos = np.array([i for i, f in enumerate(features) if f.polarity == "clear" and not f.geometry.is_empty],
                         dtype=np.int64)
    if len(dark_pos) == 0:
        return []
    result: dict[int, BaseGeometry] = {int(i): features[int(i)].geometry for i in dark_pos}
    if len(clear_pos) == 0:
        return [(features[i], g) for i, g in result.items()]
    swept = dark_pos[_later_clear_candidates(features, dark_pos, clear_pos)]
    order = np.sort(np.concatenate((swept, clear_pos)))[::-1]
    budget = PolarityWorkBudget(limits.max_polarity_work,
                                features[int(order[0])].source.file if len(order) else "")
    pieces = _ClearPieces()
    for i in order.tolist():
        geom = features[i].geometry
        if features[i].polarity == "clear":
            pieces.add(geom)
            continue
        near = pieces.query(geom)
        if len(near) == 0:
            continue
        near_geoms = np.array([pieces.geoms[j] for j in near], dtype=object)
        # work counted: clear pieces met again (see PolarityWorkBudget), each with the object
        again = pieces.met[near]
        pieces.met[near] = True
        if again.any():
            own = int(shapely.get_num_coordinates(geom))
            budget.add(int(shapely.get_num_coordinates(near_geoms[again]).sum()) + own * int(again.sum()),
                       features[i].source)
        prepared_here = len(near) >= PREPARE_FOR and not shapely.is_prepared(geom)
        if prepared_here:  # one object against many pieces: unprepared, each test walks all its edges
            shapely.prepare(geom)
        touch = shapely.intersects(geom, near_geoms)
        if not touch.any():
            if prepared_here:
                shapely.destroy_prepared(geom)
            continue
        near, near_geoms, again = near[touch], near_geoms[touch], again[touch]
        if len(near) > 1:  # pieces that touch one another become one (connected: one plain union)
            merged: list[BaseGeometry] = []
            for group in _touching_groups(near_geoms):
                if len(group) == 1:
                    merged.append(near_geoms[group[0]])
                    continue
                budget.add(int(shapely.get_num_coordinates(near_geoms[group[again[group]]]).sum()),
                           features[i].source)
                piece = shapely.union_all(near_geoms[group])
                pieces.retire(near[group])
                new = pieces.add(piece)  # (add may grow the arrays: index after it)
                pieces.met[new] = True  # met by this object: the next one to meet it counts it
                merged.append(piece)
            near_geoms = np.empty(len(merged), dtype=object)
            near_geoms[:] = merged
        if len(near_geoms) >= MANY_CUTS and shapely.get_type_id(geom) == 3:
            result[i] = _cut_many(geom, near_geoms)
        elif len(near_geoms) == 1:
            result[i] = shapely.difference(geom, near_geoms[0])
        else:  # pieces apart from one another: their parts make a valid MultiPolygon as they are
            parts = _polygon_parts(near_geoms)
            parts = parts[shapely.get_type_id(parts) == 3]
            result[i] = shapely.difference(geom, shapely.multipolygons(parts))
        if prepared_here:
            shapely.destroy_prepared(geom)  # the feature's own geometry: leave it as found
    return [(features[i], g) for i, g in result.items() if not g.is_empty]


def images_by_net(features: list[Feature], *,
                  limits: Limits = DEFAULT_LIMITS) -> dict[str | None, BaseGeometry]:
    """Final dark image of each net (key None: objects without a net).

    Polarity is applied in file order: a clear object cuts what came before it in every net's
    image (Gerber spec section 4.9.2), so a clear object with a net still clears all nets.
    Nets whose image ends empty are left out. ``limits`` bounds the polarity work
    (:func:`effective_dark`).
    """
    groups: dict[str | None, list[BaseGeometry]] = defaultdict(list)
    for f, g in effective_dark(features, limits=limits):
        groups[f.net].append(g)
    images: dict[str | None, BaseGeometry] = {}
    for net in list(groups):
        image = _union(groups.pop(net))  # each net's pieces freed as soon as its image is made
        if not image.is_empty:
            images[net] = image
    return images


def dark_from_nets(by_net: dict[str | None, BaseGeometry]) -> BaseGeometry:
    """The whole layer's dark image from the per-net images (their union)."""
    return _union([g for g in by_net.values() if not g.is_empty]) if by_net else GeometryCollection()
