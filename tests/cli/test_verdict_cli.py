"""The command line for people and for CI gates: nothing passes unchecked, one rule on request,
--help with examples and exit codes, --quiet/--verbose, a configured severity that caps a rule.

Expectations come from the issue's contract and the demo board's documented faults
(boards/README.md: BTN2 has the LED_DRV aggressor under it on the bottom copper).
"""

from __future__ import annotations

import json
import shutil
import zipfile
from pathlib import Path

import pytest

from sensorcheck.cli import main

REPO = Path(__file__).resolve().parents[2]
FLAWED = REPO / "boards" / "tm1-flawed"
B09 = REPO.parent / "shared" / "corpus" / "b09-usb-stick" / "fab"


def test_a_folder_without_fabrication_data_is_exit_2_with_the_init_hint(tmp_path: Path,
                                                                         capsys: pytest.CaptureFixture[str]) -> None:
    (tmp_path / "README.md").write_text("notes, not fabrication data\n")
    assert main(["check", str(tmp_path), "--no-estimate"]) == 2
    out = capsys.readouterr().out
    head = out[: out.index("Sensors") if "Sensors" in out else len(out)]
    assert "NOTHING CHECKED" in head and "sensorcheck init" in head  # the hint comes first
    assert main(["check", str(tmp_path), "--no-estimate", "--allow-empty"]) == 0


def test_an_empty_folder_passes_only_when_allowed(tmp_path: Path) -> None:
    assert main(["check", str(tmp_path), "--no-estimate"]) == 2
    assert main(["check", str(tmp_path), "--no-estimate", "--allow-empty"]) == 0


def test_a_zip_whose_config_is_not_beside_it_is_exit_2(tmp_path: Path) -> None:
    # the flawed demo's files zipped alone: without its config no net has a role, no sensor is found
    z = tmp_path / "fab.zip"
    with zipfile.ZipFile(z, "w") as zf:
        for f in sorted((FLAWED / "fab").iterdir()):
            zf.write(f, f.name)
    assert main(["check", str(z), "--no-estimate", "--report", f"json:{tmp_path / 'r.json'}"]) == 2
    data = json.loads((tmp_path / "r.json").read_text())
    assert any(f["rule_id"] == "input.nothing-checked" for f in data["boards"][0]["findings"])


@pytest.mark.corpus
@pytest.mark.skipif(not B09.is_dir(), reason="../shared/corpus is absent")
def test_corpus_board_without_config_is_exit_2() -> None:
    assert main(["check", str(B09), "--no-estimate", "--quiet"]) == 2


def test_rules_shows_one_rule(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["rules", "trace.width"]) == 0
    out = capsys.readouterr().out
    assert out.startswith("trace.width") and "Fix:" in out
    assert "gap.tx-rx-vs-overlay" not in out
    assert main(["rules", "trace.widht"]) == 2
    assert "did you mean trace.width" in capsys.readouterr().err


def test_help_has_examples_and_exit_codes(capsys: pytest.CaptureFixture[str]) -> None:
    for argv in (["--help"], ["check", "--help"]):
        with pytest.raises(SystemExit) as e:
            main(argv)
        assert e.value.code == 0
        out = capsys.readouterr().out
        assert "examples:" in out and "exit codes:" in out and "--allow-empty" in out


def test_configured_severity_caps_the_rule_on_the_demo(tmp_path: Path) -> None:
    board = tmp_path / "tm1"
    shutil.copytree(FLAWED, board)
    cfg = board / "sensorcheck.toml"
    base = cfg.read_text()

    def rule_severities(extra: str) -> set[str]:
        cfg.write_text(base + extra)
        out = tmp_path / "r.json"
        main(["check", str(board), "--no-estimate", "--exit-zero", "--report", f"json:{out}"])
        data = json.loads(out.read_text())
        return {f["severity"] for f in data["boards"][0]["findings"] if f["rule_id"] == "routing.aggressor-near-sensor"}

    assert "error" in rule_severities("")  # the seeded fault: LED_DRV under BTN2
    assert rule_severities('\n[rules."routing.aggressor-near-sensor"]\nseverity = "note"\n') == {"note"}
    kept = rule_severities('\n[rules."routing.aggressor-near-sensor"]\nseverity = "note"\nkeep_errors = true\n')
    assert "error" in kept


def test_quiet_and_verbose(capsys: pytest.CaptureFixture[str]) -> None:
    main(["check", str(FLAWED), "--no-estimate", "--quiet"])
    quiet = capsys.readouterr().out
    main(["check", str(FLAWED), "--no-estimate", "--verbose"])
    verbose = capsys.readouterr().out
    assert "WARNINGS" not in quiet and "ERRORS" in quiet and "Sensors" not in quiet
    assert "fingerprint " in verbose and "see sensorcheck rules" in verbose
    assert len(quiet.splitlines()) < len(verbose.splitlines())
