"""Helpers every report format shares: stable order, text for a place and a value, safe text.

Nothing here knows a format's syntax; each format module escapes for its own syntax after using
these. Everything is a pure function of a :class:`~sensorcheck.findings.Result` list.
"""

from __future__ import annotations

import math
import os
import unicodedata
from collections.abc import Callable, Iterable, Sequence
from pathlib import Path, PurePath
from typing import TYPE_CHECKING, Any, Literal
from urllib.parse import quote

from sensorcheck.findings import NOT_CHECKED, Finding, Location, Result, RuleInfo, SensorSummary, is_not_checked, sort_key

if TYPE_CHECKING:
    from sensorcheck.physics.estimate import SensorEstimate

FormatName = Literal["text", "json", "sarif", "junit", "codequality", "github", "markdown", "html", "gerber"]
FORMATS: tuple[FormatName, ...] = (
    "text",
    "json",
    "sarif",
    "junit",
    "codequality",
    "github",
    "markdown",
    "html",
    "gerber",
)
TOOL_NAME = "sensorcheck"


def project_url() -> str | None:
    """The project's own repository address from the installed package's metadata
    (``[project.urls]`` Repository, else Homepage, else Source), or None where none is given:
    a report never points to an address the project does not own."""
    from importlib import metadata

    try:
        entries = metadata.metadata(TOOL_NAME).get_all("Project-URL") or []
    except metadata.PackageNotFoundError:
        return None
    urls = {}
    for entry in entries:
        label, _, url = entry.partition(",")
        urls[label.strip().lower()] = url.strip()
    for label in ("repository", "homepage", "source"):
        if urls.get(label, "").startswith("https://"):
            return urls[label]
    return None

#: Unicode bidirectional controls: they reorder what a reader sees, so text from a board never keeps them.
_BIDI = frozenset("\u202a\u202b\u202c\u202d\u202e\u2066\u2067\u2068\u2069\u200e\u200f\u061c")


def ordered(findings: Iterable[Finding]) -> list[Finding]:
    """Findings in the report order (``finding.sort_key``, the fingerprint breaking any tie)."""
    return sorted(findings, key=lambda f: (*sort_key(f), f.fingerprint))


def board_labels(results: Sequence[Result]) -> list[str]:
    """One label per result, unique within the batch (a repeated board name gets ``#2``, ``#3``)."""
    seen: dict[str, int] = {}
    labels: list[str] = []
    for r in results:
        n = seen.get(r.board, 0) + 1
        seen[r.board] = n
        labels.append(r.board if n == 1 else f"{r.board}#{n}")
    return labels


def rule_catalogue(results: Sequence[Result]) -> dict[str, RuleInfo]:
    """Rules of every result by id (first description wins), sorted by id."""
    rules: dict[str, RuleInfo] = {}
    for r in results:
        for info in r.rules:
            rules.setdefault(info.id, info)
    return dict(sorted(rules.items()))


def family_of(rule_id: str, rules: dict[str, RuleInfo]) -> str:
    """The rule's family from the catalogue, else the part of its id before the first dot."""
    info = rules.get(rule_id)
    if info is not None and info.family:
        return info.family
    return rule_id.split(".", 1)[0] or rule_id


def sensors_sorted(result: Result) -> list[SensorSummary]:
    return sorted(result.sensors, key=lambda s: s.name)


def safe_text(text: object) -> str:
    """Text from a board or a user, made inert for any viewer: control and bidi characters shown.

    Control characters (C0, DEL, C1, line breaks included) and bidirectional overrides become
    visible escapes (``\\x1b``, ``\\n``, ``\\u202e``), so a net name can neither break a line-based
    format nor hide or colour other text. Format-specific escaping (XML, Markdown, workflow
    commands) is still done by each format on top of this.
    """
    s = str(text)
    out: list[str] = []
    for ch in s:
        if ch == "\n":
            out.append("\\n")
        elif ch == "\r":
            out.append("\\r")
        elif ch == "\t":
            out.append("\\t")
        elif ch in _BIDI or unicodedata.category(ch) in ("Cc", "Cs"):
            code = ord(ch)
            out.append(f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}")
        else:
            out.append(ch)
    return "".join(out)


