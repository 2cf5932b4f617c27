"""The pre-commit hook definition: validated by pre-commit itself (``pre-commit validate-manifest``,
pre_commit/clientlib.py MANIFEST_HOOK_DICT), and its ``files`` regex checked on file names (pre-commit
matches it with Python's re.search on repository-relative paths)."""

from __future__ import annotations

import re
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

MANIFEST = Path(__file__).resolve().parents[2] / ".pre-commit-hooks.yaml"


def _pre_commit() -> list[str]:
    exe = shutil.which("pre-commit") or str(Path(sys.executable).parent / "pre-commit")
    if not Path(exe).exists():
        pytest.skip("pre-commit is not installed (a test dependency)")
    return [exe]


def test_manifest_validates() -> None:
    run = subprocess.run([*_pre_commit(), "validate-manifest", str(MANIFEST)], capture_output=True, text=True)
    assert run.returncode == 0, run.stdout + run.stderr


def test_broken_manifest_is_rejected(tmp_path: Path) -> None:
    bad = tmp_path / "hooks.yaml"
    bad.write_text(MANIFEST.read_text().replace("    language: python\n", ""))
    run = subprocess.run([*_pre_commit(), "validate-manifest", str(bad)], capture_output=True, text=True)
    assert run.returncode != 0  # "language" is required


def test_hook_fields() -> None:
    yaml = pytest.importorskip("yaml")
    (hook,) = yaml.safe_load(MANIFEST.read_text())
    assert hook["id"] == "sensorcheck"
    assert hook["entry"] == "sensorcheck check"
    assert hook["language"] == "python"
    assert hook["pass_filenames"] is False and hook["require_serial"] is True
    files = re.compile(hook["files"])
    for name in ("hw/fab/board-F_Cu.gbr", "fab/top.GTL", "x/b.drl", "hw/sensorcheck.toml", "fab/board.gbrjob", "f/b-In1_Cu.g2", "fab.zip"):
        assert files.search(name), name
    for name in ("README.md", "src/main.c", "my-sensorcheck.toml.bak", "notsensorcheck.toml", "board.kicad_pcb"):
        assert not files.search(name), name


def test_consumer_config_validates(tmp_path: Path) -> None:
    # What a board repository writes to use the hook (reference/output-formats.md B.5).
    cfg = tmp_path / ".pre-commit-config.yaml"
    cfg.write_text(
        "repos:\n"
        "-   repo: https://example.invalid/sensorcheck\n"
        "    rev: v0.1.0\n"
        "    hooks:\n"
        "    -   id: sensorcheck\n"
        "        args: [--config, hw/sensorcheck.toml, hw/fab/]\n"
    )
    run = subprocess.run([*_pre_commit(), "validate-config", str(cfg)], capture_output=True, text=True)
    assert run.returncode == 0, run.stdout + run.stderr
