"""Surface meshes for the boundary-element solver: flat conductors and a few closed bodies.

A small graded mesher of our own on shapely/numpy (no external mesher):

* flat copper (any shapely polygon, holes allowed) is covered by a quadtree of square cells,
  refined where a cell is close to the polygon's boundary: the surface charge density of a thin
  conductor grows like ``d^-1/2`` toward its edges, so panels shrink toward the edges
  (``h_min`` at the edge, growing by ``grading`` per unit distance up to ``h_max``).  Cells
  wholly inside stay squares; cells cut by the boundary become the exact intersection,
  kept as one panel when it has at most eight corners and holds its centroid, otherwise split by a
  constrained Delaunay triangulation (shapely).
* :func:`estimate_panels` says about how many panels a flat conductor will get, without meshing
  it (the area integral of the quadtree's own leaf sizes, plus the edge rows and the cells the
  outline cuts), so that a panel budget can be checked before the work.
* closed bodies: a flat-ended cylinder (the finger), a sphere (geodesic, from an icosahedron)
  and a box (each face meshed as a flat polygon, graded toward its edges).

Panels are returned as arrays of shape (n, 8, 3) in metres; fewer corners repeat the last one.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import shapely
from shapely.geometry import Polygon, box
from shapely.geometry.base import BaseGeometry


@dataclass(frozen=True, slots=True)
class MeshSpec:
    """Panel sizes for a flat conductor (metres)."""

    h_min: float  # panel size at the edges
    h_max: float  # panel size far inside
    grading: float = 0.35  # growth of the panel size per unit distance from the edge

    def __post_init__(self) -> None:
        if not (self.h_min > 0 and self.h_max >= self.h_min and self.grading > 0):
            raise ValueError("mesh sizes must be positive with h_max >= h_min")

    def refined(self, factor: float) -> "MeshSpec":
        return MeshSpec(self.h_min / factor, self.h_max / factor, self.grading)


def _quad_or_tris(piece: Polygon) -> list[np.ndarray]:
    """One panel of <= 8 corners (its centroid inside it), or triangles."""
    if piece.is_empty or piece.area <= 0:
        return []
    piece = shapely.orient_polygons(piece)
    coords = np.asarray(piece.exterior.coords)[:-1]
    if not piece.interiors and 3 <= len(coords) <= 8:
        if len(coords) == 3 or piece.contains(piece.centroid):
            return [coords]
    tris = shapely.constrained_delaunay_triangles(piece)
    out = []
    for t in shapely.get_parts(tris):
        c = np.asarray(t.exterior.coords)[:-1]
        if len(c) == 3 and t.area > 0:
            out.append(c)
    return out


def _tri_area(c: np.ndarray) -> float:
    x, y = c[:, 0], c[:, 1]
    return 0.5 * abs(float(np.dot(x, np.roll(y, -1)) - np.dot(y, np.roll(x, -1))))


def _has_area(geom: BaseGeometry) -> bool:
    """Is there anything to mesh?  An invalid polygon is a bug upstream: ValueError with GEOS's reason."""
    if geom.is_empty:
        return False
    if not geom.is_valid:
        raise ValueError(f"invalid polygon: {shapely.is_valid_reason(geom)}")
    return bool(geom.area > 0)


