"""Large copper layers for the scaling benchmark, generated on demand (never committed).

    make(out_dir, target_mb, kind) -> Path of the written Gerber file

kinds:
* ``"panel"``: the clean demo board's top copper (boards/make_demo.py) copied in a near-square
  grid, every copy written out explicitly (so the file size grows linearly with the copies and
  reaches ``target_mb`` within one copy, about 37 kB);
* ``"panel-sr"``: the same grid as one step-and-repeat block (a small file whose image is as large:
  for the step-and-repeat expansion path and its limits);
* ``"hatch"``: one square ground pour with a square cross-hatch (0.2 mm lines, 1.5 mm openings,
  22 % fill), every opening a clear flash: many thousands of openings, about 23 bytes each.

Deterministic: the same arguments give the same bytes.  Quick: about 1 s per 10 MB written.

    python bench/make_large_board.py OUT_DIR TARGET_MB [panel|panel-sr|hatch]
"""

from __future__ import annotations

import importlib.util
import math
import sys
from pathlib import Path
from types import ModuleType
from typing import Literal

REPO = Path(__file__).resolve().parents[1]
if str(REPO) not in sys.path:
    sys.path.insert(0, str(REPO))

from sensorcheck.fab.writer import GerberWriter, LineTo  # noqa: E402

Kind = Literal["panel", "panel-sr", "hatch"]
PANEL_GAP_MM = 5.0
HATCH_LINE_MM = 0.2
HATCH_OPENING_MM = 1.5
HATCH_BORDER_MM = 1.0


def _demo() -> ModuleType:
    name = "_sensorcheck_make_demo"
    if name in sys.modules:
        return sys.modules[name]
    spec = importlib.util.spec_from_file_location(name, REPO / "boards" / "make_demo.py")
    assert spec and spec.loader
    mod = importlib.util.module_from_spec(spec)
    sys.modules[name] = mod
    spec.loader.exec_module(mod)
    return mod


def demo_top_copper() -> GerberWriter:
    """The clean demo board's top copper as a writer (its objects not yet serialised)."""
    demo = _demo()
    board = demo.build(demo.CLEAN)
    writer, _ = demo.copper_gerber(board, "top")
    return writer


def panel_grid(copies: int) -> tuple[int, int]:
    """Columns and rows of a near-square grid holding at least ``copies`` boards."""
    if copies < 1:
        raise ValueError("a panel needs at least one copy")
    nx = math.ceil(math.sqrt(copies))
    return nx, math.ceil(copies / nx)


def make(out_dir: Path | str, target_mb: float, kind: Kind = "panel") -> Path:
    """Write one large copper layer of about ``target_mb`` megabytes (1e6 bytes) into ``out_dir``."""
    if not target_mb > 0:
        raise ValueError(f"target_mb must be positive, got {target_mb}")
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    target = target_mb * 1e6
    if kind in ("panel", "panel-sr"):
        demo = _demo()
        writer = demo_top_copper()
        dx, dy = demo.BOARD_W_MM + PANEL_GAP_MM, demo.BOARD_H_MM + PANEL_GAP_MM
        header = len(writer.panel_bytes([]))
        copies = max(1, round((target - header) / (len(writer.panel_bytes([(0.0, 0.0)])) - header)))
        # shifted coordinates have more digits: size one copy at the grid's middle and resize
        nx, ny = panel_grid(copies)
        middle = len(writer.panel_bytes([(nx * dx / 2, ny * dy / 2)])) - header
        copies = max(1, round((target - header) / middle))
        nx, ny = panel_grid(copies)
        if kind == "panel":
            offsets = [((k % nx) * dx, (k // nx) * dy) for k in range(copies)]
            data = writer.panel_bytes(offsets)
            path = out / f"panel-{copies}x.gtl"
        else:
            data = writer.step_repeat_bytes(nx, ny, dx, dy)
            path = out / f"panel-sr-{nx}x{ny}.gtl"
    elif kind == "hatch":
        data, openings = hatch_bytes(target)
        path = out / f"hatch-{openings}.gtl"
    else:
        raise ValueError(f"unknown kind {kind!r}: panel, panel-sr or hatch")
    path.write_bytes(data)
    return path


def hatch_bytes(target_bytes: float) -> tuple[bytes, int]:
    """A square hatched ground pour sized so the file is about ``target_bytes`` long."""
    p = HATCH_LINE_MM + HATCH_OPENING_MM
    w = GerberWriter("Copper,L1,Top", generation_software=("sensorcheck", "make_large_board", "1"))
    # bytes per opening, "X<x>Y<y>D03*\n" with x, y in nanometres: about 26 at metre scale
    n = max(1, math.isqrt(int(target_bytes / 24)))
    n = max(1, math.isqrt(int(target_bytes / (7 + 2 * len(str(round(n * p * 1e6)))))))
    side = n * p + 2 * HATCH_BORDER_MM
    w.region((0.0, 0.0), [LineTo((side, 0.0)), LineTo((side, side)), LineTo((0.0, side)), LineTo((0.0, 0.0))],
             function="Conductor", net="GND")
    ap = w.rect(HATCH_OPENING_MM, HATCH_OPENING_MM, "Conductor")
    centres = [round(HATCH_BORDER_MM + (k + 0.5) * p, 6) for k in range(n)]
    w.flashes([(x, y) for y in centres for x in centres], ap, net="GND", polarity="clear")
    return w.to_bytes(), n * n


def main(argv: list[str] | None = None) -> int:
    args = sys.argv[1:] if argv is None else argv
    if len(args) not in (2, 3):
        sys.stderr.write(__doc__ or "")
        return 2
    kind = args[2] if len(args) == 3 else "panel"
    path = make(Path(args[0]), float(args[1]), kind)  # type: ignore[arg-type]
    sys.stdout.write(f"{path} {path.stat().st_size / 1e6:.2f} MB\n")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
