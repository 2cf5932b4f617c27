"""``sensorcheck init PATH [--output FILE] [--force]``: write a starter sensorcheck.toml.

Net names are grouped by the role their names suggest; the stackup is taken from the job
file when there is one.  Every guess carries a ``# REVIEW:`` comment saying why it was made,
and what cannot be guessed from fabrication data (the overlay, a battery-powered product)
is written commented out with a ``# REVIEW:`` line saying what to fill in.  The file loads
with :func:`sensorcheck.design.config.load_config` as written.
"""

from __future__ import annotations

import argparse
import json
import os
import re
import sys
import tempfile
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

import shapely
from shapely.geometry import Polygon
from shapely.geometry.base import BaseGeometry

from sensorcheck.board.model import Board, Stackup
from sensorcheck.design.roles import matches, natural_key
from sensorcheck.design.sensors import split_electrode

_COPPER_RE = re.compile(r"^(top|bottom|inner[1-9][0-9]*)-copper$")
_STACKUP_KINDS = ("copper", "dielectric", "mask", "silk", "paste", "other")


@dataclass(frozen=True, slots=True)
class Guess:
    """A rule of thumb: net-name regex -> role, the aggressor kind, and why (the REVIEW text)."""

    role: str
    regex: str
    why: str
    kind: str | None = None


#: tried in order, first match wins (UART-style names are excluded from TX/RX first)
GUESSES: tuple[Guess, ...] = (
    Guess("ground", r"^(A|D|P|S)?GND[A-Z0-9_]*$|^[A-Z0-9_]*_GND$|^VSS[A-Z]?$|^0V$",
          "ground by name (GND, GNDA, AGND, VSS)"),
    Guess("shield", r"^(DRIVEN_?)?(SHIELD|SHLD)[A-Z0-9_]*$", "a driven shield by name"),
    Guess("guard", r"^GUARD[A-Z0-9_]*$", "a guard by name"),
    Guess("aggressor", r"^(LED|D_?LED|BL)[A-Z0-9_.]*$|^[A-Z0-9_.]*[_.]LED[A-Z0-9_.]*$",
          "an LED line: PWM-driven LEDs switch fast", kind="led"),
    Guess("aggressor", r"^(CLK|SCK|SCL|SCLK|MCLK|BCLK|XTAL|OSC)[A-Z0-9_.]*$|^[A-Z0-9_.]*[_.](CLK|SCK|SCL|SCLK)$",
          "a clock or serial clock by name", kind="clock"),
    Guess("aggressor", r"^(SW|LX|VSW|SW_NODE)$|^PWM[A-Z0-9_]*$|^[A-Z0-9_]*_PWM[0-9]*$",
          "a switching node or PWM line by name", kind="switching"),
    Guess("aggressor", r"^(ANT|RF)[A-Z0-9_]*$", "an antenna/RF line by name", kind="radio"),
    Guess("skip", r"(UART|USART|SERIAL|^TXD|^RXD|_TXD|_RXD)", "a serial port, not a sensor"),
    Guess("transmitter", r"^C?TX[_\-]?[A-Z]?[0-9]*$|^[A-Z0-9]+[_\-]TX[0-9]*$|^(DRV|DRIVE)[_\-]?[0-9]+$",
          "TX in the name: a mutual-capacitance transmitter"),
    Guess("receiver", r"^C?RX[_\-]?[A-Z]?[0-9]*$|^[A-Z0-9]+[_\-]RX[0-9]*$|^(SNS|SENSE)[_\-]?[0-9]+$",
          "RX in the name: a mutual-capacitance receiver"),
    Guess("self", r"(PROX|HANDSENSE|HAND_SENSE|PRESENCE)", "a proximity (hand-sense) electrode by name"),
    Guess("transmitter", r"^(COL|COLUMN|C)[_\-]?[0-9]+$", "columns of a key matrix are often strobed (TX); "
          "could be the other way round"),
    Guess("receiver", r"^(ROW|R)[_\-]?[0-9]+$", "rows of a key matrix are often sensed (RX); could be the "
          "other way round"),
    Guess("transmitter", r"^X[_\-]?[0-9]+$", "X lines of a touchpad are often driven (rows as TX); could be the "
          "other way round"),
    Guess("receiver", r"^Y[_\-]?[0-9]+$", "Y lines of a touchpad are often sensed (columns as RX); could be the "
          "other way round"),
    Guess("self", r"(^|[_\-.])(TOUCH|TCH|BTN|BUTTON|KEY|SLIDER|SLD|WHEEL|WHL|PAD|PROX|CSENSE|SENSOR|ELECTRODE)"
          r"([_\-]?\[?[0-9]+\]?[A-Z]?|[_\-][A-Z0-9]+)?$",
          "a touch electrode by name; self-capacitance unless a TX net faces it"),
    Guess("self", r"^SW[_\-]?[0-9]+$", "SW1, SW2...: touch keys are often named like switches; could be "
          "mechanical switches"),
)


