"""Reports: a check's :class:`~sensorcheck.findings.Result` list rendered for people and machines.

Formats (``--report FORMAT[:FILE]``): ``text`` (terminal), ``json`` (our own schema, the baseline
format), ``sarif`` (2.1.0), ``junit``, ``codequality`` (GitLab), ``github`` (workflow
annotations), ``markdown`` (review checklist), ``html`` (review page) and ``gerber`` (findings
as a Gerber X2 layer). A report knows only what a finding carries: no Gerber reading, no geometry.
"""

from __future__ import annotations

from sensorcheck.report.common import FORMATS, FormatName
from sensorcheck.report.writer import atomic_write, load_baseline, parse_spec, render, write_reports

__all__ = ["FORMATS", "FormatName", "atomic_write", "load_baseline", "parse_spec", "render", "write_reports"]