def num(value: float | int | str | None) -> str:
    """A number as a report prints it: up to 4 significant digits, no exponent for usual sizes."""
    if value is None:
        return "-"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, str):
        return safe_text(value)
    v = float(value)
    if v != v or v in (float("inf"), float("-inf")):
        return str(v)
    if v == 0:
        return "0"
    if 1e-3 <= abs(v) < 1e6:
        text = f"{v:.4g}"
        if "e" in text:
            text = f"{v:.4f}".rstrip("0").rstrip(".")
        return text
    return f"{v:.3e}"


def xy_text(loc: Location) -> str | None:
    """``(34.2, 18.75) mm`` when the place is known, else None."""
    if loc.x_mm is None or loc.y_mm is None:
        return None
    return f"({loc.x_mm:.2f}, {loc.y_mm:.2f}) mm"


def place_of(loc: Location) -> tuple[float, float] | None:
    """Where a finding's marker goes (mm): its point, else the centre of its box, else nowhere
    (a point or box with a missing or non-finite number does not count)."""
    if loc.x_mm is not None and loc.y_mm is not None and math.isfinite(loc.x_mm) and math.isfinite(loc.y_mm):
        return (loc.x_mm, loc.y_mm)
    if loc.box_mm is not None and all(math.isfinite(v) for v in loc.box_mm):
        x0, y0, x1, y1 = loc.box_mm
        return ((x0 + x1) / 2, (y0 + y1) / 2)
    return None


def where_text(loc: Location) -> str:
    """``top-copper at (34.20, 18.75) mm``, the parts that are known; ``board`` when none is."""
    parts: list[str] = []
    if loc.layer:
        parts.append(safe_text(loc.layer))
    xy = xy_text(loc)
    if xy:
        parts.append(("at " if parts else "") + xy)
    return " ".join(parts) if parts else "board"


def value_text(f: Finding) -> str | None:
    """``measured 0.21 mm, limit 0.5 mm (min)`` when the finding has a value.

    The limit says whether it is a maximum (the value must stay at or below it) or a minimum.
    """
    if f.value is None and f.limit is None:
        return None
    unit = f" {safe_text(f.unit)}" if f.unit else ""
    parts = []
    if f.value is not None:
        parts.append(f"measured {sig(f.value)}{unit}")
    if f.limit is not None:
        kind = {"max": "max", "min": "min"}.get(f.direction or "", "limit")
        parts.append(f"limit {sig(f.limit)}{unit}" + ("" if kind == "limit" else f" ({kind})"))
    return ", ".join(parts)


def sig(value: float | int | None, digits: int = 3) -> str:
    """A number for people: ``digits`` significant digits, never an exponent for usual sizes."""
    if value is None:
        return "-"
    v = float(value)
    if v != v or v in (float("inf"), float("-inf")):
        return str(v)
    if v == 0:
        return "0"
    if abs(v) >= 10 ** digits:
        return f"{v:.0f}"
    text = f"{v:.{digits}g}"
    if "e" in text:
        text = f"{v:.6f}".rstrip("0").rstrip(".")
    return text


def finding_sensors(f: Finding) -> tuple[str, ...]:
    """Every sensor a finding is about (a grouped finding may cover several)."""
    if f.sensors:
        return f.sensors
    return (f.sensor,) if f.sensor else ()


def open_not_checked(f: Finding) -> bool:
    """A rule's unwaived "not checked: ..." note (the report folds these into one line)."""
    return is_not_checked(f) and not f.waived


def not_checked_summary(findings: Iterable[Finding]) -> tuple[list[str], list[str]] | None:
    """The "not checked" notes as (rule ids, distinct reasons), or None when there are none."""
    rules: list[str] = []
    reasons: dict[str, None] = {}
    for f in findings:
        if open_not_checked(f):
            rules.append(f.rule_id)
            for part in f.message[len(NOT_CHECKED):].split("; "):
                reasons.setdefault(part.strip(), None)
    if not rules:
        return None
    return sorted(set(rules)), list(reasons)


