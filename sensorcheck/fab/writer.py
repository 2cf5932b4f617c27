"""Small, exact writers of fabrication outputs: Gerber X2, Excellon, IPC-D-356A, Gerber job file.

Used to generate the demo boards (``boards/make_demo.py``) and the large boards of the scaling
benchmark (``bench/make_large_board.py``).  Every writer is deterministic: the same calls give
byte-identical output (no clock, no random ids; a project GUID is derived from its name).

Formats, as the specifications fix them:

* Gerber X2 (RS-274X with ``%TF``/``%TA``/``%TO`` attributes), millimetres, coordinate format
  4.6 (``%FSLAX46Y46*%``): coordinates are integers in units of 1e-6 mm, so every value written
  is the input rounded to 1 nm.  Arcs use multi-quadrant mode (``G75``); a full circle is an arc
  whose start and end coincide.  Object attributes (``.N``, ``.C``, ``.P``) are set before each
  object that needs them and deleted by name (never with a bare ``%TD*%``, which would also
  empty the aperture attribute dictionary).  Regions take ``.AperFunction`` from the aperture
  attribute dictionary at the moment they are opened (Gerber specification, section on
  attributes on regions), so the writer sets it right before ``G36``.
* Excellon: ``METRIC`` with decimal-point coordinates (so zero suppression does not matter), one
  tool per diameter and hole function, file and tool attributes as ``; #@! TF...`` /
  ``; #@! TA...`` comments (the X2 attribute syntax inside drill-file comments).
* IPC-D-356A: 80-column fixed records.  317 (through-hole) and 327 (surface) test records:
  cols 1-3 code, 4-17 net name, 21-26 reference designator (``VIA`` for vias), 27 ``-``,
  28-31 pin, 32 mid-point flag, 33-38 ``D`` + hole diameter (4 digits) + ``P``/``U``,
  39-41 ``A`` + access (00 both sides, 01 top, 02 bottom of a 2-layer board), 42-49 ``X`` + sign +
  6 digits, 50-57 ``Y`` + sign + 6 digits, 58-62 ``X`` + 4 digit feature width, 63-67 ``Y`` +
  4 digit height, 68-71 ``R`` + 3 digit rotation, 73-74 ``S`` + soldermask code.  Units
  ``CUST 1``: millimetres with 0.001 mm resolution.  Net names longer than 14 characters are
  given an alias by a ``P  NNAMEn`` parameter record.
* Gerber job file: JSON with ``Header``, ``GeneralSpecs``, ``DesignRules``, ``FilesAttributes``
  and ``MaterialStackup`` (layer order top to bottom, thickness, material, dielectric constant).
"""

from __future__ import annotations

import json
import math
import re
import uuid
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from typing import Literal

from shapely.geometry import Polygon

Point = tuple[float, float]
Polarity = Literal["dark", "clear"]

#: Gerber coordinate format 4.6: integer units per millimetre
_GERBER_UNITS_PER_MM = 1_000_000


# ---------------------------------------------------------------------------------------------
# Gerber X2
# ---------------------------------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class LineTo:
    """A straight contour segment to ``end`` (mm)."""

    end: Point


@dataclass(frozen=True, slots=True)
class ArcTo:
    """A circular contour segment to ``end`` around ``centre`` (mm), multi-quadrant."""

    end: Point
    centre: Point
    clockwise: bool


Segment = LineTo | ArcTo


def _num(value_mm: float) -> str:
    """A coordinate in format 4.6 (integer nanometres), leading zeros omitted."""
    n = round(value_mm * _GERBER_UNITS_PER_MM)
    if abs(n) >= 10**10:
        raise ValueError(f"coordinate {value_mm} mm does not fit format 4.6")
    return str(n)


def _size(value_mm: float) -> str:
    """An aperture size in mm with six decimals (decimal point, as %AD% requires)."""
    if value_mm <= 0 or not math.isfinite(value_mm):
        raise ValueError(f"aperture size must be positive and finite, got {value_mm}")
    return f"{value_mm:.6f}"


def _attr_value(text: str) -> str:
    """Attribute field text: the characters %, *, and , are not allowed inside a field."""
    for bad in "%*,":
        if bad in text:
            raise ValueError(f"attribute field {text!r} contains {bad!r}")
    return text


