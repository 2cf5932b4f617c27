"""Sensor recognition from copper and connectivity alone (net names help but are not needed).

:func:`recognise` looks at a Board and returns what sensors its copper holds, each with the
evidence used, and the copper it looked at and rejected (and why).  ``sensorcheck init`` writes
its starter config from this; ``sensorcheck init --explain`` prints it.

Order of work (every threshold below is a rule of thumb, "common practice", not a standard):

1. Reference copper by geometry: a net without a role from its name whose copper spans most of
   the board (its box covers at least :data:`POUR_SPAN` of the board's box both ways) and
   reaches many parts (at least :data:`POUR_MIN_PIECES` pieces or holes) is a ground pour or
   hatch (a REVIEW item: it could be a driven shield).
2. Electrode copper per net on the two outer layers: what :func:`split_electrode` keeps (thin
   draws are trace), in pieces of at least :data:`MIN_PAD_MM2`, not a part's pad (pieces under
   solder paste, or a small pad around a component hole) and not a connector finger (long and
   thin, touching the board edge).  A net with none is not an electrode (a jumper or routing
   line between parts).
3. Mutual pairs: every two nets whose outer copper faces within :data:`FACING_GAP_MM` on one
   layer where the facing region holds a node core (see ``design/sensors.py``: rings around
   centres, interleaved combs, spirals and crossed bars do; routed lines never do).  Nets the
   names call TX/RX are also paired across layers.  The pairs make a graph; each connected part
   is read by its shape:
   - one net facing three or more nets that lie in a row or round a circle (and face only it):
     a mutual slider or wheel (the segments are the TX, the common net the RX);
   - a chain or an odd cycle of nets each facing its neighbours only: interleaved self segments
     (a self slider or wheel);
   - two or more nets on each side whose nodes touch: a matrix (touchpad);
   - otherwise each pair place is a mutual key.  TX and RX are decided by name, else by fan-out
     (the side whose nets are shared by more keys is the TX side when the other side is not; a
     net surrounding the other is the TX), and said to be ambiguous when neither tells.
4. Self sensors: the remaining electrode nets; those lying next to each other (gaps at most
   :data:`SEGMENT_GAP_MAX_MM`) in a row or round a circle are sliders and wheels, the rest are
   buttons, or proximity electrodes when large (over :data:`MAX_BUTTON_MM2`) or a thin loop.
5. The touched face per sensor, from which side its electrodes face free of other copper: the
   outer layer they are on faces its own side; the other side is shielded when other nets' copper
   on a layer between covers at least :data:`FAR_BLOCK_SHARE` of them (a ground pour or hatch
   behind the electrodes), and then the face is certain.  Where nothing shields them and they lie
   on the other face than most of the board's sensors, the copper cannot tell (touched directly,
   or through the board like the others): taken on their own side, with a REVIEW note.  A net
   with electrode copper on both outer layers is taken where it has more, with a REVIEW note.  A
   mutual sensor is placed by its RX (the TX may lie under it on the other layer).

Names: sensors are named by kind and place (``B1``, ``S1``, ``W1``, ``K1``, ``M1``, ``P1``), from
the top left of the board, in reading order; a slider or wheel named by its nets keeps the stem.
"""

from __future__ import annotations

import math
import re
from collections.abc import Iterable
from dataclasses import dataclass, field

import shapely
from shapely.geometry import Point, Polygon
from shapely.geometry.base import BaseGeometry

from sensorcheck.board.model import Board, Layer
from sensorcheck.design.model import Electrode
from sensorcheck.design.roles import natural_key
from sensorcheck.design.sensors import (
    CROSS_LAYER_GAP_MM,
    FACING_GAP_MM,
    NODE_CORE_RADIUS_MM,
    SEGMENT_GAP_MAX_MM,
    TRACE_WIDTH_MAX_MM,
    _cluster_pieces,
    _polys,
    arrange,
    cluster_nodes,
    facing_nodes,
    find_nodes,
    split_electrode,
    stem_of,
    Node,
)

HUB_SHARE = 0.6  # a net facing this share of a group of facing nets is their common RX (or TX)
MIN_PAD_MM2 = 3.0  # smaller copper is a via pad or a small part's pad (a 2 x 1.5 mm pad)
MAX_BUTTON_MM2 = 900.0  # larger than a 34 mm disc: a proximity electrode rather than a button
PASTE_SHARE = 0.3  # a piece this much under solder paste, and smaller than
PASTE_PAD_MAX_MM2 = 12.0  # this, is a part's pad (electrodes drawn as footprint pads get paste too)
STRICT_LINE = 0.05  # unnamed pads in a row: centroids within 5 % of the row's length of one line
COMPONENT_HOLE_MM = 0.5  # a plated hole at least this wide in a small piece: a through-hole pad
TH_PAD_MAX_MM2 = 25.0
FINGER_ASPECT = 2.5  # long and thin pieces touching the board edge: connector fingers
EDGE_TOUCH_MM = 1.0
FINGER_WIDTH_MAX_MM = 2.4  # connector fingers (USB plugs, card edges) are at most this wide
POUR_SPAN = 0.5
POUR_MIN_PIECES = 3
POUR_MIN_SHARE = 0.05  # and covers at least this share of the board's box
PIN_PAD_MAX_MM2 = 20.0  # a smaller piece holding a part's pin (netlist) is that part's pad
COMB_FILL = 0.3  # thin copper filling this share of its hull is a comb or spiral, not a line
LOOP_SOLIDITY = 0.35  # a proximity loop: its copper fills at most this share of its outline
MAX_COORDINATES = 20000  # a net with more outline points is a pour or lettering, not an electrode
FAR_BLOCK_SHARE = 0.3  # other copper covering this share of the electrodes towards a face shields them from it
_POWER_RE = re.compile(r"(GND|VCC|VDD|VSS|VBAT|VBUS|VIN|VOUT|^\+|^-|(^|[_.])[0-9]+V[0-9]*([_.]|$)|^V[0-9])")
_REFERENCE = ("ground", "shield", "guard")


