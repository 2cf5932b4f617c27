"""Board geometry simplified for drawing only (the HTML review page, marker layers).

Nothing here is used for checking: rules measure the exact geometry of ``board/model.py``.
A drawing keeps the look of the copper to a stated tolerance so that the review page of a
large board stays small and quick to open:

* every polygon of every copper layer's final image is simplified with ``shapely.simplify``
  (Douglas-Peucker) at ``tolerance_mm``, topology kept where the plain algorithm would break a
  polygon, so no feature disappears;
* the vertices are then snapped to a grid of at most half the tolerance (:func:`grid_for`), so
  that the drawing lies within ``tolerance_mm + grid/sqrt(2)`` of the copper;
* when the SVG path data of all layers would exceed ``max_bytes``, the tolerance is doubled until
  it fits (or reaches :data:`MAX_TOLERANCE_MM`); the tolerance used is stored in
  :attr:`Drawing.simplify_tolerance_mm` and the page states it.

:func:`svg_path_data` is the one formatter of that path data, used both for the size budget here
and by the HTML page, so the budget measures what the page will hold.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence

import numpy as np
import shapely
from shapely.geometry import LineString, MultiLineString, Polygon
from shapely.geometry.base import BaseGeometry

from sensorcheck.board.model import Board, Layer
from sensorcheck.findings import DrawLayer, Drawing

#: the budget for path data of all layers (bytes): the page's 5 MB limit less room for the rest
DEFAULT_MAX_BYTES = 4_000_000
#: the coarsest tolerance the budget may push to (mm); a drawing coarser than this is not useful
MAX_TOLERANCE_MM = 0.64
#: grid steps a drawing snaps to (mm): round numbers so the page's coordinates stay short
_GRID_STEPS_MM = (0.001, 0.002, 0.005, 0.01, 0.02, 0.05, 0.1, 0.2)

Ring = list[tuple[float, float]]
PolygonRings = list[Ring]


def grid_for(tolerance_mm: float) -> float:
    """The drawing grid for a tolerance: the largest round step not above half of it (mm)."""
    half = tolerance_mm / 2.0
    best = _GRID_STEPS_MM[0]
    for step in _GRID_STEPS_MM:
        if step <= half + 1e-12:
            best = step
    return best


def _grid_ints(ring: Sequence[tuple[float, float]] | np.ndarray, grid_mm: float) -> np.ndarray:
    """Ring vertices as integer grid units, y negated (SVG's y axis points down)."""
    arr = np.asarray(ring, dtype=float).reshape(-1, 2)
    out = np.rint(arr / grid_mm).astype(np.int64)
    out[:, 1] = -out[:, 1]
    return out


def _clean_ints(pts: np.ndarray) -> np.ndarray:
    """Drop repeated vertices and the closing vertex of a ring."""
    if len(pts) == 0:
        return pts
    keep = np.ones(len(pts), dtype=bool)
    keep[1:] = np.any(pts[1:] != pts[:-1], axis=1)
    pts = pts[keep]
    if len(pts) > 1 and np.array_equal(pts[0], pts[-1]):
        pts = pts[:-1]
    return pts


def _numbers(values: Iterable[int]) -> str:
    """Integers separated as SVG path data allows: a minus sign is its own separator."""
    return " ".join(map(str, values)).replace(" -", "-")


def _ring_path(pts: np.ndarray) -> str:
    """One ring (integer grid units, cleaned) as an absolute move, relative lines and a close."""
    if len(pts) < 3:
        return ""
    deltas = np.diff(pts, axis=0).ravel().tolist()
    return f"M{_numbers(pts[0].tolist())}l{_numbers(deltas)}z"


def svg_path_data(polygons: Iterable[Sequence[Sequence[tuple[float, float]]]], grid_mm: float) -> str:
    """SVG path data for polygons (each a list of rings) in integer grid units, y negated.

    Draw it inside ``<g transform="scale(grid_mm)">`` with ``fill-rule="evenodd"``. Each ring is
    an absolute move and relative line segments; rings with fewer than three distinct grid points
    are left out.
    """
    return "".join(_ring_path(_clean_ints(_grid_ints(ring, grid_mm))) for rings in polygons for ring in rings)


def _polygon_parts(geom: BaseGeometry | None) -> np.ndarray:
    """The polygons of any geometry, as an array (collections flattened, lines and points left out)."""
    if geom is None or geom.is_empty:
        return np.empty(0, dtype=object)
    parts = np.asarray([geom], dtype=object)
    while True:
        types = shapely.get_type_id(parts)
        multi = (types == 6) | (types == 7)  # MultiPolygon, GeometryCollection
        if not multi.any():
            break
        parts = np.concatenate([parts[~multi], shapely.get_parts(parts[multi])])
    types = shapely.get_type_id(parts)
    polys = parts[types == 3]  # Polygon
    return polys[~shapely.is_empty(polys)]


def _layer_image(layer: Layer) -> BaseGeometry | None:
    """The layer's final dark image; built from its features (polarity in file order) when absent."""
    if layer.dark is not None:
        return layer.dark
    if not layer.features:
        return None
    image: BaseGeometry = Polygon()
    run: list[BaseGeometry] = []
    run_polarity = "dark"
    for feature in [*layer.features, None]:
        polarity = feature.polarity if feature is not None else None
        if polarity != run_polarity and run:
            merged = shapely.union_all(run)
            image = image.union(merged) if run_polarity == "dark" else image.difference(merged)
            run = []
        if feature is None:
            break
        run_polarity = feature.polarity
        run.append(feature.geometry)
    return image


def _simplified(parts: np.ndarray, tolerance_mm: float) -> np.ndarray:
    """Each polygon simplified on its own (Douglas-Peucker, vectorised in GEOS).

    The plain algorithm is about 30 times faster than the topology-preserving one; only the
    polygons it breaks (a ring crossing another, or a feature smaller than the tolerance that
    collapses to nothing) are done again with topology kept, so no feature ever disappears.
    """
    if len(parts) == 0:
        return parts
    simple = shapely.simplify(parts, tolerance_mm, preserve_topology=False)
    bad = shapely.is_empty(simple) | ~shapely.is_valid(simple)
    if bad.any():
        simple[bad] = shapely.simplify(parts[bad], tolerance_mm, preserve_topology=True)
    return _polygon_parts(shapely.geometrycollections(simple))


def _snapped_rings(polys: np.ndarray, grid_mm: float) -> tuple[list[np.ndarray], np.ndarray]:
    """All rings of the polygons snapped to the grid (mm), and the polygon each ring belongs to."""
    if len(polys) == 0:
        return [], np.empty(0, dtype=np.int64)
    rings, ring_poly = shapely.get_rings(polys, return_index=True)
    coords, coord_ring = shapely.get_coordinates(rings, return_index=True)
    snapped = np.round(np.rint(coords / grid_mm) * grid_mm, 6)
    counts = np.bincount(coord_ring, minlength=len(rings))
    return np.split(snapped, np.cumsum(counts)[:-1]), ring_poly


def _path_bytes(rings: list[np.ndarray], grid_mm: float) -> int:
    return sum(len(_ring_path(_clean_ints(_grid_ints(r, grid_mm)))) for r in rings)


def _as_polygons(rings: list[np.ndarray], ring_poly: np.ndarray) -> list[PolygonRings]:
    """Rings grouped back into polygons (exterior first), as plain lists of (x, y) tuples."""
    out: list[PolygonRings] = []
    last = -1
    for ring, poly in zip(rings, ring_poly.tolist(), strict=True):
        pts = [(x, y) for x, y in ring.tolist()]
        if poly != last:
            out.append([pts])
            last = poly
        else:
            out[-1].append(pts)
    return out


def rings_for_drawing(geom: BaseGeometry | None, tolerance_mm: float = 0.02) -> list[list[tuple[float, float]]]:
    """Exterior and interior rings of a (multi)polygon, simplified for drawing, rounded to 1 um."""
    if geom is None or geom.is_empty:
        return []
    # plain Douglas-Peucker (a fifth of the cost), topology-preserving where that would draw
    # crossing rings or drop a part
    fast = geom.simplify(tolerance_mm, preserve_topology=False)
    same_parts = shapely.get_num_geometries(fast) == shapely.get_num_geometries(geom)
    geom = fast if same_parts and fast.is_valid else geom.simplify(tolerance_mm, preserve_topology=True)
    polys = getattr(geom, "geoms", [geom])
    rings = [ring for poly in polys if poly.geom_type == "Polygon" for ring in (poly.exterior, *poly.interiors)]
    if not rings:
        return []
    xy = shapely.get_coordinates(rings)
    # round(v, 3) for all at once: k / 1000 with k the nearest integer to 1000 v is the double
    # nearest the 3-decimal result, as Python's round gives it; where 1000 v lies within 1e-6 of
    # a half (the product itself may be off there), Python's round decides
    scaled = xy * 1000.0
    k = np.rint(scaled)
    rounded = k / 1000.0
    near_half = np.abs(scaled - np.floor(scaled) - 0.5) < 1e-6
    if near_half.any():
        for i, j in zip(*np.nonzero(near_half)):
            rounded[i, j] = round(float(xy[i, j]), 3)
    flat = list(map(tuple, rounded.tolist()))
    out: list[list[tuple[float, float]]] = []
    start = 0
    for n in shapely.get_num_coordinates(rings).tolist():
        out.append(flat[start:start + n])
        start += n
    return out


def _outline_rings(outline: BaseGeometry | None) -> list[Ring]:
    """The board outline as rings/polylines of (x, y) mm."""
    if outline is None or outline.is_empty:
        return []
    rings: list[Ring] = []
    parts = list(outline.geoms) if hasattr(outline, "geoms") else [outline]  # type: ignore[attr-defined]
    for part in parts:
        if isinstance(part, Polygon):
            for ring in [part.exterior, *part.interiors]:
                rings.append([(round(x, 4), round(y, 4)) for x, y in ring.coords])
        elif isinstance(part, LineString | MultiLineString):
            for line in getattr(part, "geoms", [part]):
                rings.append([(round(x, 4), round(y, 4)) for x, y in line.coords])
        else:
            rings.extend(_outline_rings(part))
    return rings


def _holes(board: Board) -> list[tuple[float, float, float, bool | None]]:
    """Holes as (x, y, diameter, plated); a slot is drawn as a hole at each of its two ends."""
    out: list[tuple[float, float, float, bool | None]] = []
    for hole in board.holes:
        out.append((round(hole.x_mm, 4), round(hole.y_mm, 4), round(hole.diameter_mm, 4), hole.plated))
        if hole.end_x_mm is not None and hole.end_y_mm is not None:
            out.append((round(hole.end_x_mm, 4), round(hole.end_y_mm, 4), round(hole.diameter_mm, 4), hole.plated))
    out.sort(key=lambda h: (h[0], h[1], h[2], str(h[3])))
    return out


def _box(
    layers: list[DrawLayer], outline: list[Ring], holes: list[tuple[float, float, float, bool | None]]
) -> tuple[float, float, float, float]:
    xs: list[float] = []
    ys: list[float] = []
    for ring in outline:
        xs.extend(p[0] for p in ring)
        ys.extend(p[1] for p in ring)
    if not xs:  # no outline: the copper and holes decide
        for layer in layers:
            for poly in layer.polygons:
                xs.extend(p[0] for p in poly[0])
                ys.extend(p[1] for p in poly[0])
        for x, y, d, _ in holes:
            xs.extend((x - d / 2, x + d / 2))
            ys.extend((y - d / 2, y + d / 2))
    if not xs:
        return (0.0, 0.0, 1.0, 1.0)
    return (min(xs), min(ys), max(xs), max(ys))


def drawing_from_board(
    board: Board, *, tolerance_mm: float = 0.02, max_bytes: int = DEFAULT_MAX_BYTES
) -> Drawing:
    """Simplify the board's copper for drawing, within ``max_bytes`` of SVG path data.

    Copper layers come top first. The tolerance doubles (up to :data:`MAX_TOLERANCE_MM`) until
    the path data fits the budget; the tolerance used is ``Drawing.simplify_tolerance_mm``.
    """
    if not math.isfinite(tolerance_mm) or tolerance_mm <= 0:
        raise ValueError(f"tolerance_mm must be a positive number, got {tolerance_mm!r}")
    copper = board.copper_layers()
    parts = [_polygon_parts(_layer_image(layer)) for layer in copper]
    tolerance = tolerance_mm
    while True:
        grid = grid_for(tolerance)
        snapped = [_snapped_rings(_simplified(p, tolerance), grid) for p in parts]
        size = sum(_path_bytes(rings, grid) for rings, _ in snapped)
        if size <= max_bytes or tolerance * 2 > MAX_TOLERANCE_MM:
            break
        tolerance *= 2
    draw_layers = [
        DrawLayer(name=layer.name, function=layer.function, side=layer.side, polygons=_as_polygons(rings, ring_poly))
        for layer, (rings, ring_poly) in zip(copper, snapped, strict=True)
    ]
    outline = _outline_rings(board.outline)
    holes = _holes(board)
    return Drawing(
        box_mm=_box(draw_layers, outline, holes),
        layers=draw_layers,
        outline=outline,
        holes=holes,
        simplify_tolerance_mm=tolerance,
    )