def mesh_polygon(geom: BaseGeometry, spec: MeshSpec, h_max_at: Callable[[np.ndarray, np.ndarray], tuple[np.ndarray, np.ndarray]] | None = None) -> list[np.ndarray]:
    """Graded panels (2-D corner arrays) covering a polygon or multipolygon, in its own units.

    ``h_max_at(x, y) -> (h_edge, h_max)``: optional local panel sizes (finer near a sensor).
    """
    if not _has_area(geom):
        return []
    boundary = geom.boundary
    shapely.prepare(geom)
    shapely.prepare(boundary)
    x0, y0, x1, y1 = geom.bounds
    # cell sizes are h_min * 2^k whatever the bounds, so a smaller region never meshes finer
    s0 = spec.h_min * 2.0 ** int(np.ceil(np.log2(max(spec.h_max / spec.h_min, 1.0))))
    n_x = max(1, int(np.ceil((x1 - x0) / s0)))
    n_y = max(1, int(np.ceil((y1 - y0) / s0)))
    gx, gy = np.meshgrid(x0 + (np.arange(n_x) + 0.5) * s0, y0 + (np.arange(n_y) + 0.5) * s0)
    cx, cy = gx.ravel(), gy.ravel()
    s = np.full(cx.shape, s0)
    leaves_x: list[np.ndarray] = []
    leaves_y: list[np.ndarray] = []
    leaves_s: list[np.ndarray] = []
    leaves_d: list[np.ndarray] = []
    for _ in range(60):
        if cx.size == 0:
            break
        pts = shapely.points(cx, cy)
        d = shapely.distance(pts, boundary)
        half_diag = 0.7072 * s
        inside = shapely.contains(geom, pts)
        keep = (d <= half_diag) | inside
        cx, cy, s, d = cx[keep], cy[keep], s[keep], d[keep]
        if h_max_at is None:
            target = np.minimum(spec.h_max, spec.h_min + spec.grading * np.maximum(d - 0.7072 * s, 0.0))
        else:
            local_min, local_max = h_max_at(cx, cy)
            # local sizes below spec.h_min are taken as given (a finger's rim close over copper:
            # sensors._mesh_sizes); spec.h_min stays the edge band's width
            target = np.minimum(np.minimum(spec.h_max, local_max), local_min + spec.grading * np.maximum(d - 0.7072 * s, 0.0))
            target = np.maximum(target, local_min)
        split = s > target * 1.0001
        split &= s > spec.h_min * 1.5 if h_max_at is None else s > local_min * 1.5
        leaves_x.append(cx[~split])
        leaves_y.append(cy[~split])
        leaves_s.append(s[~split])
        leaves_d.append(d[~split])
        q = s[split] / 4.0
        bx, by = cx[split], cy[split]
        cx = np.concatenate([bx - q, bx + q, bx - q, bx + q])
        cy = np.concatenate([by - q, by - q, by + q, by + q])
        s = np.concatenate([s[split] / 2.0] * 4)
    lx, ly, ls, ld = (np.concatenate(a) for a in (leaves_x, leaves_y, leaves_s, leaves_d))
    whole = ld > 0.7072 * ls  # inside and not touching the boundary
    panels: list[np.ndarray] = []
    hx, hy, hs = lx[whole], ly[whole], ls[whole] / 2.0
    sq = np.stack(
        [np.stack([hx - hs, hy - hs], 1), np.stack([hx + hs, hy - hs], 1), np.stack([hx + hs, hy + hs], 1), np.stack([hx - hs, hy + hs], 1)],
        axis=1,
    )
    panels.extend(list(sq))
    cut = ~whole
    if np.any(cut):
        hs = ls[cut] / 2.0
        boxes = shapely.box(lx[cut] - hs, ly[cut] - hs, lx[cut] + hs, ly[cut] + hs)
        pieces = shapely.intersection(boxes, geom)
        for cell, piece, h in zip(boxes, pieces, hs):
            if piece.is_empty:
                continue
            if shapely.equals(piece, cell):
                c = np.asarray(cell.exterior.coords)[:-1]
                panels.append(c[::-1] if shapely.is_ccw(cell.exterior) is False else c)
                continue
            for part in shapely.get_parts(piece):
                if isinstance(part, Polygon) and part.area > 1e-4 * (2 * h) ** 2:
                    part = part.simplify(2e-3 * h, preserve_topology=True)
                    panels.extend(t for t in _quad_or_tris(part) if _tri_area(t) > 1e-4 * (2 * h) ** 2)
    return panels


