"""Sensor recognition: :func:`build_design` turns a Board and a Config into a Design.

Order of work:

1. Roles of nets (``design/roles.py``): patterns, then places.
2. Explicit ``[[sensors]]`` groups, in config order.  A group naming a net the board does not
   have is a config error (``sensors[i].nets``).  A group with its own ``face`` is touched from
   that face: its electrodes are taken nearest that face, and ``Sensor.face`` says so (rules read
   the electrodes' layers; the estimate turns the stack over for it).  Every other sensor takes the
   board's face.
3. Matrices by name: transmitter (or self) nets whose names pair as rows and columns
   (``X*``/``Y*``, ``ROW*``/``COL*``, ``R*``/``C*``, ``H*``/``V*`` after a common prefix).
4. Mutual nodes from geometry: every transmitter/receiver pair is looked at on each copper
   layer (facing each other on one layer, or the transmitter on another layer under the
   receiver).  The *facing region* is the set of points within :data:`FACING_GAP_MM` of both
   nets (:data:`CROSS_LAYER_GAP_MM` across layers); its pieces are clustered, and a cluster is
   a node when the region filled with the copper inside its hull holds a disc of radius
   :data:`NODE_CORE_RADIUS_MM`.  A TX ring around an RX disc, interleaved fingers and a
   solid TX under an RX comb all do; two traces routed side by side never do (their facing
   strip is at most ``2 * FACING_GAP_MM - gap`` wide).  Nodes whose footprints touch, with at
   least two TX and two RX nets among them, form one matrix (a diamond touchpad); apart they
   stay separate keys (a keyboard).
5. Self electrodes: nets with the self role, not used above.  Nets with the same sensor name
   (from the roles section) or the same name stem (``SL0``, ``SL1``... -> ``SL``) whose
   electrodes sit next to each other (edge gaps at most :data:`SEGMENT_GAP_MAX_MM`), or whose
   stem says slider/wheel, become a slider (collinear centroids, ordered along the line) or a
   wheel (centroids around a circle covering all of it, ordered by angle); the direction is
   the one that agrees best with the natural order of the names.  The rest are buttons;
   stems holding ``PROX`` make proximity electrodes.

Electrode versus trace: a self electrode is its net's copper on the touched face's outer layer
(or the nearest copper layer that has it), without its trace.  Where the layer's features carry
the net (Gerber X2), the trace is the copper of thin draws and arcs (width up to
:data:`TRACE_WIDTH_MAX_MM`) that no flash or region of the net covers, so thin teeth of an
interleaved pad stay electrode.  Otherwise a morphological opening with radius half the widest
thin draw of that net there (that limit when the net has no draws) decides.  Either way what is
left in pieces of at least :data:`MIN_ELECTRODE_AREA_MM2` is the electrode; thin draws and small
pads (vias, series parts) are its trace.  The exact copper outline is kept.  ``Electrode.trace`` holds
the rest of the net's copper, per layer.

The sensing zone of each sensor: ``design/zones.py``.
"""

from __future__ import annotations

import difflib
import math
import re
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field

import numpy as np
import shapely
import shapely.prepared
from shapely.geometry import MultiPolygon, Polygon
from shapely.geometry.base import BaseGeometry

from sensorcheck.board.model import Board, Feature, Layer
from sensorcheck.design.model import Config, Design, Electrode, Role, Sensor, SensorGroup, SensorKind, readable
from sensorcheck.design.roles import assign_roles, natural_key
from sensorcheck.design.zones import sensing_zone, zone_margin_mm
from sensorcheck.errors import ConfigError

TRACE_WIDTH_MAX_MM = 1.0  # draws this wide or thinner can be traces (common practice: sensor traces 0.1-0.5 mm)
MIN_ELECTRODE_AREA_MM2 = 4.0  # smaller solid copper is a via pad or a part's pad, not an electrode
FACING_GAP_MM = 1.5  # widest TX-RX gap looked at on one layer (vendor guidance (anonymous): 0.25-1.5 mm)
CROSS_LAYER_GAP_MM = 1.0  # sideways reach for TX on another layer under RX
NODE_CORE_RADIUS_MM = 1.75  # a node's filled facing region holds a 3.5 mm disc
CLUSTER_MERGE_MM = 1.0  # facing-region pieces this close belong to one node
DETECT_TOLERANCE_MM = 0.05  # outline simplification for node detection only (electrodes keep exact copper;
#                              a twentieth of the 1 mm cross-layer reach; the buffers cost grows with vertices)
MIN_NODE_COPPER_MM2 = 4.0  # a node has at least this much TX and this much RX copper in its footprint
MATRIX_TOUCH_MM = 1.0  # node footprints this close belong to one matrix
SEGMENT_GAP_MAX_MM = 3.0  # slider/wheel neighbours are at most this far apart edge to edge
LINE_TOLERANCE = 0.15  # collinear: largest off-line distance / length along the line
CIRCLE_TOLERANCE = 0.15  # circular: largest radius deviation / radius

_ROW_COL_PAIRS = {("x", "y"), ("row", "col"), ("row", "column"), ("rows", "cols"), ("r", "c"), ("h", "v")}
_SLIDER_WORDS = ("SLID", "SLD", "SCROLL")
_WHEEL_WORDS = ("WHEEL", "WHL", "ROTARY", "ROT")
_PROXIMITY_WORDS = ("PROX", "HANDSENSE", "HAND_SENSE", "PRESENCE")


def _is_proximity_name(name: str) -> bool:
    up = name.upper()
    return any(w in up for w in _PROXIMITY_WORDS)


def _empty() -> BaseGeometry:
    return Polygon()


def _union(geoms: Iterable[BaseGeometry]) -> BaseGeometry:
    gs = [g for g in geoms if g is not None and not g.is_empty]
    return shapely.union_all(gs) if gs else _empty()


def _polys(geom: BaseGeometry) -> list[Polygon]:
    if geom.is_empty:
        return []
    if isinstance(geom, Polygon):
        return [geom]
    out: list[Polygon] = []
    for g in getattr(geom, "geoms", []):
        out.extend(_polys(g))
    return out


def _area_only(geom: BaseGeometry) -> BaseGeometry:
    """The polygonal part of ``geom`` (results of overlay operations: pieces never overlap)."""
    if isinstance(geom, (Polygon, MultiPolygon)):
        return geom
    polys = _polys(geom)
    if not polys:
        return _empty()
    return polys[0] if len(polys) == 1 else MultiPolygon(polys)


def _valid(geom: BaseGeometry) -> BaseGeometry:
    """``geom`` repaired when a reader left it invalid (self-touching rings), polygons only."""
    return geom if geom.is_valid else _area_only(shapely.make_valid(geom))