@dataclass(slots=True)
class GerberWriter:
    """Collects objects of one Gerber X2 layer and serialises them (``to_bytes``).

    ``file_function`` is the value of ``%TF.FileFunction`` (e.g. ``"Copper,L1,Top"``).
    Apertures are created on demand and shared (same shape, size and function -> same D code).
    """

    file_function: str
    file_polarity: Literal["Positive", "Negative"] = "Positive"
    generation_software: tuple[str, str, str] = ("sensorcheck", "writer", "0.1")
    project_id: tuple[str, str, str] | None = None  # name, GUID, revision
    comment: str | None = None
    _apertures: dict[tuple[str, str, str], int] = field(default_factory=dict)
    _body: list[str] = field(default_factory=list)
    _object_attrs: dict[str, str] = field(default_factory=dict)
    _region_function: str | None = None
    _polarity: Polarity = "dark"
    _interp: str | None = None
    _current_aperture: int | None = None
    object_count: int = 0

    # -- apertures ---------------------------------------------------------------------------

    def circle(self, diameter_mm: float, function: str) -> int:
        """D code of a circular aperture of ``diameter_mm`` with ``.AperFunction`` ``function``."""
        return self._aperture("C", _size(diameter_mm), function)

    def rect(self, width_mm: float, height_mm: float, function: str) -> int:
        """D code of a rectangular aperture (``width_mm`` along x, ``height_mm`` along y)."""
        return self._aperture("R", f"{_size(width_mm)}X{_size(height_mm)}", function)

    def _aperture(self, shape: str, params: str, function: str) -> int:
        key = (shape, params, function)
        if key not in self._apertures:
            self._apertures[key] = 10 + len(self._apertures)
        return self._apertures[key]

    # -- state -----------------------------------------------------------------------------

    def _set_attrs(self, net: str | None, component: str | None, pin: tuple[str, str] | None) -> None:
        want: dict[str, str] = {}
        if net is not None:
            if not net:
                raise ValueError("net name must not be empty (use 'N/C' for a pad on no net)")
            want[".N"] = _attr_value(net)
        if component is not None:
            want[".C"] = _attr_value(component)
        if pin is not None:
            want[".P"] = f"{_attr_value(pin[0])},{_attr_value(pin[1])}"
        for name in sorted(self._object_attrs):
            if name not in want:
                self._body.append(f"%TD{name}*%")
                del self._object_attrs[name]
        for name in (".N", ".C", ".P"):
            if name in want and self._object_attrs.get(name) != want[name]:
                self._body.append(f"%TO{name},{want[name]}*%")
                self._object_attrs[name] = want[name]

    def _set_polarity(self, polarity: Polarity) -> None:
        if polarity != self._polarity:
            self._body.append("%LPD*%" if polarity == "dark" else "%LPC*%")
            self._polarity = polarity

    def _select(self, aperture: int) -> None:
        if aperture != self._current_aperture:
            self._body.append(f"D{aperture}*")
            self._current_aperture = aperture

    def _set_interp(self, code: str) -> None:
        if code != self._interp:
            self._body.append(f"{code}*")
            self._interp = code

    # -- objects ---------------------------------------------------------------------------

    def flash(
        self,
        at: Point,
        aperture: int,
        *,
        net: str | None = None,
        component: str | None = None,
        pin: tuple[str, str] | None = None,
        polarity: Polarity = "dark",
    ) -> None:
        """Flash ``aperture`` at ``at`` (mm).  ``pin`` is (reference designator, pin number)."""
        self._set_attrs(net, component if component is not None else (pin[0] if pin else None), pin)
        self._set_polarity(polarity)
        self._select(aperture)
        self._body.append(f"X{_num(at[0])}Y{_num(at[1])}D03*")
        self.object_count += 1

    def flashes(self, points: Sequence[Point], aperture: int, *, net: str | None = None,
                polarity: Polarity = "dark") -> None:
        """Many flashes of one aperture with the same attributes (a hatch's openings)."""
        if not points:
            return
        self._set_attrs(net, None, None)
        self._set_polarity(polarity)
        self._select(aperture)
        self._body.extend(f"X{_num(x)}Y{_num(y)}D03*" for x, y in points)
        self.object_count += len(points)

    def track(
        self, points: Sequence[Point], aperture: int, *, net: str | None = None, polarity: Polarity = "dark"
    ) -> None:
        """Straight draws through ``points`` (one draw object per segment)."""
        if len(points) < 2:
            raise ValueError("a track needs at least two points")
        self._set_attrs(net, None, None)
        self._set_polarity(polarity)
        self._select(aperture)
        self._set_interp("G01")
        self._body.append(f"X{_num(points[0][0])}Y{_num(points[0][1])}D02*")
        for x, y in points[1:]:
            self._body.append(f"X{_num(x)}Y{_num(y)}D01*")
            self.object_count += 1

    def arc(
        self,
        start: Point,
        end: Point,
        centre: Point,
        clockwise: bool,
        aperture: int,
        *,
        net: str | None = None,
        polarity: Polarity = "dark",
    ) -> None:
        """One circular draw (multi-quadrant); ``start == end`` draws a full circle."""
        self._set_attrs(net, None, None)
        self._set_polarity(polarity)
        self._select(aperture)
        self._set_interp("G02" if clockwise else "G03")
        self._body.append(f"X{_num(start[0])}Y{_num(start[1])}D02*")
        i, j = centre[0] - start[0], centre[1] - start[1]
        self._body.append(f"X{_num(end[0])}Y{_num(end[1])}I{_num(i)}J{_num(j)}D01*")
        self.object_count += 1

    def region(
        self,
        start: Point,
        segments: Sequence[Segment],
        *,
        function: str,
        net: str | None = None,
        polarity: Polarity = "dark",
    ) -> None:
        """One region (G36/G37) with a closed contour of lines and arcs starting at ``start``."""
        if not segments:
            raise ValueError("a region needs at least one segment")
        last = segments[-1].end
        if _num(last[0]) != _num(start[0]) or _num(last[1]) != _num(start[1]):
            raise ValueError(f"region contour is not closed: starts at {start}, ends at {last}")
        self._set_attrs(net, None, None)
        self._set_polarity(polarity)
        if function != self._region_function:
            self._body.append(f"%TA.AperFunction,{function}*%")
            self._region_function = function
        self._body.append("G36*")
        self._body.append(f"X{_num(start[0])}Y{_num(start[1])}D02*")
        for seg in segments:
            if isinstance(seg, LineTo):
                self._set_interp("G01")
                self._body.append(f"X{_num(seg.end[0])}Y{_num(seg.end[1])}D01*")
            else:
                # the current point is the previous segment's end
                self._set_interp("G02" if seg.clockwise else "G03")
                prev = self._last_point(start, segments, seg)
                i, j = seg.centre[0] - prev[0], seg.centre[1] - prev[1]
                self._body.append(f"X{_num(seg.end[0])}Y{_num(seg.end[1])}I{_num(i)}J{_num(j)}D01*")
        self._body.append("G37*")
        self.object_count += 1

    @staticmethod
    def _last_point(start: Point, segments: Sequence[Segment], seg: Segment) -> Point:
        idx = next(k for k, s in enumerate(segments) if s is seg)
        return start if idx == 0 else segments[idx - 1].end

    def polygon(self, points: Sequence[Point], *, function: str, net: str | None = None,
                polarity: Polarity = "dark") -> None:
        """A region whose contour is the straight polygon through ``points`` (closed automatically)."""
        pts = list(points)
        if pts[0] == pts[-1]:
            pts = pts[:-1]
        self.region(pts[0], [LineTo(p) for p in pts[1:]] + [LineTo(pts[0])], function=function, net=net,
                    polarity=polarity)

    def disc(self, centre: Point, radius_mm: float, *, function: str, net: str | None = None,
             polarity: Polarity = "dark") -> None:
        """A filled circle as a region of two half-circle arcs (exact, no aperture involved)."""
        cx, cy = centre
        a, b = (cx + radius_mm, cy), (cx - radius_mm, cy)
        self.region(a, [ArcTo(b, centre, False), ArcTo(a, centre, False)], function=function, net=net,
                    polarity=polarity)

    def annulus(self, centre: Point, inner_mm: float, outer_mm: float, *, function: str, net: str | None = None,
                polarity: Polarity = "dark") -> None:
        """A ring as two half-ring regions (upper, then lower) with exact arcs; they share two
        radial edges, so their union is the full annulus (a region cannot hold a hole itself)."""
        if not 0 < inner_mm < outer_mm:
            raise ValueError(f"annulus needs 0 < inner < outer, got {inner_mm}, {outer_mm}")
        cx, cy = centre
        for sign in (1.0, -1.0):
            start = (cx + sign * outer_mm, cy)
            self.region(start, [
                ArcTo((cx - sign * outer_mm, cy), centre, False),
                LineTo((cx - sign * inner_mm, cy)),
                ArcTo((cx + sign * inner_mm, cy), centre, True),
                LineTo(start),
            ], function=function, net=net, polarity=polarity)

    def shapely_polygon(self, poly: Polygon, *, function: str, net: str | None = None) -> None:
        """A polygon with holes: the exterior dark, then each hole clear.

        Clear polarity erases everything already drawn below it, so call this only where the
        polygon is the first thing drawn in its area (a pour written before the other objects).
        """
        self.polygon(list(poly.exterior.coords), function=function, net=net, polarity="dark")
        for ring in poly.interiors:
            self.polygon(list(ring.coords), function=function, net=net, polarity="clear")

    # -- output ----------------------------------------------------------------------------

    def to_bytes(self) -> bytes:
        """The whole file: header (file attributes, format, apertures), the objects, ``M02``."""
        return ("\n".join(self._header() + self._body + ["M02*"]) + "\n").encode("ascii")

    def panel_bytes(self, offsets_mm: Sequence[Point]) -> bytes:
        """The objects written once per offset (explicit copies: the file grows with the copies).

        Each copy starts from a known state (``%TD*%`` empties the attribute dictionary,
        ``%LPD*%``, and the copy re-selects its aperture and attributes), so copies are
        independent; clear objects of a copy only erase what that copy drew when the copies do
        not overlap.
        """
        parsed = [_XY.match(line) for line in self._body]
        template = [(int(m.group(1)), int(m.group(2)), m.group(3)) if m else line for m, line in zip(parsed, self._body)]
        out = self._header()
        for dx_mm, dy_mm in offsets_mm:
            dx, dy = round(dx_mm * _GERBER_UNITS_PER_MM), round(dy_mm * _GERBER_UNITS_PER_MM)
            out.append("%TD*%")
            out.append("%LPD*%")
            out.extend(f"X{t[0] + dx}Y{t[1] + dy}{t[2]}" if isinstance(t, tuple) else t for t in template)
        out.append("M02*")
        return ("\n".join(out) + "\n").encode("ascii")

    def step_repeat_bytes(self, nx: int, ny: int, dx_mm: float, dy_mm: float) -> bytes:
        """The objects inside one step-and-repeat block (``%SRX..Y..I..J..*%`` ... ``%SR*%``)."""
        if nx < 1 or ny < 1:
            raise ValueError("step-and-repeat needs at least one copy along each axis")
        out = self._header()
        out.append(f"%SRX{nx}Y{ny}I{dx_mm:.6f}J{dy_mm:.6f}*%")
        out.extend(self._body)
        out.append("%SR*%")
        out.append("M02*")
        return ("\n".join(out) + "\n").encode("ascii")

    def _header(self) -> list[str]:
        vendor, app, version = self.generation_software
        out: list[str] = []
        if self.comment:
            for line in self.comment.splitlines():
                out.append(f"G04 {line}*")
        out.append(f"%TF.GenerationSoftware,{_attr_value(vendor)},{_attr_value(app)},{_attr_value(version)}*%")
        if self.project_id is not None:
            name, guid, rev = self.project_id
            out.append(f"%TF.ProjectId,{_attr_value(name)},{_attr_value(guid)},{_attr_value(rev)}*%")
        out.append("%TF.SameCoordinates,Original*%")
        out.append(f"%TF.FileFunction,{self.file_function}*%")
        out.append(f"%TF.FilePolarity,{self.file_polarity}*%")
        out.append("%FSLAX46Y46*%")
        out.append("%MOMM*%")
        out.append("%LPD*%")
        out.append("G75*")
        current: str | None = None
        for (shape, params, function), code in sorted(self._apertures.items(), key=lambda kv: kv[1]):
            if function != current:
                out.append(f"%TA.AperFunction,{function}*%")
                current = function
            out.append(f"%ADD{code}{shape},{params}*%")
        if self._apertures:
            out.append("%TD.AperFunction*%")
        return out


