"""``sensorcheck init PATH [--output FILE] [--force] [--explain]``: a starter sensorcheck.toml.

The sensors are recognised from the copper (``design/recognise.py``); net names, where the
board has them, suggest roles first.  The config goes to standard output, or to ``--output``
(never over an existing file without ``--force``, never into the input folder unless asked);
``--explain`` prints the recognition report.  The stackup is taken from the job file when there
is one.  Every guess carries a ``# REVIEW:`` comment saying why it was made,
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

from sensorcheck.board.model import Board, Stackup
from sensorcheck.design.roles import matches, natural_key
from sensorcheck.design.recognise import Found, Recognition, is_unnamed, recognise

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


def recognise_board(board: Board) -> tuple[Recognition, dict[str, tuple[str, str | None, str]]]:
    """What :mod:`sensorcheck.design.recognise` finds on ``board``, and the roles the names suggest."""
    nets = [n for n in board.net_names() if not is_unnamed(n)]
    roles = guess_roles(nets)
    return recognise(board, {n: r for n, (r, _, _) in roles.items()}), roles


def _sensor_comment(f: Found) -> str:
    nets = ", ".join(f.all_nets[:8]) + (" ..." if len(f.all_nets) > 8 else "")
    return _comment(f"{f.name}: {f.kind} on the {f.face} ({nets}); " + "; ".join(f.evidence))


def starter_config(board: Board, recognition: tuple[Recognition, dict[str, tuple[str, str | None, str]]] | None = None
                   ) -> str:
    """The text of a starter sensorcheck.toml for ``board`` (deterministic: no date, sorted)."""
    rec, name_roles = recognition if recognition is not None else recognise_board(board)
    nets = [n for n in board.net_names() if not is_unnamed(n)]
    sensing = {n for f in rec.sensors for n in f.all_nets}
    rejected_named = sorted({r.net for r in rec.rejected if r.net in name_roles and r.net not in sensing
                             and name_roles[r.net][0] in ("self", "transmitter", "receiver")}, key=natural_key)
    # roles of named nets: names first, then what the copper said
    roles: dict[str, tuple[str, str | None, str]] = {n: v for n, v in name_roles.items() if n not in rejected_named}
    sensor_of: dict[str, str] = {}
    groups: list[Found] = []
    places: list[tuple[Found, str, str]] = []  # (sensor, net, role)
    # the board's face: where most sensors are touched; a sensor touched from the other face gets a
    # [[sensors]] table of its own carrying its face
    face = rec.face
    face_count = {fc: sum(1 for f in rec.sensors if f.face == fc) for fc in ("top", "bottom")}
    for f in rec.sensors:
        mutual_segments = f.kind in ("slider", "wheel") and bool(f.tx)
        if mutual_segments or f.face != face or (
                f.kind == "proximity" and not any(re.search(r"PROX|HAND|PRESENCE", n.upper()) for n in f.nets)):
            groups.append(f)
            continue
        for n in f.all_nets:
            role = "transmitter" if n in f.tx else ("receiver" if n in f.rx else "self")
            if is_unnamed(n):
                places.append((f, n, role))
                continue
            if n not in roles or roles[n][0] != role:
                roles[n] = (role, None, f"recognised from the copper as {f.kind} electrodes (sensors listed above)")
            if f.kind in ("slider", "wheel") and not f.tx:
                sensor_of[n] = f.name
    grouped_nets = {n for f in groups for n in f.all_nets}
    for n in grouped_nets:
        roles.pop(n, None)
    for n, (role, why) in rec.reference.items():
        if not is_unnamed(n):
            roles[n] = (role, None, why)
    faces = {f.face for f in rec.sensors}
    if not rec.sensors:
        face_why = "no sensors recognised: top is the usual touched face"
    elif len(faces) == 1:
        face_why = f"every recognised sensor has its electrodes on the {face} copper"
    else:
        other = [f.name for f in rec.sensors if f.face != face]
        face_why = (f"{face_count[face]} sensor(s) face the {face}, but {', '.join(other)} have their electrodes "
                    f"only or mostly on the other face: each of those has a [[sensors]] table below with "
                    f"face = \"{'top' if face == 'bottom' else 'bottom'}\" (check both faces' overlays: one "
                    f"overlay stack is given for the board)")
    lines: list[str] = [
        f"# sensorcheck.toml: starter config written by `sensorcheck init` for {_comment(board.name)}.",
        "# Every guess is marked REVIEW with the reason; check each before trusting a report.",
        "",
        'profile = "default"',
        "",
        "[board]",
        f"# REVIEW: {_comment(face_why)}",
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
    lines.append(f"# Recognised from the copper: {len(rec.sensors)} sensor(s) "
                 "(`sensorcheck init --explain` lists the evidence and the copper rejected):")
    for f in rec.sensors:
        lines.append(f"#   {_sensor_comment(f)}")
        for r in f.review:
            lines.append(f"#   REVIEW: {f.name}: {_comment(r)}")
    lines += ["", "[roles]"]
    if not nets:
        lines += ["# REVIEW: the board carries no net names (no Gerber X2 net attributes, no IPC-D-356 netlist);",
                  "# roles are given by place below, one per electrode:"]
    by_role: dict[str, list[str]] = {}
    for net in sorted(roles, key=natural_key):
        by_role.setdefault(roles[net][0], []).append(net)
    for role in ("transmitter", "receiver", "self", "shield", "guard", "ground"):
        members = by_role.get(role, [])
        if not members:
            continue
        whys = sorted({roles[n][2] for n in members})
        shown = whys[:6] + ([f"and {len(whys) - 6} more reasons"] if len(whys) > 6 else [])
        lines.append(f"# REVIEW: {len(members)} net(s): {_comment('; '.join(shown))}")
        named_groups: dict[str, list[str]] = {}
        for n in members:
            if n in sensor_of:
                named_groups.setdefault(sensor_of[n], []).append(n)
        plain = [n for n in members if n not in sensor_of]
        items = [_q(p) for p in _patterns(plain, nets)]
        for name, ms in sorted(named_groups.items(), key=lambda kv: natural_key(kv[0])):
            lines.append(f"# REVIEW: {', '.join(ms[:8])}{' ...' if len(ms) > 8 else ''}: one sensor ('{name}'); "
                         "its segments are ordered by their position on the board")
            items += [f"{{pattern = {_q(p)}, sensor = {_q(name)}}}" for p in _patterns(ms, nets)]
        lines.append(f"{role} = [{', '.join(items)}]")
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
    if rejected_named:
        whys = {r.net: r.why for r in rec.rejected}
        shown = "; ".join(f"{n}: {whys[n]}" for n in rejected_named[:6])
        lines.append(f"# REVIEW: named like sensors but not taken, their copper is no electrode: {_comment(shown)}"
                     + (" ..." if len(rejected_named) > 6 else ""))
    unassigned = [n for n in nets if n not in roles and n not in grouped_nets]
    if unassigned:
        shown = ", ".join(sorted(unassigned, key=natural_key)[:12])
        lines.append(f"# REVIEW: no role guessed for {len(unassigned)} net(s) ({_comment(shown)}"
                     + (" ..." if len(unassigned) > 12 else "") + "); add any that sense or disturb")
    unnamed_ref = [(n, v) for n, v in rec.reference.items() if is_unnamed(n)]
    if places or unnamed_ref:
        lines.append("")
        lines.append("# REVIEW: copper without a net name; each place below gives the copper under it a role (and "
                     "its sensor's name). Remove the ones that are wrong.")
        for n, (role, why) in unnamed_ref:
            la, x, y = _ref_point(board, n)
            lines += [f"# REVIEW: {_comment(why)}", "[[roles.place]]", f"layer = {_q(la)}",
                      f"point_mm = [{x:g}, {y:g}]", f"role = {_q(role)}"]
        for f, n, role in places:
            la, x, y = f.points[n]
            lines += ["[[roles.place]]", f"layer = {_q(la)}", f"point_mm = [{x:g}, {y:g}]", f"role = {_q(role)}",
                      f"sensor = {_q(f.name)}"]
    if groups:
        lines.append("")
        for f in groups:
            lines.append(f"# REVIEW: {_sensor_comment(f)}")
            lines += [f"# REVIEW: {_comment(r)}" for r in f.review]
            if any(is_unnamed(n) for n in f.all_nets):
                where = "; ".join(f"{n} at {f.points[n][0]} ({f.points[n][1]:g}, {f.points[n][2]:g})"
                                  for n in f.all_nets[:6] if n in f.points)
                lines.append(f"# (unnamed copper is named by its geometry id: {_comment(where)})")
            lines += ["[[sensors]]", f"name = {_q(f.name)}", f"kind = {_q(f.kind)}"]
            if f.face != face:
                lines.append(f"face = {_q(f.face)}  # touched from the {f.face}: see the REVIEW in [board]")
            if f.kind == "matrix":
                lines += [f"rows = [{', '.join(_q(n) for n in f.tx)}]",
                          f"columns = [{', '.join(_q(n) for n in f.rx)}]"]
            elif f.tx:
                lines += [f"tx = [{', '.join(_q(n) for n in f.tx)}]", f"rx = [{', '.join(_q(n) for n in f.rx)}]"]
            else:
                lines.append(f"nets = [{', '.join(_q(n) for n in f.nets)}]")
    lines.append("")
    lines += [
        "# For boards without net names: the copper under a point takes the role (and a sensor name).",
        "# [[roles.place]]",
        '# layer = "top-copper"',
        "# point_mm = [10.0, 20.0]",
        '# role = "self"',
        '# sensor = "B1"',
        "",
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


def _ref_point(board: Board, net: str) -> tuple[str, float, float]:
    """A point on the largest piece of ``net``'s copper (its layer, x, y)."""
    best = max((la for la in board.copper_layers() if net in la.by_net), key=lambda la: la.by_net[net].area)
    polys = list(getattr(best.by_net[net], "geoms", [best.by_net[net]]))
    pt = max(polys, key=lambda p: p.area).representative_point()
    return best.name, round(pt.x, 3) + 0.0, round(pt.y, 3) + 0.0


