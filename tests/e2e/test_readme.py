"""What the README promises, run as written: the config example loads, and the CI jobs' commands
work on the demo board. The CI files are validated against the published schemas that
check-jsonschema vendors (SchemaStore's github-workflows.json and gitlab-ci.json)."""

from __future__ import annotations

import json
import re
import shlex
import subprocess
import sys
from importlib import resources
from pathlib import Path

import jsonschema
import pytest
import yaml

from sensorcheck.cli import main

REPO = Path(__file__).resolve().parents[2]
README = (REPO / "README.md").read_text(encoding="utf-8")
FLAWED = REPO / "boards" / "tm1-flawed"


def _blocks(lang: str) -> list[str]:
    return re.findall(rf"```{lang}\n(.*?)```", README, flags=re.S)


def _vendored_schema(name: str) -> dict:
    root = resources.files("check_jsonschema") / "builtin_schemas" / "vendor" / name
    return json.loads(root.read_text(encoding="utf-8"))


def _commands(text: str) -> list[str]:
    return [m.strip() for m in re.findall(r"(sensorcheck check [^\n|]*)", text)]


@pytest.mark.parametrize("job", [3, 4], ids=["github", "gitlab"])
def test_ci_compare_commands_run_on_the_demo_revisions(job: int, tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    # the job compares hw/fab/ at the target branch with hw/fab/ as it is; here revision B (the
    # target branch) with revision C (the merge request), without estimates (a count of findings)
    (cmd,) = re.findall(r"(sensorcheck compare [^\n|]*)", _blocks("yaml")[job])
    argv = shlex.split(cmd)[1:]
    rev = argv.index("--rev")
    del argv[rev:rev + 2]
    assert argv[1:3] == ["hw/fab/", "hw/fab/"]
    argv[1:3] = [str(REPO / "boards" / "tm1-clean"), str(REPO / "boards" / "tm1-revc")]
    monkeypatch.chdir(tmp_path)
    rc = main([*argv, "--no-estimate"])
    assert rc == 1  # revision C runs the LED's drive line under BTN2: new errors fail the job
    for name in ("compare.md", "compare.html"):
        assert (tmp_path / name).stat().st_size > 0
    assert "BTN2" in (tmp_path / "compare.md").read_text(encoding="utf-8")


def test_readme_config_example_is_a_valid_config(tmp_path: Path) -> None:
    from sensorcheck.design.config import load_config
    from sensorcheck.rules.engine import known_rules

    # every TOML block of the README is a config a user may copy: each one loads as it is
    first, *others = _blocks("toml")
    p = tmp_path / "sensorcheck.toml"
    p.write_text(first, encoding="utf-8")
    config = load_config(p, known_rules=known_rules())
    assert config.overlay is not None and config.overlay.thickness_mm == pytest.approx(2.0)
    assert config.waivers and config.waivers[0].reason
    for toml in others:
        p.write_text(toml, encoding="utf-8")
        load_config(p, known_rules=known_rules())


def test_github_and_gitlab_jobs_match_their_published_schemas() -> None:
    blocks = _blocks("yaml")
    # the check jobs first, then the pre-commit snippet, then the compare jobs (GitHub, GitLab)
    for gh, gl in ((blocks[0], blocks[1]), (blocks[3], blocks[4])):
        workflow = yaml.safe_load(gh)
        # PyYAML follows YAML 1.1, where a bare `on` key is the boolean True; GitHub reads it as "on"
        if True in workflow:
            workflow["on"] = workflow.pop(True)
        jsonschema.validate(workflow, _vendored_schema("github-workflows.json"))
        jsonschema.validate(yaml.safe_load(gl), _vendored_schema("gitlab-ci.json"))


def test_pre_commit_snippet_is_a_valid_pre_commit_config(tmp_path: Path) -> None:
    pc = _blocks("yaml")[2]
    p = tmp_path / ".pre-commit-config.yaml"
    p.write_text(pc, encoding="utf-8")
    proc = subprocess.run([sys.executable, "-m", "pre_commit", "validate-config", str(p)], capture_output=True, text=True)
    assert proc.returncode == 0, proc.stdout + proc.stderr


@pytest.mark.parametrize("job", [0, 1], ids=["github", "gitlab"])
def test_ci_job_commands_run_on_the_demo_board(job: int, tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    text = _blocks("yaml")[job]
    (cmd,) = _commands(text)
    argv = shlex.split(cmd.replace("hw/fab/", f"{FLAWED}/"))[1:]
    monkeypatch.chdir(tmp_path)
    rc = main([*argv, "--no-estimate"])
    assert rc == 1  # the demo revision has errors: the job fails, as it should
    for spec in argv:
        if ":" in spec and not spec.startswith("-"):
            out = tmp_path / spec.split(":", 1)[1]
            assert out.is_file() and out.stat().st_size > 0, spec