@dataclass(slots=True)
class Found:
    """One recognised sensor."""

    name: str
    kind: str  # a SensorKind
    layer: str
    face: str  # "top" or "bottom"
    nets: tuple[str, ...] = ()  # self nets (sliders/wheels: segments in position order)
    tx: tuple[str, ...] = ()  # mutual: transmitters (mutual sliders/wheels: segments in order)
    rx: tuple[str, ...] = ()
    evidence: list[str] = field(default_factory=list)
    review: list[str] = field(default_factory=list)
    #: net -> (layer, x_mm, y_mm): a point inside each net's electrode (roles by place use it)
    points: dict[str, tuple[str, float, float]] = field(default_factory=dict)
    area_mm2: float = 0.0

    @property
    def all_nets(self) -> tuple[str, ...]:
        return tuple(dict.fromkeys((*self.nets, *self.tx, *self.rx)))


@dataclass(slots=True)
class Rejected:
    """Copper looked at and not taken as a sensor, and why."""

    net: str
    layer: str
    why: str


@dataclass(slots=True)
class Recognition:
    sensors: list[Found] = field(default_factory=list)
    rejected: list[Rejected] = field(default_factory=list)
    #: net -> (role, why) for reference copper recognised by geometry (not by name)
    reference: dict[str, tuple[str, str]] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)
    #: the board's touched face: the one most sensors with electrode copper face (top on a tie)
    face: str = "top"


def is_unnamed(net: str) -> bool:
    """Copper no net name was found for carries a geometry id (``~n...``)."""
    return net.startswith("~")


def _outer(board: Board) -> list[Layer]:
    cu = board.copper_layers()
    return [cu[0], cu[-1]] if len(cu) > 1 else cu[:1]


def _face_of(board: Board, layer: str) -> str:
    cu = board.copper_layers()
    return "bottom" if len(cu) > 1 and layer == cu[-1].name else "top"


def _board_box(board: Board) -> tuple[float, float, float, float]:
    if board.outline is not None and not board.outline.is_empty:
        return board.outline.bounds
    geoms = [la.dark for la in board.copper_layers() if la.dark is not None and not la.dark.is_empty]
    return shapely.union_all(geoms).bounds if geoms else (0.0, 0.0, 1.0, 1.0)


def _side_union(board: Board, function: str, side: str) -> BaseGeometry:
    geoms = [la.dark for la in board.layers if la.function == function and la.side == side
             and la.dark is not None and not la.dark.is_empty]
    return shapely.union_all(geoms) if geoms else Polygon()


def reference_by_geometry(board: Board, named_roles: dict[str, str]) -> dict[str, tuple[str, str]]:
    """Nets without a role whose copper spans the board and reaches many parts: ground pours or hatches."""
    x0, y0, x1, y1 = _board_box(board)
    w, h = max(x1 - x0, 1e-6), max(y1 - y0, 1e-6)
    best: dict[str, tuple[float, int]] = {}
    for la in board.copper_layers():
        for net, g in la.by_net.items():
            if net in named_roles or g.is_empty:
                continue
            bx0, by0, bx1, by1 = g.bounds
            if (bx1 - bx0) < POUR_SPAN * w or (by1 - by0) < POUR_SPAN * h:
                continue
            polys = _polys(g)
            pieces = len(polys) + sum(len(p.interiors) for p in polys)
            area, n = best.get(net, (0.0, 0))
            best[net] = (area + g.area, n + pieces)
    out: dict[str, tuple[str, str]] = {}
    for net, (area, pieces) in sorted(best.items(), key=lambda kv: -kv[1][0]):
        if pieces < POUR_MIN_PIECES or area < POUR_MIN_SHARE * w * h:
            continue
        if _POWER_RE.search(net.upper().rsplit("/", 1)[-1]):
            out[net] = ("ground", f"a supply pour by name spanning the board ({area:.0f} mm2): a reference for "
                                  "the sensors as ground is")
            continue
        out[net] = ("ground", f"copper spanning the board ({area:.0f} mm2 in {pieces} pieces and openings, "
                              "reaching many parts): a ground pour or hatch; could be a driven shield")
    return out


