"""Per-sensor estimates: the contract between the field solver, the rules and the reports."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Literal


@dataclass(slots=True)
class SensorEstimate:
    """What the field solver estimates for one sensor. Every number is an estimate of a model."""

    sensor: str
    kind: Literal["mutual", "self"]
    model: str  # a one-line description of the model and its main assumptions
    baseline_pf: float  # Cm (mutual) or self capacitance to ground, finger far away
    touch_delta_pf: float  # value at touch minus baseline (negative for mutual)
    percent_change: float  # 100 * delta / baseline
    #: finger height above the overlay surface where |signal| peaks and the curve turns around (mm); None if monotonic
    turning_point_mm: float | None
    #: approach curve: (height above overlay surface in mm, value in pF), far to near
    curve: list[tuple[float, float]] = field(default_factory=list)
    best_point_mm: tuple[float, float] | None = None  # finger x, y over the board
    crosstalk_pf: dict[str, float] = field(default_factory=dict)  # neighbour sensor -> its delta with finger here
    parasitic_pf: float | None = None  # self: electrode + trace + vias to ground, no finger
    panels: int = 0
    notes: list[str] = field(default_factory=list)  # what was simplified (hatch as sheet, window size...)
    #: for estimates with several channels (slider segments): channel net -> (baseline_pf, delta_pf)
    channels: dict[str, tuple[float, float]] = field(default_factory=dict)
    #: proximity electrodes: largest height (mm) at which a hand-sized target still changes the
    #: self capacitance by the signal floor; None when not computed
    detection_range_mm: float | None = None
    #: the coarse search for the most sensitive point: (x_mm, y_mm, delta_pf at touch)
    search: list[tuple[float, float, float]] = field(default_factory=list)
    #: approach curve with the finger over the node's centre (where a user presses), when that is
    #: not the most sensitive point: (height mm, value pF), far to near; and that centre (x, y) mm
    curve_centre: list[tuple[float, float]] = field(default_factory=list)
    centre_mm: tuple[float, float] | None = None
