"""electrode.* rules: sizes, spacings, slider coverage and matrix pitch known by construction."""

from __future__ import annotations

import math

import pytest
import shapely
from shapely.geometry import Point, box

from .build import electrode, make_board, make_config, make_design, region, sensor
from .helpers import run_one
from .test_gap import mutual_node


def buttons(*pads, overlay_mm: float = 2.0):
    board = make_board([region("top-copper", p, f"T{i}") for i, p in enumerate(pads)])
    sensors = [sensor(f"B{i}", "self-button", [electrode(f"T{i}", "self", p)]) for i, p in enumerate(pads)]
    return make_design(board, make_config(overlay_mm), {f"T{i}": "self" for i in range(len(pads))}, sensors)


@pytest.mark.parametrize(
    "side, overlay, warn",
    [
        (14.0, 2.0, False),  # GOOD: 14 >= 8 + 2 x 2 = 12 (common practice)
        (10.0, 2.0, True),  # BAD: 10 < 12
        (12.0, 3.0, True),  # BAD: 12 < 14
    ],
)
def test_self_size(side: float, overlay: float, warn: bool) -> None:
    found = run_one("electrode.size-vs-contact", buttons(box(0, 0, side, side), overlay_mm=overlay))
    assert bool(found) == warn
    if warn:
        (f,) = found
        assert f.value == pytest.approx(side, abs=0.05)  # widest inscribed disc of a square = its side
        assert f.limit == pytest.approx(8 + 2 * overlay)
        assert f"equivalent diameter {math.sqrt(4 * side * side / math.pi):.1f} mm" in f.message
        assert (f.location.file, f.location.line) == ("top-copper.gbr", 1)  # the pad's region object


def test_elongated_pad_is_judged_by_its_width() -> None:
    # 30 x 8 mm: equivalent diameter 17.5 mm looks large, but only an 8 mm disc fits
    (f,) = run_one("electrode.size-vs-contact", buttons(box(0, 0, 30, 8)))
    assert f.value == pytest.approx(8.0, abs=0.05)


@pytest.mark.parametrize("overlay, warn", [(2.0, False), (4.0, True)])
def test_mutual_node_size(overlay: float, warn: bool) -> None:
    # the node of mutual_node(1.0) spans 14 x 14 mm; limit 8 + 2t
    found = run_one("electrode.size-vs-contact", mutual_node(1.0, overlay))
    assert bool(found) == warn


@pytest.mark.parametrize(
    "spacing, overlay, limit",
    [
        (6.0, 2.0, None),  # GOOD: 6 >= max(4, 5)
        (3.0, 2.0, 5.0),  # BAD: 3 < 5
        (6.0, 3.5, 7.0),  # BAD: 6 < 2 x 3.5
    ],
)
def test_neighbour_spacing(spacing: float, overlay: float, limit: float | None) -> None:
    d = buttons(box(0, 0, 12, 12), box(12 + spacing, 0, 24 + spacing, 12), overlay_mm=overlay)
    found = run_one("electrode.neighbour-spacing", d)
    if limit is None:
        assert found == []
        return
    (f,) = found
    assert f.value == pytest.approx(spacing) and f.limit == pytest.approx(limit)


def slider(width: float, gap: float, n: int = 5, height: float = 12.0):
    segs = [box(i * (width + gap), 0, i * (width + gap) + width, height) for i in range(n)]
    nets = [f"SL{i}" for i in range(n)]
    board = make_board([region("top-copper", g, net) for g, net in zip(segs, nets)])
    s = sensor("S1", "slider", [electrode(net, "self", g) for g, net in zip(segs, nets)], order=tuple(nets))
    return make_design(board, make_config(1.0), {n_: "self" for n_ in nets}, [s])


def test_slider_good_pitch() -> None:
    # 4 mm segments, 0.5 mm gaps (pitch 4.5 ~ half the 8 mm contact): two segments everywhere
    assert run_one("electrode.slider-coverage", slider(4.0, 0.5)) == []


def test_slider_wide_segments_leave_single_segment_stretches() -> None:
    # 12 mm segments: a 4 mm-radius disc on a segment's centre sees only that segment
    (f,) = run_one("electrode.slider-coverage", slider(12.0, 0.5))
    assert f.value == pytest.approx(0.0) and f.unit == "%"


def test_slider_dead_zones() -> None:
    # 4 mm segments with 10 mm gaps: between two segments (edges 10 mm apart) a 4 mm-radius disc touches
    # neither over the middle 10 - 2 x 4 = 2 mm; three gaps -> 6 mm of dead zone (sweep step 0.25 mm)
    (f,) = run_one("electrode.slider-coverage", slider(4.0, 10.0, n=4))
    assert f.value == pytest.approx(6.0, abs=0.26) and "dead zone" in f.message