@dataclass(slots=True)
class _Cand:
    net: str
    layer: str
    geometry: BaseGeometry  # the electrode copper kept on that layer
    area: float


def _piece_rejection(board: Board, la: Layer, p: Polygon, paste: BaseGeometry, edge: BaseGeometry | None,
                     holes: list[tuple[Point, float]], pins: list[tuple[Point, str]]) -> str | None:
    if p.area < MIN_PAD_MM2:
        return f"{p.area:.1f} mm2: smaller than an electrode (a via or a small part's pad)"
    rect = p.minimum_rotated_rectangle
    if isinstance(rect, Polygon):
        (x0, y0), (x1, y1), (x2, y2) = shapely.get_coordinates(rect)[:3].tolist()
        if min(math.hypot(x1 - x0, y1 - y0), math.hypot(x2 - x1, y2 - y1)) <= TRACE_WIDTH_MAX_MM:
            return f"a line at most {TRACE_WIDTH_MAX_MM:g} mm wide: routing, not area copper"
    if p.area < PIN_PAD_MAX_MM2:
        for pt, who in pins:
            if p.contains(pt):
                return f"a part's pin pad ({who} in the netlist), under {PIN_PAD_MAX_MM2:g} mm2"
    if (p.area < PASTE_PAD_MAX_MM2 and not paste.is_empty and p.intersects(paste)
            and p.intersection(paste).area >= PASTE_SHARE * p.area):
        return f"under solder paste and under {PASTE_PAD_MAX_MM2:g} mm2: a part's pad"
    if p.area <= TH_PAD_MAX_MM2 and any(d >= COMPONENT_HOLE_MM and p.buffer(0.01).contains(pt) for pt, d in holes):
        return "a small pad around a component hole: a through-hole part's pad"
    if edge is not None and p.distance(edge) <= EDGE_TOUCH_MM:
        rect = p.minimum_rotated_rectangle
        if isinstance(rect, Polygon):
            xs, ys = rect.exterior.coords.xy
            sides = sorted(math.hypot(xs[i + 1] - xs[i], ys[i + 1] - ys[i]) for i in range(2))
            if (0 < sides[0] <= FINGER_WIDTH_MAX_MM and sides[1] / sides[0] >= FINGER_ASPECT
                    and p.area >= 0.8 * rect.area):
                return "a long thin pad at the board edge: a connector finger"
    return None


def _comb_like(geom: BaseGeometry) -> bool:
    """Thin copper that still covers an area (comb teeth, a spiral): its hull holds a node core and its
    copper fills at least :data:`COMB_FILL` of the hull (a routed line fills far less)."""
    hull = geom.convex_hull
    if not isinstance(hull, Polygon) or hull.area < (2 * NODE_CORE_RADIUS_MM) ** 2:
        return False
    return geom.area >= COMB_FILL * hull.area and not hull.buffer(-NODE_CORE_RADIUS_MM).is_empty


def _candidates(board: Board, nets: Iterable[str], rec: Recognition,
                combs: dict[str, list[_Cand]] | None = None) -> dict[str, list[_Cand]]:
    """Electrode copper per net on the outer layers (see the module docstring, step 2); thin copper that
    covers an area (combs, spirals) goes to ``combs``: it can face another net as a mutual key."""
    if combs is None:
        combs = {}
    edge = board.outline.boundary if board.outline is not None and not board.outline.is_empty else None
    holes = [(Point(h.x_mm, h.y_mm), h.diameter_mm) for h in board.holes
             if h.function != "via" and h.plated is not False]
    out: dict[str, list[_Cand]] = {}
    wanted = set(nets)
    for la in _outer(board):
        paste = _side_union(board, "paste", la.side)
        pins = [(Point(q.x_mm, q.y_mm), f"{q.component}-{q.pin}") for q in board.net_points
                if q.component and q.hole_mm is None and q.side in (la.side, "both")]
        for net in sorted(la.by_net, key=natural_key):
            if net not in wanted:
                continue
            g = la.by_net[net]
            if g.is_empty or g.area < MIN_PAD_MM2:
                continue
            if shapely.get_num_coordinates(g) > MAX_COORDINATES:
                rec.rejected.append(Rejected(net, la.name, "too detailed for an electrode (lettering or a pour)"))
                continue
            electrode, _trace = split_electrode(la, net)
            keep: list[Polygon] = []
            why: list[str] = []
            for p in _polys(electrode):
                r = _piece_rejection(board, la, p, paste, edge, holes, pins)
                if r is None:
                    keep.append(p)
                elif p.area >= MIN_PAD_MM2:
                    why.append(r)
            if keep:
                geom = shapely.union_all(keep)
                out.setdefault(net, []).append(_Cand(net, la.name, geom, geom.area))
            elif electrode.is_empty and _comb_like(g):
                combs.setdefault(net, []).append(_Cand(net, la.name, g, g.area))
            elif why:
                rec.rejected.append(Rejected(net, la.name, "; ".join(sorted(set(why)))))
            elif electrode.is_empty:
                rec.rejected.append(Rejected(net, la.name, "only lines: a routing or jumper line between parts, "
                                                           "not area copper"))
    return out


