"""Name-blind equivalence: a corpus board checked without its net names finds what it finds with them.

Issue 16's check.  For every corpus board whose files carry net names (X2 ``.N`` attributes or an
IPC-D-356 netlist: b01, b02, b03, b04, b06 per the corpus README), ``strip_nets.py`` writes a copy
without them into a pytest tmp folder (never into ``../shared``).  The sensors are then given by
place, as a user of a board without names gives them: every net that has a role in the named check
becomes one ``[[roles.place]]`` entry per connected piece of its copper (a point inside it, the same
role, aggressor kind and sensor name), everything else in the config (overlay, face, profile) is the
same.  The findings of both checks (geometry rules, no field solves) must be the same: rule,
severity, sensor, layer, place and value, apart from the names themselves.

The outside reference is the designers' own netlist: with names, the nets are the designers' (X2
attributes, IPC-D-356); without, they come from our connectivity.  Where those agree, a rule that
reads nets must not tell the two apart.  That holds for ``fab.floating-copper`` too: with names it
reports copper no name reaches, without them copper that meets no component pad (its docstring
says where the two readings can differ; on these boards they must not).
"""

from __future__ import annotations

import re
from collections import Counter
from pathlib import Path
from typing import Any

import pytest
import shapely

from sensorcheck.check import build_design_for
from sensorcheck.design.roles import nets_at_place
from sensorcheck.design.model import RoleByPlace
from sensorcheck.rules.engine import run_rules

from strip_nets import strip_nets  # tests/corpus/strip_nets.py (pytest puts this folder on the path)

pytestmark = pytest.mark.corpus

HERE = Path(__file__).resolve().parent
BOARDS = {
    "b01-slider-proto": HERE / "configs" / "b01-slider-proto.toml",
    "b02-buttons-4layer": HERE / "nameblind" / "b02.toml",
    "b03-wheel": HERE / "configs" / "b03-wheel.toml",
    "b04-keys-4layer": HERE / "nameblind" / "b04.toml",
    "b06-keyboard": HERE / "configs" / "b06-keyboard.toml",
}


def _config_without_roles(text: str) -> str:
    """The config's text without its [roles] and [[sensors]] sections (the places replace them)."""
    out: list[str] = []
    drop = False
    for line in text.splitlines():
        head = re.match(r"^\s*\[\[?\s*([A-Za-z0-9_.]+)\s*\]\]?", line)
        if head:
            name = head.group(1)
            drop = name == "roles" or name.startswith("roles.") or name == "sensors"
        if not drop:
            out.append(line)
    return "\n".join(out) + "\n"


def _toml_str(s: str) -> str:
    return '"' + s.replace("\\", "\\\\").replace('"', '\\"') + '"'


def place_config(named: Any, stripped_board: Any, config_text: str) -> tuple[str, list[str]]:
    """A config giving the named design's roles and sensor names by place on the stripped board.

    Returns the TOML text and the conflicts (a piece of unnamed copper two named nets would claim).
    """
    sensor_of = {e.net: s.name for s in named.sensors for e in s.electrodes if s.kind not in ("mutual-button", "matrix")}
    claimed: dict[tuple[str, str], tuple[str, str]] = {}  # (layer, unnamed id) -> (named net, role)
    places: list[str] = []
    conflicts: list[str] = []
    for net, (role, kind) in sorted(named.roles.items()):
        for lay in named.board.copper_layers():
            geom = lay.by_net.get(net)
            if geom is None or geom.is_empty:
                continue
            for poly in shapely.get_parts(geom):
                if poly.is_empty or poly.area <= 0:
                    continue
                pt = poly.representative_point()
                hit = nets_at_place(stripped_board, RoleByPlace(layer=lay.name, role=role, point_mm=(pt.x, pt.y)))
                if not hit:
                    continue
                key = (lay.name, hit[0])
                if key in claimed or any(k[1] == hit[0] for k in claimed):
                    prev = next(v for k, v in claimed.items() if k[1] == hit[0])
                    if prev != (net, role):
                        conflicts.append(f"{hit[0]}: {prev} and {(net, role)}")
                    continue
                claimed[key] = (net, role)
                entry = ["[[roles.place]]", f"layer = {_toml_str(lay.name)}",
                         f"point_mm = [{pt.x!r}, {pt.y!r}]", f"role = {_toml_str(role)}"]
                if role == "aggressor" and kind:
                    entry.append(f"kind = {_toml_str(kind)}")
                if net in sensor_of:
                    entry.append(f"sensor = {_toml_str(sensor_of[net])}")
                places.append("\n".join(entry))
    return _config_without_roles(config_text) + "\n" + "\n\n".join(places) + "\n", conflicts


def _signature(s: Any) -> tuple[Any, ...]:
    """A sensor by its copper: layer, centroid (10 um) and area (0.01 mm2) of each electrode, sorted."""
    return tuple(sorted((e.layer, e.role, round(e.geometry.centroid.x, 2), round(e.geometry.centroid.y, 2),
                         round(e.geometry.area, 2)) for e in s.electrodes))


