"""Command line: wires readers, design, rules, physics and reports together. Nothing else lives here.

Exit codes: 0 nothing at or above ``--fail-on``; 1 findings at or above it; 2 usage, config,
input or internal error, or a board where nothing was checked unless ``--allow-empty``
(``--exit-zero`` never hides 2).
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


def _workers(value: str) -> int:
    """A count of worker processes: a whole number of at least 1."""
    try:
        n = int(value)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a whole number of processes, got {value!r}") from None
    if n < 1:
        raise argparse.ArgumentTypeError(f"expected at least 1 process, got {n}")
    return n


EXIT_CODES = """exit codes:
  0  nothing at or above --fail-on (default: error)
  1  findings at or above --fail-on
  2  usage, config, input or internal error; also a board where nothing was checked (no
     fabrication data, no copper, no sensor recognised) unless --allow-empty"""

EXAMPLES = """examples:
  sensorcheck init hw/fab/ --output hw/fab/sensorcheck.toml   # a starter config, every guess marked
  sensorcheck check hw/fab/                                    # check; text report on the terminal
  sensorcheck check hw/fab/ --report html:review.html --report sarif:out.sarif
  sensorcheck estimate hw/fab/ --plot curves.png               # field-solver numbers and curves
  sensorcheck rules trace.width                                # one rule: why, fix, parameters
  sensorcheck compare hw/fab hw/fab --rev origin/main          # what this branch does to each sensor"""


def _epilog(*parts: str) -> str:
    return "\n\n".join(parts)