def _is_proximity_name(net: str) -> bool:
    return re.search(r"PROX|HANDSENSE|HAND_SENSE|PRESENCE", net.upper()) is not None


def _main_cand(cands: list[_Cand]) -> _Cand:
    return max(cands, key=lambda c: (c.area, c.layer))


def _point_in(geom: BaseGeometry) -> tuple[float, float]:
    big = max(_polys(geom), key=lambda p: p.area)
    pt = big.representative_point()
    return round(pt.x, 3) + 0.0, round(pt.y, 3) + 0.0


# --------------------------------------------------------------------------- mutual pairs


@dataclass(slots=True)
class _Pair:
    a: str
    b: str
    layer_a: str
    layer_b: str
    footprint: BaseGeometry


def _pairs(board: Board, cands: dict[str, list[_Cand]], named_tx: list[str], named_rx: list[str],
           paste_by_layer: dict[str, BaseGeometry]) -> list[_Pair]:
    """Every two nets whose outer copper forms a mutual node (see step 3)."""
    out: list[_Pair] = []
    seen: set[tuple[str, str]] = set()
    # named TX/RX: the full search, across layers too
    if named_tx and named_rx:
        for nd in find_nodes(board, named_tx, named_rx):
            out.append(_Pair(nd.tx, nd.rx, nd.tx_layer, nd.rx_layer, nd.footprint))
            seen.add((nd.tx, nd.rx))
            seen.add((nd.rx, nd.tx))
    outer = _outer(board)
    for ia, la in enumerate(outer):
        for lb in outer[ia:]:
            gap = FACING_GAP_MM if la is lb else CROSS_LAYER_GAP_MM
            a_nets = sorted((n for n, cs in cands.items() if any(c.layer == la.name for c in cs)), key=natural_key)
            b_nets = sorted((n for n, cs in cands.items() if any(c.layer == lb.name for c in cs)), key=natural_key)
            if not a_nets or not b_nets:
                continue
            a_geoms = [la.by_net[n] for n in a_nets]
            b_geoms = [lb.by_net[n] for n in b_nets]
            tree = shapely.STRtree([shapely.box(*g.bounds) for g in b_geoms])
            paste = paste_by_layer.get(la.name, Polygon())
            for i, g in enumerate(a_geoms):
                for j in sorted(int(k) for k in tree.query(shapely.box(*g.bounds), predicate="dwithin", distance=gap)):
                    x, y = a_nets[i], b_nets[j]
                    if x == y or (x, y) in seen:
                        continue
                    seen.update(((x, y), (y, x)))
                    for fp in facing_nodes(g, b_geoms[j], gap):
                        if not paste.is_empty and fp.intersection(paste).area > 0.5 * fp.area:
                            continue  # parts' pads facing each other
                        out.append(_Pair(x, y, la.name, lb.name, fp))
    return out


def _components(pairs: list[_Pair]) -> list[list[int]]:
    parent: dict[str, str] = {}

    def find(x: str) -> str:
        parent.setdefault(x, x)
        while parent[x] != x:
            parent[x] = parent[parent[x]]
            x = parent[x]
        return x

    for p in pairs:
        parent[find(p.a)] = find(p.b)
    groups: dict[str, list[int]] = {}
    for i, p in enumerate(pairs):
        groups.setdefault(find(p.a), []).append(i)
    return list(groups.values())


def _bipartite(nets: list[str], adj: dict[str, set[str]]) -> dict[str, int] | None:
    side: dict[str, int] = {}
    for start in nets:
        if start in side:
            continue
        side[start] = 0
        stack = [start]
        while stack:
            x = stack.pop()
            for y in adj[x]:
                if y not in side:
                    side[y] = 1 - side[x]
                    stack.append(y)
                elif side[y] == side[x]:
                    return None
    return side


def _surrounds(a: BaseGeometry, b: BaseGeometry) -> bool:
    """Does ``a`` surround ``b`` (a piece of b inside a's outline filled)?"""
    filled = shapely.union_all([Polygon(p.exterior) for p in _polys(a)])
    return any(filled.contains(p.representative_point()) and filled.area > p.area for p in _polys(b))


# --------------------------------------------------------------------------- recognise


