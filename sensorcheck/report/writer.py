"""Dispatch ``--report FORMAT[:FILE]`` to the format modules and write the outputs safely.

- :func:`render` turns a list of results (one per board; a batch gives one combined report) into
  the text of one format; format modules are imported only when used (``html`` belongs to the
  review page module, ``sensorcheck.report.html.render(results) -> str``).
- :func:`write_reports` renders every requested format first, then writes: a file is written
  to a temporary file in the same folder and moved over the target with ``os.replace`` (atomic
  on POSIX and Windows), so CI never picks up a half-written SARIF or JUnit file; without FILE
  the text goes to ``stdout``.
- :func:`load_baseline` reads the fingerprints of a previous JSON report (``--baseline``).
"""

from __future__ import annotations

import importlib
import json
import os
import shutil
import tempfile
from collections.abc import Sequence
from pathlib import Path
from typing import Any, TextIO, cast

from sensorcheck.errors import ConfigError, InputError
from sensorcheck.report.common import FORMATS, FormatName
from sensorcheck.findings import Result

#: format name -> module under sensorcheck.report that has ``render(results) -> str``
_MODULES: dict[str, str] = {
    "text": "text",
    "json": "json_report",
    "sarif": "sarif",
    "junit": "junit",
    "codequality": "codequality",
    "github": "github",
    "markdown": "markdown",
    "html": "html",
    "gerber": "gerber_layer",
}


def parse_spec(spec: str) -> tuple[FormatName, Path | None]:
    """``FORMAT[:FILE]`` -> (format, path or None for stdout); an unknown format is a ConfigError."""
    name, sep, path = spec.partition(":")
    name = name.strip().lower()
    if name not in FORMATS:
        raise ConfigError("--report", None, f"unknown report format {name!r} in {spec!r} (expected one of {', '.join(FORMATS)}, optionally followed by :FILE)")
    if sep and not path:
        raise ConfigError("--report", None, f"{spec!r} names no file after ':' (expected FORMAT or FORMAT:FILE)")
    return cast(FormatName, name), (Path(path) if sep else None)


def render(results: Sequence[Result], fmt: str, *, color: bool = False, width: int = 100,
           detail: str = "normal") -> str:
    """The report of ``results`` in format ``fmt`` (one of :data:`FORMATS`).

    ``color`` and ``width`` matter only for ``text`` (a terminal); every other format ignores them.
    """
    if fmt not in _MODULES:
        raise ConfigError("--report", None, f"unknown report format {fmt!r} (expected one of {', '.join(FORMATS)})")
    try:
        module = importlib.import_module(f"sensorcheck.report.{_MODULES[fmt]}")
    except ModuleNotFoundError as exc:
        if exc.name != f"sensorcheck.report.{_MODULES[fmt]}":
            raise
        raise ConfigError("--report", None, f"the {fmt} report is not available in this installation") from exc
    if fmt == "text":
        return cast(str, module.render(list(results), color=color, width=width, detail=detail))
    return cast(str, module.render(list(results)))


def atomic_write(path: Path, text: str) -> None:
    """Write ``text`` as UTF-8 (LF line ends, no BOM) to ``path`` through a temp file + ``os.replace``."""
    folder = path.parent if str(path.parent) else Path(".")
    try:
        folder.mkdir(parents=True, exist_ok=True)
        try:
            mode = path.stat().st_mode & 0o777
        except FileNotFoundError:
            mode = 0o644
        fd, tmp = tempfile.mkstemp(dir=folder, prefix=f".{path.name}.", suffix=".tmp")
    except OSError as exc:
        raise InputError(path, None, f"cannot write the report: {exc.strerror or exc}", expected="a writable folder") from exc
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(text.encode("utf-8"))
            fh.flush()
            os.fsync(fh.fileno())
        os.chmod(tmp, mode)
        os.replace(tmp, path)
    except OSError as exc:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise InputError(path, None, f"cannot write the report: {exc.strerror or exc}", expected="a writable file path") from exc


def _is_tty(stream: TextIO) -> bool:
    try:
        return stream.isatty()
    except (AttributeError, ValueError):
        return False


