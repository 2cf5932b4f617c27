"""Benchmark: reading copper layers to final per-net geometry, against gerbonara's plain parse.

Target (issue 2): every copper layer of corpus board b01 (*.gtl, *.gbl) read to final per-net
geometry at the default arc tolerance, parse included, in no more than 1.5 x the time gerbonara
1.6.3 alone takes to parse the same files, both measured in this run (best of N rounds each).

    python bench/bench_read.py [FAB_FOLDER] [--rounds N]

Prints the ratio, MB/s for our parse and for our geometry (per-net unions included), and peak
memory: the process's peak resident size, and the peak of Python allocations during one read
(tracemalloc; GEOS's own memory is not in it, the resident size covers it).
"""

from __future__ import annotations

import argparse
import contextlib
import io
import resource
import sys
import time
import tracemalloc
import warnings
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(REPO))

from gerbonara.rs274x import GerberFile  # noqa: E402

from sensorcheck.fab.gerber import read_gerber  # noqa: E402
from sensorcheck.fab.gerber_parser import decode_gerber, parse_gerber_text  # noqa: E402

ARC_TOLERANCE_MM = 0.001
DEFAULT_FAB = REPO.parent / "shared" / "corpus" / "b01-slider-proto" / "fab"


def gerbonara_parse(files: list[tuple[str, bytes]]) -> None:
    with warnings.catch_warnings(), contextlib.redirect_stdout(io.StringIO()):
        warnings.simplefilter("ignore")
        for name, data in files:
            GerberFile.from_string(data.decode("utf-8"), filename=name)


def ours_full(files: list[tuple[str, bytes]]) -> int:
    nets = 0
    for name, data in files:
        got = read_gerber(data, name)  # parse + features + per-net images + dark image
        nets += len(got.by_net)
    return nets


def ours_parse(files: list[tuple[str, bytes]]) -> None:
    for name, data in files:
        parse_gerber_text(decode_gerber(data, name), name)


def best_of(fn, files, rounds: int) -> float:  # type: ignore[no-untyped-def]
    times = []
    for _ in range(rounds):
        t0 = time.perf_counter()
        fn(files)
        times.append(time.perf_counter() - t0)
    return min(times)


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("fab", nargs="?", type=Path, default=DEFAULT_FAB)
    ap.add_argument("--rounds", type=int, default=3)
    args = ap.parse_args(argv)
    paths = sorted([*args.fab.glob("*.gtl"), *args.fab.glob("*.gbl")])
    if not paths:
        print(f"no *.gtl / *.gbl in {args.fab} (the shared corpus is needed)")
        return 2
    files = [(p.name, p.read_bytes()) for p in paths]
    mb = sum(len(d) for _, d in files) / 1e6

    # warm-up (imports, caches), then alternate so both see the same machine state
    gerbonara_parse(files[:1])
    ours_full(files[:1])
    t_base = best_of(gerbonara_parse, files, args.rounds)
    t_full = best_of(ours_full, files, args.rounds)
    t_parse = best_of(ours_parse, files, args.rounds)
    t_geom = max(t_full - t_parse, 1e-9)

    tracemalloc.start()
    nets = ours_full(files)
    _, py_peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    rss_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024

    ratio = t_full / t_base
    print(f"files: {', '.join(p.name for p in paths)} ({mb:.2f} MB, {nets} net images)")
    print(f"gerbonara 1.6.3 plain parse : {t_base:7.3f} s  ({mb / t_base:5.2f} MB/s)")
    print(f"ours, parse only            : {t_parse:7.3f} s  ({mb / t_parse:5.2f} MB/s)")
    print(f"ours, geometry + per-net    : {t_geom:7.3f} s  ({mb / t_geom:5.2f} MB/s)")
    print(f"ours, total (read_gerber)   : {t_full:7.3f} s  ({mb / t_full:5.2f} MB/s)")
    print(f"ratio ours / gerbonara parse: {ratio:7.2f}  (target <= 1.50: {'met' if ratio <= 1.5 else 'NOT met'})")
    print(f"peak memory: resident {rss_mb:.0f} MB (whole process), Python allocations {py_peak / 1e6:.0f} MB (one read)")
    print(f"arc tolerance {ARC_TOLERANCE_MM} mm (read_gerber's default chord error); best of {args.rounds} rounds")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
