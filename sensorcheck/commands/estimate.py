"""``sensorcheck estimate PATH [--config FILE] [--sensor NAME] [--plot FILE] [--sweep P=V1,V2]``.

Field-solver estimates per sensor: a table (rich; plain text when piped) or JSON, and the finger
approach curves as a figure (matplotlib, Agg backend; PNG or SVG by the file's extension).
Every number is labelled as an estimate of its model: a prototype must be measured.
"""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path
from typing import Any, Literal, TextIO, cast

from sensorcheck.errors import ConfigError, SensorcheckError
from sensorcheck.physics.estimate import SensorEstimate

SweepParam = Literal["overlay_thickness_mm", "overlay_epsilon_r"]
SWEEP_PARAMS: tuple[str, ...] = ("overlay_thickness_mm", "overlay_epsilon_r")
DISCLAIMER = "Estimates of a field-solver model, not measurements: measure a prototype before release."


def _fmt(value: float | None, spec: str, none: str = "-") -> str:
    return none if value is None else format(value, spec)


def estimate_rows(estimates: dict[str, SensorEstimate]) -> list[dict[str, str]]:
    """One row of display strings per sensor, in name order (shared by the table and tests)."""
    rows = []
    for name in sorted(estimates):
        e = estimates[name]
        unit_base = "Cm" if e.kind == "mutual" else "C self"
        cross = ", ".join(f"{k} {1000 * v:+.1f} fF" for k, v in sorted(e.crosstalk_pf.items())) or "-"
        rows.append({
            "sensor": name,
            "kind": f"{e.kind} ({unit_base})",
            "baseline_pf": f"{e.baseline_pf:.3f}",
            "touch_delta_ff": f"{1000 * e.touch_delta_pf:+.1f}",
            "percent_change": f"{e.percent_change:+.1f}",
            "turning_point_mm": _fmt(e.turning_point_mm, ".2f", "none"),
            "best_point_mm": "-" if e.best_point_mm is None else f"({e.best_point_mm[0]:.1f}, {e.best_point_mm[1]:.1f})",
            "parasitic_pf": _fmt(e.parasitic_pf, ".2f"),
            "detection_range_mm": _fmt(e.detection_range_mm, ".0f"),
            "crosstalk": cross,
            "panels": str(e.panels),
        })
    return rows


def estimates_json(estimates: dict[str, SensorEstimate]) -> dict[str, Any]:
    """Deterministic plain data (sorted names, rounded numbers)."""

    def r(x: float | None, n: int = 6) -> float | None:
        return None if x is None else round(float(x), n)

    out = []
    for name in sorted(estimates):
        e = estimates[name]
        out.append({
            "sensor": name,
            "kind": e.kind,
            "model": e.model,
            "baseline_pf": r(e.baseline_pf),
            "touch_delta_pf": r(e.touch_delta_pf),
            "percent_change": r(e.percent_change, 4),
            "turning_point_mm": r(e.turning_point_mm, 4),
            "best_point_mm": None if e.best_point_mm is None else [r(e.best_point_mm[0], 4), r(e.best_point_mm[1], 4)],
            "curve": [[r(h, 4), r(v)] for h, v in e.curve],
            "curve_centre": [[r(h, 4), r(v)] for h, v in e.curve_centre],
            "centre_mm": None if e.centre_mm is None else [r(e.centre_mm[0], 4), r(e.centre_mm[1], 4)],
            "crosstalk_pf": {k: r(v) for k, v in sorted(e.crosstalk_pf.items())},
            "parasitic_pf": r(e.parasitic_pf),
            "detection_range_mm": r(e.detection_range_mm, 3),
            "channels": {k: [r(b), r(d)] for k, (b, d) in sorted(e.channels.items())},
            "panels": e.panels,
            "notes": list(e.notes),
        })
    return {"estimates": out, "disclaimer": DISCLAIMER}


def print_table(estimates: dict[str, SensorEstimate], stream: TextIO, title: str = "Field-solver estimates") -> None:
    from rich.console import Console
    from rich.table import Table

    console = Console(file=stream, highlight=False, width=None if stream.isatty() else 160)
    table = Table(title=f"{title} (estimates)", caption=DISCLAIMER)
    headers = [
        ("sensor", "sensor"),
        ("kind", "kind"),
        ("baseline_pf", "baseline pF"),
        ("touch_delta_ff", "touch delta fF"),
        ("percent_change", "change %"),
        ("turning_point_mm", "turnaround mm"),
        ("best_point_mm", "finger at (x, y) mm"),
        ("parasitic_pf", "parasitic pF"),
        ("detection_range_mm", "range mm"),
        ("crosstalk", "neighbours at touch"),
    ]
    for _, label in headers:
        table.add_column(label, justify="right" if label.endswith(("pF", "fF", "%", "mm")) else "left")
    for row in estimate_rows(estimates):
        table.add_row(*(row[key] for key, _ in headers))
    console.print(table)
    models = sorted({e.model for e in estimates.values()})
    for m in models:
        console.print(f"model: {m}")
    for name in sorted(estimates):
        for note in estimates[name].notes:
            console.print(f"note ({name}): {note}")


