"""Identify each input file: which layer of the board it is and which reader reads it.

Order of evidence (the first that answers wins; each answer records how it was found):

1. ``override``: a file-name glob -> layer mapping given by the user (``--layer-map``, config
   ``[files]``);
2. ``x2``: Gerber X2 file attributes in the head of the file, in the extended form
   ``%TF.FileFunction,...*%``, the comment form ``G04 #@! TF.FileFunction,...*`` or, in
   Excellon files, ``; #@! TF.FileFunction,...`` (only the first 64 KiB are read);
3. ``jobfile``: the ``FilesAttributes`` list of a Gerber job file (.gbrjob) in the same input;
4. ``filename``: naming conventions of common EDA tools (KiCad, Eagle, Altium/Protel, OrCAD/
   Allegro, gEDA/pcb, DipTrace, EasyEDA, Proteus, ...);
5. ``content``: sniffing Gerber vs Excellon vs IPC-D-356 vs job JSON vs placement CSV.

Files that are not fabrication data (reports, rule exports, notes, GenCAD and other CAD files)
get ``role=None`` with a note: they are listed, never dropped, and never stop a run.

Layer names are ours (see :mod:`sensorcheck.board.model`). Copper layers get a provisional
name here; :mod:`sensorcheck.board.build` orders all copper layers and numbers inner layers.
"""

from __future__ import annotations

import fnmatch
import json
import re
from collections.abc import Mapping
from dataclasses import dataclass, replace
from typing import Literal

from sensorcheck import CONFIG_NAME
from sensorcheck.board.model import IdentifiedBy, LayerFunction, Side
from sensorcheck.errors import ConfigError

FileKind = Literal["gerber", "excellon", "ipc356", "gbrjob", "pnp"]

#: layer names a user may give in an override, besides our layer names
OVERRIDE_EXTRA: dict[str, tuple[LayerFunction | None, FileKind | None]] = {
    "drill": ("drill", "excellon"),
    "drill-plated": ("drill", "excellon"),
    "drill-nonplated": ("drill", "excellon"),
    "netlist": ("netlist", "ipc356"),
    "job": ("job", "gbrjob"),
    "placement": ("components", "pnp"),
    "ignore": (None, None),
}

_FIXED_LAYERS: dict[str, tuple[LayerFunction, Side]] = {
    "top-copper": ("copper", "top"),
    "bottom-copper": ("copper", "bottom"),
    "top-mask": ("mask", "top"),
    "bottom-mask": ("mask", "bottom"),
    "top-paste": ("paste", "top"),
    "bottom-paste": ("paste", "bottom"),
    "top-silk": ("silk", "top"),
    "bottom-silk": ("silk", "bottom"),
    "outline": ("outline", "none"),
    "top-components": ("components", "top"),
    "bottom-components": ("components", "bottom"),
}
_INNER_RE = re.compile(r"^inner(\d+)-copper$")


@dataclass(frozen=True, slots=True)
class Identification:
    """What a file is. ``role`` None: not understood (``note`` says why)."""

    name: str
    role: LayerFunction | None
    kind: FileKind | None = None
    layer: str | None = None
    side: Side | None = None
    identified_by: IdentifiedBy | None = None
    #: copper order hint: X2 L-number, or inner-layer number from the name (1 = first inner)
    copper_number: int | None = None
    #: True when copper_number is a position in the whole stack (X2/job L-number)
    copper_number_absolute: bool = False
    plated: bool | None = None
    file_function: str | None = None
    generator: str | None = None
    note: str | None = None
    #: a guess the board's content must confirm (a mechanical layer that may be the outline, a
    #: copper layer known only by a plane name): :mod:`sensorcheck.board.resolve` decides
    tentative: bool = False


# ----------------------------------------------------------------------------- X2 attributes

_TF_RE = re.compile(
    rb"(?:%TF|G04[ \t]*#@![ \t]*TF|;[ \t]*#@![ \t]*TF)\.([A-Za-z][A-Za-z0-9_.]*)((?:,[^*%\r\n]*)?)"
)


def head_file_attributes(head: bytes) -> dict[str, list[str]]:
    """X2 file attributes (``TF``) found in the head of a Gerber or Excellon file, either form."""
    out: dict[str, list[str]] = {}
    for m in _TF_RE.finditer(head):
        key = "." + m.group(1).decode("ascii", "replace")
        raw = m.group(2).decode("utf-8", "replace")
        values = [v.strip() for v in raw[1:].split(",")] if raw.startswith(",") else []
        out.setdefault(key, values)
    return out


def generator_from_attributes(attrs: Mapping[str, list[str]]) -> str | None:
    gen = attrs.get(".GenerationSoftware")
    if gen:
        return " ".join(v for v in gen if v)
    return None


_SIDE_X2: dict[str, Side] = {"top": "top", "bot": "bottom", "inr": "inner"}


