"""Estimates at board scale: the full check with estimates on corpus boards and a generated touchpad.

Cases (each run in a fresh child process, so that its CPU time and peak memory are its own):

* ``b06``: corpus b06-keyboard (26 self keys, 2 layers), tests/corpus/configs/b06-keyboard.toml;
* ``b02``: corpus b02-buttons-4layer (18 self buttons, 4 layers), tests/corpus/configs/b02-...toml;
* ``b04``: corpus b04-keys-4layer (36 mutual keys + 2 hand-sense electrodes, 4 layers);
* ``touchpad``: bench/make_touchpad.py, ROWSxCOLUMNS mutual nodes (``--touchpad 10x16``).

Printed per case: wall and CPU time (the process and its worker processes), peak RSS (the
largest of the process and of any worker), time per sensor, and the largest relative difference
of every estimate value (baseline, touch delta, %, crosstalk, turning point; the turning point
also as mm) against the reference in ``bench/board_reference.json``.  That reference was made by
the solver settings of the commit that wrote it (``--write-reference``); regenerate it only on a
deliberate physics change and say so in the commit.  ``--sizes`` prints the exponent of CPU time
against the number of sensors over four touchpad sizes (1.0: linear).

Targets (issue 10): b06 <= 30 s wall and <= 60 s CPU on 2 cores, peak RSS <= 1 GB; b02 <= 60 s
wall; the 160-node touchpad <= 120 s wall; every estimate within 1 % of the reference (turning
point within 0.1 mm).  Timings depend on the machine's load: the load average is printed.

    python bench/bench_board.py [--cases b06,b02,b04,touchpad] [--touchpad 10x16] [--sizes]
    python bench/bench_board.py --write-reference --cases b06 ...

``--memory`` (issue 15 item 4) prints the peak RSS of one window of 4 000, 8 000 and 12 000 board
panels (two copper planes of a 1.6 mm board under a 2 mm overlay, factorised, then one finger
position), each in a fresh child process: the operator of physics/operator.py, and at 4 000 also
the whole-matrix float64 path it replaced (bem.assemble + LU), for comparison.  Target: at most
4 GB per worker at the panel limit (12 000).

``CASE:N`` (e.g. ``b02:2``) reads the board and estimates only its first N sensors (no rules): a
part of a board whose full reference run costs too much on a shared machine.
"""

from __future__ import annotations

import argparse
import json
import math
import os
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path
from typing import Any

REPO = Path(__file__).resolve().parents[1]
if str(REPO) not in sys.path:
    sys.path.insert(0, str(REPO))

CORPUS = REPO.parent / "shared" / "corpus"
CONFIGS = Path(__file__).resolve().parents[1] / "tests" / "corpus" / "configs"
REFERENCE = Path(__file__).resolve().parent / "board_reference.json"
BOARDS = {
    "b06": ("b06-keyboard", "b06-keyboard.toml"),
    "b02": ("b02-buttons-4layer", "b02-buttons-4layer.toml"),
    "b04": ("b04-keys-4layer", "b04-keys-4layer.toml"),
}
#: wall-time targets (s) of issue 10, where it sets one
WALL_TARGET_S = {"b06": 30.0, "b02": 60.0, "touchpad-10x16": 120.0}
CPU_TARGET_S = {"b06": 60.0}
RSS_TARGET_MB = {"b06": 1024.0}
REL_TARGET = 0.01
TP_TARGET_MM = 0.1


def case_paths(case: str, work: Path) -> tuple[Path, Path]:
    """(board folder, config file) of a case; a touchpad case is generated into ``work``."""
    if case in BOARDS:
        folder, cfg = BOARDS[case]
        return CORPUS / folder / "fab", CONFIGS / cfg
    if case.startswith("touchpad-"):
        sys.path.insert(0, str(Path(__file__).resolve().parent))
        from make_touchpad import make  # noqa: PLC0415

        rows, cols = (int(v) for v in case.split("-", 1)[1].split("x"))
        root = make(work, rows, cols)
        return root / "fab", root / "sensorcheck.toml"
    raise SystemExit(f"unknown case {case!r}")


def estimate_values(summary_estimate: dict[str, Any]) -> dict[str, Any]:
    """The values the reference keeps of one sensor's estimate."""
    e = summary_estimate
    return {
        "baseline_pf": e["baseline_pf"],
        "touch_delta_pf": e["touch_delta_pf"],
        "percent_change": e["percent_change"],
        "turning_point_mm": e["turning_point_mm"],
        "crosstalk_pf": dict(e["crosstalk_pf"]),
    }


