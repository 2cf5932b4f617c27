"""Board geometry simplified for drawing only (the HTML review page, marker layers).

Nothing here is used for checking: rules measure the exact geometry of ``board/model.py``.
A drawing keeps the look of the copper to a stated tolerance so that the review page of a
large board stays small and quick to open:

* every copper layer's final image is simplified with ``shapely.simplify`` (Douglas-Peucker,
  topology preserved) at ``tolerance_mm``;
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
from shapely.geometry import LineString, MultiLineString, MultiPolygon, Polygon
from shapely.geometry.base import BaseGeometry

from sensorcheck.board.model import Board, Layer
from sensorcheck.rules.finding import DrawLayer, Drawing

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


def _grid_ints(ring: Sequence[tuple[float, float]], grid_mm: float) -> np.ndarray:
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


def svg_path_data(polygons: Iterable[Sequence[Sequence[tuple[float, float]]]], grid_mm: float) -> str:
    """SVG path data for polygons (each a list of rings) in integer grid units, y negated.

    Draw it inside ``<g transform="scale(grid_mm)">`` with ``fill-rule="evenodd"``. Each ring is
    an absolute move and relative line segments; rings with fewer than three distinct grid points
    are left out.
    """
    parts: list[str] = []
    for rings in polygons:
        for ring in rings:
            pts = _clean_ints(_grid_ints(ring, grid_mm))
            if len(pts) < 3:
                continue
            deltas = np.diff(pts, axis=0).ravel().tolist()
            parts.append(f"M{_numbers(pts[0].tolist())}l{_numbers(deltas)}z")
    return "".join(parts)


def _polygons_of(geom: BaseGeometry | None) -> list[Polygon]:
    if geom is None or geom.is_empty:
        return []
    if isinstance(geom, Polygon):
        return [geom]
    if isinstance(geom, MultiPolygon):
        return list(geom.geoms)
    if hasattr(geom, "geoms"):
        out: list[Polygon] = []
        for part in geom.geoms:  # type: ignore[attr-defined]
            out.extend(_polygons_of(part))
        return out
    return []


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


def _rings_of(poly: Polygon, grid_mm: float) -> PolygonRings:
    """A polygon's rings as vertex lists snapped to the grid (exterior first)."""
    rings: PolygonRings = []
    for ring in [poly.exterior, *poly.interiors]:
        coords = np.asarray(ring.coords, dtype=float)
        snapped = np.rint(coords / grid_mm) * grid_mm
        rings.append([(float(x), float(y)) for x, y in np.round(snapped, 6)])
    return rings


def _simplified(images: list[BaseGeometry | None], tolerance_mm: float) -> list[list[Polygon]]:
    out: list[list[Polygon]] = []
    for image in images:
        if image is None or image.is_empty:
            out.append([])
            continue
        simple = shapely.simplify(image, tolerance_mm, preserve_topology=True)
        out.append([p for p in _polygons_of(simple) if not p.is_empty])
    return out


def _path_bytes(polys: list[list[Polygon]], grid_mm: float) -> int:
    total = 0
    for layer_polys in polys:
        total += len(svg_path_data((_rings_of(p, grid_mm) for p in layer_polys), grid_mm))
    return total


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
    images = [_layer_image(layer) for layer in copper]
    tolerance = tolerance_mm
    while True:
        polys = _simplified(images, tolerance)
        grid = grid_for(tolerance)
        if _path_bytes(polys, grid) <= max_bytes or tolerance * 2 > MAX_TOLERANCE_MM:
            break
        tolerance *= 2
    draw_layers = [
        DrawLayer(
            name=layer.name,
            function=layer.function,
            side=layer.side,
            polygons=[_rings_of(p, grid) for p in layer_polys],
        )
        for layer, layer_polys in zip(copper, polys, strict=True)
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
