"""The main job end to end through the command line: the demo boards, batches, exit codes,
failure isolation and byte-identical reports.

The seeded faults of the flawed demo revision are documented in boards/README.md with their
dimensions; the expectations here follow from those dimensions (e.g. a 0.2 mm TX-RX gap under a
2 mm overlay is 0.1 x the overlay, far below the 0.6 x rule of thumb, which is common practice).
"""

from __future__ import annotations

import json
import os
import shutil
import sys
import zipfile
from pathlib import Path

import pytest
from hang_guard import run

from sensorcheck.cli import main

REPO = Path(__file__).resolve().parents[2]
FLAWED = REPO / "boards" / "tm1-flawed"
CLEAN = REPO / "boards" / "tm1-clean"


def _json_report(tmp_path: Path, *args: str) -> tuple[int, dict]:
    out = tmp_path / "r.json"
    rc = main(["check", *args, "--report", f"json:{out}"])
    return rc, json.loads(out.read_text())


def _rule_ids(report: dict) -> set[str]:
    return {f["rule_id"] for b in report["boards"] for f in b["findings"] if f["severity"] in ("error", "warning")}


def test_flawed_demo_shows_its_seeded_geometric_faults(tmp_path: Path) -> None:
    rc, report = _json_report(tmp_path, str(FLAWED), "--no-estimate")
    assert rc == 1  # errors found, none of them input or internal errors
    ids = _rule_ids(report)
    # (b) TX-RX gap 0.2 mm under a 2.0 mm overlay (rule of thumb 0.6 x: common practice)
    assert "gap.tx-rx-vs-overlay" in ids
    # (c) hatch far denser than ~25 % near a self button (common practice)
    assert "hatch.fill-near-sensor" in ids
    # (d) LED drive line under a button electrode
    assert "routing.aggressor-near-sensor" in ids
    # (e) RX trace alongside another node's TX trace for tens of mm
    assert "routing.rx-parallel-tx" in ids


def test_clean_demo_has_no_errors_or_warnings(tmp_path: Path) -> None:
    rc, report = _json_report(tmp_path, str(CLEAN), "--no-estimate")
    assert rc == 0, _rule_ids(report)
    assert _rule_ids(report) == set()


def test_fail_on_and_exit_zero(tmp_path: Path) -> None:
    assert main(["check", str(FLAWED), "--no-estimate", "--exit-zero", "--report", f"json:{tmp_path / 'a.json'}"]) == 0
    # the clean board has notes only: --fail-on note turns them into a failing exit code
    rc = main(["check", str(CLEAN), "--no-estimate", "--fail-on", "note", "--report", f"json:{tmp_path / 'b.json'}"])
    notes = [f for b in json.loads((tmp_path / "b.json").read_text())["boards"] for f in b["findings"]]
    assert rc == (1 if notes else 0)


def test_baseline_fails_only_on_new_findings(tmp_path: Path) -> None:
    base = tmp_path / "base.json"
    assert main(["check", str(FLAWED), "--no-estimate", "--report", f"json:{base}"]) == 1
    # with its own report as baseline, nothing is new
    assert main(["check", str(FLAWED), "--no-estimate", "--baseline", str(base), "--report", f"json:{tmp_path / 'x.json'}"]) == 0


