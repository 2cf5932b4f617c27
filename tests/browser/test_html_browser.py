"""The review page in a real browser (headless Chromium), used as a reviewer would use it.

The page of the synthetic board in ``conftest.py`` is written to a file and opened from
``file://``. Checks: it loads with no console message of level error or warning and no page
error; the only request is the document itself; nothing from the board runs as script (a
``dialog`` would be an ``alert``); findings listed == findings drawn; a click on a finding
highlights its marker and zooms the view onto it; a layer switch hides its group (computed
style); keyboard and wheel change the view; a click on the board lists what is there.
Screenshots are kept in ``tests/artifacts`` (or ``$SENSORCHECK_ARTIFACTS``).
"""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest

from sensorcheck.report.html import render

pytestmark = pytest.mark.browser


def _view(page: Any) -> list[float]:
    return [float(v) for v in page.get_attribute("#b0-svg", "viewBox").split()]


@pytest.fixture(scope="module")
def session(
    browser: Any, review_board: dict[str, Any], tmp_path_factory: pytest.TempPathFactory
) -> Iterator[dict[str, Any]]:
    result = review_board["result"]
    path: Path = tmp_path_factory.mktemp("review") / "review.html"
    path.write_text(render([result]), encoding="utf-8")
    context = browser.new_context(viewport={"width": 1400, "height": 1000}, device_scale_factor=1)
    page = context.new_page()
    console: list[tuple[str, str]] = []
    errors: list[str] = []
    requests: list[str] = []
    dialogs: list[str] = []
    page.on("console", lambda m: console.append((m.type, m.text)))
    page.on("pageerror", lambda e: errors.append(str(e)))
    page.on("request", lambda r: requests.append(r.url))

    def on_dialog(d: Any) -> None:
        dialogs.append(d.message)
        d.dismiss()

    page.on("dialog", on_dialog)
    page.goto(path.as_uri(), wait_until="load")
    page.wait_for_selector("html[data-ready]")
    yield {"page": page, "result": result, "path": path, "console": console, "errors": errors,
           "requests": requests, "dialogs": dialogs, "shots": review_board["artifacts"],
           "evil_net": review_board["evil_net"], "evil_sensor": review_board["evil_sensor"]}
    context.close()


def test_loads_clean_and_offline(session: dict[str, Any]) -> None:
    page = session["page"]
    page.screenshot(path=str(session["shots"] / "review-board.png"))
    page.screenshot(path=str(session["shots"] / "review-full.png"), full_page=True)
    assert session["errors"] == []
    assert [m for m in session["console"] if m[0] in ("error", "warning")] == []
    assert session["requests"] == [session["path"].as_uri()]
    assert session["dialogs"] == []


def test_board_text_shows_as_text(session: dict[str, Any]) -> None:
    page = session["page"]
    text = page.inner_text("body")
    assert session["evil_net"] in text
    assert session["evil_sensor"] in text
    # the only script elements are ours: the page script and the board data block
    assert page.eval_on_selector_all("script", "s => s.map(e => e.type || 'js')") == ["application/json", "js"]
    assert session["dialogs"] == []


def test_list_and_board_agree(session: dict[str, Any]) -> None:
    page = session["page"]
    findings = session["result"].findings
    located = [f for f in findings if f.location.box_mm or f.location.x_mm is not None]
    assert page.locator(".fitem").count() == len(findings)
    assert page.locator("svg .fmark").count() == len(located)
    assert page.locator(".fitem:not([data-unplaced])").count() == page.locator("svg .fmark").count()


def test_click_finding_highlights_and_zooms(session: dict[str, Any]) -> None:
    page = session["page"]
    page.keyboard.press("Escape")
    page.focus("#b0 .canvas")
    page.keyboard.press("0")
    home = _view(page)
    # the error at B1's pour clearance: (14.9, 32.4) mm in the synthetic board
    target = next(f for f in session["result"].findings if f.rule_id == "clearance.electrode-to-ground")
    item = page.locator(".fitem", has_text="clearance.electrode-to-ground")
    fid = item.get_attribute("data-fid")
    item.locator(".fbtn").click()
    mark = page.locator(f'svg .fmark[data-fid="{fid}"]')
    assert "hl" in mark.get_attribute("class").split()
    assert page.locator("svg .fmark.hl").count() == 1
    assert "sel" in item.get_attribute("class").split()
    x, y, w, h = _view(page)
    assert w < home[2] / 3 and h < home[3] / 3, "the view zooms in"
    px, py = target.location.x_mm, -target.location.y_mm  # SVG y points down
    assert x <= px <= x + w and y <= py <= y + h, "the finding is in view"
    assert mark.evaluate("m => getComputedStyle(m.querySelector('.halo')).display") != "none"
    page.screenshot(path=str(session["shots"] / "review-finding-selected.png"))


def test_layer_switch_hides_the_layer(session: dict[str, Any]) -> None:
    page = session["page"]
    group = page.locator('svg g.copper[data-layer="top-copper"]')
    assert group.evaluate("g => getComputedStyle(g).display") != "none"
    box = page.locator('input[data-target="' + group.get_attribute("id") + '"]')
    box.uncheck()
    assert group.evaluate("g => getComputedStyle(g).display") == "none"
    assert group.evaluate("g => g.getBoundingClientRect().width") == 0
    page.screenshot(path=str(session["shots"] / "review-top-copper-off.png"))
    box.check()
    assert group.evaluate("g => getComputedStyle(g).display") != "none"
    # the drill preset leaves copper off and outline and drill on
    page.click("button.preset:text-is('Drill')")
    assert group.evaluate("g => getComputedStyle(g).display") == "none"
    assert page.locator("#b0-drill").evaluate("g => getComputedStyle(g).display") != "none"
    page.click("button.preset:text-is('All')")
    assert group.evaluate("g => getComputedStyle(g).display") != "none"


