"""Error-controlled coarsening of grounded copper (issue 10, item 4: b07 under the default limits).

Outside checks: the coarsened ground is compared with the same ground solved in full detail (the
reference is the unchanged solver on the unchanged copper); the bound is the one the estimate's
note states.  Why small detail matters little: Bethe's small-aperture theory (Phys. Rev. 66
(1944) 163), a hole's leakage field falls with the cube of its size.
"""

from __future__ import annotations

from dataclasses import replace

import pytest
import shapely
from shapely.geometry import Point, box

from .designs import make_design
from sensorcheck.design.model import Electrode, Sensor
from sensorcheck.errors import LimitError
from sensorcheck.limits import Limits
from sensorcheck.physics.bem import BoardSystem
from sensorcheck.physics.coarsen import DETAIL_TOL_MM, STATED_ERROR, coarsen_ground, ground_detail
from sensorcheck.physics.finger import PF
from sensorcheck.physics.sensors import SolverOptions, build_model, mesh_conductors

FAST = {"h_edge_mm": 1.0, "h_near_mm": 1.5, "h_far_mm": 4.0, "window_mm": 8.0, "finger_sides": 16, "search": False}


def perforated_button():
    """A 12 mm self button in a ground pour with 0.5 mm square holes at 2 mm pitch and a finely drawn cut-out."""
    el = Point(0, 0).buffer(6.0, quad_segs=24)
    cut = Point(0, 0).buffer(7.0, quad_segs=128)  # 512 vertices: an arc drawn finer than 50 um
    holes = [box(x - 0.25, y - 0.25, x + 0.25, y + 0.25) for x in range(-15, 16, 2) for y in range(-15, 16, 2)
             if abs(complex(x, y)) > 8.5]
    islands = [box(x - 0.3, 9.7, x + 0.3, 10.3) for x in (-12.0, 12.0)]  # 0.36 mm2 slivers: under one edge panel
    gnd = box(-16, -16, 16, 16).difference(cut).difference(shapely.union_all(holes))
    gnd = shapely.union_all([gnd.difference(box(-13, 9.4, 13, 10.6)), *islands])
    s = Sensor("B1", "self-button", "top-copper", [Electrode("TOUCH1", "self", "top-copper", el)], el.buffer(1.0), 1.0)
    return make_design({"TOUCH1": el, "GND": gnd}, {"TOUCH1": "self", "GND": "ground"}, [s], estimate=FAST)


def test_ground_detail_by_geometry() -> None:
    g = box(0, 0, 10, 10).difference(box(2, 2, 2.5, 2.5)).difference(box(5, 5, 8, 8))
    g = shapely.union_all([g, box(20, 0, 20.5, 0.5)])
    out = ground_detail(g, 1.0)
    assert out.area == pytest.approx(100.0 - 9.0)  # the 0.25 mm2 hole filled, the 9 mm2 one kept, the island gone
    circle = Point(0, 0).buffer(5.0, quad_segs=256)
    simple = ground_detail(circle, 1.0)
    # simplification stays within its tolerance of the drawn outline (Hausdorff distance)
    assert shapely.hausdorff_distance(simple.exterior, circle.exterior) <= DETAIL_TOL_MM + 1e-9
    assert len(simple.exterior.coords) < len(circle.exterior.coords) / 4


def test_coarsened_ground_is_within_the_stated_error() -> None:
    d = perforated_button()
    s = d.sensors[0]
    opts = SolverOptions.from_config(FAST)
    ref = build_model(d, s, opts=opts, limits=Limits(max_mesh_panels=100_000))
    conds, note = coarsen_ground(ref.conductors, opts.h_edge_mm)
    panels = mesh_conductors(conds, ref.stack, s.outline.buffer(2.0), opts, ref.overlay, [])
    coarse = replace(ref, conductors=conds, system=BoardSystem(panels, ref.stack.medium, len(conds)))
    assert len(panels) < 0.75 * len(ref.system.panels)  # the point of it: fewer panels
    k = len(conds)
    for m in (ref, coarse):
        m.notes = [m.value_f(m.system.c0, None) / PF, m.value_f(m.with_finger(0.0, 0.0, 0.0), k) / PF]  # scratch
    base_ref, touch_ref = ref.notes
    base, touch = coarse.notes
    assert base == pytest.approx(base_ref, rel=STATED_ERROR)
    assert touch - base == pytest.approx(touch_ref - base_ref, rel=STATED_ERROR)
    assert f"{100 * STATED_ERROR:g} %" in note


def test_the_budget_takes_the_coarsening_only_as_its_last_step() -> None:
    d = perforated_button()
    s = d.sensors[0]
    opts = SolverOptions.from_config(FAST)
    with pytest.raises(LimitError) as exc:
        build_model(d, s, opts=opts, limits=Limits(max_mesh_panels=300))
    assert "estimated before meshing" not in str(exc.value)
    n = int(str(exc.value).split("sensor B1: ")[1].split(" ")[0])  # the last step's count (the coarsened mesh)
    m = build_model(d, s, opts=opts, limits=Limits(max_mesh_panels=n))
    assert len(m.system.panels) == n and any("ground copper coarsened" in x for x in m.notes)
    full = build_model(d, s, opts=opts, limits=Limits(max_mesh_panels=100_000))
    assert not any("coarsened" in x for x in full.notes)