def recognise(board: Board, named_roles: dict[str, str] | None = None) -> Recognition:
    """Sensors in ``board``'s copper; ``named_roles``: net -> role its name suggests (may be empty)."""
    named = dict(named_roles or {})
    rec = Recognition()
    if not board.copper_layers():
        rec.notes.append("the board has no copper layers")
        return rec
    rec.reference = reference_by_geometry(board, named)
    skip = {n for n, r in named.items() if r in (*_REFERENCE, "aggressor", "skip")} | set(rec.reference)
    looked = [n for n in board.net_names() if n not in skip
              and not (_POWER_RE.search(n.upper().rsplit("/", 1)[-1]) and named.get(n) is None)]
    combs: dict[str, list[_Cand]] = {}
    cands = _candidates(board, looked, rec, combs)
    for n, r in named.items():
        if r in ("self", "transmitter", "receiver") and n not in cands and n in set(board.net_names()):
            if not any(x.net == n for x in rec.rejected):
                rec.rejected.append(Rejected(n, "-", "its name suggests a sensor but it has no copper on an "
                                                     "outer layer"))
    # proximity electrodes the names call so but whose copper is not here (a wire or the case)
    prox = [n for n, r in named.items() if r == "self" and n not in cands and _is_proximity_name(n)
            and n in set(board.net_names())]
    rec.rejected = [x for x in rec.rejected if x.net not in prox]
    paste = {la.name: _side_union(board, "paste", la.side) for la in _outer(board)}
    named_tx = sorted((n for n, r in named.items() if r == "transmitter"), key=natural_key)
    named_rx = sorted((n for n, r in named.items() if r == "receiver"), key=natural_key)
    pairs = _pairs(board, {**combs, **cands}, named_tx, named_rx, paste)
    paired = {x for p in pairs for x in (p.a, p.b)}
    for n, cs in combs.items():  # a comb facing another net is an electrode after all
        if n in paired and n not in cands:
            cands[n] = cs
            rec.rejected = [x for x in rec.rejected if x.net != n]
    used: set[str] = set()
    found: list[Found] = []
    for comp in _components(pairs):
        found.extend(_read_mutual(board, [pairs[i] for i in comp], cands, named, rec, used))
    # self sensors
    rest = {n: cs for n, cs in cands.items() if n not in used}
    found.extend(_self_sensors(board, rest, named, rec))
    for n in sorted(prox, key=natural_key):
        la = next(la for la in board.copper_layers() if n in la.by_net)
        found.append(Found(name="", kind="proximity", layer=la.name, face="", nets=(n,),
                           evidence=["a proximity electrode by name; only thin copper of it is on this board (the "
                                     "electrode itself is likely a wire, a spring or the case)"],
                           review=["no area copper of it on the board: check where its electrode is"]))
    rec.face = _name_and_face(board, found, cands)
    rec.sensors = found
    return rec


