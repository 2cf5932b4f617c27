"""JUnit XML validated against the Jenkins xunit plugin's junit-10.xsd (vendored with its MIT
licence in data/, see data/README.md) with xmlschema, and read back with the standard library's
XML parser."""

from __future__ import annotations

import xml.etree.ElementTree as ET
from pathlib import Path

import pytest

from sensorcheck.report import render
from sensorcheck.findings import Result

from .sample import HOSTILE_NETS, HOSTILE_SENSOR

xmlschema = pytest.importorskip("xmlschema")
XSD = Path(__file__).parent / "data" / "junit-10.xsd"


@pytest.fixture(scope="module")
def schema():  # type: ignore[no-untyped-def]
    return xmlschema.XMLSchema(str(XSD))


def test_valid_against_junit_10_xsd(schema, results: list[Result]) -> None:  # type: ignore[no-untyped-def]
    schema.validate(render(results, "junit"))
    schema.validate(render([], "junit"))


def test_xsd_check_can_fail(schema, results: list[Result]) -> None:  # type: ignore[no-untyped-def]
    # junit-10.xsd requires "name" on testcase: drop it and the validator must object.
    bad = render(results, "junit").replace('name="routing.via-in-zone"', "", 1)
    assert not schema.is_valid(bad)


def test_structure(results: list[Result]) -> None:
    root = ET.fromstring(render(results, "junit"))
    suites = root.findall("testsuite")
    names = [s.get("name") for s in suites]
    # One suite per rule family per board.
    assert names == [
        "panel-a.area", "panel-a.estimate", "panel-a.gap", "panel-a.hatch", "panel-a.routing",
        "panel-b.area", "panel-b.gap", "panel-b.input", "panel-b.routing",
    ]  # fmt: skip
    cases = root.findall(".//testcase")
    keys = [(c.get("classname"), c.get("name")) for c in cases]
    assert len(keys) == len(set(keys)), "GitLab needs unique name+classname"
    # One test case per rule that ran: 7 on panel-a, 4 on panel-b, passing rules included, and one
    # for the file panel-b could not read.
    assert len(cases) == 7 + 4 + 1
    assert root.get("tests") == "12"
    by_key = {(c.get("classname"), c.get("name")): c for c in cases}
    agg = by_key[("sensorcheck.panel-a.routing", "routing.aggressor-near-trace")]
    (fail,) = agg.findall("failure")
    assert "(and 1 more)" in fail.get("message", "")
    assert fail.text is not None and fail.text.count("\n") == 1  # both error findings listed
    # Passing rule: an empty test case.
    passing = by_key[("sensorcheck.panel-b.gap", "gap.electrode-ground")]
    assert list(passing) == []
    # Warnings only: passes, findings in system-out.
    hatch = by_key[("sensorcheck.panel-a.hatch", "hatch.fill-near-sensor")]
    assert hatch.find("failure") is None and "hatch fill 72" in (hatch.findtext("system-out") or "")
    # A rule that raised: an <error>.
    est = by_key[("sensorcheck.panel-a.estimate", "estimate.turnaround")]
    assert est.find("error") is not None and est.find("error").get("type") == "internal-error"  # type: ignore[union-attr]
    unread = by_key[("sensorcheck.panel-b.input", "input.unreadable")]
    assert unread.find("error").get("type") == "input-error"  # type: ignore[union-attr]
    assert "unknown aperture D999" in (unread.find("error").text or "")  # type: ignore[union-attr]
    # Counts add up per suite.
    for s in suites:
        tc = s.findall("testcase")
        assert s.get("tests") == str(len(tc))
        assert s.get("failures") == str(sum(1 for c in tc if c.find("failure") is not None))
        assert s.get("errors") == str(sum(1 for c in tc if c.find("error") is not None))
        assert s.get("skipped") == str(sum(1 for c in tc if c.find("skipped") is not None))


def test_all_waived_rule_is_skipped_with_reason(one_board: list[Result]) -> None:
    res = one_board[0]
    res.findings = [f for f in res.findings if not (f.rule_id == "gap.tx-rx-vs-overlay" and not f.waived)]
    root = ET.fromstring(render(one_board, "junit"))
    case = next(c for c in root.iter("testcase") if c.get("name") == "gap.tx-rx-vs-overlay")
    skipped = case.find("skipped")
    assert skipped is not None
    # The reason (with its line break shown, as XML attribute values normalise raw ones).
    assert "thin <b>glass</b> | front\npanel" in skipped.get("message", "")


def test_hostile_names_round_trip(schema, one_board: list[Result]) -> None:  # type: ignore[no-untyped-def]
    text = render(one_board, "junit")
    schema.validate(text)
    root = ET.fromstring(text)
    body = "".join(root.itertext()) + " ".join(v for el in root.iter() for v in el.attrib.values())
    assert "<script>alert(1)</script>" in body  # as text, parsed back from escaped XML
    assert "\x1b" not in body  # XML 1.0 cannot carry ESC: shown as \x1b
    assert "\\x1b[31mRED" in body
    assert HOSTILE_NETS[1] in body and "K<i>9</i>|" in body and HOSTILE_SENSOR not in body
