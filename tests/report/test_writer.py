"""Dispatch, atomic writes, determinism (same bytes in another process with another hash seed)
and escaping of hostile names across every format."""

from __future__ import annotations

import io
import os
import subprocess
import sys
import types
from pathlib import Path

import pytest

from sensorcheck.errors import ConfigError, InputError
from sensorcheck.report import FORMATS, parse_spec, render, write_reports
from sensorcheck.report import writer as writer_mod
from sensorcheck.findings import Result

from .sample import make_results

MACHINE_FORMATS = [f for f in FORMATS if f != "html"]  # html belongs to the review page module
TESTS_DIR = Path(__file__).resolve().parents[1]


def test_parse_spec() -> None:
    assert parse_spec("sarif") == ("sarif", None)
    assert parse_spec("SARIF:out/x.sarif") == ("sarif", Path("out/x.sarif"))
    assert parse_spec("junit:C:\\ci\\r.xml") == ("junit", Path("C:\\ci\\r.xml"))
    with pytest.raises(ConfigError, match="unknown report format 'pdf'"):
        parse_spec("pdf:x")
    with pytest.raises(ConfigError, match="names no file"):
        parse_spec("json:")


def test_write_files_and_stdout(tmp_path: Path, results: list[Result]) -> None:
    out = io.StringIO()
    specs = [f"{fmt}:{tmp_path / 'r' / fmt}" for fmt in MACHINE_FORMATS] + ["github"]
    write_reports(results, specs, stdout=out)
    for fmt in MACHINE_FORMATS:
        data = (tmp_path / "r" / fmt).read_bytes()
        assert data == render(results, fmt).encode("utf-8")
        assert b"\r\n" not in data.replace(b"%0D%0A", b"")
    assert out.getvalue() == render(results, "github")
    assert sorted(p.name for p in (tmp_path / "r").iterdir()) == sorted(MACHINE_FORMATS)  # no temp files left


def test_default_is_text_on_stdout(results: list[Result]) -> None:
    out = io.StringIO()
    write_reports(results, [], stdout=out)
    assert out.getvalue() == render(results, "text")


def test_same_file_twice_is_refused(tmp_path: Path, results: list[Result]) -> None:
    with pytest.raises(ConfigError, match="same file"):
        write_reports(results, [f"json:{tmp_path}/a", f"sarif:{tmp_path}/./a"], stdout=io.StringIO())


def test_failed_render_writes_nothing(tmp_path: Path, results: list[Result], monkeypatch: pytest.MonkeyPatch) -> None:
    old = tmp_path / "a.sarif"
    old.write_text("previous run\n")

    def boom(results: list[Result], fmt: str, **kw: object) -> str:
        if fmt == "junit":
            raise RuntimeError("render failed")
        return "new\n"

    monkeypatch.setattr(writer_mod, "render", boom)
    with pytest.raises(RuntimeError):
        write_reports(results, [f"sarif:{old}", f"junit:{tmp_path / 'b.xml'}"], stdout=io.StringIO())
    assert old.read_text() == "previous run\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["a.sarif"]


def test_failed_write_keeps_the_old_file(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    target = tmp_path / "r.sarif"
    target.write_text("old\n")

    def fail_replace(src: str, dst: str) -> None:
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(writer_mod.os, "replace", fail_replace)
    with pytest.raises(InputError, match="No space left on device"):
        writer_mod.atomic_write(target, "new\n")
    assert target.read_text() == "old\n"
    assert [p.name for p in tmp_path.iterdir()] == ["r.sarif"]  # the temp file was removed


def test_unwritable_target_is_an_input_error(tmp_path: Path, results: list[Result]) -> None:
    blocker = tmp_path / "file"
    blocker.write_text("x")
    with pytest.raises(InputError) as info:
        write_reports(results, [f"json:{blocker}/sub/r.json"], stdout=io.StringIO())
    assert "cannot write the report" in info.value.describe()


def test_html_is_dispatched_lazily(results: list[Result], monkeypatch: pytest.MonkeyPatch) -> None:
    fake = types.ModuleType("sensorcheck.report.html")
    seen: list[int] = []

    def fake_render(res: list[Result]) -> str:
        seen.append(len(res))
        return "<!doctype html>\n"

    fake.render = fake_render  # type: ignore[attr-defined]
    monkeypatch.setitem(sys.modules, "sensorcheck.report.html", fake)
    assert render(results, "html") == "<!doctype html>\n"
    assert seen == [2]


@pytest.mark.parametrize("fmt", MACHINE_FORMATS)
def test_deterministic_in_process(fmt: str) -> None:
    assert render(make_results(), fmt) == render(make_results(), fmt)


def test_deterministic_across_processes_and_hash_seeds() -> None:
    code = (
        "import sys, hashlib; sys.path.insert(0, sys.argv[1]);"
        "from report.sample import make_results; from sensorcheck.report import render;"
        "print(' '.join(hashlib.sha256(render(make_results(), f).encode()).hexdigest() for f in sys.argv[2:]))"
    )
    digests = set()
    for seed in ("0", "12345"):
        env = {**os.environ, "PYTHONHASHSEED": seed}
        run = subprocess.run([sys.executable, "-c", code, str(TESTS_DIR), *MACHINE_FORMATS], env=env, capture_output=True, text=True, check=True)
        digests.add(run.stdout)
    import hashlib

    here = " ".join(hashlib.sha256(render(make_results(), f).encode()).hexdigest() for f in MACHINE_FORMATS) + "\n"
    assert digests == {here}


@pytest.mark.parametrize("fmt", MACHINE_FORMATS)
def test_hostile_names_never_leave_raw_control_characters(fmt: str) -> None:
    text = render(make_results(), fmt)
    # ESC (terminal escapes) and the bidi override never reach any output raw: JSON-based
    # formats escape them as \\u001b / \\u202e, the others show them.
    assert "\x1b" not in text and "\u202e" not in text
    # Line-based formats: a newline in a name never starts a new line of its own.
    if fmt in ("github", "gerber", "markdown", "text"):
        assert not any(line.startswith(("::warning::x", "::error file=x")) for line in text.splitlines())


@pytest.mark.parametrize("fmt", MACHINE_FORMATS)
def test_timestamp_only_when_set(fmt: str) -> None:
    stamp = "2026-12-02T05:00:00Z"
    plain = make_results()
    assert stamp not in render(plain, fmt)
    stamped = make_results()
    for r in stamped:
        r.timestamp = stamp
    if fmt in ("json", "sarif", "junit", "markdown", "text"):
        assert stamp in render(stamped, fmt)
    else:  # code quality, annotations and the Gerber layer carry no time at all
        assert render(stamped, fmt) == render(plain, fmt)


@pytest.mark.parametrize("fmt", MACHINE_FORMATS)
def test_empty_batch_renders(fmt: str) -> None:
    text = render([], fmt)
    assert text.endswith("\n") or text == ""


def test_stdout_that_cannot_hold_every_character(results: list[Result]) -> None:
    raw = io.BytesIO()
    out = io.TextIOWrapper(raw, encoding="ascii", errors="strict")
    results[0].notes.append("permittivity \u03b5r of glass")
    write_reports(results, ["markdown"], stdout=out)
    text = raw.getvalue().decode("ascii")
    assert "\\u03b5r of glass" in text
