"""Sensor recognition against truth: a table per board (corpus and synthetic boards).

For each board: `sensorcheck init`'s starter config, loaded and turned into a design as a user's
first check would, scored against the board's truth (tests/recognition/truth.py): truth sensors,
recognised right (kind and nets or places), wrong kind, missed, false sensors.  Corpus truth:
tests/corpus/truth/<board>.toml (from the designers' statements); synthetic boards and their truth:
tests/recognition/synth_boards.py.  Target (issue 12): at least 95 % right over all boards, no board
below 80 %, no false sensor.

    .venv/bin/python bench/bench_recognition.py [--corpus ../shared/corpus] [--only NAME]
"""

from __future__ import annotations

import argparse
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from sensorcheck.board.build import load_board  # noqa: E402
from sensorcheck.commands.init import starter_config  # noqa: E402
from sensorcheck.design.config import load_config  # noqa: E402
from sensorcheck.design.sensors import build_design  # noqa: E402
from tests.recognition.synth_boards import write_all  # noqa: E402
from tests.recognition.truth import TRUTH_DIR, Score, load_truth, score  # noqa: E402


def score_board(label: str, folder: Path, truth: list, tmp: Path) -> Score:
    board = load_board(folder)
    cfg = tmp / f"{label}.toml"
    cfg.write_text(starter_config(board), encoding="utf-8")
    design = build_design(board, load_config(cfg))
    return score(label, design, truth)


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--corpus", type=Path, default=ROOT.parent / "shared" / "corpus")
    ap.add_argument("--only", help="boards whose label holds this text")
    ap.add_argument("-v", action="store_true", help="list what was wrong per board")
    args = ap.parse_args(argv)
    rows: list[Score] = []
    with tempfile.TemporaryDirectory() as t:
        tmp = Path(t)
        boards = [(p.stem, args.corpus / p.stem / "fab", load_truth(p)) for p in sorted(TRUTH_DIR.glob("*.toml"))
                  if (args.corpus / p.stem / "fab").is_dir()]
        boards += write_all(tmp / "synth")
        for label, folder, truth in boards:
            if args.only and args.only not in label:
                continue
            rows.append(score_board(label, folder, truth, tmp))
    w = max(len(r.board) for r in rows)
    print(f"{'board':{w}}  truth  right  wrong-kind  missed  false   right%")
    for r in rows:
        print(f"{r.board:{w}}  {r.truth:5d}  {r.right:5d}  {r.wrong_kind:10d}  {r.missed:6d}  {r.false:5d}  "
              f"{100 * r.share:6.1f}")
        if args.v:
            for d in r.details:
                print(f"{'':{w}}    {d}")
    tt, rt, ft = sum(r.truth for r in rows), sum(r.right for r in rows), sum(r.false for r in rows)
    share = rt / tt if tt else 1.0
    worst = min(rows, key=lambda r: r.share)
    print(f"{'total':{w}}  {tt:5d}  {rt:5d}  {sum(r.wrong_kind for r in rows):10d}  "
          f"{sum(r.missed for r in rows):6d}  {ft:5d}  {100 * share:6.1f}")
    ok = share >= 0.95 and worst.share >= 0.80 and ft == 0
    print(f"target (>= 95 % overall, no board below 80 %, no false sensor): {'MET' if ok else 'NOT MET'} "
          f"(overall {100 * share:.1f} %, worst {worst.board} {100 * worst.share:.1f} %, {ft} false)")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
