"""Gerber X2 / RS-274X reading: gerbonara's parser (fixed by a subclass) + our own exact geometry.

CONTRACT (the Gerber reader fills it in; other modules rely on this signature):

    read_gerber(data: bytes, name: str, *, arc_tolerance_mm: float = 0.001,
                limits: Limits = DEFAULT_LIMITS) -> GerberRead

``name`` is the file name shown in errors (path or archive member).  Raises
sensorcheck.errors.InputError (file, line, expected) for anything it cannot read.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from shapely.geometry.base import BaseGeometry

from sensorcheck.board.model import Feature
from sensorcheck.limits import DEFAULT_LIMITS, Limits


@dataclass(slots=True)
class GerberRead:
    name: str
    units: str  # "mm" | "inch" as written in the file (geometry is always mm)
    generator: str | None  # from %TF.GenerationSoftware or a header comment
    #: X2 file attributes (either form), e.g. {".FileFunction": ["Copper", "L1", "Top"]}
    file_attributes: dict[str, list[str]] = field(default_factory=dict)
    features: list[Feature] = field(default_factory=list)
    dark: BaseGeometry | None = None  # final image, polarity applied in file order
    object_count: int = 0
    bounds_mm: tuple[float, float, float, float] | None = None
    warnings: list[str] = field(default_factory=list)


def read_gerber(
    data: bytes, name: str, *, arc_tolerance_mm: float = 0.001, limits: Limits = DEFAULT_LIMITS
) -> GerberRead:
    raise NotImplementedError("the Gerber reader is being written")