#: a body line with absolute X and Y (I/J, when present, are relative and stay as they are)
_XY = re.compile(r"^X(-?\d+)Y(-?\d+)(.*)$")


# ---------------------------------------------------------------------------------------------
# Excellon
# ---------------------------------------------------------------------------------------------

DrillFunction = Literal["ViaDrill", "ComponentDrill", "MechanicalDrill"]


@dataclass(frozen=True, slots=True)
class DrillHole:
    x_mm: float
    y_mm: float
    diameter_mm: float
    function: DrillFunction


def excellon_bytes(
    holes: Iterable[DrillHole],
    *,
    plated: bool,
    layers: tuple[int, int] = (1, 2),
    generation_software: tuple[str, str, str] = ("sensorcheck", "writer", "0.1"),
    project_id: tuple[str, str, str] | None = None,
) -> bytes:
    """An Excellon drill file (METRIC, decimal coordinates) with X2 attributes in comments."""
    holes = list(holes)
    kind = "Plated" if plated else "NonPlated"
    short = "PTH" if plated else "NPTH"
    vendor, app, version = generation_software
    out = ["M48"]
    out.append(f"; #@! TF.GenerationSoftware,{vendor},{app},{version}")
    if project_id is not None:
        out.append(f"; #@! TF.ProjectId,{project_id[0]},{project_id[1]},{project_id[2]}")
    out.append(f"; #@! TF.FileFunction,{kind},{layers[0]},{layers[1]},{short}")
    out.append("; #@! TF.FilePolarity,Positive")
    out.append("; units: millimetres, absolute, decimal-point coordinates")
    out.append("FMAT,2")
    out.append("METRIC")
    tools: dict[tuple[float, str], int] = {}
    for h in sorted(holes, key=lambda h: (h.diameter_mm, h.function)):
        key = (round(h.diameter_mm, 3), h.function)
        if key not in tools:
            tools[key] = len(tools) + 1
    for (dia, function), number in tools.items():
        out.append(f"; #@! TA.AperFunction,{kind},{short},{function}")
        out.append(f"T{number}C{dia:.3f}")
    out.append("%")
    out.append("G90")
    out.append("G05")
    for (dia, function), number in tools.items():
        out.append(f"T{number}")
        for h in holes:
            if (round(h.diameter_mm, 3), h.function) == (dia, function):
                out.append(f"X{h.x_mm:.3f}Y{h.y_mm:.3f}")
    out.append("T0")
    out.append("M30")
    return ("\n".join(out) + "\n").encode("ascii")


