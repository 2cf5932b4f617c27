"""Nets of the copper: X2 ``.N`` where present, else connectivity named from IPC-D-356, else ids.

The copper of each layer is split into islands (the connected parts of its final dark image).
Plated holes join the islands they touch on every copper layer (a via or a through-hole pad).
Each island is then named:

1. ``x2``: the X2 net (``.N``) whose image covers most of the island, where the files carry nets;
2. ``ipc356``: else the net of the IPC-D-356 points that fall on the island's connected group
   (a point of access side top/bottom looks only at that outer layer; a through point at all);
3. ``geometry``: else an id derived from the group's geometry, ``~n`` + 10 hex digits of a hash of
   its islands' layer, rounded centroid (1 um) and rounded area (0.001 mm2), sorted: the same
   copper exported again, in another object order, gets the same id.

Holes of unknown plating (drill files that do not say) are taken as plated: most such files are
the board's only drill file, which holds its vias and pads.

Finally every copper feature and every hole the files give no net gets the net of the island it
lies on (:func:`fill_feature_nets`), so that whatever reads features or holes by net reads a board
without net names the same way as a named one.
"""

from __future__ import annotations

import hashlib
from collections import Counter, defaultdict
from dataclasses import dataclass, replace

import numpy as np

import shapely
from shapely.geometry import LineString, MultiPolygon, Point, Polygon
from shapely.geometry.base import BaseGeometry
from shapely.strtree import STRtree

from sensorcheck.board.model import Board, Hole, NetPoint

NetSource = str  # "x2" | "ipc356" | "geometry"


@dataclass(slots=True)
class Island:
    """A connected piece of one copper layer's final image, with the net it was given."""

    layer: str
    polygon: Polygon
    group: int = -1
    name: str | None = None
    source: NetSource | None = None


def _polygons(geom: BaseGeometry | None) -> list[Polygon]:
    if geom is None or geom.is_empty:
        return []
    parts = shapely.get_parts(geom)
    return [p for p in parts if isinstance(p, Polygon) and not p.is_empty and p.area > 0]


def hole_shape(h: Hole) -> BaseGeometry:
    r = max(h.diameter_mm / 2, 1e-4)
    if h.end_x_mm is not None and h.end_y_mm is not None:
        return LineString([(h.x_mm, h.y_mm), (h.end_x_mm, h.end_y_mm)]).buffer(r, quad_segs=8)
    return Point(h.x_mm, h.y_mm).buffer(r, quad_segs=8)


class _UnionFind:
    def __init__(self, n: int) -> None:
        self.parent = list(range(n))

    def find(self, i: int) -> int:
        while self.parent[i] != i:
            self.parent[i] = self.parent[self.parent[i]]
            i = self.parent[i]
        return i

    def union(self, a: int, b: int) -> None:
        ra, rb = self.find(a), self.find(b)
        if ra != rb:
            self.parent[max(ra, rb)] = min(ra, rb)


def geometry_net_id(islands: list[Island]) -> str:
    """A stable id for unnamed copper: independent of object order and of float noise below 1 um."""
    sig = sorted(
        (isl.layer, round(isl.polygon.centroid.x, 3), round(isl.polygon.centroid.y, 3), round(isl.polygon.area, 3))
        for isl in islands
    )
    digest = hashlib.sha256(repr(sig).encode()).hexdigest()[:10]
    return f"~n{digest}"


def name_islands(
    board: Board,
    x2_images: dict[str, dict[str | None, BaseGeometry]] | None = None,
    *,
    use_x2: bool = True,
    net_points: list[NetPoint] | None = None,
) -> list[Island]:
    """Split each copper layer into islands, join them through plated holes and name them."""
    copper = board.copper_layers()
    islands: list[Island] = []
    trees: dict[str, tuple[STRtree, list[int]]] = {}
    for layer in copper:
        idx0 = len(islands)
        for poly in _polygons(layer.dark):
            islands.append(Island(layer.name, poly))
        ids = list(range(idx0, len(islands)))
        trees[layer.name] = (STRtree([islands[i].polygon for i in ids]), ids)
    uf = _UnionFind(len(islands))

    # plated holes join what they touch on every copper layer
    for hole in board.holes:
        if hole.plated is False:
            continue
        shape = hole_shape(hole)
        touched: list[int] = []
        for tree, ids in trees.values():
            for k in tree.query(shape, predicate="intersects"):
                touched.append(ids[int(k)])
        for a in touched[1:]:
            uf.union(touched[0], a)
    for i, isl in enumerate(islands):
        isl.group = uf.find(i)

    # 1. X2 nets: the net covering most of the island
    if use_x2 and x2_images:
        for layer_name, images in x2_images.items():
            if layer_name not in trees:
                continue
            tree, ids = trees[layer_name]
            votes: dict[int, Counter[str]] = defaultdict(Counter)
            for net, image in images.items():
                if net is None:
                    continue
                for piece in _polygons(image):
                    pt = piece.representative_point()
                    for k in tree.query(pt, predicate="intersects"):
                        votes[ids[int(k)]][net] += piece.area
            for i, counter in votes.items():
                islands[i].name = counter.most_common(1)[0][0]
                islands[i].source = "x2"

    # 2. IPC-D-356 points vote per connected group
    points = board.net_points if net_points is None else net_points
    group_votes: dict[int, Counter[str]] = defaultdict(Counter)
    if points:
        outer = {"top": copper[0].name if copper else None, "bottom": copper[-1].name if len(copper) > 1 else None}
        for p in points:
            if p.side in ("top", "bottom"):
                layers = [outer[p.side]] if outer[p.side] else []
            elif p.side == "inner":
                layers = [layer.name for layer in copper[1:-1]]
            else:
                layers = [layer.name for layer in copper]
            pt = Point(p.x_mm, p.y_mm)
            for ln in layers:
                tree, ids = trees[ln]  # type: ignore[index]
                for k in tree.query(pt, predicate="intersects"):
                    group_votes[islands[ids[int(k)]].group][p.net] += 1
    # groups: islands without an X2 name take a name from their group (X2 neighbours, then IPC)
    x2_group: dict[int, Counter[str]] = defaultdict(Counter)
    for isl in islands:
        if isl.source == "x2" and isl.name:
            x2_group[isl.group][isl.name] += isl.polygon.area
    members: dict[int, list[Island]] = defaultdict(list)
    for isl in islands:
        members[isl.group].append(isl)
    for group, isls in members.items():
        unnamed = [isl for isl in isls if isl.name is None]
        if not unnamed:
            continue
        if x2_group.get(group):
            name, source = x2_group[group].most_common(1)[0][0], "x2"
        elif group_votes.get(group):
            name, source = _majority(group_votes[group]), "ipc356"
        else:
            name, source = geometry_net_id(isls), "geometry"
        for isl in unnamed:
            isl.name, isl.source = name, source
    return islands


