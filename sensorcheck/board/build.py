"""Read a set of fabrication outputs (folder or .zip) into a :class:`~sensorcheck.board.model.Board`.

One bad file never loses the others' results: its problem goes into its ``FileInfo.error`` (and
the ``layers``/``check`` commands exit 2). Problems of the whole input (missing, empty, unsafe
archive) raise :class:`~sensorcheck.errors.InputError`.

After reading, the board is checked for things a reader cannot see alone:

* two files claiming the same layer (the second one is an error: say which with a layer map);
* the same content twice (Altium's ``NC_Drill/`` copy): read once, the copy is noted;
* a drill file whose holes lie far outside the board but would fit scaled by 25.4 (units wrong);
* a layer whose extent lies far outside the board outline (units or origin wrong);
* what only the files together tell (:mod:`sensorcheck.board.resolve`): which mechanical layer is
  the outline, a Gerber file nothing named that is copper or the outline by its content, a stack-up
  with fewer copper layers than the files announce, a file whose units disagree with the others'.
"""

from __future__ import annotations

import hashlib
import re
from dataclasses import replace
from collections.abc import Callable, Mapping
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np
import shapely
from scipy.spatial import cKDTree
from shapely.geometry import LineString, Polygon
from shapely.geometry.base import BaseGeometry
from shapely.ops import polygonize, unary_union

from sensorcheck.board import resolve
from sensorcheck.board.connectivity import assign_nets
from sensorcheck.board.model import Board, Feature, FileInfo, Hole, Layer, Stackup, StackupLayer
from sensorcheck.errors import InputError, SensorcheckError
from sensorcheck.fab.archive import InputFile, open_input, read_bytes, read_head, safe_name
from sensorcheck.fab.identify import Identification, check_layer_map, identify, job_file_functions, sniff
from sensorcheck.limits import DEFAULT_LIMITS, Limits
from sensorcheck.materials import FR4_EPSILON_R

if TYPE_CHECKING:
    from sensorcheck.fab.excellon import DrillFormat

Progress = Callable[[str], None]

#: default stackup when neither a job file nor the config gives one: FR-4, 1.6 mm, 35 um copper.
#: FR-4 relative permittivity from the material table (sensorcheck.materials, with its source).
DEFAULT_BOARD_MM = 1.6
DEFAULT_COPPER_MM = 0.035
DEFAULT_FR4_EPSILON_R = FR4_EPSILON_R
#: how far a layer or the holes may reach past the outline before the file is called wrong (mm)
EXTENT_MARGIN_MM = 10.0
#: outline line ends closer than this are joined (10 um: far below any routing tool, far above
#: the rounding of arc end points seen in real files, about 0.1 um)
OUTLINE_SNAP_MM = 0.01
#: after snapping, a loose end is joined to the nearest other loose end within this distance (mm):
#: older generators leave gaps of 0.03-0.3 mm where arcs meet lines (tracespace 8bit-mixtape .gml)
OUTLINE_GAP_MM = 0.5

_READ_ROLES = ("copper", "mask", "paste", "silk", "outline")
_FOLDER_NAMES = {"fab", "gerber", "gerbers", "output", "outputs", "plot", "plots", "fabrication", "production"}


def default_stackup(copper_layers: list[str], board_thickness_mm: float = DEFAULT_BOARD_MM) -> Stackup:
    """Copper layers evenly spaced in FR-4 over ``board_thickness_mm``; source "default"."""
    n = max(len(copper_layers), 2)
    names = copper_layers if len(copper_layers) >= 2 else ["top-copper", "bottom-copper"]
    die = max(board_thickness_mm - n * DEFAULT_COPPER_MM, 0.1) / (n - 1)
    layers: list[StackupLayer] = []
    for i, cu in enumerate(names):
        layers.append(StackupLayer(name=cu, kind="copper", thickness_mm=DEFAULT_COPPER_MM, material="copper", copper_layer=cu))
        if i < n - 1:
            layers.append(StackupLayer(name=f"FR-4 {i + 1}", kind="dielectric", thickness_mm=die, material="FR-4",
                                       epsilon_r=DEFAULT_FR4_EPSILON_R))
    return Stackup(layers=layers, board_thickness_mm=board_thickness_mm, source="default")