# ---------------------------------------------------------------------------------------------
# IPC-D-356A
# ---------------------------------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class NetRecord:
    """One 317 (through-hole) or 327 (surface) test record, dimensions in mm."""

    net: str  # "N/C" for an unconnected pad
    refdes: str  # "VIA" for a via
    pin: str
    x_mm: float
    y_mm: float
    width_mm: float
    height_mm: float
    hole_mm: float | None = None  # None: surface pad (327)
    plated: bool = True
    access: int = 0  # 0 both sides, 1 top, 2 bottom (2-layer board)
    rotation_deg: int = 0
    soldermask: int = 0  # 0 none, 1 primary side, 2 secondary side, 3 both


def _ipc_len(value_mm: float, digits: int, signed: bool) -> str:
    n = round(value_mm * 1000)  # CUST 1: 0.001 mm
    if abs(n) >= 10**digits:
        raise ValueError(f"{value_mm} mm does not fit {digits} IPC-D-356 digits")
    if signed:
        return f"{'-' if n < 0 else '+'}{abs(n):0{digits}d}"
    if n < 0:
        raise ValueError(f"{value_mm} mm must not be negative here")
    return f"{n:0{digits}d}"


def ipc356_record(rec: NetRecord, net_field: str) -> str:
    """One 80-column record line (``net_field`` is the name or its NNAME alias, <= 14 chars)."""
    code = "317" if rec.hole_mm is not None else "327"
    if len(net_field) > 14 or len(rec.refdes) > 6 or len(rec.pin) > 4:
        raise ValueError(f"field too long in {rec}")
    hole = f"D{_ipc_len(rec.hole_mm, 4, False)}{'P' if rec.plated else 'U'}" if rec.hole_mm is not None else " " * 6
    dash = "-" if rec.refdes != "VIA" and rec.pin else " "
    line = (
        f"{code}{net_field:<14}   {rec.refdes:<6}{dash}{rec.pin:<4} {hole}A{rec.access:02d}"
        f"X{_ipc_len(rec.x_mm, 6, True)}Y{_ipc_len(rec.y_mm, 6, True)}"
        f"X{_ipc_len(rec.width_mm, 4, False)}Y{_ipc_len(rec.height_mm, 4, False)}"
        f"R{rec.rotation_deg % 360:03d} S{rec.soldermask}"
    )
    assert len(line) == 74, (len(line), line)
    return f"{line:<80}"