def _read_mutual(board: Board, pairs: list[_Pair], cands: dict[str, list[_Cand]], named: dict[str, str],
                 rec: Recognition, used: set[str]) -> list[Found]:
    nets = sorted({x for p in pairs for x in (p.a, p.b)}, key=natural_key)
    adj: dict[str, set[str]] = {n: set() for n in nets}
    for p in pairs:
        adj[p.a].add(p.b)
        adj[p.b].add(p.a)
    geom = {n: (_main_cand(cands[n]).geometry if n in cands else _net_outer(board, n)) for n in nets}
    out: list[Found] = []
    named_self = [n for n in nets if named.get(n) == "self"]
    named_mutual = [n for n in nets if named.get(n) in ("transmitter", "receiver")]
    # a hub: one net facing 3+ others (nearly all of the group) that lie in a row or round a circle:
    # a mutual slider or wheel (segments facing each other too: sub-pads of one segment)
    hub = max(nets, key=lambda n: (len(adj[n]), n))
    spokes = sorted((n for n in nets if n != hub), key=natural_key)
    if len(adj[hub]) >= 3 and len(adj[hub]) >= HUB_SHARE * len(spokes) and not named_self and (
            named.get(hub) != "transmitter" or all(named.get(x) != "transmitter" for x in spokes)):
        segs = [Electrode(net=x, role="transmitter", layer=_main_cand(cands[x]).layer if x in cands else "",
                          geometry=geom[x]) for x in spokes]
        arr = arrange(segs, require_adjacent=False)
        if arr is not None:
            order = tuple(segs[i].net for i in arr.order)
            if named.get(hub) == "transmitter":
                tx, rx, why = (hub,), order, "the common net is named TX: segmented RX"
            else:
                tx, rx, why = order, (hub,), ("the common net faces every segment: it is the RX and the "
                                              "segments the TX (segmented TX)")
            f = Found(name="", kind=arr.kind, layer=segs[0].layer, face="", tx=tx, rx=rx,
                      evidence=[f"one net ({hub}) faces {len(adj[hub])} of {len(spokes)} segments lying "
                                f"{arr.how.replace('centroids ', '')}; " + why])
            if named.get(hub) is None:
                f.review.append("which of TX and RX is which is decided by fan-out only")
            out.append(f)
            used.update(nets)
            return out
    # interleaved self segments: an odd cycle, a chain of 3+ with no net facing more than two,
    # or nets the names call self (their stem groups them)
    degrees = sorted(len(adj[n]) for n in nets)
    side = _bipartite(nets, adj)
    chain = len(nets) >= 3 and degrees[-1] <= 2 and not named_mutual
    if named_self and not named_mutual or chain or (side is None and not named_mutual):
        order_src = [Electrode(net=n, role="self", layer=_main_cand(cands[n]).layer if n in cands else "",
                               geometry=geom[n]) for n in nets]
        arr = arrange(order_src, require_adjacent=False) if len(nets) >= 2 else None
        if arr is not None and (len(nets) >= 3 or named_self):
            order = tuple(order_src[i].net for i in arr.order)
            f = Found(name="", kind=arr.kind, layer=order_src[0].layer, face="", nets=order,
                      evidence=[f"{len(order)} interleaved segments, each facing its neighbours "
                                f"({arr.how}); no net faces all of them, so self segments, not mutual"])
            out.append(f)
            used.update(order)
            return out
        return out  # the self step handles them one by one
    if side is None:
        side = {n: (0 if named.get(n) == "transmitter" else 1) for n in nets}
    # TX side: by name, else by fan-out, else by who surrounds whom
    sides = [[n for n in nets if side[n] == k] for k in (0, 1)]
    tx_side, how, ambiguous = _tx_side(sides, named, adj, geom)
    layer_of = {x: (_main_cand(cands[x]).layer if x in cands else "") for x in nets}
    side_layers = [{layer_of[x] for x in sd} for sd in sides]
    if ambiguous and len(side_layers[0] | side_layers[1]) == 2 and not side_layers[0] & side_layers[1]:
        area = [sum(_main_cand(cands[x]).area for x in sd if x in cands) for sd in sides]
        if area[0] != area[1]:
            # two layers: the side with more copper is nearer the touch, and is taken as the RX
            tx_side = 0 if area[0] < area[1] else 1
            how = "by layer (the side with more copper faces the touch: RX; the one under it: TX)"
    txs = sides[tx_side]
    # touching nodes with 2+ nets each side: a matrix (touchpad); else keys
    nodes = [Node(tx=p.a if p.a in txs else p.b, rx=p.b if p.a in txs else p.a, tx_layer=p.layer_a,
                  rx_layer=p.layer_b, footprint=p.footprint) for p in pairs]
    for idx in cluster_nodes(nodes):
        ctx = sorted({nodes[i].tx for i in idx}, key=natural_key)
        crx = sorted({nodes[i].rx for i in idx}, key=natural_key)
        if len(ctx) >= 2 and len(crx) >= 2 and len(idx) >= 4:
            f = Found(name="", kind="matrix", layer=nodes[idx[0]].rx_layer, face="", tx=tuple(ctx), rx=tuple(crx),
                      evidence=[f"{len(idx)} touching TX/RX crossings of {len(ctx)} x {len(crx)} nets: a "
                                f"row-column matrix; TX side {how}"])
            if ambiguous:
                f.review.append("rows and columns could be the other way round")
            out.append(f)
            used.update(ctx, crx)
            continue
        for i in idx:
            nd = nodes[i]
            share = f"TX {nd.tx} faces {len(adj[nd.tx])} net(s), RX {nd.rx} faces {len(adj[nd.rx])}"
            f = Found(name="", kind="mutual-button", layer=nd.rx_layer, face="", tx=(nd.tx,), rx=(nd.rx,),
                      evidence=[f"TX and RX copper facing within {FACING_GAP_MM:g} mm around a node core "
                                f"({share}); TX side {how}"])
            if ambiguous:
                f.review.append("which net is TX and which RX cannot be told from the copper")
            f.area_mm2 = nd.footprint.area
            out.append(f)
            used.update((nd.tx, nd.rx))
    return out


def _net_outer(board: Board, net: str) -> BaseGeometry:
    for la in _outer(board):
        if net in la.by_net:
            return la.by_net[net]
    for la in board.copper_layers():
        if net in la.by_net:
            return la.by_net[net]
    return Polygon()


def _tx_side(sides: list[list[str]], named: dict[str, str], adj: dict[str, set[str]],
             geom: dict[str, BaseGeometry]) -> tuple[int, str, bool]:
    for k in (0, 1):
        if any(named.get(n) == "transmitter" for n in sides[k]) or any(named.get(n) == "receiver"
                                                                       for n in sides[1 - k]):
            return k, "by name", False
    fan = [max((len(adj[n]) for n in s), default=0) for s in sides]
    count = [len(s) for s in sides]
    for k in (0, 1):
        a, b = sides[k], sides[1 - k]
        if all(any(_surrounds(geom[x], geom[y]) for y in adj[x]) for x in a) and not any(
                _surrounds(geom[y], geom[x]) for y in b for x in adj[y]):
            return k, "by shape (the TX surrounds the RX)", False
    if fan[0] != fan[1] and count[0] != count[1]:
        k = 0 if count[0] < count[1] else 1
        return k, "by fan-out (the fewer, more shared lines are taken as TX)", True
    return 0, "not decidable from the copper (taken arbitrarily)", True


