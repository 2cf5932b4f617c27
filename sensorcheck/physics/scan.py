"""Row-column matrices as a controller scans them: one TX line driven at a time.

A mutual-capacitance scan drives one TX line while every other TX line is held at ground and
every RX line sits at its receiver's virtual ground (0 V); the charge into RX line ``j`` per volt
on TX line ``i`` is the node's mutual capacitance, the Maxwell matrix entry ``-C[rx_j, tx_i]``
(with the finger's and the device's return paths of :mod:`sensorcheck.physics.finger` when the
finger floats).  Driving all rows at once, as a whole-panel figure does, sums every node and is
what no scan measures.

The matrix is modelled once (one window around the whole matrix, one factorised board block);
each node then costs one finger position (touching, over the node's centre) and every node's Cm
is read from the same matrices.  The estimate's lumped fields (baseline, touch delta, approach
curve, turning point) are those of the weakest node (the smallest touch delta): the figure the
floor and turnaround rules must judge.
"""

from __future__ import annotations

import numpy as np
import shapely
from shapely.geometry.base import BaseGeometry

from sensorcheck.physics.approach import solved_note
from sensorcheck.physics.estimate import NodeEstimate, SensorEstimate
from sensorcheck.physics.finger import PF, turnarounds
from sensorcheck.physics.model import SensorModel, _neighbour_channels, approach_curve, approach_heights, describe

CROSS_GROW_MM = 0.5  # the row and the column grown by their distance plus this to find where they cross (stated model choice)


def matrix_lines(model: SensorModel) -> tuple[list[str], list[str]]:
    """(TX nets, RX nets) of the modelled matrix, in the sensor's row/column order where it has one."""
    names = [c.name for c in model.conductors]
    tx = [names[i] for i in model.main["tx"]]
    rx = [names[i] for i in model.main["rx"]]
    order = list(model.sensor.rows) + list(model.sensor.columns)
    rank = {n: k for k, n in enumerate(order)}

    def key(n: str) -> tuple[int, str]:
        return (rank.get(n, len(rank)), n)

    return sorted(tx, key=key), sorted(rx, key=key)


def node_centre(row: BaseGeometry, column: BaseGeometry) -> tuple[float, float] | None:
    """Where a row and a column cross (or come closest): the centroid of their grown overlap."""
    d = float(shapely.distance(row, column))
    g = d + CROSS_GROW_MM
    inter = shapely.intersection(row.buffer(g), column.buffer(g))
    if inter.is_empty:
        return None
    c = inter.centroid
    return float(c.x), float(c.y)


def _line_geometry(model: SensorModel, net: str) -> BaseGeometry:
    """A line's electrode copper (all layers, projected: rows and columns may lie on different layers)."""
    parts = [e.geometry for e in model.sensor.electrodes if e.net == net]
    return shapely.union_all(parts)


def scan_cm_f(model: SensorModel, c: np.ndarray, floating: int | None, tx: int, rx: int) -> float:
    """Cm (F) of one node from a Maxwell matrix: ``tx`` driven, all else at 0 V, charge into ``rx``."""
    return model.value_f(c, floating, {"tx": [tx], "rx": [rx]})


def estimate_matrix(model: SensorModel, *, heights: int, max_height_mm: float) -> SensorEstimate:
    """Per-node Cm and touch delta of a row-column matrix as a scan drives it."""
    idx = {c.name: i for i, c in enumerate(model.conductors)}
    k = len(model.conductors)
    tx_nets, rx_nets = matrix_lines(model)
    geoms = {n: _line_geometry(model, n) for n in tx_nets + rx_nets}
    nodes: list[NodeEstimate] = []
    skipped: list[str] = []
    for t in tx_nets:
        for r in rx_nets:
            centre = node_centre(geoms[t], geoms[r])
            base = scan_cm_f(model, model.system.c0, None, idx[t], idx[r])
            if centre is None or base <= 0.0:
                skipped.append(f"{t}/{r}")
                continue
            c = model.with_finger(centre[0], centre[1], 0.0, max_h_mm=max_height_mm)
            touch = scan_cm_f(model, c, k, idx[t], idx[r])
            nodes.append(NodeEstimate(t, r, centre, base / PF, (touch - base) / PF, 100.0 * (touch - base) / base))
    if not nodes:
        from sensorcheck.errors import InputError

        raise InputError(model.design.board.source, None, f"sensor {model.sensor.name}: no matrix node couples its TX and RX lines in the model",
                         "rows and columns that cross")
    weak = min(nodes, key=lambda n: abs(n.touch_delta_pf))
    which = {"tx": [idx[weak.tx]], "rx": [idx[weak.rx]]}
    x, y = weak.centre_mm
    base_pf = weak.cm_pf
    hs = approach_heights(heights, max_height_mm)
    mats: dict[float, np.ndarray] = {}
    curve, n_solved = approach_curve(model, x, y, hs, base_pf, max_height_mm, mats, which)
    c_touch = mats[hs[-1]]
    delta = curve[-1][1] - base_pf
    cross: dict[str, float] = {}
    for name, w in _neighbour_channels(model).items():
        b = model.value_f(model.system.c0, None, w)
        cross[name] = (model.value_f(c_touch, k, w) - b) / PF
    notes = list(model.notes)
    notes.append(
        f"matrix scanned as a controller drives it: one TX line at a time, the other TX lines at ground, the RX lines at "
        f"virtual ground; {len(nodes)} nodes; baseline, touch delta and approach curve of node {weak.tx}/{weak.rx}, the "
        f"weakest (per-node values in the nodes table)"
    )
    if n_solved < len(hs):
        notes.append(solved_note(n_solved, len(hs)))
    if skipped:
        notes.append(f"matrix nodes not estimated (the lines neither cross nor couple in the model): {', '.join(skipped)}")
    turns = turnarounds(curve, base_pf)
    return SensorEstimate(
        sensor=model.sensor.name,
        kind="mutual",
        model=describe(model),
        baseline_pf=base_pf,
        touch_delta_pf=delta,
        percent_change=100.0 * delta / base_pf,
        turning_point_mm=turns[0].height_mm if turns else None,
        turnarounds=turns,
        curve=curve,
        best_point_mm=(x, y),
        crosstalk_pf=cross,
        panels=len(model.system.panels),
        notes=notes,
        nodes=nodes,
    )
