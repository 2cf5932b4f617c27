"""Fixtures for the report tests: results built by hand (see sample.py)."""

from __future__ import annotations

import pytest

from sensorcheck.findings import Result

from .sample import make_results


@pytest.fixture
def results() -> list[Result]:
    return make_results()


@pytest.fixture
def one_board() -> list[Result]:
    return make_results()[:1]
