"""Markdown checklist, parsed back with markdown-it-py (an independent CommonMark + GFM-table
parser): hostile names must not become HTML, links or extra table cells."""

from __future__ import annotations

import pytest

from sensorcheck.report import render
from sensorcheck.findings import Result

from .sample import HOSTILE_NETS

markdown_it = pytest.importorskip("markdown_it")


def _tokens(text: str):  # type: ignore[no-untyped-def]
    md = markdown_it.MarkdownIt("commonmark").enable("table")
    return md, md.parse(text)


def _walk(tokens):  # type: ignore[no-untyped-def]
    for t in tokens:
        yield t
        if t.children:
            yield from _walk(t.children)


def test_no_markup_from_board_text(results: list[Result]) -> None:
    text = render(results, "markdown")
    md, tokens = _tokens(text)
    kinds = {t.type for t in _walk(tokens)}
    assert "html_inline" not in kinds and "html_block" not in kinds
    assert "link_open" not in kinds and "em_open" not in kinds
    html = md.render(text)
    assert "<script>" not in html and "&lt;script&gt;alert(1)&lt;/script&gt;" in html


def test_tables_keep_their_columns(results: list[Result]) -> None:
    _, tokens = _tokens(render(results, "markdown"))
    rows: list[int] = []
    cells = 0
    for t in tokens:
        if t.type == "tr_open":
            cells = 0
        elif t.type in ("th_open", "td_open"):
            cells += 1
        elif t.type == "tr_close":
            rows.append(cells)
        elif t.type == "table_close":
            assert len(set(rows)) == 1, rows  # every row as wide as the header
            rows = []


def test_checklist_content(one_board: list[Result]) -> None:
    text = render(one_board, "markdown")
    lines = text.splitlines()
    items = [line for line in lines if line.startswith("- [ ] ")]
    assert "- [ ] Measure the touch signal with a 2 mm PMMA overlay on the prototype." in items
    assert "- [ ] Scope the LED1 PWM edge on the RX line of the prototype." in items  # Finding.review
    assert "- [ ] Confirm the hatch pitch on the fabricated board." in items
    assert "| gap\\_mm | 0.5 |" in lines  # sensor values
    assert "**Result: FAIL (2 errors, 1 warning, 1 note, 1 internal error)**" in lines  # K1's verdict
    assert "**Result: REVIEW (1 note, 1 waived)**" in lines
    # B1 has findings of three rules; the other four that ran are listed as passing for it.
    assert "Found nothing on this sensor (4 rules): area.rx-to-ground, estimate.turnaround, gap.tx-rx-vs-overlay, routing.via-in-zone" in lines
    assert any("BEM 2.5-D, 412 panels" in line for line in lines)  # estimate with its model
    assert "- overlay thinner than the model's validity range" in lines  # and its notes
    assert any(line.startswith("| routing.aggressor-near-trace |") and "fail: 2 errors" in line for line in lines)
    assert any(line.startswith("| hatch.fill-near-sensor |") and "pass" in line for line in lines)
    assert "## Before you rely on this" in lines
    assert any("licensed practice" in line for line in lines)
    assert any("thin \\<b\\>glass\\</b\\>" in line for line in lines)  # waiver reason, escaped
    assert HOSTILE_NETS[0] not in text