def _self_sensors(board: Board, cands: dict[str, list[_Cand]], named: dict[str, str],
                  rec: Recognition) -> list[Found]:
    out: list[Found] = []
    main = {n: _main_cand(cs) for n, cs in cands.items()}
    nets = sorted(main, key=natural_key)
    # 1. by name stem: slider/wheel words or a common stem of self-named nets
    taken: set[str] = set()
    stems: dict[str, list[str]] = {}
    for n in nets:
        if named.get(n) == "self" and (s := stem_of(n.rsplit("/", 1)[-1])) is not None:
            stems.setdefault(s, []).append(n)
    for s, members in sorted(stems.items()):
        if len(members) < 2 or "PROX" in s:
            continue
        prefer = "wheel" if re.search(r"WHEEL|WHL|ROT", s) else ("slider" if re.search(r"SLID|SLD|SCROLL", s)
                                                                   else None)
        segs = [Electrode(net=n, role="self", layer=main[n].layer, geometry=main[n].geometry) for n in members]
        arr = arrange(segs, require_adjacent=prefer is None, prefer=prefer)  # type: ignore[arg-type]
        if arr is None or (len(members) < 3 and prefer is None):
            continue
        order = tuple(segs[i].net for i in arr.order)
        out.append(Found(name=s.lower(), kind=arr.kind, layer=segs[0].layer, face="", nets=order,
                         evidence=[f"nets sharing the name stem {s} lie next to each other ({arr.how})"]))
        taken.update(members)
    # 2. by geometry: neighbours on one layer in a row or round a circle
    free = [n for n in nets if n not in taken]
    groups: list[list[str]] = []
    for layer in sorted({main[n].layer for n in free}):
        on = [n for n in free if main[n].layer == layer]
        groups += [[on[i] for i in idx] for idx in _cluster_pieces([main[n].geometry for n in on], SEGMENT_GAP_MAX_MM)]
    for members in groups:
        if len(members) < 3:
            continue
        segs = [Electrode(net=n, role="self", layer=main[n].layer, geometry=main[n].geometry) for n in members]
        areas = [s.geometry.area for s in segs]
        if max(areas) > 3 * min(areas):
            continue  # segments of one slider are alike
        arr = arrange(segs, require_adjacent=True)
        if arr is None or (arr.kind == "slider" and _off_line(segs) > STRICT_LINE):
            if arr is not None:
                rec.notes.append(f"{len(segs)} pads next to each other are not on one line (keys of a "
                                 "keyboard rather than slider segments): taken as buttons")
            continue
        order = tuple(segs[i].net for i in arr.order)
        out.append(Found(name="", kind=arr.kind, layer=segs[0].layer, face="", nets=order,
                         evidence=[f"{len(order)} alike pads next to each other (gaps at most "
                                   f"{SEGMENT_GAP_MAX_MM:g} mm), {arr.how}"]))
        taken.update(members)
    # 3. the rest: buttons or proximity electrodes
    for n in nets:
        if n in taken:
            continue
        c = main[n]
        polys = _polys(c.geometry)
        big = max(polys, key=lambda p: p.area)
        filled = Polygon(big.exterior)
        solidity = big.area / filled.area if filled.area > 0 else 1.0
        name_says = named.get(n)
        if _is_proximity_name(n):
            kind, why = "proximity", "a proximity electrode by name"
        elif c.area > MAX_BUTTON_MM2:
            kind, why = "proximity", f"one electrode of {c.area:.0f} mm2 (over {MAX_BUTTON_MM2:g}): a proximity electrode"
        elif solidity <= LOOP_SOLIDITY and filled.area >= 100:
            kind, why = "proximity", f"a loop of copper round {filled.area:.0f} mm2: a proximity loop"
        else:
            if name_says is None and len(polys) > 2:
                rec.rejected.append(Rejected(n, c.layer, f"{len(polys)} separate pieces of area copper: not one "
                                                          "electrode"))
                continue
            kind, why = "self-button", f"one pad of {c.area:.0f} mm2 of area copper on an outer layer"
            if name_says == "self":
                why += ", and its name says so"
        out.append(Found(name="", kind=kind, layer=c.layer, face="", nets=(n,), evidence=[why], area_mm2=c.area))
    return out


def _off_line(segs: list[Electrode]) -> float:
    """Largest distance of a segment centroid from the best line through them, over the row's length."""
    import numpy as np

    pts = np.array([[e.geometry.centroid.x, e.geometry.centroid.y] for e in segs], dtype=float)
    d = pts - pts.mean(axis=0)
    _, _, vt = np.linalg.svd(d, full_matrices=False)
    along, off = d @ vt[0], d @ vt[1]
    extent = float(along.max() - along.min())
    return float(abs(off).max()) / extent if extent > 0 else 1.0