#: rules that judge a pair of sensors and report it under the first of the two in the design's order,
#: which follows the nets' names: compared by the pair and the value; the place is where the two come
#: nearest, and where they run parallel that is a tie the order of the two breaks
PAIR_RULES = {"electrode.neighbour-spacing"}


def finding_key(f: Any, sensor_name: dict[str, str] | None = None, sensor_of_net: dict[str, str] | None = None
                ) -> tuple[Any, ...]:
    loc = f.location
    sensor = f.sensor if sensor_name is None or f.sensor is None else sensor_name.get(f.sensor, f"?{f.sensor}")
    x = None if loc.x_mm is None else round(loc.x_mm, 3)
    y = None if loc.y_mm is None else round(loc.y_mm, 3)
    if f.rule_id in PAIR_RULES and sensor_of_net is not None:
        sensor = tuple(sorted({sensor_of_net.get(n, f"?{n}") for n in f.nets}))
        x = y = None
    return (f.rule_id, f.severity, sensor, loc.layer, x, y, None if f.value is None else round(f.value, 3))


def run_both(board_id: str, shared_dir: Path, tmp_path: Path) -> dict[str, Any]:
    fab = shared_dir / "corpus" / board_id / "fab"
    if not fab.is_dir():
        pytest.skip(f"{fab} is absent")
    cfg = BOARDS[board_id]
    named = build_design_for(fab, cfg)
    assert named.board.net_source != "geometry"
    stripped_dir = tmp_path / board_id
    report = strip_nets(fab, stripped_dir)
    assert report.total > 0 or report.netlists, "the board carries no net names to strip"
    text, conflicts = place_config(named, build_design_for(stripped_dir, None).board, cfg.read_text())
    blind_cfg = tmp_path / f"{board_id}-places.toml"
    blind_cfg.write_text(text)
    blind = build_design_for(stripped_dir, blind_cfg)
    assert blind.board.net_source == "geometry"
    # finding by finding: grouping by cause merges by net name and takes every unnamed island as one
    # unknown net (rules/engine.py group_by_cause), so grouped findings differ by design
    named_run, blind_run = run_rules(named, None, group=False), run_rules(blind, None, group=False)
    # the same sensors, matched by their copper; named sensors are named after nets where the config
    # names none (mutual nodes "TX/RX"): the match maps those names
    blind_by_sig = {_signature(s): s.name for s in blind.sensors}
    sensor_name = {s.name: blind_by_sig.get(_signature(s), f"?{s.name}") for s in named.sensors}
    return {"named": named, "blind": blind, "named_run": named_run, "blind_run": blind_run,
            "sensor_name": sensor_name, "conflicts": conflicts, "strip": report}


#: places and values agree to within float noise: the same copper reached in another order (a slider's
#: segments in geometry order instead of the config's) sums and unites in another order
PLACE_TOL_MM = 0.005
VALUE_REL_TOL = 1e-3


def _close(a: tuple[Any, ...], b: tuple[Any, ...]) -> bool:
    if a[:4] != b[:4]:
        return False
    for i, tol in ((4, PLACE_TOL_MM), (5, PLACE_TOL_MM)):
        if (a[i] is None) != (b[i] is None) or (a[i] is not None and abs(a[i] - b[i]) > tol):
            return False
    if (a[6] is None) != (b[6] is None):
        return False
    return a[6] is None or abs(a[6] - b[6]) <= VALUE_REL_TOL * max(abs(a[6]), abs(b[6]), 1e-3)


def compare(res: dict[str, Any]) -> tuple[list[Any], list[Any]]:
    """Findings only with names, only without (matched one to one, within float noise)."""
    named_of = {e.net: res["sensor_name"][s.name] for s in res["named"].sensors for e in s.electrodes}
    blind_of = {e.net: s.name for s in res["blind"].sensors for e in s.electrodes}
    named = sorted((finding_key(f, res["sensor_name"], named_of) for f in res["named_run"].findings), key=str)
    blind = [finding_key(f, None, blind_of) for f in res["blind_run"].findings]
    exact = Counter(blind)
    left: list[Any] = []
    for k in named:
        if exact[k] > 0:
            exact[k] -= 1
        else:
            left.append(k)
    rest = sorted(exact.elements(), key=str)
    only_named: list[Any] = []
    for k in left:
        j = next((j for j, r in enumerate(rest) if _close(k, r)), None)
        if j is None:
            only_named.append(k)
        else:
            rest.pop(j)
    return only_named, rest


@pytest.mark.parametrize("board_id", sorted(BOARDS))
def test_findings_do_not_depend_on_net_names(board_id: str, shared_dir: Path, tmp_path: Path) -> None:
    res = run_both(board_id, shared_dir, tmp_path)
    assert not res["conflicts"], res["conflicts"][:5]
    # the same sensors (same copper, same names once the nets' names are mapped)
    assert sorted(res["sensor_name"].values()) == sorted(s.name for s in res["blind"].sensors)
    assert not any(v.startswith("?") for v in res["sensor_name"].values())
    only_named, only_blind = compare(res)
    assert not only_named and not only_blind, (
        f"only with names: {sorted(only_named, key=str)[:8]}; only without: {sorted(only_blind, key=str)[:8]}")