def from_file_function(name: str, values: list[str], how: IdentifiedBy) -> Identification | None:
    """Map an X2 ``.FileFunction`` value (Gerber spec 2023.08 section 5.6.3) to our layers."""
    if not values:
        return None
    fn = values[0].strip().lower()
    text = ",".join(values)
    args = [v.strip() for v in values[1:]]

    def side_of(i: int) -> Side | None:
        return _SIDE_X2.get(args[i].lower()) if len(args) > i else None

    if fn == "copper":
        num = None
        if args and re.fullmatch(r"[Ll]\d+", args[0]):
            num = int(args[0][1:])
        side = side_of(1) or ("top" if num == 1 else None)
        if side is None:
            return Identification(name, None, "gerber", identified_by=how, file_function=text,
                                  note=f"X2 FileFunction {text}: copper layer without Top/Inr/Bot")
        inner = f"inner{num - 1}-copper" if num is not None and num > 1 else "inner-copper"
        layer = {"top": "top-copper", "bottom": "bottom-copper"}.get(side, inner)
        return Identification(name, "copper", "gerber", layer, side, how, num, num is not None,
                              file_function=text)
    if fn in ("soldermask", "legend", "paste"):
        side = side_of(0)
        if side not in ("top", "bottom"):
            return Identification(name, "other", "gerber", identified_by=how, file_function=text,
                                  note=f"X2 FileFunction {text}: no side")
        role: LayerFunction = {"soldermask": "mask", "legend": "silk", "paste": "paste"}[fn]  # type: ignore[assignment]
        return Identification(name, role, "gerber", f"{side}-{role}", side, how, file_function=text)
    if fn == "profile":
        return Identification(name, "outline", "gerber", "outline", "none", how, file_function=text)
    if fn in ("plated", "nonplated", "mixedplating"):
        plated = {"plated": True, "nonplated": False}.get(fn)
        return Identification(name, "drill", None, "drill", "both", how, plated=plated, file_function=text)
    if fn == "component":
        side = side_of(1)
        if side not in ("top", "bottom"):
            return Identification(name, "other", "gerber", identified_by=how, file_function=text,
                                  note=f"X2 FileFunction {text}: component layer without side")
        return Identification(name, "components", "gerber", f"{side}-components", side, how, file_function=text)
    # drawings, glue, other masks, v-cut, depth routing, "Other,User": Gerber, not used by checks
    return Identification(name, "other", "gerber", identified_by=how, file_function=text,
                          note=f"X2 FileFunction {text}: not used by the checks")


_PHYSICAL_ORDER_RE = re.compile(rb"^G04[ \t]*Layer_Physical_Order[ \t]*=[ \t]*(\d{1,2})[ \t]*\*", re.M)
_LAYER_NAME_RE = re.compile(rb"^G04[ \t]*Layer[ \t]*name[ \t]*:[ \t]*([A-Za-z0-9 _.\-]{1,40}?)[ \t]*\*", re.M | re.I)


def head_layer_hints(head: bytes) -> tuple[int | None, str | None]:
    """Layer hints some generators write as G04 comments: the copper layer's place in the stack
    (``G04 Layer_Physical_Order=2*``) and the layer's name (``G04 Layer name: Bottom *``)."""
    order = _PHYSICAL_ORDER_RE.search(head[:65536])
    named = _LAYER_NAME_RE.search(head[:65536])
    return (int(order.group(1)) if order and int(order.group(1)) > 0 else None,
            named.group(1).decode("ascii").strip() if named else None)


# ----------------------------------------------------------------------------- job file

def job_file_functions(data: bytes) -> dict[str, str]:
    """``FilesAttributes`` of a Gerber job file: lower-cased base file name -> FileFunction text.

    Unreadable job files give an empty mapping here; the job-file reader reports them.
    """
    try:
        doc = json.loads(data.decode("utf-8-sig"))
    except (UnicodeDecodeError, json.JSONDecodeError, RecursionError):
        return {}
    out: dict[str, str] = {}
    if isinstance(doc, dict):
        for entry in doc.get("FilesAttributes") or []:
            if isinstance(entry, dict) and isinstance(entry.get("Path"), str) and isinstance(
                entry.get("FileFunction"), str
            ):
                base = entry["Path"].replace("\\", "/").rsplit("/", 1)[-1].lower()
                out[base] = entry["FileFunction"]
    return out


# ----------------------------------------------------------------------------- content sniffing

ContentKind = Literal["gerber", "excellon", "ipc356", "gbrjob", "pnp", "gencad", "binary", "text", "empty"]


