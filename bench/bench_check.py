"""Benchmark: the full check without field solves against reading the same board alone.

Target (issue: rules and reports): the full check of b01 and b04 takes no more than 1.5x the time
of reading those boards alone. Both are measured in this process, in the same run; the ratio is
what counts, not the seconds. Roles come from `sensorcheck init`'s starter config (what a user
gets on day one), written to a temporary folder.

    .venv/bin/python bench/bench_check.py [--repeat N]
"""

from __future__ import annotations

import argparse
import statistics
import sys
import tempfile
import time
from pathlib import Path

from sensorcheck.board.build import load_board
from sensorcheck.check import CheckOptions, check_board
from sensorcheck.commands.init import starter_config

REPO = Path(__file__).resolve().parents[1]
CORPUS = REPO.parent / "shared" / "corpus"
BOARDS = ("b01-slider-proto", "b04-keys-4layer")


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__)
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args(argv)
    if not CORPUS.is_dir():
        print("../shared/corpus is absent: nothing to measure")
        return 0
    worst = 0.0
    for board_id in BOARDS:
        fab = CORPUS / board_id / "fab"
        with tempfile.TemporaryDirectory() as tmp:
            cfg = Path(tmp) / "sensorcheck.toml"
            cfg.write_text(starter_config(load_board(fab)), encoding="utf-8")
            read_s: list[float] = []
            check_s: list[float] = []
            read_cpu: list[float] = []
            check_cpu: list[float] = []
            for _ in range(args.repeat):
                t0, c0 = time.perf_counter(), time.process_time()
                load_board(fab)
                read_s.append(time.perf_counter() - t0)
                read_cpu.append(time.process_time() - c0)
                t0, c0 = time.perf_counter(), time.process_time()
                result = check_board(fab, CheckOptions(config_file=cfg, estimate=False))
                check_s.append(time.perf_counter() - t0)
                check_cpu.append(time.process_time() - c0)
            r, c = statistics.median(read_s), statistics.median(check_s)
            ratio = c / r
            # CPU time is steadier than wall time on a shared machine (the check runs in one thread)
            cpu_ratio = statistics.median(check_cpu) / statistics.median(read_cpu)
            worst = max(worst, ratio)
            print(
                f"{board_id}: read {min(read_s):.2f}/{r:.2f}/{max(read_s):.2f} s (min/median/max), "
                f"check without solves {min(check_s):.2f}/{c:.2f}/{max(check_s):.2f} s, "
                f"ratio {ratio:.2f} (target <= 1.50; CPU-time ratio {cpu_ratio:.2f}); {len(result.sensors)} sensors, "
                f"{len(result.findings)} findings"
            )
    print(f"worst ratio {worst:.2f}: {'OK' if worst <= 1.5 else 'ABOVE TARGET'}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
