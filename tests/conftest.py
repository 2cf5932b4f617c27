"""Shared test fixtures.

``shared_dir`` is the read-only data beside the repository (``<repo>/../shared``: real boards,
peer test suites). A fresh checkout has none: tests that need it skip cleanly.
"""

from __future__ import annotations

from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[1]


@pytest.fixture(scope="session")
def shared_dir() -> Path:
    path = REPO.parent / "shared"
    if not path.is_dir():
        pytest.skip("../shared (corpus and peer suites) is not present")
    return path


# CI runs the property tests with a fixed seed, so a merge request is never failed by a new random
# example; the long, random runs are bench/fuzz_long.py's job (and a developer's plain pytest).
import os as _os

from hypothesis import settings as _settings

# No wall-clock bound on any example (Hypothesis's default deadline is 200 ms, which a loaded CI
# machine passes): bounded work is asserted by counting, in the tests themselves.
_settings.register_profile("local", deadline=None)
_settings.register_profile("ci", derandomize=True, database=None, deadline=None)
_settings.load_profile("ci" if _os.environ.get("CI") else "local")