def _escape_pattern(name: str) -> str:
    """fnmatch pattern that matches exactly ``name``."""
    return re.sub(r"([\[\]*?])", lambda m: "[" + m.group(1) + "]", name)


def _q(text: str) -> str:
    """A TOML basic string (JSON's escapes are valid TOML)."""
    return json.dumps(text, ensure_ascii=False)


def _comment(text: str) -> str:
    return " ".join(text.split()).replace("\n", " ")


def guess_roles(nets: list[str]) -> dict[str, tuple[str, str | None, str]]:
    """net -> (role, aggressor kind, why) for the nets whose names suggest one."""
    out: dict[str, tuple[str, str | None, str]] = {}
    for net in nets:
        up = net.upper().lstrip("/\\")
        up = up.rsplit("/", 1)[-1]  # hierarchical names: the last part
        for g in GUESSES:
            if re.search(g.regex, up):
                if g.role != "skip":
                    out[net] = (g.role, g.kind, g.why)
                break
    return out


#: electrode-like copper (what init proposes for nets whose names say nothing): one solid piece of
#: 20-900 mm2 (a 5-34 mm disc), at most two holes (LED windows), compact (its outline fills at least
#: 70 % of its convex hull) and no longer than 5x its width (slider segments are long)
ELECTRODE_AREA_MM2 = (20.0, 900.0)
MAX_HOLES = 2
MIN_SOLIDITY = 0.7
MAX_ASPECT = 5.0
MAX_COORDINATES = 5000
_POWER_RE = re.compile(r"(GND|VCC|VDD|VSS|VBAT|VBUS|VIN|VOUT|^\+|^-|(^|[_.])[0-9]+V[0-9]*([_.]|$)|^V[0-9])")


@dataclass(frozen=True, slots=True)
class Candidate:
    net: str
    layer: str
    x_mm: float
    y_mm: float
    area_mm2: float
    geometry: BaseGeometry


def _runs(cands: list[Candidate]) -> dict[str, tuple[str, list[str]]]:
    """Unnamed candidates that sit next to each other in a line or around a circle (as slider and
    wheel segments do): net -> (sensor name, member nets in position order)."""
    from sensorcheck.design.model import Electrode
    from sensorcheck.design.sensors import SEGMENT_GAP_MAX_MM, arrange

    parent = list(range(len(cands)))

    def find(i: int) -> int:
        while parent[i] != i:
            parent[i] = parent[parent[i]]
            i = parent[i]
        return i

    for i, a in enumerate(cands):
        for j in range(i + 1, len(cands)):
            b = cands[j]
            if a.layer == b.layer and a.geometry.distance(b.geometry) <= SEGMENT_GAP_MAX_MM:
                parent[find(i)] = find(j)
    groups: dict[int, list[int]] = {}
    for i in range(len(cands)):
        groups.setdefault(find(i), []).append(i)
    out: dict[str, tuple[str, list[str]]] = {}
    counts = {"slider": 0, "wheel": 0}
    for idx in sorted(groups.values(), key=lambda g: (-cands[g[0]].y_mm, cands[g[0]].x_mm)):
        if len(idx) < 3:
            continue
        segs = [Electrode(net=cands[i].net, role="self", layer=cands[i].layer, geometry=cands[i].geometry) for i in idx]
        arr = arrange(segs, require_adjacent=True)
        if arr is None:
            continue
        counts[arr.kind] += 1
        name = f"{'S' if arr.kind == 'slider' else 'W'}{counts[arr.kind]}"
        members = [segs[k].net for k in arr.order]
        for n in members:
            out[n] = (name, members)
    return out