#: :func:`estimate_panels` over the real panel count stays within these factors (low, high): checked
#: on a disk, a square, a ring and an interdigitated comb (tests/physics/test_mesh.py) and on the demo
#: boards (tests/physics/test_sensors.py); on every sensor of the eight corpus boards, all four mesh
#: coarsenings of sensors.build_model (388 meshes, up to 30 000 panels), it ranged 0.76 to 1.63
ESTIMATE_FACTORS = (0.6, 2.0)
#: panel-size samples per polygon in :func:`estimate_panels` (bounds its cost whatever the area)
ESTIMATE_SAMPLES = 4000
#: panels per band width of edge length for the three rows of edge panels together: each row's
#: pieces meet one or two grid cells per band width along an axis-parallel edge, more along a
#: slanted one (the rows are 0.08, 0.22 and 0.7 band widths thick)
BAND_PANELS_PER_WIDTH = 5.0
#: panels per leaf size of boundary length for the quadtree cells the boundary cuts (the area
#: term counts such a cell by its covered fraction, the mesher as at least one panel)
CUT_PANELS_PER_SIZE = 0.7
#: a cut piece with more than 8 corners is split into (corners - 2) triangles: with ``v`` outline
#: vertices in a cell (about the cell size over the vertex spacing) a piece has about v + 4 corners;
#: counted as CUT_PANELS_PER_SIZE + VERTEX_PANELS * max(0, v - VERTEX_FREE) panels per cell (a
#: smooth stand-in for the step at 8 corners, since the vertices per cell vary from cell to cell)
VERTEX_FREE = 2.5
VERTEX_PANELS = 1.5
#: the same for the first row of edge panels, whose pieces have the outline's vertices on both
#: sides (about 2 v + 4 corners): BAND_VERTEX_PANELS * max(0, v - BAND_VERTEX_FREE) more per band width
BAND_VERTEX_FREE = 1.5
BAND_VERTEX_PANELS = 2.4

_SizeFn = Callable[[np.ndarray, np.ndarray], tuple[np.ndarray, np.ndarray]]


def _leaf_sizes(d: np.ndarray, local_min: np.ndarray, local_max: np.ndarray, spec: MeshSpec, s0: float) -> np.ndarray:
    """Size of the quadtree leaf the mesher settles at, for cells at distance ``d`` from the boundary.

    The split rule of :func:`mesh_polygon`, applied to one point per cell (its own distance
    standing in for the cell centre's).
    """
    s = np.full(d.shape, s0)
    for _ in range(60):
        target = np.minimum(np.minimum(spec.h_max, local_max), local_min + spec.grading * np.maximum(d - 0.7072 * s, 0.0))
        target = np.maximum(target, local_min)
        split = (s > target * 1.0001) & (s > local_min * 1.5)
        if not np.any(split):
            break
        s = np.where(split, s / 2.0, s)
    return s


def _local_sizes(x: np.ndarray, y: np.ndarray, spec: MeshSpec, h_max_at: _SizeFn | None) -> tuple[np.ndarray, np.ndarray]:
    if h_max_at is None:
        return np.full(x.shape, spec.h_min), np.full(x.shape, spec.h_max)
    lo, hi = h_max_at(x, y)
    return np.asarray(lo, dtype=float) + np.zeros(x.shape), np.asarray(hi, dtype=float) + np.zeros(x.shape)


def _boundary_samples(geom: BaseGeometry, ds: float, inward: float = 0.0) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Points along the outline, each standing for a piece of it: (x, y, piece length, length of
    the outline segment the piece lies on). Segments longer than ``ds`` are cut into pieces; the
    points lie ``inward`` from the outline, on the polygon's side."""
    rings = shapely.get_parts(shapely.get_parts(shapely.orient_polygons(geom).boundary))
    xy, ring = shapely.get_coordinates(rings, return_index=True)
    if len(xy) < 2:
        return np.empty(0), np.empty(0), np.empty(0), np.empty(0)
    a, b = xy[:-1], xy[1:]
    same = ring[:-1] == ring[1:]
    a, b = a[same], b[same]
    seg = np.hypot(b[:, 0] - a[:, 0], b[:, 1] - a[:, 1])
    keep = seg > 0
    a, b, seg = a[keep], b[keep], seg[keep]
    n = np.maximum(1, np.ceil(seg / ds)).astype(int)
    if n.sum() > 8 * ESTIMATE_SAMPLES:  # an outline of very many long segments: coarser pieces
        n = np.maximum(1, np.ceil(seg / (ds * n.sum() / (8 * ESTIMATE_SAMPLES)))).astype(int)
    k = np.repeat(np.arange(len(seg)), n)
    first = np.repeat(np.cumsum(n) - n, n)
    t = (np.arange(len(k)) - first + 0.5) / n[k]
    dx, dy = b[k, 0] - a[k, 0], b[k, 1] - a[k, 1]
    # exteriors run counter-clockwise and holes clockwise: the polygon lies to the left
    x = a[k, 0] + t * dx - inward * dy / seg[k]
    y = a[k, 1] + t * dy + inward * dx / seg[k]
    return x, y, seg[k] / n[k], seg[k]


