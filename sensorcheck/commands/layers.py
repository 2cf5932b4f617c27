"""``sensorcheck layers PATH``: how each fabrication file was identified and read.

Per file: layer, side, function, how it was identified, units, generator, object count, dark
copper area (mm2) and nets; the readers' warnings (deprecated constructs and dialects read, each
with its file, line and construct); then everything that was not understood. Text goes through rich
tables (plain when not a terminal); JSON is deterministic (sorted keys, no timestamps).
Exit 2 when any file had an error (after printing everything), else 0.
"""

from __future__ import annotations

import argparse
import json
import sys
from typing import Any, TextIO

from sensorcheck.board.model import Board, FileInfo


def board_summary(board: Board) -> dict[str, Any]:
    """Plain data for the JSON output (and for tests)."""
    files = []
    for f in board.files:
        files.append({
            "path": f.path,
            "understood": f.role is not None,
            "function": f.role,
            "layer": f.layer,
            "side": f.side,
            "identified_by": f.identified_by,
            "units": f.units,
            "generator": f.generator,
            "object_count": f.object_count,
            "dark_area_mm2": None if f.dark_area_mm2 is None else round(f.dark_area_mm2, 3),
            "nets": list(f.nets),
            "note": f.note,
            "error": f.error,
            "warnings": list(f.warnings),
        })
    stack = board.stackup
    return {
        "board": board.name,
        "source": board.source,
        "files": files,
        "copper_layers": [
            {"layer": layer.name, "index": layer.copper_index, "file": layer.file, "nets": len(layer.by_net)}
            for layer in board.copper_layers()
        ],
        "outline": None if board.outline is None else {
            "area_mm2": round(float(board.outline.area), 3),
            "bounds_mm": [round(float(v), 4) for v in board.outline.bounds],
        },
        "holes": len(board.holes),
        "net_points": len(board.net_points),
        "components": len(board.components),
        "net_source": board.net_source,
        "nets": board.net_names(),
        "stackup": None if stack is None else {
            "source": stack.source,
            "board_thickness_mm": stack.board_thickness_mm,
            "layers": [
                {"name": sl.name, "kind": sl.kind, "thickness_mm": round(sl.thickness_mm, 4), "material": sl.material,
                 "epsilon_r": sl.epsilon_r, "copper_layer": sl.copper_layer}
                for sl in stack.layers
            ],
        },
        "errors": sum(1 for f in board.files if f.error),
    }


def _nets_text(f: FileInfo, limit: int = 6) -> str:
    named = [n for n in f.nets if not n.startswith("~n")]
    unnamed = len(f.nets) - len(named)
    text = ", ".join(named[:limit])
    if len(named) > limit:
        text += f", ... ({len(named)} named)"
    if unnamed:
        text += ("; " if text else "") + f"{unnamed} unnamed"
    return text


def print_text(board: Board, out: TextIO) -> None:
    from rich.console import Console
    from rich.markup import escape
    from rich.table import Table

    from rich import box

    from sensorcheck.report.writer import text_width

    is_tty = hasattr(out, "isatty") and out.isatty()
    # plain ASCII at the width of the terminal (or COLUMNS; 100 when piped), like `check`
    console = Console(file=out, no_color=not is_tty, force_terminal=is_tty, width=text_width(out),
                      highlight=False, soft_wrap=False, color_system="standard" if is_tty else None)
    used = [f for f in board.files if f.role not in (None, "other")]
    unused = [f for f in board.files if f.role == "other"]
    not_understood = [f for f in board.files if f.role is None]
    table = Table(title=escape(f"{board.name}: {len(board.files)} files"), show_lines=False,
                  box=box.ROUNDED if is_tty else box.ASCII2, safe_box=not is_tty)
    cols = ("file", "layer", "side", "function", "by", "units", "generator", "objects", "area mm2", "nets")
    # a narrow terminal loses the least needed columns (and is told so) rather than folding numbers
    dropped = [c for c, w in (("generator", 170), ("by", 150), ("units", 130), ("side", 120), ("function", 100))
               if console.width < w]
    for col in cols:
        if col in dropped:
            continue
        numeric = col in ("objects", "area mm2")
        table.add_column(col, overflow="fold", justify="right" if numeric else "left", no_wrap=numeric or col == "layer",
                         ratio=2 if col in ("file", "nets") else None)
    for f in used:
        cells = dict(zip(cols, (
            escape(f.path), escape(f.layer or "-"), f.side or "-", f.role or "-", f.identified_by or "-",
            f.units or "-", escape(f.generator or "-"),
            "-" if f.object_count is None else str(f.object_count),
            "-" if f.dark_area_mm2 is None else f"{f.dark_area_mm2:.1f}",
            escape(_nets_text(f)),
        ), strict=True))
        table.add_row(*(cells[c] for c in cols if c not in dropped))
    console.print(table)
    if dropped:
        console.print(f"(not shown at {console.width} columns: {', '.join(dropped)}; a wider terminal or --format json shows them)")
    for f in used:
        if f.error:
            console.print(f"ERROR {escape(f.error)}")
        elif f.note:
            console.print(f"note  {escape(f.path)}: {escape(f.note)}")
        for w in f.warnings:  # each names the file, the line and the construct read
            console.print(f"warning {escape(w)}")
    if unused:
        console.print(f"Identified, not used by the checks ({len(unused)}):")
        for f in unused:
            console.print(f"  {escape(f.path)}: {escape(f.error or f.note or 'drawing or documentation')}")
    if not_understood:
        console.print(f"Not understood ({len(not_understood)}):")
        for f in not_understood:
            text = f.error or f.note or "unknown"
            prefix = "ERROR " if f.error else ""
            console.print(f"  {prefix}{escape(f.path)}: {escape(text)}")
    stack = board.stackup
    cu = board.copper_layers()
    console.print(
        f"copper layers: {', '.join(layer.name for layer in cu) or 'none'}; "
        f"outline: {'yes' if board.outline is not None else 'none'}; holes: {len(board.holes)}; "
        f"netlist points: {len(board.net_points)}; components: {len(board.components)}"
    )
    named = [n for n in board.net_names() if not n.startswith("~n")]
    console.print(f"nets: {len(named)} named, {len(board.net_names()) - len(named)} unnamed (from {board.net_source})")
    if stack is not None:
        console.print(f"stackup: {stack.board_thickness_mm:g} mm, {len(stack.layers)} layers (from {stack.source})")
    errors = board.errors()
    if errors:
        console.print(f"{len(errors)} file(s) could not be read")


def run(args: argparse.Namespace) -> int:
    from pathlib import Path

    from sensorcheck.check import board_for
    from sensorcheck.fab.identify import parse_layer_map

    # the board's config reads the files as the check does ([files], [board] copper_layers, limits)
    layer_map = parse_layer_map(list(getattr(args, "layer_map", None) or []))
    config_file = getattr(args, "config", None)
    board, _config = board_for(Path(args.path), Path(config_file) if config_file else None, layer_map,
                               strict=bool(getattr(args, "strict", False)))
    if getattr(args, "format", "text") == "json":
        json.dump(board_summary(board), sys.stdout, sort_keys=True, indent=2, ensure_ascii=True)
        sys.stdout.write("\n")
    else:
        print_text(board, sys.stdout)
    for f in board.errors():
        print(f"sensorcheck: error: {f.error}", file=sys.stderr)
    return 2 if board.errors() else 0