def sniff(head: bytes) -> ContentKind:
    """Guess a file's format from its first bytes."""
    if not head.strip():
        return "empty"
    if b"\x00" in head[:4096]:
        return "binary"
    sample = head[:65536]
    text = sample.decode("latin-1")
    nonprint = sum(1 for ch in text[:4096] if ord(ch) < 9 or 13 < ord(ch) < 32)
    if nonprint > 4:
        return "binary"
    stripped = text.lstrip("\ufeff \t\r\n")
    if stripped.startswith("{"):
        if '"FilesAttributes"' in text or '"GeneralSpecs"' in text or '"MaterialStackup"' in text:
            return "gbrjob"
    first_lines = [ln.strip() for ln in stripped.splitlines()[:400]]
    if first_lines and first_lines[0].upper().startswith("$HEADER") and "GENCAD" in text[:200].upper():
        return "gencad"
    if re.search(r"^(?:M48|M71|M72)\s*$", text, re.M) or re.search(r"^;\s*DRILL file", text, re.M | re.I):
        return "excellon"
    ipc = sum(1 for ln in first_lines if re.match(r"^(317|327|367|017|027|067|999|P  |C  )", ln + " "))
    if ipc >= max(2, len([ln for ln in first_lines if ln]) // 2) and any(
        ln.startswith(("317", "327", "367", "P  UNITS", "P  JOB")) for ln in first_lines
    ):
        return "ipc356"
    if re.search(r"%(?:FS|MO|AD|AM|TF|LP|IP)", text) or re.search(r"^G04[ #]", text, re.M):
        return "gerber"
    if re.search(r"^\s*#?\s*Ref\b.*\bPos\s*X\b", text, re.M | re.I) or re.search(
        r"^\"?(Ref|Designator|RefDes)\"?\s*[,;\t].*\b(Pos\s*X|Mid\s*X|X|Center-X\(mm\)|Ref X)\b", text, re.M | re.I
    ):
        return "pnp"
    # Excellon without header: tool selections and coordinates only
    data_lines = [ln for ln in first_lines if ln and not ln.startswith(";")]
    if data_lines:
        drill_like = sum(1 for ln in data_lines if re.fullmatch(r"(T\d+(C[\d.]+)?|[XY][-+]?[\d.]+([XY][-+]?[\d.]+)?|M30|M48|%|G90|G05)", ln))
        if drill_like >= max(3, int(0.9 * len(data_lines))):
            return "excellon"
    return "text"


_KIND_OF_CONTENT: dict[str, FileKind] = {
    "gerber": "gerber", "excellon": "excellon", "ipc356": "ipc356", "gbrjob": "gbrjob", "pnp": "pnp",
}


# ----------------------------------------------------------------------------- file names

_COMPOUND_WORDS = (
    "top", "bottom", "bot", "solder", "mask", "soldermask", "silk", "silkscreen", "screen", "paste",
    "cream", "layer", "copper", "board", "outline", "edge", "cuts", "internal", "plane", "inner",
    "drill", "drills", "plated", "legend", "overlay", "resist", "stop", "group", "stencil", "edges",
)


def _split_compound(token: str) -> list[str]:
    """``bottomsoldermask`` -> bottom, soldermask; ``tcream`` -> t, cream (OSH Park); else as is."""
    best: dict[int, list[str]] = {0: []}
    for i in range(len(token)):
        if i not in best:
            continue
        for w in _COMPOUND_WORDS + (("t", "b") if i == 0 else ()):
            j = i + len(w)
            if token.startswith(w, i) and (j not in best or len(best[j]) > len(best[i]) + 1):
                best[j] = best[i] + [w]
    parts = best.get(len(token))
    return parts if parts and len(parts) > 1 else [token]


def _tokens(stem: str) -> list[str]:
    """Split a file name stem into lower-case words: separators, camelCase, digit runs, compounds."""
    s = re.sub(r"([a-z])([A-Z])", r"\1 \2", stem)
    s = re.sub(r"([A-Za-z])(\d)", r"\1 \2", s)
    s = re.sub(r"(\d)([A-Za-z])", r"\1 \2", s)
    out: list[str] = []
    for t in re.split(r"[^A-Za-z0-9]+", s.lower()):
        if t:
            out.extend(_split_compound(t))
    return out


_GENERIC_EXT = {"gbr", "ger", "gbx", "pho", "art", "gb", "gdo", "grb", "gerber", "cmp_", "fph"}
_DRILL_EXT_STRONG = {"drl", "xln", "exc", "drd", "drill", "xnc", "ncd"}
_DRILL_EXT_WEAK = {"txt", "tap", "npt", "cnc", "nc", "tx1", "tx2", "tx3"}
_NOT_FAB_EXT: dict[str, str] = {
    "drr": "drill report", "ldp": "layer-pair report", "rul": "design-rule export",
    "extrep": "Gerber extension report", "apr": "aperture report", "apr_lib": "aperture macro library",
    "rep": "report", "rpt": "report", "log": "log", "pdf": "document", "png": "image", "jpg": "image",
    "jpeg": "image", "svg": "image", "md": "notes", "html": "document", "htm": "document",
    "cad": "GenCAD or other CAD data", "kicad_pcb": "CAD design file", "kicad_pro": "CAD project file",
    "brd": "CAD design file", "sch": "CAD schematic", "pcbdoc": "CAD design file", "zip": "nested archive",
    "7z": "nested archive", "rar": "nested archive", "gz": "compressed file", "tar": "nested archive",
    "gpi": "Gerber info report", "dri": "drill info report", "step": "3-D model", "stp": "3-D model",
    "wrl": "3-D model", "xlsx": "spreadsheet", "xls": "spreadsheet", "ods": "spreadsheet", "bom": "bill of materials",
    "odb": "ODB++ data", "tgz": "nested archive", "ipc2581": "IPC-2581 data", "cvg": "IPC-2581 data",
    "dxf": "drawing", "readme": "notes", "json": "data",
}

