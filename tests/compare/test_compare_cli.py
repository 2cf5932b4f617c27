"""``sensorcheck compare`` end to end on small invented boards written as Gerber X2 files.

What is checked against what: exit codes and messages against the command-line contract
(../shared/DESIGN.md, section 3: 0 / 1 / 2, errors name what is wrong); the work done against a
count (solve windows solved and reused, from the JSON report), never a clock; git revisions
against git itself (a repository made in the test).
"""

from __future__ import annotations

import json
import shutil
import subprocess
from pathlib import Path

import pytest

from sensorcheck.cli import main

from .boards import write


def _run(capsys: pytest.CaptureFixture[str], *args: str) -> tuple[int, str, str]:
    """(exit code, standard output, the error lines of standard error: progress lines left out)."""
    rc = main(["compare", *args])
    out = capsys.readouterr()
    errors = "\n".join(line for line in out.err.splitlines() if line.startswith("sensorcheck: error:"))
    return rc, out.out, errors


def test_only_the_changed_window_is_solved_and_every_report_is_written(tmp_path: Path, capsys) -> None:
    # KEY_A and KEY_B 40 mm apart: their windows (15 mm round the electrode) hold the same copper,
    # so the old side solves one window; the new side enlarges KEY_B only: KEY_A's window is taken
    # from the cache, KEY_B's is solved: 2 solves for 4 estimates
    old = write(tmp_path / "old", places={"KEY_A": 0.0, "KEY_B": 40.0})
    new = write(tmp_path / "new", radii={"KEY_A": 5.0, "KEY_B": 6.5}, places={"KEY_A": 0.0, "KEY_B": 40.0})
    rc, out, err = _run(capsys, str(old), str(new), "--report", f"json:{tmp_path / 'c.json'}",
                        "--report", f"markdown:{tmp_path / 'c.md'}", "--report", f"html:{tmp_path / 'c.html'}",
                        "--report", "text", "--fail-on-loss", "90")
    assert rc == 0, (out, err)
    data = json.loads((tmp_path / "c.json").read_text())
    assert data["format"] == "sensorcheck-compare"
    assert data["windows"] == {"solved": 2, "reused": 1}
    by = {s["name"]: s for s in data["sensors"]}
    assert by["KEY_A"]["status"] == "unchanged" and by["KEY_B"]["status"] == "changed"
    # an unchanged window: the very same numbers
    for v in by["KEY_A"]["values"].values():
        assert v["old"] == v["new"]
    # the larger key gains touch delta (direction: parallel-plate area, see test_physics_directions)
    assert by["KEY_B"]["values"]["touch_delta_pf"]["relative_percent"] > 0
    top = {c["layer"]: c for c in by["KEY_B"]["copper"]}["top-copper"]
    assert top["added_mm2"] > 0
    md = (tmp_path / "c.md").read_text()
    assert "| KEY\\_B (self-button) |" in md and "| KEY\\_A" not in md and "Unchanged: KEY\\_A." in md
    assert md.count("<details>") == md.count("</details>") == 1
    page = (tmp_path / "c.html").read_text()
    assert page.count('class="c-old"') == 1 and page.count('class="c-new"') == 1  # both curves, one chart
    assert 'class="added"' in page and 'class="old' in page and 'class="new' in page
    assert "<script" not in page and "Content-Security-Policy" in page  # no code, nothing from outside
    assert "KEY_B (self-button)" in out and "PASS" in out


