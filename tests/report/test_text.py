"""Terminal report: content, and no control codes unless colour is asked for (ECMA-48 control
sequences start with ESC, 0x1b; C1 CSI is 0x9b)."""

from __future__ import annotations

import os
import re
import subprocess
import sys
from pathlib import Path

from sensorcheck.report import render
from sensorcheck.report.text import render as render_text
from sensorcheck.findings import Result

_CONTROL = re.compile("[\x00-\x08\x0b-\x1f\x7f-\x9f]")


def test_plain_text_has_no_control_codes(results: list[Result]) -> None:
    text = render(results, "text", detail="verbose")  # verbose: the nets are listed too
    assert not _CONTROL.search(text)
    assert "\u202e" not in text  # the bidi override is shown as an escape, not obeyed
    assert "\\u202egnp.exe" in text
    assert "\\x1b[31mRED" in text


def test_colour_only_when_asked(results: list[Result]) -> None:
    assert "\x1b[" in render_text(results, color=True)


def test_environment_cannot_force_colour(tmp_path: Path) -> None:
    # rich honours FORCE_COLOR/TTY_COMPATIBLE when not told otherwise; our choice overrides them.
    code = (
        "import sys; sys.path.insert(0, sys.argv[1]);"
        "from report.sample import make_results; from sensorcheck.report import render;"
        "sys.stdout.write(render(make_results(), 'text'))"
    )
    env = {**os.environ, "FORCE_COLOR": "1", "TTY_COMPATIBLE": "1", "COLUMNS": "40"}
    tests_dir = str(Path(__file__).resolve().parents[1])
    out = subprocess.run([sys.executable, "-c", code, tests_dir], env=env, capture_output=True, text=True, check=True).stdout
    assert not _CONTROL.search(out)
    assert max(len(line) for line in out.splitlines()) <= 100  # width fixed, not COLUMNS


def test_content(one_board: list[Result]) -> None:
    text = render_text(one_board, width=160)  # wide enough that no cell wraps
    lines = text.splitlines()
    # Grouped by severity (worst first), then rule.
    heads = [line for line in lines if re.match(r"^(ERRORS|WARNINGS|NOTES) \(\d+\)$", line)]
    assert heads == ["ERRORS (3)", "WARNINGS (3)", "NOTES (3)"]
    assert text.index("routing.aggressor-near-trace") < text.index("routing.via-in-zone") < text.index("WARNINGS")
    # Sensor table with key numbers (human labels, 3 significant digits) and the estimate's model once.
    assert "rx area mm2 28.3" in text and "Estimates (all sensors): BEM 2.5-D, 412 panels" in text
    assert text.count("BEM 2.5-D, 412 panels") == 1
    # Waived with reason, internal errors, notes, cautions.
    assert "reason: thin <b>glass</b> | front\\npanel, 50% approved (until 2027-06-30)" in text
    assert "INTERNAL ERRORS (1)" in text and "singular matrix" in text
    assert "no job file: stackup from sensorcheck.toml" in text
    assert "Caution: Estimates are not measurements" in text
    assert "3 errors, 3 warnings, 3 notes, 1 waived, 1 internal error; 7 rules measured" in text
    assert "estimate note (K1): overlay thinner than the model's validity range" in text
    # Per-sensor verdict beside its numbers, on the sensor's row.
    k1_row = next(line for line in lines if line.startswith("  K1 "))
    assert "FAIL (2 errors, 1 warning, 1 note, 1 internal error)" in k1_row
    # Markup in names is shown, not interpreted (the nets are listed with --verbose).
    assert "[bold]B[/bold] & <b>" in render(one_board, "text", width=160, detail="verbose")


def test_overlay_stack_is_listed(one_board: list[Result]) -> None:
    one_board[0].overlay = {
        "face": "top",
        "layers": [
            {"name": "pmma", "thickness_mm": 2.0, "epsilon_r": 2.6, "epsilon_source": "handbook", "kind": "overlay"},
            {"name": "adhesive", "thickness_mm": 0.05, "epsilon_r": 3.0, "epsilon_source": "config", "kind": "adhesive"},
        ],
    }
    short = render(one_board, "text")
    assert "overlay: over the top face: pmma 2 mm (eps_r 2.6), adhesive 0.05 mm (eps_r 3)" in short
    text = render(one_board, "text", detail="verbose")  # the whole stack with its sources
    assert "overlay: face = top" in text
    assert "layer: pmma 2 mm eps_r 2.6 overlay (permittivity: handbook)" in text
    assert "layer: adhesive 0.05 mm eps_r 3 adhesive (permittivity: config)" in text


def test_unreadable_input_is_listed(results: list[Result]) -> None:
    text = render(results, "text")
    assert "INPUT ERRORS (1): these inputs could not be read" in text
    assert "b/inner.gbr:57" in text
    assert "1 error, 1 warning, 1 note, 0 waived, 1 input error; 4 rules measured" in text


def test_grouped_findings_list_places_and_not_checked_notes_are_one_line() -> None:
    from sensorcheck.findings import Finding, Location

    places = [Location(layer="bottom-copper", x_mm=float(x), y_mm=2.0) for x in range(6)]
    grouped = Finding(rule_id="routing.trace-under-electrode", severity="error",
                      message="trace runs under the electrode [worst of 6 places]", value=0.6, limit=0.0,
                      unit="mm2", location=places[0], related=places, sensor="slider", places=6,
                      direction="max", fix="Route the trace around the other electrode.")
    skipped = [Finding(rule_id=f"gap.rule-{i}", severity="note",
                       message="not checked: no overlay (cover plate) was given: add [[overlay.layers]]")
               for i in range(5)]
    result = Result(board="b", source="fab", tool_version="0", config_file=None, findings=[grouped, *skipped])
    text = render_text([result], width=100)
    assert "6 places (mm): (0.00, 2.00), (1.00, 2.00), (2.00, 2.00), (3.00, 2.00), +2 more" in text
    assert "measured 0.6 mm2, limit 0 mm2 (max)" in text
    assert "fix: Route the trace around the other electrode." in text
    lines = [line for line in text.splitlines() if "no overlay" in line]
    assert len(lines) == 1 and lines[0].startswith("NOT CHECKED (5 rules)")
    assert "0 rules measured, 5 not checked" in text  # the summary counts rules that measured
    verbose = render_text([result], width=200, detail="verbose")
    assert "(5.00, 2.00)" in verbose  # every place with --verbose
