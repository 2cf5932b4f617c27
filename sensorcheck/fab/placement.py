"""Component positions: Gerber X3 component layers and pick-and-place files -> Component (mm).

* X3 component layers (``%TF.FileFunction,Component,L1,Top*%``, Gerber spec 2023.08 section 6.9):
  each component is a flash with the aperture function ``ComponentMain`` carrying the object
  attributes ``.C`` (reference), ``.CRot`` (rotation, degrees), ``.CVal`` (value) and ``.CFtp``
  (footprint). Both attribute forms are read (``%TO...*%`` and ``G04 #@! TO...*``).
* Pick-and-place text: KiCad's ``.pos`` (ASCII columns with a ``## Unit = mm`` line) and CSV
  (KiCad ``Ref,Val,Package,PosX,PosY,Rot,Side``; ``Designator,Mid X,Mid Y,Layer,Rotation`` styles;
  values with ``mm``/``mil``/``in`` suffixes).
"""

from __future__ import annotations

import csv
import io
import re

from sensorcheck.board.model import Component, Side, SourceRef
from sensorcheck.errors import InputError

MM_PER_INCH = 25.4

# ----------------------------------------------------------------------------- X3 component layers

_FS_RE = re.compile(r"FS([LT]?)([AI]?)X(\d)(\d)Y(\d)(\d)")
_XY_RE = re.compile(r"(?:X([+-]?\d+))?(?:Y([+-]?\d+))?(?:I[+-]?\d+)?(?:J[+-]?\d+)?(D0?[123])?$")


def read_component_layer(data: bytes, name: str, side: Side) -> list[Component]:
    """Components of an X3 component layer (flashes of ComponentMain apertures with ``.C``)."""
    text = data.decode("latin-1")
    if "\x00" in text:
        raise InputError(name, text[: text.index("\x00")].count("\n") + 1, "binary data in a Gerber file", "Gerber text")
    fmt: tuple[int, int] | None = None
    omit_trailing = False
    scale = 1.0
    aperture_attrs: dict[str, str] = {}
    aperture_function: dict[int, str] = {}
    object_attrs: dict[str, str] = {}
    current: int | None = None
    x = y = 0
    out: list[Component] = []
    line = 1
    pos = 0
    # commands end with '*'; extended commands are wrapped in '%'; comments "G04 #@! ..." carry X2
    for m in re.finditer(r"%([^%]*)%|([^%*]*)\*", text):
        start = m.start() + len(m.group(0)) - len(m.group(0).lstrip())  # the command, not the newline before it
        line += text.count("\n", pos, start)
        pos = start
        ext, word = m.group(1), m.group(2)
        cmds = [c.strip() for c in ext.split("*") if c.strip()] if ext is not None else [word.strip()]
        for cmd in cmds:
            if cmd.startswith("G04"):
                body = cmd[3:].strip()
                if body.startswith("#@!"):
                    cmd = body[3:].strip()
                else:
                    continue
            if cmd.startswith("FS"):
                fm = _FS_RE.match(cmd)
                if not fm:
                    raise InputError(name, line, f"bad format statement {cmd[:30]!r}", "%FSLAX46Y46*%")
                omit_trailing = fm.group(1) == "T"
                fmt = (int(fm.group(3)), int(fm.group(4)))
            elif cmd.startswith("MO"):
                scale = MM_PER_INCH if cmd[2:4] == "IN" else 1.0
            elif cmd.startswith("TA"):
                k, _, v = cmd[2:].partition(",")
                aperture_attrs[k] = v
            elif cmd.startswith("TO"):
                k, _, v = cmd[2:].partition(",")
                object_attrs[k] = v
            elif cmd.startswith("TD"):
                k = cmd[2:]
                if not k:
                    aperture_attrs.clear()
                    object_attrs.clear()
                else:
                    aperture_attrs.pop(k, None)
                    object_attrs.pop(k, None)
            elif cmd.startswith("AD"):
                am = re.match(r"ADD(\d+)", cmd)
                if am:
                    aperture_function[int(am.group(1))] = aperture_attrs.get(".AperFunction", "").split(",")[0]
            elif re.fullmatch(r"(G54)?D(\d+)", cmd) and int(re.fullmatch(r"(G54)?D(\d+)", cmd).group(2)) >= 10:
                current = int(re.fullmatch(r"(G54)?D(\d+)", cmd).group(2))
            elif cmd and cmd[0] in "XYG" and ("D03" in cmd or "D3" in cmd or "X" in cmd or "Y" in cmd):
                core = re.sub(r"^G0?[1-3]", "", cmd)
                cm = _XY_RE.match(core)
                if not cm:
                    continue
                if fmt is None:
                    raise InputError(name, line, "coordinates before the format statement", "%FS...*% first")
                if cm.group(1) is not None:
                    x = int(cm.group(1)) if not omit_trailing else int(cm.group(1).ljust(sum(fmt), "0"))
                if cm.group(2) is not None:
                    y = int(cm.group(2)) if not omit_trailing else int(cm.group(2).ljust(sum(fmt), "0"))
                if cm.group(3) in ("D03", "D3") and current is not None and aperture_function.get(current) == "ComponentMain":
                    ref = object_attrs.get(".C", "").strip()
                    if not ref:
                        raise InputError(name, line, "a ComponentMain flash without a .C attribute", "%TO.C,<reference>*%")
                    try:
                        rot = float(object_attrs.get(".CRot", "0") or 0)
                    except ValueError:
                        raise InputError(name, line, f"bad .CRot {object_attrs.get('.CRot')!r}", "degrees") from None
                    out.append(Component(
                        ref=ref, x_mm=x / 10 ** fmt[1] * scale, y_mm=y / 10 ** fmt[1] * scale, rotation_deg=rot,
                        side=side, value=object_attrs.get(".CVal") or None, footprint=object_attrs.get(".CFtp") or None,
                        source=SourceRef(name, line),
                    ))
    return out


