"""File identification against a truth table written by hand (issue 18).

For each folder of ``tests/fab/data/identify_truth.toml`` (the shared peer suites and the corpus),
read the folder as the ``layers``/``check`` commands do and print: files, right, wrong, missing;
copper layers (inner included) and drill files identified; unit errors.

* right: the file got the layer the table gives it, and no error;
* wrong: it got another layer, or an error (a duplicate claim, an extent refusal);
* missing: the table gives it a layer and we said "not understood";
* unit errors: a drill file whose units as read differ from the ones its header states (the
  table's ``[units]``), or whose plated holes mostly miss the copper while the file carries no
  error (a silent scale error: a plated hole always has copper around it), or an outline whose
  extent is about 25.4 times (or 1/25.4 of) the copper's, with no error: "silent" ones are those with no
  error on the file.

Usage: ``.venv/bin/python bench/bench_identify.py [--shared ../shared] [--folder SUBSTRING]``.
Needs ``../shared``. Not a speed benchmark: it counts.
"""

from __future__ import annotations

import argparse
import contextlib
import shutil
import sys
import tempfile
import tomllib
from collections.abc import Iterator
from dataclasses import dataclass, field
from pathlib import Path

import shapely

REPO = Path(__file__).resolve().parents[1]
TRUTH = REPO / "tests" / "fab" / "data" / "identify_truth.toml"
_LAYERED = ("copper", "mask", "paste", "silk", "outline")


@dataclass
class Score:
    folder: str
    files: int = 0
    right: int = 0
    wrong: int = 0
    missing: int = 0
    copper: int = 0
    copper_right: int = 0
    drills: int = 0
    drills_right: int = 0
    unit_errors: int = 0
    silent_unit_errors: int = 0
    problems: list[str] = field(default_factory=list)


def load_truth(path: Path = TRUTH) -> tuple[dict[str, dict[str, str]], dict[str, dict[str, str]]]:
    doc = tomllib.loads(path.read_text(encoding="utf-8"))
    return doc["layers"], doc.get("units", {})


def folder_of(group: str) -> str:
    """``"gerber-suites/pcb-tools-resources#board"`` -> ``"gerber-suites/pcb-tools-resources"``."""
    return group.split("#", 1)[0]


def listed_files(root: Path) -> list[str]:
    return sorted(p.relative_to(root).as_posix() for p in root.rglob("*") if p.is_file())


@contextlib.contextmanager
def materialise(shared: Path, group: str, names: list[str]) -> Iterator[Path]:
    """The folder itself when the table lists all its files, else a temporary copy of those listed."""
    root = shared / folder_of(group)
    if sorted(names) == listed_files(root):
        yield root
        return
    with tempfile.TemporaryDirectory(prefix="identify-") as tmp:
        dest = Path(tmp) / Path(folder_of(group)).name
        for name in names:
            (dest / name).parent.mkdir(parents=True, exist_ok=True)
            shutil.copyfile(root / name, dest / name)
        yield dest


def label_of(role: str | None, layer: str | None) -> str:
    if role is None:
        return "none"
    if role in _LAYERED:
        return layer or f"{role}?"
    return role


