"""Which Gerber and Excellon files the readers read, read with warnings, or refuse: a table per suite.

Target (issue 17): every file that is a Gerber or Excellon file is read, or refused with a reason
that names a construct of unknown meaning; no refusal of a deprecated construct or drill dialect
the readers now accept with a warning.

    python bench/bench_dialects.py [SUITE_FOLDER ...] [--strict] [--list]

Without folders: each folder of ../shared/gerber-suites and ../shared/corpus as a suite. A file
counts when its content (or its name) says Gerber or Excellon; each is read on its own by
read_gerber / read_excellon (not through a board, so a file without a layer still counts).
``--strict`` reads as ``sensorcheck check --strict`` does (every deprecated construct refused).
This is a census, not a timing: nothing here is timed.
"""

from __future__ import annotations

import argparse
import re
import sys
from collections import Counter
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(REPO))

from sensorcheck.errors import InputError  # noqa: E402
from sensorcheck.fab.excellon import read_excellon  # noqa: E402
from sensorcheck.fab.gerber import read_gerber  # noqa: E402
from sensorcheck.fab.identify import identify, sniff  # noqa: E402

SHARED = REPO.parent / "shared"


def default_suites() -> list[Path]:
    suites = sorted(p for p in (SHARED / "gerber-suites").glob("*") if p.is_dir())
    if (SHARED / "corpus").is_dir():
        suites.append(SHARED / "corpus")
    return suites


def kind_of(path: Path, data: bytes) -> str | None:
    """'gerber' or 'excellon' when the content (or, for drill names, the name) says so, else None."""
    content = sniff(data[:65536])
    ident = identify(path.name, data[:65536])
    if ident.role is None and ident.kind is None and (ident.identified_by == "filename" or "job file" in (ident.note or "")):
        return None  # not fabrication data by its name (aperture library, report), or the early job file
    if content in ("gerber", "excellon"):
        return content
    if ident.kind in ("gerber", "excellon") and content not in ("gbrjob", "ipc356", "pnp", "gencad", "empty"):
        return ident.kind
    return None


def _reason(exc: InputError) -> str:
    """The refusal's kind: the message without the file, line and numbers that vary per file."""
    text = exc.message
    text = re.sub(r"'[^']*'|\"[^\"]*\"", "'...'", text)
    text = re.sub(r"\b[A-Z]?\d+(\.\d+)?\b", "N", text)
    return text[:90]


def census(folder: Path, strict: bool, listing: bool) -> dict[str, Counter[str] | int]:
    files = read = 0
    warned: Counter[str] = Counter()
    refused: Counter[str] = Counter()
    n_warned = 0
    for path in sorted(p for p in folder.rglob("*") if p.is_file()):
        data = path.read_bytes()
        kind = kind_of(path, data)
        if kind is None:
            continue
        files += 1
        shown = str(path.relative_to(folder))
        try:
            if kind == "gerber":
                got = read_gerber(data, shown, **({"strict": True} if strict else {}))
            else:
                got = read_excellon(data, shown, **({"strict": True} if strict else {}))
        except InputError as exc:
            refused[_reason(exc)] += 1
            if listing:
                print(f"  REFUSED {exc.describe()[:160]}")
            continue
        read += 1
        if getattr(got, "constructs", None):
            n_warned += 1
            warned.update(got.constructs)
            if listing:
                print(f"  warned  {shown}: {', '.join(sorted(got.constructs))}")
    return {"files": files, "read": read, "warned": n_warned, "constructs": warned, "refused": refused}


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("suites", nargs="*", type=Path)
    ap.add_argument("--strict", action="store_true", help="read as --strict does (deprecated constructs refused)")
    ap.add_argument("--list", action="store_true", help="list every refused or warned file")
    args = ap.parse_args(argv)
    suites = args.suites or default_suites()
    print(f"{'suite':28} {'files':>5} {'read':>5} {'warned':>6} {'refused':>7}")
    details: list[str] = []
    for suite in suites:
        if args.list:
            print(f"{suite.name}:")
        c = census(suite, args.strict, args.list)
        refused = sum(c["refused"].values())  # type: ignore[union-attr]
        print(f"{suite.name:28} {c['files']:>5} {c['read']:>5} {c['warned']:>6} {refused:>7}")
        for what, n in sorted(c["constructs"].items()):  # type: ignore[union-attr]
            details.append(f"  {suite.name}: read with a warning: {what}: {n}")
        for what, n in sorted(c["refused"].items()):  # type: ignore[union-attr]
            details.append(f"  {suite.name}: refused: {what}: {n}")
    print("\n".join(details))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
