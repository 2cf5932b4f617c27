"""Which sensor of the old revision is which of the new one: by geometry first, then nets, then name.

A sensor is where its electrodes are: two sensors whose electrode outlines overlap by at least
:data:`MIN_OVERLAP` (intersection over union) are the same sensor, whatever they are called; the
best-overlapping pairs are taken first.  A sensor that moved away from where it was is found by
its nets (the same set of nets, or most of them), and only then by its name.  What is left is
removed (old only) or added (new only); a matched pair with different names is a rename.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any, Literal

from shapely.geometry.base import BaseGeometry

#: the least intersection-over-union of two electrode outlines that makes them one sensor
MIN_OVERLAP = 0.3
#: the least share of nets (Jaccard) that makes two sensors that do not overlap one sensor
MIN_NET_SHARE = 0.5

MatchedBy = Literal["geometry", "nets", "name"]


@dataclass(frozen=True, slots=True)
class Pair:
    old: str
    new: str
    matched_by: MatchedBy
    overlap: float  # intersection over union of the outlines (0 when matched by nets or name)


def overlap(a: BaseGeometry | None, b: BaseGeometry | None) -> float:
    """Intersection over union of two outlines (0 for a missing or empty one)."""
    if a is None or b is None or a.is_empty or b.is_empty:
        return 0.0
    if not a.intersects(b):
        return 0.0
    inter = a.intersection(b).area
    union = a.area + b.area - inter
    return float(inter / union) if union > 0 else 0.0


def _net_share(a: set[str], b: set[str]) -> float:
    return len(a & b) / len(a | b) if a | b else 0.0


def match_sensors(old: list[dict[str, Any]], new: list[dict[str, Any]],
                  outline_old: Callable[[str], BaseGeometry | None],
                  outline_new: Callable[[str], BaseGeometry | None]) -> tuple[list[Pair], list[str], list[str]]:
    """(matched pairs in the new revision's name order, removed old names, added new names)."""
    left = {s["name"]: s for s in old}
    right = {s["name"]: s for s in new}
    pairs: list[Pair] = []

    def take(o: str, n: str, by: MatchedBy, ov: float) -> None:
        pairs.append(Pair(o, n, by, ov))
        del left[o], right[n]

    scored: list[tuple[float, str, str]] = []
    for o in left:
        go = outline_old(o)
        for n in right:
            ov = overlap(go, outline_new(n))
            if ov >= MIN_OVERLAP:
                # ties (two equal overlaps): the same name first, then the names' order
                scored.append((-(ov + (1e-9 if o == n else 0.0)), o, n))
    for neg, o, n in sorted(scored):
        if o in left and n in right:
            take(o, n, "geometry", round(-neg, 6))
    nets_scored: list[tuple[float, str, str]] = []
    for o, so in left.items():
        for n, sn in right.items():
            share = _net_share(set(so.get("nets") or ()), set(sn.get("nets") or ()))
            if share >= MIN_NET_SHARE and so.get("kind") == sn.get("kind"):
                nets_scored.append((-share, o, n))
    for _, o, n in sorted(nets_scored):
        if o in left and n in right:
            take(o, n, "nets", 0.0)
    for o in sorted(left):
        if o in right and left[o].get("kind") == right[o].get("kind"):
            take(o, o, "name", 0.0)
    order = {s["name"]: i for i, s in enumerate(new)}
    pairs.sort(key=lambda p: order[p.new])
    return pairs, sorted(left), sorted(right)