_EXT_LAYERS: dict[str, tuple[LayerFunction, Side, str | None]] = {
    # Altium/Protel (also EasyEDA, KiCad's "Protel extensions")
    "gtl": ("copper", "top", "top-copper"), "gbl": ("copper", "bottom", "bottom-copper"),
    "gts": ("mask", "top", "top-mask"), "gbs": ("mask", "bottom", "bottom-mask"),
    "gto": ("silk", "top", "top-silk"), "gbo": ("silk", "bottom", "bottom-silk"),
    "gtp": ("paste", "top", "top-paste"), "gbp": ("paste", "bottom", "bottom-paste"),
    "gko": ("outline", "none", "outline"), "gml": ("outline", "none", "outline"),
    "gm": ("outline", "none", "outline"),
    "gta": ("other", "top", None), "gba": ("other", "bottom", None),
    "gpt": ("other", "top", None), "gpb": ("other", "bottom", None),
    # Eagle (legacy CAM) and OrCAD/Allegro
    "cmp": ("copper", "top", "top-copper"), "sol": ("copper", "bottom", "bottom-copper"),
    "top": ("copper", "top", "top-copper"), "bot": ("copper", "bottom", "bottom-copper"),
    "stc": ("mask", "top", "top-mask"), "sts": ("mask", "bottom", "bottom-mask"),
    "tsm": ("mask", "top", "top-mask"), "bsm": ("mask", "bottom", "bottom-mask"),
    "smt": ("mask", "top", "top-mask"), "smb": ("mask", "bottom", "bottom-mask"),
    "plc": ("silk", "top", "top-silk"), "pls": ("silk", "bottom", "bottom-silk"),
    "tsk": ("silk", "top", "top-silk"), "bsk": ("silk", "bottom", "bottom-silk"),
    "sst": ("silk", "top", "top-silk"), "ssb": ("silk", "bottom", "bottom-silk"),
    "crc": ("paste", "top", "top-paste"), "crs": ("paste", "bottom", "bottom-paste"),
    "tsp": ("paste", "top", "top-paste"), "bsp": ("paste", "bottom", "bottom-paste"),
    "spt": ("paste", "top", "top-paste"), "spb": ("paste", "bottom", "bottom-paste"),
    "dim": ("outline", "none", "outline"), "mil": ("outline", "none", "outline"),
    "fab": ("outline", "none", "outline"),  # OrCAD: fabrication/outline layer
}

_OTHER_WORDS = {"fab", "courtyard", "crtyd", "adhesive", "glue", "margin", "user", "eco", "dwgs", "cmts",
                "drawing", "drawings", "assembly", "assy", "map", "comments", "comment", "vscore", "keepout",
                "documentation", "notes", "info", "report", "mechanical", "mech", "dimensions"}
_PASTE_WORDS = {"paste", "cream", "stencil", "smd"}
_MASK_WORDS = {"mask", "soldermask", "stopmask", "resist", "stop", "sm"}
_SILK_WORDS = {"silk", "silks", "silkscreen", "legend", "overlay", "ss", "plc"}
_OUTLINE_WORDS = {"outline", "edge", "edges", "cuts", "profile", "boardoutline", "contour", "shape", "milling", "dimension", "border"}
_OUTLINE_STRONG = {"outline", "edge", "edges", "cuts", "profile", "boardoutline"}
_DRILL_WORDS = {"drill", "drills", "drl", "pth", "npth", "plated", "unplated", "through", "holes", "nc"}
_COPPER_WORDS = {"cu", "copper", "signal", "toplayer", "bottomlayer", "internalplane", "plane", "layer", "route"}
_TOP_WORDS = {"top", "front", "f", "cmp", "component", "t"}
_BOTTOM_WORDS = {"bottom", "bot", "back", "b", "sol"}
_INNER_WORDS = {"in", "inner", "inr", "internal", "internalplane", "mid", "midlayer", "ly", "plane", "group"}
#: words that number a layer from the top of the stack (L1 = top): "_L02", "Layer2", "lyr3", "art002"
_ABSOLUTE_NUMBER_WORDS = {"l", "layer", "lyr", "lay", "art", "lr"}
#: names of plane and signal layers (Allegro/OrCAD artwork, PADS, hand-named exports): inner copper
#: when nothing names a side ("GND2.art", "PWR.art", "VCC.gbr", "SIG3.art")
_PLANE_WORDS = {"gnd", "ground", "pwr", "power", "vcc", "vdd", "vss", "plane", "planes", "sig", "signal", "mid",
                "midlayer", "internal", "internalplane", "inner", "inr"}


