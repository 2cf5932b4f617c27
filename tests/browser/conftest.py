"""A headless Chromium for the review-page tests, and a synthetic board to review.

The browser is Debian's ``chromium`` driven through Playwright for Python, pointed at
``/usr/bin/chromium`` (``playwright install`` is never run: no browser is downloaded). Where
neither the browser nor Playwright is present the tests skip and say which is missing.

The board is invented here: four copper layers drawn with shapely (buttons, a slider, a mutual
node, traces, a hatched ground), read back through :func:`drawing_from_board`, with findings of
every severity, a waiver, an internal error, one finding without a place, approach curves, and
names carrying markup and quotes so that escaping is exercised in a real browser.
"""

from __future__ import annotations

import math
import os
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest
import shapely
from shapely.geometry import LineString, Point, Polygon, box

from sensorcheck.board.drawing import drawing_from_board
from sensorcheck.board.model import Board, Hole, Layer, SourceRef
from sensorcheck.findings import Finding, Location, Result, RuleInfo, SensorSummary, Waiver, assign_fingerprints

from headless_chromium import chromium_path, launch  # beside this file (the benchmark uses it too)

REPO = Path(__file__).resolve().parents[2]
EVIL_NET = "<script>alert(1)</script>"
EVIL_SENSOR = "B2 \"quoted\" & 'single' </script><!--"


def artifacts_dir() -> Path:
    """Where screenshots go: ``$SENSORCHECK_ARTIFACTS`` or ``tests/artifacts`` (git-ignored)."""
    env = os.environ.get("SENSORCHECK_ARTIFACTS")
    path = Path(env) if env else REPO / "tests" / "artifacts"
    path.mkdir(parents=True, exist_ok=True)
    return path


@pytest.fixture(scope="session")
def browser() -> Iterator[Any]:
    exe = chromium_path()
    if exe is None:
        pytest.skip("no Chromium found (/usr/bin/chromium): install Debian's chromium and chromium-driver")
    try:
        from playwright.sync_api import sync_playwright
    except ImportError:
        pytest.skip("Playwright for Python is not installed (pip install playwright; the browser is Debian's)")
    with sync_playwright() as pw:
        b = launch(pw, exe)
        try:
            yield b
        finally:
            b.close()


@pytest.fixture(scope="session")
def review_board() -> dict[str, Any]:
    """The synthetic board's result, the names that carry markup, and where screenshots go."""
    return {
        "result": synthetic_result(),
        "evil_net": EVIL_NET,
        "evil_sensor": EVIL_SENSOR,
        "artifacts": artifacts_dir(),
    }


# ---------------------------------------------------------------- the synthetic board


def _ring(poly: Polygon) -> list[tuple[float, float]]:
    return [(round(x, 4), round(y, 4)) for x, y in poly.exterior.coords]


def _hatch(area: Polygon, pitch_mm: float, width_mm: float) -> Any:
    """A 45-degree hatch of ``area``: lines ``width_mm`` wide every ``pitch_mm``."""
    x0, y0, x1, y1 = area.bounds
    span = (x1 - x0) + (y1 - y0)
    lines = []
    k = 0.0
    while k <= span:
        lines.append(LineString([(x0 + k, y0), (x0 + k - (y1 - y0), y1)]).buffer(width_mm / 2, cap_style="flat"))
        lines.append(LineString([(x0 + k - (y1 - y0), y0), (x0 + k, y1)]).buffer(width_mm / 2, cap_style="flat"))
        k += pitch_mm
    return shapely.union_all(lines).intersection(area)