def text_width(stream: TextIO) -> int:
    """Columns for the text report: ``COLUMNS`` when set, else the terminal's, else 100 when piped."""
    env = os.environ.get("COLUMNS", "")
    if env.isdigit() and 40 <= int(env) <= 1000:
        return int(env)
    return shutil.get_terminal_size((100, 24)).columns if _is_tty(stream) else 100


def write_reports(results: Sequence[Result], specs: Sequence[str], *, stdout: TextIO, detail: str = "normal") -> None:
    """Write each ``FORMAT[:FILE]`` report (no specs: the text report on ``stdout``).

    All reports are rendered before any is written, so a failing format leaves no partial set.
    Two specs naming the same file are refused (the second would silently replace the first).
    """
    parsed = [parse_spec(s) for s in (specs or ["text"])]
    seen: dict[Path, str] = {}
    for (fmt, path), spec in zip(parsed, specs or ["text"], strict=True):
        if path is None:
            continue
        key = Path(os.path.abspath(path))
        if key in seen:
            raise ConfigError("--report", None, f"{spec!r} writes to the same file as {seen[key]!r}")
        seen[key] = spec
    tty = _is_tty(stdout)
    width = text_width(stdout)
    rendered: list[tuple[Path | None, str]] = []
    for fmt, path in parsed:
        colour = tty and path is None and fmt == "text"
        rendered.append((path, render(results, fmt, color=colour, width=width if path is None else 100, detail=detail)))
    for path, text in rendered:
        if path is None:
            _write_stream(stdout, text)
        else:
            atomic_write(path, text)


def _write_stream(stream: TextIO, text: str) -> None:
    """Write to a stream whose encoding may not hold every character (a legacy console, LANG=C)."""
    try:
        stream.write(text)
    except UnicodeEncodeError:
        encoding = getattr(stream, "encoding", None) or "ascii"
        stream.write(text.encode(encoding, "backslashreplace").decode(encoding))
    stream.flush()


def read_json_report(path: str | Path, what: str = "the baseline") -> dict[str, Any]:
    """A previous JSON report, checked to be one (format, version, a "boards" list); ``what``
    names the file in messages.  A missing file, invalid JSON or a file that is not a sensorcheck
    JSON report is an :class:`InputError` naming the file (and the line, for a JSON syntax error)."""
    p = Path(path)
    expected = "a JSON report written by --report json:FILE"
    try:
        raw = p.read_bytes()
    except OSError as exc:
        raise InputError(p, None, f"cannot read {what}: {exc.strerror or exc}", expected=expected) from exc
    try:
        data = json.loads(raw.decode("utf-8-sig"))
    except UnicodeDecodeError as exc:
        raise InputError(p, None, f"{what} is not UTF-8 text", expected=expected) from exc
    except json.JSONDecodeError as exc:
        raise InputError(p, exc.lineno, f"{what} is not valid JSON: {exc.msg}", expected=expected) from exc
    from sensorcheck.report.json_report import FORMAT_ID, FORMAT_VERSION

    if not isinstance(data, dict) or data.get("format") != FORMAT_ID:
        raise InputError(p, None, f"{what} is not a sensorcheck JSON report", expected=f'an object with "format": "{FORMAT_ID}"')
    if data.get("version") != FORMAT_VERSION:
        raise InputError(p, None, f"{what} has report version {data.get('version')!r}", expected=f"version {FORMAT_VERSION}")
    if not isinstance(data.get("boards"), list):
        raise InputError(p, None, f'{what} has no "boards" list', expected=expected)
    return data


def load_baseline(path: str | Path) -> set[str]:
    """Fingerprints of every finding (waived ones too) in a previous JSON report (:func:`read_json_report`)."""
    p = Path(path)
    boards = read_json_report(p)["boards"]
    out: set[str] = set()
    for i, board in enumerate(boards):
        findings = board.get("findings") if isinstance(board, dict) else None
        if not isinstance(findings, list):
            raise InputError(p, None, f'boards[{i}] has no "findings" list', expected="a JSON report written by --report json:FILE")
        for j, f in enumerate(findings):
            fp = f.get("fingerprint") if isinstance(f, dict) else None
            if not isinstance(fp, str) or not fp:
                raise InputError(p, None, f"boards[{i}].findings[{j}] has no fingerprint", expected="a non-empty fingerprint string")
            out.add(fp)
    return out
