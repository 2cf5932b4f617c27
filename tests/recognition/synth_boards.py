"""Synthetic boards with every sensor kind, written as Gerber X2 files, with their truth.

Each board is made from shapely geometry whose answer is known by construction, written as
RS-274X regions (Gerber specification, section 4.10: a region is a contour; a polygon with holes
is written as hole-free pieces that meet edge to edge), with ``%TO.N`` net attributes (section
5.6.13) on the named variant and none on the unnamed one, in millimetres (``%MOMM%``) or inches
(``%MOIN%``), with the sensors on the top or the bottom copper (on both: ``two_faces``).
:func:`write_all` writes every variant into a folder and returns (board folder, truth entries)
pairs; the truth entries follow ``tests/recognition/truth.py``.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from pathlib import Path
from typing import Any

import shapely
from shapely.geometry import LineString, Point, Polygon, box
from shapely.geometry.base import BaseGeometry
from shapely.ops import split

Copper = dict[str, dict[str, BaseGeometry]]  # "top"/"bottom" -> net -> geometry
Truth = list[dict[str, Any]]


def disc(x: float, y: float, r: float) -> BaseGeometry:
    return Point(x, y).buffer(r, quad_segs=32)


def ring(x: float, y: float, r_in: float, r_out: float) -> BaseGeometry:
    return disc(x, y, r_out).difference(disc(x, y, r_in))


def sector(cx: float, cy: float, r_in: float, r_out: float, a0: float, a1: float) -> BaseGeometry:
    angs = [math.radians(a0 + (a1 - a0) * k / 48) for k in range(49)]
    return Polygon([(cx + r_out * math.cos(a), cy + r_out * math.sin(a)) for a in angs]
                   + [(cx + r_in * math.cos(a), cy + r_in * math.sin(a)) for a in reversed(angs)])


def _ground(x0: float, y0: float, x1: float, y1: float, keep_out: list[BaseGeometry]) -> BaseGeometry:
    """A ground pour over the whole board with 1.5 mm clearance round ``keep_out`` (openings)."""
    pour = box(x0 + 1, y0 + 1, x1 - 1, y1 - 1)
    return pour.difference(shapely.union_all([g.buffer(1.5) for g in keep_out]))


# --------------------------------------------------------------------------- the boards
# each maker returns (copper on the sensing face "s" and the other face "o", truth); nets named
# as a designer would; truth nets are the names, places are filled for the unnamed variant


def buttons() -> tuple[Copper, Truth, tuple[float, float, float, float]]:
    s = {"KEY_OK": disc(10, 10, 6), "KEY_UP": disc(30, 10, 6), "KEY_DN": disc(50, 10, 6),
         "PAD_SMALL": box(68, 8, 70.5, 10)}  # a 5 mm2 pad: small buttons count
    o: dict[str, BaseGeometry] = {"LINE_J1": LineString([(10, 30), (60, 30)]).buffer(0.15)}  # a routing line
    s["GND"] = _ground(0, 0, 80, 40, list(s.values()) + [o["LINE_J1"]])
    truth = [{"kind": "self-button", "nets": [n]} for n in ("KEY_OK", "KEY_UP", "KEY_DN", "PAD_SMALL")]
    return {"s": s, "o": o}, truth, (0, 0, 80, 40)


def self_slider() -> tuple[Copper, Truth, tuple[float, float, float, float]]:
    s = {f"Net-(J{k}-Pad1)": box(5 + 8 * k, 5, 12.5 + 8 * k, 17) for k in range(6)}
    truth = [{"kind": "slider", "nets": sorted(s), "segments": 6}]
    return {"s": s, "o": {}}, truth, (0, 0, 60, 25)


def self_wheel() -> tuple[Copper, Truth, tuple[float, float, float, float]]:
    s = {f"Net-(W{k}-Pad1)": sector(25, 25, 8, 18, 60 * k + 2, 60 * k + 58) for k in range(6)}
    truth = [{"kind": "wheel", "nets": sorted(s), "segments": 6}]
    return {"s": s, "o": {}}, truth, (0, 0, 50, 50)


def proximity_loop() -> tuple[Copper, Truth, tuple[float, float, float, float]]:
    loop = box(5, 5, 75, 45).difference(box(6.5, 6.5, 73.5, 43.5))
    s = {"Net-(J9-Pad1)": loop, "Net-(J8-Pad1)": disc(40, 25, 6)}
    truth = [{"kind": "proximity", "nets": ["Net-(J9-Pad1)"]}, {"kind": "self-button", "nets": ["Net-(J8-Pad1)"]}]
    return {"s": s, "o": {}}, truth, (0, 0, 80, 50)


def _comb(x0: float, y0: float, fingers: int, up: bool) -> BaseGeometry:
    """A comb of ``fingers`` 1 mm teeth at a 3 mm pitch, its spine below (``up``) or above."""
    teeth = [box(x0 + 3 * k, y0 + 1, x0 + 3 * k + 1, y0 + 9) for k in range(fingers)]
    spine = box(x0, y0, x0 + 3 * (fingers - 1) + 1, y0 + 1) if up else box(x0, y0 + 9, x0 + 3 * (fingers - 1) + 1,
                                                                           y0 + 10)
    return shapely.union_all([spine, *teeth])


def mutual_keys() -> tuple[Copper, Truth, tuple[float, float, float, float]]:
    s = {
        "Net-(K1-Pad1)": ring(10, 10, 5, 7), "Net-(K1-Pad2)": disc(10, 10, 4.3),  # ring round a centre
        "Net-(K2-Pad1)": ring(30, 10, 5, 7), "Net-(K2-Pad2)": disc(30, 10, 4.3),
        # interdigitated combs: 4 TX fingers, 3 RX fingers, 0.5 mm gaps
        "Net-(K3-Pad1)": _comb(45, 3, 4, up=True),
        "Net-(K3-Pad2)": _comb(46.5, 3.5, 3, up=False).difference(box(40, 3, 70, 4.5)),
    }
    # two interleaved spiral arms, 0.8 mm wide, 0.8 mm apart
    s["Net-(K4-Pad1)"], s["Net-(K4-Pad2)"] = _spiral(10, 32, 0), _spiral(10, 32, 1)
    # crossed bars: the RX bar on the sensing face, the TX bar across it under it
    s["Net-(K5-Pad2)"] = box(26, 30, 38, 34)
    o = {"Net-(K5-Pad1)": box(30, 26, 34, 38)}
    truth = [{"kind": "mutual-button", "nets": [f"Net-(K{k}-Pad?)"]} for k in range(1, 6)]
    return {"s": s, "o": o}, truth, (0, 0, 60, 44)


def _spiral(cx: float, cy: float, arm: int) -> BaseGeometry:
    """One arm of a two-arm Archimedean spiral (pitch 3.2 mm between turns of one arm)."""
    pts = []
    for k in range(241):
        t = 6 * math.pi * k / 240
        r = 1.5 + 1.6 / math.pi * t
        pts.append((cx + r * math.cos(t + math.pi * arm), cy + r * math.sin(t + math.pi * arm)))
    return LineString(pts).buffer(0.4, quad_segs=4)


def matrix() -> tuple[Copper, Truth, tuple[float, float, float, float]]:
    s = {f"Net-(M1-R{k})": box(2, 3.5 + 7 * k, 32, 8.5 + 7 * k) for k in range(4)}  # 5 mm rows on the sensing face
    o = {f"Net-(M1-C{k})": box(4.5 + 7 * k, 2, 7.5 + 7 * k, 32) for k in range(4)}  # 3 mm columns under them
    truth = [{"kind": "matrix", "nets": ["Net-(M1-*)"], "segments": 8}]
    return {"s": s, "o": o}, truth, (0, 0, 34, 34)


def mutual_slider() -> tuple[Copper, Truth, tuple[float, float, float, float]]:
    s = {"Net-(S1-RX)": box(3, 8, 48, 13)}
    o = {f"Net-(S1-T{k})": box(4 + 9 * k, 4, 12 + 9 * k, 17) for k in range(5)}  # TX segments under the RX bar
    truth = [{"kind": "slider", "nets": ["Net-(S1-*)"], "segments": 6}]
    return {"s": s, "o": o}, truth, (0, 0, 52, 22)


def mutual_wheel() -> tuple[Copper, Truth, tuple[float, float, float, float]]:
    s = {"Net-(W1-RX)": ring(25, 25, 11, 16)}
    o = {f"Net-(W1-T{k})": sector(25, 25, 9, 18, 72 * k + 2, 72 * k + 70) for k in range(5)}
    truth = [{"kind": "wheel", "nets": ["Net-(W1-*)"], "segments": 6}]
    return {"s": s, "o": o}, truth, (0, 0, 50, 50)


def two_faces() -> tuple[Copper, Truth, tuple[float, float, float, float]]:
    """Buttons touched from both faces: three on the sensing face in openings of a ground pour there;
    on the other face one button under the pour (shielded towards the sensing face: touched from its
    own face only) and one under an opening in it (the copper cannot tell: a REVIEW, its own face)."""
    s = {f"KEY_{c}": disc(10 + 20 * k, 10, 5) for k, c in enumerate("ABC")}
    o = {"KEY_D": disc(70, 10, 5), "KEY_E": disc(90, 10, 5)}
    s["GND"] = _ground(0, 0, 100, 20, [*s.values(), o["KEY_D"]])
    truth = [{"kind": "self-button", "nets": [f"KEY_{c}"]} for c in "ABC"]
    truth += [{"kind": "self-button", "nets": [f"KEY_{c}"], "side": "o"} for c in "DE"]
    return {"s": s, "o": o}, truth, (0, 0, 100, 20)


MAKERS: dict[str, Callable[[], tuple[Copper, Truth, tuple[float, float, float, float]]]] = {
    "buttons": buttons, "self-slider": self_slider, "self-wheel": self_wheel, "proximity": proximity_loop,
    "mutual-keys": mutual_keys, "matrix": matrix, "mutual-slider": mutual_slider, "mutual-wheel": mutual_wheel,
    "two-faces": two_faces,
}


# --------------------------------------------------------------------------- Gerber writing


def _pieces(geom: BaseGeometry) -> list[Polygon]:
    """Hole-free polygons covering ``geom``: each polygon with holes is split through each hole."""
    out: list[Polygon] = []
    todo = [p for p in getattr(geom, "geoms", [geom]) if isinstance(p, Polygon) and not p.is_empty]
    while todo:
        p = todo.pop()
        if not p.interiors:
            out.append(p)
            continue
        c = Polygon(p.interiors[0]).representative_point()
        x0, y0, x1, y1 = p.bounds
        cut = LineString([(c.x, y0 - 1), (c.x, y1 + 1)])
        todo.extend(q for q in split(p, cut).geoms if isinstance(q, Polygon))
    return out


def _gerber(layer_function: str, units: str, nets: dict[str, BaseGeometry], named: bool) -> str:
    scale = 1.0 if units == "mm" else 1 / 25.4
    lines = ["%TF.GenerationSoftware,sensorcheck-tests,synth_boards,1*%", f"%TF.FileFunction,{layer_function}*%",
             "%TF.FilePolarity,Positive*%", "%FSLAX46Y46*%", "%MOMM*%" if units == "mm" else "%MOIN*%", "%LPD*%",
             "G01*"]

    def xy(x: float, y: float) -> str:
        return f"X{round(x * scale * 1e6)}Y{round(y * scale * 1e6)}"

    for net in sorted(nets):
        for poly in _pieces(nets[net]):
            if named:
                lines.append(f"%TO.N,{net}*%")
            coords = list(poly.exterior.coords)
            lines += ["G36*", f"{xy(*coords[0])}D02*"] + [f"{xy(*c)}D01*" for c in coords[1:]] + ["G37*"]
            if named:
                lines.append("%TD*%")
    lines.append("M02*")
    return "\n".join(lines) + "\n"


def _outline(units: str, bounds: tuple[float, float, float, float]) -> str:
    scale = 1.0 if units == "mm" else 1 / 25.4
    x0, y0, x1, y1 = bounds
    pts = [(x0, y0), (x1, y0), (x1, y1), (x0, y1), (x0, y0)]

    def xy(x: float, y: float) -> str:
        return f"X{round(x * scale * 1e6)}Y{round(y * scale * 1e6)}"

    body = ["%TF.FileFunction,Profile,NP*%", "%FSLAX46Y46*%", "%MOMM*%" if units == "mm" else "%MOIN*%",
            "%ADD10C,0.100000*%" if units == "mm" else "%ADD10C,0.003937*%", "D10*", "G01*", f"{xy(*pts[0])}D02*"]
    body += [f"{xy(*p)}D01*" for p in pts[1:]] + ["M02*"]
    return "\n".join(body) + "\n"


def write_board(folder: Path, kind: str, *, named: bool, units: str, face: str) -> Truth:
    """Write one variant of board ``kind`` into ``folder``; its truth (places added when unnamed)."""
    copper, truth, bounds = MAKERS[kind]()
    folder.mkdir(parents=True, exist_ok=True)
    sensing, other = ("top", "bottom") if face == "top" else ("bottom", "top")
    by_side = {sensing: copper["s"], other: copper["o"]}
    functions = {"top": "Copper,L1,Top", "bottom": "Copper,L2,Bot"}
    for side in ("top", "bottom"):
        (folder / f"synth-{side}.gbr").write_text(_gerber(functions[side], units, by_side[side], named))
    (folder / "synth-outline.gbr").write_text(_outline(units, bounds))
    every = {**copper["s"], **copper["o"]}
    out: Truth = []
    for e in truth:
        e = dict(e, face=face if e.get("side", "s") == "s" else other)  # "side": "o": on the other face
        e.pop("side", None)
        if not named:
            from sensorcheck.design.roles import matches

            pats = e.pop("nets", [])
            members = [n for n in every if any(matches(n, p) for p in pats)]
            e["places"] = [list(_inside(every[n])) for n in members]
        out.append(e)
    return out


def _inside(geom: BaseGeometry) -> tuple[float, float]:
    p = max(getattr(geom, "geoms", [geom]), key=lambda g: g.area).representative_point()
    return round(p.x, 3), round(p.y, 3)


def variants() -> list[tuple[str, bool, str, str]]:
    """(kind, named, units, face): every kind named and unnamed; units and face alternate so that every
    kind is seen in mm and inch and on both faces across its two variants."""
    out = []
    for i, kind in enumerate(MAKERS):
        for named in (True, False):
            units = "mm" if (i + named) % 2 else "inch"
            face = "top" if (i // 2 + named) % 2 else "bottom"
            out.append((kind, named, units, face))
    return out


def write_all(root: Path) -> list[tuple[str, Path, Truth]]:
    """Every variant under ``root``: (board label, folder, truth)."""
    out = []
    for kind, named, units, face in variants():
        label = f"synth-{kind}-{'named' if named else 'unnamed'}-{units}-{face}"
        folder = root / label
        out.append((label, folder, write_board(folder, kind, named=named, units=units, face=face)))
    return out
