"""Packaging: every subpackage is listed for installation, and the shipped profiles travel with it."""

from __future__ import annotations

import tomllib
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]


def test_every_subpackage_is_installed() -> None:
    listed = set(tomllib.loads((REPO / "pyproject.toml").read_text())["tool"]["setuptools"]["packages"])
    found = {
        ".".join(p.parent.relative_to(REPO).parts)
        for p in (REPO / "sensorcheck").rglob("__init__.py")
        if "__pycache__" not in p.parts
    }
    assert found <= listed, f"add to pyproject.toml [tool.setuptools] packages: {sorted(found - listed)}"


def test_shipped_profiles_are_package_data() -> None:
    cfg = tomllib.loads((REPO / "pyproject.toml").read_text())["tool"]["setuptools"]
    assert cfg["package-dir"]["sensorcheck.profiles"] == "rules"
    assert {p.name for p in (REPO / "rules").glob("*.toml")} >= {"default.toml", "strict.toml"}
