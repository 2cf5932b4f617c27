"""Findings as a Gerber X2 layer, to overlay on the board in any Gerber viewer.

Each placed finding becomes, in the board's own coordinates (mm, the origin of the fabrication
files):

- a marker: a cross through the point and a circle around it (radius by severity: error 1.5 mm,
  warning 1.1 mm, note 0.8 mm; a waived finding gets the cross only);
- a label to its upper right, drawn with strokes of a 16-segment vector font of our own
  (``E3 GAP.TX-RX-VS-OVERLAY``: severity letter, number in the report, rule id);
- object attributes (``%TO...*%``, user attributes, Gerber spec section 5.6) carrying the rule id,
  fingerprint, severity, board, sensor and nets, so a viewer that lists attributes shows them.

The file says what it is with ``%TF.FileFunction,Other,Findings*%`` and
``%TF.GenerationSoftware,...*%``. Text from the board in attribute values is written with the
spec's ``\\uXXXX`` escapes for anything outside a plain character set (``%``, ``*`` and ``,``
would end the command or the field); comments keep only plain printable ASCII. Findings
without a place are listed in a comment. For a batch of several boards all markers go into one
file, each object carrying its board: split the batch when the boards' origins differ.
"""

from __future__ import annotations

import re
from collections.abc import Sequence

from sensorcheck.report.common import board_labels, finding_sensors, ordered, place_of
from sensorcheck.findings import Finding, Result

MARKER_RADIUS_MM: dict[str, float] = {"error": 1.5, "warning": 1.1, "note": 0.8}
MARKER_PEN_MM = 0.15
TEXT_PEN_MM = 0.1
TEXT_HEIGHT_MM = 0.8
_SEV_LETTER = {"error": "E", "warning": "W", "note": "N"}

# 16-segment font on a cell 1 wide and 2 high (scaled by TEXT_HEIGHT_MM / 2). Points:
#   TL TM TR     (0,2) (.5,2) (1,2)
#   ML MM MR     (0,1) (.5,1) (1,1)
#   BL BM BR     (0,0) (.5,0) (1,0)
_P = {
    "TL": (0.0, 2.0), "TM": (0.5, 2.0), "TR": (1.0, 2.0),
    "ML": (0.0, 1.0), "MM": (0.5, 1.0), "MR": (1.0, 1.0),
    "BL": (0.0, 0.0), "BM": (0.5, 0.0), "BR": (1.0, 0.0),
}  # fmt: skip
_SEG: dict[str, tuple[str, str]] = {
    "a": ("TL", "TM"), "A": ("TM", "TR"),  # top halves
    "b": ("TR", "MR"), "c": ("MR", "BR"),  # right
    "d": ("BL", "BM"), "D": ("BM", "BR"),  # bottom halves
    "e": ("BL", "ML"), "f": ("ML", "TL"),  # left
    "g": ("ML", "MM"), "G": ("MM", "MR"),  # middle halves
    "h": ("TL", "MM"), "i": ("TM", "MM"), "j": ("TR", "MM"),  # upper diagonals and stem
    "k": ("MM", "BR"), "l": ("MM", "BM"), "m": ("MM", "BL"),  # lower diagonals and stem
}  # fmt: skip
_GLYPHS: dict[str, str] = {
    "0": "aAbcdDefjm", "1": "bcj", "2": "aAbgGedD", "3": "aAbcdDG", "4": "fgGbc",
    "5": "aAfgGcdD", "6": "aAfedDcgG", "7": "aAbc", "8": "aAbcdDefgG", "9": "aAbcdDfgG",
    "A": "efaAbcgG", "B": "aAbcdDilG", "C": "aAfedD", "D": "aAbcdDil", "E": "aAfedDg",
    "F": "aAfeg", "G": "aAfedDcG", "H": "febcgG", "I": "aAildD", "J": "bcdDe",
    "K": "fegjk", "L": "fedD", "M": "fehjbc", "N": "fehkcb", "O": "aAbcdDef",
    "P": "aAbfegG", "Q": "aAbcdDefk", "R": "aAbfegGk", "S": "aAfgGcdD", "T": "aAil",
    "U": "fedDcb", "V": "femj", "W": "femkcb", "X": "hjmk", "Y": "hjl", "Z": "aAjmdD",
    "-": "gG", "_": "dD", "/": "jm", "+": "gGil", "=": "gGdD", "?": "aAbGl", "#": "gGdDil",
}  # fmt: skip
_DOTS: dict[str, list[tuple[float, float]]] = {".": [(0.5, 0.0)], ":": [(0.5, 0.4), (0.5, 1.4)]}
_ADVANCE = 1.4  # cell widths per character


def glyph_strokes(ch: str) -> list[tuple[tuple[float, float], tuple[float, float]]]:
    """Strokes of one character in cell units (a dot is a stroke of length zero)."""
    c = ch.upper()
    if c in _DOTS:
        return [(p, p) for p in _DOTS[c]]
    segs = _GLYPHS.get(c, "" if c == " " else _GLYPHS["?"])
    return [(_P[_SEG[s][0]], _P[_SEG[s][1]]) for s in segs]


def text_strokes(text: str, x_mm: float, y_mm: float, height_mm: float = TEXT_HEIGHT_MM) -> list[tuple[float, float, float, float]]:
    """Strokes (x1, y1, x2, y2) in mm of ``text`` with its lower left corner at (x, y)."""
    scale = height_mm / 2.0
    out: list[tuple[float, float, float, float]] = []
    for i, ch in enumerate(text):
        ox = x_mm + i * _ADVANCE * scale
        for (x1, y1), (x2, y2) in glyph_strokes(ch):
            out.append((ox + x1 * scale, y_mm + y1 * scale, ox + x2 * scale, y_mm + y2 * scale))
    return out