def electrode_candidates(board: Board, skip: set[str]) -> list[Candidate]:
    """Nets (named or not) on an outer copper layer with one electrode-like solid piece."""
    cu = board.copper_layers()
    outer = [cu[0], cu[-1]] if len(cu) > 1 else cu[:1]
    out: list[Candidate] = []
    seen: set[str] = set()
    for la in outer:
        for net in sorted(la.by_net, key=natural_key):
            if net in skip or net in seen:
                continue
            last = net.upper().rsplit("/", 1)[-1]
            if _POWER_RE.search(last) or last.startswith("UNCONNECTED"):
                continue
            geom = la.by_net[net]
            if geom.is_empty or geom.area < ELECTRODE_AREA_MM2[0] or geom.area > 4 * ELECTRODE_AREA_MM2[1]:
                continue
            if shapely.get_num_coordinates(geom) > MAX_COORDINATES:
                continue  # hatch, pour or lettering: not a plain electrode (and slow to open)
            electrode, _trace = split_electrode(la, net)
            polys = list(getattr(electrode, "geoms", [electrode]))
            if len(polys) != 1 or electrode.is_empty:
                continue
            poly = polys[0]
            if not (ELECTRODE_AREA_MM2[0] <= poly.area <= ELECTRODE_AREA_MM2[1]) or len(poly.interiors) > MAX_HOLES:
                continue
            filled = Polygon(poly.exterior)
            if filled.area < MIN_SOLIDITY * filled.convex_hull.area:
                continue
            rect = filled.minimum_rotated_rectangle
            if not isinstance(rect, Polygon):
                continue
            xs, ys = rect.exterior.coords.xy
            sides = sorted(((xs[i + 1] - xs[i]) ** 2 + (ys[i + 1] - ys[i]) ** 2) ** 0.5 for i in range(2))
            if sides[0] <= 0 or sides[1] / sides[0] > MAX_ASPECT:
                continue
            pt = poly.representative_point()
            out.append(Candidate(net, la.name, round(pt.x, 3), round(pt.y, 3), poly.area, poly))
            seen.add(net)
    return out


def _stem(net: str) -> str | None:
    m = re.match(r"^(.*?[A-Za-z])[_\-.]?(\d+)$", net)
    return m.group(1) if m else None


def _patterns(members: list[str], all_nets: list[str]) -> list[str]:
    """Few patterns covering exactly ``members`` of ``all_nets``: STEM* where that matches no
    other net, else the names themselves."""
    others = [n for n in all_nets if n not in set(members)]
    out: list[str] = []
    covered: set[str] = set()
    stems: dict[str, list[str]] = {}
    for n in members:
        s = _stem(n)
        if s is not None and not re.search(r"[\[\]*?]", s):
            stems.setdefault(s, []).append(n)
    for s, group in sorted(stems.items()):
        pat = f"{s}*"
        if len(group) >= 2 and not any(matches(o, pat) for o in others):
            out.append(pat)
            covered.update(n for n in members if matches(n, pat))
    out.extend(_escape_pattern(n) for n in members if n not in covered)
    return out


