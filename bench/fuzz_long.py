"""Long fuzzing run of the readers (issue 6, item 1): the properties of tests/hardening/test_mutations.py
with many more examples, every corpus file as a seed (the suite takes only small ones), no stop at
the first failure.

    python bench/fuzz_long.py --seconds 300            # about 5 minutes, split over the readers
    python bench/fuzz_long.py --examples 5000 --reader gerber

Each example runs in a worker process with the suite's time and memory bounds
(tests/hardening/__init__.py). Prints, per reader, the examples run and how they ended (returned,
our error, known bug, problem), then each distinct problem with a reproducer file written under
--out. Exit status 1 when a problem that is not a known bug was seen.
"""

from __future__ import annotations

import argparse
import warnings
import re
import sys
import time
from collections import Counter
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
sys.path[:0] = [str(REPO), str(REPO / "tests")]

from hypothesis import HealthCheck, Phase, given, settings  # noqa: E402

from hardening import READERS, Reader, Worker, problem  # noqa: E402
from hardening.test_mutations import Example, examples, known_bug  # noqa: E402


class _TimeUp(Exception):
    """Raised in the property when the reader's share of time is spent (hypothesis stops on it)."""


def _signature(found: str) -> str:
    """A problem's kind, without the numbers and names that differ from one example to the next."""
    return re.sub(r"\d+", "N", re.sub(r"'[^']*'", "'...'", found))[:160]


def fuzz_reader(reader: Reader, examples_n: int, seconds: float, out: Path, worker: Worker) -> tuple[Counter[str], dict[str, tuple[str, Example]]]:
    counts: Counter[str] = Counter()
    problems: dict[str, tuple[str, Example]] = {}
    stop_at = time.monotonic() + seconds

    @settings(max_examples=examples_n, deadline=None, database=None, phases=[Phase.generate],
              suppress_health_check=list(HealthCheck))
    @given(example=examples(reader, None))
    def run(example: Example) -> None:
        if time.monotonic() > stop_at:
            raise _TimeUp
        outcome = worker.run(reader, example.data, example.name)
        found = problem(outcome, example.name, example.data)
        counts["examples"] += 1
        if found is None:
            counts["returned" if outcome.kind == "ok" else "our error"] += 1
            return
        bug = known_bug(reader, found, example.data)
        if bug:
            counts[f"known bug {bug}"] += 1
            return
        counts["PROBLEM"] += 1
        sig = _signature(found)
        if sig not in problems:
            problems[sig] = (found, example)
            out.mkdir(parents=True, exist_ok=True)
            (out / f"{reader}-{len(problems)}-{Path(example.name).name}").write_bytes(example.data)

    try:
        run()
    except _TimeUp:
        pass
    return counts, problems


def main(argv: list[str] | None = None) -> int:
    warnings.simplefilter("ignore")  # hypothesis warns about the repr of large examples it will not print
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--examples", type=int, default=1_000_000, help="most examples per reader")
    ap.add_argument("--seconds", type=float, default=300.0, help="time for the whole run, split over the readers")
    ap.add_argument("--reader", choices=READERS, action="append", help="only these readers (repeatable)")
    ap.add_argument("--out", type=Path, default=Path("fuzz-findings"), help="where reproducers are written")
    args = ap.parse_args(argv)
    readers: tuple[Reader, ...] = tuple(args.reader or READERS)
    # the Gerber reader is the biggest surface and the slowest per example: it gets half the time
    weights = {r: (3.0 if r == "gerber" else 1.0) for r in readers}
    total_w = sum(weights.values())
    new_problems = 0
    t0 = time.monotonic()
    with Worker() as worker:
        for reader in readers:
            share = args.seconds * weights[reader] / total_w
            t = time.monotonic()
            counts, problems = fuzz_reader(reader, args.examples, share, args.out, worker)
            took = time.monotonic() - t
            detail = ", ".join(f"{k} {v}" for k, v in sorted(counts.items()) if k != "examples")
            print(f"{reader:9s} {counts['examples']:7d} examples in {took:6.1f} s ({detail})", flush=True)
            for sig, (found, ex) in problems.items():
                new_problems += 1
                print(f"  PROBLEM {found[:400]}\n    input: {ex!r}", flush=True)
        print(f"worker restarts (hangs or deaths): {worker.restarts}; total {time.monotonic() - t0:.0f} s")
    return 1 if new_problems else 0


if __name__ == "__main__":
    raise SystemExit(main())