def _snap_ends(lines: list[LineString], tol_mm: float) -> list[LineString]:
    """Join line ends closer than ``tol_mm`` (generators round arc end points differently)."""
    ends = np.array([c for ln in lines for c in (ln.coords[0], ln.coords[-1])], dtype=float)
    tree = cKDTree(ends)
    parent = list(range(len(ends)))

    def find(i: int) -> int:
        while parent[i] != i:
            parent[i] = parent[parent[i]]
            i = parent[i]
        return i

    for a, b in tree.query_pairs(tol_mm):
        ra, rb = find(a), find(b)
        if ra != rb:
            parent[max(ra, rb)] = min(ra, rb)
    out: list[LineString] = []
    for k, ln in enumerate(lines):
        coords = [tuple(c) for c in ln.coords]
        coords[0] = tuple(ends[find(2 * k)])
        coords[-1] = tuple(ends[find(2 * k + 1)])
        if len(coords) == 2 and coords[0] == coords[1]:
            continue
        out.append(LineString(coords))
    return out


def _join_loose_ends(lines: list[LineString], max_gap_mm: float) -> list[LineString]:
    """Short segments joining each loose line end to the nearest other loose end within ``max_gap_mm``."""
    count: dict[tuple[float, float], int] = {}
    for ln in lines:
        for c in (ln.coords[0], ln.coords[-1]):
            count[(c[0], c[1])] = count.get((c[0], c[1]), 0) + 1
    loose = [pt for pt, n in count.items() if n % 2 == 1]
    if len(loose) < 2:
        return []
    tree = cKDTree(np.array(loose))
    used: set[int] = set()
    out: list[LineString] = []
    for i, pt in enumerate(loose):
        if i in used:
            continue
        dist, idx = tree.query(pt, k=2)
        j = int(idx[1])
        if j in used or dist[1] > max_gap_mm:
            continue
        # mutual nearest only: never bridge past a closer loose end
        _, back = tree.query(loose[j], k=2)
        if int(back[1]) != i:
            continue
        used.update((i, j))
        out.append(LineString([pt, loose[j]]))
    return out


def outline_polygon(features_paths: list[BaseGeometry], dark: BaseGeometry | None) -> tuple[BaseGeometry | None, str | None]:
    """The board shape from the profile layer: draws joined into closed rings, even-odd filled.

    Returns (polygon, note). Falls back to the filled dark image when the lines do not close.
    """
    gap_note: str | None = None
    lines = [ln for p in features_paths if p is not None and not p.is_empty
             for ln in shapely.get_parts(p) if isinstance(ln, LineString) and len(ln.coords) >= 2]
    if lines:
        snapped = _snap_ends(lines, OUTLINE_SNAP_MM)
        faces = list(polygonize(unary_union(snapped)))
        joined = _join_loose_ends(snapped, OUTLINE_GAP_MM)
        if joined:
            faces_joined = list(polygonize(unary_union(snapped + joined)))
            if sum(Polygon(f.exterior).area for f in faces_joined) > sum(Polygon(f.exterior).area for f in faces):
                faces = faces_joined
                gap = max(ln.length for ln in joined)
                gap_note = f"joined {len(joined)} gap(s) of up to {gap:.3f} mm in the outline's drawing"
        if faces:
            # even-odd rule over the closed rings: a ring inside the board is a cut-out, rings side
            # by side (a board split by a drawn line, several boards on a panel) add up
            board = Polygon(faces[0].exterior)
            for face in faces[1:]:
                board = board.symmetric_difference(Polygon(face.exterior))
            return board, gap_note
    if dark is not None and not dark.is_empty:
        parts = [p for p in shapely.get_parts(dark) if isinstance(p, Polygon)]
        if parts:
            big = max(parts, key=lambda p: Polygon(p.exterior).area)
            return Polygon(big.exterior), "the outline's lines do not close into a ring: using the filled drawn shape"
    return None, "the outline layer draws no closed shape"


def _board_name(path: Path) -> str:
    p = path.resolve()
    stem = p.stem if p.is_file() else p.name
    if stem.lower() in _FOLDER_NAMES and p.parent.name:
        return p.parent.name
    return stem


def _copper_order(infos: list[tuple[Identification, Layer]]) -> list[tuple[Identification, Layer]]:
    def key(item: tuple[Identification, Layer]) -> tuple[int, float, str]:
        ident, _ = item
        if ident.copper_number_absolute and ident.copper_number is not None:
            return (0, float(ident.copper_number) if ident.side != "bottom" else 1e9, ident.name)
        side_rank = {"top": 0, "inner": 1, "bottom": 2}.get(ident.side or "", 1)
        num = float(ident.copper_number) if ident.copper_number is not None else 1e6
        if side_rank == 0:
            return (0, 0.0, ident.name)
        if side_rank == 2:
            return (0, 1e9, ident.name)
        return (0, 1 + num, ident.name)
    return sorted(infos, key=key)