def stem_of(net: str) -> str | None:
    """The name without its trailing index (``SL_3`` -> ``SL``); None when there is no index."""
    m = re.match(r"^(.*?[A-Za-z])[_\-.]?(\d+)$", net)
    return m.group(1).upper() if m else None


# --------------------------------------------------------------------------- electrodes


def net_layers(board: Board, net: str) -> list[Layer]:
    """Copper layers holding copper of ``net``, top first."""
    return [la for la in board.copper_layers() if net in la.by_net and not la.by_net[net].is_empty]


def face_layers(board: Board, face: str) -> list[Layer]:
    """Copper layers ordered from the touched face inwards."""
    cu = board.copper_layers()
    return cu if face == "top" else list(reversed(cu))


def opening_radius_mm(layer: Layer, net: str) -> float:
    """Half the widest thin draw of ``net`` on ``layer`` (a little more, so it is removed)."""
    widths = [
        f.width_mm for f in layer.features
        if f.net == net and f.kind in ("draw", "arc") and f.width_mm is not None and 0 < f.width_mm <= TRACE_WIDTH_MAX_MM
    ]
    w = max(widths) if widths else TRACE_WIDTH_MAX_MM
    return 0.5 * w * 1.05 + 0.005


def _is_trace_feature(f: Feature) -> bool:
    return f.kind in ("draw", "arc") and f.width_mm is not None and 0 < f.width_mm <= TRACE_WIDTH_MAX_MM


#: thin draws whose areas add up to this many times the area they cover overlap like a painted fill
PAINTED_OVERLAP = 1.5


def _painted_area(thin: list[Feature], traces: BaseGeometry, pads: BaseGeometry) -> BaseGeometry:
    """Area copper drawn with thin strokes, which older exports make in two ways (corpus b09):
    a pour's region bordered by strokes along its edge, and a pad filled with dozens of
    overlapping strokes.  The first are the strokes that lie along a pad or region (within one
    stroke width of it); the second, the parts of the strokes' union that survive an opening
    wider than any stroke, in pieces of electrode size.  Routing leaves its pads and overlaps
    only at its joints, so neither test takes it."""
    if not thin or traces.is_empty:
        return _empty()
    out: list[BaseGeometry] = []
    if not pads.is_empty:
        w = max(float(f.width_mm or 0.0) for f in thin)
        near = shapely.prepared.prep(pads.buffer(w, quad_segs=2))
        out += [f.geometry for f in thin if near.covers(f.geometry)]
    if len(thin) >= 8 and float(sum(f.geometry.area for f in thin)) >= PAINTED_OVERLAP * traces.area:
        r = 0.75 * max(float(f.width_mm or 0.0) for f in thin)
        opened = traces.buffer(-r, quad_segs=2).buffer(r, quad_segs=2)
        out += [q for q in _polys(opened) if q.area >= MIN_ELECTRODE_AREA_MM2]
    return _union(out) if out else _empty()


def split_electrode(layer: Layer, net: str) -> tuple[BaseGeometry, BaseGeometry]:
    """(electrode, trace) of ``net`` on ``layer``; electrode is empty when all of it is thin.

    With the net's own features on the layer (Gerber X2 net attributes): the copper of thin
    draws and arcs that no pad, flash or region covers is trace; the rest, in pieces of at
    least :data:`MIN_ELECTRODE_AREA_MM2`, is electrode (thin teeth of an interleaved pad stay
    with it).  Without them: a morphological opening (see the module docstring).
    """
    electrode, trace, _geom = _split_electrode(layer, net)
    return electrode, trace


def _split_electrode(layer: Layer, net: str) -> tuple[BaseGeometry, BaseGeometry, BaseGeometry]:
    """:func:`split_electrode` and the copper it split (the layer's own object when that was valid)."""
    geom = _valid(_area_only(layer.by_net.get(net, _empty())))
    if geom.is_empty:
        return _empty(), _empty(), geom
    # footprint graphics etched in copper (X2 .AperFunction EtchedComponent: a slider's drawn
    # outline) are neither trace nor pad: the copper they draw is judged as it lies
    feats = [f for f in layer.features if f.net == net and f.polarity == "dark" and f.aperture_function != "EtchedComponent"]
    if feats:
        thin = [f for f in feats if _is_trace_feature(f)]
        traces = _union(f.geometry for f in thin)
        pads = _union(f.geometry for f in feats if not _is_trace_feature(f))
        painted = _painted_area(thin, traces, pads)
        if not painted.is_empty:
            pads = _union([pads, painted])
        rest = geom if traces.is_empty else _area_only(geom.difference(traces.difference(pads)))
        keep = [p for p in _polys(rest) if p.area >= MIN_ELECTRODE_AREA_MM2]
        if not keep:
            return _empty(), geom, geom
        electrode = _area_only(geom.intersection(_union(keep).buffer(1e-4, quad_segs=1)))
        return electrode, _area_only(geom.difference(electrode)), geom
    r = opening_radius_mm(layer, net)
    opened = geom.buffer(-r, quad_segs=4).buffer(r, quad_segs=4)
    keep = [p for p in _polys(opened) if p.area >= MIN_ELECTRODE_AREA_MM2]
    if not keep:
        return _empty(), geom, geom
    electrode = _area_only(geom.intersection(_union(keep).buffer(0.5 * r, quad_segs=4)))
    trace = _area_only(geom.difference(electrode))
    return electrode, trace, geom


def _net_copper(board: Board, net: str, except_layer: str | None = None,
                minus: BaseGeometry | None = None, by_part: bool = False,
                cut: BaseGeometry | None = None) -> dict[str, BaseGeometry]:
    """The net's copper per layer, optionally without ``minus`` on ``except_layer``.

    ``by_part``: only the net's polygons whose box meets the box of ``minus`` are cut, the others
    are kept as they are (the same set, without noding all of the net's copper against ``minus``).
    ``cut``: that difference on ``except_layer``, already made by the caller with the same operation.
    """
    out: dict[str, BaseGeometry] = {}
    for la in net_layers(board, net):
        g = la.by_net[net]
        if la.name == except_layer and cut is not None:
            g = cut
        elif la.name == except_layer and minus is g:
            continue  # the whole of it is the electrode (whole-net electrodes): nothing left
        elif la.name == except_layer and minus is not None:
            g = _minus_by_part(g, minus) if by_part else _area_only(g.difference(minus))
        if not g.is_empty:
            out[la.name] = g
    return out


