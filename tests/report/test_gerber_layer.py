"""Findings layer read back by independent Gerber readers: gerbonara (objects, arcs, attributes)
and pygerber (parses it as a valid RS-274X/X2 file). Attribute escapes are decoded here from the
Gerber specification (2024.05, section 3.4.3: \\uXXXX and \\UXXXXXXXX)."""

from __future__ import annotations

import math
import re

import pytest

from sensorcheck.report import render
from sensorcheck.report.gerber_layer import MARKER_RADIUS_MM, attr_value, text_strokes
from sensorcheck.findings import Result

from .sample import HOSTILE_NETS, HOSTILE_SENSOR

gerbonara = pytest.importorskip("gerbonara")
from gerbonara.graphic_objects import Arc, Line  # noqa: E402
from gerbonara.rs274x import GerberFile  # noqa: E402


def spec_unescape(s: str) -> str:
    s = re.sub(r"\\U([0-9A-Fa-f]{8})", lambda m: chr(int(m.group(1), 16)), s)
    return re.sub(r"\\u([0-9A-Fa-f]{4})", lambda m: chr(int(m.group(1), 16)), s)


def _read(results: list[Result]) -> GerberFile:
    return GerberFile.from_string(render(results, "gerber"))


def test_markers_at_finding_coordinates(one_board: list[Result]) -> None:
    gf = _read(one_board)
    arcs = [o for o in gf.objects if isinstance(o, Arc)]
    lines = [o for o in gf.objects if isinstance(o, Line)]
    placed = [f for f in one_board[0].findings if f.kind == "finding" and (f.location.x_mm is not None or f.location.box_mm)]
    open_placed = [f for f in placed if not f.waived]
    # One full circle per open placed finding, centred on the finding (gerbonara keeps the centre
    # as an offset from the start point).
    assert len(arcs) == len(open_placed)
    for f in open_placed:
        if f.location.x_mm is not None:
            x, y = f.location.x_mm, f.location.y_mm
        else:
            x0, y0, x1, y1 = f.location.box_mm  # type: ignore[misc]
            x, y = (x0 + x1) / 2, (y0 + y1) / 2
        match = [a for a in arcs if a.attrs["SensorcheckFingerprint"] == (f.fingerprint,)]
        assert len(match) == 1
        a = match[0]
        assert math.isclose(a.x1 + a.cx, x, abs_tol=1e-6) and math.isclose(a.y1 + a.cy, y, abs_tol=1e-6)
        assert (a.x1, a.y1) == (a.x2, a.y2)  # a full circle
        assert math.isclose(math.hypot(a.cx, a.cy), MARKER_RADIUS_MM[f.severity], abs_tol=1e-6)
        assert a.attrs["SensorcheckRule"] == (f.rule_id,)
        assert a.attrs["SensorcheckSeverity"] == (f.severity,)
    # Every placed finding (waived included) has a cross through its point.
    for f in placed:
        cross = [ln for ln in lines if ln.attrs.get("SensorcheckFingerprint") == (f.fingerprint,)]
        mids = {(round((ln.x1 + ln.x2) / 2, 6), round((ln.y1 + ln.y2) / 2, 6)) for ln in cross[:2]}
        if f.location.x_mm is not None:
            assert mids == {(round(f.location.x_mm, 6), round(f.location.y_mm, 6))}  # type: ignore[arg-type]
    waived = next(f for f in placed if f.waived)
    assert any(ln.attrs.get("SensorcheckStatus") == ("waived",) and ln.attrs["SensorcheckFingerprint"] == (waived.fingerprint,) for ln in lines)


def test_file_attributes_and_units(one_board: list[Result]) -> None:
    text = render(one_board, "gerber")
    gf = GerberFile.from_string(text)
    # gerbonara reads the X2 file attributes.
    assert gf.file_attrs[".FileFunction"] == ("Other", "Findings")
    assert gf.file_attrs[".GenerationSoftware"][1] == "sensorcheck"
    assert "%MOMM*%" in text and text.endswith("M02*\n")
    # Findings without a place are listed, not drawn.
    assert "G04 not placed (no location): panel-a" in text


def test_label_strokes_next_to_marker(one_board: list[Result]) -> None:
    gf = _read(one_board)
    f = next(f for f in one_board[0].findings if f.rule_id == "routing.aggressor-near-trace" and f.location.line == 120)
    label = [o for o in gf.objects if isinstance(o, Line) and o.attrs.get("SensorcheckFingerprint") == (f.fingerprint,)][2:]
    assert label, "label strokes"
    xs = [min(o.x1, o.x2) for o in label]
    ys = [min(o.y1, o.y2) for o in label]
    assert min(xs) > f.location.x_mm and min(ys) > f.location.y_mm  # type: ignore[operator]
    # Same count as the font gives for the text (the label is "E<n> <RULE ID>").
    expected = [s for s in text_strokes("E2 ROUTING.AGGRESSOR-NEAR-TRACE", 0, 0)]
    assert len(label) == len(expected)


def test_hostile_names_in_attributes(one_board: list[Result]) -> None:
    gf = _read(one_board)
    via = next(f for f in one_board[0].findings if f.rule_id == "routing.via-in-zone")
    obj = next(o for o in gf.objects if o.attrs.get("SensorcheckFingerprint") == (via.fingerprint,))
    # One field per net: a comma or '*' or '%' in a name did not split or end the command.
    nets = obj.attrs["SensorcheckNets"]
    assert tuple(spec_unescape(n) for n in nets) == HOSTILE_NETS
    hostile = next(f for f in one_board[0].findings if f.sensor == HOSTILE_SENSOR and not f.waived)
    obj = next(o for o in gf.objects if o.attrs.get("SensorcheckFingerprint") == (hostile.fingerprint,))
    assert spec_unescape(obj.attrs["SensorcheckSensor"][0]) == HOSTILE_SENSOR


def test_attr_value_escapes() -> None:
    assert attr_value("TX1") == "TX1"
    assert attr_value("a,b*c%d\\") == "a\\u002Cb\\u002Ac\\u0025d\\u005C"
    assert attr_value("\U0001f600") == "\\U0001F600"
    for s in HOSTILE_NETS:
        assert spec_unescape(attr_value(s)) == s


@pytest.mark.filterwarnings("ignore::DeprecationWarning")
def test_pygerber_reads_it(one_board: list[Result]) -> None:
    pytest.importorskip("pygerber")
    # pygerber parses at about 16 KB/s (DESIGN.md section 4): three findings, hostile nets included.
    one_board[0].findings = [f for f in one_board[0].findings if f.location.x_mm is not None][:3]
    from pygerber.gerberx3.parser2.parser2 import Parser2
    from pygerber.gerberx3.tokenizer.tokenizer import Tokenizer

    stack = Tokenizer().tokenize(render(one_board, "gerber"))
    command_buffer = Parser2().parse(stack)
    assert len(command_buffer) > 100
