"""Plain-text tables for people that fit a width without ever cutting a number.

Used by the terminal report's sensor summary and by ``sensorcheck estimate``.  Cells are plain
strings (already made safe by the caller); numbers are right-aligned.  When the columns do not fit
the width, the columns with the highest ``drop`` priority go first (0: never dropped), and a
free-text column (``wrap=True``) is shortened at a ``"; "`` boundary instead where the room left
is enough; the caller says which columns went.
"""

from __future__ import annotations

from dataclasses import dataclass, field

SEP = "  "
INDENT = "  "


@dataclass(slots=True)
class Column:
    """One column: header, cells, right-aligned numbers, drop priority (0: always shown)."""

    head: str
    cells: list[str] = field(default_factory=list)
    right: bool = False
    drop: int = 0
    wrap: bool = False  # free text that may be shortened at a "; " boundary

    @property
    def width(self) -> int:
        return max([len(self.head), *(len(c) for c in self.cells)])


def _total(cols: list[Column]) -> int:
    return len(INDENT) + sum(c.width for c in cols) + len(SEP) * (len(cols) - 1)


def _shorten(cell: str, room: int) -> str:
    if len(cell) <= room:
        return cell
    head = cell[: max(room - 4, 0)]
    cut = head.rfind("; ")
    return (head[:cut] if cut > 0 else head.rstrip()) + " ..."


def fit(cols: list[Column], width: int, min_text: int = 24) -> tuple[list[Column], list[str]]:
    """The columns that fit ``width`` (free text shortened where that suffices) and the dropped heads."""
    cols = list(cols)
    dropped: list[str] = []
    while _total(cols) > width and any(c.drop for c in cols):
        worst = max((c for c in cols if c.drop), key=lambda c: c.drop)
        if worst.wrap:
            room = width - (_total(cols) - worst.width)
            if room >= max(min_text, len(worst.head)):
                worst.cells = [_shorten(c, room) for c in worst.cells]
                worst.drop = 0
                continue
        cols.remove(worst)
        dropped.append(worst.head)
    return cols, dropped


def render_lines(cols: list[Column], rows: int) -> list[str]:
    """Header, rule and ``rows`` rows as plain lines (no trailing spaces)."""

    def cell(c: Column, text: str) -> str:
        return text.rjust(c.width) if c.right else text.ljust(c.width)

    out = [(INDENT + SEP.join(cell(c, c.head) for c in cols)).rstrip(),
           (INDENT + SEP.join("-" * c.width for c in cols)).rstrip()]
    for i in range(rows):
        out.append((INDENT + SEP.join(cell(c, c.cells[i]) for c in cols)).rstrip())
    return out


def table(cols: list[Column], rows: int, width: int) -> list[str]:
    """The table as lines that fit ``width``, with a line naming any column left out."""
    kept, dropped = fit(cols, width)
    lines = render_lines(kept, rows)
    if dropped:
        lines.append(f"{INDENT}(not shown at {width} columns: {', '.join(dropped)}; a wider terminal or "
                     "the JSON output shows them)")
    return lines
