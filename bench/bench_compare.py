"""Benchmark: ``compare`` of two demo revisions against one ``check`` of one of them.

Targets (issue 13):

1. compare of the two demo revisions (boards/tm1-clean -> boards/tm1-revc) in at most 1.2x the
   time of one check of tm1-clean;
2. where only one sensor's window changed, at most the cost of one sensor solve plus reading both.

Every time here is measured in this process, in the same run; the ratios count, not the seconds.
Revision C thickens the front panel, which changes every solve window (the overlay is part of
each window's fingerprint), so compare solves every window of both sides unless the old side's
windows are already in the cache: that is the CI set-up the README shows (``--cache DIR`` kept
between pipeline runs, filled by the target branch's own run).  Both are measured: "cold" (empty
cache: about two checks) and "warm" (the old side's windows cached by an earlier run).

For target 2 a variant of revision B is made (in a temporary folder) with a 6 x 6 mm area cleared
in the top ground pour at x 95-101, y 57-63 mm (a keep-out for a label): inside BTN2's solve
window and no other.  (Smaller changes there do not do: a ground via removed or a small test pad
added is filled over by the solver's model of the hatched pour as a sheet, so no window's
fingerprint changes and compare rightly solves nothing.)  Its cost is compared with
reading and checking both boards without estimates plus one solve of BTN2; the number of windows
solved is counted (it must be 1).

    .venv/bin/python bench/bench_compare.py [--part 1|2]
"""

from __future__ import annotations

import argparse
import importlib.util
import sys
import tempfile
import time
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
BOARDS = REPO / "boards"


def _demo():  # type: ignore[no-untyped-def]
    spec = importlib.util.spec_from_file_location("_make_demo", BOARDS / "make_demo.py")
    assert spec and spec.loader
    mod = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = mod  # dataclasses look their module up while the script runs
    spec.loader.exec_module(mod)
    return mod


def _timed(fn):  # type: ignore[no-untyped-def]
    t0 = time.perf_counter()
    out = fn()
    return time.perf_counter() - t0, out


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__)
    ap.add_argument("--part", choices=["1", "2", "all"], default="all", help="only target 1 or 2")
    args = ap.parse_args(argv)
    from sensorcheck.check import CheckOptions, build_design_for, check_board
    from sensorcheck.commands.compare import compare_paths
    from sensorcheck.compare.sides import SideSpec
    from sensorcheck.physics.cache import WindowCache
    from sensorcheck.physics.schedule import estimate_design

    old, new = BOARDS / "tm1-clean", BOARDS / "tm1-revc"
    rows: list[tuple[str, float, str]] = []

    def row(name: str, secs: float, what: str = "") -> None:  # printed as it comes: a long run loses nothing
        rows.append((name, secs, what))
        print(f"{name:<46}  {secs:8.1f} s  {what}", flush=True)

    with tempfile.TemporaryDirectory() as tmp:
        # the check of revision B keeps its windows on disk, as the target branch's pipeline would
        # (writing five small files: nothing against the solves)
        warm_dir = Path(tmp) / "warm"
        with WindowCache(warm_dir).active():
            t_check, _ = _timed(lambda: check_board(old, CheckOptions()))
        row("check tm1-clean", t_check, "5 windows solved")
        if args.part in ("1", "all"):
            warm = WindowCache(warm_dir)
            t_warm, cmp = _timed(lambda: compare_paths(SideSpec("old", str(old)), SideSpec("new", str(new)), cache=warm))
            row("compare clean -> revc, old side cached", t_warm, f"{cmp.windows_solved} solved, {cmp.windows_reused} reused")
            cold = WindowCache(Path(tmp) / "cold")
            t_cold, cmp = _timed(lambda: compare_paths(SideSpec("old", str(old)), SideSpec("new", str(new)), cache=cold))
            row("compare clean -> revc, cold cache", t_cold, f"{cmp.windows_solved} solved, {cmp.windows_reused} reused")
            print(f"target 1 (<= 1.2x one check): cold {t_cold / t_check:.2f}x, old side cached {t_warm / t_check:.2f}x")
        if args.part == "1":
            return 0

        # target 2: one window changed
        demo = _demo()
        build = demo.build

        def with_void(rev):  # type: ignore[no-untyped-def]
            b = build(rev)
            b._cut_rect("top", (95.0, 57.0, 101.0, 63.0))
            return b

        demo.build = with_void
        variant = demo.write_board(demo.replace(demo.CLEAN, folder="tm1-void"), Path(tmp))
        one = WindowCache(warm_dir)
        t_one, cmp = _timed(lambda: compare_paths(SideSpec("old", str(old)), SideSpec("new", str(variant)), cache=one))
        changed = [s.name for s in cmp.sensors if s.status != "unchanged"]
        row("compare clean -> pour void near BTN2, old cached", t_one,
            f"{cmp.windows_solved} solved, {cmp.windows_reused} reused; changed: {', '.join(changed) or 'none'}")
        t_read, _ = _timed(lambda: (check_board(old, CheckOptions(estimate=False)),
                                    check_board(variant, CheckOptions(estimate=False))))
        row("  read + rules of both, no estimates", t_read)
        design = build_design_for(variant)
        t_solve, _ = _timed(lambda: estimate_design(design, sensors=["BTN2"], workers=1))
        row("  one solve of BTN2", t_solve)

    print(f"target 2 (<= one solve + reading both): {t_one:.1f} s against {t_read + t_solve:.1f} s "
          f"= {t_one / (t_read + t_solve):.2f}x")
    return 0


if __name__ == "__main__":
    sys.exit(main())
