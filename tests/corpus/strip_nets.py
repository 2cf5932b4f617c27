"""Make a name-blind copy of a set of fabrication outputs: the same copper, no net names.

Removes every Gerber X2 net attribute, in both forms the Gerber specification (2023.08, section
5.6.13 ``.N``) and KiCad write: the extended command ``%TO.N,<name>*%`` and the comment form
``G04 #@! TO.N,<name>*``; and leaves out every IPC-D-356 netlist (a file whose records carry the
356 operation codes 317/327/367 or whose name ends in ``.ipc``/``.d356``).  Everything else is
copied byte for byte, so the copper image is unchanged: only the names go.

Used by ``tests/corpus/test_nameblind.py`` (into a pytest tmp folder, never into ``../shared``);
also runnable by hand::

    python tests/corpus/strip_nets.py SRC_FOLDER DST_FOLDER
"""

from __future__ import annotations

import re
import shutil
import sys
from dataclasses import dataclass, field
from pathlib import Path

#: X2 net attribute, extended-command form (the whole %...% block) and comment form (to its '*')
_X2_NET = re.compile(rb"%TO\.N(?:,[^%]*)?\*%|G04 #@! TO\.N(?:,[^*]*)?\*")
_NETLIST_SUFFIXES = (".ipc", ".d356", ".356")
#: IPC-D-356 data records start with an operation code: 317 (through hole), 327 (SMD), 367 (blind)
_IPC_RECORD = re.compile(rb"^(317|327|367)\S", re.MULTILINE)


@dataclass
class Stripped:
    """What one strip did: net attributes removed per file, netlists left out."""

    removed: dict[str, int] = field(default_factory=dict)
    netlists: list[str] = field(default_factory=list)

    @property
    def total(self) -> int:
        return sum(self.removed.values())


def is_netlist(path: Path, data: bytes) -> bool:
    if path.suffix.lower() in _NETLIST_SUFFIXES:
        return True
    return len(_IPC_RECORD.findall(data[:20000])) >= 3


def strip_text(data: bytes) -> tuple[bytes, int]:
    """``data`` without its X2 net attributes; lines left empty by the removal go too."""
    out: list[bytes] = []
    count = 0
    for line in data.splitlines(keepends=True):
        new, n = _X2_NET.subn(b"", line)
        count += n
        if n and not new.strip():
            continue
        out.append(new)
    return b"".join(out), count


def strip_nets(src: Path, dst: Path) -> Stripped:
    """Copy the files of ``src`` (recursively) into ``dst`` without net names."""
    report = Stripped()
    for path in sorted(p for p in src.rglob("*") if p.is_file()):
        rel = path.relative_to(src)
        data = path.read_bytes()
        if is_netlist(path, data):
            report.netlists.append(str(rel))
            continue
        target = dst / rel
        target.parent.mkdir(parents=True, exist_ok=True)
        new, n = strip_text(data)
        if n:
            report.removed[str(rel)] = n
            target.write_bytes(new)
        else:
            shutil.copyfile(path, target)
    return report


if __name__ == "__main__":
    if len(sys.argv) != 3:
        print("usage: strip_nets.py SRC_FOLDER DST_FOLDER", file=sys.stderr)
        raise SystemExit(2)
    rep = strip_nets(Path(sys.argv[1]), Path(sys.argv[2]))
    print(f"removed {rep.total} net attributes from {len(rep.removed)} files; left out netlists: {rep.netlists or 'none'}")