def _parts_meeting(geom: BaseGeometry, other: BaseGeometry) -> tuple[list[Polygon], list[bool]] | None:
    """The polygons of ``geom`` and whether each one's box meets ``other``'s; None when the cut
    must take ``geom`` whole (one polygon, ``other`` empty, or every box meets)."""
    parts = _polys(geom)
    if len(parts) < 2 or other.is_empty:
        return None
    ox0, oy0, ox1, oy1 = other.bounds
    b = shapely.bounds(parts)
    meets = (b[:, 0] <= ox1) & (ox0 <= b[:, 2]) & (b[:, 1] <= oy1) & (oy0 <= b[:, 3])
    return None if meets.all() else (parts, meets.tolist())


def _and_by_part(geom: BaseGeometry, other: BaseGeometry) -> BaseGeometry:
    """``geom`` cut by ``other``, taking only the polygons of ``geom`` whose box meets that of ``other``."""
    split = _parts_meeting(geom, other)
    if split is None:
        return _area_only(geom.intersection(other))
    hit = [p for p, m in zip(*split) if m]
    if not hit:
        return _empty()
    return _area_only((hit[0] if len(hit) == 1 else MultiPolygon(hit)).intersection(other))


def _minus_by_part(geom: BaseGeometry, minus: BaseGeometry) -> BaseGeometry:
    """``geom`` without ``minus``, cutting only the polygons of ``geom`` whose box meets that of ``minus``."""
    split = _parts_meeting(geom, minus)
    if split is None:
        return _area_only(geom.difference(minus))
    keep: list[Polygon] = []
    for p, m in zip(*split):
        keep.extend(_polys(p.difference(minus)) if m else [p])
    if not keep:
        return _empty()
    return keep[0] if len(keep) == 1 else MultiPolygon(keep)


def self_electrode(board: Board, net: str, role: Role, face: str, notes: list[str]) -> Electrode | None:
    """The electrode of a self (or proximity) net: solid copper nearest the touched face."""
    layers = [la for la in face_layers(board, face) if net in la.by_net and not la.by_net[net].is_empty]
    if not layers:
        return None
    for i, la in enumerate(layers):
        electrode, trace, split = _split_electrode(la, net)
        if not electrode.is_empty:
            if la is not face_layers(board, face)[0]:
                notes.append(f"net {net}: no electrode on the touched face's outer copper; took its copper on {la.name}")
            # the split made the layer's copper minus the electrode already, when it split the
            # layer's own copper (not a repaired copy): the same operation on the same operands
            cut = trace if split is la.by_net[net] else None
            return Electrode(net=net, role=role, layer=la.name, geometry=electrode,
                             trace=_net_copper(board, net, la.name, electrode, cut=cut))
    la = layers[0]
    geom = _area_only(la.by_net[net])
    notes.append(f"net {net}: all of its copper is thin (no solid part); took all of it on {la.name} as the electrode")
    return Electrode(net=net, role=role, layer=la.name, geometry=geom, trace=_net_copper(board, net, la.name, geom))


def whole_net_electrode(board: Board, net: str, role: Role, face: str) -> Electrode | None:
    """All of a net's copper on its layer with the most copper (nearest the face on ties)."""
    layers = [la for la in face_layers(board, face) if net in la.by_net and not la.by_net[net].is_empty]
    if not layers:
        return None
    best = max(layers, key=lambda la: (round(la.by_net[net].area, 6), -layers.index(la)))
    geom = _valid(_area_only(best.by_net[net]))
    return Electrode(net=net, role=role, layer=best.name, geometry=geom,
                     trace=_net_copper(board, net, best.name, geom))


# --------------------------------------------------------------------------- mutual nodes


@dataclass(slots=True)
class Node:
    """One TX-RX facing place found in the copper."""

    tx: str
    rx: str
    tx_layer: str
    rx_layer: str
    footprint: BaseGeometry  # where the node's electrodes are taken from


def _short_side(geom: BaseGeometry) -> float:
    """The shorter side of the minimum rotated rectangle around ``geom`` (0 for lines and points)."""
    rect = geom.minimum_rotated_rectangle
    if not isinstance(rect, Polygon):
        return 0.0
    (x0, y0), (x1, y1), (x2, y2) = shapely.get_coordinates(rect)[:3].tolist()
    return min(math.hypot(x1 - x0, y1 - y0), math.hypot(x2 - x1, y2 - y1))


def _cluster_pieces(pieces: Sequence[BaseGeometry], distance_mm: float) -> list[list[int]]:
    """Indices of pieces linked by gaps of at most ``distance_mm``, cluster by cluster."""
    parent = list(range(len(pieces)))

    def find(i: int) -> int:
        while parent[i] != i:
            parent[i] = parent[parent[i]]
            i = parent[i]
        return i

    if len(pieces) > 1:
        tree = shapely.STRtree(list(pieces))
        for i, p in enumerate(pieces):
            for j in tree.query(p, predicate="dwithin", distance=distance_mm):
                parent[find(i)] = find(int(j))
    groups: dict[int, list[int]] = {}
    for i in range(len(pieces)):
        groups.setdefault(find(i), []).append(i)
    return sorted(groups.values(), key=min)


def _detect_outline(geom: BaseGeometry) -> BaseGeometry:
    """``geom`` simplified to :data:`DETECT_TOLERANCE_MM` for node detection.

    Plain Douglas-Peucker (a tenth of the cost of the topology-preserving kind on b04's nets);
    where that leaves an invalid polygon (rings crossing), the topology-preserving kind instead.
    """
    fast = geom.simplify(DETECT_TOLERANCE_MM, preserve_topology=False)
    return fast if not fast.is_empty and fast.is_valid else geom.simplify(DETECT_TOLERANCE_MM)


def _short_core(fill: BaseGeometry) -> bool:
    """Does ``fill`` hold a disc of radius NODE_CORE_RADIUS_MM (to within the detection tolerance)?"""
    if _short_side(fill) < 2 * NODE_CORE_RADIUS_MM:
        return False
    coarse = fill.simplify(DETECT_TOLERANCE_MM)
    return not coarse.buffer(-NODE_CORE_RADIUS_MM, quad_segs=2).is_empty


def _window(a: BaseGeometry, b: BaseGeometry, grow: float) -> tuple[float, float, float, float] | None:
    ax0, ay0, ax1, ay1 = a.bounds
    bx0, by0, bx1, by1 = b.bounds
    x0, y0 = max(ax0, bx0) - grow, max(ay0, by0) - grow
    x1, y1 = min(ax1, bx1) + grow, min(ay1, by1) + grow
    return (x0, y0, x1, y1) if x0 <= x1 and y0 <= y1 else None