_FUNCTION_WORDS = _PASTE_WORDS | _MASK_WORDS | _SILK_WORDS | _COPPER_WORDS | {"solder", "screen", "cream"}
_TOP_STRONG = {"top", "front", "cmp", "component", "toplayer"}
_BOTTOM_STRONG = {"bottom", "bot", "back", "sol", "bottomlayer"}


def _side_of(token: str) -> Side | None:
    if token in _TOP_WORDS or token == "toplayer":
        return "top"
    if token in _BOTTOM_WORDS or token == "bottomlayer":
        return "bottom"
    return None


def _side_from_tokens(tokens: list[str]) -> tuple[Side | None, int | None]:
    """Side (and inner-layer number) from the words of a name.

    A side word right next to a function word wins ("F_Cu", "MaskTop", "tcream"); then a whole
    side word anywhere ("board.top.gbr"); single letters elsewhere in a project name do not count.
    """
    for i, t in enumerate(tokens):
        nxt = tokens[i + 1] if i + 1 < len(tokens) else ""
        if t in _INNER_WORDS and nxt.isdigit():
            return "inner", int(nxt)
        if t in _INNER_WORDS and nxt == "layer" and i + 2 < len(tokens) and tokens[i + 2].isdigit():
            return "inner", int(tokens[i + 2])  # Altium "MidLayer1", "InternalLayer2"
    for i, t in enumerate(tokens):
        if t in _FUNCTION_WORDS:
            near = [tokens[j] for j in (i - 1, i + 1) if 0 <= j < len(tokens) and _side_of(tokens[j])]
            if near:  # a whole word ("PasteTop") beats a letter that may be a project name ("b.PasteTop")
                return _side_of(max(near, key=lambda w: len(w) > 1)), None
    for t in reversed(tokens):
        if t in _TOP_STRONG:
            return "top", None
        if t in _BOTTOM_STRONG:
            return "bottom", None
    return None, None


def _absolute_number(tokens: list[str]) -> int | None:
    """A layer's place in the stack written in its name: "_L02", "Layer2", "lyr3", "l2_gnd", "art002"."""
    for i, t in enumerate(tokens[:-1]):
        nxt = tokens[i + 1]
        if t in _ABSOLUTE_NUMBER_WORDS and nxt.isdigit() and 0 < int(nxt) <= 99:
            return int(nxt)
    return None