def _name_and_face(board: Board, found: list[Found], cands: dict[str, list[_Cand]]) -> str:
    """Names by kind in reading order (top left first), points per net and the face per sensor; returns
    the board's face."""
    prefix = {"self-button": "B", "slider": "S", "wheel": "W", "mutual-button": "K", "matrix": "M", "proximity": "P"}
    count: dict[str, int] = {}
    cu = board.copper_layers()

    def where(f: Found) -> tuple[float, float]:
        c = shapely.union_all([_net_outer(board, n) for n in f.all_nets]).centroid
        return (-round(c.y, 1), round(c.x, 1))

    for f in sorted(found, key=lambda f: (prefix.get(f.kind, "Z"), where(f))):
        if not f.name:
            k = prefix.get(f.kind, "X")
            count[k] = count.get(k, 0) + 1
            f.name = f"{k}{count[k]}"
    found.sort(key=lambda f: (prefix.get(f.kind, "Z"), natural_key(f.name)))
    for f in found:
        layers = _electrode_layers(f, cands)
        if layers:
            f.layer = max(sorted(layers), key=lambda k: layers[k])
        elif not f.layer:
            f.layer = cu[0].name
        for n in f.all_nets:
            on = [c for c in cands.get(n, []) if c.layer == f.layer]
            la = board.layer(f.layer)
            g = on[0].geometry if on else (la.by_net.get(n) if la is not None else None)
            if g is None or g.is_empty:
                g = _net_outer(board, n)
                lname = next((x.name for x in board.copper_layers() if n in x.by_net), f.layer)
            else:
                lname = f.layer
            if not g.is_empty:
                x, y = _point_in(g)
                f.points[n] = (lname, x, y)
        f.face = _face_of(board, f.layer)
    return _touched_faces(board, found, cands)


def _electrode_layers(f: Found, cands: dict[str, list[_Cand]]) -> dict[str, float]:
    """Electrode copper (mm2) per outer layer of the nets that face the touch: a mutual sensor's RX (the
    TX may lie under it on the other layer), every net of a self sensor."""
    layers: dict[str, float] = {}
    nets = f.rx if f.rx and any(n in cands for n in f.rx) else f.all_nets
    for n in nets:
        for c in cands.get(n, []):
            layers[c.layer] = layers.get(c.layer, 0.0) + c.area
    return layers


def _far_cover(board: Board, f: Found, cands: dict[str, list[_Cand]]) -> tuple[str, float] | None:
    """The copper layer between ``f``'s electrodes and the opposite face that covers most of them with
    other nets' copper, and the share it covers; None on a one-layer board or without electrode copper."""
    cu = board.copper_layers()
    names = [la.name for la in cu]
    if len(cu) < 2 or f.layer not in names:
        return None
    nets = set(f.all_nets)
    own = [c.geometry for n in nets for c in cands.get(n, []) if c.layer == f.layer]
    electrode = shapely.union_all(own) if own else Polygon()
    if electrode.is_empty or electrode.area <= 0:
        return None
    i = names.index(f.layer)
    between = cu[i + 1:] if f.face == "top" else cu[:i]
    best = ("", 0.0)
    for la in between:
        if la.dark is None or la.dark.is_empty:
            continue
        cover = electrode.intersection(la.dark)
        if cover.is_empty:
            continue
        mine = [la.by_net[n] for n in nets if n in la.by_net]
        if mine:
            cover = cover.difference(shapely.union_all(mine))
        share = cover.area / electrode.area
        if share > best[1]:
            best = (la.name, share)
    return best


def _touched_faces(board: Board, found: list[Found], cands: dict[str, list[_Cand]]) -> str:
    """Evidence and REVIEW notes for each sensor's touched face (see the module docstring, step 5);
    returns the board's face."""
    cu = board.copper_layers()
    layers_of = {id(f): _electrode_layers(f, cands) for f in found}
    count = {fc: sum(1 for f in found if f.face == fc and layers_of[id(f)]) for fc in ("top", "bottom")}
    board_face = "bottom" if count["bottom"] > count["top"] else "top"
    for f in found:
        layers = layers_of[id(f)]
        others = [la for la in layers if la != f.layer]
        if len(cu) == 1:
            f.evidence.append("one copper layer: touched on the top")
            continue
        if not layers:  # no electrode copper on this board (a wire, a spring): nothing tells its face
            f.face = board_face
            f.evidence.append(f"no electrode copper on the board: taken as touched from the {board_face}, as the "
                              "board's other sensors")
            continue
        far = "bottom" if f.face == "top" else "top"
        if others:
            f.evidence.append(f"electrode copper on {f.layer} ({layers[f.layer]:.0f} mm2) and on "
                              f"{', '.join(others)} ({sum(layers[o] for o in others):.0f} mm2): taken where it has more")
            f.review.append(f"electrodes on both outer layers: check that the {f.face} is the touched face")
            continue
        cover = _far_cover(board, f, cands)
        if cover is not None and cover[1] >= FAR_BLOCK_SHARE:
            f.evidence.append(f"electrodes on {f.layer} only, and {cover[0]} covers {100 * cover[1]:.0f} % of them "
                              f"with other copper: they face the {f.face} only")
        elif f.face == board_face:
            f.evidence.append(f"electrodes on {f.layer} only: touched from the {f.face}, as the board's other "
                              f"sensors (no copper shields them from the {far} either)")
        else:
            f.evidence.append(f"electrodes on {f.layer} only, with no other copper over them towards the {far}")
            f.review.append(f"cannot tell the touched face from the copper: its electrodes are on the {f.face} "
                            f"copper and nothing covers them towards the {far}, where the board's other sensors "
                            f"are touched; taken as touched from the {f.face} (its own [[sensors]] face); if it is "
                            f"touched through the board from the {far}, remove that face")
    return board_face
