"""The README's table of limits says what the code does: every limit, its default, nothing else."""

from __future__ import annotations

import re
from dataclasses import fields
from pathlib import Path

from sensorcheck.limits import Limits

README = Path(__file__).resolve().parents[2] / "README.md"


def test_readme_limits_table_matches_the_defaults() -> None:
    rows = re.findall(r"^\| `(max_\w+)` \| ([0-9.]+)", README.read_text(encoding="utf-8"), flags=re.M)
    documented = {name: float(value) for name, value in rows}
    actual = {f.name: float(f.default) for f in fields(Limits)}
    assert documented == actual
