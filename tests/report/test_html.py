"""The review page without a browser: escaping, offline, determinism, counts, and the drawing.

Independent checks: the page is read back with the standard library's HTML parser
(``html.parser``, a different parser from the string building that wrote it) and its JSON with
``json``; CSP hashes are recomputed with ``hashlib`` as the CSP Level 3 specification defines them
(base64 of the SHA-256 of the element's text); the drawing's accuracy is measured with shapely's
Hausdorff distance against the exact geometry it came from.
"""

from __future__ import annotations

import base64
import hashlib
import json
import math
import re
from html.parser import HTMLParser
from pathlib import Path

import pytest
import shapely
from shapely.geometry import LineString, Point, Polygon, box

from sensorcheck.board.drawing import DEFAULT_MAX_BYTES, MAX_TOLERANCE_MM, drawing_from_board, grid_for, svg_path_data
from sensorcheck.board.model import Board, Hole, Layer, SourceRef
from sensorcheck.report.html import json_for_script, render
from sensorcheck.findings import Drawing, DrawLayer, Finding, Location, Result, SensorSummary, Waiver

EVIL = "<script>alert(1)</script>"
QUOTES = "TX\"1' onmouseover=\"alert(2)"
COMMENT = "net</script><!--x"


class Page(HTMLParser):
    """Everything the tests need from a page: elements with attributes, script texts, text."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.elements: list[tuple[str, dict[str, str | None]]] = []
        self.scripts: list[tuple[dict[str, str | None], str]] = []
        self.styles: list[str] = []
        self.text: list[str] = []
        self._raw: str | None = None
        self._attrs: dict[str, str | None] = {}

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        self.elements.append((tag, dict(attrs)))
        if tag in ("script", "style"):
            self._raw = tag
            self._attrs = dict(attrs)
            self._buf: list[str] = []

    def handle_startendtag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        self.elements.append((tag, dict(attrs)))

    def handle_endtag(self, tag: str) -> None:
        if self._raw == tag:
            body = "".join(self._buf)
            if tag == "script":
                self.scripts.append((self._attrs, body))
            else:
                self.styles.append(body)
            self._raw = None

    def handle_data(self, data: str) -> None:
        if self._raw:
            self._buf.append(data)
        else:
            self.text.append(data)

    def with_class(self, cls: str) -> list[dict[str, str | None]]:
        return [a for _, a in self.elements if cls in (a.get("class") or "").split()]


def parse(page: str) -> Page:
    p = Page()
    p.feed(page)
    p.close()
    return p


def _drawing() -> Drawing:
    square = [(0.0, 0.0), (10.0, 0.0), (10.0, 10.0), (0.0, 10.0), (0.0, 0.0)]
    hole = [(4.0, 4.0), (6.0, 4.0), (6.0, 6.0), (4.0, 6.0), (4.0, 4.0)]
    return Drawing(
        box_mm=(0.0, 0.0, 20.0, 12.0),
        layers=[
            DrawLayer("top-copper", "copper", "top", [[square, hole]]),
            DrawLayer("bottom-copper", "copper", "bottom", [[[(12.0, 0.0), (20.0, 0.0), (20.0, 12.0), (12.0, 0.0)]]]),
        ],
        outline=[[(0.0, 0.0), (20.0, 0.0), (20.0, 12.0), (0.0, 12.0), (0.0, 0.0)]],
        holes=[(2.0, 2.0, 0.3, True), (18.0, 10.0, 3.0, False)],
        simplify_tolerance_mm=0.02,
    )


def _result(board: str = "demo", *, timestamp: str | None = None) -> Result:
    waiver = Waiver(rule="gap.x", reason=f"accepted {EVIL}", net=QUOTES, expires="2027-01-31")
    findings = [
        Finding("gap.x", "error", f"gap to {EVIL} too small", 0.1, 0.5, "mm", Location("top-copper", 5.0, 5.0, (4.0, 4.0, 6.0, 6.0)),
                nets=(EVIL, QUOTES), sensor=COMMENT, fingerprint="a1", review=f"look at {EVIL}"),
        Finding("gap.x", "warning", "waived one", 1.0, 1.2, "mm", Location("top-copper", 15.0, 6.0), nets=(QUOTES,),
                fingerprint="a2", waived_by=waiver),
        Finding("fill.y", "note", "fill note", 40.0, 25.0, "%", Location("bottom-copper", None, None, (12.0, 1.0, 19.0, 11.0)),
                fingerprint="a3"),
        Finding("config.z", "note", "no overlay given", fingerprint="a4"),
    ]
    sensors = [
        SensorSummary(
            name=COMMENT, kind="self-button", layer="top-copper", nets=(EVIL,), box_mm=(0.0, 0.0, 10.0, 10.0),
            values={"area_mm2": 100.0, "gap_mm": float("nan"), "label": EVIL},
            outline_rings=[[(0.0, 0.0), (10.0, 0.0), (10.0, 10.0), (0.0, 10.0), (0.0, 0.0)]],
            zone_rings=[[(-1.0, -1.0), (11.0, -1.0), (11.0, 11.0), (-1.0, 11.0), (-1.0, -1.0)]],
            estimate={"model": f"model {EVIL}", "kind": "mutual", "baseline_pf": 1.0, "touch_delta_pf": -0.1,
                      "percent_change": -10.0, "turning_point_mm": 0.5,
                      "curve": [[10.0, 1.0], [5.0, 0.95], [1.0, 0.9], [0.0, 0.93]]},
            checklist=[f"confirm {EVIL}"],
        )
    ]
    return Result(board=board, source=f"fab/{EVIL}", tool_version="9.9.9", config_file=f"cfg/{QUOTES}.toml",
                  findings=findings, sensors=sensors, drawing=_drawing(), timestamp=timestamp,
                  notes=[f"note {EVIL}"], files=[{"path": f"{EVIL}.gbr", "layer": "top-copper"}])


# ---------------------------------------------------------------- escaping


def test_board_text_never_becomes_markup() -> None:
    page = render([_result()])
    doc = parse(page)
    # only our two scripts (the data block and the page script) exist: nothing from the board ran into one
    assert len(doc.scripts) == 2
    kinds = sorted((a.get("type") or "") for a, _ in doc.scripts)
    assert kinds == ["", "application/json"]
    # no element has an event-handler attribute (the quote in QUOTES did not close an attribute)
    for tag, attrs in doc.elements:
        assert not [k for k in attrs if k.startswith("on")], (tag, attrs)
    # the text reads back exactly as given
    text = "".join(doc.text)
    assert EVIL in text and QUOTES in text and COMMENT in text
    assert f"confirm {EVIL}" in text and f"model {EVIL}" in text and f"accepted {EVIL}" in text


def test_attributes_round_trip_with_quotes() -> None:
    doc = parse(render([_result()]))
    sensors = [a.get("data-sensor") for _, a in doc.elements if "data-sensor" in a]
    assert sensors and all(s == COMMENT for s in sensors)
    labels = [a.get("aria-label") for t, a in doc.elements if t == "svg" and "board-svg" in (a.get("class") or "")]
    assert labels == ["demo: board drawing"]


def test_embedded_json_cannot_end_its_script_block() -> None:
    page = render([_result()])
    doc = parse(page)
    data_text = next(body for a, body in doc.scripts if a.get("type") == "application/json")
    # HTML ends a script at "</script" and comments start with "<!--" (HTML Living Standard, script data state)
    assert "</" not in data_text and "<!--" not in data_text
    data = json.loads(data_text)
    messages = {f["message"] for f in data["findings"]}
    assert f"gap to {EVIL} too small" in messages
    # a finding without a place is not drawn, so the script does not get it
    assert len(data["findings"]) == 3


def test_json_for_script_escapes_and_round_trips() -> None:
    value = {"a": "</script><!-- & \u2028 \u2029 >", "n": float("inf"), "m": [float("nan"), 1.5]}
    text = json_for_script(value)
    assert "<" not in text and ">" not in text and "&" not in text and "\u2028" not in text
    assert json.loads(text) == {"a": "</script><!-- & \u2028 \u2029 >", "n": None, "m": [None, 1.5]}


# ---------------------------------------------------------------- offline, CSP, determinism


def test_page_is_self_contained() -> None:
    page = render([_result()])
    doc = parse(page)
    for tag, attrs in doc.elements:
        assert tag not in ("link", "img", "iframe", "object", "embed", "base"), tag
        assert "src" not in attrs, (tag, attrs)
        href = attrs.get("href")
        assert href is None or href.startswith("#"), (tag, href)
    for css in doc.styles:
        assert "url(" not in css and "@import" not in css
    # the only URL anywhere is the SVG namespace name, which is never fetched
    assert set(re.findall(r"https?://[^\s\"'<>]+", page)) == {"http://www.w3.org/2000/svg"}


def _sha(text: str) -> str:
    return "'sha256-" + base64.b64encode(hashlib.sha256(text.encode()).digest()).decode() + "'"


def test_csp_allows_exactly_our_script_and_style() -> None:
    doc = parse(render([_result()]))
    csp = next(a["content"] for t, a in doc.elements if t == "meta" and a.get("http-equiv") == "Content-Security-Policy")
    assert csp is not None and "default-src 'none'" in csp
    script = next(body for a, body in doc.scripts if not a.get("type"))
    assert f"script-src {_sha(script)};" in csp
    assert f"style-src {_sha(doc.styles[0])};" in csp


def test_same_result_same_bytes_and_no_time_unless_asked() -> None:
    a = render([_result()])
    b = render([_result()])
    assert a == b
    assert "2026-" not in a
    stamped = render([_result(timestamp="2026-12-02T05:00:00+00:00")])
    assert "2026-12-02T05:00:00+00:00" in stamped


# ---------------------------------------------------------------- content


def test_findings_listed_and_drawn() -> None:
    result = _result()
    doc = parse(render([result]))
    items = doc.with_class("fitem")
    marks = [a for t, a in doc.elements if t == "g" and "fmark" in (a.get("class") or "").split()]
    assert len(items) == len(result.findings)
    located = [f for f in result.findings if f.location.box_mm or f.location.x_mm is not None]
    assert len(marks) == len(located) == 3
    assert {m["data-fid"] for m in marks} <= {i["data-fid"] for i in items}
    assert [i for i in items if "data-unplaced" in i] and len([i for i in items if "data-unplaced" in i]) == 1
    # severities: worst first (error, warning, note, note)
    classes = [i["class"] for i in items]
    assert "sev-error" in classes[0] and "sev-warning" in classes[1] and "waived" in classes[1]
    text = "".join(doc.text)
    assert "measured 0.1 mm, limit 0.5 mm" in text
    assert "2027-01-31" in text  # the waiver's expiry
    assert "9.9.9" in text and "Estimates are not measurements" in text


def test_layers_are_switchable_groups() -> None:
    doc = parse(render([_result()]))
    targets = [a["data-target"] for t, a in doc.elements if t == "input" and "data-target" in a]
    ids = {a.get("id") for _, a in doc.elements}
    assert targets and all(t in ids for t in targets)
    layers = [a["data-layer"] for t, a in doc.elements if t == "g" and "data-layer" in a]
    for name in ("top-copper", "bottom-copper", "zones", "sensors", "outline", "drill", "findings"):
        assert name in layers


def test_curve_figure_and_nan_values() -> None:
    page = render([_result()])
    doc = parse(page)
    assert doc.with_class("curve") and doc.with_class("trace") and doc.with_class("turn")
    points = [a for a in doc.with_class("pt")]
    assert len(points) == 4
    assert "n/a" in "".join(doc.text)  # the NaN gap reads as n/a, not "nan"


def test_several_boards_one_page() -> None:
    page = render([_result("same"), _result("same")])
    doc = parse(page)
    ids = [a["id"] for _, a in doc.elements if a.get("id")]
    assert len(ids) == len(set(ids)), "element ids must be unique across boards"
    assert "same#2" in "".join(doc.text)
    assert len([a for a, _ in doc.scripts if a.get("type") == "application/json"]) == 2


def test_non_finite_places_are_listed_not_drawn() -> None:
    result = _result()
    result.findings.append(Finding("odd.place", "warning", "place lost", location=Location("top-copper", float("nan"), 1.0)))
    doc = parse(render([result]))
    assert len(doc.with_class("fitem")) == 5
    assert len([a for t, a in doc.elements if t == "g" and "fmark" in (a.get("class") or "").split()]) == 3
    assert not [a for t, a in doc.elements if t in ("circle", "rect") and "nan" in " ".join(str(v) for v in a.values())]


def test_result_without_drawing_says_so() -> None:
    result = _result()
    result.drawing = None
    doc = parse(render([result]))
    assert doc.with_class("no-drawing")
    assert len([a for t, a in doc.elements if t == "g" and "fmark" in (a.get("class") or "").split()]) == 3
    assert not parse(render([_result()])).with_class("no-drawing")


def test_no_results_still_a_page() -> None:
    doc = parse(render([]))
    assert "No boards were checked." in "".join(doc.text)


# ---------------------------------------------------------------- path data and the drawing


def _decode_path(d: str, grid: float) -> list[list[tuple[float, float]]]:
    """Rings back from our path data, following the SVG 1.1 path grammar (M absolute, l relative)."""
    rings = []
    for part in re.findall(r"M([^Mz]*)z", d):
        head, _, tail = part.partition("l")
        nums = [int(n) for n in re.findall(r"-?\d+", head)]
        deltas = [int(n) for n in re.findall(r"-?\d+", tail)]
        x, y = nums
        pts = [(x, y)]
        for i in range(0, len(deltas), 2):
            x += deltas[i]
            y += deltas[i + 1]
            pts.append((x, y))
        rings.append([(px * grid, -py * grid) for px, py in pts])
    return rings


def test_svg_path_data_round_trips() -> None:
    ring = [(0.0, 0.0), (1.25, 0.0), (1.25, -3.5), (0.0, 0.0)]
    d = svg_path_data([[ring]], 0.01)
    back = _decode_path(d, 0.01)
    assert len(back) == 1 and len(back[0]) == 3  # the closing vertex becomes "z"
    for p, q in zip(back[0], ring[:3], strict=True):
        assert math.isclose(p[0], q[0], abs_tol=1e-9) and math.isclose(p[1], q[1], abs_tol=1e-9)
    # the grid rounds to the nearest step: 1.004 -> 1.00, 1.006 -> 1.01
    (snapped,) = _decode_path(svg_path_data([[[(1.004, 0.0), (1.006, 1.0), (0.0, 1.0)]]], 0.01), 0.01)
    assert math.isclose(snapped[0][0], 1.0) and math.isclose(snapped[1][0], 1.01)
    # a ring that collapses to fewer than three grid points is dropped
    assert svg_path_data([[[(0.0, 0.0), (0.001, 0.0), (0.0, 0.001)]]], 0.01) == ""


def test_grid_is_a_round_step_not_above_half_the_tolerance() -> None:
    assert grid_for(0.02) == 0.01
    assert grid_for(0.05) == 0.02
    assert grid_for(0.002) == 0.001
    for tol in (0.003, 0.02, 0.07, 0.3, 0.64):
        assert grid_for(tol) <= tol / 2 + 1e-12


def _board(copper: list[shapely.Geometry]) -> Board:
    src = SourceRef("x.gbr")
    layers = [
        Layer(f"l{i}", "copper", "top" if i == 0 else "bottom", "x.gbr", copper_index=i + 1, dark=g)
        for i, g in enumerate(copper)
    ]
    return Board(
        name="t", source="t", layers=layers, outline=box(0, 0, 50, 30),
        holes=[Hole(5, 5, 1.0, True, src), Hole(10, 5, 1.0, False, src, end_x_mm=14, end_y_mm=5)],
    )


def _dense_copper() -> shapely.Geometry:
    """Round pads and arcs with many vertices: what simplification is for."""
    pads = [Point(3 + 2.2 * i, 3 + 2.2 * j).buffer(0.8, quad_segs=64) for i in range(20) for j in range(11)]
    wiggle = LineString([(x / 10, 15 + math.sin(x / 7)) for x in range(0, 480)]).buffer(0.3, quad_segs=32)
    return shapely.union_all([*pads, wiggle])


def test_drawing_stays_within_the_stated_tolerance() -> None:
    exact = _dense_copper()
    drawing = drawing_from_board(_board([exact]), tolerance_mm=0.02)
    assert drawing.simplify_tolerance_mm == 0.02
    drawn = [Polygon(p[0], p[1:]) for p in drawing.layers[0].polygons]
    parts = list(exact.geoms)
    assert len(drawn) == len(parts)  # nothing dropped, nothing merged
    bound = 0.02 + grid_for(0.02) * math.sqrt(2) / 2
    tree = shapely.STRtree(drawn)
    for part in parts:
        # its drawn counterpart: the drawn polygon that holds a point of the exact one
        (match,) = [drawn[i] for i in tree.query(part.point_on_surface(), predicate="intersects")]
        # Hausdorff distance (GEOS), boundary to boundary, part by part (quadratic, so kept small)
        assert shapely.hausdorff_distance(part.boundary, match.boundary, densify=0.25) <= bound + 1e-9
        # area moved by at most the boundary length times the distance bound (a band around the boundary)
        assert abs(match.area - part.area) <= part.boundary.length * bound
    # the drawing is smaller than the exact geometry (that is its point)
    assert sum(shapely.get_num_coordinates(drawn)) < shapely.get_num_coordinates(exact) / 2


def test_drawing_gets_coarser_to_fit_the_budget() -> None:
    exact = _dense_copper()
    fine = drawing_from_board(_board([exact]))
    fine_bytes = len(svg_path_data(fine.layers[0].polygons, grid_for(fine.simplify_tolerance_mm)))
    budget = fine_bytes // 3
    coarse = drawing_from_board(_board([exact]), max_bytes=budget)
    coarse_bytes = len(svg_path_data(coarse.layers[0].polygons, grid_for(coarse.simplify_tolerance_mm)))
    assert coarse.simplify_tolerance_mm > fine.simplify_tolerance_mm
    assert coarse_bytes <= budget
    # a budget nothing can meet stops at the coarsest tolerance rather than drawing nothing
    tiny = drawing_from_board(_board([exact]), max_bytes=10)
    assert tiny.simplify_tolerance_mm <= MAX_TOLERANCE_MM and tiny.layers[0].polygons
    assert DEFAULT_MAX_BYTES < 5_000_000


def test_small_features_survive_a_coarse_tolerance() -> None:
    # Douglas-Peucker alone collapses a ring smaller than its tolerance to nothing; a via pad
    # must still be drawn (as a coarser shape) however coarse the drawing gets
    pads = [Point(5 + i, 5).buffer(0.15, quad_segs=16) for i in range(5)]
    drawing = drawing_from_board(_board([shapely.union_all([*pads, box(0, 0, 3, 3)])]), tolerance_mm=0.5)
    assert len(drawing.layers[0].polygons) == 6
    for poly in drawing.layers[0].polygons:
        assert Polygon(poly[0]).area > 0


@pytest.mark.corpus
def test_corpus_board_drawn_within_tolerance(shared_dir: Path) -> None:
    """A real board (b03, its copper read by the board reader): every copper layer drawn, faithfully."""
    fab = shared_dir / "corpus" / "b03-wheel" / "fab"
    if not fab.is_dir():
        pytest.skip("corpus board b03-wheel is not there")
    from sensorcheck.board.build import load_board

    board = load_board(fab)
    drawing = drawing_from_board(board)
    tol = drawing.simplify_tolerance_mm
    bound = tol + grid_for(tol) * math.sqrt(2) / 2
    assert [layer.name for layer in drawing.layers] == [layer.name for layer in board.copper_layers()]
    for layer, drawn_layer in zip(board.copper_layers(), drawing.layers, strict=True):
        assert layer.dark is not None
        drawn = shapely.union_all([Polygon(p[0], p[1:]) for p in drawn_layer.polygons])
        # what moved lies in a band of half-width `bound` around the boundary: area <= 2 x length x bound
        moved = shapely.symmetric_difference(layer.dark, drawn).area
        assert moved <= 2 * layer.dark.boundary.length * bound
    page = render([Result(board=board.name, source="b03", tool_version="t", config_file=None, drawing=drawing)])
    assert len(page.encode()) < 5_000_000  # issue 5: the page stays under 5 MB


def test_drawing_outline_holes_and_slots() -> None:
    drawing = drawing_from_board(_board([box(1, 1, 2, 2), box(3, 3, 4, 4)]))
    assert [layer.name for layer in drawing.layers] == ["l0", "l1"]
    assert drawing.box_mm == (0.0, 0.0, 50.0, 30.0)
    assert len(drawing.outline) == 1 and len(drawing.outline[0]) == 5
    # a slot is drawn as a hole at each end
    assert sorted(drawing.holes) == [(5.0, 5.0, 1.0, True), (10.0, 5.0, 1.0, False), (14.0, 5.0, 1.0, False)]


def test_drawing_from_features_when_no_final_image() -> None:
    from sensorcheck.board.model import Feature

    src = SourceRef("x.gbr", 1)
    feats = [
        Feature(box(0, 0, 10, 10), "dark", "region", src),
        Feature(box(2, 2, 4, 4), "clear", "region", src),
        Feature(box(3, 3, 3.5, 3.5), "dark", "flash", src),
    ]
    board = Board(name="f", source="f", layers=[Layer("top-copper", "copper", "top", "x.gbr", copper_index=1, features=feats)])
    drawing = drawing_from_board(board)
    drawn = shapely.union_all([Polygon(p[0], p[1:]) for p in drawing.layers[0].polygons])
    # polarity in file order: 100 - 4 + 0.25 mm2 (Gerber spec, "Polarity" (LP) section: later objects draw over earlier)
    assert math.isclose(drawn.area, 96.25, abs_tol=1e-6)


def test_bad_tolerance_is_refused() -> None:
    with pytest.raises(ValueError):
        drawing_from_board(_board([box(0, 0, 1, 1)]), tolerance_mm=0)


def test_assets_are_package_data() -> None:
    root = Path(__file__).resolve().parents[2] / "sensorcheck" / "report" / "assets"
    assert (root / "review.css").is_file() and (root / "review.js").is_file()


def test_the_curve_the_turn_refers_to_is_drawn_and_named() -> None:
    # the case: monotonic over the most sensitive point, turning over the node centre
    result = _result()
    est = result.sensors[0].estimate
    assert est is not None
    est["curve"] = [[10.0, 1.0], [5.0, 0.97], [1.0, 0.93], [0.0, 0.92]]
    est["curve_centre"] = [[10.0, 1.0], [5.0, 0.95], [1.0, 0.9], [0.0, 0.93]]
    est["turning_curve"] = "centre"
    est["turning_point_mm"] = 1.2
    doc = parse(render([result]))
    traces = doc.with_class("trace")
    assert len(traces) == 2 and doc.with_class("trace-centre")
    text = "".join(doc.text)
    assert "turns at 1.2 mm (over the node centre)" in text
    assert "dashed: finger over the node centre" in text


def test_findings_show_fix_and_reference() -> None:
    result = _result()
    result.findings[0].fix = "Move the via out of the zone."
    result.findings[0].reference = "sensorcheck rules routing.foreign-via-in-zone"
    result.findings[0].direction = "max"
    text = "".join(parse(render([result])).text)
    assert "Fix: Move the via out of the zone." in text
    assert "sensorcheck rules routing.foreign-via-in-zone" in text
    assert "(max)" in text


def test_each_turn_and_sign_reversal_is_drawn_with_its_kind() -> None:
    # issue 15: a floating object over a mutual key (Cm falls, turns, rises above its baseline)
    result = _result()
    est = result.sensors[0].estimate
    assert est is not None
    est["curve"] = [[10.0, 1.0], [4.0, 0.98], [1.0, 1.0], [0.0, 1.03]]
    est["turning_point_mm"] = 4.0
    est["turnarounds"] = [{"height_mm": 4.0, "kind": "turns", "curve": "best"},
                          {"height_mm": 1.0, "kind": "reverses sign", "curve": "best"}]
    doc = parse(render([result]))
    assert len(doc.with_class("turn")) == 2
    text = "".join(doc.text)
    assert "turns at 4 mm" in text and "reverses sign at 1 mm" in text
    assert "the opposite of a touch" in text
