"""Net roles: from name patterns (fnmatch, case-insensitive) and from places on a layer.

Patterns are tried in the order the config lists them (role by role, in the order
transmitter, receiver, self, shield, guard, ground, aggressor); the first pattern that
matches a net gives its role.  A net matched by patterns of two different roles keeps the
first and the conflict is noted.  Places come last and win over patterns: the copper
island under the point (or the one with the most copper inside the box) takes the role
and, when given, the sensor name.  Geometry-derived net ids (``~n...``) are never matched
by name patterns: roles by place are the way to give them a role.
"""

from __future__ import annotations

import fnmatch
import re
from dataclasses import dataclass, field

from shapely.geometry import Point, box

from sensorcheck.board.model import Board
from sensorcheck.design.model import AggressorKind, Config, Role, RoleByPlace
from sensorcheck.errors import ConfigError


@dataclass(slots=True)
class RoleAssignment:
    """What the roles section made of the board's nets."""

    roles: dict[str, tuple[Role, AggressorKind | None]] = field(default_factory=dict)
    sensor_of: dict[str, str] = field(default_factory=dict)  # net -> sensor name given by pattern or place
    by_place: set[str] = field(default_factory=set)  # nets whose role came from [[roles.place]]
    notes: list[str] = field(default_factory=list)


def natural_key(name: str) -> tuple[object, ...]:
    """Sort key that puts SL2 before SL10."""
    return tuple(int(p) if p.isdigit() else p.lower() for p in re.split(r"(\d+)", name))


def matches(net: str, pattern: str) -> bool:
    """fnmatch-style match of a net name, case-insensitive."""
    return fnmatch.fnmatchcase(net.lower(), pattern.lower())


def _preview(names: list[str], n: int = 8) -> str:
    shown = ", ".join(names[:n])
    return shown + (f" and {len(names) - n} more" if len(names) > n else "")


def nets_at_place(board: Board, place: RoleByPlace) -> list[str]:
    """The net(s) whose copper island is under a place: the one containing the point (nearest
    within 0.05 mm), or the net with the most copper inside the box."""
    layer = board.layer(place.layer)
    if layer is None:
        return []
    if place.point_mm is not None:
        pt = Point(place.point_mm)
        hits = [n for n, g in layer.by_net.items() if g.intersects(pt)]
        if not hits:
            near = [(g.distance(pt), n) for n, g in layer.by_net.items()]
            near = [x for x in near if x[0] <= 0.05]
            hits = [min(near)[1]] if near else []
        return sorted(hits, key=natural_key)[:1]
    assert place.box_mm is not None
    b = box(*place.box_mm)
    areas = [(g.intersection(b).area, n) for n, g in layer.by_net.items() if g.intersects(b)]
    areas = [a for a in areas if a[0] > 0]
    if not areas:
        return []
    return [max(areas, key=lambda a: (a[0], a[1]))[1]]


def assign_roles(board: Board, config: Config) -> RoleAssignment:
    """Roles of the board's nets from the config's patterns and places."""
    out = RoleAssignment()
    nets = [n for n in board.net_names() if not n.startswith("~")]
    matched_by: dict[str, str] = {}
    for rp in config.roles:
        hits = [n for n in nets if matches(n, rp.pattern)]
        if not hits:
            out.notes.append(
                f"roles.{rp.role}: pattern '{rp.pattern}' matches no net on the board"
                + (f" (nets: {_preview(nets)})" if nets else " (the board has no net names: use [[roles.place]])")
            )
            continue
        for n in hits:
            if n in out.roles:
                if out.roles[n][0] != rp.role:
                    out.notes.append(
                        f"net {n} matches roles.{out.roles[n][0]} '{matched_by[n]}' and roles.{rp.role} "
                        f"'{rp.pattern}'; it keeps the first ({out.roles[n][0]})"
                    )
                continue
            out.roles[n] = (rp.role, rp.aggressor_kind if rp.role == "aggressor" else None)
            matched_by[n] = rp.pattern
            if rp.sensor:
                out.sensor_of[n] = rp.sensor
    for i, place in enumerate(config.roles_by_place):
        if board.layer(place.layer) is None:
            have = [la.name for la in board.copper_layers()]
            raise ConfigError(config.file, f"roles.place[{i}].layer",
                              f"the board has no layer {place.layer} (copper layers: {', '.join(have) or 'none'})")
        hit = nets_at_place(board, place)
        where = f"point {place.point_mm}" if place.point_mm is not None else f"box {place.box_mm}"
        if not hit:
            out.notes.append(f"roles.place[{i}]: no copper under the {where} on {place.layer}")
            continue
        net = hit[0]
        out.roles[net] = (place.role, (place.aggressor_kind or "other") if place.role == "aggressor" else None)
        out.by_place.add(net)
        if place.sensor:
            out.sensor_of[net] = place.sensor
    return out