def identify_name(name: str) -> Identification:
    """Identify a file by its name alone (conventions of common EDA tools).

    Drill-file names with generic extensions (``.txt``, ``.nc`` ...) are only a hint: the caller
    confirms them by content. Returns ``role=None`` when the name says nothing.
    """
    base = name.replace("\\", "/").rsplit("/", 1)[-1]
    if base.lower() == CONFIG_NAME:  # our own config (the check's or one `init` wrote): known, not fab data
        return Identification(name, "other", None, None, "none", "filename",
                              note="sensorcheck's board config: read as the config, not as a fabrication file")
    stem, dot, ext = base.rpartition(".")
    if not dot:
        stem, ext = base, ""
    ext_l = ext.lower()
    if _word_extension(ext_l):  # ".PasteTop", ".StopBot", ".Outline": the extension's words count as the name's
        stem, ext_l = f"{stem}.{ext}", ""
    if ext_l in ("gbrjob",):
        return Identification(name, "job", "gbrjob", None, "none", "filename")
    if ext_l in ("ipc", "d356", "356", "ipc356", "ipcd356"):
        return Identification(name, "netlist", "ipc356", None, "none", "filename")
    if ext_l == "pos":
        side: Side = "both"
        toks = _tokens(stem)
        if "top" in toks or "front" in toks:
            side = "top"
        elif "bottom" in toks or "back" in toks:
            side = "bottom"
        return Identification(name, "components", "pnp", None, side, "filename")
    toks = _tokens(stem)
    if ext_l in _NOT_FAB_EXT:
        return Identification(name, None, None, identified_by="filename",
                              note=f"not fabrication data ({_NOT_FAB_EXT[ext_l]})")
    if ext_l == "csv":
        if set(toks) & {"pos", "pnp", "centroid", "placement", "pick", "place", "xy", "cpl", "positions"}:
            return Identification(name, "components", "pnp", None, "both", "filename")
        return Identification(name, None, None, identified_by="filename", note="CSV file (not a placement file by its name)")

    def layer_ident(role: LayerFunction, side: Side | None, number: int | None = None) -> Identification:
        if role in ("mask", "silk", "paste"):
            if side in ("top", "bottom"):
                return Identification(name, role, "gerber", f"{side}-{role}", side, "filename")
            return Identification(name, None, "gerber", identified_by="filename",
                                  note=f"{role} layer, but the name gives no side (use a layer map)")
        if role == "copper":
            if side == "inner" or number is not None:
                layer = f"inner{number}-copper" if number else "inner-copper"
                return Identification(name, "copper", "gerber", layer, "inner", "filename", number)
            if side in ("top", "bottom"):
                return Identification(name, "copper", "gerber", f"{side}-copper", side, "filename")
            return Identification(name, None, "gerber", identified_by="filename",
                                  note="copper layer, but the name gives no side (use a layer map)")
        if role == "outline":
            return Identification(name, "outline", "gerber", "outline", "none", "filename")
        return Identification(name, "other", "gerber", None, side, "filename", note="drawing or documentation layer: not used by the checks")

    side, number = _side_from_tokens(toks)
    tokset = set(toks)
    if ext_l in _DRILL_EXT_STRONG:
        plated = _plated_from_tokens(toks)
        return Identification(name, "drill", "excellon", "drill", "both", "filename", plated=plated)
    if ext_l in _DRILL_EXT_WEAK and tokset & {"bom", "readme", "notes", "info", "report", "readme", "parts"}:
        return Identification(name, None, None, identified_by="filename",
                              note="not fabrication data (a text document by its name)")
    if ext_l in _DRILL_EXT_WEAK:
        plated = _plated_from_tokens(toks)
        return Identification(name, "drill", "excellon", "drill", "both", "filename", plated=plated,
                              note="drill file by name only; confirmed by content")
    # drill maps and drawings: "PTH-drl_map.gbr" is a drawing, not a drill file
    if tokset & _OTHER_WORDS and not (tokset & {"copper", "cu"}):
        return layer_ident("other", side)
    if tokset & _PASTE_WORDS:
        return layer_ident("paste", side)
    if tokset & _MASK_WORDS or (("solder" in tokset) and not (tokset & _COPPER_WORDS)):
        return layer_ident("mask", side)
    if tokset & _SILK_WORDS or ("silk" in "".join(toks)):
        return layer_ident("silk", side)
    if tokset & _OUTLINE_WORDS or {"board", "outline"} <= tokset:
        if tokset & _OUTLINE_STRONG:
            return layer_ident("outline", "none")
        # "contour", "shape", "dimension", "border", "milling": an outline only if it encloses the copper
        return replace(layer_ident("outline", "none"), tentative=True,
                       note="outline by a weak name: the outline only if it encloses the copper")
    if tokset & _DRILL_WORDS and ext_l in _GENERIC_EXT | {""}:
        # a Gerber-extension file named "drill": a drawing; the content decides
        return Identification(name, "drill", "excellon", "drill", "both", "filename",
                              plated=_plated_from_tokens(toks), note="drill file by name only; confirmed by content")
    if side == "inner" and number is not None and (tokset & (_COPPER_WORDS | _INNER_WORDS)):
        return layer_ident("copper", "inner", number)  # KiCad "In2.Cu.g3": the words beat ".g3"
    absolute = _absolute_number(toks)
    m_abs = re.fullmatch(r"(?:lyr|l)(\d+)", ext_l)
    if m_abs and 0 < int(m_abs.group(1)) <= 99:
        absolute = int(m_abs.group(1))
    if side in ("top", "bottom"):
        absolute = None  # "LM317_L12-B_Cu": the side word wins over a number that may be the project's
    if absolute is not None and ext_l not in _EXT_LAYERS and not re.fullmatch(r"g[a-z]*\d+", ext_l):
        # "_L02", "Layer2.pho", "copper_inner_l2", "l2_gnd.art", ".lyr3": the place in the stack
        if absolute == 1:
            return Identification(name, "copper", "gerber", "top-copper", "top", "filename", 1, True)
        return Identification(name, "copper", "gerber", f"inner{absolute - 1}-copper", "inner", "filename",
                              absolute, True, note="inner copper by the layer number in its name")
    # extension tables (Altium/Protel, Eagle, OrCAD)
    m = re.fullmatch(r"g(\d+)", ext_l) or re.fullmatch(r"gp(\d+)", ext_l) or re.fullmatch(r"ly(\d+)", ext_l) or re.fullmatch(r"in(\d+)", ext_l)
    if ext_l in _EXT_LAYERS:
        role, eside, _layer = _EXT_LAYERS[ext_l]
        ident = layer_ident(role, eside)
        if ext_l == "fab":  # OrCAD's fabrication layer: the outline on some boards, a drawing on others
            return replace(ident, tentative=True, note="fabrication layer: the outline only if it encloses the copper")
        return ident
    if re.fullmatch(r"gm\d+", ext_l):
        # Altium mechanical layers: one of them is usually the board outline, the others dimensions,
        # assembly notes, keep-outs: the content decides which (board/resolve.py)
        return replace(layer_ident("outline", "none"), tentative=True,
                       note="mechanical layer: the outline only if it encloses the copper")
    if re.fullmatch(r"g[dg]\d+", ext_l):
        return layer_ident("other", None)
    if m and int(m.group(1)) > 0:
        n = int(m.group(1))
        if ext_l.startswith("ly"):
            n -= 1  # Eagle: layer 2 is the first inner layer
        return layer_ident("copper", "inner", n)
    # words of the name (DipTrace "Top.gbr", gEDA "board.top.gbr", Eagle "copper_top.gbr",
    # Proteus "CADCAM Top Copper.GBR", OSH Park "toplayer.ger")
    if side == "inner" and (tokset & (_COPPER_WORDS | _INNER_WORDS)):
        return layer_ident("copper", "inner", number)
    if side is None and tokset & _PLANE_WORDS:
        # "GND2.art", "PWR.art", "MidLayer1.gbr": a plane or signal layer between the outer ones
        digits = [int(t) for t in toks if t.isdigit() and 0 < int(t) <= 99]
        return replace(layer_ident("copper", "inner", None), copper_number=digits[0] if digits else None,
                       tentative=True, note="inner copper by a plane or signal name; its place in the stack is a guess")
    if tokset & _COPPER_WORDS:
        return layer_ident("copper", side)
    if side in ("top", "bottom") and ext_l in _GENERIC_EXT and toks and toks[-1] in ("top", "bottom", "bot"):
        return layer_ident("copper", side)
    if side in ("top", "bottom") and len(tokset & (_TOP_WORDS | _BOTTOM_WORDS)) == len(tokset - {"board"}):
        return layer_ident("copper", side)
    return Identification(name, None, None, note="the file name follows no convention we know")