def _cut_cells(length: np.ndarray, parent: np.ndarray, size: np.ndarray) -> float:
    """Panels of the cells (of ``size``) along outline pieces: one or more per cell (VERTEX_* above)."""
    v = size / parent
    return float(np.sum(length / size * (CUT_PANELS_PER_SIZE + VERTEX_PANELS * np.maximum(v - VERTEX_FREE, 0.0))))


def _quadtree_estimate(region: BaseGeometry, spec: MeshSpec, h_max_at: _SizeFn | None) -> float:
    """Panels of :func:`mesh_polygon` over ``region``: the integral of 1 / leaf size^2 over its area
    (a grid of about ``ESTIMATE_SAMPLES`` points, or finer than a third of ``h_min``) plus the cells
    its outline cuts."""
    if region.is_empty or region.area <= 0:
        return 0.0
    x0, y0, x1, y1 = region.bounds
    area = region.area
    step = max(spec.h_min / 3.0, np.sqrt(area / ESTIMATE_SAMPLES), np.sqrt(max((x1 - x0) * (y1 - y0), area) / (4 * ESTIMATE_SAMPLES)))
    s0 = spec.h_min * 2.0 ** int(np.ceil(np.log2(max(spec.h_max / spec.h_min, 1.0))))
    gx, gy = np.meshgrid(np.arange(x0 + step / 2, x1, step), np.arange(y0 + step / 2, y1, step))
    px, py = gx.ravel(), gy.ravel()
    shapely.prepare(region)
    inside = shapely.contains_xy(region, px, py)
    px, py = px[inside], py[inside]
    total = 0.0
    if px.size:
        boundary = region.boundary
        shapely.prepare(boundary)
        d = shapely.distance(shapely.points(px, py), boundary)
        lo, hi = _local_sizes(px, py, spec, h_max_at)
        s = _leaf_sizes(d, lo, hi, spec, s0)
        total += area / px.size * float(np.sum(1.0 / s**2))  # scaled to the exact area
    # the mesher simplifies cut pieces by 2e-3 of a half cell: vertices closer than that do not count
    bx, by, piece, parent = _boundary_samples(region.simplify(1e-3 * spec.h_min, preserve_topology=True), spec.h_min / 2.0)
    if bx.size:
        lo, hi = _local_sizes(bx, by, spec, h_max_at)
        total += _cut_cells(piece, parent, _leaf_sizes(np.zeros(bx.shape), lo, hi, spec, s0))
    return total