def wheel(n: int):
    ring = Point(0, 0).buffer(16, quad_segs=64).difference(Point(0, 0).buffer(8, quad_segs=64))
    segs = []
    for i in range(n):
        a0, a1 = 2 * math.pi * i / n + 0.02, 2 * math.pi * (i + 1) / n - 0.02
        wedge = shapely.Polygon([(0, 0)] + [(30 * math.cos(a0 + (a1 - a0) * k / 16), 30 * math.sin(a0 + (a1 - a0) * k / 16)) for k in range(17)])
        segs.append(ring.intersection(wedge))
    nets = [f"W{i}" for i in range(n)]
    board = make_board([region("top-copper", g, net) for g, net in zip(segs, nets)])
    s = sensor("W", "wheel", [electrode(net, "self", g) for g, net in zip(segs, nets)], order=tuple(nets))
    return make_design(board, make_config(1.0), {n_: "self" for n_ in nets}, [s])


def test_wheel_coverage() -> None:
    # 16 segments: centroids about 2 x 12.3 x sin(11.25 deg) = 4.8 mm apart, about half the 8 mm contact
    # (the common-practice pitch) -> two segments under the finger all the way round
    assert run_one("electrode.slider-coverage", wheel(16)) == []
    # 12 segments (6.4 mm apart): at a segment's centre the neighbour's edge is about 3.2 mm + gap away,
    # so a 4 mm-radius disc only grazes it: below the 10 % second-segment share
    (f,) = run_one("electrode.slider-coverage", wheel(12))
    assert 0 < f.value < 10
    # 4 segments: about 17 mm apart -> single-segment stretches
    assert run_one("electrode.slider-coverage", wheel(4))


def matrix(pitch: float):
    rows = [box(0, i * pitch, 40, i * pitch + pitch / 2) for i in range(4)]
    cols = [box(i * pitch, 0, i * pitch + pitch / 2, 40) for i in range(4)]
    shapes = [region("top-copper", g, f"R{i}") for i, g in enumerate(rows)]
    shapes += [region("bottom-copper", g, f"C{i}") for i, g in enumerate(cols)]
    els = [electrode(f"R{i}", "receiver", g) for i, g in enumerate(rows)]
    els += [electrode(f"C{i}", "transmitter", g, layer="bottom-copper") for i, g in enumerate(cols)]
    s = sensor("M", "matrix", els, rows=tuple(f"R{i}" for i in range(4)), columns=tuple(f"C{i}" for i in range(4)))
    roles = {**{f"R{i}": "receiver" for i in range(4)}, **{f"C{i}": "transmitter" for i in range(4)}}
    return make_design(make_board(shapes), make_config(1.0), roles, [s])


@pytest.mark.parametrize("pitch, warn", [(6.0, False), (12.0, True), (3.0, True)])
def test_matrix_pitch(pitch: float, warn: bool) -> None:
    found = run_one("electrode.diamond-pitch", matrix(pitch))
    assert bool(found) == warn
    if warn:
        assert len(found) == 6  # 3 row pitches + 3 column pitches
        assert all(f.value == pytest.approx(pitch) for f in found)


def test_estimate_decides_for_size() -> None:
    from sensorcheck.physics.estimate import SensorEstimate

    d = buttons(box(0, 0, 10, 10))  # 10 mm < 12 mm: a warning by the rule of thumb ...
    good = SensorEstimate("B0", "self", "m", 15.0, 0.6, 4.0, None)  # ... but 0.6 pF, 4 % clear 0.1 pF and 3 %
    assert run_one("electrode.size-vs-contact", d, {"B0": good}) == []
    weak = SensorEstimate("B0", "self", "m", 15.0, 0.3, 2.0, None)
    (f,) = run_one("electrode.size-vs-contact", d, {"B0": weak})
    assert "field-solver estimate" in f.message


def test_slider_end_travel() -> None:
    # 5 segments, 4 mm wide, 0.5 mm gaps: only 2 mm at each end between the end centroid and where the
    # neighbour shows: end travel under the 4 mm limit (half the contact).  Wide end blocks push it over.
    assert run_one("electrode.slider-coverage", slider(4.0, 0.5)) == []
    segs = [box(-20, 0, 0, 12)] + [box(0.5 + 4.5 * i, 0, 4.5 + 4.5 * i, 12) for i in range(3)] + [box(14, 0, 34, 12)]
    nets = [f"SL{i}" for i in range(5)]
    board = make_board([region("top-copper", g, n) for g, n in zip(segs, nets)])
    s = sensor("S1", "slider", [electrode(n, "self", g) for g, n in zip(segs, nets)], order=tuple(nets))
    d = make_design(board, make_config(1.0), {n: "self" for n in nets}, [s])
    (f,) = run_one("electrode.slider-coverage", d)
    # end block centroid at -10; the neighbour (from x = 0.5) enters a 4 mm-radius disc at x = -3.5 and reaches
    # 10 % of the first some way after: at least 6.5 mm of single-segment end travel, limit 4 mm
    assert f.value >= 6.5 and f.limit == pytest.approx(4.0) and "ends" in f.message
