"""Row-column matrices as a scan drives them (issue 10, item 3).

Outside checks:
* brute force: the same geometry solved in one dense system of all conductors (rows, columns and,
  at touch, the finger as one more conductor held at earth), assembled and solved directly with
  ``bem.capacitance_matrix`` (no factorised board block, no Schur complement, no circuit code);
  a scanned node's Cm is then read straight from the Maxwell matrix as ``-C[rx_j, tx_i]``, the
  definition of the mutual capacitance with every other conductor at 0 V (e.g. Jackson, Classical
  Electrodynamics, 3rd ed., section 1.13: the coefficients of capacitance);
* parallel plates (handbook, C = eps0 eps_r A / d) as an order-of-magnitude check of a crossing.
"""

from __future__ import annotations

import numpy as np
import pytest

from .designs import row_column
from sensorcheck.design.model import Finger
from sensorcheck.physics.bem import Panels, capacitance_matrix
from sensorcheck.physics.finger import PF
from sensorcheck.physics.scan import estimate_matrix, node_centre
from sensorcheck.physics.sensors import SolverOptions, build_model, estimate_with, finger_panels

FAST = {"h_edge_mm": 1.0, "h_near_mm": 1.5, "h_far_mm": 4.0, "window_mm": 6.0, "finger_sides": 16, "search": False}
EARTHED = Finger(8.0, 20.0, 1e9, None)  # a finger tied hard to earth: the brute force holds it at 0 V


@pytest.fixture(scope="module")
def solved() -> tuple:
    d = row_column(finger=EARTHED, estimate=FAST)
    model = build_model(d, d.sensors[0], opts=SolverOptions.from_config(FAST))
    est = estimate_matrix(model, heights=3, max_height_mm=10.0)
    return d, model, est


def test_node_centres_are_the_crossings() -> None:
    from shapely.geometry import box

    # geometry: a horizontal bar and a vertical stripe cross at (x of the stripe, y of the bar)
    c = node_centre(box(-8, 2.5, 8, 5.5), box(-5.5, -8, -2.5, 8))
    assert c == pytest.approx((-4.0, 4.0), abs=1e-6)


def test_scan_matches_the_brute_force_maxwell_matrix(solved) -> None:
    d, model, est = solved
    names = [c.name for c in model.conductors]
    k = len(names)
    assert sorted(names) == ["RX1", "RX2", "TX1", "TX2"]
    assert len(est.nodes) == 4
    # brute force without a finger: one dense solve of the four lines
    c0 = capacitance_matrix(model.system.panels, model.stack.medium, k)
    for n in est.nodes:
        ref = -c0[names.index(n.rx), names.index(n.tx)] / PF
        assert n.cm_pf == pytest.approx(ref, rel=1e-6)
    # brute force at touch: the finger over each node is a fifth conductor at 0 V in one dense system
    opts = model.opts
    for n in est.nodes:
        z = model.stack.surface_m + opts.touch_gap_mm * 1e-3
        body = finger_panels(EARTHED, n.centre_mm[0], n.centre_mm[1], z, opts)
        allp = Panels.concat([model.system.panels, Panels(body.verts, np.full(len(body), k))])
        c = capacitance_matrix(allp, model.stack.medium, k + 1)
        ref_touch = -c[names.index(n.rx), names.index(n.tx)] / PF
        # 1 %: the factorised path tabulates the board-finger coupling (issue 10: within 1 %)
        assert n.cm_pf + n.touch_delta_pf == pytest.approx(ref_touch, rel=0.01)
        assert n.touch_delta_pf < 0  # an earthed finger steals field lines: Cm falls


def test_a_scanned_node_is_not_the_whole_panel_figure(solved) -> None:
    d, model, est = solved
    # every TX driven together and every RX summed: the old whole-panel figure, the sum of all nodes
    whole = model.value_f(model.system.c0, None) / PF
    total = sum(n.cm_pf for n in est.nodes)
    assert whole == pytest.approx(total, rel=1e-9)  # superposition (the field equations are linear)
    assert est.baseline_pf < 0.3 * whole  # what a scan reads is one node, not the panel
    # the four nodes of a symmetric 2 x 2 are alike (mirror symmetry of the geometry)
    cms = [n.cm_pf for n in est.nodes]
    assert max(cms) == pytest.approx(min(cms), rel=0.02)


def test_crossing_cm_is_parallel_plate_sized(solved) -> None:
    d, model, est = solved
    # handbook: a 3 x 3 mm overlap through 1.53 mm of FR-4 (eps_r 4.4) is 0.23 pF as parallel
    # plates; fringing adds to it (through a dielectric half as thick as the strips are wide, it
    # about triples it: 2.9 x when written) and the grounded neighbours take some away: same order
    pp = 8.854e-12 * 4.4 * 9e-6 / 1.53e-3 / PF
    for n in est.nodes:
        assert pp < n.cm_pf < 4.0 * pp


def test_matrix_estimate_reports_the_weakest_node() -> None:
    d = row_column(estimate=FAST)
    est = estimate_with(d, d.sensors[0], opts=SolverOptions.from_config(FAST), heights=3, max_height_mm=10.0)
    weakest = min(est.nodes, key=lambda n: abs(n.touch_delta_pf))
    assert est.baseline_pf == weakest.cm_pf
    assert est.touch_delta_pf == pytest.approx(weakest.touch_delta_pf, rel=1e-6)
    assert any("one TX line at a time" in n for n in est.notes)
