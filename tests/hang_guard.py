"""A subprocess under a hang guard: a generous timeout that stops a run that never ends, and whose
failure says it is a hang guard, not a speed limit (no test asserts how long anything took)."""

from __future__ import annotations

import subprocess
from typing import Any

import pytest


def run(args: list[str], *, guard_s: float, **kwargs: Any) -> subprocess.CompletedProcess[str]:
    """``subprocess.run(args, capture_output=True, text=True, **kwargs)``, failing the test with a
    hang-guard message when it gives no answer within ``guard_s`` seconds."""
    try:
        return subprocess.run(args, capture_output=True, text=True, timeout=guard_s, **kwargs)
    except subprocess.TimeoutExpired:
        pytest.fail(f"hang guard: {' '.join(str(a) for a in args)[:200]} gave no answer within {guard_s:g} s "
                    "(a guard against a hang, not a speed limit)")