# ----------------------------------------------------------------------------- pick and place

_REF_KEYS = ("ref", "designator", "refdes", "reference", "ref des", "part", "component")
_X_KEYS = ("posx", "pos x", "mid x", "midx", "center-x", "centerx", "center x", "ref x", "x", "locationx", "x (mm)")
_Y_KEYS = ("posy", "pos y", "mid y", "midy", "center-y", "centery", "center y", "ref y", "y", "locationy", "y (mm)")
_ROT_KEYS = ("rot", "rotation", "angle", "orientation")
_SIDE_KEYS = ("side", "layer", "tb", "mount side")
_VAL_KEYS = ("val", "value", "comment")
_FP_KEYS = ("package", "footprint", "pattern")


def _norm_key(key: str) -> str:
    k = key.strip().strip('"#').strip().lower()
    return re.sub(r"\s*\((mm|mil|mils|in|inch)\)\s*$", "", k)


def _unit_of_key(key: str) -> float | None:
    m = re.search(r"\((mm|mil|mils|in|inch)\)", key.lower())
    return {"mm": 1.0, "mil": 0.0254, "mils": 0.0254, "in": 25.4, "inch": 25.4}[m.group(1)] if m else None


def _length(raw: str, default_scale: float, name: str, line: int, what: str) -> float:
    v = raw.strip().strip('"').lower().replace(",", ".") if raw.count(",") == 1 and "." not in raw else raw.strip().strip('"').lower()
    m = re.fullmatch(r"([+-]?\d+(?:\.\d*)?|[+-]?\.\d+)\s*(mm|mil|mils|in|inch)?", v)
    if not m:
        raise InputError(name, line, f"bad {what} {raw.strip()!r}", f"{what} as a number (optionally with mm/mil/in)")
    scale = {"mm": 1.0, "mil": 0.0254, "mils": 0.0254, "in": 25.4, "inch": 25.4}.get(m.group(2) or "", default_scale)
    return float(m.group(1)) * scale


def _side(raw: str | None, default: Side) -> Side:
    if raw is None:
        return default
    v = raw.strip().strip('"').lower()
    if v in ("top", "t", "front", "f", "toplayer", "top layer", "f.cu"):
        return "top"
    if v in ("bottom", "b", "bot", "back", "bottomlayer", "bottom layer", "b.cu"):
        return "bottom"
    return default