def full_message(f: Finding) -> str:
    """The finding's message with its place (and sensor) appended, as one safe line.

    Viewers that show only a message (code scanning, CI annotations) still tell where it is.
    """
    extra = [where_text(f.location)]
    sensors = finding_sensors(f)  # a grouped finding may cover several
    if sensors:
        extra.append(("sensor " if len(sensors) == 1 else "sensors ") + safe_text(", ".join(sensors)))
    return f"{safe_text(f.message)} [{'; '.join(extra)}]"


def artifact_path(file: str | None) -> str | None:
    """A source file as a forward-slash path, relative to the working folder when under it.

    CI systems (code scanning, code quality) resolve paths against the repository root, which
    is where a CI job runs; a path outside it stays absolute.
    """
    if not file:
        return None
    p = PurePath(file)
    if p.is_absolute():
        try:
            rel = os.path.relpath(file, os.getcwd())
        except ValueError:  # another drive on Windows
            return Path(file).as_posix()
        if not rel.startswith(".."):
            return PurePath(rel).as_posix()
        return Path(file).as_posix()
    text = p.as_posix()
    return text[2:] if text.startswith("./") else text


def artifact_uri(path: str) -> str:
    """A path as a URI reference (relative stays relative; absolute becomes ``file://``)."""
    p = PurePath(path)
    if p.is_absolute():
        return Path(path).as_uri()
    return quote(path, safe="/!$&'()*+,;=@-._~")


def is_archive(source: str) -> bool:
    return source.lower().endswith(".zip")


def source_file(file: str | None, result: Result) -> str | None:
    """A finding's file as a path from the working folder (the repository root in CI).

    Readers name files relative to the board's input (``Result.source``, a folder or a .zip), so
    the folder is put in front; a file inside a .zip is represented by the archive itself (a CI
    system can point only at files in the repository); an absolute path stays as it is.
    """
    if not file:
        return None
    p = PurePath(file)
    if p.is_absolute() or not result.source:
        return artifact_path(file)
    if is_archive(result.source):
        return artifact_path(result.source)
    src = PurePath(result.source)
    if not src.is_absolute() and p.parts[: len(src.parts)] == src.parts:
        return artifact_path(file)  # already named from the working folder
    return artifact_path(str(src / p))


def source_line(f: Finding, result: Result) -> int | None:
    """The 1-based line of the finding in :func:`source_file`'s file (None inside an archive)."""
    if f.location.line is None or f.location.line < 1 or is_archive(result.source):
        return None
    return f.location.line


def finding_path(f: Finding, result: Result) -> str:
    """The file a CI system should attach the finding to: its source file, else the board source."""
    return source_file(f.location.file, result) or artifact_path(result.source) or result.source or "."


#: How a report names a finding that is not about the design (``Finding.kind`` other than "finding").
KIND_LABEL: dict[str, str] = {"internal-error": "internal error", "input-error": "input error"}


def is_problem(f: Finding) -> bool:
    """True for a check that could not be made (a file not read, a rule that raised), not a finding."""
    return f.kind != "finding"


def kind_label(f: Finding) -> str:
    return KIND_LABEL.get(f.kind, f.kind.replace("-", " "))


def counts(findings: Iterable[Finding]) -> dict[str, int]:
    """Unwaived findings per severity, plus ``waived``, ``input`` (files not read) and ``internal``."""
    c = {"error": 0, "warning": 0, "note": 0, "waived": 0, "input": 0, "internal": 0}
    for f in findings:
        if f.waived:
            c["waived"] += 1
        elif f.kind == "input-error":
            c["input"] += 1
        elif is_problem(f):
            c["internal"] += 1
        else:
            c[f.severity] += 1
    return c


def plural(n: int, word: str) -> str:
    return f"{n} {word}" if n == 1 else f"{n} {word}s"