def facing_nodes(tx_geom: BaseGeometry, rx_geom: BaseGeometry, gap_mm: float,
                 tx_buffer: BaseGeometry | None = None, rx_buffer: BaseGeometry | None = None,
                 near: bool = False) -> list[BaseGeometry]:
    """Footprints where ``tx_geom`` and ``rx_geom`` (projected onto one plane) form a node.

    Both (and their buffers by the gap, when the caller has them) are clipped to where their
    boxes overlap before anything else, so a long TX line crossing many RX lines costs only
    its crossings.  ``near``: the caller knows the two are within the gap of each other.
    """
    if tx_geom.is_empty or rx_geom.is_empty:
        return []
    win = _window(tx_geom, rx_geom, gap_mm)
    if win is None:
        return []
    x0, y0, x1, y1 = win
    big = 4 * gap_mm + 2 * NODE_CORE_RADIUS_MM
    box_ = (x0 - big, y0 - big, x1 + big, y1 + big)
    clipped: list[BaseGeometry] = []

    def copper() -> tuple[BaseGeometry, BaseGeometry]:
        if not clipped:
            clipped.extend((_area_only(shapely.clip_by_rect(tx_geom, *box_)),
                            _area_only(shapely.clip_by_rect(rx_geom, *box_))))
        return clipped[0], clipped[1]

    # the points where the two come within the gap lie in the window, so the clipped copper is
    # as near as the whole copper: when the caller knows that, it is clipped only for a candidate
    if not near:
        tx_c, rx_c = copper()
        if tx_c.is_empty or rx_c.is_empty or not shapely.dwithin(tx_c, rx_c, gap_mm):
            return []
    # the points within the gap of both lie in the window: the buffers are cut to it, not to the
    # wider box the copper is taken from
    tb = (shapely.clip_by_rect(tx_buffer, *win) if tx_buffer is not None
          else copper()[0].buffer(gap_mm, quad_segs=4))
    rb = (shapely.clip_by_rect(rx_buffer, *win) if rx_buffer is not None
          else copper()[1].buffer(gap_mm, quad_segs=4))
    region = _area_only(tb.intersection(rb))
    if region.is_empty:
        return []
    pieces = _polys(region)
    boxes = shapely.bounds(pieces)
    out: list[BaseGeometry] = []
    for members in _cluster_pieces(pieces, CLUSTER_MERGE_MM):
        # the shorter side of the smallest rectangle around the cluster is at most the square root
        # of its area, which is at most the area of the cluster's box: a box under 12 mm2 (the core
        # needs 3.5 x 3.5 = 12.25) decides without the hull (a crossing of two traces on two layers)
        bx = boxes[members]
        box_area = (bx[:, 2].max() - bx[:, 0].min()) * (bx[:, 3].max() - bx[:, 1].min())
        if box_area < 0.98 * (2 * NODE_CORE_RADIUS_MM) ** 2:
            continue
        # the pieces of one overlay result never overlap: their hull needs no union first
        mine = [pieces[i] for i in members]
        hull = (mine[0] if len(mine) == 1 else MultiPolygon(mine)).convex_hull
        if _short_side(hull) < 2 * NODE_CORE_RADIUS_MM:
            continue  # the filled region lies inside the hull: no room for the core disc
        # the copper inside the hull, net by net (each clipped to the small hull first): the same
        # set as the union of both nets' copper cut by the hull, without that large union
        tx_c, rx_c = copper()
        tx_in, rx_in = _area_only(tx_c.intersection(hull)), _area_only(rx_c.intersection(hull))
        fill = _union([*mine, tx_in, rx_in])
        if not _short_core(fill):
            continue
        footprint = hull.buffer(gap_mm, quad_segs=4)
        # the footprint holds the hull: copper enough in the hull is copper enough in the footprint
        if ((tx_in.area < MIN_NODE_COPPER_MM2 and tx_c.intersection(footprint).area < MIN_NODE_COPPER_MM2)
                or (rx_in.area < MIN_NODE_COPPER_MM2 and rx_c.intersection(footprint).area < MIN_NODE_COPPER_MM2)):
            continue
        out.append(footprint)
    return out


@dataclass(slots=True)
class NodeCache:
    """What node detection computed on one board: per-pair nodes, simplified copper, gap buffers."""

    pairs: dict[tuple[str, str], list[Node]] = field(default_factory=dict)
    geo: dict[tuple[str, str], BaseGeometry | None] = field(default_factory=dict)
    buffers: dict[tuple[str, str, float], BaseGeometry] = field(default_factory=dict)
    boxes: dict[tuple[str, str], tuple[float, float, float, float]] = field(default_factory=dict)


def find_nodes(board: Board, tx_nets: Sequence[str], rx_nets: Sequence[str],
               cache: NodeCache | None = None) -> list[Node]:
    """Every TX-RX node in the copper (same layer, or TX on another layer under RX).

    Detection works on outlines simplified to :data:`DETECT_TOLERANCE_MM` (arcs come finely
    flattened); electrodes are cut from the exact copper afterwards.  ``cache`` keeps work
    between calls on the same board."""
    c = cache if cache is not None else NodeCache()
    layers = board.copper_layers()

    def geo(net: str, layer: Layer) -> BaseGeometry | None:
        key = (net, layer.name)
        if key not in c.geo:
            g = layer.by_net.get(net)
            c.geo[key] = None if g is None or g.is_empty else _detect_outline(_valid(_area_only(g)))
        return c.geo[key]

    def buf(net: str, layer: str, gap: float) -> BaseGeometry:
        key = (net, layer, gap)
        if key not in c.buffers:
            g = c.geo[(net, layer)]
            assert g is not None
            c.buffers[key] = g.buffer(gap, quad_segs=2)
        return c.buffers[key]

    def box(net: str, layer: str) -> tuple[float, float, float, float]:
        key = (net, layer)
        if key not in c.boxes:
            c.boxes[key] = c.geo[key].bounds  # type: ignore[union-attr]
        return c.boxes[key]

    for rx in rx_nets:
        for tx in tx_nets:
            if (tx, rx) in c.pairs:
                continue
            found: list[Node] = []
            for rl in layers:
                rg = geo(rx, rl)
                if rg is None:
                    continue
                rx0, ry0, rx1, ry1 = box(rx, rl.name)
                for tl in layers:
                    tg = geo(tx, tl)
                    if tg is None:
                        continue
                    gap = FACING_GAP_MM if tl is rl else CROSS_LAYER_GAP_MM
                    tx0, ty0, tx1, ty1 = box(tx, tl.name)
                    # the boxes grown by the gap must meet (as _window), then the copper itself
                    if (max(tx0, rx0) - min(tx1, rx1) > 2 * gap or max(ty0, ry0) - min(ty1, ry1) > 2 * gap
                            or not shapely.dwithin(tg, rg, gap)):
                        continue
                    for fp in facing_nodes(tg, rg, gap, buf(tx, tl.name, gap), buf(rx, rl.name, gap), near=True):
                        found.append(Node(tx=tx, rx=rx, tx_layer=tl.name, rx_layer=rl.name, footprint=fp))
            c.pairs[(tx, rx)] = _merge_same_pair(found, board)
    return [n for rx in rx_nets for tx in tx_nets for n in c.pairs[(tx, rx)]]


