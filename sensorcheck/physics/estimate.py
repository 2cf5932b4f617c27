"""Per-sensor estimates: the contract between the field solver, the rules and the reports."""

from __future__ import annotations

from collections.abc import Callable, Iterable
from dataclasses import dataclass, field
from typing import Literal

#: the kinds of turnaround an approach curve can show (see :func:`sensorcheck.physics.finger.turnarounds`)
TurnKind = Literal["turns", "reverses sign"]


@dataclass(frozen=True, slots=True)
class Turn:
    """One change of the touch signal's course on an approach curve, between the far field and the
    overlay surface: its height above the surface (mm), its kind, and which approach curve shows it
    ("best": over the most sensitive point; "centre": over the node's centre).

    ``"turns"``: the signal's slope changes sign (it peaks, or recovers from a dip); ``"reverses
    sign"``: the signal crosses zero (the finger's effect flips, e.g. a mutual key whose Cm first
    falls and then rises above its baseline).
    """

    height_mm: float
    kind: TurnKind
    curve: Literal["best", "centre"] = "best"


def turn_text(turns: Iterable[tuple[float, str]], num: Callable[[float], str] = lambda v: f"{v:.2f}") -> str:
    """Turnarounds as words, highest first: "turns at 1.87 mm and reverses sign at 0.52 mm"."""
    parts = [f"{kind} at {num(h)} mm" for h, kind in sorted(turns, key=lambda t: -t[0])]
    return parts[0] if len(parts) < 2 else ", ".join(parts[:-1]) + " and " + parts[-1]


def turns_by_curve(turns: Iterable[Turn], over: dict[str, str], num: Callable[[float], str] = lambda v: f"{v:.2f}") -> list[str]:
    """One phrase per approach curve that changes course, in the order of ``over`` (curve -> where
    the finger is): "turns at 1.87 mm above the overlay surface with the finger over the node centre"."""
    turns = list(turns)
    out = []
    for curve, where in over.items():
        mine = [(t.height_mm, t.kind) for t in turns if t.curve == curve]
        if mine:
            out.append(f"{turn_text(mine, num)} above the overlay surface with the finger over {where}")
    return out


@dataclass(slots=True)
class SensorEstimate:
    """What the field solver estimates for one sensor. Every number is an estimate of a model."""

    sensor: str
    kind: Literal["mutual", "self"]
    model: str  # a one-line description of the model and its main assumptions
    baseline_pf: float  # Cm (mutual) or self capacitance to ground, finger far away
    touch_delta_pf: float  # value at touch minus baseline (negative for mutual)
    percent_change: float  # 100 * delta / baseline
    #: the highest finger height above the overlay surface (mm) where the signal turns or reverses
    #: sign (the top of ``turnarounds``); None when the signal grows monotonically to the touch
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
    #: row-column matrices: every node as a scan drives it (see :class:`NodeEstimate`)
    nodes: list["NodeEstimate"] = field(default_factory=list)
    #: sliders and wheels: every segment as its own channel (see :class:`SegmentEstimate`)
    segments: list["SegmentEstimate"] = field(default_factory=list)
    #: sliders and wheels: the centroid position along the travel (see :class:`PositionResponse`)
    position: "PositionResponse | None" = None
    #: every turn and sign reversal of the approach curves, highest first (empty: monotonic)
    turnarounds: list[Turn] = field(default_factory=list)
    #: copper held at 0 V in the window, by layer and net, with the charge the sensor's excitation
    #: puts on it: a bound on what that copper does to the signal (see physics/effects.py); empty
    #: where not computed (matrices, twins of an older estimate)
    copper: list["CopperGroup"] = field(default_factory=list)
    #: the solve window (x0, y0, x1, y1) in mm; None where not recorded
    window_box_mm: tuple[float, float, float, float] | None = None


#: distances (mm) from the sensor's electrodes at which the charge is summed (0: under them, in
#: projection; the last edge takes everything in the window)
COPPER_BINS_MM: tuple[float, ...] = (0.0, 0.5, 1.0, 2.0, 3.0, 5.0, 7.5, 10.0, 15.0, 1000.0)


@dataclass(slots=True)
class CopperGroup:
    """The copper of one net on one layer in a sensor's solve window, held at 0 V in the model."""

    layer: str
    net: str  # as found when solved (a twin's estimate keeps the source's name: rules map ``point_mm``)
    point_mm: tuple[float, float]  # a point on this copper (inside it)
    #: excitation ("self", "tx" or "rx") -> |charge| (pF per V) on this copper within each distance
    #: of COPPER_BINS_MM from the electrodes (cumulative)
    charge_pf: dict[str, tuple[float, ...]] = field(default_factory=dict)


@dataclass(slots=True)
class NodeEstimate:
    """One node of a row-column matrix as a scan drives it (every number an estimate of a model).

    The node's TX line is driven, every other TX line is held at ground and the RX lines sit at
    the receivers' virtual ground: ``cm_pf`` is the charge into RX per volt on TX, with no finger
    (the Maxwell matrix entry ``-C[rx, tx]`` for an earthed device).
    """

    tx: str
    rx: str
    centre_mm: tuple[float, float]  # where the row and the column cross (the finger goes there)
    cm_pf: float
    touch_delta_pf: float  # Cm with the finger touching over the node centre, minus cm_pf
    percent_change: float


@dataclass(slots=True)
class SegmentEstimate:
    """One channel (segment) of a slider or wheel, scanned alone with the other segments at ground."""

    net: str
    centre_mm: tuple[float, float]
    position_mm: float  # the segment centre's coordinate along the travel
    parasitic_pf: float  # self capacitance to ground, no finger (the channel's baseline)
    touch_delta_pf: float  # with the finger touching over the segment centre
    #: neighbouring segments (net -> their delta, pF) with the finger over this segment
    crosstalk_pf: dict[str, float] = field(default_factory=dict)


@dataclass(slots=True)
class PositionResponse:
    """The finger stepped along a slider (or round a wheel) at touch and the centroid it reads."""

    travel_mm: float  # from the first segment centre to the last (a wheel: its circumference)
    cyclic: bool
    #: (finger position mm, centroid position mm or None where no segment responds, error mm or None)
    points: list[tuple[float, float | None, float | None]] = field(default_factory=list)
    max_error_mm: float | None = None
    #: (from mm, to mm) along the travel where the strongest segment's delta is below ``floor_pf``
    dead_zones_mm: list[tuple[float, float]] = field(default_factory=list)
    floor_pf: float = 0.0