def estimate_panels(
    geom: BaseGeometry,
    spec: MeshSpec,
    h_max_at: _SizeFn | None = None,
    band_zone: BaseGeometry | None = None,
    banded: bool = True,
) -> float:
    """About how many panels :func:`mesh_polygon_banded` (or, not ``banded``, :func:`mesh_polygon`)
    makes of ``geom``, without meshing: for checking a panel budget before the work. Its cost is
    bounded by ``ESTIMATE_SAMPLES`` area samples and the outline's vertex count, whatever the
    area. tests/physics/test_mesh.py states and checks its factors to the real count.

    Edge rows (``banded``, within ``band_zone``): ``BAND_PANELS_PER_WIDTH`` per band width of
    edge length, and more where the outline's vertices are denser than the cells (the first row
    is cut like the quadtree's cells, with a band-width cell); quadtree: the area integral of
    1 / leaf size^2, the leaf sizes by the mesher's own rule (:func:`_leaf_sizes`), plus the
    cells the outline cuts (:func:`_cut_cells`).
    """
    if geom.is_empty or geom.area <= 0:
        return 0.0
    if not geom.is_valid:
        raise ValueError(f"invalid polygon: {shapely.is_valid_reason(geom)}")
    if not banded:
        return _quadtree_estimate(geom, spec, h_max_at)
    w = spec.h_min
    band = shapely.difference(geom, geom.buffer(-w, quad_segs=8))
    if band_zone is not None:
        band = shapely.intersection(band, band_zone)
    if band.is_empty or band.area <= 0:
        return _quadtree_estimate(geom, spec, h_max_at)
    # the first row's pieces are simplified by 0.03 x 0.08 of a band width (mesh_polygon_banded)
    bx, by, piece, parent = _boundary_samples(geom.simplify(0.0024 * w, preserve_topology=True), w / 2.0, inward=w / 2.0)
    if band_zone is not None and bx.size:
        shapely.prepare(band_zone)
        inside = shapely.contains_xy(band_zone, bx, by)
        piece, parent = piece[inside], parent[inside]
    v = w / parent
    edge = float(np.sum(piece / w * (BAND_PANELS_PER_WIDTH + BAND_VERTEX_PANELS * np.maximum(v - BAND_VERTEX_FREE, 0.0))))
    rest = shapely.difference(geom, band)
    rest = shapely.union_all([p for p in shapely.get_parts(rest) if isinstance(p, Polygon) and p.area > 1e-6 * w * w] or [Polygon()])
    if not rest.is_empty and not rest.is_valid:
        rest = shapely.union_all([p for p in shapely.get_parts(shapely.make_valid(rest)) if isinstance(p, Polygon)] or [Polygon()])
    return edge + _quadtree_estimate(rest, spec, h_max_at)


def panels_from_2d(panels_2d: list[np.ndarray], origin: np.ndarray, e1: np.ndarray, e2: np.ndarray) -> np.ndarray:
    """Map 2-D panels into 3-D through a plane ``origin + u e1 + v e2``; returns (n, 8, 3)."""
    out = np.empty((len(panels_2d), 8, 3))
    for i, p in enumerate(panels_2d):
        q = p if len(p) == 8 else np.vstack([p] + [p[-1:]] * (8 - len(p)))
        out[i] = origin[None, :] + q[:, :1] * e1[None, :] + q[:, 1:2] * e2[None, :]
    return out


def flat_panels(
    geom: BaseGeometry,
    z: float,
    spec: MeshSpec,
    scale: float = 1.0,
    h_max_at: Callable[[np.ndarray, np.ndarray], tuple[np.ndarray, np.ndarray]] | None = None,
    band_zone: BaseGeometry | None = None,
    banded: bool = True,
) -> np.ndarray:
    """Panels of a horizontal conductor at height z (geometry and ``h_max_at`` in units of ``scale`` metres)."""
    spec_units = MeshSpec(spec.h_min / scale, spec.h_max / scale, spec.grading)
    p2 = mesh_polygon_banded(geom, spec_units, h_max_at, band_zone) if banded else mesh_polygon(geom, spec_units, h_max_at)
    out = panels_from_2d(p2, np.array([0.0, 0.0, z]), np.array([scale, 0.0, 0.0]), np.array([0.0, scale, 0.0]))
    return out


def _graded_steps(length: float, h_start: float, h_max: float, growth: float, both_ends: bool) -> np.ndarray:
    """Break points along [0, length], fine at 0 (and at length when both_ends)."""
    if both_ends:
        half = _graded_steps(length / 2.0, h_start, h_max, growth, False)
        return np.concatenate([half, length - half[::-1][1:]])
    pts = [0.0]
    h = h_start
    while pts[-1] + h < length * 0.999:
        pts.append(pts[-1] + h)
        h = min(h * growth, h_max)
    if length - pts[-1] < 0.3 * h and len(pts) > 1:
        pts[-1] = length
    else:
        pts.append(length)
    return np.asarray(pts)


