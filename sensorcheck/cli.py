"""Command line: wires readers, design, rules, physics and reports together. Nothing else lives here."""

from __future__ import annotations

import argparse
import sys
from collections.abc import Sequence

from sensorcheck import __version__
from sensorcheck.errors import SensorcheckError


def _parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="sensorcheck",
        description="Check capacitive touch sensor layouts in PCB fabrication outputs.",
    )
    p.add_argument("--version", action="version", version=f"sensorcheck {__version__}")
    sub = p.add_subparsers(dest="command", required=True)

    lay = sub.add_parser("layers", help="show how each fabrication file was identified and read")
    lay.add_argument("path", help="folder or .zip of fabrication outputs")
    lay.add_argument("--format", choices=["text", "json"], default="text")
    lay.add_argument(
        "--layer-map",
        action="append",
        default=[],
        metavar="GLOB=LAYER",
        help="force files matching GLOB to be read as LAYER (e.g. '*.gtl=top-copper'); repeatable",
    )
    return p


def main(argv: Sequence[str] | None = None) -> int:
    args = _parser().parse_args(argv)
    try:
        if args.command == "layers":
            from sensorcheck.commands import layers

            return layers.run(args)
    except SensorcheckError as exc:
        print(f"sensorcheck: error: {exc.describe()}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        return 130
    return 2


if __name__ == "__main__":
    sys.exit(main())
