"""``sensorcheck compare OLD NEW``: what a revision does to each sensor, as a merge-request gate.

OLD and NEW are each a folder or .zip of fabrication outputs, a JSON report of an earlier run,
or (with ``--rev REV`` / ``--new-rev REV``) the folder as it was at a git revision.  Both
revisions are checked with one window cache (:mod:`sensorcheck.physics.cache`): a sensor whose
solve window did not change is solved once; with ``--cache DIR`` kept between CI runs, not at all.

Exit codes as for ``check``: 0 the gate passed; 1 it failed (a sensor lost more than
``--fail-on-loss`` percent, or a finding at or above ``--fail-on-new`` is new); 2 usage, config,
input or internal error, a side that cannot be read (the message names which side), revisions
that share no sensor.
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Callable
from pathlib import Path
from typing import TYPE_CHECKING, Any

from sensorcheck.errors import ConfigError

if TYPE_CHECKING:  # imported when run: the parser is built without shapely
    from sensorcheck.compare.changes import Comparison
    from sensorcheck.compare.sides import SideSpec
    from sensorcheck.physics.cache import WindowCache

FORMATS = ("text", "json", "markdown", "html")


def add_parser(sub: Any, formatter: type[argparse.HelpFormatter]) -> None:
    """The ``compare`` subcommand's options (called by the command line's parser)."""
    p = sub.add_parser(
        "compare", help="what a revision does to each sensor: old -> new estimates, findings new/fixed, a gate",
        description="Compare two revisions of a board: each sensor's signal old -> new, findings new and "
                    "fixed, the copper that changed near each sensor.",
        formatter_class=formatter,
        epilog="""examples:
  sensorcheck compare old/fab/ new/fab/
  sensorcheck compare hw/fab hw/fab --rev origin/main --fail-on-loss 10 --report markdown:comment.md
  sensorcheck compare main-report.json hw/fab --report html:compare.html --report json:compare.json