def load_board(
    path: str | Path,
    *,
    layer_map: Mapping[str, str] | None = None,
    limits: Limits = DEFAULT_LIMITS,
    stackup_override: Stackup | None = None,
    progress: Progress | None = None,
    strict: bool = False,
    copper_layers: int | None = None,
) -> Board:
    """Read every file of a folder or .zip of fabrication outputs into a Board.

    ``strict``: deprecated Gerber constructs and Excellon dialects are refused (an error for that
    file) instead of read with a warning (``FileInfo.warnings``).

    ``copper_layers`` (config ``[board] copper_layers``) confirms how many copper layers the board
    has: without it, fewer copper layers than the files announce is an error (see ``resolve``).
    """
    if layer_map:
        check_layer_map(layer_map)
    say = progress or (lambda _msg: None)
    p = Path(path)
    with open_input(p, limits=limits) as files:
        board = Board(name=_board_name(p), source=safe_name(str(path)))
        confirmed = copper_layers
        if confirmed is None and stackup_override is not None and any(sl.kind == "copper" for sl in stackup_override.layers):
            confirmed = sum(1 for sl in stackup_override.layers if sl.kind == "copper")
        _read_all(board, files, dict(layer_map or {}), limits, say, strict, confirmed)
    # The config's stackup is there for a job file that is missing *or wrong*: when given, it wins.
    if stackup_override is not None:
        board.stackup = stackup_override
    elif board.stackup is None:
        board.stackup = default_stackup([layer.name for layer in board.copper_layers()])
    return board