def ipc356_bytes(records: Iterable[NetRecord], *, job: str, title: str) -> bytes:
    """An IPC-D-356A netlist in millimetres (``CUST 1``) ending with the 999 record."""
    records = list(records)
    out = [f"C  {title}"[:80], f"P  JOB   {job}"[:80], "P  CODE  00", "P  UNITS CUST 1", "P  DIM   N",
           "P  VER   IPC-D-356A", "P  IMAGE PRIMARY"]
    alias: dict[str, str] = {}
    for rec in records:
        if len(rec.net) > 14 and rec.net not in alias:
            alias[rec.net] = f"NNAME{len(alias) + 1}"
            out.append(f"P  {alias[rec.net]:<14}{rec.net}")
    for rec in records:
        out.append(ipc356_record(rec, alias.get(rec.net, rec.net)))
    out.append("999")
    return ("\n".join(out) + "\n").encode("ascii")


# ---------------------------------------------------------------------------------------------
# Gerber job file
# ---------------------------------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class StackLayer:
    """One MaterialStackup entry, top to bottom (thickness in mm; Legend may have none)."""

    type: Literal["Legend", "SolderMask", "Copper", "Dielectric"]
    name: str
    thickness_mm: float | None = None
    material: str | None = None
    dielectric_constant: float | None = None
    color: str | None = None


