"""IPC-D-356(A) netlists: test/access points with their net names, in mm.

Read: parameter records ``P  UNITS`` (``CUST 0``: inch, 0.0001 in per unit; ``CUST 1`` and ``SI``:
mm, 0.001 mm per unit; ``CUST 2``: inch with degrees), ``P  NNAME<n> <long name>`` aliases, and
the conductor records 317 (through hole), 327 (SMT feature), 367 (non-plated/tooling) in their
fixed columns (1-based):

====== ===========================================================
1-3    record type (317 / 327 / 367; 999 ends the file)
4-17   net name (14 characters; or the alias ``NNAME<n>``)
21-26  reference designator (``VIA`` for vias)
28-31  pin
33-37  ``D`` + drilled hole diameter (units as above)
38     ``P`` plated / ``U`` unplated
39-41  ``A`` + access side: 00 both, 01 top (primary), 02 bottom, else an inner layer
42-     ``X`` signed coordinate, ``Y`` signed coordinate, then feature size, rotation, mask
====== ===========================================================

The coordinate fields are read by their letters (not by columns) because generators pad them
differently (``X+062150`` vs ``X  14900``). 027/067 continuation and other records are skipped.
"""

from __future__ import annotations

import re

from sensorcheck.board.model import NetPoint, Side, SourceRef
from sensorcheck.errors import InputError, LimitError
from sensorcheck.limits import DEFAULT_LIMITS, Limits

#: unit of one coordinate count in mm, per ``P  UNITS`` value
_UNIT_MM = {"CUST 0": 0.0001 * 25.4, "CUST 2": 0.0001 * 25.4, "CUST 1": 0.001, "SI": 0.001, "ENGLISH": 0.0001 * 25.4}
_COORD_RE = re.compile(r"X\s*([+-]?)\s*(\d+)\s*Y\s*([+-]?)\s*(\d+)")
_HOLE_RE = re.compile(r"D\s*(\d+)")


def _field(line: str, start: int, end: int) -> str:
    """Columns start..end, 1-based inclusive, stripped."""
    return line[start - 1 : end].strip()


def read_ipc356(data: bytes, name: str, *, limits: Limits = DEFAULT_LIMITS) -> list[NetPoint]:
    """Read an IPC-D-356 netlist into net points (mm). Raises InputError with the line."""
    if not data.strip():
        raise InputError(name, None, "the netlist is empty", "IPC-D-356 records (P UNITS, 317/327 lines, 999)")
    text = data.decode("latin-1")
    unit_mm: float | None = None
    aliases: dict[str, str] = {}
    points: list[NetPoint] = []
    saw_record = False
    for idx, raw in enumerate(text.split("\n"), start=1):
        line = raw.rstrip("\r")
        if not line.strip():
            continue
        if any(ord(c) < 32 and c != "\t" for c in line):
            raise InputError(name, idx, "binary or control bytes in a netlist", "IPC-D-356 text records")
        code = line[:3]
        if line.startswith("C"):
            continue
        if line.startswith("P"):
            body = line[3:].strip() if len(line) > 3 else ""
            key, _, value = body.partition(" ")
            key_u = key.upper()
            if key_u == "UNITS":
                units = " ".join(value.split()).upper()
                if units not in _UNIT_MM:
                    raise InputError(name, idx, f"unknown units {value.strip()!r}",
                                     "P  UNITS CUST 0 (inch), CUST 1 (mm), CUST 2 or SI")
                unit_mm = _UNIT_MM[units]
            elif re.fullmatch(r"NNAME\d+", key_u):
                aliases[key_u] = value.strip()
            continue
        if code == "999":
            break
        if code in ("317", "327", "367"):
            saw_record = True
            if unit_mm is None:
                raise InputError(name, idx, "a conductor record before the units were given",
                                 "a 'P  UNITS CUST 0|CUST 1|SI' line in the header")
            net = _field(line, 4, 17)
            if net.upper() in aliases:
                net = aliases[net.upper()]
            ref = _field(line, 21, 26) or None
            pin = _field(line, 28, 31) or None
            m = _COORD_RE.search(line, 41)
            if not m:
                raise InputError(name, idx, "no X/Y coordinates in the record",
                                 "X<sign><digits>Y<sign><digits> from column 42")
            x = float(m.group(2)) * (-1 if m.group(1) == "-" else 1) * unit_mm
            y = float(m.group(4)) * (-1 if m.group(3) == "-" else 1) * unit_mm
            hole = None
            hm = _HOLE_RE.match(line[32:37].replace(" ", "")) if len(line) >= 37 else None
            if hm and line[32:33] == "D":
                hole = int(hm.group(1)) * unit_mm
            access = line[38:41]
            side: Side
            if access == "A01":
                side = "top"
            elif access == "A02":
                side = "bottom"
            elif access == "A00" or code == "317":
                side = "both"
            elif re.fullmatch(r"A\d\d", access):
                side = "inner"
            else:
                raise InputError(name, idx, f"bad access code {access!r}", "A00, A01, A02 or A<layer> in columns 39-41")
            if not net or net.upper() == "N/C":
                continue  # no net, or "N/C" (not connected, IPC-D-356A): nothing to name
            if len(points) >= limits.max_holes:
                raise LimitError(name, idx, "too many netlist points", f"at most {limits.max_holes} (limits.max_holes)")
            points.append(NetPoint(net=net, x_mm=x, y_mm=y, side=side, component=None if ref == "VIA" else ref,
                                   pin=pin, hole_mm=hole, source=SourceRef(name, idx)))
            continue
        if re.match(r"^\d{3}", code):
            continue  # other records (027/067 continuations, outlines, adjacency): not needed here
        raise InputError(name, idx, f"unexpected line {line[:30]!r}",
                         "an IPC-D-356 record: C (comment), P (parameter), 317/327/367 or 999")
    if not saw_record:
        raise InputError(name, None, "no conductor records (317/327/367) in the netlist", "IPC-D-356 test records")
    return points