def summary_line(findings: Iterable[Finding]) -> str:
    """``2 errors, 1 warning, 0 notes, 0 waived`` (+ input and internal errors when there are any)."""
    c = counts(findings)
    parts = [plural(c["error"], "error"), plural(c["warning"], "warning"), plural(c["note"], "note")]
    parts.append(f"{c['waived']} waived")
    if c["input"]:
        parts.append(plural(c["input"], "input error"))
    if c["internal"]:
        parts.append(plural(c["internal"], "internal error"))
    return ", ".join(parts)


def rule_ids_run(result: Result) -> list[str]:
    """Rules that ran on this board: ``rules_run`` plus any rule a finding names, sorted."""
    ids = dict.fromkeys(result.rules_run)
    for f in result.findings:
        ids.setdefault(f.rule_id, None)
    return sorted(ids)


def first_paragraph(doc: str) -> str:
    """The first paragraph of a rule's docstring, on one line."""
    text = doc.strip()
    para = text.split("\n\n", 1)[0] if text else ""
    return " ".join(para.split())


def overlay_lines(overlay: dict[str, object] | None) -> list[str]:
    """The overlay stack as short lines: its scalar settings, then one line per layer (top down)."""
    if not overlay:
        return []
    scalars = [
        f"{safe_text(k)} = {num(v)}"  # type: ignore[arg-type]
        for k, v in sorted(overlay.items())
        if isinstance(v, (int, float, str)) and not isinstance(v, bool)
    ]
    lines = ["; ".join(scalars)] if scalars else []
    layers = overlay.get("layers")
    for layer in layers if isinstance(layers, (list, tuple)) else []:
        if not isinstance(layer, dict):
            lines.append(f"layer: {safe_text(layer)}")
            continue
        parts = [safe_text(layer.get("name") or layer.get("material") or "layer")]
        if isinstance(layer.get("thickness_mm"), (int, float)):
            parts.append(f"{num(layer['thickness_mm'])} mm")
        if isinstance(layer.get("epsilon_r"), (int, float)):
            parts.append(f"eps_r {num(layer['epsilon_r'])}")
        if layer.get("kind"):
            parts.append(safe_text(layer["kind"]))
        if layer.get("epsilon_source"):
            parts.append(f"(permittivity: {safe_text(layer['epsilon_source'])})")
        lines.append("layer: " + " ".join(parts))
    for k, v in sorted(overlay.items()):
        if k != "layers" and isinstance(v, (dict, list, tuple)):
            lines.append(f"{safe_text(k)}: {safe_text(v)}")
    return lines


def sensor_verdict(findings: Iterable[Finding]) -> str:
    """``FAIL``, ``REVIEW`` (warnings or notes only), ``PASS``; counts appended when there are any."""
    c = counts(findings)
    if c["error"] or c["internal"] or c["input"]:
        word = "FAIL"
    elif c["warning"] or c["note"]:
        word = "REVIEW"
    else:
        word = "PASS"
    parts = [plural(c[k], k) for k in ("error", "warning", "note") if c[k]]
    if c["input"]:
        parts.append(plural(c["input"], "input error"))
    if c["internal"]:
        parts.append(plural(c["internal"], "internal error"))
    if c["waived"]:
        parts.append(f"{c['waived']} waived")
    return f"{word} ({', '.join(parts)})" if parts else word


def estimate_notes_of(estimate: dict[str, object] | None) -> list[str]:
    """The notes an estimate carries (model limits, validity warnings), as strings."""
    notes = (estimate or {}).get("notes")
    if isinstance(notes, str):
        return [notes]
    if isinstance(notes, (list, tuple)):
        return [str(n) for n in notes]
    return []


def estimate_notes(sensor: SensorSummary) -> list[str]:
    return estimate_notes_of(sensor.estimate)


