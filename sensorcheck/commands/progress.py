"""Progress a person can read on long work, on stderr.

On a terminal: one live status line (rich), replaced by each message, e.g.
``sensor 3/18 BTN3, 1 min 20 s, about 4 min left``.  Piped (a CI log): one plain line per stage
(the first message of each stage: reading, finding nets, the estimates' first sensor and their
summary, the rules), so that a log shows where the time went without a line per sensor.
"""

from __future__ import annotations

import sys
from collections.abc import Callable
from typing import TextIO

Progress = Callable[[str], None]


def stage_of(message: str) -> str:
    """The stage a progress message belongs to: its first word (``sensor``, ``rule``, ``reading``...)."""
    return message.split(" ", 1)[0]


class StageLines:
    """A progress callback that writes the first message of every stage as one line."""

    def __init__(self, stream: TextIO) -> None:
        self.stream = stream
        self.stage: str | None = None

    def __call__(self, message: str) -> None:
        stage = stage_of(message)
        if stage != self.stage:
            self.stage = stage
            self.stream.write(message + "\n")
            self.stream.flush()


def progress_printer(stream: TextIO | None = None) -> tuple[Callable[[], None] | None, Progress]:
    """(stop, progress): a live status line on a terminal, stage lines when piped."""
    out = stream if stream is not None else sys.stderr
    if not out.isatty():
        return None, StageLines(out)
    from rich.console import Console

    status = Console(file=out).status("reading...")
    status.start()
    return status.stop, status.update
