"""Error-controlled coarsening: the detail of grounded copper that the mesh does not resolve.

The last step of the panel budget (:func:`sensorcheck.physics.sensors.build_model`), taken only
where every other step is still over the limit.  It changes only copper held at ground (never a
sensor's, a neighbour's or a shield's), and only detail finer than one edge panel:

* holes in ground copper smaller than one edge panel (``h_edge^2``) are filled, and islands of
  ground copper smaller than that are dropped.  A small aperture in a conducting sheet leaks a
  field that falls with its polarisability, proportional to the cube of its size (H. A. Bethe,
  "Theory of diffraction by small holes", Phys. Rev. 66 (1944) 163); an island's own capacitance
  is proportional to its size;
* the outlines of ground copper are simplified to ``DETAIL_TOL_MM`` (50 um: of the order of the
  etch tolerance of a PCB outer layer, common practice), which removes the vertex clutter of arcs
  and hatch remnants that forces the quadtree into many small cut cells.

The error it adds is measured, not assumed: ``tests/physics/test_coarsen.py`` compares a
perforated, jagged ground with and without the coarsening (baseline and touch delta within
``STATED_ERROR``), and the estimate's note states that bound.
"""

from __future__ import annotations

import shapely
from shapely.geometry import Polygon
from shapely.geometry.base import BaseGeometry

from sensorcheck.physics.model import Conductor

DETAIL_TOL_MM = 0.05
#: the relative change of baseline and touch delta the coarsening was tested to stay within
STATED_ERROR = 0.01


def ground_detail(geom: BaseGeometry, min_area_mm2: float, tol_mm: float = DETAIL_TOL_MM) -> BaseGeometry:
    """``geom`` without holes and islands under ``min_area_mm2``, its outline simplified to ``tol_mm``."""
    kept: list[Polygon] = []
    for part in shapely.get_parts(geom):
        if not isinstance(part, Polygon) or part.area < min_area_mm2:
            continue
        kept.append(Polygon(part.exterior, [r for r in part.interiors if Polygon(r).area >= min_area_mm2]))
    if not kept:
        return Polygon()
    return shapely.union_all(kept).simplify(tol_mm, preserve_topology=True)


def coarsen_ground(conductors: list[Conductor], h_edge_mm: float) -> tuple[list[Conductor], str]:
    """The conductors with their grounded copper's unresolved detail removed, and a note saying so."""
    a_min = h_edge_mm * h_edge_mm
    out: list[Conductor] = []
    for c in conductors:
        if c.kind != "ground":
            out.append(c)
            continue
        copper = {layer: ground_detail(g, a_min) for layer, g in c.copper.items()}
        copper = {layer: g for layer, g in copper.items() if not g.is_empty}
        if copper:
            out.append(Conductor(c.name, c.kind, copper, c.sensor, c.role))
    note = (
        f"ground copper coarsened to fit the panel budget: holes and islands under {a_min:.2g} mm2 filled or dropped, "
        f"outlines simplified to {DETAIL_TOL_MM * 1000:g} um (tested within {100 * STATED_ERROR:g} % on baseline and touch delta)"
    )
    return out, note