def read_pick_and_place(data: bytes, name: str, *, default_side: Side = "top") -> list[Component]:
    """Read a pick-and-place file (KiCad .pos text or a CSV with a header row)."""
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError:
        text = data.decode("latin-1")
    if "\x00" in text:
        raise InputError(name, text[: text.index("\x00")].count("\n") + 1, "binary data in a placement file",
                         "text with a header row (Ref, PosX, PosY, Rot, Side)")
    scale = 1.0
    lines = text.split("\n")
    for ln in lines[:20]:
        um = re.search(r"unit\s*=\s*(mm|inches|inch|in|mils?)", ln, re.I)
        if um:
            scale = {"mm": 1.0, "inches": 25.4, "inch": 25.4, "in": 25.4, "mil": 0.0254, "mils": 0.0254}[um.group(1).lower()]
    # header row: the first non-"##" line naming a reference and coordinates
    header_idx = None
    for i, ln in enumerate(lines):
        s = ln.strip()
        if not s or s.startswith("##"):
            continue
        low = s.lower()
        if any(k in low for k in ("ref", "designator")) and ("x" in low):
            header_idx = i
            break
        if not s.startswith("#"):
            break
    if header_idx is None:
        raise InputError(name, 1, "no header row", "a header naming the columns (Ref, PosX, PosY, Rot, Side)")
    header_line = lines[header_idx].strip().lstrip("#").strip()
    delimiter = "," if header_line.count(",") >= 2 else (";" if header_line.count(";") >= 2 else ("\t" if "\t" in header_line else None))
    def split(s: str, line: int) -> list[str]:
        if delimiter is None:
            return s.split()
        try:
            return next(csv.reader(io.StringIO(s, newline=""), delimiter=delimiter), [])
        except csv.Error as exc:
            raise InputError(name, line, f"bad CSV row ({exc})", "one row per line, quotes balanced") from None
    keys = split(header_line, header_idx + 1)
    norm = [_norm_key(k) for k in keys]

    def col(options: tuple[str, ...]) -> int | None:
        for opt in options:
            if opt in norm:
                return norm.index(opt)
        return None

    ci = {k: col(v) for k, v in (("ref", _REF_KEYS), ("x", _X_KEYS), ("y", _Y_KEYS), ("rot", _ROT_KEYS),
                                   ("side", _SIDE_KEYS), ("val", _VAL_KEYS), ("fp", _FP_KEYS))}
    for need in ("ref", "x", "y"):
        if ci[need] is None:
            raise InputError(name, header_idx + 1, f"no {need} column in the header {header_line[:60]!r}",
                             "columns for the reference and the X and Y position")
    xscale = _unit_of_key(keys[ci["x"]]) or scale  # type: ignore[index]
    yscale = _unit_of_key(keys[ci["y"]]) or scale  # type: ignore[index]
    out: list[Component] = []
    for i in range(header_idx + 1, len(lines)):
        s = lines[i].strip()
        if not s or s.startswith("#"):
            continue
        cells = split(s, i + 1)
        if len(cells) < len(keys) - (1 if ci["side"] is None else 0) and len(cells) <= max(c for c in ci.values() if c is not None):
            raise InputError(name, i + 1, f"{len(cells)} columns, the header has {len(keys)}", f"{len(keys)} columns")
        def get(k: str) -> str | None:
            c = ci[k]
            return cells[c] if c is not None and c < len(cells) else None
        rot_raw = get("rot")
        try:
            rot = float(rot_raw.strip().strip('"')) if rot_raw not in (None, "") else 0.0  # type: ignore[union-attr]
        except ValueError:
            raise InputError(name, i + 1, f"bad rotation {rot_raw!r}", "degrees as a number") from None
        out.append(Component(
            ref=(get("ref") or "").strip().strip('"'),
            x_mm=_length(get("x") or "", xscale, name, i + 1, "X position"),
            y_mm=_length(get("y") or "", yscale, name, i + 1, "Y position"),
            rotation_deg=rot,
            side=_side(get("side"), default_side),
            value=(get("val") or "").strip().strip('"') or None,
            footprint=(get("fp") or "").strip().strip('"') or None,
            source=SourceRef(name, i + 1),
        ))
    return out