def cylinder_panels(
    x: float,
    y: float,
    z_bottom: float,
    radius: float,
    length: float,
    *,
    h_edge: float,
    h_max: float,
    n_theta: int | None = None,
    rim_band: float | None = None,
) -> np.ndarray:
    """A closed flat-ended cylinder (axis vertical), graded toward its bottom rim.

    ``rim_band``: the bottom face gets rows of thin panels of this total width along its rim
    (:func:`mesh_polygon_banded`, as the board's copper does), where the charge crowds when the
    bottom face comes close to copper; None: the graded quadtree alone.
    """
    if n_theta is None:
        n_theta = int(np.clip(np.ceil(2 * np.pi * radius / (1.5 * h_edge)), 16, 96))
    th = np.linspace(0.0, 2 * np.pi, n_theta + 1)
    ring = np.stack([radius * np.cos(th), radius * np.sin(th)], 1)
    disk = Polygon(ring[:-1])
    bottom_spec = MeshSpec(h_edge, max(h_edge, min(h_max, radius / 2.0)), 0.5)
    if rim_band is None:
        bottom = mesh_polygon(disk, bottom_spec)
    else:
        bottom = mesh_polygon_banded(disk, MeshSpec(rim_band, max(rim_band, bottom_spec.h_max), 0.5))
    top = mesh_polygon(disk, MeshSpec(min(h_max, radius / 2), min(h_max, radius / 2), 1.0))
    panels = [panels_from_2d(bottom, np.array([x, y, z_bottom]), np.array([1.0, 0, 0]), np.array([0, -1.0, 0]))]
    panels.append(panels_from_2d(top, np.array([x, y, z_bottom + length]), np.array([1.0, 0, 0]), np.array([0, 1.0, 0])))
    zs = z_bottom + _graded_steps(length, h_edge, h_max, 1.4, False)
    side = np.empty(((len(zs) - 1) * n_theta, 4, 3))
    k = 0
    for i in range(len(zs) - 1):
        for j in range(n_theta):
            a, b = ring[j], ring[j + 1]
            side[k] = [
                [x + a[0], y + a[1], zs[i]],
                [x + b[0], y + b[1], zs[i]],
                [x + b[0], y + b[1], zs[i + 1]],
                [x + a[0], y + a[1], zs[i + 1]],
            ]
            k += 1
    panels.append(np.concatenate([side, np.repeat(side[:, -1:], 4, axis=1)], axis=1))
    return np.concatenate(panels)


def sphere_panels(radius: float, level: int, centre: tuple[float, float, float] = (0.0, 0.0, 0.0)) -> np.ndarray:
    """Geodesic sphere: an icosahedron subdivided ``level`` times, corners on the sphere."""
    t = (1.0 + 5**0.5) / 2.0
    v = np.array(
        [[-1, t, 0], [1, t, 0], [-1, -t, 0], [1, -t, 0], [0, -1, t], [0, 1, t], [0, -1, -t], [0, 1, -t], [t, 0, -1], [t, 0, 1], [-t, 0, -1], [-t, 0, 1]],
        dtype=float,
    )
    f = np.array(
        [[0, 11, 5], [0, 5, 1], [0, 1, 7], [0, 7, 10], [0, 10, 11], [1, 5, 9], [5, 11, 4], [11, 10, 2], [10, 7, 6], [7, 1, 8],
         [3, 9, 4], [3, 4, 2], [3, 2, 6], [3, 6, 8], [3, 8, 9], [4, 9, 5], [2, 4, 11], [6, 2, 10], [8, 6, 7], [9, 8, 1]]
    )
    tri = v[f]
    tri /= np.linalg.norm(tri, axis=2, keepdims=True)
    for _ in range(level):
        a, b, c = tri[:, 0], tri[:, 1], tri[:, 2]
        ab, bc, ca = a + b, b + c, c + a
        ab /= np.linalg.norm(ab, axis=1, keepdims=True)
        bc /= np.linalg.norm(bc, axis=1, keepdims=True)
        ca /= np.linalg.norm(ca, axis=1, keepdims=True)
        tri = np.concatenate([np.stack(x, 1) for x in ([a, ab, ca], [ab, b, bc], [ca, bc, c], [ab, bc, ca])])
    tri = tri * radius + np.asarray(centre)[None, None, :]
    return np.concatenate([tri, tri[:, 2:3]], axis=1)