_PLAIN_FIELD = re.compile(r"[A-Za-z0-9 ._\-+/:=#@!?$&~^()\[\]{}<>;']")


def attr_value(text: str) -> str:
    """An attribute field value: plain characters as they are, the rest as ``\\uXXXX`` / ``\\UXXXXXXXX``.

    Gerber spec 2024.05 section 3.4.3 (strings: ``%`` and ``*`` cannot appear, Unicode escapes
    ``\\u`` + 4 hex digits and ``\\U`` + 8); the comma separates fields, the backslash starts an
    escape, so both are escaped too.
    """
    out: list[str] = []
    for ch in text:
        if _PLAIN_FIELD.fullmatch(ch):
            out.append(ch)
        elif ord(ch) <= 0xFFFF:
            out.append(f"\\u{ord(ch):04X}")
        else:
            out.append(f"\\U{ord(ch):08X}")
    return "".join(out)


def _comment(text: str) -> str:
    """A G04 comment body: printable ASCII without ``*`` and ``%``; anything else becomes ``?``."""
    return "".join(ch if " " <= ch <= "~" and ch not in "*%" else "?" for ch in text)


def _coord(v_mm: float) -> str:
    return str(round(v_mm * 1_000_000))  # format 4.6, mm: 1 unit = 1 nm


def _xy(x: float, y: float) -> str:
    return f"X{_coord(x)}Y{_coord(y)}"


def label_of(f: Finding, number: int) -> str:
    return f"{_SEV_LETTER[f.severity]}{number} {f.rule_id}".upper()


def _marker(f: Finding, x: float, y: float) -> list[str]:
    r = MARKER_RADIUS_MM[f.severity]
    out = ["D10*"]
    out.append(f"{_xy(x - r, y)}D02*")
    out.append(f"{_xy(x + r, y)}D01*")
    out.append(f"{_xy(x, y - r)}D02*")
    out.append(f"{_xy(x, y + r)}D01*")
    if not f.waived:
        # Full circle: with G75 a counter-clockwise arc whose end point is its start point.
        out.append(f"{_xy(x + r, y)}D02*")
        out.append(f"G03{_xy(x + r, y)}I{_coord(-r)}J0D01*")
        out.append("G01*")
    return out


def _label(text: str, x: float, y: float) -> list[str]:
    out = ["D11*"]
    for x1, y1, x2, y2 in text_strokes(text, x, y):
        out.append(f"{_xy(x1, y1)}D02*")
        out.append(f"{_xy(x2, y2)}D01*")
    return out


def _attributes(f: Finding, board: str) -> list[str]:
    attrs = [
        ("SensorcheckRule", attr_value(f.rule_id)),
        ("SensorcheckFingerprint", attr_value(f.fingerprint)),
        ("SensorcheckSeverity", f.severity),
        ("SensorcheckBoard", attr_value(board)),
        ("SensorcheckStatus", "waived" if f.waived else "open"),
    ]
    sensors = finding_sensors(f)  # a grouped finding may cover several
    if sensors:
        attrs.append(("SensorcheckSensor", ",".join(attr_value(s) for s in sensors)))
    if f.nets:
        # One field per net (fields are comma-separated; a comma inside a name is escaped).
        attrs.append(("SensorcheckNets", ",".join(attr_value(n) for n in f.nets)))
    return [f"%TO{name},{value}*%" for name, value in attrs]


def render(results: Sequence[Result]) -> str:
    """The findings layer as Gerber X2 text (LF line ends, one command per line)."""
    version = results[0].tool_version if results else ""
    lines = [
        "G04 sensorcheck findings layer: a marker and a label per finding, board coordinates in mm*",
        f"%TF.GenerationSoftware,sensorcheck,sensorcheck,{attr_value(version)}*%",
        "%TF.FileFunction,Other,Findings*%",
        "%TF.FilePolarity,Positive*%",
        "%FSLAX46Y46*%",
        "%MOMM*%",
        "G04 D10 draws markers, D11 draws label text*",
        f"%ADD10C,{MARKER_PEN_MM:.3f}*%",
        f"%ADD11C,{TEXT_PEN_MM:.3f}*%",
        "G75*",
        "G01*",
        "%LPD*%",
    ]
    unplaced: list[str] = []
    for result, board in zip(results, board_labels(results), strict=True):
        lines.append(f"G04 board {_comment(board)}*")
        number = 0
        for f in ordered(result.findings):
            if f.kind != "finding":  # a file not read or a rule that raised has no place on the board
                continue
            number += 1
            place = place_of(f.location)
            if place is None:
                unplaced.append(f"{_comment(board)} {_SEV_LETTER[f.severity]}{number} {_comment(f.rule_id)} {_comment(f.fingerprint)}")
                continue
            x, y = place
            text = label_of(f, number)
            lines.append(f"G04 {_comment(text)} fingerprint {_comment(f.fingerprint)}*")
            lines += _attributes(f, board)
            lines += _marker(f, x, y)
            r = MARKER_RADIUS_MM[f.severity]
            lines += _label(text, x + r * 0.75, y + r * 0.75)
            lines.append("%TD*%")
    for u in unplaced:
        lines.append(f"G04 not placed (no location): {u}*")
    lines.append("M02*")
    return "\n".join(lines) + "\n"