def test_keyboard_and_wheel_move_the_view(session: dict[str, Any]) -> None:
    page = session["page"]
    page.focus(".canvas")
    page.keyboard.press("0")
    home = _view(page)
    page.keyboard.press("+")
    zoomed = _view(page)
    assert zoomed[2] < home[2]
    page.keyboard.press("ArrowRight")
    assert _view(page)[0] > zoomed[0]
    page.keyboard.press("0")
    assert _view(page) == home
    bbox = page.locator("#b0-svg").bounding_box()
    page.mouse.move(bbox["x"] + bbox["width"] / 2, bbox["y"] + bbox["height"] / 2)
    page.mouse.wheel(0, -300)
    assert _view(page)[2] < home[2]
    # drag pans
    before = _view(page)
    cx, cy = bbox["x"] + bbox["width"] / 2, bbox["y"] + bbox["height"] / 2
    page.mouse.move(cx, cy)
    page.mouse.down()
    page.mouse.move(cx + 80, cy + 30, steps=4)
    page.mouse.up()
    after = _view(page)
    assert after[0] < before[0] and after[1] < before[1] and after[2] == before[2]
    page.keyboard.press("0")


def test_click_on_board_lists_what_is_there(session: dict[str, Any]) -> None:
    page = session["page"]
    page.focus(".canvas")
    page.keyboard.press("0")
    target = next(f for f in session["result"].findings if f.rule_id == "clearance.electrode-to-ground")
    # where the finding's point is on screen, from the SVG's own transform
    sx, sy = page.evaluate(
        "([x, y]) => { const s = document.querySelector('#b0-svg'); const p = s.createSVGPoint();"
        " p.x = x; p.y = y; const q = p.matrixTransform(s.getScreenCTM()); return [q.x, q.y]; }",
        [target.location.x_mm, -target.location.y_mm],
    )
    page.mouse.click(sx, sy)
    here = page.inner_text(".here")
    assert "clearance.electrode-to-ground" in here
    assert "top-copper" in here  # B1's electrode is top copper
    assert "B1" in here
    assert "x 14.9" in here or "x 14.8" in here or "x 15.0" in here


def test_show_sensor_on_board(session: dict[str, Any]) -> None:
    page = session["page"]
    page.focus(".canvas")
    page.keyboard.press("0")
    home = _view(page)
    card = page.locator(".sensor-card", has=page.locator("h4", has_text="K1"))
    card.locator("button.show-sensor").click()
    group = page.locator('svg g.sensor[data-sensor="K1"]')
    assert "hl" in group.get_attribute("class").split()
    x, y, w, h = _view(page)
    # K1 spans (52, 26)-(67, 41) mm in the synthetic board: all of it in view, and the view is closer
    assert x <= 52 and x + w >= 67 and y <= -41 and y + h >= -26
    assert w < home[2]
    page.keyboard.press("0")


DEMO = Path(__file__).resolve().parents[2] / "boards"


def test_demo_boards_page(browser: Any, review_board: dict[str, Any], tmp_path: Path) -> None:
    """Both demo boards through the whole check, on one page: clean load, list and board agree."""
    from sensorcheck.check import CheckOptions, check_board

    folders = [DEMO / "tm1-clean" / "fab", DEMO / "tm1-flawed" / "fab"]
    if not all(f.is_dir() for f in folders):
        pytest.skip("the demo boards (boards/tm1-*) are not there; boards/make_demo.py writes them")
    results = [check_board(f, CheckOptions(with_drawing=True, estimate=False)) for f in folders]
    path = tmp_path / "demo.html"
    path.write_text(render(results), encoding="utf-8")
    page = browser.new_page(viewport={"width": 1400, "height": 1000})
    problems: list[str] = []
    requests: list[str] = []
    page.on("pageerror", lambda e: problems.append(str(e)))
    page.on("console", lambda m: problems.append(m.text) if m.type in ("error", "warning") else None)
    page.on("request", lambda r: requests.append(r.url))
    page.goto(path.as_uri(), wait_until="load")
    page.wait_for_selector("html[data-ready]")
    assert problems == [] and requests == [path.as_uri()]
    for i, result in enumerate(results):
        section = page.locator(f"section.board#b{i}")
        located = [f for f in result.findings if f.location.box_mm or f.location.x_mm is not None]
        assert section.locator(".fitem").count() == len(result.findings)
        assert section.locator("svg .fmark").count() == len(located)
        # every copper layer of the board is drawn and has a switch
        copper = [layer.name for layer in (result.drawing.layers if result.drawing else [])]
        assert copper and section.locator("svg g.copper").count() == len(copper)
    # the flawed board has findings on the drawing: select the first one, on the second board
    flawed = page.locator("section.board#b1")
    first = flawed.locator(".fitem:not([data-unplaced]) .fbtn").first
    fid = first.get_attribute("data-fid")
    first.click()
    assert "hl" in flawed.locator(f'svg .fmark[data-fid="{fid}"]').get_attribute("class").split()
    assert page.locator("section.board#b0 svg .fmark.hl").count() == 0  # the other board is untouched
    flawed.locator(".canvas").scroll_into_view_if_needed()
    page.screenshot(path=str(review_board["artifacts"] / "review-demo-flawed.png"))
    page.close()
