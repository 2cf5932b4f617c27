"""The two sides of a comparison: each a folder, a .zip, a JSON report, or a git revision.

A folder or .zip is checked as ``check`` checks it (estimates included), with the window cache of
the comparison active so that a window both sides share is solved once.  A JSON report of an
earlier run is read as it is: its numbers and findings, no copper (the copper comparison is then
left out and the report says so).  A git revision (``--rev``) is the fabrication folder as it was
at that revision, extracted with ``git archive`` into a private temporary folder (with the
``sensorcheck.toml`` of that revision beside it or in a folder above it), then checked like a
folder.

Everything a side needs later is plain data: the board as the JSON report writes it
(:func:`sensorcheck.report.json_report.report_data`), and where there was copper, each sensor's
outline and zone and each copper layer's image as shapely geometry.
"""

from __future__ import annotations

import contextlib
import io
import shutil
import subprocess
import tarfile
import tempfile
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from shapely.geometry.base import BaseGeometry

from sensorcheck.compare.model import SensorShape, Side, SideError, SourceKind, Which
from sensorcheck.errors import InputError, SensorcheckError

@dataclass(slots=True)
class SideSpec:
    """What the user asked for one side."""

    which: Which
    path: str
    rev: str | None = None  # a git revision: the path as it was there


def _layer_image(layer: Any) -> BaseGeometry | None:
    import shapely

    if layer.dark is not None:
        return layer.dark
    parts = [g for g in layer.by_net.values() if g is not None and not g.is_empty]
    return shapely.union_all(parts) if parts else None


def _from_design(design: Any) -> tuple[dict[str, SensorShape], dict[str, tuple[str, BaseGeometry]]]:
    shapes = {s.name: SensorShape(s.outline, s.zone) for s in design.sensors}
    copper: dict[str, tuple[str, BaseGeometry]] = {}
    for layer in design.board.copper_layers():
        img = _layer_image(layer)
        if img is not None:
            copper[layer.name] = (layer.side, img)
    return shapes, copper


def _json_side(spec: SideSpec) -> Side:
    from sensorcheck.report.writer import read_json_report

    try:
        data = read_json_report(spec.path, what="the report")
    except InputError as err:
        raise SideError(spec.which, err.describe()) from err
    boards = data["boards"]
    if len(boards) != 1 or not isinstance(boards[0], dict):
        raise SideError(spec.which, f"{spec.path}: the report holds {len(boards)} boards; compare takes a report of one")
    board = boards[0]
    for key in ("sensors", "findings"):
        if not isinstance(board.get(key), list):
            raise SideError(spec.which, f'{spec.path}: the report\'s board has no "{key}" list')
    return Side(spec.which, spec.path, "json", board)


def read_side(spec: SideSpec, check: Callable[[Path, Callable[[Any], None]], Any]) -> Side:
    """Read one side.  ``check(path, on_design)`` checks a folder or .zip (``check_board`` with the
    comparison's options) and returns its Result.  A side that cannot be read is a SideError."""
    if spec.rev is not None:
        with extracted(spec) as folder:
            side = _checked_side(spec, folder, check, "git")
        side.label = f"{spec.rev}:{spec.path}"
        return side
    p = Path(spec.path)
    if p.is_file() and p.suffix.lower() == ".json":
        return _json_side(spec)
    if not p.exists():
        raise SideError(spec.which, f"{spec.path}: no such file or folder (expected a folder or .zip of "
                                    "fabrication outputs, or a JSON report of an earlier run)")
    return _checked_side(spec, p, check, "zip" if p.is_file() else "folder")


def _checked_side(spec: SideSpec, path: Path, check: Callable[[Path, Callable[[Any], None]], Any],
                  kind: SourceKind) -> Side:
    got: list[Any] = []
    result = check(path, got.append)
    errors = [f for f in result.findings if f.kind != "finding"]
    if errors:
        raise SideError(spec.which, "; ".join(f.message for f in errors))
    return side_from(spec.which, spec.path, kind, result, got[0] if got else None)


def side_from(which: Which, label: str, kind: SourceKind, result: Any, design: Any | None) -> Side:
    """A side from a check's Result and (where the board was read) its Design."""
    from sensorcheck.report.json_report import report_data

    side = Side(which, label, kind, report_data([result])["boards"][0])
    if design is not None:
        side.shapes, side.copper = _from_design(design)
    return side


def _git(args: list[str], cwd: Path) -> subprocess.CompletedProcess[bytes]:
    try:
        return subprocess.run(["git", *args], cwd=cwd, capture_output=True, check=False, timeout=300)
    except FileNotFoundError as exc:
        raise SensorcheckError("git is not installed (needed for --rev)") from exc


@contextlib.contextmanager
def extracted(spec: SideSpec) -> Iterator[Path]:
    """The folder ``spec.path`` as it was at git revision ``spec.rev``, in a private temporary folder
    (removed afterwards); the revision's ``sensorcheck.toml`` files from the path up to the
    repository root come with it, so the config is found as it would have been."""
    which, rev = spec.which, str(spec.rev)
    target = Path(spec.path)
    start = target if target.is_dir() else target.parent
    if not start.exists():
        start = Path.cwd()
    top = _git(["rev-parse", "--show-toplevel"], start)
    if top.returncode != 0:
        raise SideError(which, f"{spec.path} is not inside a git repository (needed for --rev {rev})")
    root = Path(top.stdout.decode().strip())
    ok = _git(["rev-parse", "--verify", "--quiet", f"{rev}^{{commit}}"], root)
    if ok.returncode != 0:
        raise SideError(which, f"git revision {rev!r} does not exist in {root}")
    commit = ok.stdout.decode().strip()
    try:
        rel = (Path.cwd() / target).resolve().relative_to(root.resolve())
    except ValueError as exc:
        raise SideError(which, f"{spec.path} is not inside the repository {root}") from exc
    rel_posix = rel.as_posix() if str(rel) != "." else "."
    arch = _git(["archive", "--format=tar", commit, "--", rel_posix], root)
    if arch.returncode != 0 or not arch.stdout:
        raise SideError(which, f"{rel_posix} does not exist at git revision {rev!r} ({commit[:12]})")
    tmp = Path(tempfile.mkdtemp(prefix="sensorcheck-rev-"))
    try:
        (tmp / ".git").mkdir()  # the config search stops here, as it stops at the real repository root
        with tarfile.open(fileobj=io.BytesIO(arch.stdout)) as tar:
            tar.extractall(tmp, filter="data")
        parents = [rel, *rel.parents] if rel_posix != "." else [Path(".")]
        for folder in parents:
            name = (folder / "sensorcheck.toml").as_posix()
            out = tmp / name
            if out.exists():
                continue
            shown = _git(["show", f"{commit}:{name if folder != Path('.') else 'sensorcheck.toml'}"], root)
            if shown.returncode == 0:
                out.parent.mkdir(parents=True, exist_ok=True)
                out.write_bytes(shown.stdout)
        yield tmp / rel
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