def _stackup_lines(stackup: Stackup | None) -> list[str]:
    if stackup is None or stackup.source != "jobfile":
        return [
            "# REVIEW: no Gerber job file with a stackup was found; give the stackup so that layer",
            "# distances (ground under electrodes, parasitics) are right:",
            "# [stackup]",
            "# board_thickness_mm = 1.6",
            "# [[stackup.layers]]",
            '# name = "top copper"',
            '# kind = "copper"',
            "# thickness_mm = 0.035",
            '# copper_layer = "top-copper"',
            "",
        ]
    valid = all(
        la.kind in _STACKUP_KINDS and la.thickness_mm > 0 and la.name.strip()
        and (la.copper_layer is None or (la.kind == "copper" and _COPPER_RE.match(la.copper_layer)))
        and (la.epsilon_r is None or la.epsilon_r >= 1.0)
        for la in stackup.layers
    ) and stackup.board_thickness_mm > 0
    prefix = "" if valid else "# "
    lines = ["# REVIEW: stackup as the Gerber job file states it; correct it here if the job file is wrong"
             + ("" if valid else " (written commented out: some layer had no usable thickness or kind)")]
    lines += [f"{prefix}[stackup]", f"{prefix}board_thickness_mm = {stackup.board_thickness_mm:g}"]
    copper_seen: set[str] = set()
    for la in stackup.layers:
        lines += [f"{prefix}[[stackup.layers]]", f"{prefix}name = {_q(la.name)}", f"{prefix}kind = {_q(la.kind)}",
                  f"{prefix}thickness_mm = {la.thickness_mm:g}"]
        if la.copper_layer and la.kind == "copper" and la.copper_layer not in copper_seen:
            copper_seen.add(la.copper_layer)
            lines.append(f"{prefix}copper_layer = {_q(la.copper_layer)}")
        if la.material:
            lines.append(f"{prefix}material = {_q(la.material)}")
        if la.epsilon_r is not None and la.epsilon_r >= 1.0:
            lines.append(f"{prefix}epsilon_r = {la.epsilon_r:g}")
    lines.append("")
    return lines


def _face_guess(board: Board, roles: dict[str, tuple[str, str | None, str]]) -> tuple[str, str]:
    sensing = [n for n, (r, _, _) in roles.items() if r in ("self", "receiver", "transmitter")]
    cu = board.copper_layers()
    if not cu or not sensing:
        return "top", "no sensor nets recognised: top is the usual touched face"
    top = sum(cu[0].by_net[n].area for n in sensing if n in cu[0].by_net)
    bottom = sum(cu[-1].by_net[n].area for n in sensing if n in cu[-1].by_net) if len(cu) > 1 else 0.0
    if bottom > top:
        return "bottom", f"more sensor copper on the bottom layer ({bottom:.0f} mm2) than on top ({top:.0f} mm2)"
    return "top", f"more sensor copper on the top layer ({top:.0f} mm2) than on the bottom ({bottom:.0f} mm2)"