def test_batch_keeps_good_boards_when_one_is_broken(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    broken = tmp_path / "broken"
    (broken / "fab").mkdir(parents=True)
    (broken / "fab" / "board-F_Cu.gbr").write_text("%FSLAX46Y46*%\n%MOMM*%\nG04 no end*\nD10*\n")
    rc, report = _json_report(tmp_path, str(FLAWED), str(broken), str(CLEAN), "--no-estimate")
    assert rc == 2  # an input error anywhere: exit 2
    boards = report["boards"]
    assert len(boards) == 3
    assert _rule_ids({"boards": [boards[0]]}) >= {"gap.tx-rx-vs-overlay", "routing.rx-parallel-tx"}
    errs = [f for f in boards[1]["findings"] if f["kind"] == "input-error"]
    assert errs and "board-F_Cu.gbr" in errs[0]["message"]
    err = capsys.readouterr().err
    assert "board-F_Cu.gbr" in err and "Traceback" not in err


def test_zip_input_gives_the_same_findings_as_the_folder(tmp_path: Path) -> None:
    z = tmp_path / "tm1-flawed.zip"
    with zipfile.ZipFile(z, "w") as zf:
        for f in sorted((FLAWED / "fab").iterdir()):
            zf.write(f, f"fab/{f.name}")
    shutil.copy(FLAWED / "sensorcheck.toml", tmp_path / "sensorcheck.toml")
    _, from_dir = _json_report(tmp_path, str(FLAWED), "--no-estimate")
    _, from_zip = _json_report(tmp_path, str(z), "--no-estimate")
    assert _rule_ids(from_dir) == _rule_ids(from_zip)


def test_a_rule_that_raises_becomes_an_internal_error_everywhere(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    from sensorcheck.rules import engine

    reg = engine.registry()
    victim = reg["gap.tx-rx-vs-overlay"]

    def boom(self, design, estimates, params):  # noqa: ANN001
        raise ZeroDivisionError("seeded failure for the test")

    monkeypatch.setattr(victim, "check", boom)
    specs = {fmt: tmp_path / f"out.{fmt}" for fmt in ("json", "sarif", "junit", "markdown", "codequality")}
    rc = main(["check", str(FLAWED), "--no-estimate", *[a for f, p in specs.items() for a in ("--report", f"{f}:{p}")]])
    assert rc == 2
    for fmt, p in specs.items():
        text = p.read_text()
        assert "seeded failure for the test" in text, fmt
    # the other rules still ran
    report = json.loads(specs["json"].read_text())
    assert "routing.rx-parallel-tx" in _rule_ids(report)


@pytest.mark.slow
def test_reports_are_byte_identical_across_processes_and_hash_seeds(tmp_path: Path) -> None:
    fmts = ("json", "sarif", "junit", "markdown", "codequality", "html", "gerber")
    outputs: list[dict[str, bytes]] = []
    for seed in ("0", "12345"):
        d = tmp_path / f"run{seed}"
        d.mkdir()
        args = [sys.executable, "-m", "sensorcheck", "check", str(FLAWED), "--no-estimate", "--exit-zero"]
        for f in fmts:
            args += ["--report", f"{f}:{d / ('out.' + f)}"]
        env = {**os.environ, "PYTHONHASHSEED": seed}
        proc = run(args, guard_s=900, env=env)
        assert proc.returncode == 0, proc.stderr
        outputs.append({f: (d / f"out.{f}").read_bytes() for f in fmts})
    for f in fmts:
        assert outputs[0][f] == outputs[1][f], f"{f} differs between runs"


@pytest.mark.slow
def test_field_solver_decides_the_turnaround_on_the_demo(tmp_path: Path) -> None:
    """Fault (a) of the flawed revision (boards/README.md): a 20 mm receiver with no ground within
    10 mm, in a battery product (device ground 10 pF to earth, the config's own scenario). The
    field knowledge: a large receiver against its ground turns the signal around above the
    overlay, a small one in its ground pour does not."""
    rc, flawed = _json_report(tmp_path, str(FLAWED))
    assert rc == 1
    turn = [f for f in flawed["boards"][0]["findings"] if f["rule_id"] == "signal.turnaround"]
    assert [(f["severity"], f["sensor"]) for f in turn] == [("error", "K1")]
    assert turn[0]["value"] > 0.0 and turn[0]["unit"] == "mm"
    # reported where the signal turns: over the node centre, K1 at (18, 50) in boards/README.md,
    # not over the most sensitive point, where the solver's own curve does not turn
    loc = turn[0]["location"]
    assert abs(loc["x_mm"] - 18.0) < 0.5 and abs(loc["y_mm"] - 50.0) < 0.5, loc
    est = next(s for s in flawed["boards"][0]["sensors"] if s["name"] == "K1")["estimate"]
    assert est["turning_curve"] == "centre" and est["curve_centre"]
    # issue 15: the change is listed with its kind and curve (the signal peaks and falls back; no
    # sign reversal: it stays a fall of Cm), and the message names the kind
    assert [(t["kind"], t["curve"]) for t in est["turnarounds"]] == [("turns", "centre")]
    assert "turns at" in turn[0]["message"] and "reverses sign" not in turn[0]["message"]
    rc, clean = _json_report(tmp_path, str(CLEAN))
    assert rc == 0, _rule_ids(clean)
    k1 = next(s for s in clean["boards"][0]["sensors"] if s["name"] == "K1")
    assert k1["estimate"]["turning_point_mm"] is None
    assert k1["estimate"]["touch_delta_pf"] < 0  # mutual: a touch lowers Cm
