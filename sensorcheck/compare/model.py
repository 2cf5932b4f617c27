"""A revision as the comparison sees it: plain data (the board as the JSON report writes it, and
where there was copper, each sensor's outline and zone and each copper layer's image)."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Literal

from shapely.geometry import box
from shapely.geometry.base import BaseGeometry

from sensorcheck.errors import SensorcheckError

Which = Literal["old", "new"]
SourceKind = Literal["folder", "zip", "json", "git"]


class SideError(SensorcheckError):
    """One side of a comparison cannot be read: the message names which side and why."""

    def __init__(self, which: Which, text: str) -> None:
        self.which = which
        self.text = text
        super().__init__(self.describe())

    def describe(self) -> str:
        return f"{self.which} side: {self.text}"


@dataclass(slots=True)
class SensorShape:
    """A sensor's exact outline and zone (mm) on a side read from copper."""

    outline: BaseGeometry
    zone: BaseGeometry


@dataclass(slots=True)
class Side:
    """One revision, read."""

    which: Which
    label: str  # as the user named it ("boards/tm1-clean", "main:hw/fab", "old.json")
    kind: SourceKind
    board: dict[str, Any]  # the board as the JSON report writes it
    shapes: dict[str, SensorShape] = field(default_factory=dict)
    #: copper layer name -> (side of the board, final copper image); None: no copper (a JSON report)
    copper: dict[str, tuple[str, BaseGeometry]] | None = None

    @property
    def sensors(self) -> list[dict[str, Any]]:
        return list(self.board.get("sensors") or [])

    @property
    def findings(self) -> list[dict[str, Any]]:
        return list(self.board.get("findings") or [])

    def shape(self, name: str) -> SensorShape | None:
        """The sensor's outline and zone: exact where there was copper, its box from a JSON report."""
        if name in self.shapes:
            return self.shapes[name]
        for s in self.sensors:
            b = s.get("box_mm")
            if s.get("name") == name and isinstance(b, list) and len(b) == 4:
                g = box(*b)
                return SensorShape(g, g)
        return None


