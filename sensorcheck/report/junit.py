"""JUnit XML as CI systems read it (the de-facto schema is the Jenkins xunit plugin's junit-10.xsd).

- one ``testsuite`` per rule family per board, named ``BOARD.FAMILY``;
- one ``testcase`` per rule that ran (``classname`` ``sensorcheck.BOARD.FAMILY``, ``name`` the rule
  id, so name + classname is unique even for a batch of boards), a passing rule an empty test case,
  so the CI test count shows how many rules were checked;
- a ``failure`` when the rule has unwaived findings at error level (all of them listed in its
  body), ``error`` when the rule itself raised or an input could not be read (``type`` says which:
  internal-error, input-error; unreadable files appear under the ``input`` family), ``skipped`` when every finding
  the rule has is waived (message: the waivers' reasons);
- warnings, notes and waived findings next to failures are listed in ``system-out``.
No time attributes (the report is byte-identical for the same result); ``timestamp`` on the
suites only when the result carries one.
"""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET
from collections.abc import Sequence

from sensorcheck.report.common import (
    TOOL_NAME,
    board_labels,
    family_of,
    is_problem,
    full_message,
    ordered,
    rule_catalogue,
    rule_ids_run,
    safe_text,
    value_text,
)
from sensorcheck.findings import Finding, Result

# Characters XML 1.0 cannot hold even escaped (XML 1.0 section 2.2, production [2] Char).
_NOT_XML = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\ufffe\uffff\ud800-\udfff]")


def xml_text(text: str) -> str:
    """Text XML 1.0 can carry: characters outside its ``Char`` production shown as ``\\xNN``."""
    return _NOT_XML.sub(lambda m: f"\\x{ord(m.group()):02x}", text)


def _line(f: Finding) -> str:
    parts = [f"[{f.severity}] {f.rule_id}: {full_message(f)}"]
    vt = value_text(f)
    if vt:
        parts.append(f"({vt})")
    if f.nets:
        parts.append(f"nets {safe_text(', '.join(f.nets))}")
    if f.fingerprint:
        parts.append(f"fingerprint {f.fingerprint}")
    if f.waived_by is not None:
        parts.append(f"waived: {f.waived_by.reason}")
    return " ".join(parts)


def _testcase(suite: ET.Element, classname: str, rule_id: str, findings: list[Finding]) -> dict[str, int]:
    case = ET.SubElement(suite, "testcase", {"classname": xml_text(classname), "name": xml_text(rule_id)})
    internal = [f for f in findings if is_problem(f) and not f.waived]
    failing = [f for f in findings if f.kind == "finding" and not f.waived and f.severity == "error"]
    waived = [f for f in findings if f.waived]
    reported = {id(f) for f in failing} | {id(f) for f in internal}
    rest = [f for f in findings if id(f) not in reported]
    tally = {"failures": 0, "errors": 0, "skipped": 0}
    if internal:
        el = ET.SubElement(case, "error", {"type": internal[0].kind, "message": xml_text(safe_text(internal[0].message))})
        el.text = xml_text("\n".join(_line(f) for f in internal))
        tally["errors"] = 1
    if failing:
        head = full_message(failing[0])
        more = f" (and {len(failing) - 1} more)" if len(failing) > 1 else ""
        el = ET.SubElement(case, "failure", {"type": "error", "message": xml_text(head + more)})
        el.text = xml_text("\n".join(_line(f) for f in failing))
        tally["failures"] = 1
    if not internal and not failing and waived and len(waived) == len(findings):
        reasons = "; ".join(dict.fromkeys(f"waiver {w.waived_by.index}: {w.waived_by.reason}" for w in waived if w.waived_by))
        ET.SubElement(case, "skipped", {"message": xml_text(f"waived: {reasons}")})
        tally["skipped"] = 1
    if rest:
        out = ET.SubElement(case, "system-out")
        out.text = xml_text("\n".join(_line(f) for f in rest))
    return tally


def document(results: Sequence[Result]) -> ET.Element:
    """The ``testsuites`` element for a batch of results."""
    catalogue = rule_catalogue(results)
    root = ET.Element("testsuites", {"name": TOOL_NAME})
    totals = {"tests": 0, "failures": 0, "errors": 0}
    for result, label in zip(results, board_labels(results), strict=True):
        by_rule: dict[str, list[Finding]] = {}
        for f in ordered(result.findings):
            by_rule.setdefault(f.rule_id, []).append(f)
        families: dict[str, list[str]] = {}
        for rule_id in rule_ids_run(result):
            families.setdefault(family_of(rule_id, catalogue), []).append(rule_id)
        for family in sorted(families):
            suite_name = f"{label}.{family}"
            suite = ET.SubElement(root, "testsuite", {"name": xml_text(suite_name)})
            props = ET.SubElement(suite, "properties")
            ET.SubElement(props, "property", {"name": "board", "value": xml_text(result.board)})
            ET.SubElement(props, "property", {"name": "source", "value": xml_text(result.source)})
            ET.SubElement(props, "property", {"name": "config", "value": xml_text(result.config_file or "(defaults)")})
            tally = {"tests": 0, "failures": 0, "errors": 0, "skipped": 0}
            for rule_id in families[family]:
                t = _testcase(suite, f"{TOOL_NAME}.{label}.{family}", rule_id, by_rule.get(rule_id, []))
                tally["tests"] += 1
                for k, v in t.items():
                    tally[k] += v
            for k, v in tally.items():
                suite.set(k, str(v))
            if result.timestamp:
                suite.set("timestamp", result.timestamp)
            for k in totals:
                totals[k] += tally[k]
    for k, v in totals.items():
        root.set(k, str(v))
    return root


def render(results: Sequence[Result]) -> str:
    """The JUnit XML document (UTF-8 declaration, two-space indent, newline at the end)."""
    root = document(results)
    ET.indent(root, space="  ")
    return '<?xml version="1.0" encoding="UTF-8"?>\n' + ET.tostring(root, encoding="unicode") + "\n"