def _read_all(board: Board, files: list[InputFile], layer_map: dict[str, str], limits: Limits, say: Progress,
              strict: bool = False, confirmed_copper: int | None = None) -> None:
    from sensorcheck.fab.excellon import read_drill_parameters, read_excellon, read_tool_table
    from sensorcheck.fab.gerber import read_gerber
    from sensorcheck.fab.ipc356 import read_ipc356
    from sensorcheck.fab.jobfile import read_jobfile
    from sensorcheck.fab.placement import read_component_layer, read_pick_and_place

    infos: dict[str, FileInfo] = {}
    heads: dict[str, bytes] = {}
    for f in files:
        shown = safe_name(f.name)
        info = FileInfo(path=shown, role=None)
        infos[f.name] = info
        board.files.append(info)
        if f.error:
            info.error = f"{shown}: {f.error}"
            continue
        if f.note:
            info.note = f.note
            continue
        try:
            heads[f.name] = read_head(f)
        except OSError as exc:
            info.error = f"{shown}: cannot read: {exc.strerror or exc}"

    # job files first: their FilesAttributes help identify the rest
    job_functions: dict[str, str] = {}
    for f in files:
        if f.name in heads and (f.name.lower().endswith(".gbrjob") or sniff(heads[f.name]) == "gbrjob"):
            try:
                job_functions.update(job_file_functions(read_bytes(f, limits)))
            except SensorcheckError:
                pass  # reported when the job file itself is read below

    idents: dict[str, Identification] = {}
    for f in files:
        if f.name not in heads:
            continue
        ident = identify(f.name, heads[f.name], layer_map=layer_map, job_functions=job_functions)
        idents[f.name] = ident
        info = infos[f.name]
        info.role, info.layer, info.side = ident.role, ident.layer, ident.side
        info.identified_by, info.generator, info.note = ident.identified_by, ident.generator, ident.note

    seen_content: dict[tuple[str, str], str] = {}
    copper: list[tuple[Identification, Layer]] = []
    others: list[Layer] = []
    x2_images: dict[int, dict[str | None, BaseGeometry]] = {}  # id(layer) -> X2 per-net images
    drill_holes: dict[str, list[Hole]] = {}
    outline_cands: list[tuple[Identification, Layer]] = []
    unknown_layers: list[tuple[Identification, Layer]] = []  # Gerber files nothing identified: read for content
    job_file: str | None = None
    for f in files:
        ident = idents.get(f.name)
        info = infos[f.name]
        if ident is not None and ident.role is None and ident.kind == "gerber":
            try:
                g = read_gerber(read_bytes(f, limits), safe_name(f.name), limits=limits)
                unknown = Layer(name="", function="other", side="none", file=safe_name(f.name),
                                units="inch" if g.units == "inch" else "mm", generator=g.generator,
                                features=g.features, dark=g.dark)
                unknown_layers.append((ident, unknown))
                x2_images[id(unknown)] = g.by_net  # used if its content makes it copper
            except Exception:  # noqa: BLE001 - not understood stays not understood (nothing claimed it); a
                pass  # reader bug on an unclaimed file must not lose the board
            continue
        if ident is None or ident.role is None:
            continue
        if ident.role == "other":
            info.note = info.note or "not used by the checks"
            continue
        shown = safe_name(f.name)
        try:
            data = read_bytes(f, limits)
            digest = hashlib.sha256(data).hexdigest()
            key = (f"{ident.role}:{ident.layer}:{ident.side}:{ident.copper_number}", digest)  # same layer, same bytes
            if key in seen_content:
                info.note = f"same content as {seen_content[key]}: read once"
                continue
            seen_content[key] = shown
            say(f"reading {shown}")
            if ident.kind == "gerber" and ident.role in _READ_ROLES:
                g = read_gerber(data, shown, limits=limits, strict=strict)
                info.warnings = list(g.warnings)
                layer = Layer(name=ident.layer or "", function=ident.role, side=ident.side or "none", file=shown,
                              units="inch" if g.units == "inch" else "mm", generator=g.generator or ident.generator,
                              features=g.features, dark=g.dark,
                              x2_file_function=",".join(g.file_attributes.get(".FileFunction", [])) or None)
                info.units, info.generator, info.object_count = layer.units, layer.generator, g.object_count
                info.dark_area_mm2 = round(float(g.dark.area), 6) if g.dark is not None else 0.0
                if ident.role == "copper":
                    copper.append((ident, layer))
                    x2_images[id(layer)] = g.by_net  # keyed by layer name once the stack is ordered
                elif ident.role == "outline":
                    outline_cands.append((ident, layer))
                else:
                    others.append(layer)
            elif ident.kind == "gerber" and ident.role == "components":
                comps = read_component_layer(data, shown, ident.side or "top")
                board.components.extend(comps)
                info.object_count = len(comps)
            elif ident.kind == "gerber" and ident.role == "drill":
                g = read_gerber(data, shown, limits=limits, strict=strict)
                info.warnings = list(g.warnings)
                holes = _holes_from_gerber(g.features, ident.plated, shown)
                drill_holes[shown] = holes
                info.units, info.object_count = g.units, len(holes)
            elif ident.kind == "excellon":
                ex = read_excellon(data, shown, plated_hint=ident.plated, limits=limits, strict=strict,
                                   tool_table_mm=_companion_tools(f, files, read_tool_table, limits),
                                   format_hint=_drill_parameters(f, data, files, read_drill_parameters, limits))
                info.warnings = list(ex.warnings)
                drill_holes[shown] = ex.holes
                info.units, info.object_count = ex.units, len(ex.holes)
                info.generator = info.generator or ex.generator
                if not ex.holes:
                    info.note = "no holes in this drill file"
            elif ident.kind == "ipc356":
                pts = read_ipc356(data, shown, limits=limits)
                board.net_points.extend(pts)
                info.object_count = len(pts)
                info.nets = sorted({pt.net for pt in pts})
            elif ident.kind == "gbrjob":
                job = read_jobfile(data, shown)
                if job.stackup is not None and board.stackup is None:
                    board.stackup = job.stackup
                    job_file = shown
                info.generator = job.generator
                info.object_count = len(job.stackup.layers) if job.stackup else 0
                if job.notes:
                    info.note = "; ".join(job.notes)
            elif ident.kind == "pnp":
                comps = read_pick_and_place(data, shown, default_side=ident.side if ident.side in ("top", "bottom") else "top")
                board.components.extend(comps)
                info.object_count = len(comps)
            else:
                info.note = info.note or "identified, but no reader for this kind of file"
        except SensorcheckError as exc:
            info.error = exc.describe()
        except Exception as exc:  # a bug in a reader must not lose the other files
            info.error = f"{shown}: internal error while reading ({type(exc).__name__}: {exc})"

    copper = _promote_bottom(copper, infos)
    _copper_by_content(copper, unknown_layers, idents, infos, drill_holes, board, job_file, confirmed_copper,
                       outline_cands)
    outline_src = _choose_outline(outline_cands, copper, others, infos)

    # copper in stack order; duplicate claims are errors
    claimed: dict[str, str] = {}
    ordered = _copper_order(copper)
    n_cu = len(ordered)
    x2_by_name: dict[str, dict[str | None, BaseGeometry]] = {}
    inner_rank = 0
    for position, (ident, layer) in enumerate(ordered, start=1):
        info = infos[_key_of(infos, layer.file)]
        absolute = ident.copper_number_absolute and ident.copper_number is not None
        cidx = ident.copper_number if absolute else position  # X2/job L-number, else the place in the stack
        assert cidx is not None
        if ident.side == "top":
            name = "top-copper"
        elif ident.side == "bottom":
            name = "bottom-copper"
            cidx = cidx if absolute else n_cu
        else:
            inner_rank += 1
            name = f"inner{cidx - 1 if absolute else inner_rank}-copper"
        if name in claimed:
            info.error = f"{layer.file}: also identified as {name} (first: {claimed[name]}); say which is which with a layer map"
            continue
        claimed[name] = layer.file
        layer.name, layer.copper_index = name, cidx
        info.layer = name
        x2_by_name[name] = x2_images[id(layer)]
        board.layers.append(layer)
    by_name: dict[str, Layer] = {}
    for layer in others:
        info = infos[_key_of(infos, layer.file)]
        if layer.name in claimed and layer.function == "mask" and layer.name in by_name:
            # a stencil taken for the solder mask by its name: of two masks of one side, the one whose
            # openings are fewer and all within the other's is the paste (stencil) layer
            first = by_name[layer.name]
            paste_name = layer.name.replace("-mask", "-paste")
            stencil = resolve.stencil_of(first, layer) if paste_name not in claimed else None
            if stencil is not None:
                mask = first if stencil is layer else layer
                sinfo = infos[_key_of(infos, stencil.file)]
                stencil.name, stencil.function = paste_name, "paste"
                sinfo.role, sinfo.layer = "paste", paste_name
                note = f"paste (stencil) by its content: its openings lie within {mask.file}'s"
                sinfo.note = f"{sinfo.note}; {note}" if sinfo.note else note
                claimed[paste_name], claimed[layer.name] = stencil.file, mask.file
                by_name[paste_name], by_name[layer.name] = stencil, mask
                if stencil is first:
                    board.layers.remove(first)
                board.layers.append(stencil)
                if mask is layer:
                    board.layers.append(layer)
                continue
        if layer.name in claimed:
            info.error = f"{layer.file}: also identified as {layer.name} (first: {claimed[layer.name]}); say which is which with a layer map"
            continue
        claimed[layer.name] = layer.file
        by_name[layer.name] = layer
        board.layers.append(layer)
    order = {"top-silk": 0, "top-paste": 1, "top-mask": 2}
    board.layers.sort(key=lambda layer: (
        order.get(layer.name, 3 if layer.function == "copper" else 10),
        layer.copper_index or 0,
        {"bottom-mask": 0, "bottom-paste": 1, "bottom-silk": 2, "outline": 3}.get(layer.name, 9),
    ))

    if outline_src is not None:
        shape, note = outline_polygon(outline_src[1], outline_src[2])
        board.outline = shape
        if note:
            oi = infos[_key_of(infos, outline_src[0])]
            oi.note = f"{oi.note}; {note}" if oi.note else note

    _sanity_checks(board, infos, drill_holes)
    _stackup_check(board, infos, idents, job_file, confirmed_copper)
    for holes in drill_holes.values():
        board.holes.extend(holes)

    say("finding nets")
    assign_nets(board, x2_by_name)
    for layer in board.copper_layers():
        info = infos[_key_of(infos, layer.file)]
        info.nets = sorted(layer.by_net)


