"""Board, layers, features, holes and stackup: plain data in millimetres.

Conventions, written down once:

* Units: millimetres for lengths, mm2 for areas, everywhere in the model.
  Readers convert inch files on the way in.
* Axes: the Gerber coordinate system as written (x right, y up, seen from the
  top of the board); bottom-side layers are *not* mirrored.
* Geometry: shapely 2 polygons.  ``Feature.geometry`` is the dark area one
  graphical object adds (or, for clear polarity, removes) on its own, with
  its own holes and exposure-off parts already cut; ``Layer.dark`` is the
  final image after polarity was applied in file order.
* Layer names are ours: ``top-copper``, ``inner1-copper`` ... ``bottom-copper``,
  ``top-mask``, ``bottom-mask``, ``top-paste``, ``bottom-paste``, ``top-silk``,
  ``bottom-silk``, ``outline``, ``top-components``, ``bottom-components``.
  Copper layers carry ``copper_index`` counted from the top (1-based).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Literal

from shapely.geometry.base import BaseGeometry

Side = Literal["top", "bottom", "inner", "both", "none"]
LayerFunction = Literal[
    "copper", "mask", "paste", "silk", "outline", "drill", "components", "netlist", "job", "other"
]
Polarity = Literal["dark", "clear"]
ObjectKind = Literal["flash", "draw", "arc", "region"]
IdentifiedBy = Literal["x2", "jobfile", "filename", "content", "override"]


@dataclass(frozen=True, slots=True)
class SourceRef:
    """Where something came from: a file (as the user named it) and a 1-based line."""

    file: str
    line: int | None = None


@dataclass(slots=True)
class Feature:
    """One graphical object of a Gerber layer (a flash, a draw, an arc or a region)."""

    geometry: BaseGeometry
    polarity: Polarity
    kind: ObjectKind
    source: SourceRef
    aperture_function: str | None = None
    net: str | None = None
    component: str | None = None
    pin: str | None = None
    #: draw/arc width in mm (round or rectangular aperture: its smaller side); None for flashes and regions
    width_mm: float | None = None
    #: centre line of draws and arcs (a LineString, arcs already flattened), for trace length and crossings
    path: BaseGeometry | None = None
    #: True where ``net`` is not the file's but the net of the copper island the object lies on
    #: (board/connectivity.py fills it in for objects the file names no net for)
    net_by_connectivity: bool = False


@dataclass(slots=True)
class Layer:
    """One layer of the board, read from one file."""

    name: str
    function: LayerFunction
    side: Side
    file: str
    copper_index: int | None = None
    units: Literal["mm", "inch"] | None = None
    generator: str | None = None
    features: list[Feature] = field(default_factory=list)
    #: final dark image (polarity applied in file order)
    dark: BaseGeometry | None = None
    #: final dark image per net name (copper only, filled by the connectivity step);
    #: copper no net could be found for is under an id derived from its geometry ("~n<hash>")
    by_net: dict[str, BaseGeometry] = field(default_factory=dict)
    x2_file_function: str | None = None


@dataclass(frozen=True, slots=True)
class Hole:
    """A drilled hole or a slot/routed hole (``end_*`` set), centre in mm."""

    x_mm: float
    y_mm: float
    diameter_mm: float
    plated: bool | None
    source: SourceRef
    end_x_mm: float | None = None
    end_y_mm: float | None = None
    function: str | None = None  # "via", "component", "mechanical" where the file says
    net: str | None = None
    #: False: the drill file never gives this tool's size; ``diameter_mm`` is a stated default
    size_known: bool = True


@dataclass(frozen=True, slots=True)
class NetPoint:
    """An IPC-D-356 test/access point: where a net touches copper."""

    net: str
    x_mm: float
    y_mm: float
    side: Side
    component: str | None
    pin: str | None
    hole_mm: float | None
    source: SourceRef


@dataclass(frozen=True, slots=True)
class Component:
    """A placed part (from Gerber X3 component layers or a pick-and-place file)."""

    ref: str
    x_mm: float
    y_mm: float
    rotation_deg: float
    side: Side
    value: str | None = None
    footprint: str | None = None
    source: SourceRef | None = None


@dataclass(frozen=True, slots=True)
class StackupLayer:
    """One layer of the physical stackup, top to bottom."""

    name: str
    kind: Literal["copper", "dielectric", "mask", "silk", "paste", "other"]
    thickness_mm: float
    material: str | None = None
    epsilon_r: float | None = None
    copper_layer: str | None = None  # our layer name for copper layers


@dataclass(slots=True)
class Stackup:
    """The stackup, top to bottom, with where it came from."""

    layers: list[StackupLayer]
    board_thickness_mm: float
    source: Literal["jobfile", "config", "default"]

    def copper_z_mm(self) -> dict[str, float]:
        """Height of the top surface of each copper layer above the board's bottom face (mm)."""
        z = self.total_thickness_mm()
        out: dict[str, float] = {}
        for layer in self.layers:
            if layer.kind == "copper" and layer.copper_layer:
                out[layer.copper_layer] = z
            z -= layer.thickness_mm
        return out

    def total_thickness_mm(self) -> float:
        total = sum(layer.thickness_mm for layer in self.layers)
        return total if total > 0 else self.board_thickness_mm


@dataclass(slots=True)
class FileInfo:
    """How one input file was identified and read (what ``sensorcheck layers`` prints)."""

    path: str
    role: LayerFunction | None  # None: not understood
    layer: str | None = None
    side: Side | None = None
    identified_by: IdentifiedBy | None = None
    units: str | None = None
    generator: str | None = None
    object_count: int | None = None
    dark_area_mm2: float | None = None
    nets: list[str] = field(default_factory=list)
    note: str | None = None  # why it was not understood, or what was odd
    error: str | None = None  # an InputError's text when the file could not be read
    #: the reader's warnings (file:line: construct: what; how it was read), at most five of a kind
    warnings: list[str] = field(default_factory=list)


@dataclass(slots=True)
class Board:
    """Everything read from one set of fabrication outputs."""

    name: str
    source: str
    layers: list[Layer] = field(default_factory=list)
    holes: list[Hole] = field(default_factory=list)
    outline: BaseGeometry | None = None
    stackup: Stackup | None = None
    net_points: list[NetPoint] = field(default_factory=list)
    components: list[Component] = field(default_factory=list)
    files: list[FileInfo] = field(default_factory=list)
    #: where net names came from: "x2", "ipc356", "geometry" (unnamed ids), or a mix
    net_source: str = "geometry"

    def copper_layers(self) -> list[Layer]:
        """Copper layers, top first."""
        cu = [layer for layer in self.layers if layer.function == "copper"]
        return sorted(cu, key=lambda layer: layer.copper_index if layer.copper_index is not None else 0)

    def layer(self, name: str) -> Layer | None:
        for layer in self.layers:
            if layer.name == name:
                return layer
        return None

    def net_names(self) -> list[str]:
        names: set[str] = set()
        for layer in self.copper_layers():
            names.update(layer.by_net)
        return sorted(names)

    def errors(self) -> list[FileInfo]:
        return [f for f in self.files if f.error]