def project_guid(name: str) -> str:
    """A stable GUID for a project name (UUID version 5 in the URL namespace)."""
    return str(uuid.uuid5(uuid.NAMESPACE_URL, f"sensorcheck-demo:{name}"))


def jobfile_bytes(
    *,
    project: tuple[str, str, str],
    creation_date: str,
    size_mm: tuple[float, float],
    board_thickness_mm: float,
    files: Sequence[tuple[str, str, str]],
    stackup: Sequence[StackLayer],
    min_clearance_mm: float,
    min_width_mm: float,
    generation_software: tuple[str, str, str] = ("sensorcheck", "writer", "0.1"),
) -> bytes:
    """A Gerber job file.  ``files``: (path, FileFunction, FilePolarity); ``creation_date`` is
    passed in (a fixed release date of the design, never the clock)."""
    copper = sum(1 for s in stackup if s.type == "Copper")
    job = {
        "Header": {
            "GenerationSoftware": {
                "Vendor": generation_software[0],
                "Application": generation_software[1],
                "Version": generation_software[2],
            },
            "CreationDate": creation_date,
        },
        "GeneralSpecs": {
            "ProjectId": {"Name": project[0], "GUID": project[1], "Revision": project[2]},
            "Size": {"X": size_mm[0], "Y": size_mm[1]},
            "LayerNumber": copper,
            "BoardThickness": board_thickness_mm,
        },
        "DesignRules": [
            {
                "Layers": "Outer",
                "PadToPad": min_clearance_mm,
                "PadToTrack": min_clearance_mm,
                "TrackToTrack": min_clearance_mm,
                "MinLineWidth": min_width_mm,
            }
        ],
        "FilesAttributes": [
            {"Path": path, "FileFunction": function, "FilePolarity": polarity} for path, function, polarity in files
        ],
        "MaterialStackup": [
            {
                k: v
                for k, v in (
                    ("Type", s.type),
                    ("Thickness", s.thickness_mm),
                    ("Material", s.material),
                    ("DielectricConstant", s.dielectric_constant),
                    ("Color", s.color),
                    ("Name", s.name),
                )
                if v is not None
            }
            for s in stackup
        ],
    }
    return (json.dumps(job, indent=2) + "\n").encode("ascii")