#: names of the tool files some exporters write beside an Excellon file that selects tools it
#: never sizes (a drill rack / tool list: "T01 0.0350in" lines), common practice
_TOOL_FILE_SUFFIXES = (".dri", ".tol", ".rack", ".tools", ".tool", ".txt", ".lst")


def _companion_tools(drill: InputFile, files: list[InputFile], read_tool_table: Callable[[bytes], dict[int, float]],
                     limits: Limits) -> dict[int, float] | None:
    """Tool sizes from a tool file beside ``drill``: same folder, same stem or a name saying tools."""
    folder, _, base = drill.name.rpartition("/")
    stem = base.rsplit(".", 1)[0].lower()
    for f in files:
        if f is drill or f.error or f.note:
            continue
        f_folder, _, f_base = f.name.rpartition("/")
        low = f_base.lower()
        if f_folder != folder or not low.endswith(_TOOL_FILE_SUFFIXES):
            continue
        if not (low.rsplit(".", 1)[0] == stem or "tool" in low or "rack" in low):
            continue
        try:
            table = read_tool_table(read_bytes(f, limits)[:200_000])
        except (OSError, SensorcheckError):
            continue
        if table:
            return table
    return None


def _drill_parameters(drill: InputFile, data: bytes, files: list[InputFile],
                      read_drill_parameters: Callable[[bytes, str], DrillFormat | None], limits: Limits) -> DrillFormat | None:
    """The number format from an ``nc_param.txt`` beside a drill file that states no units itself."""
    if re.search(rb"^\s*(?:INCH|METRIC|M71|M72)\b", data[:65536], re.M):
        return None
    folder = drill.name.rpartition("/")[0]
    for f in files:
        if f.error or f.note or f.name.rpartition("/")[0] != folder or f.name.rpartition("/")[2].lower() != "nc_param.txt":
            continue
        try:
            return read_drill_parameters(read_bytes(f, limits)[:100_000], safe_name(f.name))
        except (OSError, SensorcheckError):
            return None
    return None
