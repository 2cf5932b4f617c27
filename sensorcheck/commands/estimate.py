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
from sensorcheck.physics.estimate import SensorEstimate, turns_by_curve
from sensorcheck.report.common import scan_json, turnarounds_json

SweepParam = Literal["overlay_thickness_mm", "overlay_epsilon_r"]
SWEEP_PARAMS: tuple[str, ...] = ("overlay_thickness_mm", "overlay_epsilon_r")
DISCLAIMER = "Estimates of a field-solver model, not measurements: measure a prototype before release."


def _sig(value: float | None, none: str = "-", signed: bool = False) -> str:
    from sensorcheck.report.common import sig

    if value is None:
        return none
    text = sig(value)
    return f"+{text}" if signed and value > 0 else text


def estimate_rows(estimates: dict[str, SensorEstimate]) -> list[dict[str, str]]:
    """One row of display strings per sensor, in name order (shared by the table and tests).

    Numbers to 3 significant digits; the touch delta and the neighbours' crosstalk in fF (the
    unit the check's report uses too).
    """
    rows = []
    for name in sorted(estimates):
        e = estimates[name]
        cross = "; ".join(f"{k} {_sig(1000 * v, signed=True)}" for k, v in sorted(e.crosstalk_pf.items())) or "-"
        rows.append({
            "sensor": name,
            "kind": "mutual (Cm)" if e.kind == "mutual" else "self (C)",
            "baseline_pf": _sig(e.baseline_pf),
            "touch_delta_ff": _sig(1000 * e.touch_delta_pf, signed=True),
            "percent_change": _sig(e.percent_change, signed=True),
            "turning_point_mm": _sig(e.turning_point_mm, "none"),
            "best_point_mm": "-" if e.best_point_mm is None else f"{e.best_point_mm[0]:.1f}, {e.best_point_mm[1]:.1f}",
            "parasitic_pf": _sig(e.parasitic_pf),
            "detection_range_mm": _sig(e.detection_range_mm),
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
            "turnarounds": turnarounds_json(e, r),
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
            **scan_json(e, r),
        })
    return {"estimates": out, "disclaimer": DISCLAIMER}


def output_width(stream: TextIO) -> int:
    """Columns for plain output: ``COLUMNS`` when set, the terminal's, else 100 when piped."""
    from sensorcheck.report.writer import text_width

    return text_width(stream)


def print_table(estimates: dict[str, SensorEstimate], stream: TextIO, title: str = "Field-solver estimates",
                width: int | None = None, verbose: bool = False, quiet: bool = False) -> None:
    """The estimates as a plain ASCII table that fits the width (columns dropped, never cut),
    then the model once and each note once."""
    from sensorcheck.report.common import fold_notes
    from sensorcheck.report.table import Column, table

    width = width or output_width(stream)
    rows = estimate_rows(estimates)
    headers = [
        ("sensor", "sensor", False, 0, False),
        ("kind", "kind", False, 5, False),
        ("baseline_pf", "base pF", True, 3, False),
        ("touch_delta_ff", "touch fF", True, 0, False),
        ("percent_change", "change %", True, 0, False),
        ("turning_point_mm", "turns mm", True, 2, False),
        ("best_point_mm", "finger x, y mm", True, 6, False),
        ("parasitic_pf", "parasitic pF", True, 4, False),
        ("detection_range_mm", "range mm", True, 7, False),
        ("crosstalk", "neighbours at touch fF", False, 8, True),
    ]
    cols = [Column(label, [r[key] for r in rows], right=right, drop=drop, wrap=wrap)
            for key, label, right, drop, wrap in headers]
    cols = [c for c in cols if c.drop == 0 or any(x not in ("-", "") for x in c.cells)]
    lines = [f"{title} (estimates of a model, not measurements)", ""]
    lines += table(cols, len(rows), width)
    models = sorted({e.model for e in estimates.values()})
    lines.append("")
    for m in models:
        lines.append(f"model: {m}")
    notes: dict[str, list[str]] = {}
    for name in sorted(estimates):
        for line in ([] if quiet else channel_lines(estimates[name])):
            lines.append(f"{name}: {line}")
    for name in sorted(estimates):
        for note in ([] if quiet else estimates[name].notes):
            notes.setdefault(note, []).append(name)
    for who, note in fold_notes(notes, len(estimates), every=verbose):
        lines.append(f"note ({who}): {note}")
    lines.append(DISCLAIMER)  # also with --quiet: an estimate is never shown without it
    stream.write("\n".join(_wrap(line, width) for line in lines) + "\n")