def starter_config(board: Board) -> str:
    """The text of a starter sensorcheck.toml for ``board`` (deterministic: no date, sorted)."""
    nets = [n for n in board.net_names() if not n.startswith("~")]
    roles = guess_roles(nets)
    cands = electrode_candidates(board, set(roles))
    unnamed = [c for c in cands if c.net.startswith("~")]
    for c in cands:
        if not c.net.startswith("~"):
            roles[c.net] = ("self", None, "the name says nothing, but the net has one solid electrode-like pad "
                            "(5-34 mm across) on an outer layer; remove any that are not electrodes")
    face, face_why = _face_guess(board, {**roles, **{c.net: ("self", None, "") for c in unnamed}})
    lines: list[str] = [
        f"# sensorcheck.toml: starter config written by `sensorcheck init` for {_comment(board.name)}.",
        "# Every guess is marked REVIEW with the reason; check each before trusting a report.",
        "",
        'profile = "default"',
        "",
        "[board]",
        f"# REVIEW: {face_why}",
        f"face = {_q(face)}",
        "",
        "# REVIEW: the overlay (cover plate over the touch face) is not in fabrication data. Without it,",
        "# rules that need its thickness report a note. List its layers from the touch surface down:",
        "# [[overlay.layers]]",
        '# material = "pmma"        # or epsilon_r = 2.8',
        "# thickness_mm = 2.0",
        "# [[overlay.layers]]",
        '# material = "acrylic-adhesive"',
        "# thickness_mm = 0.1",
        "",
    ]
    lines += _stackup_lines(board.stackup)
    lines += ["[roles]"]
    if not nets:
        lines += ["# REVIEW: the board carries no net names (no Gerber X2 net attributes, no IPC-D-356 netlist);",
                  "# give roles by place instead, one per electrode:"]
    by_role: dict[str, list[str]] = {}
    for net in sorted(roles, key=natural_key):
        by_role.setdefault(roles[net][0], []).append(net)
    segment_groups = _segment_groups(by_role.get("self", []))
    for role in ("transmitter", "receiver", "self", "shield", "guard", "ground"):
        members = by_role.get(role, [])
        if not members:
            continue
        whys = sorted({roles[n][2] for n in members})
        lines.append(f"# REVIEW: {len(members)} net(s): {_comment('; '.join(whys))}")
        if role == "self" and segment_groups:
            grouped = {n for _, _, ms in segment_groups for n in ms}
            items = [_q(p) for p in _patterns([n for n in members if n not in grouped], nets)]
            for name, kind, ms in segment_groups:
                lines.append(f"# REVIEW: {', '.join(ms)}: one {kind} by name ('{name}'); its segments are "
                             "ordered by their position on the board")
                items += [f"{{pattern = {_q(p)}, sensor = {_q(name)}}}" for p in _patterns(ms, nets)]
            lines.append(f"self = [{', '.join(items)}]")
            continue
        lines.append(f"{role} = [{', '.join(_q(p) for p in _patterns(members, nets))}]")
    agg = by_role.get("aggressor", [])
    if agg:
        kinds: dict[str, list[str]] = {}
        for n in agg:
            kinds.setdefault(roles[n][1] or "other", []).append(n)
        items = []
        for kind in sorted(kinds):
            lines.append(f"# REVIEW: {kind}: {_comment(roles[kinds[kind][0]][2])} ({', '.join(kinds[kind][:6])}"
                         + (" ..." if len(kinds[kind]) > 6 else "") + ")")
            items += [f"{{pattern = {_q(p)}, kind = {_q(kind)}}}" for p in _patterns(kinds[kind], nets)]
        lines.append("aggressor = [" + ", ".join(items) + "]")
    unassigned = [n for n in nets if n not in roles]
    if unassigned:
        shown = ", ".join(sorted(unassigned, key=natural_key)[:12])
        lines.append(f"# REVIEW: no role guessed for {len(unassigned)} net(s) ({_comment(shown)}"
                     + (" ..." if len(unassigned) > 12 else "") + "); add any that sense or disturb")
    if unnamed:
        unnamed = sorted(unnamed, key=lambda c: (c.layer != face_layer_name(board, face), -c.y_mm, c.x_mm))
        lines.append("")
        lines.append(f"# REVIEW: {len(unnamed)} piece(s) of copper without a net name look like electrodes (one solid "
                     "pad 5-34 mm across); each place below gives one the self role. Remove the ones that "
                     "are not electrodes and rename the sensors.")
        runs = _runs(unnamed)
        for name in sorted({r[0] for r in runs.values()}, key=natural_key):
            members = next(r[1] for r in runs.values() if r[0] == name)
            kind = "slider" if name.startswith("S") else "wheel"
            lines.append(f"# REVIEW: {len(members)} of them sit next to each other as {kind} segments do: "
                         f"they share the sensor name {name} (one {kind}, ordered by position)")
        order = sorted(unnamed, key=lambda c: (c.net not in runs, runs.get(c.net, ("", []))[0]))
        k = 0
        for c in order:
            if c.net in runs:
                sensor = runs[c.net][0]
            else:
                k += 1
                sensor = f"E{k}"
            lines += ["[[roles.place]]", f"layer = {_q(c.layer)}", f"point_mm = [{c.x_mm:g}, {c.y_mm:g}]",
                      'role = "self"', f'sensor = "{sensor}"  # {c.area_mm2:.0f} mm2']
        lines.append("")
    lines += [
        "# For boards without net names: the copper under a point takes the role (and a sensor name).",
        "# [[roles.place]]",
        '# layer = "top-copper"',
        "# point_mm = [10.0, 20.0]",
        '# role = "self"',
        '# sensor = "B1"',
        "",
    ]
    lines += [
        "[finger]",
        "# REVIEW: a battery product on a table couples weakly to earth: give device_ground in pF",
        "# (e.g. 2.0) instead of earthed; that is what decides whether the touch signal turns around.",
        'device_ground = "earthed"',
        "",
        "# REVIEW: give your controller's limits where it has them (pF):",
        "# [controller]",
        "# max_parasitic_pf = 30.0",
        "# pin_capacitance_pf = 5.0",
        "",
        "# REVIEW: the ESD level the product must pass (IEC 61000-4-2):",
        "# [esd]",
        "# level_kv = 8.0",
        '# mode = "air"',
        "",
    ]
    return "\n".join(lines).rstrip() + "\n"