def _outline_paths(layer: Layer) -> list[BaseGeometry]:
    return [ft.path if ft.path is not None else ft.geometry.boundary for ft in layer.features]


def _copper_images(copper: list[tuple[Identification, Layer]]) -> list[BaseGeometry]:
    return [layer.dark for _, layer in copper if layer.dark is not None and not layer.dark.is_empty]


def _choose_outline(cands: list[tuple[Identification, Layer]], copper: list[tuple[Identification, Layer]],
                    others: list[Layer], infos: dict[str, FileInfo]) -> tuple[str, list[BaseGeometry], BaseGeometry | None] | None:
    """The outline among the outline candidates (content decides between mechanical layers)."""
    shapes = [(layer.file, ident.tentative, outline_polygon(_outline_paths(layer), layer.dark)[0]) for ident, layer in cands]
    choice = resolve.choose_outline(shapes, _copper_images(copper))
    for i, (ident, layer) in enumerate(cands):
        info = infos[_key_of(infos, layer.file)]
        if i in choice.refused:
            info.role, info.layer, info.side = "other", None, None
            info.note = choice.refused[i]
        elif i == choice.chosen or not ident.tentative:
            others.append(layer)  # a second sure outline stays a duplicate claim
    if choice.chosen is None:
        return None
    layer = cands[choice.chosen][1]
    return (layer.file, _outline_paths(layer), layer.dark)


def _promote_bottom(copper: list[tuple[Identification, Layer]], infos: dict[str, FileInfo]) -> list[tuple[Identification, Layer]]:
    """Names numbered from the top ("_L01".."_L12") and none called bottom: the highest number is the bottom."""
    if any(ident.side == "bottom" for ident, _ in copper):
        return copper
    numbered = [(ident, layer) for ident, layer in copper
                if ident.side == "inner" and ident.copper_number_absolute and ident.copper_number
                and ident.identified_by in ("filename", "content")]
    if not numbered:
        return copper
    last = max(numbered, key=lambda item: item[0].copper_number or 0)
    out = []
    for ident, layer in copper:
        if ident is last[0]:
            ident = replace(ident, side="bottom", layer="bottom-copper")
            layer.side = "bottom"
            info = infos[_key_of(infos, layer.file)]
            info.side, info.note = "bottom", "bottom copper: the highest layer number in the names"
        out.append((ident, layer))
    return out


def _copper_by_content(copper: list[tuple[Identification, Layer]], unknown: list[tuple[Identification, Layer]],
                       idents: dict[str, Identification], infos: dict[str, FileInfo], drill_holes: dict[str, list[Hole]],
                       board: Board, job_file: str | None, confirmed: int | None,
                       outline_cands: list[tuple[Identification, Layer]]) -> None:
    """Gerber files nothing named: the outline or copper by their content (see ``resolve``)."""
    if not unknown:
        return
    x, y, _ = resolve.plated_points(h for holes in drill_holes.values() for h in holes)
    evidence = resolve.layer_count_evidence(idents.values(), _job_copper_count(board), job_file)
    wanted = (confirmed if confirmed is not None else evidence.copper_layers if evidence else 0) - len(copper)
    cu_images = _copper_images(copper)
    for ident, layer in unknown:
        info = infos[_key_of(infos, layer.file)]
        share = resolve.looks_like_copper(layer, x, y)
        if share is not None and wanted > 0:
            wanted -= 1
            new = replace(ident, role="copper", layer="inner-copper", side="inner", identified_by="content",
                          tentative=True)
            layer.function, layer.side = "copper", "inner"
            copper.append((new, layer))
            info.role, info.side, info.identified_by = "copper", "inner", "content"
            info.units, info.object_count = layer.units, len(layer.features)
            info.dark_area_mm2 = round(float(layer.dark.area), 6) if layer.dark is not None else 0.0
            info.note = (f"inner copper by its content ({share:.0%} of the plated holes land on it); its place in the "
                         "stack is a guess: confirm it with a layer map")
            continue
        if share is not None:
            info.note = f"{info.note}; it looks like copper ({share:.0%} of the plated holes land on it): name it with a layer map"
        elif not any(not c.tentative for c, _ in outline_cands) and resolve.thin_draws_only(layer) and resolve.encloses(outline_polygon(_outline_paths(layer), None)[0], cu_images):
            info.note = f"{info.note}; it looks like a board outline (thin closed draws around the copper)"
            layer.function, layer.name, layer.side = "outline", "outline", "none"
            new = replace(ident, role="outline", layer="outline", side="none", identified_by="content", tentative=True)
            info.role, info.layer, info.side, info.identified_by = "outline", "outline", "none", "content"
            outline_cands.append((new, layer))