def score_board(group: str, board, truth: dict[str, str], units: dict[str, str]) -> Score:  # type: ignore[no-untyped-def]
    s = Score(group)
    infos = {f.path: f for f in board.files}
    for name in sorted(set(truth) | set(infos)):
        want = truth.get(name, "<not in table>")
        info = infos.get(name)
        got = label_of(info.role, info.layer) if info is not None else "<not listed>"
        s.files += 1
        if want.endswith("-copper"):
            s.copper += 1
        if want == "drill":
            s.drills += 1
        if info is not None and got == want and not info.error:
            s.right += 1
            s.copper_right += want.endswith("-copper")
            s.drills_right += want == "drill"
        elif got == "none" and want != "none":
            s.missing += 1
            s.problems.append(f"missing {name}: want {want}; {info.note if info else ''}")
        else:
            s.wrong += 1
            s.problems.append(f"wrong {name}: want {want}, got {got}; {info.error or '' if info else ''}")
    # units: as stated in the header (table) against as read
    for name, want_units in units.items():
        info = infos.get(name)
        if info is None or info.units is None or info.units == want_units:
            continue
        s.unit_errors += 1
        s.silent_unit_errors += not info.error
        s.problems.append(f"units {name}: header says {want_units}, read as {info.units}{'' if info.error else ' (silent)'}")
    # geometry: plated holes sit in copper; the outline is about as large as the copper
    copper = [layer.dark for layer in board.copper_layers() if layer.dark is not None and not layer.dark.is_empty]
    if copper:
        cu = shapely.union_all(copper)
        shapely.prepare(cu)
        by_file: dict[str, list] = {}
        for h in board.holes:
            if h.plated is not False:
                by_file.setdefault(h.source.file, []).append(h)
        for fname, holes in by_file.items():
            if len(holes) < 3:
                continue
            hits = int(shapely.contains_xy(cu, [h.x_mm for h in holes], [h.y_mm for h in holes]).sum())
            if hits < 0.5 * len(holes):
                info = infos.get(fname)
                s.unit_errors += 1
                silent = info is None or not info.error
                s.silent_unit_errors += silent
                s.problems.append(f"holes {fname}: only {hits}/{len(holes)} plated holes in copper{' (silent)' if silent else ''}")
        if board.outline is not None and not board.outline.is_empty:
            ob, cb = board.outline.bounds, cu.bounds
            osize, csize = max(ob[2] - ob[0], ob[3] - ob[1]), max(cb[2] - cb[0], cb[3] - cb[1])
            ratio = osize / csize if csize > 0 else 1.0
            if any(0.5 <= ratio / f <= 2.0 for f in (25.4, 1 / 25.4)):  # the same board at another scale
                s.unit_errors += 1
                s.silent_unit_errors += 1
                s.problems.append(f"outline {osize:.1f} mm across against copper {csize:.1f} mm (silent)")
    return s


def score_group(shared: Path, group: str, truth: dict[str, str], units: dict[str, str]) -> Score:
    from sensorcheck.board.build import load_board

    with materialise(shared, group, sorted(truth)) as folder:
        board = load_board(folder)
    return score_board(group, board, truth, units)


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--shared", type=Path, default=REPO.parent / "shared")
    ap.add_argument("--folder", default="", help="only folders whose name contains this")
    ap.add_argument("--quiet", action="store_true", help="no per-file problems")
    args = ap.parse_args(argv)
    if not args.shared.is_dir():
        print(f"{args.shared} not found", file=sys.stderr)
        return 2
    layers, units = load_truth()
    total = Score("TOTAL")
    head = f"{'folder':48} {'files':>5} {'right':>5} {'wrong':>5} {'miss':>5} {'copper':>7} {'drills':>7} {'units':>6}"
    print(head)
    print("-" * len(head))
    for group in sorted(layers):
        if args.folder not in group:
            continue
        s = score_group(args.shared, group, layers[group], units.get(group, {}))
        for k in ("files", "right", "wrong", "missing", "copper", "copper_right", "drills", "drills_right",
                  "unit_errors", "silent_unit_errors"):
            setattr(total, k, getattr(total, k) + getattr(s, k))
        print(f"{group[-48:]:48} {s.files:5} {s.right:5} {s.wrong:5} {s.missing:5} {s.copper_right:3}/{s.copper:<3} "
              f"{s.drills_right:3}/{s.drills:<3} {s.unit_errors:2}/{s.silent_unit_errors:<2}")
        if not args.quiet:
            for p in s.problems:
                print(f"    {p}")
    t = total
    print("-" * len(head))
    print(f"{'TOTAL':48} {t.files:5} {t.right:5} {t.wrong:5} {t.missing:5} {t.copper_right:3}/{t.copper:<3} "
          f"{t.drills_right:3}/{t.drills:<3} {t.unit_errors:2}/{t.silent_unit_errors:<2}")
    print("copper and drills: identified/in the table; units: unit errors/of them silent")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