def _parser() -> argparse.ArgumentParser:
    p = _Parser(
        prog="sensorcheck",
        description="Check capacitive touch sensor layouts in PCB fabrication outputs before fabrication.",
        epilog=_epilog(EXAMPLES, EXIT_CODES),
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("--version", action="version", version=f"sensorcheck {__version__}")
    sub = p.add_subparsers(dest="command", required=True)

    layer_map_help = "force files matching GLOB to be read as LAYER (e.g. '*.gtl=top-copper'); repeatable"
    strict_help = ("refuse deprecated Gerber constructs and Excellon dialects (image commands, tools sized "
                   "nowhere, G93 ...) instead of reading them with a warning")

    chk = sub.add_parser(
        "check", help="check one or more boards against the capacitive layout rules",
        description="Check one or more boards against the capacitive layout rules.",
        formatter_class=argparse.RawDescriptionHelpFormatter,
        epilog=_epilog("""examples:
  sensorcheck check hw/fab/
  sensorcheck check hw/fab/ --config hw/sensorcheck.toml --no-estimate
  sensorcheck check hw/fab/ --report github --report sarif:out.sarif --report markdown:summary.md
  sensorcheck check a/fab/ b/fab.zip --fail-on warning --quiet""", EXIT_CODES),
    )
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
    chk.add_argument("--strict", action="store_true", help=strict_help)
    chk.add_argument("--no-estimate", action="store_true", help="skip the field-solver estimates (geometry rules only)")
    chk.add_argument("--timestamp", action="store_true", help="put the run time into the reports (off: byte-identical reports)")
    chk.add_argument("--jobs", type=_workers, default=None, help="parallel processes for several boards (default: cores)")
    chk.add_argument("--allow-empty", action="store_true",
                     help="let a board with no fabrication data, no copper or no sensor recognised pass "
                          "(default: that is an error, exit 2)")
    chk.add_argument("--no-group", action="store_true",
                     help="one finding per place instead of one per cause (every place is in the reports either way)")
    detail = chk.add_mutually_exclusive_group()
    detail.add_argument("-q", "--quiet", action="store_true", help="text report: the verdict and the errors only")
    detail.add_argument("-v", "--verbose", action="store_true",
                        help="text report: every place, nets, fingerprints and references")
    scheduler_help = "run on the Dask scheduler at ADDRESS (e.g. tcp://10.0.0.5:8786) instead of local processes; needs sensorcheck[cluster]"
    chk.add_argument("--scheduler", metavar="ADDRESS", help=scheduler_help)

    lay = sub.add_parser("layers", help="show how each fabrication file was identified and read")
    lay.add_argument("path", help="folder or .zip of fabrication outputs")
    lay.add_argument("--format", choices=["text", "json"], default="text")
    lay.add_argument("--config", type=Path,
                     help="board config whose [files] map and [board] copper_layers apply (default: sensorcheck.toml beside PATH or above it)")
    lay.add_argument("--layer-map", action="append", default=[], metavar="GLOB=LAYER", help=layer_map_help)
    lay.add_argument("--strict", action="store_true", help=strict_help)

    est = sub.add_parser(
        "estimate", help="field-solver estimates per sensor and the finger approach curves",
        formatter_class=argparse.RawDescriptionHelpFormatter,
        epilog=_epilog("""examples:
  sensorcheck estimate hw/fab/
  sensorcheck estimate hw/fab/ --sensor K1 --plot k1.png
  sensorcheck estimate hw/fab/ --sweep overlay_thickness_mm=1,2,3""",
                       "exit codes: 0 estimates printed; 2 usage, config, input or internal error"),
    )
    est.add_argument("path", help="folder or .zip of fabrication outputs")
    est.add_argument("--config", type=Path)
    est.add_argument("--sensor", action="append", default=None, help="only this sensor (repeatable)")
    est.add_argument("--plot", type=Path, help="write the approach curves to this PNG or SVG file")
    est.add_argument("--sweep", metavar="PARAM=V1,V2,...", help="sweep overlay_thickness_mm or overlay_epsilon_r")
    est.add_argument("--format", choices=["text", "json"], default="text")
    est_detail = est.add_mutually_exclusive_group()
    est_detail.add_argument("-q", "--quiet", action="store_true",
                            help="the table, the model and the disclaimer only (no per-segment lines, no notes)")
    est_detail.add_argument("-v", "--verbose", action="store_true", help="every estimate note of every sensor")
    est.add_argument("--scheduler", metavar="ADDRESS", help=scheduler_help)

    rules = sub.add_parser(
        "rules", help="print the rule catalogue, or one rule",
        formatter_class=argparse.RawDescriptionHelpFormatter,
        epilog=_epilog("""examples:
  sensorcheck rules                     # every rule in full
  sensorcheck rules trace.width         # one rule in full
  sensorcheck rules --format markdown   # the catalogue as a document""",
                       "exit codes: 0 printed; 2 unknown rule id or format"),
    )
    rules.add_argument("rule_ids", nargs="*", metavar="ID", help="only these rules, in full (e.g. trace.width)")
    rules.add_argument("--format", choices=["text", "markdown", "json"], default="text")

    from sensorcheck.commands import compare

    compare.add_parser(sub, argparse.RawDescriptionHelpFormatter)

    init = sub.add_parser("init", help="write a starter sensorcheck.toml from what the board holds")
    init.add_argument("path", help="folder or .zip of fabrication outputs")
    init.add_argument("--output", type=Path, help="write the config to this file (default: standard output)")
    init.add_argument("--force", action="store_true", help="overwrite an existing --output file")
    init.add_argument("--explain", action="store_true",
                      help="print the recognition report: each sensor's kind, nets, face and evidence, and the "
                           "copper rejected")
    return p


def _run_check(args: argparse.Namespace) -> int:
    from sensorcheck.check import CheckOptions, check_boards, exit_code
    from sensorcheck.report.writer import load_baseline, write_reports

    specs = args.report or ["text"]
    baseline = frozenset(load_baseline(args.baseline)) if args.baseline else None
    options = CheckOptions(
        allow_empty=args.allow_empty,
        group=not args.no_group,
        config_file=args.config,
        layer_map=_layer_map(args.layer_map),
        estimate=False if args.no_estimate else None,
        with_drawing=any(s.split(":", 1)[0] == "html" for s in specs),
        timestamp=None,
        baseline=baseline,
        strict=args.strict,
    )
    if args.timestamp:
        import datetime as dt

        options.timestamp = dt.datetime.now(dt.timezone.utc).replace(microsecond=0).isoformat()
    from sensorcheck.cluster import executor_for
    from sensorcheck.commands.progress import progress_printer

    with executor_for(args.scheduler) as executor:
        stop, progress = progress_printer(sys.stderr)
        try:
            results = check_boards(args.paths, options, workers=args.jobs, progress=progress, executor=executor)  # type: ignore[arg-type]
        finally:
            if stop is not None:
                stop()
    detail = "quiet" if args.quiet else "verbose" if args.verbose else "normal"
    write_reports(results, specs, stdout=sys.stdout, detail=detail)
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
        if args.command == "compare":
            from sensorcheck.commands import compare as compare_command

            return compare_command.run(args)
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