def _word_extension(ext_l: str) -> bool:
    """An extension made of words (``PasteTop``, ``Outline``), not one of the conventions' codes."""
    if len(ext_l) < 4 or not ext_l.isalpha() or ext_l in _NOT_FAB_EXT or ext_l in _EXT_LAYERS:
        return False
    if ext_l in _GENERIC_EXT or ext_l in _DRILL_EXT_STRONG or ext_l in _DRILL_EXT_WEAK or ext_l in (
            "gbrjob", "ipc356", "ipcd356"):
        return False
    known = (_FUNCTION_WORDS | _OUTLINE_WORDS | _TOP_STRONG | _BOTTOM_STRONG | _DRILL_WORDS | _INNER_WORDS
             | _PASTE_WORDS | _MASK_WORDS | _SILK_WORDS)
    return ext_l in known or any(w in known for w in _split_compound(ext_l) if len(w) > 1)


def _plated_from_tokens(toks: list[str]) -> bool | None:
    if "npth" in toks or "unplated" in toks or "nonplated" in toks or ("non" in toks and "plated" in toks) or "npt" in toks:
        return False
    if "pth" in toks or "plated" in toks:
        return True
    return None


# ----------------------------------------------------------------------------- overrides

def parse_layer_map(items: list[str], *, source: str = "--layer-map") -> dict[str, str]:
    """``["*.gtl=top-copper", ...]`` -> {glob: layer}; a bad item is a ConfigError."""
    out: dict[str, str] = {}
    for item in items:
        glob, eq, layer = item.partition("=")
        if not eq or not glob.strip() or not layer.strip():
            raise ConfigError(source, item, "expected GLOB=LAYER (e.g. '*.gtl=top-copper')")
        out[glob.strip()] = layer.strip()
    check_layer_map(out, source=source)
    return out


def check_layer_map(mapping: Mapping[str, str], *, source: str = "[files]") -> None:
    for glob, layer in mapping.items():
        if layer not in _FIXED_LAYERS and layer not in OVERRIDE_EXTRA and not _INNER_RE.match(layer):
            known = ", ".join(sorted([*_FIXED_LAYERS, "innerN-copper", *OVERRIDE_EXTRA]))
            raise ConfigError(source, glob, f"unknown layer {layer!r}; expected one of: {known}")


def from_override(name: str, layer: str) -> Identification:
    if layer in _FIXED_LAYERS:
        role, side = _FIXED_LAYERS[layer]
        return Identification(name, role, "gerber", layer, side, "override")
    m = _INNER_RE.match(layer)
    if m:
        n = int(m.group(1))
        return Identification(name, "copper", "gerber", layer, "inner", "override", n + 1, True)
    role2, kind = OVERRIDE_EXTRA[layer]
    if role2 is None:
        return Identification(name, None, None, identified_by="override", note="ignored by the layer map")
    plated = {"drill-plated": True, "drill-nonplated": False}.get(layer)
    return Identification(name, role2, kind, "drill" if role2 == "drill" else None,
                          "both" if role2 in ("drill", "components") else "none", "override", plated=plated)


def match_override(name: str, layer_map: Mapping[str, str] | None) -> str | None:
    if not layer_map:
        return None
    base = name.rsplit("/", 1)[-1].lower()
    for glob, layer in layer_map.items():
        g = glob.lower()
        if fnmatch.fnmatchcase(base, g) or fnmatch.fnmatchcase(name.lower(), g):
            return layer
    return None


# ----------------------------------------------------------------------------- all together