def explain(board: Board, recognition: tuple[Recognition, dict[str, tuple[str, str | None, str]]] | None = None
            ) -> str:
    """The recognition report: each sensor with kind, nets, electrodes, face and evidence; what was rejected."""
    rec, _names = recognition if recognition is not None else recognise_board(board)
    out = [f"Recognition report for {board.name}: {len(rec.sensors)} sensor(s)", ""]
    for f in rec.sensors:
        out.append(f"{f.name}  {f.kind}  face {f.face}  layer {f.layer}")
        if f.tx:
            out.append(f"  TX: {', '.join(f.tx)}")
            out.append(f"  RX: {', '.join(f.rx)}")
        else:
            out.append(f"  electrodes: {', '.join(f.nets)}")
        for n in f.all_nets:
            if is_unnamed(n) and n in f.points:
                la, x, y = f.points[n]
                out.append(f"    {n}: unnamed copper at ({x:g}, {y:g}) on {la}")
        for e in f.evidence:
            out.append(f"  evidence: {_comment(e)}")
        for r in f.review:
            out.append(f"  REVIEW: {_comment(r)}")
    if rec.reference:
        out += ["", "Reference copper recognised from its geometry:"]
        out += [f"  {n}: {role}: {_comment(why)}" for n, (role, why) in rec.reference.items()]
    out += ["", f"Copper looked at and rejected ({len(rec.rejected)}):"]
    for r in rec.rejected:
        out.append(f"  {r.net} on {r.layer}: {_comment(r.why)}")
    out += [f"note: {n}" for n in rec.notes]
    return "\n".join(out) + "\n"

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
    """Print the starter config (or write it to ``--output``; 2 when that exists and --force was not
    given); ``--explain``: the recognition report instead.  2 when PATH holds no fabrication data."""
    path = Path(args.path)
    output = Path(args.output) if getattr(args, "output", None) else None
    if output is not None and output.exists() and not getattr(args, "force", False):
        print(f"sensorcheck: error: {output} exists; use --force to overwrite it", file=sys.stderr)
        return 2
    if not path.exists():
        print(f"sensorcheck: error: {path}: no such file or folder", file=sys.stderr)
        return 2
    if loader is None:
        from sensorcheck.board.build import load_board

        loader = load_board
    board = loader(path)
    if not board.copper_layers():
        print(f"sensorcheck: error: {path}: no fabrication data found (no copper layer among "
              f"{len(board.files)} file(s)); expected Gerber, Excellon or IPC-D-356 files", file=sys.stderr)
        return 2
    found = recognise_board(board)
    if getattr(args, "explain", False):
        sys.stdout.write(explain(board, found))
        if output is None:
            return 0
    text = starter_config(board, found)
    if output is None:
        sys.stdout.write(text)
        return 0
    _write_atomic(output, text)
    review = sum(1 for line in text.splitlines() if "REVIEW:" in line)
    print(f"wrote {output}: {review} item(s) marked REVIEW to check")
    return 0