def run_one(case: str, out: Path) -> None:
    """Child process: one full check with estimates (or, for ``CASE:N``, reading and the estimates
    of the first N sensors only); writes times, memory and the estimates."""
    from sensorcheck.check import CheckOptions, build_design_for, check_board

    base, _, first = case.partition(":")
    with tempfile.TemporaryDirectory() as tmp:
        fab, cfg = case_paths(base, Path(tmp))
        lines: list[str] = []
        t0, c0 = time.perf_counter(), time.process_time()
        if first:
            from sensorcheck.physics.schedule import estimate_design

            design = build_design_for(fab, cfg)
            names = [s.name for s in design.sensors][: int(first)]
            errors: list[str] = []
            est = estimate_design(design, sensors=names, errors=errors)
            estimates = {n: estimate_values({"baseline_pf": e.baseline_pf, "touch_delta_pf": e.touch_delta_pf,
                                             "percent_change": e.percent_change, "turning_point_mm": e.turning_point_mm,
                                             "crosstalk_pf": e.crosstalk_pf}) for n, e in est.items()}
            n_sensors, missing, findings = len(names), [n for n in names if n not in est], []
        else:
            result = check_board(fab, CheckOptions(config_file=cfg, estimate=True), progress=lines.append)
            estimates = {s.name: estimate_values(s.estimate) for s in result.sensors if s.estimate is not None}
            n_sensors, missing = len(result.sensors), [s.name for s in result.sensors if s.estimate is None]
            errors = [f.message for f in result.findings if f.rule_id.startswith(("internal.", "estimate.", "input."))]
            findings = sorted([f.rule_id, f.severity, f.sensor or "", f.message] for f in result.findings)
        wall = time.perf_counter() - t0
    me, kids = resource.getrusage(resource.RUSAGE_SELF), resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = time.process_time() - c0 + kids.ru_utime + kids.ru_stime
    out.write_text(json.dumps({
        "case": case, "wall_s": wall, "cpu_s": cpu, "rss_mb": max(me.ru_maxrss, kids.ru_maxrss) / 1024.0,
        "sensors": n_sensors, "estimates": estimates, "missing": missing, "errors": errors, "findings": findings,
    }, indent=1, sort_keys=True))


MEMORY_PANELS = (4000, 8000, 12000)
MEMORY_TARGET_MB = 4096.0


def memory_window(n_panels: int) -> tuple[Any, Any, int]:
    """Panels of a synthetic window (about ``n_panels`` square panels on two copper planes, three
    conductors), the layered medium, and the conductor count."""
    import numpy as np

    from sensorcheck.physics.bem import Panels
    from sensorcheck.physics.greens import LayeredMedium

    side = int(round(math.sqrt(n_panels / 2.0)))
    h = 40e-3 / side  # a 40 mm square window
    xs = (np.arange(side) - side / 2.0) * h
    x, y = np.meshgrid(xs, xs, indexing="ij")
    x, y = x.ravel(), y.ravel()
    quads = []
    conds = []
    for z, plane in ((1.6e-3, 0), (0.0, 1)):
        corners = np.stack([np.stack([x, y], 1), np.stack([x + h, y], 1), np.stack([x + h, y + h], 1), np.stack([x, y + h], 1)], 1)
        quads.append(np.concatenate([corners, np.full(corners.shape[:2] + (1,), z)], axis=2))
        r = np.hypot(x + h / 2, y + h / 2)
        conds.append(np.where(plane == 1, 2, np.where(r < 6e-3, 0, np.where(r < 7e-3, 2, 1))))
    medium = LayeredMedium(eps_r=(1.0, 3.0, 4.5, 1.0), interfaces_m=(3.6e-3, 1.6e-3, 0.0), tol=1e-6)
    return Panels(np.concatenate(quads), np.concatenate(conds)), medium, 3


def run_memory(spec: str, out: Path) -> None:
    """Child process: one window of ``spec`` = ``N`` (the operator) or ``N:dense`` (the old path)."""
    import numpy as np

    from sensorcheck.physics import bem

    n_s, _, how = spec.partition(":")
    panels, medium, k = memory_window(int(n_s))
    base = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
    t0, c0 = time.perf_counter(), time.process_time()
    if how == "dense":
        import scipy.linalg as sla

        a = bem.assemble(panels, medium)
        sla.lu_factor(a, overwrite_a=True, check_finite=False)
        n_done = len(panels)
    else:
        from sensorcheck.physics.model import finger_panels
        from sensorcheck.design.model import Finger
        from sensorcheck.physics.model import SolverOptions
        from sensorcheck.physics.finger import FINGER_DEFAULTS

        system = bem.BoardSystem(panels, medium, k)
        finger: Finger = FINGER_DEFAULTS
        body = finger_panels(finger, 0.0, 0.0, 3.62e-3, SolverOptions())
        system.with_body(body, (3.62e-3, 3.62e-3 + 40e-3))
        n_done = system.op.n
    out.write_text(json.dumps({"panels": n_done, "rss_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0,
                               "rss_before_mb": base, "wall_s": time.perf_counter() - t0, "cpu_s": time.process_time() - c0,
                               "dtype": str(np.dtype(getattr(__import__("sensorcheck.physics.operator", fromlist=["STORAGE"]), "STORAGE")))}))