def _job_copper_count(board: Board) -> int | None:
    if board.stackup is None or board.stackup.source != "jobfile":
        return None
    return sum(1 for sl in board.stackup.layers if sl.kind == "copper") or None


def _stackup_check(board: Board, infos: dict[str, FileInfo], idents: dict[str, Identification], job_file: str | None,
                   confirmed: int | None) -> None:
    """Fewer copper layers than the files (or the config) announce: an error on the file that says so."""
    found = [layer.name for layer in board.copper_layers()]
    evidence = resolve.layer_count_evidence(idents.values(), _job_copper_count(board), job_file)
    problem = resolve.stackup_problem(found, evidence, confirmed)
    if problem is None:
        return
    where = evidence.file if evidence is not None else (board.copper_layers()[0].file if found else None)
    if where is None:
        return
    info = infos[_key_of(infos, safe_name(where))] if safe_name(where) in {i.path for i in infos.values()} else None
    if info is None:
        return
    err = InputError(info.path, None, problem, "every copper layer of the board identified")
    info.error = f"{info.error}; {err.describe()}" if info.error else err.describe()


def _key_of(infos: dict[str, FileInfo], shown: str) -> str:
    """The input name of the file shown as ``shown`` (names are shown through safe_name)."""
    if shown in infos and infos[shown].path == shown:
        return shown
    for k, v in infos.items():
        if v.path == shown:
            return k
    raise KeyError(shown)


def _holes_from_gerber(features: list[Feature], plated: bool | None, name: str) -> list[Hole]:
    """Holes of an X2 drill file written in Gerber: each flash's extent is its diameter."""
    holes: list[Hole] = []
    for ft in features:
        if ft.polarity != "dark":
            continue
        if ft.kind == "flash":
            minx, miny, maxx, maxy = ft.geometry.bounds
            holes.append(Hole((minx + maxx) / 2, (miny + maxy) / 2, maxx - minx, plated, ft.source))
        elif ft.kind == "draw" and ft.path is not None and ft.width_mm:
            (x0, y0), (x1, y1) = ft.path.coords[0], ft.path.coords[-1]
            holes.append(Hole(x0, y0, ft.width_mm, plated, ft.source, end_x_mm=x1, end_y_mm=y1))
    return holes


def _bounds_of(geoms: list[tuple[float, float, float, float]]) -> tuple[float, float, float, float] | None:
    if not geoms:
        return None
    return (min(g[0] for g in geoms), min(g[1] for g in geoms), max(g[2] for g in geoms), max(g[3] for g in geoms))


def _inside(b: tuple[float, float, float, float], ref: tuple[float, float, float, float], margin: float) -> bool:
    return b[0] >= ref[0] - margin and b[1] >= ref[1] - margin and b[2] <= ref[2] + margin and b[3] <= ref[3] + margin


