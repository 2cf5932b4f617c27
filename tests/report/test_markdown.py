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


def test_a_checklist_over_the_job_summary_limit_is_cut_with_a_note(results: list[Result]) -> None:
    # GitHub's runner drops a step summary over 1024 KiB whole ("supports content up to a size of
    # 1024k", its error message): the checklist stays under that and says where it was cut.
    from sensorcheck.report.markdown import SUMMARY_LIMIT_BYTES
    from sensorcheck.report.markdown import render as render_md

    assert SUMMARY_LIMIT_BYTES <= 1024 * 1024
    full = render_md(results)
    assert full == render(results, "markdown") and "Cut here" not in full
    limit = len(full.encode()) // 2
    cut = render_md(results, limit_bytes=limit)
    assert len(cut.encode()) <= limit
    assert "**Cut here:**" in cut and "more lines are left out" in cut
    head = cut.split("\n> **Cut here:**")[0].rstrip("\n")
    assert full.startswith(head)  # what is kept is the start of the full checklist, cut at a line
    for caution in results[0].cautions:  # the cautions are never cut
        assert caution.split(":")[0] in cut.split("**Cut here:**")[1]
    _, tokens = _tokens(cut)  # still Markdown that parses, no HTML out of the cut
    assert "html_block" not in {t.type for t in _walk(tokens)}