def memory_table() -> None:
    from sensorcheck.physics.operator import worker_bytes

    print(f"{'panels':>7s} {'path':28s} {'peak RSS MB':>11s} {'budget MB':>9s} {'CPU s':>7s}")
    for n in MEMORY_PANELS:
        for how in (["dense", ""] if n == MEMORY_PANELS[0] else [""]):
            with tempfile.TemporaryDirectory() as tmp:
                out = Path(tmp) / "mem.json"
                spec = f"{n}:{how}" if how else str(n)
                subprocess.run([sys.executable, str(Path(__file__).resolve()), "--one-memory", spec, "--out", str(out)], check=True)
                r = json.loads(out.read_text())
            label = "float64 whole matrix (before)" if how else f"operator ({r['dtype']})"
            budget = "" if how else f"{worker_bytes(r['panels']) / 2**20:9.0f}"
            print(f"{r['panels']:7d} {label:28s} {r['rss_mb']:11.0f} {budget:>9s} {r['cpu_s']:7.1f}")
            if not how and n == MEMORY_PANELS[-1]:
                ok = r["rss_mb"] <= MEMORY_TARGET_MB
                print(f"  target: at most {MEMORY_TARGET_MB:g} MB per worker at {n} panels: {'met' if ok else 'NOT met'}")


def measure(case: str) -> dict[str, Any]:
    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp) / "case.json"
        subprocess.run([sys.executable, str(Path(__file__).resolve()), "--one", case, "--out", str(out)], check=True)
        return json.loads(out.read_text())


def _rel(a: float, b: float) -> float:
    if a == b:
        return 0.0
    return abs(a - b) / max(abs(b), 1e-12)


