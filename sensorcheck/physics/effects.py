"""What each piece of copper near a sensor does to its signal: a bound from the solved board block.

The rules that judge copper near a sensor (foreign copper and traces in the zone, ground under a
self electrode, hatch fill around it, an aggressor next to it, an RX trace beside another node's
TX) need one number: how much of the sensor's signal that copper can change.  Solving the window
again without each piece would cost a factorisation per piece; this module reads the number from
the solve that the estimate has made anyway.

The bound (derived; Green's reciprocity, e.g. Jackson, *Classical Electrodynamics*, 3rd ed.,
sections 1.13 and 1.17): let copper P be held at 0 V in the model and let the sensor be driven by
an excitation X >= 0 (self: the electrode and a driven shield at 1 V; mutual: TX at 1 V, or RX at
1 V), everything else at 0 V.  Removing P changes the charge that any conductor ``a`` receives
under X by

    dQ_a = -integral over P of v_a(x) sigma_P(x) dA

where sigma_P is P's surface charge under X with P in place and v_a (between 0 and 1 by the
maximum principle) is the potential at P with ``a`` at 1 V, everything else at 0 V and P removed.
With X >= 0, sigma_P <= 0 everywhere, so

    0 <= dQ_a <= |q_P(X)|,   q_P(X) = the charge on P under X.

So the parasitic capacitance P adds to a self electrode is at most ``|q_P|`` under the self
excitation, the mutual capacitance P takes from a node at most ``min(|q_P(TX)|, |q_P(RX)|)``, and
the same holds with the finger in place (it is one more conductor of the same reciprocal system).
The touch delta P takes away, ``dQ(no finger) - dQ(finger)``, is therefore at most the no-finger
bound as well (both terms are >= 0).  For copper of a neighbour sensor's net, ``|q_P|`` under RX
excitation is exactly the mutual capacitance between that net and the RX in the window (the
ghost node an RX trace forms with another TX).  The bound is tight for small, isolated copper (a
trace with little ground near it: most of its charge would find no other home) and loose for
ground that surrounds the sensor (removing it moves the field to the next ground): a bound that
clears copper clears it safely; a bound that does not clear it says "at most".

Units: charges per volt of drive, in pF.  The pieces are grouped by copper layer and net; each
group carries a point on its copper (so a rule finds the net on the board, also for a twin window
moved by :func:`sensorcheck.physics.fingerprint.translated`) and its charge within each distance
of :data:`COPPER_BINS_MM` from the sensor's electrodes (cumulative, so a rule reads the copper
within its own distance at the first bin edge at or beyond it: more copper, a larger bound).
"""

from __future__ import annotations

import numpy as np
import shapely

from sensorcheck.physics.estimate import COPPER_BINS_MM, CopperGroup
from sensorcheck.physics.finger import PF
from sensorcheck.physics.model import MM, SensorModel

#: a ground panel farther than this (mm) from every net's copper on its layer is not attributed
#: (after hatch is modelled as a sheet, a panel in a filled opening lies within half an opening)
MAP_TOLERANCE_MM = 3.0


def _excitations(model: SensorModel) -> dict[str, np.ndarray]:
    k = len(model.conductors)
    out: dict[str, np.ndarray] = {}
    if model.kind == "mutual":
        for name in ("tx", "rx"):
            v = np.zeros(k)
            v[model.main[name]] = 1.0
            out[name] = v
    else:
        v = np.zeros(k)
        v[model.main["electrode"]] = 1.0
        v[model.main.get("shield", [])] = 1.0
        out["self"] = v
    return out


def copper_groups(model: SensorModel) -> list[CopperGroup]:
    """The charge the sensor's excitation puts on every net's copper held at 0 V in the window.

    Reads the no-finger solution of the board block (``model.system.x``, the panel charge
    densities with each conductor at 1 V); returns [] where the solver does not keep it.
    """
    system = model.system
    x = getattr(system, "x", None)
    if x is None:
        return []
    panels = system.panels
    design = model.design
    own = set(model.sensor.nets)
    exc = _excitations(model)
    # panel charge (pF per V) under each excitation; the conductors driven by it are left out
    driven = np.zeros(len(model.conductors), dtype=bool)
    for v in exc.values():
        driven |= v > 0
    q = {name: (panels.area * (x @ v)) / PF for name, v in exc.items()}
    cond = panels.conductor
    held = ~driven[cond]
    kinds = np.array([c.kind for c in model.conductors])
    held &= kinds[cond] != "shield"  # a shield is driven (self) or a reference the rules do not weigh
    outline = model.sensor.outline
    shapely.prepare(outline)
    xy_mm = panels.centroid[:, :2] / MM
    pts = shapely.points(xy_mm[:, 0], xy_mm[:, 1])
    dist = np.where(held, shapely.distance(pts, outline), np.inf)
    z_of = {round(z / MM, 6): name for name, z in model.stack.copper_z_m.items()}
    z_panel = np.round(panels.centroid[:, 2] / MM, 6)
    x0, y0, x1, y1 = outline.bounds
    w = model.opts.window_mm
    bx = (x0 - w, y0 - w, x1 + w, y1 + w)
    groups: list[CopperGroup] = []
    edges = np.array(COPPER_BINS_MM)
    for zk, layer in sorted(z_of.items(), key=lambda t: t[1]):
        on = np.flatnonzero(held & (np.abs(z_panel - zk) < 1e-6))
        if len(on) == 0:
            continue
        lay = design.board.layer(layer)
        names: list[str] = []
        geoms = []
        for net, g in sorted((lay.by_net if lay is not None else {}).items()):
            if net in own or g.is_empty:
                continue
            gi = shapely.clip_by_rect(g, *bx)
            if not gi.is_empty:
                names.append(net)
                geoms.append(gi)
        if not names:
            continue
        arr = np.array(geoms, dtype=object)
        tree = shapely.STRtree(arr)
        pi, gi_idx = tree.query_nearest(pts[on], max_distance=MAP_TOLERANCE_MM, all_matches=False)
        net_of = np.full(len(on), -1)
        net_of[pi] = gi_idx
        for j, net in enumerate(names):
            sel = on[net_of == j]
            if len(sel) == 0:
                continue
            d = dist[sel]
            charge = {}
            for name, qq in q.items():
                mag = np.abs(qq[sel])
                charge[name] = tuple(float(mag[d <= e + 1e-9].sum()) for e in edges)
            p = arr[j].representative_point()
            groups.append(CopperGroup(layer, net, (round(p.x, 4), round(p.y, 4)), charge))
    return groups


def window_box(model: SensorModel) -> tuple[float, float, float, float]:
    """The solve window (x0, y0, x1, y1) in mm: the electrodes' box grown by the window size."""
    x0, y0, x1, y1 = model.sensor.outline.bounds
    w = model.opts.window_mm
    return (x0 - w, y0 - w, x1 + w, y1 + w)