def _facing_copper_mm2(board: Board, n: Node) -> float:
    """How much the two lines of a node face each other on its layers: the smaller of the TX copper
    on its layer and the RX copper on its layer inside the node's footprint (mm2)."""
    areas = []
    for net, layer_name in ((n.tx, n.tx_layer), (n.rx, n.rx_layer)):
        la = board.layer(layer_name)
        g = la.by_net.get(net) if la is not None else None
        areas.append(0.0 if g is None else float(_and_by_part(g, n.footprint).area))
    return min(areas)


def _merge_same_pair(nodes: list[Node], board: Board | None = None) -> list[Node]:
    """One node per (tx, rx) place: footprints of the same pair that overlap (seen on two layers) merge.

    The merged node's layers are those where its two lines face each other most (the larger of the
    smaller copper inside each footprint, :func:`_facing_copper_mm2`; ties keep the first found, in
    stack order): a line that only passes the other on one layer (a via, a trace entering the key)
    does not decide the layer of the key it forms on another.
    """
    out: list[Node] = []
    score: list[float | None] = []
    for n in nodes:
        for k, m in enumerate(out):
            if m.tx == n.tx and m.rx == n.rx and m.footprint.intersects(n.footprint):
                if board is not None and (m.tx_layer, m.rx_layer) != (n.tx_layer, n.rx_layer):
                    if score[k] is None:
                        score[k] = _facing_copper_mm2(board, m)
                    mine = _facing_copper_mm2(board, n)
                    if mine > score[k]:  # type: ignore[operator]
                        m.tx_layer, m.rx_layer, score[k] = n.tx_layer, n.rx_layer, mine
                m.footprint = m.footprint.union(n.footprint)
                break
        else:
            out.append(Node(n.tx, n.rx, n.tx_layer, n.rx_layer, n.footprint))
            score.append(None)
    return out


def node_electrodes(board: Board, node_tx: Sequence[tuple[str, str]], node_rx: Sequence[tuple[str, str]],
                    footprint: BaseGeometry) -> list[Electrode]:
    """TX and RX electrodes: each net's copper inside the footprint on its layer; the rest is trace."""
    out: list[Electrode] = []
    for (net, layer_name), role in [*((x, "transmitter") for x in node_tx), *((x, "receiver") for x in node_rx)]:
        la = board.layer(layer_name)
        if la is None or net not in la.by_net:
            continue
        geom = _and_by_part(la.by_net[net], footprint)
        if geom.is_empty:
            continue
        # the rest of the net is its copper outside the footprint: the same set as its copper
        # minus the electrode, at the cost of a difference with a simple outline
        out.append(Electrode(net=net, role=role, layer=layer_name, geometry=geom,  # type: ignore[arg-type]
                             trace=_net_copper(board, net, layer_name, footprint, by_part=True)))
    return out


# --------------------------------------------------------------------------- arrangement (sliders, wheels)


@dataclass(slots=True)
class Arrangement:
    kind: SensorKind  # "slider" or "wheel"
    order: list[int]  # indices in position order
    how: str


def _centroids(electrodes: Sequence[Electrode]) -> np.ndarray:
    return np.array([[e.geometry.centroid.x, e.geometry.centroid.y] for e in electrodes], dtype=float)


def _agreement(order: Sequence[int], names: Sequence[str]) -> int:
    ranks = sorted(range(len(names)), key=lambda i: natural_key(names[i]))
    rank_of = {i: r for r, i in enumerate(ranks)}
    seq = [rank_of[i] for i in order]
    return sum(1 for a, b in zip(seq, seq[1:]) if b > a)


def _orient(order: list[int], names: Sequence[str], cyclic: bool) -> list[int]:
    """Pick the direction (and for a wheel the start) that agrees best with the names' order."""
    candidates: list[list[int]] = []
    for seq in (order, order[::-1]):
        if cyclic:
            candidates.extend(seq[k:] + seq[:k] for k in range(len(seq)))
        else:
            candidates.append(seq)
    first_name = min(range(len(names)), key=lambda i: natural_key(names[i]))
    return max(candidates, key=lambda s: (_agreement(s, names), s[0] == first_name, -candidates.index(s)))


def arrange(electrodes: Sequence[Electrode], *, require_adjacent: bool, prefer: SensorKind | None = None
            ) -> Arrangement | None:
    """Slider (collinear) or wheel (around a circle) arrangement of segments, or None."""
    n = len(electrodes)
    if n < 2:
        return None
    names = [e.net for e in electrodes]
    pts = _centroids(electrodes)
    centre = pts.mean(axis=0)
    d = pts - centre
    _, s, vt = np.linalg.svd(d, full_matrices=False)
    u = vt[0]
    if u[0] < -1e-9 or (abs(u[0]) <= 1e-9 and u[1] < 0):
        u = -u  # deterministic: increasing x (vertical lines: increasing y) on ties of the name order
    along = d @ u
    off = d @ np.array([-u[1], u[0]])
    extent = float(along.max() - along.min())
    collinear = extent > 0 and float(np.abs(off).max()) <= LINE_TOLERANCE * extent
    result: Arrangement | None = None
    if n >= 3 and (not collinear or prefer == "wheel"):
        # algebraic circle fit: x^2 + y^2 + D x + E y + F = 0
        a = np.column_stack([pts[:, 0], pts[:, 1], np.ones(n)])
        b = -(pts[:, 0] ** 2 + pts[:, 1] ** 2)
        sol, *_ = np.linalg.lstsq(a, b, rcond=None)
        cx, cy = -sol[0] / 2, -sol[1] / 2
        r2 = cx * cx + cy * cy - sol[2]
        if r2 > 0:
            r = math.sqrt(r2)
            radii = np.hypot(pts[:, 0] - cx, pts[:, 1] - cy)
            if float(np.abs(radii - r).max()) <= CIRCLE_TOLERANCE * r:
                ang = np.arctan2(pts[:, 1] - cy, pts[:, 0] - cx)
                order = [int(i) for i in np.argsort(ang, kind="stable")]
                sorted_ang = np.sort(ang)
                gaps = np.diff(np.concatenate([sorted_ang, [sorted_ang[0] + 2 * math.pi]]))
                full = float(gaps.max()) <= 1.5 * 2 * math.pi / n
                if full:
                    result = Arrangement("wheel", _orient(order, names, cyclic=True), "centroids around a circle")
                else:
                    k = int(np.argmax(gaps))
                    order = order[k + 1:] + order[: k + 1]
                    result = Arrangement("slider", _orient(order, names, cyclic=False), "centroids along an arc")
    if result is None and collinear:
        order = [int(i) for i in np.argsort(along, kind="stable")]
        result = Arrangement("slider", _orient(order, names, cyclic=False), "centroids along a line")
    if result is None:
        return None
    if require_adjacent:
        seq = result.order + ([result.order[0]] if result.kind == "wheel" else [])
        for i, j in zip(seq, seq[1:]):
            if electrodes[i].geometry.distance(electrodes[j].geometry) > SEGMENT_GAP_MAX_MM:
                return None
    return result


