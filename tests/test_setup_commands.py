"""The README's set-up commands are the ones CI runs and the ones ./dev offers (issue 14, item 1).

What a newcomer copies from README.md ("Set up and run") must be what .ci/run runs, word for
word, so that the documented path is the tested one. Running the commands in a fresh clone is
the lead's and CI's job (it installs packages); here: the text agrees, and ./dev answers.
"""

from __future__ import annotations

import re
import shutil
from pathlib import Path

import pytest
from hang_guard import run

REPO = Path(__file__).resolve().parents[1]


def readme_setup_commands() -> list[str]:
    text = (REPO / "README.md").read_text(encoding="utf-8")
    section = text.split("## Set up and run", 1)[1].split("\n## ", 1)[0]
    block = re.search(r"```sh\n(.*?)```", section, re.S)
    assert block, "README's 'Set up and run' has no ```sh block"
    lines = [line.split("#", 1)[0].strip() for line in block.group(1).splitlines()]
    return [line for line in lines if line]


def test_readme_gives_two_commands_and_ci_runs_the_second() -> None:
    demo, test = readme_setup_commands()
    assert (demo, test) == ("./dev demo", "./dev test")
    ci = [line.strip() for line in (REPO / ".ci" / "run").read_text().splitlines()]
    ci = [line for line in ci if line and not line.startswith("#")]
    assert ci[-1] == test, f".ci/run must end with the README's test command {test!r}, not {ci[-1]!r}"


@pytest.mark.skipif(shutil.which("bash") is None, reason="./dev is a bash script")
def test_dev_answers_help_and_refuses_an_unknown_command() -> None:
    ok = run([str(REPO / "dev"), "help"], guard_s=300)
    assert ok.returncode == 0 and "./dev demo" in ok.stdout and "./dev quick" in ok.stdout
    bad = run([str(REPO / "dev"), "bogus"], guard_s=300)
    assert bad.returncode == 2 and "./dev test" in bad.stderr