def identify(
    name: str,
    head: bytes,
    *,
    layer_map: Mapping[str, str] | None = None,
    job_functions: Mapping[str, str] | None = None,
) -> Identification:
    """Identify one file from its name and the head of its content (evidence order above)."""
    content = sniff(head)
    # a file that names itself Gerber/Excellon by X2 is read as such even when its bytes are garbage:
    # the reader then says what is wrong, with the line (never "not understood" in silence)
    attrs = head_file_attributes(head) if content not in ("gbrjob", "ipc356", "pnp", "gencad") else {}
    generator = generator_from_attributes(attrs)

    def with_kind(ident: Identification) -> Identification:
        kind = ident.kind
        if ident.role == "drill":
            # a drill file is Excellon unless its content is Gerber (X2 drill files in Gerber)
            kind = "gerber" if content == "gerber" else "excellon"
        return replace(ident, kind=kind, generator=ident.generator or generator)

    over = match_override(name, layer_map)
    if over is not None:
        return with_kind(from_override(name, over))

    ff = attrs.get(".FileFunction")
    if ff:
        ident = from_file_function(name, ff, "x2")
        if ident is not None:
            return with_kind(ident)

    if job_functions:
        base = name.rsplit("/", 1)[-1].lower()
        if base in job_functions:
            ident = from_file_function(name, job_functions[base].split(","), "jobfile")
            if ident is not None:
                return with_kind(ident)

    if content == "gencad":
        return Identification(name, None, None, identified_by="content",
                              note="GenCAD file: CAD data, not read (net names come from X2 or IPC-D-356)")
    by_name = identify_name(name)
    if content == "gerber":
        by_name = _with_head_hints(name, by_name, head)
    proven = content in ("excellon", "ipc356", "gbrjob", "pnp")
    if by_name.role == "drill":
        if content == "gerber":
            return replace(by_name, kind="gerber", role="other", layer=None, side=None, plated=None,
                           generator=generator, note="drill drawing or map (Gerber content): not used by the checks")
        if by_name.note and content != "excellon":  # weak extension (.txt ...): the content must agree
            return _by_content(name, content, generator, by_name)
        return replace(by_name, kind="excellon", note=None, generator=generator)
    if by_name.role == "job" and content == "gerber":
        # the job file's early form in Gerber syntax (%TJ attributes, before the JSON job format):
        # no reader for it, so not understood rather than a broken JSON job file
        return Identification(name, None, None, identified_by="content", generator=generator,
                              note="Gerber job file in the early Gerber syntax (%TJ attributes): not read "
                                   "(the JSON job file is)")
    if by_name.role in ("job", "netlist", "components"):
        return by_name
    if by_name.kind == "gerber":  # a Gerber layer by name (or a Gerber name without a side)
        if proven:
            return _by_content(name, content, generator, by_name)
        return replace(by_name, generator=generator)
    if by_name.identified_by == "filename" and not proven:  # a known non-fabrication extension
        return by_name
    return _by_content(name, content, generator, by_name)


def _with_head_hints(name: str, by_name: Identification, head: bytes) -> Identification:
    """Refine a name's answer with the layer hints of the file's G04 comments."""
    order, layer_name = head_layer_hints(head)
    if by_name.role is None and by_name.kind is None and layer_name:
        hinted = identify_name(f"{layer_name}.gbr")
        if hinted.role is not None:
            return replace(hinted, name=name, identified_by="content",
                           note=f"layer named {layer_name!r} in a G04 comment")
    if by_name.role == "copper" and order is not None and by_name.side != "top" and not by_name.copper_number_absolute:
        if by_name.side == "bottom":
            return replace(by_name, copper_number=order, copper_number_absolute=True)
        return replace(by_name, layer=f"inner{order - 1}-copper", copper_number=order, copper_number_absolute=True,
                       tentative=False)
    return by_name


def _by_content(name: str, content: ContentKind, generator: str | None, by_name: Identification) -> Identification:
    if content == "excellon":
        return Identification(name, "drill", "excellon", "drill", "both", "content", generator=generator,
                              plated=by_name.plated)
    if content == "ipc356":
        return Identification(name, "netlist", "ipc356", None, "none", "content")
    if content == "gbrjob":
        return Identification(name, "job", "gbrjob", None, "none", "content")
    if content == "pnp":
        return Identification(name, "components", "pnp", None, "both", "content")
    if content == "gerber":
        return Identification(name, None, "gerber", identified_by="content", generator=generator,
                              note="Gerber file, but nothing tells which layer it is (add a layer map: GLOB=LAYER)")
    reason = {
        "binary": "binary data",
        "empty": "empty file",
        "text": "text that is no fabrication format we read",
        "gencad": "GenCAD file: CAD data, not read",
    }.get(content, "unknown content")
    note = by_name.note if by_name.note and by_name.role is None and by_name.identified_by == "filename" else reason
    if by_name.note and by_name.role is None and by_name.identified_by == "filename" and note != reason:
        note = f"{note}; {reason}"
    return Identification(name, None, None, identified_by="content", note=note)