# --------------------------------------------------------------------------- build


def _suggest(net: str, names: list[str]) -> str:
    hint = difflib.get_close_matches(net, names, n=3)
    return f"; nets like it: {', '.join(hint)}" if hint else ""


def _check_group_nets(board_nets: set[str], group: SensorGroup, i: int, config: Config) -> None:
    names = sorted(board_nets, key=natural_key)
    for fld in ("nets", "tx", "rx", "rows", "columns"):
        for net in getattr(group, fld):
            if net not in board_nets:
                raise ConfigError(config.file, f"sensors[{i}].{fld}",
                                  f"sensor '{group.name}' names net '{net}', which is not on the board"
                                  + _suggest(net, names))


def _make_sensor(name: str, kind: SensorKind, electrodes: list[Electrode], margin: float, how: str,
                 face_order: list[str], order: Sequence[str] = (), rows: Sequence[str] = (),
                 columns: Sequence[str] = ()) -> Sensor:
    rank = {n: i for i, n in enumerate(face_order)}
    rx_like = [e for e in electrodes if e.role in ("receiver", "self")] or electrodes
    layer = min((e.layer for e in rx_like), key=lambda la: rank.get(la, 99)) if rx_like else face_order[0]
    sensor = Sensor(name=name, kind=kind, layer=layer, electrodes=electrodes, zone=Polygon(), zone_margin_mm=margin,
                    order=tuple(order), rows=tuple(rows), columns=tuple(columns), how_found=how)
    # the zone grows the sensor's own outline: one union serves the zone, the rules and the report
    sensor.zone = sensing_zone([e.geometry for e in electrodes], margin, outline=sensor.outline)
    return sensor


def _row_col_match(a: str, b: str) -> bool:
    i = 0
    while i < min(len(a), len(b)) and a[i] == b[i]:
        i += 1
    ra, rb = a[i:].lower().strip("_-."), b[i:].lower().strip("_-.")
    return (ra, rb) in _ROW_COL_PAIRS or (rb, ra) in _ROW_COL_PAIRS


def build_design(board: Board, config: Config) -> Design:
    """Roles, sensors and zones of ``board`` under ``config`` (see the module docstring)."""
    ra = assign_roles(board, config)
    roles = dict(ra.roles)
    notes: list[str] = [*config.notes, *ra.notes]
    sensors: list[Sensor] = []
    margin = zone_margin_mm(config)
    face = config.overlay.face if config.overlay is not None else config.face
    face_order = [la.name for la in face_layers(board, face)]
    board_nets = set(board.net_names())
    used: set[str] = set()
    memo = NodeCache()

    if not board.copper_layers():
        notes.append("the board has no copper layers: no sensors")
        return Design(board=board, config=config, roles=roles, sensors=[], notes=notes)

    # 2. explicit groups, each from its own face where it gives one ([[sensors]] face)
    for i, g in enumerate(config.groups):
        _check_group_nets(board_nets, g, i, config)
        g_face = g.face or face
        g_order = face_order if g_face == face else [la.name for la in face_layers(board, g_face)]
        sensor = _group_sensor(board, g, roles, margin, g_face, g_order, notes)
        sensor.face = g_face  # type: ignore[assignment]
        sensors.append(sensor)
        used.update(g.nets, g.tx, g.rx, g.rows, g.columns)
    n_groups = len(sensors)

    # 3. matrices by name
    for role_a, role_b in (("transmitter", "receiver"), ("self", "self")):
        a_nets = [n for n, (r, _) in roles.items() if r == role_a and n not in used]
        b_nets = [n for n, (r, _) in roles.items() if r == role_b and n not in used]
        sensors.extend(_name_matrices(board, a_nets, b_nets, roles, margin, face, face_order, used, memo))

    # 4. mutual nodes from geometry
    tx_nets = sorted((n for n, (r, _) in roles.items() if r == "transmitter" and n not in used), key=natural_key)
    rx_nets = sorted((n for n, (r, _) in roles.items() if r == "receiver" and n not in used), key=natural_key)
    if tx_nets and rx_nets:
        sensors.extend(_geometry_mutual(board, tx_nets, rx_nets, ra.sensor_of, margin, face_order, used, notes, memo))
    for n in [*tx_nets, *rx_nets]:
        if n not in used:
            notes.append(f"net {n} ({roles[n][0]}) faces no {'receiver' if roles[n][0] == 'transmitter' else 'transmitter'}"
                         " net: it is in no mutual button")

    # 5. self electrodes
    self_nets = sorted((n for n, (r, _) in roles.items() if r == "self" and n not in used), key=natural_key)
    sensors.extend(_self_sensors(board, self_nets, ra.sensor_of, margin, face, face_order, used, notes))

    if not config.roles and not config.roles_by_place and not config.groups:
        notes.append(
            "no net roles given, so no sensors were found: give roles in sensorcheck.toml "
            "([roles] self = [\"TOUCH*\"], transmitter = [\"TX*\"], receiver = [\"RX*\"]), "
            "[[roles.place]] for boards without net names, or [[sensors]] groups; "
            "`sensorcheck init PATH` writes a starter file"
        )
    for s in sensors[n_groups:]:
        s.face = face  # type: ignore[assignment]
        if s.how_found == "roles" and any(n in ra.by_place for n in s.nets):
            s.how_found = "place"
    names: dict[str, int] = {}
    for s in sensors:
        names[s.name] = names.get(s.name, 0) + 1
    for name, count in names.items():
        if count > 1:
            notes.append(f"sensor name '{name}' is used by {count} sensors")
    design = Design(board=board, config=config, roles=roles, sensors=sensors, notes=notes)
    design.labels = unnamed_labels(sensors)
    design.notes = [readable(n, design.labels) for n in design.notes]
    return design