def box_panels(side: float, spec: MeshSpec, centre: tuple[float, float, float] = (0.0, 0.0, 0.0)) -> np.ndarray:
    """A cube of edge ``side``, each face graded toward its edges."""
    h = side / 2.0
    face = mesh_polygon(box(-h, -h, h, h), spec)
    c = np.asarray(centre, dtype=float)
    frames = [
        (np.array([0, 0, h]), np.array([1.0, 0, 0]), np.array([0, 1.0, 0])),
        (np.array([0, 0, -h]), np.array([1.0, 0, 0]), np.array([0, -1.0, 0])),
        (np.array([h, 0, 0]), np.array([0, 1.0, 0]), np.array([0, 0, 1.0])),
        (np.array([-h, 0, 0]), np.array([0, -1.0, 0]), np.array([0, 0, 1.0])),
        (np.array([0, h, 0]), np.array([-1.0, 0, 0]), np.array([0, 0, 1.0])),
        (np.array([0, -h, 0]), np.array([1.0, 0, 0]), np.array([0, 0, 1.0])),
    ]
    return np.concatenate([panels_from_2d(face, c + o, e1, e2) for o, e1, e2 in frames])


#: offsets of the edge rows, as fractions of the band width: thin rows at the edge where the
#: charge density grows like d^-1/2, widening away from it
BAND_ROWS = (0.0, 0.08, 0.3, 1.0)


def mesh_polygon_banded(
    geom: BaseGeometry,
    spec: MeshSpec,
    h_max_at: Callable[[np.ndarray, np.ndarray], tuple[np.ndarray, np.ndarray]] | None = None,
    band_zone: BaseGeometry | None = None,
) -> list[np.ndarray]:
    """Like :func:`mesh_polygon`, with rows of thin panels along the edges (within ``band_zone``).

    The band of width ``spec.h_min`` inside the boundary is split into rows at
    ``BAND_ROWS * h_min`` from the edge (offset curves, shapely buffers) and cut across every
    ``h_min`` along the edge: long thin panels aligned with the edge, where collocation with
    constant charge needs resolution only across the edge.  The rest is the graded quadtree.
    """
    if not _has_area(geom):
        return []
    w = spec.h_min
    offsets = [geom if o == 0 else geom.buffer(-o * w, quad_segs=8) for o in BAND_ROWS]
    band = shapely.difference(geom, offsets[-1])
    if band_zone is not None:
        band = shapely.intersection(band, band_zone)
    if band.is_empty or band.area <= 0:
        return mesh_polygon(geom, spec, h_max_at)
    panels: list[np.ndarray] = []
    x0, y0, x1, y1 = band.bounds
    nx = max(1, int(np.ceil((x1 - x0) / w)))
    ny = max(1, int(np.ceil((y1 - y0) / w)))
    gx, gy = np.meshgrid(x0 + np.arange(nx) * w, y0 + np.arange(ny) * w)
    cells = shapely.box(gx.ravel(), gy.ravel(), gx.ravel() + w, gy.ravel() + w)
    tree = shapely.STRtree(cells)
    for i in range(len(BAND_ROWS) - 1):
        ring = shapely.difference(offsets[i], offsets[i + 1])
        if band_zone is not None:
            ring = shapely.intersection(ring, band_zone)
        if ring.is_empty:
            continue
        hit = tree.query(ring, predicate="intersects")
        pieces = shapely.intersection(cells[hit], ring)
        min_area = 1e-3 * w * w * (BAND_ROWS[i + 1] - BAND_ROWS[i])
        for piece in pieces:
            for part in shapely.get_parts(piece):
                if isinstance(part, Polygon) and part.area > min_area:
                    part = part.simplify(0.03 * w * (BAND_ROWS[i + 1] - BAND_ROWS[i]), preserve_topology=True)
                    panels.extend(t for t in _quad_or_tris(part) if _tri_area(t) > 0.2 * min_area)
    rest = shapely.difference(geom, band)
    rest = shapely.union_all([p for p in shapely.get_parts(rest) if isinstance(p, Polygon) and p.area > 1e-6 * w * w] or [Polygon()])
    if not rest.is_empty:
        if not rest.is_valid:
            rest = shapely.make_valid(rest)
        panels.extend(mesh_polygon(rest, spec, h_max_at))
    return panels
