"""Deprecated constructs and dialects the readers accept with a warning (or refuse when strict).

Real boards still arrive with constructs the current specifications deprecate or never defined:
Gerber image commands from before 2014, Excellon files whose tools live in another file, ...
Where the meaning is known (from the specification's section on deprecated commands, or from
what the major readers agree on), the readers read them and say so: one warning naming the file,
the line and the construct, and what reading was taken. ``strict`` (``--strict`` on the command
line) keeps the older behaviour for CI: the construct is refused with the same words.

Strictness never depends on this: a construct of unknown meaning (an undefined aperture, a macro
that cannot be evaluated, binary data inside the command stream, a truncated file) is refused
either way.
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Iterable
from dataclasses import dataclass, field

import re

from sensorcheck.errors import InputError


@dataclass(slots=True)
class DialectLog:
    """Warnings of one file read, and which constructs were read with one (for ``layers``)."""

    name: str
    strict: bool = False
    warnings: list[str] = field(default_factory=list)
    #: construct -> how often it was read with a warning
    constructs: Counter[str] = field(default_factory=Counter)

    def accept(self, line: int | None, construct: str, what: str, reading: str, expected: str) -> None:
        """Read ``construct`` as ``reading`` with a warning, or refuse it when strict.

        ``construct`` is a short stable name (e.g. ``"%MI (image mirror)"``) shown in tables;
        ``what`` says what the file holds, ``reading`` how it is read; ``expected`` is what a
        strict reader asks for instead.
        """
        if self.strict:
            raise InputError(self.name, line, f"{what}: {construct} is deprecated or a dialect, refused by --strict",
                             expected)
        where = self.name if line is None else f"{self.name}:{line}"
        self.warnings.append(f"{where}: {construct}: {what}; {reading}")
        self.constructs[construct] += 1


def condense(warnings: list[str], keep: int = 5, constructs: Iterable[str] = ()) -> list[str]:
    """At most ``keep`` warnings of each kind (kind = text without the file:line prefix, or the
    construct a :class:`DialectLog` warning names)."""
    seen: dict[str, int] = {}
    out: list[str] = []
    prefixes = tuple(f"{c}: " for c in constructs)
    for w in warnings:
        kind = w.split(": ", 1)[-1]
        if prefixes and kind.startswith(prefixes):
            kind = kind.split(": ", 1)[0]
        seen[kind] = seen.get(kind, 0) + 1
        if seen[kind] <= keep:
            out.append(w)
    for kind, count in seen.items():
        if count > keep:
            out.append(f"({count - keep} more: {kind})")
    return out


def line_of(head: bytes) -> int:
    """The 1-based line at the end of ``head``, whichever of LF, CR LF or CR ends its lines."""
    return head.count(b"\n") + head.count(b"\r") - head.count(b"\r\n") + 1


def strip_padding(data: bytes, log: DialectLog | None) -> bytes:
    """``data`` without the NUL (and CP/M end-of-file 0x1a) bytes some exporters and file transfers
    append after the last command: dropped with a warning (refused when strict). Binary bytes
    before the end stay for the reader to refuse."""
    if b"\x00" not in data[-65536:] and b"\x1a" not in data[-65536:]:
        return data  # the common case: no copy of a large file
    body = data.rstrip(b"\x00\x1a \t\r\n")
    tail = data[len(body):]
    if not re.search(rb"[\x00\x1a]", tail):
        return data
    if log is not None:
        padding = tail.count(b"\x00") + tail.count(b"\x1a")
        log.accept(line_of(body), "NUL padding after the last command", f"{padding} NUL/0x1a bytes end the file",
                   "ignored: padding, not content", "a text file that ends after its last command")
    return body + b"\n"