def _wrap(line: str, width: int) -> str:
    """Long prose lines wrapped at spaces (table lines already fit)."""
    import textwrap

    if len(line) <= width:
        return line
    return "\n".join(textwrap.wrap(line, width=width, subsequent_indent="  ", break_long_words=False,
                                    break_on_hyphens=False))


def channel_lines(e: SensorEstimate) -> list[str]:
    """The turnarounds of the approach curves, one display line per matrix node or slider segment,
    and the position response's summary."""
    out = [turn_line(e)] if e.turnarounds else []
    out += [f"node {n.tx}/{n.rx}: Cm {n.cm_pf:.3f} pF, touch {1000 * n.touch_delta_pf:+.1f} fF ({n.percent_change:+.1f} %)" for n in e.nodes]
    for g in e.segments:
        cross = ", ".join(f"{k} {1000 * v:+.1f} fF" for k, v in g.crosstalk_pf.items())
        out.append(f"segment {g.net}: parasitic {g.parasitic_pf:.2f} pF, touch {1000 * g.touch_delta_pf:+.1f} fF"
                   + (f", neighbours {cross}" if cross else ""))
    p = e.position
    if p is not None:
        err = "-" if p.max_error_mm is None else f"{p.max_error_mm:.2f} mm"
        dead = ", ".join(f"{a:.1f}-{b:.1f} mm" for a, b in p.dead_zones_mm) or "none"
        out.append(f"position along {p.travel_mm:.1f} mm: largest centroid error {err}; dead zones {dead}")
    return out


def turn_line(e: SensorEstimate) -> str:
    """"signal turns at 1.87 mm and reverses sign at 0.52 mm above the overlay surface with the finger over ..."."""
    return "signal " + "; ".join(turns_by_curve(e.turnarounds, {"best": "the most sensitive point", "centre": "the node centre"}))


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
    # the overlay's physical range, as the config takes it (design/config.py)
    from sensorcheck.design.config import EPSILON_R_MAX, OVERLAY_THICKNESS_MAX_MM

    if param == "overlay_thickness_mm":
        bad, expected = [v for v in nums if not 0.0 < v <= OVERLAY_THICKNESS_MAX_MM], \
            f"thicknesses greater than 0 and at most {OVERLAY_THICKNESS_MAX_MM:g} mm"
    else:
        bad, expected = [v for v in nums if not 1.0 <= v <= EPSILON_R_MAX], f"permittivities from 1 to {EPSILON_R_MAX:g}"
    if bad:
        raise SensorcheckError(f"--sweep {text!r}: {bad[0]:g} is outside the physical range: expected {expected}")
    return cast(SweepParam, param), nums


def run(args: argparse.Namespace) -> int:
    from sensorcheck.check import build_design_for

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
    from sensorcheck.cluster import executor_for

    with executor_for(getattr(args, "scheduler", None)) as executor:
        return _run(args, design, names, known, fmt, sweep_text, executor)


def _run(args: argparse.Namespace, design: Any, names: list[str] | None, known: dict[str, Any], fmt: str,
         sweep_text: str | None, executor: Any) -> int:
    from sensorcheck.physics.schedule import estimate_design
    from sensorcheck.physics.sensors import sweep

    if sweep_text:
        param, values = parse_sweep(sweep_text)
        results: dict[str, Any] = {}
        for n in names or sorted(known):
            series = sweep(design, known[n], param, values, executor=executor)
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
        estimates = estimate_design(design, sensors=names, progress=progress, executor=executor)
    finally:
        if stop is not None:
            stop()
    if fmt == "json":
        json.dump(estimates_json(estimates), sys.stdout, indent=2, sort_keys=True)
        sys.stdout.write("\n")
    else:
        print_table(estimates, sys.stdout, verbose=bool(getattr(args, "verbose", False)),
                    quiet=bool(getattr(args, "quiet", False)))
    plot = getattr(args, "plot", None)
    if plot is not None:
        plot_curves(estimates, Path(plot))
    return 0
