"""Review page size and load time on real boards, measured in headless Chromium.

Targets (issue 5): the page of the largest corpus board stays under 5 MB and reaches its load
event in under 2 s from navigation start, by the browser's own clock
(``PerformanceNavigationTiming.loadEventEnd``, W3C Navigation Timing Level 2).

For each board: the check runs (``check_board`` with the drawing, estimates off unless
``--estimate``), the page is rendered and written, then opened ``--runs`` times in a fresh tab;
the bench prints the page size, the drawing tolerance used, the time to draw and render, and
min/median/max of the load time, next to an empty page's load time measured in the same browser
as the baseline. A screenshot of each page is kept beside it.

    python bench/bench_html.py                      # b01, b03, b06 from ../shared/corpus
    python bench/bench_html.py --out /tmp/pages b03-wheel --runs 5
"""

from __future__ import annotations

import argparse
import statistics
import sys
import tempfile
import time
from pathlib import Path
from typing import Any

REPO = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(REPO))
sys.path.insert(0, str(REPO / "tests" / "browser"))  # the one Chromium launcher

from sensorcheck.board.build import load_board  # noqa: E402
from sensorcheck.board.drawing import drawing_from_board  # noqa: E402
from sensorcheck.check import CheckOptions, check_board  # noqa: E402
from sensorcheck.report.html import render  # noqa: E402
from sensorcheck.findings import Result  # noqa: E402

from headless_chromium import launch  # noqa: E402

CORPUS = REPO.parent / "shared" / "corpus"
DEFAULT_BOARDS = ("b01-slider-proto", "b03-wheel", "b06-keyboard")
LIMIT_BYTES = 5_000_000
LIMIT_LOAD_S = 2.0
#: configs of our own for the corpus boards (roles from their net names), so that sensors show
_OVERLAY = """
[[overlay.layers]]
material = "pmma"
thickness_mm = 2.0
"""
BENCH_CONFIGS = {
    "b01-slider-proto": 'profile = "default"\n[roles]\nself = ["*SLIDER_KEY*", "*SPATIAL_KEY*", "*RESISTIVE_KEY*"]\n'
    'ground = ["GND"]\n' + _OVERLAY,
    "b03-wheel": 'profile = "default"\n[board]\nface = "bottom"\n[roles]\nself = ["/TOUCH*"]\nground = ["GND"]\n'
    '[[sensors]]\nname = "wheel"\nkind = "wheel"\nnets = ["/TOUCH0", "/TOUCH1", "/TOUCH2"]\n' + _OVERLAY,
    "b06-keyboard": 'profile = "default"\n[roles]\nself = ["Net-(J*-Pad1)"]\nground = ["GND"]\n' + _OVERLAY,
}
LOAD_JS = """() => {
  const n = performance.getEntriesByType('navigation')[0];
  return [n.loadEventEnd - n.startTime, n.domContentLoadedEventEnd - n.startTime];
}"""


def _result_for(fab: Path, estimate: bool, config: Path | None) -> tuple[Result, float]:
    """The check's result with its drawing, and the seconds the drawing alone takes."""
    result = check_board(fab, CheckOptions(config_file=config, with_drawing=True, estimate=estimate))
    board = load_board(fab)
    t0 = time.perf_counter()
    drawing = drawing_from_board(board)
    seconds = time.perf_counter() - t0
    if result.drawing is None:  # the check stopped early: still show the board
        result.drawing = drawing
    return result, seconds


def _stress_result() -> Result:
    """A made-up board far denser than any corpus board, so that the size budget has to act.

    Two 200 x 150 mm layers: 45 880 round pads (64 segments a quarter) and a fine 45-degree hatch.
    """
    import shapely
    from shapely.geometry import LineString, Point, box

    from sensorcheck.board.model import Board, Layer

    pads = [Point(1 + 0.8 * i, 1 + 0.8 * j).buffer(0.3, quad_segs=64) for i in range(248) for j in range(185)]
    lines = []
    for k in range(0, 700):
        x = k * 0.5
        lines.append(LineString([(x, 0), (x - 150, 150)]).buffer(0.1, cap_style="flat"))
    hatch = shapely.union_all(lines).intersection(box(0, 0, 200, 150))
    board = Board(
        name="stress", source="synthetic", outline=box(0, 0, 200, 150),
        layers=[
            Layer("top-copper", "copper", "top", "top", copper_index=1, dark=shapely.multipolygons(pads)),
            Layer("bottom-copper", "copper", "bottom", "bottom", copper_index=2, dark=hatch),
        ],
    )
    return Result(board="stress", source="synthetic", tool_version="bench", config_file=None,
                  drawing=drawing_from_board(board))