def unnamed_labels(sensors: Sequence[Sensor]) -> dict[str, str]:
    """Readable names for the unnamed copper (``~n...``) of each sensor: the sensor's name alone for a
    one-electrode sensor, else its name and an index in geometric order (slider and wheel segments in
    their order; the rest from the top left in reading order), ``.TX``/``.RX`` for a mutual node."""
    out: dict[str, str] = {}
    for s in sensors:
        unnamed = [n for n in s.nets if n.startswith("~")]
        if not unnamed:
            continue
        if len(s.nets) == 1:
            out.setdefault(unnamed[0], s.name)
            continue
        if s.kind == "mutual-button":
            for e in s.electrodes:
                if e.net.startswith("~"):
                    out.setdefault(e.net, f"{s.name}.{'TX' if e.role == 'transmitter' else 'RX'}")
            continue
        if s.order:
            ordered = [n for n in s.order if n in unnamed]
        else:
            centre = {e.net: e.geometry.centroid for e in s.electrodes}
            ordered = sorted(unnamed, key=lambda n: (-round(centre[n].y, 1), round(centre[n].x, 1)))
        index = {n: i + 1 for i, n in enumerate(s.order or ordered)}
        for n in ordered:
            out.setdefault(n, f"{s.name}.{index.get(n, 0)}")
    return out


def _role_or(roles: dict[str, tuple[Role, object]], net: str, default: Role) -> Role:
    r = roles.get(net)
    return r[0] if r is not None else default


def _group_sensor(board: Board, g: SensorGroup, roles: dict, margin: float, face: str, face_order: list[str],
                  notes: list[str]) -> Sensor:
    electrodes: list[Electrode] = []
    if g.kind in ("self-button", "proximity") or (g.kind in ("slider", "wheel") and g.nets):
        for net in g.nets:
            role = _role_or(roles, net, "self")
            roles.setdefault(net, (role, None))
            e = (whole_net_electrode(board, net, role, face) if g.kind == "proximity"
                 else self_electrode(board, net, role, face, notes))
            if e is not None:
                electrodes.append(e)
        if g.kind in ("slider", "wheel"):
            seg = [e for e in electrodes if e.net in g.nets]
            arr = arrange(seg, require_adjacent=False, prefer=g.kind)
            if arr is not None:
                pos = [seg[i].net for i in arr.order]
                listed = [n for n in g.nets if n in pos]
                same = pos == listed or (g.kind == "wheel" and _cyclic_equal(pos, listed))
                if not same and pos[::-1] != listed and not (g.kind == "wheel" and _cyclic_equal(pos[::-1], listed)):
                    notes.append(f"sensor '{g.name}': the segments are listed as {', '.join(listed)} but lie in the "
                                 f"order {', '.join(pos)} on the board")
        order = g.nets if g.kind in ("slider", "wheel") else ()
        return _make_sensor(g.name, g.kind, electrodes, margin, "group", face_order, order=order)
    if g.kind == "matrix":
        assumed = [n for n in (*g.rows, *g.columns) if n not in roles]
        if assumed:
            notes.append(f"sensor '{g.name}': no role given for {', '.join(assumed)}; rows taken as transmitters "
                         "and columns as receivers (give roles to say otherwise, e.g. self for a self-capacitance "
                         "matrix)")
        for fld, default in (("rows", "transmitter"), ("columns", "receiver")):
            for net in getattr(g, fld):
                if net not in roles:
                    roles[net] = (default, None)
                e = whole_net_electrode(board, net, roles[net][0], face)
                if e is not None:
                    electrodes.append(e)
        return _make_sensor(g.name, "matrix", electrodes, margin, "group", face_order, rows=g.rows, columns=g.columns)
    # mutual-button, or a mutual slider/wheel (tx segments in order + rx)
    for nets, role in ((g.tx, "transmitter"), (g.rx, "receiver")):
        for net in nets:
            if net in roles and roles[net][0] != role:
                notes.append(f"sensor '{g.name}' uses net {net} as {role}; its role {roles[net][0]} from [roles] "
                             "gives way to the group")
            roles[net] = (role, None)  # type: ignore[assignment]
    nodes = find_nodes(board, list(g.tx), list(g.rx))
    if nodes:
        for nd in nodes:
            for e in node_electrodes(board, [(nd.tx, nd.tx_layer)], [(nd.rx, nd.rx_layer)], nd.footprint):
                _add_electrode(electrodes, e)
    else:
        notes.append(f"sensor '{g.name}': no place where its TX and RX nets face each other; took their whole copper")
        for net in (*g.tx, *g.rx):
            e = whole_net_electrode(board, net, roles[net][0], face)
            if e is not None:
                electrodes.append(e)
    order = g.tx if g.kind in ("slider", "wheel") else ()
    return _make_sensor(g.name, g.kind, electrodes, margin, "group", face_order, order=order)


def _cyclic_equal(a: list[str], b: list[str]) -> bool:
    return len(a) == len(b) and any(a[k:] + a[:k] == b for k in range(len(a)))


def _add_electrode(electrodes: list[Electrode], e: Electrode) -> None:
    """Add, merging with an electrode of the same net on the same layer."""
    for k, old in enumerate(electrodes):
        if old.net == e.net and old.layer == e.layer and old.role == e.role:
            geom = _area_only(old.geometry.union(e.geometry))
            trace = {la: _area_only(g.difference(geom)) if la == e.layer else g for la, g in old.trace.items()}
            electrodes[k] = Electrode(net=e.net, role=e.role, layer=e.layer, geometry=geom,
                                      trace={la: g for la, g in trace.items() if not g.is_empty})
            return
    electrodes.append(e)


def _name_matrices(board: Board, a_nets: list[str], b_nets: list[str], roles: dict, margin: float, face: str,
                   face_order: list[str], used: set[str], memo: NodeCache) -> list[Sensor]:
    out: list[Sensor] = []
    by_stem_a: dict[str, list[str]] = {}
    by_stem_b: dict[str, list[str]] = {}
    for n in a_nets:
        if (s := stem_of(n)) is not None:
            by_stem_a.setdefault(s, []).append(n)
    for n in b_nets:
        if (s := stem_of(n)) is not None:
            by_stem_b.setdefault(s, []).append(n)
    for sa in sorted(by_stem_a):
        for sb in sorted(by_stem_b):
            if sa == sb or not _row_col_match(sa, sb):
                continue
            rows = sorted((n for n in by_stem_a[sa] if n not in used), key=natural_key)
            cols = sorted((n for n in by_stem_b[sb] if n not in used), key=natural_key)
            if len(rows) < 2 or len(cols) < 2:
                continue
            if roles[rows[0]][0] == "transmitter" and len(cluster_nodes(find_nodes(board, rows, cols, memo))) > 1:
                continue  # separate keys scanned as a matrix: the geometry step makes them mutual nodes
            electrodes = [e for n in (*rows, *cols) if (e := whole_net_electrode(board, n, roles[n][0], face))]
            name = f"{sa}/{sb} matrix"
            out.append(_make_sensor(name, "matrix", electrodes, margin, "roles", face_order, rows=rows, columns=cols))
            used.update(rows, cols)
    return out