def estimate_scalars(estimate: dict[str, object] | None) -> list[tuple[str, str, str]]:
    """An estimate's scalar numbers for people: (label, value, unit), 3 significant digits, the
    touch delta in fF (the unit every output uses for it), the model and lists left out."""
    out: list[tuple[str, str, str]] = []
    for k, v in sorted((estimate or {}).items()):
        if k in ("model", "model_label") or isinstance(v, (bool, list, tuple, dict)) or v is None:
            continue
        if k == "touch_delta_pf" and isinstance(v, (int, float)):
            out.append(("touch delta", sig(1000.0 * float(v)), "fF"))
        elif isinstance(v, (int, float)):
            parts = k.split("_")
            unit = {"pf": "pF", "mm": "mm", "mm2": "mm2", "ff": "fF"}.get(parts[-1], "")
            label = " ".join(parts[:-1] if unit else parts)
            if k == "percent_change":
                label, unit = "change", "%"
            out.append((label, sig(v), unit))
        else:
            out.append((k.replace("_", " "), safe_text(v), ""))
    return out


def fold_notes(notes: dict[str, list[str]], total: int, every: bool = False) -> list[tuple[str, str]]:
    """Estimate notes for people: (who, text), each text once with the sensors it is about.

    ``notes``: note text -> sensor names.  Notes that differ only in their numbers (a coverage, a
    panel count) become one, saying so, unless ``every``; ``who`` is "all" when a note is about
    every one of ``total`` sensors.
    """
    import re

    number = re.compile(r"\d+(?:\.\d+)?")
    similar: dict[str, list[tuple[str, list[str]]]] = {}
    for text, names in notes.items():
        similar.setdefault(number.sub("#", text), []).append((text, names))
    out: list[tuple[str, str]] = []
    for masked, group in similar.items():
        items = group
        if not every and len(group) > 1:
            names = sorted({n for _, ns in group for n in ns})
            # each number that differs between the sensors is shown as its range
            columns = list(zip(*(number.findall(t) for t, _ in group), strict=True))
            parts = masked.split("#")
            text = parts[0]
            for values, rest in zip(columns, parts[1:], strict=True):
                nums = sorted({float(v) for v in values})
                pick = {float(v): v for v in values}
                text += pick[nums[0]] if len(nums) == 1 else f"{pick[nums[0]]}-{pick[nums[-1]]}"
                text += rest
            items = [(text, names)]
        for text, names in items:
            who = "all" if len(names) == total and total > 1 else ", ".join(safe_text(n) for n in names)
            out.append((who, safe_text(text)))
    return out


def turnarounds_json(e: SensorEstimate, r: Callable[..., float | None]) -> list[dict[str, Any]]:
    """Every turn and sign reversal of the approach curves, highest first: height, kind, curve."""
    return [{"height_mm": r(t.height_mm, 4), "kind": t.kind, "curve": t.curve} for t in e.turnarounds]


def scan_json(e: SensorEstimate, r: Callable[..., float | None]) -> dict[str, Any]:
    """A matrix's nodes and a slider's or wheel's segments and position response (only where estimated)."""
    out: dict[str, Any] = {}
    if e.nodes:
        out["nodes"] = [
            {"tx": n.tx, "rx": n.rx, "centre_mm": [r(n.centre_mm[0], 4), r(n.centre_mm[1], 4)], "cm_pf": r(n.cm_pf),
             "touch_delta_pf": r(n.touch_delta_pf), "percent_change": r(n.percent_change, 4)}
            for n in e.nodes
        ]
    if e.segments:
        out["segments"] = [
            {"net": g.net, "centre_mm": [r(g.centre_mm[0], 4), r(g.centre_mm[1], 4)], "position_mm": r(g.position_mm, 4),
             "parasitic_pf": r(g.parasitic_pf), "touch_delta_pf": r(g.touch_delta_pf),
             "crosstalk_pf": {k: r(v) for k, v in sorted(g.crosstalk_pf.items())}}
            for g in e.segments
        ]
    p = e.position
    if p is not None:
        out["position"] = {
            "travel_mm": r(p.travel_mm, 4), "cyclic": p.cyclic, "max_error_mm": r(p.max_error_mm, 4), "floor_pf": r(p.floor_pf),
            "dead_zones_mm": [[r(a, 4), r(b, 4)] for a, b in p.dead_zones_mm],
            "points": [[r(x, 4), r(c, 4), r(er, 4)] for x, c, er in p.points],
        }
    return out