def face_layer_name(board: Board, face: str) -> str:
    cu = board.copper_layers()
    if not cu:
        return ""
    return cu[0].name if face == "top" else cu[-1].name


def _segment_groups(self_nets: list[str]) -> list[tuple[str, str, list[str]]]:
    """(sensor name, kind, nets) for self nets whose name stem says slider or wheel."""
    stems: dict[str, list[str]] = {}
    for n in self_nets:
        st = _stem(n)
        if st is not None and re.search(r"SLID|SLD|WHEEL|WHL|SCROLL", st.upper()):
            stems.setdefault(st, []).append(n)
    out: list[tuple[str, str, list[str]]] = []
    for st, members in sorted(stems.items()):
        kind = "wheel" if re.search(r"WHEEL|WHL", st.upper()) else "slider"
        if len(members) < (3 if kind == "wheel" else 2):
            continue
        name = st.rsplit("/", 1)[-1].lower().strip("_-.") or kind
        out.append((name, kind, sorted(members, key=natural_key)))
    return out


def _default_output(path: Path) -> Path:
    return path / "sensorcheck.toml" if path.is_dir() else path.with_name("sensorcheck.toml")


def _write_atomic(target: Path, text: str) -> None:
    target.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=".sensorcheck-", suffix=".toml", dir=target.parent)
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="\n") as f:
            f.write(text)
        os.replace(tmp, target)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


def run(args: argparse.Namespace, *, loader: Callable[[Path], Board] | None = None) -> int:
    """Write the starter config; 2 when the output exists and --force was not given."""
    path = Path(args.path)
    output = Path(args.output) if getattr(args, "output", None) else _default_output(path)
    if output.exists() and not getattr(args, "force", False):
        print(f"sensorcheck: error: {output} exists; use --force to overwrite it", file=sys.stderr)
        return 2
    if loader is None:
        from sensorcheck.board.build import load_board

        loader = load_board
    board = loader(path)
    text = starter_config(board)
    _write_atomic(output, text)
    review = sum(1 for line in text.splitlines() if "REVIEW:" in line)
    print(f"wrote {output}: {review} item(s) marked REVIEW to check")
    return 0