def synthetic_board() -> Board:
    """A 4-layer, 70 x 45 mm board with three self buttons, a slider and a mutual node."""
    outline = box(0, 0, 70, 45).buffer(-3, join_style="round").buffer(3, join_style="round")
    src = SourceRef("synthetic.gbr")
    buttons = {name: Point(x, 32).buffer(5.0, quad_segs=24) for name, x in (("B1", 10), ("B2", 24), ("B3", 38))}
    slider = [Polygon([(8 + 16 * i, 8), (20 + 16 * i, 8), (24 + 16 * i, 13), (20 + 16 * i, 18), (8 + 16 * i, 18), (12 + 16 * i, 13)]) for i in range(3)]
    tx = shapely.union_all([box(52, 26, 53, 40)] + [box(52, 26 + 4 * i, 63, 27 + 4 * i) for i in range(4)])
    rx = shapely.union_all([box(66, 27.5, 67, 41)] + [box(55, 28 + 4 * i, 67, 29 + 4 * i) for i in range(3)])
    traces = [
        LineString([(10, 27), (10, 22), (46, 22), (46, 3)]).buffer(0.15),
        LineString([(24, 27), (24, 23.5), (47, 23.5), (47, 3)]).buffer(0.15),
        LineString([(38, 27), (38, 25), (48, 25), (48, 3)]).buffer(0.15),
    ]
    top_parts = [*buttons.values(), *slider, tx, rx, *traces]
    keepout = shapely.union_all([p.buffer(1.0) for p in top_parts])
    top_ground = box(2, 2, 68, 43).difference(keepout).difference(box(3, 3, 67, 42))  # a guard ring
    top = shapely.union_all([*top_parts, top_ground])
    inner1 = box(1, 1, 69, 44).difference(shapely.union_all([b.buffer(2) for b in buttons.values()]))
    inner2 = shapely.union_all([LineString([(5 + 6 * i, 5), (5 + 6 * i, 40)]).buffer(0.2) for i in range(10)])
    bottom = _hatch(box(1, 1, 69, 44), pitch_mm=2.5, width_mm=0.6)
    layers = [
        Layer("top-copper", "copper", "top", "top.gtl", copper_index=1, dark=top),
        Layer("inner1-copper", "copper", "inner", "in1.g2", copper_index=2, dark=inner1),
        Layer("inner2-copper", "copper", "inner", "in2.g3", copper_index=3, dark=inner2),
        Layer("bottom-copper", "copper", "bottom", "bottom.gbl", copper_index=4, dark=bottom),
    ]
    holes = [Hole(46 + i, 3, 0.3, True, src) for i in range(3)] + [
        Hole(4, 4, 3.2, False, src),
        Hole(66, 4, 3.2, False, src),
        Hole(4, 41, 3.2, False, src),
        Hole(66, 41, 3.2, False, src),
    ]
    return Board(name="demo-touch", source="synthetic/demo-touch", layers=layers, holes=holes, outline=outline)


def _curve(kind: str) -> list[tuple[float, float]]:
    """A made-up approach curve shape: far to near, heights above the overlay surface (mm)."""
    heights = [20.0, 14.0, 10.0, 7.0, 5.0, 3.5, 2.5, 1.5, 0.8, 0.3, 0.0]
    if kind == "mutual":  # dips, then turns back up near the surface
        return [(h, round(1.20 - 0.30 * math.exp(-h / 3.0) + 0.25 * math.exp(-h / 0.9), 4)) for h in heights]
    return [(h, round(8.0 + 1.6 * math.exp(-h / 4.0), 4)) for h in heights]