def _sanity_checks(board: Board, infos: dict[str, FileInfo], drill_holes: dict[str, list[Hole]]) -> None:
    """Units and extents: a drill file at the wrong scale, a layer far outside the board."""
    if board.outline is not None and not board.outline.is_empty:
        ref = tuple(board.outline.bounds)
        ref_name = "the board outline"
    else:
        cu = [layer.dark.bounds for layer in board.copper_layers() if layer.dark is not None and not layer.dark.is_empty]
        ref = _bounds_of(cu)  # type: ignore[assignment]
        ref_name = "the copper"
    if ref is None:
        return
    size = max(ref[2] - ref[0], ref[3] - ref[1])
    margin = max(EXTENT_MARGIN_MM, 0.5 * size)
    outer = [layer.dark for layer in board.copper_layers() if layer.dark is not None and not layer.dark.is_empty
             and layer.name in ("top-copper", "bottom-copper")]
    outline_info = next((infos[_key_of(infos, layer.file)] for layer in board.layers if layer.function == "outline"), None)
    cu_bounds = _bounds_of([layer.dark.bounds for layer in board.copper_layers()
                            if layer.dark is not None and not layer.dark.is_empty])
    if outline_info is not None and cu_bounds is not None:
        # the outline against the copper: the same board drawn at 25.4 times the size is a units error
        factor = resolve.scale_mismatch(resolve.size_of(ref), resolve.size_of(cu_bounds))  # type: ignore[arg-type]
        if factor is not None:
            err = InputError(outline_info.path, None,
                             f"the outline is {resolve.size_of(ref):.2f} mm across, {factor:g} times the copper's "  # type: ignore[arg-type]
                             f"{resolve.size_of(cu_bounds):.2f} mm: this file's units disagree with the copper layers'",
                             "an outline as large as the board the copper is drawn on")
            outline_info.error = err.describe()
            board.layers = [layer for layer in board.layers if layer.function != "outline"]
            board.outline = None
            ref, ref_name = cu_bounds, "the copper"
            size = resolve.size_of(ref)
            margin = max(EXTENT_MARGIN_MM, 0.5 * size)
    for fname, holes in list(drill_holes.items()):
        if not holes:
            continue
        info = infos[_key_of(infos, fname)]
        problem = resolve.drill_units_problem(holes, outer, info.units)
        if problem is not None:
            info.error = InputError(fname, holes[0].source.line, problem, "plated holes on the copper pads").describe()
            drill_holes[fname] = []
            continue
        hb = _bounds_of([(h.x_mm, h.y_mm, h.x_mm, h.y_mm) for h in holes])
        assert hb is not None
        if _inside(hb, ref, margin):  # type: ignore[arg-type]
            continue
        info = infos[_key_of(infos, fname)]
        hint = ""
        for factor, units in ((1 / 25.4, "mm"), (25.4, "inch")):
            scaled = (hb[0] * factor, hb[1] * factor, hb[2] * factor, hb[3] * factor)
            if _inside(scaled, ref, margin):  # type: ignore[arg-type]
                hint = f"; read as {units} they would fit: the file's units (INCH/METRIC) look wrong"
        line = holes[0].source.line
        err = InputError(fname, line, f"holes span x {hb[0]:.2f}..{hb[2]:.2f}, y {hb[1]:.2f}..{hb[3]:.2f} mm, "
                         f"far outside {ref_name} (x {ref[0]:.2f}..{ref[2]:.2f}, y {ref[1]:.2f}..{ref[3]:.2f} mm){hint}",
                         f"holes within {ref_name}")
        info.error = err.describe()
        drill_holes[fname] = []
    # each copper layer against the holes that agree with the copper (the drill files kept above):
    # a plated hole has copper on the outer layers, so an outer layer they miss unless rescaled is
    # the file whose units are wrong
    x, y, _ = resolve.plated_points(h for holes in drill_holes.values() for h in holes)
    for layer in list(board.copper_layers()):
        if layer.name not in ("top-copper", "bottom-copper") or layer.dark is None or layer.dark.is_empty:
            continue
        problem = resolve.copper_units_problem(layer.dark, x, y, layer.units)
        if problem is not None:
            info = infos[_key_of(infos, layer.file)]
            info.error = InputError(layer.file, None, problem, "copper at the plated holes").describe()
            board.layers.remove(layer)
    for layer in list(board.layers):
        if layer.dark is None or layer.dark.is_empty or layer.function == "outline":
            continue
        lb = tuple(layer.dark.bounds)
        if _inside(lb, ref, margin):  # type: ignore[arg-type]
            continue
        if ref_name == "the copper" and layer.function == "copper":
            continue
        info = infos[_key_of(infos, layer.file)]
        lsize = resolve.size_of(lb)  # type: ignore[arg-type]
        factor = resolve.scale_mismatch(lsize, size)
        board_box = shapely.box(ref[0] - margin, ref[1] - margin, ref[2] + margin, ref[3] + margin)
        if factor is None and layer.dark.intersection(board_box).area >= 0.5 * layer.dark.area:
            # most of the image is on the board: text or a frame beside it, not a units error
            note = (f"part of the image lies outside {ref_name} (it spans x {lb[0]:.2f}..{lb[2]:.2f}, "
                    f"y {lb[1]:.2f}..{lb[3]:.2f} mm)")
            info.note = f"{info.note}; {note}" if info.note else note
            continue
        err = InputError(layer.file, None, f"the image spans x {lb[0]:.2f}..{lb[2]:.2f}, y {lb[1]:.2f}..{lb[3]:.2f} mm, "
                         f"far outside {ref_name} (x {ref[0]:.2f}..{ref[2]:.2f}, y {ref[1]:.2f}..{ref[3]:.2f} mm)",
                         "a layer within the board (check its units and origin)")
        info.error = err.describe()
        board.layers.remove(layer)
