"""Finding fingerprints stay the same when the same design is exported again with its objects in
another order (DESIGN.md: fingerprints come from rule, layer, sensor, nets and place, never from
object order), so baselines and waivers survive a re-export."""

from __future__ import annotations

import importlib.util
import json
import sys
from pathlib import Path

import pytest

from sensorcheck.cli import main

REPO = Path(__file__).resolve().parents[2]


def _demo():
    spec = importlib.util.spec_from_file_location("_demo_for_fingerprints", REPO / "boards" / "make_demo.py")
    assert spec and spec.loader
    mod = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = mod
    spec.loader.exec_module(mod)
    return mod


def _fingerprints(folder: Path, tmp_path: Path, tag: str) -> dict[str, tuple[str, str | None]]:
    out = tmp_path / f"{tag}.json"
    assert main(["check", str(folder), "--no-estimate", "--exit-zero", "--report", f"json:{out}"]) == 0
    findings = json.loads(out.read_text())["boards"][0]["findings"]
    return {f["fingerprint"]: (f["rule_id"], f["sensor"]) for f in findings}


def test_reordered_export_keeps_every_fingerprint(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    demo = _demo()
    original = demo.write_board(demo.FLAWED, tmp_path / "original")

    build, cells = demo.build, demo.hatch_cells

    def build_reversed(rev):  # the same objects, drawn in the opposite order within each polarity run
        board = build(rev)
        for lay in board.layers.values():
            lay.cuts.reverse()
            lay.dark.reverse()
        return board

    monkeypatch.setattr(demo, "build", build_reversed)
    monkeypatch.setattr(demo, "hatch_cells", lambda *a: list(reversed(cells(*a))))
    reordered = demo.write_board(demo.FLAWED, tmp_path / "reordered")
    a = (original / "fab" / "tm1-reva.gtl").read_bytes()
    b = (reordered / "fab" / "tm1-reva.gtl").read_bytes()
    assert a != b  # another order (and so other aperture numbers) ...
    from sensorcheck.fab.gerber import read_gerber

    img_a, img_b = read_gerber(a, "a.gtl").dark, read_gerber(b, "b.gtl").dark
    assert img_a.symmetric_difference(img_b).area < 1e-6  # ... of the same copper

    first = _fingerprints(original, tmp_path, "original")
    second = _fingerprints(reordered, tmp_path, "reordered")
    assert first and first == second