def plot_curves(estimates: dict[str, SensorEstimate], path: Path) -> None:
    """Approach curves (value relative to baseline, %) against finger height; PNG or SVG."""
    suffix = path.suffix.lower()
    if suffix not in (".png", ".svg"):
        raise SensorcheckError(f"--plot {path}: expected a .png or .svg file name")
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    fig, ax = plt.subplots(figsize=(7.0, 4.5))
    try:
        for name in sorted(estimates):
            e = estimates[name]
            if not e.curve:
                continue
            h = [max(p[0], 0.05) for p in e.curve]
            pct = [100.0 * (p[1] - e.baseline_pf) / e.baseline_pf for p in e.curve]
            line = ax.plot(h, pct, marker="o", ms=3, label=f"{name} ({'Cm' if e.kind == 'mutual' else 'C self'})")[0]
            if e.curve_centre:
                hc = [max(p[0], 0.05) for p in e.curve_centre]
                pc = [100.0 * (p[1] - e.baseline_pf) / e.baseline_pf for p in e.curve_centre]
                ax.plot(hc, pc, ls="--", lw=1, color=line.get_color(), label=f"{name}, finger over the centre")
            if e.turning_point_mm is not None:
                ax.axvline(max(e.turning_point_mm, 0.05), color=line.get_color(), ls=":", lw=1)
        ax.set_xscale("log")
        ax.invert_xaxis()
        ax.axhline(0.0, color="0.6", lw=0.8)
        ax.set_xlabel("finger height above the overlay surface (mm; touch plotted at 0.05)")
        ax.set_ylabel("change from baseline (%)")
        ax.set_title("Finger approach (estimates of a field-solver model; dotted: turnaround; dashed: over the centre)", fontsize=9)
        ax.legend(fontsize=8)
        fig.tight_layout()
        fig.savefig(path, format=suffix[1:], metadata={"Date": None} if suffix == ".svg" else None)
    finally:
        plt.close(fig)


def parse_sweep(text: str) -> tuple[SweepParam, list[float]]:
    param, sep, values = text.partition("=")
    if not sep or param not in SWEEP_PARAMS:
        raise SensorcheckError(f"--sweep {text!r}: expected PARAM=V1,V2,... with PARAM one of {', '.join(SWEEP_PARAMS)}")
    try:
        nums = [float(v) for v in values.split(",") if v.strip()]
    except ValueError:
        raise SensorcheckError(f"--sweep {text!r}: the values must be numbers separated by commas") from None
    if not nums:
        raise SensorcheckError(f"--sweep {text!r}: no values")
    return cast(SweepParam, param), nums


def run(args: argparse.Namespace) -> int:
    from sensorcheck.check import build_design_for
    from sensorcheck.physics.sensors import estimate_design, sweep

    design = build_design_for(args.path, getattr(args, "config", None))
    names: list[str] | None = getattr(args, "sensor", None) or None
    if not design.sensors:
        print("sensorcheck estimate: no sensors found (give net roles or sensor groups in sensorcheck.toml)", file=sys.stderr)
        return 0
    known = {s.name: s for s in design.sensors}
    for n in names or []:
        if n not in known:
            raise ConfigError(design.config.file, "sensor", f"no sensor named {n!r} (known: {', '.join(sorted(known))})")
    fmt = getattr(args, "format", "text")
    sweep_text = getattr(args, "sweep", None)
    if sweep_text:
        param, values = parse_sweep(sweep_text)
        results: dict[str, Any] = {}
        for n in names or sorted(known):
            series = sweep(design, known[n], param, values)
            results[n] = series
            if fmt == "text":
                print_table({f"{n} @ {param}={v:g}": e for v, e in zip(values, series)}, sys.stdout, title=f"Sweep of {param}")
        if fmt == "json":
            payload = {n: [estimates_json({f"{v:g}": e})["estimates"][0] for v, e in zip(values, s)] for n, s in results.items()}
            json.dump({"sweep": param, "values": values, "sensors": payload, "disclaimer": DISCLAIMER}, sys.stdout, indent=2, sort_keys=True)
            sys.stdout.write("\n")
        return 0
    from sensorcheck.commands.progress import progress_printer

    stop, progress = progress_printer(sys.stderr)
    try:
        estimates = estimate_design(design, sensors=names, progress=progress)
    finally:
        if stop is not None:
            stop()
    if fmt == "json":
        json.dump(estimates_json(estimates), sys.stdout, indent=2, sort_keys=True)
        sys.stdout.write("\n")
    else:
        print_table(estimates, sys.stdout)
    plot = getattr(args, "plot", None)
    if plot is not None:
        plot_curves(estimates, Path(plot))
    return 0