def _majority(votes: Counter[str]) -> str:
    best = max(votes.values())
    return sorted(n for n, v in votes.items() if v == best)[0]  # ties: the first name, deterministically


def assign_nets(
    board: Board, x2_images: dict[str, dict[str | None, BaseGeometry]] | None = None, *, use_x2: bool = True
) -> list[Island]:
    """Fill ``Layer.by_net`` of every copper layer and ``Board.net_source``; return the islands."""
    islands = name_islands(board, x2_images, use_x2=use_x2)
    per_layer: dict[str, dict[str, list[Polygon]]] = defaultdict(lambda: defaultdict(list))
    for isl in islands:
        per_layer[isl.layer][isl.name or ""].append(isl.polygon)
    for layer in board.copper_layers():
        nets = per_layer.get(layer.name, {})
        layer.by_net = {
            name: (polys[0] if len(polys) == 1 else MultiPolygon(polys)) for name, polys in sorted(nets.items())
        }
    sources = sorted({isl.source for isl in islands if isl.source})
    board.net_source = "+".join(sources) if sources else "geometry"
    fill_feature_nets(board, islands)
    return islands


def fill_feature_nets(board: Board, islands: list[Island]) -> None:
    """Give every dark copper feature and every hole without a net the net of its island.

    A feature takes the island it meets; where it meets several (a clear object cut it in two, or it
    bridges copper a later object cleared), the one it shares the most area with, ties to the first
    island in layer order.  A feature that meets no island (all of it cleared later) stays without a
    net.  A hole takes the net of the copper its centre lies on, on the first copper layer (top
    first) that has copper there, as :func:`sensorcheck.rules.common.hole_nets` reads it.  Names the
    files give are never replaced.
    """
    by_layer: dict[str, list[Island]] = defaultdict(list)
    for isl in islands:
        if isl.name:
            by_layer[isl.layer].append(isl)
    for layer in board.copper_layers():
        isls = by_layer.get(layer.name, [])
        todo = [f for f in layer.features if f.net is None and f.polarity == "dark" and not f.geometry.is_empty]
        if not isls or not todo:
            continue
        polys = np.array([isl.polygon for isl in isls], dtype=object)
        tree = STRtree(polys)
        geoms = np.array([f.geometry for f in todo], dtype=object)
        src, tgt = tree.query(geoms, predicate="intersects")
        hits: dict[int, list[int]] = defaultdict(list)
        for a, b in zip(src.tolist(), tgt.tolist()):
            hits[a].append(b)
        for a, cand in hits.items():
            if len(cand) == 1:
                best = cand[0]
            else:
                cand = sorted(cand)
                areas = shapely.area(shapely.intersection(geoms[a], polys[cand]))
                best = cand[int(np.argmax(areas))]
            todo[a].net = isls[best].name
            todo[a].net_by_connectivity = True
    if not board.holes:
        return
    layers = [(isls, STRtree([isl.polygon for isl in isls]))
              for layer in board.copper_layers() if (isls := by_layer.get(layer.name))]
    holes: list[Hole] = []
    for h in board.holes:
        if h.net is None and layers:
            pt = Point(h.x_mm, h.y_mm)
            for isls, tree in layers:
                got = [int(k) for k in tree.query(pt, predicate="intersects")]
                if got:
                    h = replace(h, net=isls[min(got)].name)
                    break
        holes.append(h)
    board.holes = holes