def test_a_git_revision_is_read_from_a_private_folder(tmp_path: Path, capsys, monkeypatch) -> None:
    if shutil.which("git") is None:
        pytest.skip("git is not installed")
    repo = tmp_path / "repo"
    env = {"GIT_AUTHOR_NAME": "t", "GIT_AUTHOR_EMAIL": "t@example.invalid", "GIT_COMMITTER_NAME": "t",
           "GIT_COMMITTER_EMAIL": "t@example.invalid"}
    for k, v in env.items():
        monkeypatch.setenv(k, v)

    def git(*args: str) -> None:
        subprocess.run(["git", *args], cwd=repo, check=True, capture_output=True)

    write(repo / "hw", estimate=False)
    git("init", "-q")
    git("add", "-A")
    git("commit", "-qm", "first")
    write(repo / "hw", radii={"KEY_A": 5.0, "KEY_B": 5.0}, line_y_mm=0.0, estimate=False)  # a line under both keys
    git("commit", "-qam", "second")
    monkeypatch.chdir(repo)
    rc, out, err = _run(capsys, "hw", "hw", "--rev", "HEAD~1", "--report", "json")
    assert rc == 1, err  # the line under the keys: new errors
    data = json.loads(out)
    assert data["old"]["label"] == "HEAD~1:hw" and data["old"]["kind"] == "git"
    new = [f["rule_id"] for s in data["sensors"] for f in s["findings"]["new"]]
    assert "routing.foreign-copper-in-zone" in new
    # both sides at one revision: nothing changed
    rc, out, err = _run(capsys, "hw", "hw", "--rev", "HEAD", "--new-rev", "HEAD", "--report", "json")
    assert rc == 0 and all(s["status"] == "unchanged" for s in json.loads(out)["sensors"])
    rc, out, err = _run(capsys, "hw", "hw", "--rev", "no-such-branch")
    assert rc == 2 and "old side: git revision 'no-such-branch' does not exist" in err
    rc, out, err = _run(capsys, "hw", "hw", "--new-rev", "HEAD", "--rev", "HEAD~1", "--report", "json")
    assert rc == 1
    assert list(tmp_path.glob("sensorcheck-rev-*")) == []  # the private folders are gone


def test_bad_input_names_the_side(tmp_path: Path, capsys) -> None:
    good = write(tmp_path / "good", estimate=False)
    rc, _, err = _run(capsys, str(tmp_path / "missing"), str(good))
    assert rc == 2 and err.startswith("sensorcheck: error: old side:") and "missing" in err
    bad = tmp_path / "bad"
    bad.mkdir()
    (bad / "x.gbr").write_text("%FSLAX46Y46*%\n%MOMM*%\nthis is not gerber\n")
    rc, _, err = _run(capsys, str(good), str(bad))
    assert rc == 2 and err.startswith("sensorcheck: error: new side:")
    assert "Traceback" not in err
    other = write(tmp_path / "other", radii={"KEY_X": 4.0}, places={"KEY_X": 300.0}, estimate=False)
    rc, _, err = _run(capsys, str(good), str(other))
    assert rc == 2 and "share no sensor" in err
    (tmp_path / "broken.json").write_text("{not json")
    rc, _, err = _run(capsys, str(tmp_path / "broken.json"), str(good))
    assert rc == 2 and "old side:" in err and "broken.json:1" in err


def test_a_json_report_of_an_earlier_run_is_a_side(tmp_path: Path, capsys) -> None:
    old = write(tmp_path / "old", estimate=False)
    assert main(["check", str(old), "--report", f"json:{tmp_path / 'old.json'}", "--exit-zero"]) == 0
    capsys.readouterr()
    new = write(tmp_path / "new", radii={"KEY_A": 5.0, "KEY_C": 5.0}, estimate=False)  # KEY_B renamed KEY_C
    rc, out, err = _run(capsys, str(tmp_path / "old.json"), str(new), "--report", "json")
    assert rc == 0, err
    data = json.loads(out)
    assert data["copper_compared"] is False and any("JSON report" in n for n in data["notes"])
    c = {s["name"]: s for s in data["sensors"]}["KEY_C"]
    assert (c["old_name"], c["new_name"], c["matched_by"]) == ("KEY_B", "KEY_C", "geometry")
    # a renamed sensor keeps its findings: nothing new, nothing fixed
    assert c["findings"]["new"] == [] and c["findings"]["fixed"] == [] and c["findings"]["unchanged"]