def synthetic_result() -> Result:
    board = synthetic_board()
    drawing = drawing_from_board(board)
    waiver = Waiver(rule="gap.tx-rx-vs-overlay", reason="prototype run; gap chosen by measurement", sensor="K1", expires="2027-06-30")
    findings = [
        Finding(
            "clearance.electrode-to-ground", "error", "B1 is 0.10 mm from the ground pour; needs at least 0.50 mm",
            value=0.10, limit=0.50, unit="mm", sensor="B1", nets=("TOUCH1", "GND"),
            location=Location("top-copper", 14.9, 32.4, (14.6, 31.9, 15.2, 32.9), "top.gtl", 1201),
            review="Confirm the pour clearance around B1 after the ground fill is updated",
        ),
        Finding(
            "trace.length-self", "warning", f"trace of net {EVIL_NET} is 42 mm long",
            value=42.0, limit=30.0, unit="mm", sensor=EVIL_SENSOR, nets=(EVIL_NET,),
            location=Location("top-copper", 46.0, 12.0, (45.8, 3.0, 46.2, 22.0)),
        ),
        Finding(
            "gap.tx-rx-vs-overlay", "warning", "TX-RX gap 1.0 mm is below 0.6 x overlay (1.2 mm), common practice",
            value=1.0, limit=1.2, unit="mm", sensor="K1", nets=("TX1", "RX1"),
            location=Location("top-copper", 59.5, 33.5, (52.0, 26.0, 67.0, 41.0)), waived_by=waiver,
        ),
        Finding(
            "hatch.fill-under-sensor", "note", "ground hatch under the slider fills 41 % (common practice: about 25 %)",
            value=41.0, limit=25.0, unit="%", sensor="volume", nets=("GND",),
            location=Location("bottom-copper", 28.0, 13.0, (8.0, 8.0, 56.0, 18.0)),
            review="Check the hatch under the slider on the first prototype",
        ),
        Finding(
            "estimate.turning-point", "error", "K1's signal turns around 0.6 mm above the overlay surface",
            value=0.6, limit=0.0, unit="mm", sensor="K1", nets=("TX1", "RX1"),
            location=Location("top-copper", 60.0, 34.0),
        ),
        Finding("overlay.missing", "note", "no overlay stack given: [[overlay.layers]] in sensorcheck.toml"),
    ]
    assign_fingerprints(findings, board.name)
    sensors = [
        SensorSummary(
            name=name, kind="self-button", layer="top-copper", nets=(net,),
            box_mm=tuple(round(v, 4) for v in poly.bounds),  # type: ignore[arg-type]
            values={"electrode_area_mm2": round(poly.area, 2), "ground_gap_mm": 1.0, "hatch_fill_percent": 41.0,
                    "trace_length_mm": 28.5 if name != "B2" else 42.0, "via_count": 1},
            outline_rings=[_ring(poly)], zone_rings=[_ring(poly.buffer(2.5, quad_segs=12))],
            estimate={"model": "boundary elements, finger as an earthed disc 8 mm", "kind": "self",
                      "baseline_pf": 8.0, "touch_delta_pf": 1.6, "percent_change": 20.0,
                      "turning_point_mm": None, "curve": _curve("self"), "parasitic_pf": 11.2, "panels": 640,
                      "notes": ["hatch drawn as a sheet of 41 % fill"]} if name == "B1" else None,
            checklist=[f"Overlay bonded over {name} without air gap"],
        )
        for name, net, poly in (
            ("B1", "TOUCH1", Point(10, 32).buffer(5.0, quad_segs=24)),
            (EVIL_SENSOR, EVIL_NET, Point(24, 32).buffer(5.0, quad_segs=24)),
            ("B3", "TOUCH3", Point(38, 32).buffer(5.0, quad_segs=24)),
        )
    ]
    sensors.append(
        SensorSummary(
            name="K1", kind="mutual-button", layer="top-copper", nets=("TX1", "RX1"), box_mm=(52.0, 26.0, 67.0, 41.0),
            values={"tx_rx_gap_mm": 1.0, "rx_area_mm2": 38.0, "ground_area_mm2": 980.0, "rx_to_ground_ratio": 0.039},
            outline_rings=[[(52.0, 26.0), (67.0, 26.0), (67.0, 41.0), (52.0, 41.0), (52.0, 26.0)]],
            estimate={"model": "boundary elements; finger through 150 pF body to earth", "kind": "mutual",
                      "baseline_pf": 1.2, "touch_delta_pf": -0.05, "percent_change": -4.2,
                      "turning_point_mm": 0.6, "curve": _curve("mutual"), "panels": 1220,
                      "crosstalk_pf": {"B3": 0.004}},
            checklist=["Measure K1 under the real overlay before release"],
        )
    )
    sensors.append(
        SensorSummary(
            name="volume", kind="slider", layer="top-copper", nets=("SL0", "SL1", "SL2"), box_mm=(8.0, 8.0, 56.0, 18.0),
            values={"segments": 3, "segment_pitch_mm": 16.0, "inter_segment_gap_mm": 0.0},
            outline_rings=[_ring(p) for p in (Polygon([(8 + 16 * i, 8), (20 + 16 * i, 8), (24 + 16 * i, 13), (20 + 16 * i, 18), (8 + 16 * i, 18), (12 + 16 * i, 13)]) for i in range(3))],
            zone_rings=[[(6.0, 6.0), (58.0, 6.0), (58.0, 20.0), (6.0, 20.0), (6.0, 6.0)]],
        )
    )
    rules = [
        RuleInfo("clearance.electrode-to-ground", "Electrode clearance to ground", "clearance", "error", "Checks..."),
        RuleInfo("gap.tx-rx-vs-overlay", "TX-RX gap against overlay thickness", "gap", "warning", "Checks..."),
    ]
    return Result(
        board=board.name,
        source=board.source,
        tool_version="0.1.0",
        config_file="boards/demo-touch/sensorcheck.toml",
        findings=findings,
        sensors=sensors,
        rules=rules,
        rules_run=["clearance.electrode-to-ground", "gap.tx-rx-vs-overlay", "trace.length-self"],
        files=[{"path": "top.gtl", "layer": "top-copper", "role": "copper"}, {"path": "in1.g2", "layer": "inner1-copper", "role": "copper"}],
        notes=["Roles came from net names (TX*, RX*, TOUCH*)."],
        drawing=drawing,
        overlay={"face": "top", "thickness_mm": 2.0, "layers": [{"material": "pmma", "thickness_mm": 2.0, "epsilon_r": 2.6}]},
    )
