"""Benchmark: how reading time and peak memory grow with the size of a copper layer.

Builds large copper layers with bench/make_large_board.py (the demo board panelised, and a hatch
pour with many thousands of openings), reads each one in a fresh process to its final image and
per-net images (what the rules consume), and fits the exponents of time and peak memory (RSS)
against input size on a log-log scale.

Time is measured both as wall-clock and as the CPU time of the reading process; the time exponent
is judged on CPU time, which other work on a shared machine disturbs far less than the wall clock
(the load average is printed beside the figures). The child reads ``GerberRead.by_net``, which
the reader has already computed, as the board builder does; it does not union the nets again.

Targets: both exponents at most 1.2; a 50 MB copper layer read in under 10 minutes with peak
memory under 8 GB on a 2-core, 24 GB machine (run with --big for the 50 MB point).

    .venv/bin/python bench/bench_scale.py [--sizes 1,2,4,8] [--kinds panel,hatch] [--big]
"""

from __future__ import annotations

import argparse
import json
import math
import os
import subprocess
import sys
import tempfile
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(REPO / "bench"))

import make_large_board  # noqa: E402

CHILD = r"""
import json, sys, time
from pathlib import Path
from sensorcheck.fab.gerber import read_gerber
path = Path(sys.argv[1])
data = path.read_bytes()
t0 = time.perf_counter()
c0 = time.process_time()
read = read_gerber(data, path.name)
nets = read.by_net  # the per-net images the board builder and the rules use, computed once by the reader
seconds = time.perf_counter() - t0
cpu_seconds = time.process_time() - c0
# VmHWM: the high-water mark of this process's own memory since exec. getrusage's ru_maxrss is
# not used: Linux carries the parent's high-water mark into a forked child, so every reading would
# be at least what the parent reached while generating the largest file
peak_kb = next(int(l.split()[1]) for l in open("/proc/self/status") if l.startswith("VmHWM:"))
print(json.dumps({"seconds": seconds, "cpu_seconds": cpu_seconds, "peak_mb": peak_kb / 1024,
                  "objects": read.object_count, "nets": len(nets),
                  "area_mm2": read.dark.area if read.dark is not None else 0.0}))
"""


def _fit(xs: list[float], ys: list[float]) -> float:
    lx = [math.log(x) for x in xs]
    ly = [math.log(y) for y in ys]
    mx, my = sum(lx) / len(lx), sum(ly) / len(ly)
    sxx = sum((a - mx) ** 2 for a in lx)
    return sum((a - mx) * (b - my) for a, b in zip(lx, ly)) / sxx


def _baseline_mb() -> float:
    """Peak RSS of the same child reading a minimal Gerber file: the fixed cost of the process."""
    with tempfile.TemporaryDirectory() as tmp:
        p = Path(tmp) / "empty.gtl"
        p.write_text("%FSLAX46Y46*%\n%MOMM*%\n%ADD10C,0.1*%\nD10*\nX0Y0D03*\nM02*\n")
        return measure(p, timeout_s=120)["peak_mb"]


def measure(path: Path, timeout_s: float) -> dict[str, float]:
    proc = subprocess.run([sys.executable, "-c", CHILD, str(path)], capture_output=True, text=True, timeout=timeout_s)
    if proc.returncode != 0:
        raise RuntimeError(proc.stderr[-2000:])
    return json.loads(proc.stdout.strip().splitlines()[-1])


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__)
    ap.add_argument("--sizes", default="1,2,4,8", help="target sizes in MB")
    ap.add_argument("--kinds", default="panel,hatch")
    ap.add_argument("--big", action="store_true", help="also read one 50 MB layer of each kind")
    args = ap.parse_args(argv)
    sizes = [float(s) for s in args.sizes.split(",")]
    ok = True
    with tempfile.TemporaryDirectory() as tmp:
        for kind in args.kinds.split(","):
            rows = []
            for mb in sizes + ([50.0] if args.big else []):
                path = make_large_board.make(Path(tmp) / f"{kind}-{mb}", mb, kind)  # type: ignore[arg-type]
                size_mb = path.stat().st_size / 1e6
                m = measure(path, timeout_s=1200)
                rows.append((size_mb, m))
                print(f"{kind:6s} {size_mb:7.2f} MB: {m['seconds']:8.2f} s ({m['cpu_seconds']:7.2f} s CPU), "
                      f"peak {m['peak_mb']:8.1f} MB, {int(m['objects'])} objects, {int(m['nets'])} nets, "
                      f"{m['cpu_seconds'] and size_mb / m['cpu_seconds']:.2f} MB/CPU-s, "
                      f"load {os.getloadavg()[0]:.1f}", flush=True)
                path.unlink()
            fit_rows = [r for r in rows if r[0] <= max(sizes) * 1.5]
            xs = [r[0] for r in fit_rows]
            t_exp_wall = _fit(xs, [r[1]["seconds"] for r in fit_rows])
            t_exp = _fit(xs, [r[1]["cpu_seconds"] for r in fit_rows])
            # peak RSS includes the interpreter and its imports (about 150 MB), which makes the fitted
            # exponent look smaller than the growth of what the input costs: fit both and print both
            m_exp = _fit(xs, [r[1]["peak_mb"] for r in fit_rows])
            base = _baseline_mb()
            m_exp_net = _fit(xs, [max(r[1]["peak_mb"] - base, 1.0) for r in fit_rows])
            print(f"{kind}: peak memory above the {base:.0f} MB of an empty read: exponent {m_exp_net:.2f}")
            print(f"{kind}: time exponent {t_exp:.2f} (CPU; wall clock {t_exp_wall:.2f}), "
                  f"peak-memory exponent {m_exp:.2f} (targets <= 1.2)")
            ok &= t_exp <= 1.2 and m_exp_net <= 1.2
            if len(fit_rows) < len(rows):  # the 50 MB point too: the growth over the whole range
                xs_all = [r[0] for r in rows]
                print(f"{kind}: with the 50 MB point: time exponent "
                      f"{_fit(xs_all, [r[1]['cpu_seconds'] for r in rows]):.2f} (CPU), peak memory above "
                      f"an empty read {_fit(xs_all, [max(r[1]['peak_mb'] - base, 1.0) for r in rows]):.2f}")
            for size_mb, m in rows:
                if size_mb >= 45:
                    good = m["seconds"] < 600 and m["peak_mb"] < 8192
                    ok &= good
                    print(f"{kind}: 50 MB point {m['seconds']:.0f} s, {m['peak_mb']:.0f} MB "
                          f"({'within' if good else 'OUTSIDE'} 600 s / 8192 MB)")
    print("all targets met" if ok else "some targets missed")
    return 0


if __name__ == "__main__":
    sys.exit(main())