exit codes:
  0  the gate passed (no sensor lost more than --fail-on-loss, nothing new at or above --fail-on-new)
  1  the gate failed
  2  usage, config, input or internal error; a side that cannot be read (named); no sensor shared""",
    )
    p.add_argument("old", metavar="OLD", help="folder, .zip or JSON report of the old revision")
    p.add_argument("new", metavar="NEW", help="folder, .zip or JSON report of the new revision")
    p.add_argument("--rev", metavar="REV", help="read OLD as it was at this git revision (e.g. origin/main)")
    p.add_argument("--new-rev", metavar="REV", help="read NEW as it was at this git revision (default: as it is)")
    p.add_argument("--config", type=Path, help="board config for both sides (default: each side's own sensorcheck.toml)")
    p.add_argument("--report", action="append", default=[], metavar="FORMAT[:FILE]",
                   help=f"report format and optional file; repeatable. Formats: {', '.join(FORMATS)}")
    p.add_argument("--fail-on-loss", type=float, metavar="PERCENT",
                   help="fail when a sensor's touch delta or %% change falls by more than PERCENT")
    p.add_argument("--fail-on-new", choices=["error", "warning", "note"], default="error",
                   help="fail on a new finding at or above this severity (default: error)")
    p.add_argument("--comment-for", choices=["github", "gitlab"], default="github",
                   help="cut the markdown report to this platform's comment size limit (default: github, "
                        "the smaller, so the comment fits both)")
    p.add_argument("--exit-zero", action="store_true", help="exit 0 even when the gate fails (errors still exit 2)")
    p.add_argument("--no-estimate", action="store_true",
                   help="skip the field-solver estimates (findings and copper only; no numbers, no loss gate)")
    p.add_argument("--cache", type=Path, metavar="DIR",
                   help="keep solved windows in DIR and reuse them (keep it between CI runs)")


def _check_with(options_base: dict[str, Any], progress: Callable[[str], None] | None,
                which: list[str]) -> Callable[[Path, Callable[[Any], None]], Any]:
    from sensorcheck.check import CheckOptions, check_board

    def say(msg: str) -> None:
        if progress is not None:
            progress(f"{which[0]} side: {msg}")

    def check(path: Path, on_design: Callable[[Any], None]) -> Any:
        # one finding per place: a place fixed in a group of several is then one fixed finding,
        # not a new group and a fixed one
        return check_board(path, CheckOptions(on_design=on_design, group=False, **options_base), say)

    return check


def compare_paths(old: "SideSpec", new: "SideSpec", *, config_file: Path | None = None,
                  cache: "WindowCache | None" = None, estimate: bool | None = None,
                  progress: Callable[[str], None] | None = None) -> "Comparison":
    """Read both sides (the old first, with one window cache) and compare them."""
    from sensorcheck.compare.changes import compare_sides
    from sensorcheck.compare.sides import read_side
    from sensorcheck.physics.cache import WindowCache

    cache = cache if cache is not None else WindowCache()
    which = ["old"]
    check = _check_with({"config_file": config_file, "estimate": estimate}, progress, which)
    with cache.active():
        old_side = read_side(old, check)
        solved_old = cache.solved
        which[0] = "new"
        new_side = read_side(new, check)
    cmp = compare_sides(old_side, new_side)
    cmp.windows_solved = cache.solved
    cmp.windows_reused = cache.hits
    if old_side.kind != "json" and new_side.kind != "json":
        cmp.notes.append(f"Solve windows: {cache.solved} solved ({solved_old} for the old side), "
                         f"{cache.hits} reused unchanged.")
    return cmp


def _parse_reports(specs: list[str]) -> list[tuple[str, Path | None]]:
    out: list[tuple[str, Path | None]] = []
    for spec in specs or ["text"]:
        fmt, sep, file = spec.partition(":")
        if fmt not in FORMATS:
            raise ConfigError("--report", None, f"unknown compare report format {fmt!r} (choose from {', '.join(FORMATS)})")
        out.append((fmt, Path(file) if sep and file else None))
    return out


def render(cmp: "Comparison", fmt: str, comment_for: str = "github") -> str:
    if fmt == "json":
        from sensorcheck.report import compare_json

        return compare_json.render(cmp)
    if fmt == "markdown":
        from sensorcheck.report import compare_markdown

        return compare_markdown.render(cmp, limit_chars=compare_markdown.LIMITS[comment_for])
    if fmt == "html":
        from sensorcheck.report import compare_html

        return compare_html.render(cmp)
    from sensorcheck.report import compare_text

    return compare_text.render(cmp)


def run(args: argparse.Namespace) -> int:
    from sensorcheck.compare.changes import apply_gate
    from sensorcheck.compare.sides import SideSpec
    from sensorcheck.physics.cache import WindowCache
    from sensorcheck.report.writer import _write_stream, atomic_write

    reports = _parse_reports(args.report)
    if args.fail_on_loss is not None and not (args.fail_on_loss >= 0):
        raise ConfigError("--fail-on-loss", None, f"expected a percentage of 0 or more, got {args.fail_on_loss}")
    cache = WindowCache(args.cache) if args.cache else WindowCache()
    from sensorcheck.commands.progress import progress_printer

    stop, progress = progress_printer(sys.stderr)
    try:
        cmp = compare_paths(SideSpec("old", args.old, args.rev), SideSpec("new", args.new, args.new_rev),
                            config_file=args.config, cache=cache, estimate=False if args.no_estimate else None,
                            progress=progress)
    finally:
        if stop is not None:
            stop()
    apply_gate(cmp, args.fail_on_loss, args.fail_on_new)
    rendered = [(path, render(cmp, fmt, args.comment_for)) for fmt, path in reports]
    for path, text in rendered:
        if path is None:
            _write_stream(sys.stdout, text)
        else:
            atomic_write(path, text)
    if cmp.gate.failed and not args.exit_zero:
        return 1
    return 0