def compare(run: dict[str, Any], ref: dict[str, Any]) -> dict[str, float]:
    """Largest relative difference per value over the sensors both hold (turning point also in mm)."""
    worst = {"baseline_pf": 0.0, "touch_delta_pf": 0.0, "percent_change": 0.0, "crosstalk_pf": 0.0,
             "turning_point_mm": 0.0, "turning_point_abs_mm": 0.0, "turning_point_presence": 0.0}
    for name, r in ref.items():
        e = run.get(name)
        if e is None:
            continue
        for key in ("baseline_pf", "touch_delta_pf", "percent_change"):
            worst[key] = max(worst[key], _rel(e[key], r[key]))
        for nb, v in r["crosstalk_pf"].items():
            # crosstalk below 0.1 fF is noise of the model: compared in absolute terms there
            w = e["crosstalk_pf"].get(nb)
            d = 1.0 if w is None else abs(w - v) / max(abs(v), 1e-4)
            worst["crosstalk_pf"] = max(worst["crosstalk_pf"], d)
        a, b = e["turning_point_mm"], r["turning_point_mm"]
        if (a is None) != (b is None):
            worst["turning_point_presence"] += 1
        elif a is not None and b is not None:
            worst["turning_point_mm"] = max(worst["turning_point_mm"], _rel(a, b))
            worst["turning_point_abs_mm"] = max(worst["turning_point_abs_mm"], abs(a - b))
    return worst


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--cases", default="b06,b02,b04,touchpad")
    ap.add_argument("--touchpad", default="10x16")
    ap.add_argument("--sizes", action="store_true", help="CPU time exponent over four touchpad sizes")
    ap.add_argument("--write-reference", action="store_true")
    ap.add_argument("--reference", type=Path, default=REFERENCE)
    ap.add_argument("--findings", type=Path, help="also write each case's findings (rule, severity, sensor, message) here")
    ap.add_argument("--memory", action="store_true", help="peak RSS of one window at 4k, 8k and 12k panels (issue 15)")
    ap.add_argument("--one", help=argparse.SUPPRESS)
    ap.add_argument("--one-memory", help=argparse.SUPPRESS)
    ap.add_argument("--out", type=Path, help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    if args.one:
        run_one(args.one, args.out)
        return 0
    if args.one_memory:
        run_memory(args.one_memory, args.out)
        return 0
    if args.memory:
        memory_table()
        if args.cases == ap.get_default("cases"):
            return 0
    cases = [f"touchpad-{args.touchpad}" if c == "touchpad" else c for c in args.cases.split(",") if c]
    ref_all: dict[str, Any] = json.loads(args.reference.read_text()) if args.reference.exists() else {}
    load = os.getloadavg()[0]
    print(f"load average at start: {load:.2f} (cores: {os.cpu_count()}; the machine is shared: CPU time is steadier than wall)")
    head = f"{'case':16s} {'sensors':>7s} {'wall s':>8s} {'CPU s':>8s} {'RSS MB':>7s} {'wall/s':>7s} {'CPU/s':>7s}"
    rows: list[str] = []
    for case in cases:
        if case.partition(":")[0] in BOARDS and not (CORPUS / BOARDS[case.partition(":")[0]][0]).exists():
            print(f"{case}: ../shared/corpus absent, skipped")
            continue
        run = measure(case)
        if args.findings is not None:
            args.findings.mkdir(parents=True, exist_ok=True)
            (args.findings / f"{case}.json").write_text(json.dumps(run["findings"], indent=1) + "\n")
            (args.findings / f"{case}.run.json").write_text(json.dumps(run, indent=1, sort_keys=True) + "\n")
        if args.reference.exists():  # read again: a reference may have been added meanwhile
            ref_all = json.loads(args.reference.read_text())
        n = max(run["sensors"], 1)
        rows.append(f"{case:16s} {run['sensors']:7d} {run['wall_s']:8.1f} {run['cpu_s']:8.1f} {run['rss_mb']:7.0f} "
                    f"{run['wall_s'] / n:7.2f} {run['cpu_s'] / n:7.2f}")
        print(head)
        print(rows[-1])
        if run["errors"]:
            print("  errors: " + "; ".join(run["errors"][:5]))
        if args.write_reference:
            ref_all[case] = run["estimates"]
            args.reference.write_text(json.dumps(ref_all, indent=1, sort_keys=True) + "\n")
            print(f"  reference written for {case} ({len(run['estimates'])} estimates)")
            continue
        targets = []
        if case in WALL_TARGET_S:
            targets.append(f"wall <= {WALL_TARGET_S[case]:g} s: {'met' if run['wall_s'] <= WALL_TARGET_S[case] else 'NOT met'}")
        if case in CPU_TARGET_S:
            targets.append(f"CPU <= {CPU_TARGET_S[case]:g} s: {'met' if run['cpu_s'] <= CPU_TARGET_S[case] else 'NOT met'}")
        if case in RSS_TARGET_MB:
            targets.append(f"RSS <= {RSS_TARGET_MB[case]:g} MB: {'met' if run['rss_mb'] <= RSS_TARGET_MB[case] else 'NOT met'}")
        ref = ref_all.get(case)
        if ref is None:
            print("  no reference for this case")
        else:
            w = compare(run["estimates"], ref)
            held = len(set(ref) & set(run["estimates"]))
            print(f"  vs reference ({held}/{len(ref)} sensors): " + "  ".join(
                f"{k} {100 * w[k]:.3f} %" for k in ("baseline_pf", "touch_delta_pf", "percent_change", "crosstalk_pf", "turning_point_mm")
            ) + f"  turning point {w['turning_point_abs_mm']:.3f} mm, {int(w['turning_point_presence'])} appear/vanish")
            ok = all(w[k] <= REL_TARGET for k in ("baseline_pf", "touch_delta_pf", "percent_change", "crosstalk_pf"))
            ok = ok and w["turning_point_abs_mm"] <= TP_TARGET_MM and w["turning_point_presence"] == 0 and held == len(ref)
            targets.append(f"estimates within 1 % (turning point 0.1 mm): {'met' if ok else 'NOT met'}")
        if targets:
            print("  targets: " + "; ".join(targets))
    if args.sizes:
        sizes = ["2x2", "2x4", "4x4", "4x8"]
        pts = []
        for s in sizes:
            run = measure(f"touchpad-{s}")
            pts.append((run["sensors"], run["cpu_s"]))
            print(f"  touchpad {s}: {run['sensors']} sensors, CPU {run['cpu_s']:.1f} s, {run['cpu_s'] / run['sensors']:.2f} s per sensor")
        xs = [math.log(n) for n, _ in pts]
        ys = [math.log(c) for _, c in pts]
        mx, my = sum(xs) / len(xs), sum(ys) / len(ys)
        slope = sum((x - mx) * (y - my) for x, y in zip(xs, ys)) / sum((x - mx) ** 2 for x in xs)
        print(f"  CPU time ~ sensors^{slope:.2f} over {len(sizes)} sizes (target: exponent <= 1, linear)")
    if rows:
        print("\nsummary")
        print(head)
        print("\n".join(rows))
    return 0


if __name__ == "__main__":
    sys.exit(main())
