"""Truth files for sensor recognition and how a recognition is scored against them.

A truth file (``tests/corpus/truth/<board>.toml`` for corpus boards, written from what their
designers published; made beside the synthetic boards by ``tests/recognition/synth_boards.py``)
lists the board's sensors::

    [[sensor]]
    kind = "slider"              # a SensorKind ("mutual-node", the old spelling, is read as "mutual-button")
    count = 1                    # this many alike sensors (default 1)
    nets = ["/TOUCH?"]           # fnmatch patterns: every net of the sensor matches one, each matches a net
    segments = 3                 # the number of electrode nets
    places = [[10.0, 5.0]]       # points (mm) each lying on the sensor's copper (unnamed boards)
    face = "bottom"              # the touched face

A recognised sensor is right when it has the kind and everything else the entry gives; an entry
met by a sensor of another kind is a wrong kind; an entry met by none is missed; a sensor that
meets no entry is a false sensor.
"""

from __future__ import annotations

import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from shapely.geometry import Point

from sensorcheck.design.model import Design, Sensor
from sensorcheck.design.roles import matches

TRUTH_DIR = Path(__file__).resolve().parents[1] / "corpus" / "truth"
_ALIASES = {"mutual-node": "mutual-button"}  # the old spelling, still accepted in configs


@dataclass(slots=True)
class Score:
    board: str
    truth: int = 0
    right: int = 0
    wrong_kind: int = 0
    missed: int = 0
    false: int = 0
    details: list[str] = field(default_factory=list)

    @property
    def share(self) -> float:
        return self.right / self.truth if self.truth else 1.0


def load_truth(path: Path) -> list[dict[str, Any]]:
    data = tomllib.loads(path.read_text(encoding="utf-8"))
    out: list[dict[str, Any]] = []
    for e in data.get("sensor", []):
        for _ in range(int(e.get("count", 1))):
            out.append(e)
    return out


def _face(design: Design, s: Sensor) -> str:
    """The sensor's touched face: its own (``[[sensors]] face``, set by build_design), else its layer's side."""
    if s.face is not None:
        return s.face
    cu = design.board.copper_layers()
    return "bottom" if len(cu) > 1 and s.layer == cu[-1].name else "top"


def meets(entry: dict[str, Any], s: Sensor, design: Design, *, kind: bool = True) -> bool:
    """Does recognised sensor ``s`` meet truth ``entry`` (its kind only when ``kind``)?"""
    if kind and _ALIASES.get(entry["kind"], entry["kind"]) != _ALIASES.get(s.kind, s.kind):
        return False
    nets = list(s.nets)
    if "nets" in entry:
        pats = entry["nets"]
        if not all(any(matches(n, p) for p in pats) for n in nets):
            return False
        if not all(any(matches(n, p) for n in nets) for p in pats):
            return False
    if "segments" in entry and len(nets) != int(entry["segments"]):
        return False
    if "places" in entry:
        outline = s.outline
        if not all(outline.distance(Point(*pt)) <= 0.5 for pt in entry["places"]):
            return False
    if "face" in entry and _face(design, s) != entry["face"]:
        return False
    return True


def score(board: str, design: Design, truth: list[dict[str, Any]]) -> Score:
    sc = Score(board=board, truth=len(truth))
    free = list(design.sensors)
    left: list[dict[str, Any]] = []
    for e in truth:
        hit = next((s for s in free if meets(e, s, design)), None)
        if hit is None:
            left.append(e)
        else:
            free.remove(hit)
            sc.right += 1
    for e in left:
        hit = next((s for s in free if meets(e, s, design, kind=False)), None)
        if hit is not None:
            free.remove(hit)
            sc.wrong_kind += 1
            sc.details.append(f"wrong kind: {hit.name} is a {hit.kind}, the truth says {e['kind']}")
        else:
            sc.missed += 1
            sc.details.append(f"missed: {e['kind']} {e.get('nets', e.get('places', ''))}")
    sc.false = len(free)
    sc.details += [f"false: {s.kind} {s.name} ({', '.join(s.nets[:4])})" for s in free]
    return sc
