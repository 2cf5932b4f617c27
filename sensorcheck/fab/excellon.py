"""Excellon drill files -> holes and slots in mm.

Our own reader (small, strict, with line numbers in every error). It understands:

* header ``M48`` ... ``%``/``M95``; units ``INCH``/``METRIC`` with ``LZ``/``TZ`` and an optional
  digit pattern (``METRIC,TZ,000.000``), ``M71``/``M72``, Altium's ``;FILE_FORMAT=2:5``;
  coordinates with an explicit decimal point or in an implied format (``LZ``: leading zeros
  written, trailing ones dropped; ``TZ``: the reverse; default inch 2.4 / metric 3.3, TZ);
* tool table ``T1C0.300`` (also ``T01F00S00C0.01378``, tools defined in the body);
* plated/non-plated per tool from X2 comments (``; #@! TA.AperFunction,Plated,PTH,ViaDrill``),
  Altium's ``;TYPE=PLATED``/``;TYPE=NON_PLATED``, per file from ``; #@! TF.FileFunction,Plated,...``
  / ``NonPlated`` / ``MixedPlating``, else a hint from the file name (``-PTH``/``-NPTH``);
* hits, ``R`` repeats, ``G85`` slots, routed slots (``G00`` + ``M15`` + ``G01``/``G02``/``G03`` +
  ``M16``/``M17``; arcs by end point and ``A`` radius or ``I``/``J`` centre), ``G90``/``G91``.

Dialects of known meaning are read with a warning naming the file, line and construct
(:mod:`sensorcheck.fab.dialect`; ``strict`` refuses them): ``G93`` zero set, feed and speed codes,
tools never defined (a companion tool table, sizes declared in comments, else a stated default
size, every such hole flagged), coordinates with more digits than the declared format (read by
the digits present, the format inferred), ``/`` lines in the header, a hole before any tool
selection, conflicting ``;FILE_FORMAT`` comments.

Anything else in the body is an :class:`~sensorcheck.errors.InputError` naming the file, the line
and what was expected; so is a file that ends without ``M30`` (likely truncated).
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from dataclasses import dataclass, field

from sensorcheck.board.model import Hole, SourceRef
from sensorcheck.errors import InputError, LimitError
from sensorcheck.fab.dialect import DialectLog, condense, strip_padding
from sensorcheck.fab.identify import generator_from_attributes, head_file_attributes
from sensorcheck.limits import DEFAULT_LIMITS, Limits

MM_PER_INCH = 25.4
#: chord tolerance used to flatten routed arcs into straight slot pieces (mm)
ARC_TOLERANCE_MM = 0.001


@dataclass(slots=True)
class ExcellonRead:
    name: str
    units: str  # "mm" | "inch" as written in the file (holes are always mm)
    holes: list[Hole] = field(default_factory=list)
    generator: str | None = None
    file_attributes: dict[str, list[str]] = field(default_factory=dict)
    #: tool number -> diameter in mm
    tools_mm: dict[int, float] = field(default_factory=dict)
    #: file-level plating from X2 (True/False), None for mixed or unknown
    plated: bool | None = None
    #: what a user must see: dialects read (file:line: construct: ...), at most five of each kind
    warnings: list[str] = field(default_factory=list)
    #: dialect constructs read with a warning (sensorcheck.fab.dialect), each named once
    constructs: list[str] = field(default_factory=list)


@dataclass(slots=True)
class _Tool:
    diameter: float  # in file units at definition time, converted to mm on definition
    plated: bool | None
    function: str | None
    #: False: the file never gives the size (a default was taken): every hole is flagged
    size_known: bool = True


@dataclass(slots=True)
class _State:
    inch: bool = True  # Excellon's historical default when a file states no units
    zeros: str = "TZ"  # which zeros are written: "LZ" leading, "TZ" trailing
    int_digits: int | None = None
    dec_digits: int | None = None
    absolute: bool = True
    x: float = 0.0
    y: float = 0.0
    tool: int | None = None
    route_mode: bool = False
    tool_down: bool = False
    raised: bool = False
    ended: bool = False


_NUM = r"[+-]?(?:\d+\.?\d*|\.\d+)"
_COORD_RE = re.compile(rf"^(?:X({_NUM}))?(?:Y({_NUM}))?$")
_TOOL_DEF_RE = re.compile(r"^T(\d+)((?:[A-Z][+-]?[\d.]+)+)$")
_TOOL_SEL_RE = re.compile(r"^T(\d+)$")
#: longest number token read (a coordinate in any Excellon dialect has far fewer characters)
_MAX_NUMBER_CHARS = 24
#: largest coordinate accepted, in mm (10 m: no board is larger; anything beyond is a broken file)
_MAX_COORD_MM = 10_000.0
_FILE_FORMAT_RE = re.compile(r"FILE_FORMAT\s*=\s*(\d+)\s*:\s*(\d+)", re.I)
_APERFUNCTION_RE = re.compile(r"#@!\s*TA\.AperFunction\s*,\s*([^,\s]+)\s*(?:,\s*([^,\s]+))?(?:\s*,\s*([^,\s]+))?", re.I)
#: units lines: INCH/METRIC or M72/M71 (Excellon's inch/metric codes), zeros and a digit pattern in
#: either order (``METRIC,TZ,000.000``, ``M71,TZ``, ``INCH,00.0000,LZ``)
_UNITS_RE = re.compile(r"^(INCH|METRIC|M71|M72)(?:,(LZ|TZ))?(?:,(0+)\.(0+))?(?:,(LZ|TZ))?$")
#: hole sizes declared in comments: "; Holesize 1. = 35.000000 Tolerance = ... PLATED MILS" (Allegro
#: and PADS list their tools this way) and "T1 0.800mm" / "T01 0.0350in" lines of a tool table
_HOLESIZE_RE = re.compile(r"Holesize\s*(\d+)\.?\s*=\s*([\d.]+).*?\b(MILS?|MM|INCH|IN)\b", re.I)
_TOOL_TABLE_RE = re.compile(r"^\s*T(\d+)\s*(?:C\s*)?[:=,]?\s*([\d.]+)\s*(MILS?|MM|INCH|IN|\"|)\s*(?:\s.*)?$", re.I)
#: feed (F), spindle speed (S) and similar machine words: no effect on where holes are
_MACHINE_WORD_RE = re.compile(r"(?<![A-Z])[FS][+-]?\d+(?:\.\d*)?")
#: the size taken for a tool the file never sizes (0.3 mm: a common small via drill, common practice)
DEFAULT_UNKNOWN_TOOL_MM = 0.3
_HEADER_WORD_RE = re.compile(r"^(FMAT|VER|ICI|DETECT|ATC|BLKD|SBK|TCST|AFS|OSTOP|RUNTIME|CP|OM48|M47|G90|G91|G93|G05|G81|M71|M72|R,)")


def _function_name(text: str | None) -> str | None:
    if not text:
        return None
    t = text.lower()
    for key, value in (("via", "via"), ("component", "component"), ("mechanical", "mechanical"),
                       ("castellated", "component"), ("pressfit", "component")):
        if key in t:
            return value
    return t


def read_excellon(
    data: bytes, name: str, *, plated_hint: bool | None = None, limits: Limits = DEFAULT_LIMITS,
    strict: bool = False, tool_table_mm: Mapping[int, float] | None = None,
    format_hint: DrillFormat | None = None,
) -> ExcellonRead:
    """Read an Excellon drill file. ``plated_hint`` (from the file name) is used only where neither
    the tool nor the file says whether holes are plated. ``tool_table_mm`` (tool number -> diameter
    in mm, from a companion tool file: :func:`read_tool_table`) sizes tools the file never defines.
    ``format_hint`` (from a drill parameter file beside it: :func:`read_drill_parameters`) gives the
    units, digits and zeros a file without a header states nowhere itself.
    ``strict`` refuses the dialects listed in the module docstring instead of reading them."""
    if not data.strip():
        raise InputError(name, None, "the drill file is empty", "an Excellon program (M48 header, tools, holes, M30)")
    log = DialectLog(name, strict)
    data = strip_padding(data, log)
    text = data.decode("latin-1")
    if "\r" in text:  # CR LF and bare CR (old Mac) line ends
        text = text.replace("\r\n", "\n").replace("\r", "\n")
    declared_mm: dict[int, float] = {}  # tool sizes declared in comments ("; Holesize 1. = 35 ... MILS")
    number_format: tuple[int, int, int, str] | None = None  # ints, decs, line, how it was written
    zero_set = (0.0, 0.0)  # G93: where the program zero lies (mm)
    attrs = head_file_attributes(data[:65536])
    out = ExcellonRead(name=name, units="inch", generator=generator_from_attributes(attrs), file_attributes=attrs)
    ff = [v.lower() for v in attrs.get(".FileFunction", [])]
    if ff:
        out.plated = {"plated": True, "nonplated": False}.get(ff[0])
    file_plated = out.plated if ff and ff[0] in ("plated", "nonplated") else plated_hint

    st = _State()
    if format_hint is not None:
        log.accept(None, "number format from a parameter file",
                   f"units and number format taken from {format_hint.source}",
                   f"{'inch' if format_hint.inch else 'mm'}, {format_hint.int_digits}:{format_hint.dec_digits}, "
                   f"{'leading' if format_hint.zeros == 'LZ' else 'trailing'} zeros written, until the file says otherwise",
                   "INCH/METRIC with LZ/TZ in an M48 header")
        st.inch, st.zeros = format_hint.inch, format_hint.zeros
        st.int_digits, st.dec_digits = format_hint.int_digits, format_hint.dec_digits
    tools: dict[int, _Tool] = {}
    pending_plated: bool | None = None  # from the last ;TYPE= comment (Altium)
    pending_ta: tuple[bool | None, str | None] | None = None  # from the last TA.AperFunction comment
    in_header = False
    header_seen = False
    holes: list[Hole] = []

    def set_format(ints: int, decs: int, line: int, written: str) -> None:
        nonlocal number_format
        if number_format is not None and number_format[:2] != (ints, decs):
            log.accept(line, "conflicting number formats", f"{written} after {number_format[3]} (line {number_format[2]})",
                       f"the later one, {ints}:{decs}, applies from this line on", "one number format per file")
        number_format = (ints, decs, line, written)
        st.int_digits, st.dec_digits = ints, decs

    def number(raw: str, line: int, axis: str) -> float:
        if len(raw) > _MAX_NUMBER_CHARS:
            raise InputError(name, line, f"a number of {len(raw)} characters for {axis}",
                             f"at most {_MAX_NUMBER_CHARS} characters")
        if "." in raw:
            try:
                value = float(raw)
            except ValueError:
                raise InputError(name, line, f"bad number {raw!r} for {axis}", "a decimal number") from None
        else:
            sign = -1.0 if raw.startswith("-") else 1.0
            digits = raw.lstrip("+-")
            if not digits.isdigit():
                raise InputError(name, line, f"bad number {raw!r} for {axis}", "digits")
            ints = st.int_digits if st.int_digits is not None else (2 if st.inch else 3)
            decs = st.dec_digits if st.dec_digits is not None else (4 if st.inch else 3)
            if len(digits) > ints + decs:
                # more digits than the declared format: read by the digits present. With leading zeros
                # written the integer digits are fixed, so the extra ones are decimals; with trailing
                # zeros written the decimals are fixed (an emulated export writing a wider format)
                inferred = (ints, len(digits) - ints) if st.zeros == "LZ" else (len(digits) - decs, decs)
                log.accept(line, "coordinate longer than the format",
                           f"{axis} {raw!r} has {len(digits)} digits, more than the format {ints}:{decs}",
                           f"read by the digits present as format {inferred[0]}:{inferred[1]}",
                           f"at most {ints + decs} digits")
            if st.zeros == "LZ":  # leading zeros written: the number is left-aligned
                if len(digits) <= ints + decs:
                    value = sign * int(digits.ljust(ints + decs, "0")) / 10**decs
                else:
                    value = sign * int(digits) / 10 ** (len(digits) - ints)
            else:
                value = sign * int(digits) / 10**decs
        value *= MM_PER_INCH if st.inch else 1.0
        if not math.isfinite(value) or abs(value) > _MAX_COORD_MM:
            raise InputError(name, line, f"{axis} {raw!r} is {value:g} mm, far outside any board",
                             f"a coordinate within {_MAX_COORD_MM:g} mm")
        return value

    def define_tool(m: re.Match[str], line: int) -> None:
        nonlocal pending_ta
        if len(m.group(1)) > 6:
            raise InputError(name, line, f"tool number of {len(m.group(1))} digits", "a tool number of at most 6 digits")
        num = int(m.group(1))
        params = dict(re.findall(r"([A-Z])([+-]?[\d.]+)", m.group(2)))
        if "C" not in params:
            raise InputError(name, line, f"tool T{num} has no diameter", "a C<diameter> parameter, e.g. T1C0.300")
        try:
            dia = float(params["C"])
        except ValueError:
            raise InputError(name, line, f"bad tool diameter {params['C']!r}", "a number") from None
        if not (0 < dia < (1.0 if st.inch else 25.4) * 10):
            raise InputError(name, line, f"tool T{num} diameter {dia} is out of range",
                             "a positive drill diameter below 10 inch / 254 mm")
        plated, function = (pending_ta if pending_ta else (None, None))
        if plated is None:
            plated = pending_plated
        tools[num] = _Tool(dia * (MM_PER_INCH if st.inch else 1.0), plated, function)
        pending_ta = None

    def sized_elsewhere(num: int, line: int) -> _Tool:
        """A tool the file selects but never defines: from the companion table, a comment, or a default."""
        if tool_table_mm and num in tool_table_mm:
            dia, size_known = tool_table_mm[num], True
            log.accept(line, "tool sized by a companion tool file", f"tool T{num} is not defined in the file",
                       f"its size, {dia:g} mm, is taken from the tool file beside it", f"T{num}C<diameter> in the header")
        elif num in declared_mm:
            dia, size_known = declared_mm[num], True
            log.accept(line, "tool sized in a comment", f"tool T{num} is defined only in a header comment",
                       f"its size there, {dia:g} mm, is taken", f"T{num}C<diameter> in the header")
        else:
            dia, size_known = DEFAULT_UNKNOWN_TOOL_MM, False
            log.accept(line, "tool never sized", f"tool T{num} is selected but its size is given nowhere",
                       f"its holes are drawn {dia:g} mm wide (a stated default) and flagged as of unknown size",
                       f"T{num}C<diameter> in the header, or a tool file beside the drill file")
        tools[num] = _Tool(dia, pending_plated, None, size_known)
        return tools[num]

    def current_tool(line: int) -> tuple[int, _Tool]:
        if st.tool is None or st.tool == 0:
            # the machine drills with whatever tool is loaded: read as the first tool of the table
            first = next(iter(tools), None)
            log.accept(line, "hole before any tool selection", "a hole comes before any tool is selected",
                       f"drilled with the first tool of the header (T{first})" if first is not None
                       else "drilled with a tool of unknown size", "a tool selection (T1) first")
            st.tool = first if first is not None else 1
        tool = tools.get(st.tool)
        if tool is None:
            tool = sized_elsewhere(st.tool, line)
        return st.tool, tool

    def add(x: float, y: float, line: int, end: tuple[float, float] | None = None) -> None:
        _num, tool = current_tool(line)
        plated = tool.plated if tool.plated is not None else file_plated
        if len(holes) >= limits.max_holes:
            raise LimitError(name, line, f"more than {limits.max_holes} holes", "fewer holes (limits.max_holes)")
        zx, zy = zero_set
        holes.append(Hole(
            x_mm=x + zx, y_mm=y + zy, diameter_mm=tool.diameter, plated=plated, source=SourceRef(name, line),
            end_x_mm=end[0] + zx if end else None, end_y_mm=end[1] + zy if end else None, function=tool.function,
            size_known=tool.size_known,
        ))

    def move(xs: str | None, ys: str | None, line: int) -> tuple[float, float]:
        x = number(xs, line, "X") if xs is not None else None
        y = number(ys, line, "Y") if ys is not None else None
        if st.absolute:
            return (x if x is not None else st.x, y if y is not None else st.y)
        return (st.x + (x or 0.0), st.y + (y or 0.0))

    lines = text.split("\n")  # not splitlines(): it would also split on \x1c, \x85 ... inside garbage
    while lines and not lines[-1].strip():
        lines.pop()
    for idx, raw_line in enumerate(lines, start=1):
        ln = raw_line.strip()
        if not ln:
            continue
        if any(ord(c) < 32 and c != "\t" for c in ln) or any(ord(c) > 126 for c in ln if not ln.startswith(";")):
            raise InputError(name, idx, "binary or control bytes in a drill file",
                             "Excellon text (M48 header, tools, holes, M30)")
        if ln.startswith(";") or ln.startswith("("):
            body = ln.lstrip(";( ").rstrip(")")
            up = body.upper().replace(" ", "")
            if up.startswith("TYPE=PLATED"):
                pending_plated = True
            elif up.startswith("TYPE=NON_PLATED") or up.startswith("TYPE=NONPLATED"):
                pending_plated = False
            m = _FILE_FORMAT_RE.search(body)
            if m:
                ints, decs = m.group(1), m.group(2)
                if len(ints) > 2 or len(decs) > 2 or not (0 < int(ints) <= 9 and 0 < int(decs) <= 9):
                    raise InputError(name, idx, f"number format {ints}:{decs}", "digits per part between 1 and 9")
                set_format(int(ints), int(decs), idx, f";FILE_FORMAT={ints}:{decs}")
            m = _HOLESIZE_RE.search(body)
            if m:
                unit = m.group(3).upper()
                k = 0.0254 if unit.startswith("MIL") else (MM_PER_INCH if unit.startswith("IN") else 1.0)
                size = float(m.group(2)) * k if m.group(2).count(".") <= 1 else 0.0
                if 0 < size < 254:
                    declared_mm[int(m.group(1))] = size
            m = _APERFUNCTION_RE.search(body)
            if m:
                kind = m.group(1).lower()
                plated = {"plated": True, "nonplated": False}.get(kind)
                pending_ta = (plated, _function_name(m.group(3) or m.group(2)))
            if "FORMAT={" in body.upper() and "/ INCH" in body.upper():
                pass  # KiCad's description; the INCH/METRIC line decides
            continue
        ln = ln.upper().replace(" ", "")
        if ln.startswith("G93"):
            # G93 zero set (Excellon CNC-7 programming manual, "G93 Zero Set"): X/Y place the program
            # zero; later coordinates are relative to it, so a hole lies at coordinate + offset.
            # (A reader that ignores G93 puts holes at the coordinates; with G93X0Y0 both agree.)
            m = _COORD_RE.match(ln[3:])
            if m is None:
                raise InputError(name, idx, f"bad zero set {raw_line.strip()[:40]!r}", "G93X<x>Y<y>")
            zero_set = (number(m.group(1), idx, "X") if m.group(1) else 0.0,
                        number(m.group(2), idx, "Y") if m.group(2) else 0.0)
            log.accept(idx, "G93 zero set", f"G93 places the program zero at ({zero_set[0]:g}, {zero_set[1]:g}) mm",
                       "holes lie at their coordinates plus this offset" if zero_set != (0.0, 0.0)
                       else "at the origin: coordinates unchanged", "coordinates without G93")
            continue
        if ln == "M48":
            in_header = True
            header_seen = True
            continue
        if in_header and ln in ("%", "M95"):
            in_header = False
            continue
        if ln == "%":
            continue
        m = _UNITS_RE.match(ln)
        if m:
            st.inch = m.group(1) in ("INCH", "M72")
            zeros = m.group(2) or m.group(5)
            if zeros:
                st.zeros = zeros
            if m.group(3):
                set_format(len(m.group(3)), len(m.group(4)), idx, raw_line.strip())
            continue
        m = _TOOL_DEF_RE.match(ln)
        if m and "C" in m.group(2):
            define_tool(m, idx)
            if not in_header:
                st.tool = int(m.group(1))
            continue
        if in_header and ln.startswith("ICI"):
            # ICI (incremental input of coordinates): ICI,ON or ICI makes coordinates incremental
            st.absolute = ln.endswith(",OFF")
            continue
        if in_header and ln.startswith("/"):
            log.accept(idx, "'/' line in the header", f"header line {raw_line.strip()[:30]!r}",
                       "ignored as a comment (block delete)", "comments written as ';' lines")
            continue
        if in_header:
            if _HEADER_WORD_RE.match(ln) or _TOOL_DEF_RE.match(ln) or _TOOL_SEL_RE.match(ln) \
                    or re.match(r"^[A-Z]{2,}[A-Z0-9,.=:+-]*$", ln):
                continue  # other header settings (feeds, checks, machine options) do not change holes
            raise InputError(name, idx, f"unexpected header line {raw_line.strip()[:40]!r}",
                             "header settings (INCH/METRIC, tool definitions T1C...) up to '%'")
        if st.ended:
            raise InputError(name, idx, "content after the end of program (M30)", "nothing after M30")
        if ("F" in ln or "S" in ln) and not ln.startswith("M"):
            # feed rate and spindle speed words (F, S) set how the machine drills, not where: dropped
            bare = _MACHINE_WORD_RE.sub("", ln) if not ln.startswith("T") else re.sub(r"(?<=\d)[FS][\d.]+", "", ln)
            if bare != ln:
                log.accept(idx, "feed or speed code", f"{raw_line.strip()[:30]!r} sets a feed or speed",
                           "ignored: it does not move a hole", "coordinates and tool selections only")
                ln = bare
                if not ln:
                    continue
        m = _TOOL_SEL_RE.match(ln)
        if m:
            st.tool = int(m.group(1))
            if st.tool != 0 and st.tool not in tools:
                sized_elsewhere(st.tool, idx)
            continue
        if ln in ("M30", "M00"):
            st.ended = True
            continue
        if ln in ("G90",):
            st.absolute = True
            continue
        if ln in ("G91",):
            st.absolute = False
            continue
        if ln in ("G05", "G81"):
            st.route_mode = False
            st.tool_down = False
            continue
        if ln == "M15":
            if not st.route_mode:
                raise InputError(name, idx, "tool down (M15) outside rout mode", "G00X..Y.. before M15")
            st.tool_down = True
            continue
        if ln in ("M16", "M17"):
            st.tool_down = False
            st.raised = True
            continue
        if ln.startswith(("M47", "M97", "M98", "G04", "M45", "M01", "M02", "M06", "M09", "M25", "M08", "M01", "M50", "M51", "M52")) and not ln.startswith(("M02X", "M02Y")):
            if ln.startswith(("M25", "M01", "M02", "M08")):
                raise InputError(name, idx, "pattern repeat blocks (M25/M01/M02/M08) are not supported",
                                 "plain coordinates")
            continue  # operator messages and canned text do not make holes
        # G85 slot: X..Y..G85X..Y..
        if "G85" in ln:
            a, _, b = ln.partition("G85")
            ma, mb = _COORD_RE.match(a), _COORD_RE.match(b)
            if not (ma and mb) or not any(ma.groups()) or not any(mb.groups()):
                raise InputError(name, idx, f"bad slot {raw_line.strip()[:40]!r}", "X..Y..G85X..Y..")
            start = move(ma.group(1), ma.group(2), idx)
            st.x, st.y = start
            end = move(mb.group(1), mb.group(2), idx)
            add(start[0], start[1], idx, end)
            st.x, st.y = end
            continue
        # routing
        m = re.match(rf"^G0([0-3])(?:X({_NUM}))?(?:Y({_NUM}))?(?:(?:A({_NUM}))|(?:I({_NUM}))?(?:J({_NUM}))?)?$", ln)
        if m:
            g = int(m.group(1))
            target = move(m.group(2), m.group(3), idx)
            if g == 0:
                st.route_mode = True
                st.tool_down = False
                st.raised = False
                st.x, st.y = target
                continue
            if not st.route_mode:
                raise InputError(name, idx, f"G0{g} rout outside rout mode", "G00X..Y.. then M15 before routing")
            # M15 lowers the tool; writers that omit it (tracespace's route fixtures) rout anyway
            # unless M16/M17 raised the tool after the last G00
            if st.tool_down or not st.raised:
                start = (st.x, st.y)
                if g == 1:
                    add(start[0], start[1], idx, target)
                else:
                    for a, b in _arc_pieces(start, target, g == 2, m.group(4), m.group(5), m.group(6), number, idx, name):
                        add(a[0], a[1], idx, b)
            st.x, st.y = target
            continue
        m = re.match(rf"^R(\d+)(?:X({_NUM}))?(?:Y({_NUM}))?$", ln)
        if m:
            if len(m.group(1)) > 9:
                raise LimitError(name, idx, f"repeat count of {len(m.group(1))} digits", "fewer holes (limits.max_holes)")
            count = int(m.group(1))
            dx = number(m.group(2), idx, "X") if m.group(2) else 0.0
            dy = number(m.group(3), idx, "Y") if m.group(3) else 0.0
            if len(holes) + count > limits.max_holes:
                raise LimitError(name, idx, f"repeat of {count} holes after {len(holes)}",
                                 f"at most {limits.max_holes} holes in all (limits.max_holes)")
            for _ in range(count):
                st.x += dx
                st.y += dy
                add(st.x, st.y, idx)
            continue
        m = _COORD_RE.match(ln)
        if m and (m.group(1) is not None or m.group(2) is not None):
            st.x, st.y = move(m.group(1), m.group(2), idx)
            if st.route_mode:
                continue  # a bare coordinate in rout mode moves (tool up) or routs linearly (tool down)
            add(st.x, st.y, idx)
            continue
        m = re.match(r"^T(\d{1,6})([XY].*)$", ln)
        if m and _COORD_RE.match(m.group(2)):
            # a tool selection and a hole on one line ("T2X1.0Y2.0"): select, then drill
            log.accept(idx, "tool selection and hole on one line", f"{raw_line.strip()[:30]!r}",
                       "the tool is selected, then the hole drilled", "T<n> on a line of its own")
            st.tool = int(m.group(1))
            if st.tool != 0 and st.tool not in tools:
                sized_elsewhere(st.tool, idx)
            mc = _COORD_RE.match(m.group(2))
            assert mc is not None
            st.x, st.y = move(mc.group(1), mc.group(2), idx)
            add(st.x, st.y, idx)
            continue
        raise InputError(name, idx, f"unexpected {raw_line.strip()[:40]!r}",
                         "an Excellon command: tool selection T<n>, coordinates X..Y.., G85 slot, "
                         "G00/G01/G02/G03 rout, M15/M16, M30")
    if not header_seen and not tools:
        raise InputError(name, 1, "no Excellon header and no tool definitions", "M48, units, T<n>C<diameter>, '%'")
    if not st.ended:
        raise InputError(name, len(lines), "the drill file ends without M30 (end of program): it may be truncated",
                         "M30 as the last command")
    out.units = "inch" if _first_units_inch(lines) else "mm"
    out.holes = holes
    out.tools_mm = {n: t.diameter for n, t in tools.items()}
    out.warnings = condense(log.warnings, constructs=log.constructs)
    out.constructs = sorted(log.constructs)
    return out


def _first_units_inch(lines: list[str]) -> bool:
    for raw in lines:
        ln = raw.strip().upper()
        if ln.startswith(("INCH", "M72")):
            return True
        if ln.startswith(("METRIC", "M71")):
            return False
    return True


@dataclass(frozen=True, slots=True)
class DrillFormat:
    """Units and number format of drill files, from a parameter file written beside them."""

    inch: bool
    int_digits: int
    dec_digits: int
    zeros: str  # "LZ": leading zeros written, "TZ": trailing zeros written
    source: str


def read_drill_parameters(data: bytes, source: str) -> DrillFormat | None:
    """The number format of an ``nc_param.txt`` style file (one ``KEY value`` per line), e.g.
    ``FORMAT 2.5``, ``OUTPUT-UNITS ENGLISH|METRIC``, ``SUPPRESS-LEAD-ZEROES YES|NO`` (the keys as
    Allegro-family exports write them, from memory). None without a FORMAT line."""
    values: dict[str, str] = {}
    for raw in data.decode("latin-1").replace("\r", "\n").split("\n")[:500]:
        parts = raw.split()
        if len(parts) >= 2:
            values[parts[0].upper()] = parts[1].upper()
    m = re.fullmatch(r"(\d)\.(\d)", values.get("FORMAT", ""))
    if m is None:
        return None
    inch = values.get("OUTPUT-UNITS", "ENGLISH") != "METRIC"
    # leading zeros suppressed: trailing ones are written (Excellon "TZ"), and the reverse
    zeros = "LZ" if values.get("SUPPRESS-LEAD-ZEROES", "YES") == "NO" else "TZ"
    return DrillFormat(inch, int(m.group(1)), int(m.group(2)), zeros, source)


def read_tool_table(data: bytes) -> dict[int, float]:
    """Tool sizes (mm) from a companion tool file: lines ``T1 0.800mm``, ``T01 0.0350in``, ``T2 35mil``,
    ``T3C0.8`` (a unit of its own, else mm when the size is over 0.2, else inch: a drill of under
    0.2 mm or over 0.2 inch is rare, common practice). Empty when no line reads as a tool size."""
    table: dict[int, float] = {}
    for raw in data.decode("latin-1").replace("\r", "\n").split("\n")[:2000]:
        m = _TOOL_TABLE_RE.match(raw.strip().lstrip(";").strip())
        if m is None or m.group(2).count(".") > 1:
            continue
        size, unit = float(m.group(2)), m.group(3).upper()
        if unit.startswith("MIL"):
            size *= 0.0254
        elif unit in ("IN", "INCH", '"') or (not unit and size < 0.2):
            size *= MM_PER_INCH
        if 0 < size < 254:
            table[int(m.group(1))] = size
    return table


def _arc_pieces(start, end, clockwise, a_raw, i_raw, j_raw, number, line, name):  # type: ignore[no-untyped-def]
    """Flatten a routed arc into straight pieces within ARC_TOLERANCE_MM of the true arc."""
    (x0, y0), (x1, y1) = start, end
    if a_raw is not None:
        r = abs(number(a_raw, line, "A"))
        dx, dy = x1 - x0, y1 - y0
        d = math.hypot(dx, dy)
        if d == 0 or d > 2 * r + 1e-9:
            raise InputError(name, line, "arc radius too small for its end points", "A >= half the chord")
        h = math.sqrt(max(r * r - (d / 2) ** 2, 0.0))
        mx, my = (x0 + x1) / 2, (y0 + y1) / 2
        # the centre on the side that makes the shorter arc in the given direction
        ux, uy = -dy / d, dx / d
        sign = -1.0 if clockwise else 1.0
        cx, cy = mx + sign * ux * h, my + sign * uy * h
    else:
        ci = number(i_raw, line, "I") if i_raw is not None else 0.0
        cj = number(j_raw, line, "J") if j_raw is not None else 0.0
        cx, cy = x0 + ci, y0 + cj
        r = math.hypot(ci, cj)
        if r == 0:
            raise InputError(name, line, "arc with zero radius", "an arc centre offset I/J or radius A")
    a0 = math.atan2(y0 - cy, x0 - cx)
    a1 = math.atan2(y1 - cy, x1 - cx)
    sweep = a1 - a0
    if clockwise and sweep >= 0:
        sweep -= 2 * math.pi
    elif not clockwise and sweep <= 0:
        sweep += 2 * math.pi
    step = 2 * math.acos(max(-1.0, 1 - ARC_TOLERANCE_MM / r)) if r > ARC_TOLERANCE_MM else math.pi / 2
    n = max(1, math.ceil(abs(sweep) / step))
    pts = [(cx + r * math.cos(a0 + sweep * k / n), cy + r * math.sin(a0 + sweep * k / n)) for k in range(n + 1)]
    pts[0], pts[-1] = (x0, y0), (x1, y1)
    return list(zip(pts[:-1], pts[1:]))