def cluster_nodes(nodes: Sequence[Node]) -> list[list[int]]:
    """Indices of nodes whose footprints touch (within :data:`MATRIX_TOUCH_MM`), cluster by cluster."""
    parent = list(range(len(nodes)))

    def find(i: int) -> int:
        while parent[i] != i:
            parent[i] = parent[parent[i]]
            i = parent[i]
        return i

    if not nodes:
        return []
    fps = [nd.footprint for nd in nodes]
    tree = shapely.STRtree(fps)
    for i, fp in enumerate(fps):
        for j in tree.query(fp, predicate="dwithin", distance=MATRIX_TOUCH_MM):
            parent[find(i)] = find(int(j))
    clusters: dict[int, list[int]] = {}
    for i in range(len(nodes)):
        clusters.setdefault(find(i), []).append(i)
    return sorted(clusters.values(), key=min)


def _geometry_mutual(board: Board, tx_nets: list[str], rx_nets: list[str], sensor_of: dict[str, str], margin: float,
                     face_order: list[str], used: set[str], notes: list[str],
                     memo: NodeCache) -> list[Sensor]:
    nodes = find_nodes(board, tx_nets, rx_nets, memo)
    if not nodes:
        return []
    out: list[Sensor] = []
    singles: list[Node] = []
    for idx in cluster_nodes(nodes):
        txs = sorted({nodes[i].tx for i in idx}, key=natural_key)
        rxs = sorted({nodes[i].rx for i in idx}, key=natural_key)
        if not (len(txs) >= 2 and len(rxs) >= 2 and len(idx) >= 4):
            singles.extend(nodes[i] for i in idx)
            continue
        electrodes: list[Electrode] = []
        for n in (*txs, *rxs):
            role: Role = "transmitter" if n in txs else "receiver"
            layers = {nodes[i].tx_layer if role == "transmitter" else nodes[i].rx_layer
                      for i in idx if n in (nodes[i].tx, nodes[i].rx)}
            for la_name in sorted(layers):
                la = board.layer(la_name)
                assert la is not None
                geom = _area_only(la.by_net[n])
                electrodes.append(Electrode(net=n, role=role, layer=la_name, geometry=geom,
                                            trace=_net_copper(board, n, la_name, geom)))
        named = {sensor_of[n] for n in (*txs, *rxs) if n in sensor_of}
        name = named.pop() if len(named) == 1 else f"{_common_name(txs)}/{_common_name(rxs)} matrix"
        out.append(_make_sensor(name, "matrix", electrodes, margin, "roles", face_order, rows=txs, columns=rxs))
        notes.append(f"sensor '{name}': matrix of {len(txs)} TX x {len(rxs)} RX nets recognised from "
                     f"{len(idx)} touching nodes")
        used.update(txs, rxs)
    pair_count: dict[tuple[str, str], int] = {}
    name_count: dict[str, int] = {}
    for nd in singles:
        pair_count[(nd.tx, nd.rx)] = pair_count.get((nd.tx, nd.rx), 0) + 1
        base = sensor_of.get(nd.rx) or sensor_of.get(nd.tx)
        if base is not None:
            name_count[base] = name_count.get(base, 0) + 1
    seen: dict[tuple[str, str], int] = {}
    for nd in singles:
        electrodes = node_electrodes(board, [(nd.tx, nd.tx_layer)], [(nd.rx, nd.rx_layer)], nd.footprint)
        key = (nd.tx, nd.rx)
        seen[key] = seen.get(key, 0) + 1
        base = sensor_of.get(nd.rx) or sensor_of.get(nd.tx)
        if base is not None and name_count[base] > 1:
            base = f"{base}:{nd.tx}/{nd.rx}"
        name = base or f"{nd.tx}/{nd.rx}"
        if pair_count[key] > 1:
            name += f"#{seen[key]}"
        out.append(_make_sensor(name, "mutual-button", electrodes, margin, "roles", face_order))
        used.update(key)
    return out


def _common_name(nets: list[str]) -> str:
    stems = {stem_of(n) or n for n in nets}
    return stems.pop() if len(stems) == 1 else "+".join(nets)


def _self_sensors(board: Board, nets: list[str], sensor_of: dict[str, str], margin: float, face: str,
                  face_order: list[str], used: set[str], notes: list[str]) -> list[Sensor]:
    electrodes: dict[str, Electrode] = {}
    for n in nets:
        e = (whole_net_electrode(board, n, "self", face) if _is_proximity_name(n)
             else self_electrode(board, n, "self", face, notes))
        if e is not None:
            electrodes[n] = e
    out: list[Sensor] = []
    # candidate groups: by sensor name from roles, then by name stem
    groups: list[tuple[str, list[str], bool]] = []  # (name, nets, named by config)
    taken: set[str] = set()
    by_name: dict[str, list[str]] = {}
    for n in nets:
        if n in sensor_of and n in electrodes:
            by_name.setdefault(sensor_of[n], []).append(n)
    for name, members in by_name.items():
        groups.append((name, members, True))
        taken.update(members)
    by_stem: dict[str, list[str]] = {}
    for n in nets:
        if n not in taken and n in electrodes and (s := stem_of(n)) is not None:
            by_stem.setdefault(s, []).append(n)
    for s, members in sorted(by_stem.items()):
        groups.append((s, members, False))
    grouped: set[str] = set()
    for name, members, named in groups:
        if len(members) < 2:
            continue
        up = name.upper()
        prefer: SensorKind | None = "wheel" if any(w in up for w in _WHEEL_WORDS) else (
            "slider" if any(w in up for w in _SLIDER_WORDS) else None)
        segs = [electrodes[n] for n in members]
        if _is_proximity_name(up):
            continue
        arr = arrange(segs, require_adjacent=not (named or prefer), prefer=prefer)
        if arr is None:
            if named:
                notes.append(f"sensor '{name}': its nets {', '.join(members)} form no slider or wheel; "
                             "each is a button")
            continue
        if len(members) < 3 and not (named or prefer):
            continue
        order = [segs[i].net for i in arr.order]
        out.append(_make_sensor(name, arr.kind, [electrodes[n] for n in order], margin, "roles", face_order,
                                order=order))
        notes.append(f"sensor '{name}': {arr.kind} of {len(order)} segments recognised from {arr.how}, "
                     f"order {', '.join(order)}")
        grouped.update(members)
    for n in nets:
        if n in grouped or n not in electrodes:
            continue
        kind: SensorKind = "proximity" if _is_proximity_name(n) else "self-button"
        out.append(_make_sensor(sensor_of.get(n, n), kind, [electrodes[n]], margin, "roles", face_order))
    used.update(nets)
    return out
