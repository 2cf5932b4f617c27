"""read_gerber: bad input, the Feature fields, polarity, per-net images and curve tolerance.

Expected values come from the Gerber specification (Ucamco, "The Gerber Layer Format
Specification", revision 2023.08; section numbers from memory) and elementary geometry.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import shapely
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from shapely.geometry import Point

from sensorcheck.errors import InputError, LimitError
from sensorcheck.fab.gerber import images_by_net, read_gerber
from sensorcheck.limits import Limits

HEAD = "%FSLAX46Y46*%\n%MOMM*%\n"


def gbr(body: str, head: str = HEAD) -> bytes:
    return (head + body + "M02*\n").encode()


def mm(v: float) -> str:
    return str(round(v * 1_000_000))


def refused(data: bytes, limits: Limits | None = None, strict: bool = False) -> InputError:
    with pytest.raises(InputError) as err:
        if limits is None:
            read_gerber(data, "bad.gbr", strict=strict)
        else:
            read_gerber(data, "bad.gbr", limits=limits, strict=strict)
    assert err.value.file == "bad.gbr"
    return err.value


# --------------------------------------------------------------------------- bad input


def test_truncated_file() -> None:
    e = refused((HEAD + "%ADD10C,1*%\nD10*\nX0Y0D03*\nX1000000Y0D0").encode())
    assert e.line == 6 and "M02" in (e.expected or "")


def test_binary_bytes_in_a_gerber_file() -> None:
    e = refused(HEAD.encode() + b"%ADD10C,1*%\n\x00\x01\xff\xfe garbage\nM02*\n")
    assert e.line == 4 and "text" in (e.expected or "")


def test_garbage_text() -> None:
    e = refused(gbr("%ADD10C,1*%\nthis is not gerber*\n"))
    assert e.line == 4 and "unknown statement" in e.message


def test_unknown_aperture() -> None:
    # spec section 4.3: an aperture must be defined (AD) before it is selected.
    e = refused(gbr("%ADD10C,1*%\nD11*\nX0Y0D03*\n"))
    assert e.line == 4 and "D11" in e.message and "ADD11" in (e.expected or "")


def test_undefined_macro() -> None:
    e = refused(gbr("%ADD10NOSUCH,1*%\nD10*\nX0Y0D03*\n"))
    assert e.line == 3 and "NOSUCH" in e.message


def test_missing_unit() -> None:
    # spec section 4.2.1: MO is mandatory.
    e = refused(b"%FSLAX46Y46*%\nG01*\nX0Y0D02*\nX1000000Y0D01*\nM02*\n")
    assert e.line == 4 and "MO" in (e.expected or "")


def test_missing_unit_before_aperture() -> None:
    e = refused(b"%FSLAX46Y46*%\n%ADD10C,1*%\nM02*\n")
    assert e.line == 2


@pytest.mark.parametrize("second", ["%MOIN*%", "G70*"])
def test_conflicting_units_refused_when_strict(second: str) -> None:
    # read with a warning by default (tests/fab/test_dialects.py); --strict keeps the refusal
    e = refused(gbr(f"%ADD10C,1*%\n{second}\nD10*\nX0Y0D03*\n"), strict=True)
    assert e.line == 4 and "refused by --strict" in e.message


def test_same_unit_twice_is_fine() -> None:
    got = read_gerber(gbr("G71*\n%ADD10C,1*%\nD10*\nX0Y0D03*\n"), "ok.gbr")
    assert got.units == "mm" and got.object_count == 1


def test_missing_coordinate_format() -> None:
    # spec section 4.2.2: FS is mandatory before coordinates.
    e = refused(b"%MOMM*%\n%ADD10C,1*%\nD10*\nX0Y0D03*\nM02*\n")
    assert e.line == 4 and "FS" in (e.expected or "")


def test_incremental_notation_is_refused() -> None:
    e = refused(b"%FSLIX46Y46*%\n%MOMM*%\nM02*\n")
    assert e.line == 1 and "incremental" in e.message


def test_object_limit() -> None:
    body = "%ADD10C,1*%\nD10*\n" + "".join(f"X{mm(i)}Y0D03*\n" for i in range(20))
    e = refused(gbr(body), Limits(max_gerber_objects=10))
    assert isinstance(e, LimitError) and e.line is not None


def test_step_repeat_limit() -> None:
    e = refused(gbr("%ADD10C,1*%\n%SRX1000Y1000I1J1*%\nD10*\nX0Y0D03*\n%SR*%\n"))
    assert isinstance(e, LimitError) and e.line == 4


def test_empty_file() -> None:
    assert refused(b"  \n").line == 1


def test_arc_with_rectangle_is_refused_when_strict() -> None:
    # spec section 4.7.2: circular interpolation needs a circle aperture (read with a warning by
    # default: tests/fab/test_dialects.py).
    e = refused(gbr("%ADD10R,1X1*%\nD10*\nG75*\nG03*\nX0Y0D02*\nX2000000Y0I1000000J0D01*\n"), strict=True)
    assert e.line == 8


VALID = (HEAD + "%TF.FileFunction,Copper,L1,Top*%\n%ADD10C,0.5*%\n%ADD11R,1X2*%\n"
         "%AMBOX*\n21,1,$1,$2,0,0,$3*\n1,0,$1/2,0,0*%\n%ADD12BOX,2X1X15*%\n"
         "%TO.N,A*%\nD10*\nX0Y0D02*\nX5000000Y0D01*\nG75*\nG03*\nX5000000Y2000000I0J1000000D01*\nG01*\n"
         "D11*\nX8000000Y0D03*\n%TO.N,B*%\nD12*\nX0Y5000000D03*\n%LPC*%\nG36*\nX0Y0D02*\nX1000000Y0D01*\n"
         "X1000000Y1000000D01*\nX0Y0D01*\nG37*\n%LPD*%\n%SRX2Y1I10J0*%\nD10*\nX0Y8000000D03*\n%SR*%\nM02*\n")


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.data())
def test_no_other_exception_escapes(data: st.DataObject) -> None:
    # Whatever happens to a valid file (cut, bytes replaced, lines dropped or doubled), the reader
    # returns or raises InputError: never another exception (the user must never see a traceback).
    raw = bytearray(VALID.encode())
    op = data.draw(st.sampled_from(["cut", "replace", "drop", "double", "insert"]))
    if op == "cut":
        raw = raw[: data.draw(st.integers(0, len(raw)))]
    elif op == "replace":
        for _ in range(data.draw(st.integers(1, 5))):
            raw[data.draw(st.integers(0, len(raw) - 1))] = data.draw(st.integers(32, 126))
    else:
        lines = bytes(raw).split(b"\n")
        i = data.draw(st.integers(0, len(lines) - 1))
        if op == "drop":
            del lines[i]
        elif op == "double":
            lines.insert(i, lines[i])
        else:
            lines.insert(i, data.draw(st.binary(max_size=12)).replace(b"\n", b""))
        raw = bytearray(b"\n".join(lines))
    try:
        read_gerber(bytes(raw), "fuzz.gbr")
    except InputError as err:
        assert err.file == "fuzz.gbr"


# --------------------------------------------------------------------------- features


def test_feature_fields() -> None:
    got = read_gerber(VALID.encode(), "v.gbr")
    kinds = [f.kind for f in got.features]
    assert kinds == ["draw", "arc", "flash", "flash", "region", "flash", "flash"]
    draw, arc, flash, macro, region, sr1, sr2 = got.features
    assert got.file_attributes[".FileFunction"] == ["Copper", "L1", "Top"]
    assert (draw.net, draw.width_mm, draw.polarity, draw.source.line) == ("A", 0.5, "dark", 13)
    assert draw.path is not None and draw.path.length == pytest.approx(5.0)
    # half circle of radius 1 from (5, 0) to (5, 2) counterclockwise about (5, 1)
    assert arc.path is not None and arc.path.length == pytest.approx(math.pi, rel=1e-3)  # chords
    assert arc.geometry.area == pytest.approx(math.pi * 0.5 + math.pi * 0.25**2, rel=2e-3)
    assert (flash.width_mm, flash.path) == (None, None)
    assert flash.geometry.area == pytest.approx(2.0)
    # macro: rectangle 2 x 1 rotated 15 degrees with a hole of diameter 1 (exposure off)
    assert macro.net == "B"
    assert macro.geometry.area == pytest.approx(2.0 - math.pi / 4, rel=2e-3)
    assert region.polarity == "clear" and region.net == "B"
    assert [round(f.geometry.centroid.x, 6) for f in (sr1, sr2)] == [0.0, 10.0]
    assert got.units == "mm" and got.object_count == 7


def test_inch_is_converted_to_mm() -> None:
    got = read_gerber(b"%FSLAX24Y24*%\n%MOIN*%\n%ADD10R,0.1X0.2*%\nD10*\nX10000Y0D03*\nM02*\n", "i.gbr")
    assert got.units == "inch"
    assert got.dark is not None
    assert tuple(got.dark.bounds) == pytest.approx((25.4 - 1.27, -2.54, 25.4 + 1.27, 2.54))


def test_polarity_in_file_order_and_per_net_images() -> None:
    # spec section 4.9.2: a clear object clears everything before it, whatever its net; what comes
    # after it is dark again.
    body = ("%ADD10R,4X4*%\n%ADD11R,2X2*%\n%ADD12R,1X1*%\n%TO.N,A*%\nD10*\nX0Y0D03*\n%TO.N,B*%\nX10000000Y0D03*\n"
            "%TD*%\n%LPC*%\nD11*\nX0Y0D03*\nX10000000Y0D03*\nX20000000Y0D03*\n%LPD*%\n%TO.N,A*%\nD12*\nX0Y0D03*\n")
    got = read_gerber(gbr(body), "p.gbr")
    nets = images_by_net(got.features)
    assert set(nets) == {"A", "B"}  # the clear objects have no dark image of their own
    assert nets["A"].area == pytest.approx(16 - 4 + 1)
    assert nets["B"].area == pytest.approx(16 - 4)
    assert got.by_net.keys() == nets.keys()
    assert got.dark is not None and got.dark.area == pytest.approx(13 + 12)
    assert len(got.dark.geoms) == 3  # A's frame, A's island, B's frame


def test_arc_tolerance_is_the_chord_error() -> None:
    # vertices on the true circle, chord sagitta <= tolerance (module docstring of gerber_geometry)
    for tol in (0.001, 0.0001):
        got = read_gerber(gbr("%ADD10C,3*%\nD10*\nX0Y0D03*\n"), "c.gbr", arc_tolerance_mm=tol)
        geom = got.features[0].geometry
        xy = shapely.get_coordinates(geom)
        assert np.allclose(np.hypot(xy[:, 0], xy[:, 1]), 1.5, atol=1e-9)
        true_circle = Point(0, 0).buffer(1.5, quad_segs=4096)
        assert true_circle.hausdorff_distance(geom) <= tol * 1.01
        assert true_circle.hausdorff_distance(geom) > tol / 8  # not needlessly fine either


def test_generator_from_file_attribute_or_comment() -> None:
    got = read_gerber(gbr("%TF.GenerationSoftware,KiCad,Pcbnew,8.0.2*%\n"), "g.gbr")
    assert got.generator == "KiCad Pcbnew 8.0.2"
    got = read_gerber(gbr("G04 Created by KiCad (PCBNEW 4.0.7) date 2018*\n"), "g.gbr")
    assert got.generator == "KiCad (PCBNEW 4.0.7)"


@pytest.mark.parametrize("cmd", ["%IPNEG*%", "%IR90*%", "%MIA1B0*%", "%SFA2B1*%", "%ASAYBX*%"])
def test_deprecated_image_transformations_are_refused_when_strict(cmd: str) -> None:
    # spec section 8.1 (deprecated commands): these change the whole image; read by default
    # (tests/fab/test_dialects.py), refused by --strict.
    e = refused(gbr(f"{cmd}\n%ADD10R,1X2*%\nD10*\nX0Y0D03*\n"), strict=True)
    assert e.line == 3


def test_neutral_deprecated_commands_are_accepted() -> None:
    got = read_gerber(gbr("%IPPOS*%\n%OFA0B0*%\n%IR0*%\n%ADD10C,1*%\nD10*\nX0Y0D03*\n"), "n.gbr")
    assert got.object_count == 1


def test_extent_far_beyond_a_board_is_flagged() -> None:
    # an inch file read as mm, or a wrong coordinate format, puts copper metres apart
    got = read_gerber(gbr(f"%ADD10C,1*%\nD10*\nX0Y0D03*\nX{mm(5000)}Y0D03*\n"), "w.gbr")
    assert any("wrong unit" in w for w in got.warnings)
    assert not any("wrong unit" in w for w in read_gerber(gbr("%ADD10C,1*%\nD10*\nX0Y0D03*\n"), "ok.gbr").warnings)


def test_inconsistent_arc_is_flagged() -> None:
    # spec section 4.7.2: start and end point must be on the circle about the centre
    body = "%ADD10C,0.1*%\nD10*\nG75*\nG03*\nX0Y0D02*\nX3000000Y0I1000000J0D01*\n"
    got = read_gerber(gbr(body), "a.gbr")
    assert any("arc radii differ" in w and "a.gbr:8" in w for w in got.warnings)


@settings(max_examples=40, deadline=None)
@given(st.lists(st.tuples(st.sampled_from(["D", "C"]), st.sampled_from(["A", "B", ""]),
                          st.integers(0, 8), st.integers(0, 8), st.sampled_from(["10", "11"])),
                min_size=1, max_size=25))
def test_polarity_matches_painting_in_file_order(objects: list[tuple[str, str, int, int, str]]) -> None:
    # spec section 4.9.2: objects are painted in file order, dark paints, clear erases, so a point
    # is dark when the last object over it is dark. Painted naively here, one object at a time.
    body = "%ADD10R,3X2*%\n%ADD11C,2.5*%\n"
    for pol, net, x, y, ap in objects:
        body += f"%LP{pol}*%\n" + (f"%TO.N,{net}*%\n" if net else "") + f"D{ap}*\nX{mm(x)}Y{mm(y)}D03*\n%TD*%\n"
    got = read_gerber(gbr(body), "r.gbr")
    painted: dict[str | None, object] = {}
    whole = shapely.Polygon()
    for f in got.features:
        if f.polarity == "dark":
            whole = whole.union(f.geometry)
            painted[f.net] = shapely.union(painted.get(f.net, shapely.Polygon()), f.geometry)
        else:
            whole = whole.difference(f.geometry)
            painted = {k: shapely.difference(v, f.geometry) for k, v in painted.items()}
    assert got.dark is not None
    assert got.dark.symmetric_difference(whole).area < 1e-9
    nets = images_by_net(got.features)
    assert set(nets) == {k for k, v in painted.items() if not v.is_empty}  # type: ignore[attr-defined]
    for key, image in nets.items():
        assert image.symmetric_difference(painted[key]).area < 1e-9  # type: ignore[arg-type]


@pytest.mark.parametrize(
    ("macro", "what"),
    [
        ("5,1,1000000000,0,0,1,0", "vertices"),  # polygon primitive: 3 to 12 vertices (spec 4.5.1.7)
        ("4,1,5,0,0,1,0,0", "coordinates"),  # outline with fewer points than it announces
        ("1,1,$1/0,0,0", "cannot read"),  # division by zero when the aperture is defined
    ],
)
def test_malformed_macros_are_refused(macro: str, what: str) -> None:
    e = refused(gbr(f"%AMBAD*\n{macro}*%\n%ADD10BAD,1*%\nD10*\nX0Y0D03*\n"))
    assert what in e.message


def test_huge_circle_stays_bounded() -> None:
    # a 9 m circle at a 0.01 um chord tolerance would need ~47 000 segments: capped at 8192
    got = read_gerber(gbr("%ADD10C,9000*%\nD10*\nX0Y0D03*\n"), "big.gbr", arc_tolerance_mm=1e-5)
    assert len(got.features[0].geometry.exterior.coords) <= 8192 + 1


def test_aperture_larger_than_any_board_is_refused_with_its_line() -> None:
    with pytest.raises(InputError) as info:
        read_gerber(gbr("%ADD10C,100000*%\nD10*\nX0Y0D03*\n"), "big.gbr")
    assert info.value.line is not None and "D10" in info.value.message


def test_degenerate_region_leaves_no_lines_in_the_image() -> None:
    # a contour that runs out and back along one line encloses no area (spec section 4.10): no
    # image, and certainly no zero-width lines in it
    body = f"G36*\nX0Y0D02*\nX{mm(5)}Y0D01*\nX0Y0D01*\nG37*\n%ADD10C,1*%\nD10*\nX{mm(10)}Y0D03*\n"
    got = read_gerber(gbr(body), "d.gbr")
    assert got.features[0].geometry.is_empty
    assert got.dark is not None and got.dark.geom_type == "Polygon"
