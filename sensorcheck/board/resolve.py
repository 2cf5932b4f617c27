"""What the files say together, once each one is read: the checks a single file cannot make.

* **Outline by content.** A mechanical or fabrication layer (Altium ``.GMn``, OrCAD ``.FAB``) is the
  board outline only if its drawing closes around the copper; of several, the tightest one that
  does. A Gerber file nothing identified may be the outline when its thin draws close around the
  copper and no other file is the outline.
* **Copper by content.** A Gerber file nothing identified "looks like copper" when most plated
  holes land on its image and it draws tracks; it becomes an inner layer only where the stack-up
  says layers are missing, else the note says what it looks like.
* **Stack-up consistency.** The number of copper layers the job file, the drill spans (X2
  ``Plated,1,N``, names like ``-1-12.drl``), the layer numbers in names and the generators'
  ``Layer_Physical_Order`` comments announce, against the copper layers found: fewer found is an
  error (exit 2) that says how to fix or confirm it (``[board] copper_layers``).
* **Units across files.** Plated holes sit on copper; their diameters are those of holes; the
  outline is about as large as the copper. A file that fits only scaled by 25.4 is named.

Everything here is pure: it takes read layers and holes and returns decisions and messages.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Sequence
from dataclasses import dataclass

import numpy as np
import shapely
from shapely.geometry.base import BaseGeometry

from sensorcheck.board.model import Hole, Layer
from sensorcheck.fab.identify import Identification

MM_PER_INCH = 25.4
#: an outline "encloses" the copper when most of the copper lies within the outline's box grown by
#: this much (mm) plus 2 % of the board size: pads at the very edge, outlines drawn on the centre line
ENCLOSE_MARGIN_MM = 1.0
#: the share of the copper area that must lie there (text or a frame beside the board is allowed:
#: tracespace arduino-uno carries about 10 % of its top copper outside the board)
ENCLOSE_SHARE = 0.8
#: the widest draw an outline-by-content may use (mm): board contours are drawn thin (common practice)
OUTLINE_MAX_WIDTH_MM = 0.5
#: share of plated holes that must land on a layer's image for it to "look like copper"
COPPER_HOLE_SHARE = 0.6
#: share of plated holes on outer copper below which a drill file's placement is doubted, and the
#: share a 25.4 rescale must reach to be called the cause
HOLES_ON_COPPER_LOW = 0.5
HOLES_ON_COPPER_HIGH = 0.8
#: plated holes larger than a quarter inch or smaller than 0.05 mm are not drilled holes (common practice)
MAX_PLATED_HOLE_MM = 6.35
MIN_HOLE_MM = 0.05


# ----------------------------------------------------------------------------- outline by content

def encloses(outline: BaseGeometry | None, copper: Sequence[BaseGeometry]) -> bool:
    """Does this board shape close around the copper (most of the copper's area within its box)?"""
    images = [c for c in copper if c is not None and not c.is_empty]
    if outline is None or outline.is_empty or not images:
        return False
    ob = outline.bounds
    m = ENCLOSE_MARGIN_MM + 0.02 * size_of(ob)
    total = sum(float(c.area) for c in images)
    inside = sum(float(shapely.clip_by_rect(c, ob[0] - m, ob[1] - m, ob[2] + m, ob[3] + m).area) for c in images)
    return total > 0 and inside >= ENCLOSE_SHARE * total


def thin_draws_only(layer: Layer) -> bool:
    """A contour drawing: every dark object is a draw or arc no wider than OUTLINE_MAX_WIDTH_MM."""
    if not layer.features:
        return False
    return all(ft.kind in ("draw", "arc") and (ft.width_mm or 0.0) <= OUTLINE_MAX_WIDTH_MM
               for ft in layer.features if ft.polarity == "dark")


@dataclass(frozen=True, slots=True)
class OutlineChoice:
    """Which outline candidate is the board outline (None: none), and a note for each one refused."""

    chosen: int | None
    refused: dict[int, str]


def choose_outline(candidates: Sequence[tuple[str, bool, BaseGeometry | None]],
                   copper: Sequence[BaseGeometry]) -> OutlineChoice:
    """``candidates``: (file, tentative, board shape) in file order.

    Files identified as the outline for sure (X2 profile, a board-outline name) are kept as they are
    (a second one stays a duplicate claim). Tentative ones (mechanical, fabrication layers) must
    enclose the copper; of several, the tightest wins. Without copper to compare, a lone tentative
    candidate is taken as it is.
    """
    sure = [i for i, (_, tentative, _) in enumerate(candidates) if not tentative]
    maybe = [i for i, (_, tentative, _) in enumerate(candidates) if tentative]
    refused: dict[int, str] = {}
    if sure:
        for i in maybe:
            refused[i] = f"not the outline ({candidates[sure[0]][0]} is): a drawing or mechanical layer"
        return OutlineChoice(sure[0], refused)
    if not maybe:
        return OutlineChoice(None, {})
    if not copper:
        if len(maybe) == 1:
            return OutlineChoice(maybe[0], {})
        for i in maybe:
            refused[i] = "a mechanical layer among several, and no copper to tell which is the outline"
        return OutlineChoice(None, refused)
    fitting = [i for i in maybe if encloses(candidates[i][2], copper)]
    chosen = min(fitting, key=lambda i: float(candidates[i][2].area)) if fitting else None  # type: ignore[union-attr]
    for i in maybe:
        if i == chosen:
            continue
        refused[i] = ("not the outline: its drawing does not close around the copper" if i not in fitting else
                      f"not the outline: {candidates[chosen][0]} closes tighter around the copper")  # type: ignore[index]
    return OutlineChoice(chosen, refused)


def stencil_of(a: Layer, b: Layer) -> Layer | None:
    """Of two layers claiming one side's solder mask, the stencil (paste) one, if the content tells.

    Paste openings are made for surface-mount pads only and are the pads' size or smaller; mask
    openings are made for every pad and via, usually a little larger (IPC-7525 and common
    practice). So the paste image is the smaller one and lies within the mask image.
    """
    if a.dark is None or b.dark is None or a.dark.is_empty or b.dark.is_empty:
        return None
    small, large = (a, b) if a.dark.area < b.dark.area else (b, a)
    if small.dark.area >= 0.95 * large.dark.area:  # type: ignore[union-attr]
        return None
    inside = small.dark.intersection(large.dark).area / small.dark.area  # type: ignore[union-attr]
    return small if inside >= 0.9 else None


# ----------------------------------------------------------------------------- copper by content

def plated_points(holes: Iterable[Hole]) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """x, y, diameter of the holes that are plated or of unknown plating (round holes and slot starts)."""
    pts = [(h.x_mm, h.y_mm, h.diameter_mm) for h in holes if h.plated is not False]
    if not pts:
        return np.zeros(0), np.zeros(0), np.zeros(0)
    a = np.array(pts, dtype=float)
    return a[:, 0], a[:, 1], a[:, 2]


def share_on(image: BaseGeometry | None, x: np.ndarray, y: np.ndarray, scale: float = 1.0) -> float:
    """Share of the points (scaled about the origin) that lie on the dark image."""
    if image is None or image.is_empty or len(x) == 0:
        return 0.0
    shapely.prepare(image)
    return float(shapely.contains_xy(image, x * scale, y * scale).mean())


def looks_like_copper(layer: Layer, x: np.ndarray, y: np.ndarray) -> float | None:
    """The share of plated holes on this image when it looks like copper (pads at holes and tracks), else None."""
    if len(x) < 5 or layer.dark is None or layer.dark.is_empty:
        return None
    share = share_on(layer.dark, x, y)
    draws = sum(1 for ft in layer.features if ft.kind in ("draw", "arc") and ft.polarity == "dark")
    if share >= COPPER_HOLE_SHARE and draws >= 0.1 * max(len(layer.features), 1):
        return share
    return None


# ----------------------------------------------------------------------------- stack-up consistency

_SPAN_NAME_RE = re.compile(r"(?:^|[-_ .])(\d{1,2})[-_](\d{1,2})(?=$|[-_ .])")


@dataclass(frozen=True, slots=True)
class LayerCountEvidence:
    copper_layers: int
    file: str
    how: str


def drill_span(ident: Identification) -> int | None:
    """The last copper layer a drill file's holes reach: X2 ``Plated,1,4,PTH`` or a name ``-1-4``."""
    if ident.file_function:
        parts = [p.strip() for p in ident.file_function.split(",")]
        if len(parts) >= 3 and parts[1].isdigit() and parts[2].isdigit():
            return max(int(parts[1]), int(parts[2]))
    base = ident.name.replace("\\", "/").rsplit("/", 1)[-1]
    stem = base.rpartition(".")[0] or base
    m = _SPAN_NAME_RE.search(stem)
    if m and int(m.group(1)) == 1 and 2 <= int(m.group(2)) <= 64:
        return int(m.group(2))
    return None


def layer_count_evidence(idents: Iterable[Identification], job_copper_layers: int | None,
                         job_file: str | None) -> LayerCountEvidence | None:
    """The largest copper-layer count any file announces, with the file that says so."""
    best: LayerCountEvidence | None = None

    def take(n: int | None, file: str, how: str) -> None:
        nonlocal best
        if n is not None and n >= 2 and (best is None or n > best.copper_layers):
            best = LayerCountEvidence(n, file, how)

    if job_copper_layers and job_file:
        take(job_copper_layers, job_file, "the job file's stack-up")
    for ident in idents:
        if ident.role == "drill":
            take(drill_span(ident), ident.name, "its holes' layer span")
        elif ident.role == "copper" and ident.copper_number_absolute and ident.copper_number:
            how = {"x2": "its X2 layer number", "jobfile": "the job file's layer number"}.get(
                ident.identified_by or "", "the layer number in its name or header")
            take(ident.copper_number, ident.name, how)
    return best


def stackup_problem(found: Sequence[str], evidence: LayerCountEvidence | None, confirmed: int | None) -> str | None:
    """The error text when the copper layers found disagree with what the files or the config announce."""
    n = len(found)
    if confirmed is not None:
        if confirmed != n:
            return (f"the config says the board has {confirmed} copper layers ([board] copper_layers), but {n} were "
                    f"identified ({', '.join(found) or 'none'}): add or name the missing files with a layer map, "
                    "or correct the count")
        return None
    if evidence is not None and evidence.copper_layers > max(n, 2):  # inner layers announced, not all found
        return (f"REVIEW: {evidence.how} says the board has {evidence.copper_layers} copper layers, but {n} were "
                f"identified ({', '.join(found) or 'none'}): the other layers' files are missing or not recognised. "
                f"Add them, name them with a layer map ([files] in sensorcheck.toml or --layer-map GLOB=innerN-copper), "
                f"or, if the board really has {n}, confirm it with [board] copper_layers = {n}")
    return None


# ----------------------------------------------------------------------------- units across files

def _fmt_scale(scale: float) -> str:
    return "read as millimetres" if scale < 1 else "read as inches"


def rescale_fit(images: Sequence[BaseGeometry], x: np.ndarray, y: np.ndarray) -> tuple[float, float, float] | None:
    """(share as read, scale, share scaled) when the points miss the images as read but land on them
    scaled by 25.4 or 1/25.4 about the origin; None when they agree or there is too little to tell."""
    if len(x) < 5 or not images:
        return None
    shares = {s: max(share_on(img, x, y, s) for img in images) for s in (1.0, MM_PER_INCH, 1 / MM_PER_INCH)}
    if shares[1.0] >= HOLES_ON_COPPER_LOW:
        return None
    best = max((MM_PER_INCH, 1 / MM_PER_INCH), key=lambda s: shares[s])
    return (shares[1.0], best, shares[best]) if shares[best] >= HOLES_ON_COPPER_HIGH else None


def copper_units_problem(image: BaseGeometry, x: np.ndarray, y: np.ndarray, units: str | None) -> str | None:
    """Why a copper layer's units look wrong against the drill files that agree with the other copper."""
    fit = rescale_fit([image], x, y)
    if fit is None:
        return None
    share, best, share_best = fit
    as_read = f" (as {units})" if units else ""
    return (f"{share:.0%} of the {len(x)} plated holes land on this layer's copper{as_read}, {share_best:.0%} would if "
            f"the layer were {1 / best:g} times the size: this file's units disagree with the drill files' and the "
            "other copper layers'")


def drill_units_problem(holes: Sequence[Hole], outer_copper: Sequence[BaseGeometry], units: str | None) -> str | None:
    """Why a drill file's units look wrong against the copper (None: they agree, or too little to tell).

    Plated holes sit on copper pads (every plated hole has an annular ring: IPC-2221 9.1.2). When
    most of them miss the outer copper as read but land on it scaled by 25.4 (or 1/25.4), the
    file's units are wrong. Plated hole diameters beyond a quarter inch, or below 0.05 mm, that
    come into range scaled by 25.4 say the same.
    """
    x, y, d = plated_points(holes)
    as_read = f" (as {units})" if units else ""
    fit = rescale_fit(outer_copper, x, y)
    if fit is not None:
        share, best, share_best = fit
        return (f"{share:.0%} of its {len(x)} plated holes land on copper{as_read}, {share_best:.0%} "
                f"would if {_fmt_scale(best)} (scaled by {best:g}): the file's units look wrong")
    if len(d) >= 5:
        med = float(np.median(d))
        if med > MAX_PLATED_HOLE_MM and MIN_HOLE_MM <= med / MM_PER_INCH <= MAX_PLATED_HOLE_MM:
            return (f"its plated holes are {med:.3g} mm across (median){as_read}, larger than any drilled hole; "
                    f"{med / MM_PER_INCH:.3g} mm if read as millimetres: the file's units look wrong")
        if 0 < med < MIN_HOLE_MM and MIN_HOLE_MM <= med * MM_PER_INCH <= MAX_PLATED_HOLE_MM:
            return (f"its plated holes are {med:.3g} mm across (median){as_read}, smaller than any drilled hole; "
                    f"{med * MM_PER_INCH:.3g} mm if read as inches: the file's units look wrong")
    return None


def size_of(bounds: tuple[float, float, float, float]) -> float:
    return max(bounds[2] - bounds[0], bounds[3] - bounds[1])


def scale_mismatch(size_mm: float, reference_mm: float) -> float | None:
    """25.4 or 1/25.4 when ``size_mm`` is that multiple of the reference (within a factor 2), else None."""
    if size_mm <= 0 or reference_mm <= 0:
        return None
    ratio = size_mm / reference_mm
    for s in (MM_PER_INCH, 1 / MM_PER_INCH):
        if 0.5 <= ratio / s <= 2.0:
            return s
    return None
