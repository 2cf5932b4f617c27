"""`sensorcheck rules [ID...] [--format text|markdown|json]`: print the rule catalogue (or some rules) from the registry."""

from __future__ import annotations

import argparse
import sys


def run(args: argparse.Namespace) -> int:
    """Write the catalogue to stdout; 0 on success."""
    from sensorcheck.rules.engine import render_catalogue

    fmt = getattr(args, "format", "text") or "text"
    if fmt not in ("text", "markdown", "json"):
        print(f"sensorcheck: error: unknown catalogue format {fmt!r} (text, markdown, json)", file=sys.stderr)
        return 2
    sys.stdout.write(render_catalogue(fmt, getattr(args, "rule_ids", None) or ()))
    return 0