def _load_times(browser: Any, url: str, runs: int, shot: Path | None) -> list[tuple[float, float]]:
    times = []
    for i in range(runs):
        page = browser.new_page(viewport={"width": 1400, "height": 1000})
        errors: list[str] = []
        page.on("pageerror", lambda e: errors.append(str(e)))
        page.on("console", lambda m: errors.append(m.text) if m.type == "error" else None)
        page.goto(url, wait_until="load")
        page.wait_for_function("performance.getEntriesByType('navigation')[0].loadEventEnd > 0")
        load_ms, dcl_ms = page.evaluate(LOAD_JS)
        times.append((load_ms / 1000.0, dcl_ms / 1000.0))
        if errors:
            print(f"  page errors: {errors[:3]}")
        if shot is not None and i == 0:
            page.wait_for_selector("html[data-ready]")
            page.screenshot(path=str(shot))
        page.close()
    return times


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("boards", nargs="*", default=list(DEFAULT_BOARDS))
    ap.add_argument("--out", type=Path, default=None, help="folder for the pages and screenshots")
    ap.add_argument("--runs", type=int, default=3)
    ap.add_argument("--estimate", action="store_true", help="run the field solver too (slower)")
    ap.add_argument("--chromium", default=None, help="the browser (default: Debian's chromium)")
    ap.add_argument("--stress", action="store_true", help="also a made-up board too dense for the budget")
    ap.add_argument("--no-config", action="store_true", help="check without the bench's own role configs")
    args = ap.parse_args(argv)
    if not CORPUS.is_dir():
        print(f"no corpus at {CORPUS}: nothing to measure")
        return 0
    out = args.out or Path(tempfile.mkdtemp(prefix="sensorcheck-html-"))
    out.mkdir(parents=True, exist_ok=True)
    from playwright.sync_api import sync_playwright

    with sync_playwright() as pw:
        browser = launch(pw, args.chromium)
        empty = out / "empty.html"
        empty.write_text(render([]), encoding="utf-8")
        base = _load_times(browser, empty.as_uri(), args.runs, None)
        base_med = statistics.median(t for t, _ in base)
        print(f"baseline (empty page): load median {base_med * 1000:.0f} ms")
        print(f"{'board':<20} {'page MB':>8} {'tol mm':>7} {'draw s':>7} {'render s':>8} "
              f"{'load ms min/med/max':>22} {'x base':>7}  verdict")
        worst_ok = True
        for name in [*args.boards, *(["stress"] if args.stress else [])]:
            if name == "stress":
                t0 = time.perf_counter()
                result = _stress_result()
                draw_s = time.perf_counter() - t0
            else:
                fab = CORPUS / name / "fab"
                if not fab.is_dir():
                    print(f"{name:<20} missing")
                    continue
                config = None
                if name in BENCH_CONFIGS and not args.no_config:
                    config = out / f"{name}.toml"
                    config.write_text(BENCH_CONFIGS[name], encoding="utf-8")
                result, draw_s = _result_for(fab, args.estimate, config)
            t0 = time.perf_counter()
            page = render([result])
            render_s = time.perf_counter() - t0
            path = out / f"{name}.html"
            path.write_text(page, encoding="utf-8")
            size = path.stat().st_size
            times = _load_times(browser, path.as_uri(), args.runs, out / f"{name}.png")
            loads = sorted(t for t, _ in times)
            med = statistics.median(loads)
            ok = size < LIMIT_BYTES and loads[-1] < LIMIT_LOAD_S
            worst_ok = worst_ok and ok
            tol = result.drawing.simplify_tolerance_mm if result.drawing else float("nan")
            print(
                f"{name:<20} {size / 1e6:>8.2f} {tol:>7.3f} {draw_s:>7.2f} {render_s:>8.2f} "
                f"{loads[0] * 1000:>6.0f}/{med * 1000:>5.0f}/{loads[-1] * 1000:>5.0f} ms "
                f"{med / base_med:>6.1f}x  {'ok' if ok else 'OVER'} "
                f"({len(result.findings)} findings, {len(result.sensors)} sensors)"
            )
        browser.close()
    print(f"pages and screenshots in {out}")
    print(f"targets: page < {LIMIT_BYTES / 1e6:.0f} MB, load event < {LIMIT_LOAD_S:.0f} s: {'met' if worst_ok else 'NOT met'}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
