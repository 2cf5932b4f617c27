"""Command line: wires readers, design, rules, physics and reports together. Nothing else lives here.

Exit codes: 0 nothing at or above ``--fail-on``; 1 findings at or above it; 2 usage, config,
input or internal error (``--exit-zero`` never hides 2).
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Sequence
from pathlib import Path

from sensorcheck import __version__
from sensorcheck.errors import SensorcheckError

REPORT_FORMATS = ("text", "json", "sarif", "junit", "codequality", "github", "markdown", "html", "gerber")


class _Parser(argparse.ArgumentParser):
    """argparse, but usage errors name the program and exit 2 without a traceback (argparse's own rule)."""


def _layer_map(values: list[str]) -> dict[str, str]:
    out: dict[str, str] = {}
    for item in values:
        glob, sep, layer = item.partition("=")
        if not sep or not glob or not layer:
            raise SensorcheckError(f"--layer-map expects GLOB=LAYER, got {item!r}")
        out[glob] = layer
    return out


def _report_spec(value: str) -> str:
    fmt = value.split(":", 1)[0]
    if fmt not in REPORT_FORMATS:
        raise argparse.ArgumentTypeError(f"unknown report format {fmt!r} (choose from {', '.join(REPORT_FORMATS)})")
    return value


def _parser() -> argparse.ArgumentParser:
    p = _Parser(
        prog="sensorcheck",
        description="Check capacitive touch sensor layouts in PCB fabrication outputs before fabrication.",
    )
    p.add_argument("--version", action="version", version=f"sensorcheck {__version__}")
    sub = p.add_subparsers(dest="command", required=True)

    layer_map_help = "force files matching GLOB to be read as LAYER (e.g. '*.gtl=top-copper'); repeatable"

    chk = sub.add_parser("check", help="check one or more boards against the capacitive layout rules")
    chk.add_argument("paths", nargs="+", metavar="PATH", help="folder or .zip of fabrication outputs (several: batch)")
    chk.add_argument("--config", type=Path, help="board config (default: sensorcheck.toml beside PATH or above it)")
    chk.add_argument(
        "--report",
        action="append",
        type=_report_spec,
        default=[],
        metavar="FORMAT[:FILE]",
        help=f"report format and optional file; repeatable. Formats: {', '.join(REPORT_FORMATS)}",
    )
    chk.add_argument("--fail-on", choices=["error", "warning", "note"], default="error",
                     help="lowest severity that makes the exit code 1 (default: error)")
    chk.add_argument("--exit-zero", action="store_true", help="exit 0 even with findings (input errors still exit 2)")
    chk.add_argument("--baseline", type=Path, help="a previous JSON report: only findings not in it can fail the run")
    chk.add_argument("--layer-map", action="append", default=[], metavar="GLOB=LAYER", help=layer_map_help)
    chk.add_argument("--no-estimate", action="store_true", help="skip the field-solver estimates (geometry rules only)")
    chk.add_argument("--timestamp", action="store_true", help="put the run time into the reports (off: byte-identical reports)")
    chk.add_argument("--jobs", type=int, default=None, help="parallel processes for several boards (default: cores)")

    lay = sub.add_parser("layers", help="show how each fabrication file was identified and read")
    lay.add_argument("path", help="folder or .zip of fabrication outputs")
    lay.add_argument("--format", choices=["text", "json"], default="text")
    lay.add_argument("--layer-map", action="append", default=[], metavar="GLOB=LAYER", help=layer_map_help)

    est = sub.add_parser("estimate", help="field-solver estimates per sensor and the finger approach curves")
    est.add_argument("path", help="folder or .zip of fabrication outputs")
    est.add_argument("--config", type=Path)
    est.add_argument("--sensor", action="append", default=None, help="only this sensor (repeatable)")
    est.add_argument("--plot", type=Path, help="write the approach curves to this PNG or SVG file")
    est.add_argument("--sweep", metavar="PARAM=V1,V2,...", help="sweep overlay_thickness_mm or overlay_epsilon_r")
    est.add_argument("--format", choices=["text", "json"], default="text")

    rules = sub.add_parser("rules", help="print the rule catalogue")
    rules.add_argument("--format", choices=["text", "markdown", "json"], default="text")

    init = sub.add_parser("init", help="write a starter sensorcheck.toml from what the board holds")
    init.add_argument("path", help="folder or .zip of fabrication outputs")
    init.add_argument("--output", type=Path, help="where to write (default: PATH/sensorcheck.toml)")
    init.add_argument("--force", action="store_true", help="overwrite an existing file")
    return p


def _run_check(args: argparse.Namespace) -> int:
    from sensorcheck.check import CheckOptions, check_boards, exit_code
    from sensorcheck.report.writer import load_baseline, write_reports

    specs = args.report or ["text"]
    baseline = frozenset(load_baseline(args.baseline)) if args.baseline else None
    options = CheckOptions(
        config_file=args.config,
        layer_map=_layer_map(args.layer_map),
        estimate=False if args.no_estimate else None,
        with_drawing=any(s.split(":", 1)[0] == "html" for s in specs),
        timestamp=None,
        baseline=baseline,
    )
    if args.timestamp:
        import datetime as dt

        options.timestamp = dt.datetime.now(dt.timezone.utc).replace(microsecond=0).isoformat()
    from sensorcheck.commands.progress import progress_printer

    stop, progress = progress_printer(sys.stderr)
    try:
        results = check_boards(args.paths, options, workers=args.jobs, progress=progress)  # type: ignore[arg-type]
    finally:
        if stop is not None:
            stop()
    write_reports(results, specs, stdout=sys.stdout)
    for r in results:
        for f in r.findings:
            if f.kind != "finding":
                print(f"sensorcheck: error: {f.message}", file=sys.stderr)
    return exit_code(results, args.fail_on, args.exit_zero)


def main(argv: Sequence[str] | None = None) -> int:
    args = _parser().parse_args(argv)
    try:
        if args.command == "check":
            return _run_check(args)
        if args.command == "layers":
            from sensorcheck.commands import layers

            return layers.run(args)
        if args.command == "estimate":
            from sensorcheck.commands import estimate

            return estimate.run(args)
        if args.command == "rules":
            from sensorcheck.commands import rules

            return rules.run(args)
        if args.command == "init":
            from sensorcheck.commands import init

            return init.run(args)
    except SensorcheckError as exc:
        print(f"sensorcheck: error: {exc.describe()}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        return 130
    except BrokenPipeError:
        return 0
    return 2


if __name__ == "__main__":
    sys.exit(main())
