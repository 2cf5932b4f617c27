"""Gerber job files (.gbrjob, JSON): board thickness, layer count, files' functions, stackup.

Fields read (Gerber Job Format, Ucamco, 2022; lengths in mm):

* ``Header.GenerationSoftware`` {Vendor, Application, Version};
* ``GeneralSpecs.BoardThickness``, ``GeneralSpecs.LayerNumber``;
* ``FilesAttributes`` [{Path, FileFunction, FilePolarity}];
* ``MaterialStackup`` [{Type, Name, Thickness, Material, DielectricConstant}], top to bottom.

Stackup entries without a thickness get a stated default: copper 0.035 mm (1 oz/ft2, the common
base copper), solder mask 0.015 mm (a typical liquid photoimageable mask, from memory); dielectrics
without one share what is left of ``BoardThickness`` equally. Every default is listed in
``JobFile.notes``. Legend and paste entries are not part of the board's body and are left out.
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from typing import Any

from sensorcheck.board.model import Stackup, StackupLayer
from sensorcheck.errors import InputError

DEFAULT_COPPER_MM = 0.035
DEFAULT_MASK_MM = 0.015


@dataclass(slots=True)
class JobFile:
    name: str
    generator: str | None = None
    board_thickness_mm: float | None = None
    layer_number: int | None = None
    #: base file name (as written in Path) -> FileFunction text
    files: dict[str, str] = field(default_factory=dict)
    stackup: Stackup | None = None
    notes: list[str] = field(default_factory=list)


def _number(value: Any, name: str, key: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise InputError(name, None, f"{key} is {value!r}", f"{key} as a number (mm)")
    if value < 0:
        raise InputError(name, None, f"{key} is negative ({value})", f"{key} >= 0")
    return float(value)


def read_jobfile(data: bytes, name: str) -> JobFile:
    """Read a Gerber job file. Raises InputError (with the JSON line where there is one)."""
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = data[: exc.start].count(b"\n") + 1
        raise InputError(name, line, "bytes that are not UTF-8 in a job file", "UTF-8 JSON text") from None
    if not text.strip():
        raise InputError(name, None, "the job file is empty", "a JSON object with Header, GeneralSpecs, ...")
    try:
        doc = json.loads(text)
    except json.JSONDecodeError as exc:
        raise InputError(name, exc.lineno, f"not valid JSON: {exc.msg}", "a Gerber job file (JSON)") from None
    except RecursionError:
        raise InputError(name, None, "JSON nested too deeply", "a Gerber job file (JSON)") from None
    except ValueError as exc:  # json lets int() refuse integers of more than 4300 digits
        raise InputError(name, None, f"a JSON value cannot be read: {exc}", "a Gerber job file (JSON)") from None
    if not isinstance(doc, dict):
        raise InputError(name, 1, "the job file is not a JSON object", "a JSON object with Header, GeneralSpecs, ...")
    job = JobFile(name=name)
    header = doc.get("Header")
    if isinstance(header, dict) and isinstance(header.get("GenerationSoftware"), dict):
        gs = header["GenerationSoftware"]
        parts = [str(gs.get(k)) for k in ("Vendor", "Application", "Version") if gs.get(k)]
        job.generator = " ".join(parts) or None
    specs = doc.get("GeneralSpecs")
    if specs is not None and not isinstance(specs, dict):
        raise InputError(name, None, "GeneralSpecs is not an object", "GeneralSpecs: {...}")
    if isinstance(specs, dict):
        if "BoardThickness" in specs:
            job.board_thickness_mm = _number(specs["BoardThickness"], name, "GeneralSpecs.BoardThickness")
        if "LayerNumber" in specs:
            n = specs["LayerNumber"]
            if isinstance(n, bool) or not isinstance(n, int) or n < 1:
                raise InputError(name, None, f"GeneralSpecs.LayerNumber is {n!r}", "a positive integer")
            job.layer_number = n
    files = doc.get("FilesAttributes", [])
    if not isinstance(files, list):
        raise InputError(name, None, "FilesAttributes is not a list", "FilesAttributes: [{Path, FileFunction}, ...]")
    for i, entry in enumerate(files):
        if not isinstance(entry, dict) or not isinstance(entry.get("Path"), str):
            raise InputError(name, None, f"FilesAttributes[{i}] has no Path", "{\"Path\": ..., \"FileFunction\": ...}")
        if isinstance(entry.get("FileFunction"), str):
            job.files[entry["Path"]] = entry["FileFunction"]
    stack = doc.get("MaterialStackup")
    if stack is not None:
        if not isinstance(stack, list):
            raise InputError(name, None, "MaterialStackup is not a list", "MaterialStackup: [{Type, Thickness, ...}]")
        job.stackup = _stackup(stack, job, name)
    return job


_KIND = {"copper": "copper", "dielectric": "dielectric", "soldermask": "mask", "coverlay": "dielectric",
         "prepreg": "dielectric", "core": "dielectric"}


def _stackup(entries: list[Any], job: JobFile, name: str) -> Stackup | None:
    rows: list[tuple[str, str, float | None, str | None, float | None]] = []
    for i, e in enumerate(entries):
        if not isinstance(e, dict):
            raise InputError(name, None, f"MaterialStackup[{i}] is not an object", "{\"Type\": ..., ...}")
        typ = str(e.get("Type", "")).lower()
        if typ in ("legend", "solderpaste", "paste"):
            continue
        kind = _KIND.get(typ, "other")
        thick = _number(e["Thickness"], name, f"MaterialStackup[{i}].Thickness") if "Thickness" in e else None
        eps = None
        if "DielectricConstant" in e:
            eps = _number(e["DielectricConstant"], name, f"MaterialStackup[{i}].DielectricConstant")
            if eps < 1:
                raise InputError(name, None, f"MaterialStackup[{i}].DielectricConstant is {eps}", "a value >= 1")
        material = e.get("Material") if isinstance(e.get("Material"), str) else None
        rows.append((str(e.get("Name") or f"{typ}{i}"), kind, thick, material, eps))
    if not rows:
        return None
    copper_rows = [r for r in rows if r[1] == "copper"]
    n_cu = len(copper_rows)
    layers: list[StackupLayer] = []
    known = 0.0
    missing_dielectrics = 0
    resolved: list[tuple[str, str, float | None, str | None, float | None]] = []
    for row in rows:
        nm, kind, thick, material, eps = row
        if thick is None and kind == "copper":
            thick = DEFAULT_COPPER_MM
            job.notes.append(f"{nm}: no thickness in the job file, {DEFAULT_COPPER_MM} mm copper assumed")
        elif thick is None and kind == "mask":
            thick = DEFAULT_MASK_MM
            job.notes.append(f"{nm}: no thickness in the job file, {DEFAULT_MASK_MM} mm solder mask assumed")
        if thick is None and kind == "dielectric":
            missing_dielectrics += 1
        elif thick is not None and kind != "mask":
            known += thick
        resolved.append((nm, kind, thick, material, eps))
    share = None
    if missing_dielectrics:
        if job.board_thickness_mm is None:
            raise InputError(name, None, "dielectric layers without Thickness and no GeneralSpecs.BoardThickness",
                             "a Thickness for each dielectric, or the board thickness")
        share = max(job.board_thickness_mm - known, 0.0) / missing_dielectrics
        job.notes.append(
            f"{missing_dielectrics} dielectric layer(s) without thickness: {share:.4f} mm each "
            f"(board thickness {job.board_thickness_mm} mm less the copper)"
        )
    cu_seen = 0
    for nm, kind, thick, material, eps in resolved:
        copper_layer = None
        if kind == "copper":
            cu_seen += 1
            copper_layer = ("top-copper" if cu_seen == 1 else "bottom-copper" if cu_seen == n_cu
                            else f"inner{cu_seen - 1}-copper")
        layers.append(StackupLayer(
            name=nm, kind=kind,  # type: ignore[arg-type]
            thickness_mm=thick if thick is not None else (share or 0.0),
            material=material, epsilon_r=eps, copper_layer=copper_layer,
        ))
    body = sum(layer.thickness_mm for layer in layers if layer.kind != "mask")
    thickness = job.board_thickness_mm if job.board_thickness_mm is not None else body
    if job.board_thickness_mm is not None and body > 0 and abs(body - job.board_thickness_mm) > 0.1 * job.board_thickness_mm:
        job.notes.append(f"stackup layers add up to {body:.3f} mm, the job file says {job.board_thickness_mm} mm")
    return Stackup(layers=layers, board_thickness_mm=thickness, source="jobfile")
