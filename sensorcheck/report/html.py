"""The review page: one self-contained HTML file for people who review a layout.

``render(results)`` returns the whole page as a string. It works offline: the CSS and the
script are our own (``report/assets``), inlined at render time, and a Content-Security-Policy
with their hashes forbids anything else (no network, no other script). Per board it shows:

* a header with the board, its source, the config file, the tool version and the cautions;
* the board drawn from its own copper as inline SVG (the simplified :class:`Drawing`), one
  switchable group per copper layer plus zones, sensors, outline, drill and findings; pan and
  zoom with mouse and keyboard; a click on the board lists what is there;
* the findings list (severity, rule, message, measured value and limit, place, waiver); a click
  on one zooms to it on the board and highlights its marker;
* per sensor a table of its numbers, the field-solver estimates with their model, the approach
  curve as an SVG figure and the reviewer checklist;
* waivers with reasons and expiry, notes, files and the rules that ran.

Every text from a board or a config is escaped for its place: HTML text and attributes with
``html.escape``, the JSON the script reads with ``<``, ``>`` and ``&`` as ``\\u`` escapes (so no
``</script>`` or ``<!--`` can end the block). Output is deterministic: the same results give the
same bytes (no time unless ``Result.timestamp`` says one).
"""

from __future__ import annotations

import base64
import hashlib
import html
import json
import math
from collections.abc import Iterable, Sequence
from importlib import resources
from typing import Any

from sensorcheck.report.common import (
    board_labels,
    finding_sensors,
    counts,
    num,
    ordered,
    place_of,
    plural,
    rule_catalogue,
    safe_text,
    sensors_sorted,
    value_text,
    where_text,
)
from sensorcheck.findings import Drawing, Finding, Result, RuleInfo, SensorSummary

#: copper layer colour classes, by position in the stack (top first); the palette is in review.css
_COPPER_CLASSES = ("cu-top", "cu-in1", "cu-in2", "cu-in3", "cu-in4", "cu-in5", "cu-in6")
#: unit suffixes of value names -> the unit a reader sees
_UNIT_SUFFIXES: tuple[tuple[str, str], ...] = (
    ("_mm2", "mm²"),
    ("_mm", "mm"),
    ("_um", "µm"),
    ("_pf", "pF"),
    ("_ff", "fF"),
    ("_percent", "%"),
    ("_pct", "%"),
    ("_kv", "kV"),
    ("_deg", "°"),
    ("_ohm", "Ω"),
    ("_mhz", "MHz"),
    ("_khz", "kHz"),
)
_NO_DRAWING = (
    '<p class="no-drawing">The board\'s copper is not drawn: this result carries no drawing. '
    "Sensors and findings are placed on an empty field.</p>"
)
_ESTIMATE_SCALARS = (
    "kind",
    "baseline_pf",
    "touch_delta_pf",
    "percent_change",
    "turning_point_mm",
    "parasitic_pf",
    "best_point_mm",
    "panels",
)


# ---------------------------------------------------------------- escaping and small formatters


def esc(text: object) -> str:
    """Text from anywhere, inert for HTML text and quoted attributes (control characters shown)."""
    return html.escape(safe_text(text), quote=True)


def json_for_script(data: Any) -> str:
    """JSON safe inside a ``<script type="application/json">`` block.

    ``<``, ``>`` and ``&`` become ``\\u003c`` ``\\u003e`` ``\\u0026`` so ``</script>`` and ``<!--``
    cannot appear; U+2028/2029 are escaped too. Non-finite numbers become null (JSON has none).
    """
    text = json.dumps(_finite(data), ensure_ascii=False, sort_keys=True, separators=(",", ":"), allow_nan=False)
    return (
        text.replace("<", "\\u003c")
        .replace(">", "\\u003e")
        .replace("&", "\\u0026")
        .replace("\u2028", "\\u2028")
        .replace("\u2029", "\\u2029")
    )


def _finite(data: Any) -> Any:
    if isinstance(data, float):
        return data if math.isfinite(data) else None
    if isinstance(data, dict):
        return {str(k): _finite(v) for k, v in data.items()}
    if isinstance(data, list | tuple):
        return [_finite(v) for v in data]
    return data


def _c(v: float) -> str:
    """A coordinate for SVG attributes: up to 4 decimals, no trailing zeros, no ``-0``."""
    text = f"{v:.4f}".rstrip("0").rstrip(".")
    return "0" if text in ("-0", "") else text


def _unit_of(key: str) -> tuple[str, str]:
    """``gap_tx_rx_mm`` -> (``gap tx rx``, ``mm``)."""
    low = key.lower()
    if low in ("percent_change", "percent", "fill_percent"):
        return key.replace("_", " "), "%"
    for suffix, unit in _UNIT_SUFFIXES:
        if low.endswith(suffix) and len(low) > len(suffix):
            return key[: -len(suffix)].replace("_", " "), unit
    return key.replace("_", " "), ""


def _ff(v: object) -> object:
    """A value in pF shown in fF (the touch delta's unit in every report); anything else as it is."""
    return 1000.0 * v if isinstance(v, int | float) and not isinstance(v, bool) else v


def _value(v: Any) -> str:
    if isinstance(v, float) and not math.isfinite(v):
        return "n/a"
    if isinstance(v, list | tuple):
        return ", ".join(_value(x) for x in v)
    if isinstance(v, dict):
        return "; ".join(f"{safe_text(k)}: {_value(x)}" for k, x in v.items())
    return num(v)


def _asset(name: str) -> str:
    text = resources.files("sensorcheck.report").joinpath("assets", name).read_text(encoding="utf-8")
    if "</" in text.lower().replace("<\\/", "") and name.endswith(".js"):
        raise ValueError(f"asset {name} must not contain '</' (it is inlined in a <script>)")
    return text


def _csp_hash(text: str) -> str:
    return "'sha256-" + base64.b64encode(hashlib.sha256(text.encode("utf-8")).digest()).decode("ascii") + "'"


# ---------------------------------------------------------------- the board drawing


def _ring_d(rings: Iterable[Sequence[tuple[float, float]]], closed: bool = True) -> str:
    """Path data in mm (y negated) for a few rings: sensors, zones, outline."""
    parts: list[str] = []
    for ring in rings:
        pts = [(float(x), float(y)) for x, y in ring]
        if len(pts) < 2:
            continue
        head = f"M{_c(pts[0][0])} {_c(-pts[0][1])}"
        body = " ".join(f"{_c(x)} {_c(-y)}" for x, y in pts[1:])
        parts.append(f"{head}L{body}{'z' if closed else ''}")
    return "".join(parts)


def _is_closed(ring: Sequence[tuple[float, float]]) -> bool:
    return len(ring) > 2 and abs(ring[0][0] - ring[-1][0]) < 1e-6 and abs(ring[0][1] - ring[-1][1]) < 1e-6


def _home_box(result: Result) -> tuple[float, float, float, float]:
    """The board's extent in mm: the drawing's box, else what sensors and findings span."""
    if result.drawing is not None:
        x0, y0, x1, y1 = result.drawing.box_mm
    else:
        xs: list[float] = []
        ys: list[float] = []
        for s in result.sensors:
            if s.box_mm:
                xs += [s.box_mm[0], s.box_mm[2]]
                ys += [s.box_mm[1], s.box_mm[3]]
        for f in result.findings:
            loc = f.location
            if loc.box_mm:
                xs += [loc.box_mm[0], loc.box_mm[2]]
                ys += [loc.box_mm[1], loc.box_mm[3]]
            if loc.x_mm is not None and loc.y_mm is not None:
                xs.append(loc.x_mm)
                ys.append(loc.y_mm)
        if not xs:
            return (0.0, 0.0, 10.0, 10.0)
        x0, y0, x1, y1 = min(xs), min(ys), max(xs), max(ys)
    w = max(x1 - x0, 1.0)
    h = max(y1 - y0, 1.0)
    pad = 0.04 * max(w, h)
    return (x0 - pad, y0 - pad, x1 + pad, y1 + pad)


def _all_finite(*values: float | None) -> bool:
    return all(v is not None and math.isfinite(v) for v in values)


def _located(f: Finding) -> bool:
    """A finding is drawn when it has a finite point or box (else it is listed only)."""
    return place_of(f.location) is not None


def _finding_point(f: Finding) -> tuple[float, float]:
    place = place_of(f.location)
    assert place is not None
    return place


def _sev_class(f: Finding) -> str:
    cls = f"sev-{f.severity}"
    if f.waived:
        cls += " waived"
    if f.kind == "internal-error":
        cls += " internal"
    return cls


class _Toggle:
    """One switchable group of the board drawing (a layer, or sensors, zones, outline...)."""

    __slots__ = ("gid", "label", "swatch", "side")

    def __init__(self, gid: str, label: str, swatch: str, side: str) -> None:
        self.gid, self.label, self.swatch, self.side = gid, label, swatch, side


def _svg(prefix: str, result: Result, fids: dict[int, str], findings: list[Finding]) -> tuple[str, list[_Toggle]]:
    """The board as inline SVG, and the switchable groups in it."""
    from sensorcheck.board.drawing import grid_for, svg_path_data

    x0, y0, x1, y1 = _home_box(result)
    view = f"{_c(x0)} {_c(-y1)} {_c(x1 - x0)} {_c(y1 - y0)}"
    unit = max(x1 - x0, y1 - y0) / 900.0  # mm per screen pixel at the first view, about
    out: list[str] = [
        f'<svg class="board-svg" id="{prefix}-svg" viewBox="{view}" preserveAspectRatio="xMidYMid meet" '
        f'xmlns="http://www.w3.org/2000/svg" role="img" aria-label="{esc(result.board)}: board drawing">'
    ]
    toggles: list[_Toggle] = []
    drawing: Drawing | None = result.drawing
    closed_outline = [r for r in (drawing.outline if drawing else []) if _is_closed(r)]
    if closed_outline:
        out.append(f'<path class="substrate" fill-rule="evenodd" d="{_ring_d(closed_outline)}"/>')
    elif drawing is not None:
        bx0, by0, bx1, by1 = drawing.box_mm
        out.append(
            f'<rect class="substrate" x="{_c(bx0)}" y="{_c(-by1)}" width="{_c(bx1 - bx0)}" height="{_c(by1 - by0)}"/>'
        )
    if drawing is not None:
        grid = grid_for(drawing.simplify_tolerance_mm) if drawing.simplify_tolerance_mm > 0 else 0.001
        stack = list(enumerate(drawing.layers))
        face = (result.overlay or {}).get("face")
        # the touched face is drawn last, over the others (top unless the overlay covers the bottom)
        order = stack if face == "bottom" else list(reversed(stack))
        for index, layer in order:
            gid = f"{prefix}-L{index}"
            cls = _copper_class(index, layer.side, len(drawing.layers))
            if face in ("top", "bottom"):
                cls += " front" if layer.side == face else " back"
            d = svg_path_data(layer.polygons, grid)
            out.append(
                f'<g class="lyr copper {cls}" id="{gid}" data-layer="{esc(layer.name)}">'
                f'<path transform="scale({_c(grid)})" fill-rule="evenodd" d="{d}"/></g>'
            )
        for index, layer in stack:
            toggles.append(_Toggle(f"{prefix}-L{index}", layer.name, _copper_class(index, layer.side, len(stack)), layer.side))
    # zones and sensors
    zone_parts: list[str] = []
    sensor_parts: list[str] = []
    for si, s in enumerate(sensors_sorted(result)):
        if s.zone_rings:
            zone_parts.append(
                f'<path class="zone" data-sensor="{esc(s.name)}" fill-rule="evenodd" d="{_ring_d(s.zone_rings)}"/>'
            )
        shape = _ring_d(s.outline_rings) if s.outline_rings else ""
        if not shape and s.box_mm:
            bx0, by0, bx1, by1 = s.box_mm
            shape = _ring_d([[(bx0, by0), (bx1, by0), (bx1, by1), (bx0, by1)]])
        if not shape:
            continue
        sensor_parts.append(
            f'<g class="sensor" id="{prefix}-s{si}" data-sensor="{esc(s.name)}">'
            f'<path class="sensor-shape" fill-rule="evenodd" d="{shape}"/>'
        )
        box = s.box_mm or _rings_box(s.outline_rings)
        if box:
            cx = (box[0] + box[2]) / 2
            sensor_parts.append(
                f'<text class="sensor-label" x="{_c(cx)}" y="{_c(-box[3])}" text-anchor="middle">{esc(s.name)}</text>'
            )
        sensor_parts.append("</g>")
    if zone_parts:
        out.append(f'<g class="lyr zones" id="{prefix}-zones" data-layer="zones">{"".join(zone_parts)}</g>')
        toggles.append(_Toggle(f"{prefix}-zones", "sensing zones", "sw-zones", "all"))
    if sensor_parts:
        out.append(f'<g class="lyr sensors" id="{prefix}-sensors" data-layer="sensors">{"".join(sensor_parts)}</g>')
        toggles.append(_Toggle(f"{prefix}-sensors", "sensors", "sw-sensors", "all"))
    if drawing is not None and drawing.outline:
        closed = _ring_d([r for r in drawing.outline if _is_closed(r)])
        open_ = _ring_d([r for r in drawing.outline if not _is_closed(r)], closed=False)
        out.append(f'<g class="lyr outline" id="{prefix}-outline" data-layer="outline"><path d="{closed}{open_}"/></g>')
        toggles.append(_Toggle(f"{prefix}-outline", "outline", "sw-outline", "all"))
    if drawing is not None and drawing.holes:
        circles = "".join(
            f'<circle class="{"npth" if plated is False else "pth"}" cx="{_c(x)}" cy="{_c(-y)}" r="{_c(d / 2)}"/>'
            for x, y, d, plated in drawing.holes
        )
        out.append(f'<g class="lyr drill" id="{prefix}-drill" data-layer="drill">{circles}</g>')
        toggles.append(_Toggle(f"{prefix}-drill", "drill", "sw-drill", "drill"))
    marks: list[str] = []
    for i, f in enumerate(findings):
        if not _located(f):
            continue
        fid = fids[i]
        x, y = _finding_point(f)
        parts = [f'<g class="fmark {_sev_class(f)}" data-fid="{fid}" id="{fid}-m">']
        box = f.location.box_mm if f.location.box_mm and _all_finite(*f.location.box_mm) else None
        if box is not None:
            parts.append(
                f'<rect class="fbox" x="{_c(box[0])}" y="{_c(-box[3])}" width="{_c(box[2] - box[0])}" '
                f'height="{_c(box[3] - box[1])}"/>'
            )
        r = _c(7 * unit)
        parts.append(f'<circle class="halo" cx="{_c(x)}" cy="{_c(-y)}" r="{_c(16 * unit)}"/>')
        parts.append(f'<circle class="dot" cx="{_c(x)}" cy="{_c(-y)}" r="{r}"/>')
        if f.places > 1:  # every place of a grouped finding, smaller, in the same mark
            for loc in f.related:
                if loc.x_mm is not None and loc.y_mm is not None and _all_finite(loc.x_mm, loc.y_mm) \
                        and (loc.x_mm, loc.y_mm) != (x, y):
                    parts.append(f'<circle class="dot" cx="{_c(loc.x_mm)}" cy="{_c(-loc.y_mm)}" r="{_c(4 * unit)}"/>')
        parts.append(f"<title>{esc(f.rule_id)}: {esc(f.message)}</title></g>")
        marks.append("".join(parts))
    out.append(f'<g class="lyr findings" id="{prefix}-findings" data-layer="findings">{"".join(marks)}</g>')
    toggles.append(_Toggle(f"{prefix}-findings", "findings", "sw-findings", "all"))
    out.append("</svg>")
    return "".join(out), toggles


def _copper_class(index: int, side: str, count: int) -> str:
    if side == "bottom" or (count > 1 and index == count - 1 and side != "top"):
        return "cu-bottom"
    if index == 0:
        return "cu-top"
    return _COPPER_CLASSES[min(index, len(_COPPER_CLASSES) - 1)]


def _rings_box(rings: list[list[tuple[float, float]]]) -> tuple[float, float, float, float] | None:
    pts = [p for r in rings for p in r]
    if not pts:
        return None
    xs = [p[0] for p in pts]
    ys = [p[1] for p in pts]
    return (min(xs), min(ys), max(xs), max(ys))


# ---------------------------------------------------------------- page parts


def _header(prefix: str, label: str, result: Result) -> str:
    c = counts(result.findings)
    rows: list[tuple[str, str]] = [
        ("Board", esc(label)),
        ("Source", f"<code>{esc(result.source)}</code>"),
        (
            "Config",
            f"<code>{esc(result.config_file)}</code>"
            if result.config_file
            else "none found: defaults apply",
        ),
        ("Tool", f"sensorcheck {esc(result.tool_version)}"),
    ]
    if result.timestamp:
        rows.append(("Checked", esc(result.timestamp)))
    if result.drawing is not None and result.drawing.simplify_tolerance_mm > 0:
        rows.append(
            (
                "Drawing",
                f"copper simplified for drawing to {esc(num(result.drawing.simplify_tolerance_mm))} mm "
                "(checks use the exact geometry)",
            )
        )
    dl = "".join(f"<dt>{k}</dt><dd>{v}</dd>" for k, v in rows)
    chips = (
        f'<span class="chip sev-error">{plural(c["error"], "error")}</span>'
        f'<span class="chip sev-warning">{plural(c["warning"], "warning")}</span>'
        f'<span class="chip sev-note">{plural(c["note"], "note")}</span>'
        f'<span class="chip waived">{c["waived"]} waived</span>'
    )
    if c["internal"]:
        chips += f'<span class="chip internal">{plural(c["internal"], "internal error")}</span>'
    cautions = "".join(f"<li>{esc(t)}</li>" for t in result.cautions)
    overlay = _overlay_block(result.overlay)
    return (
        f'<header class="board-head"><h2 id="{prefix}-title">{esc(label)}</h2>'
        f'<div class="head-grid"><dl class="facts">{dl}</dl>'
        f'<div class="summary"><div class="chips">{chips}</div>{overlay}</div></div>'
        f'<aside class="cautions" aria-label="Cautions"><strong>Read with care</strong><ul>{cautions}</ul></aside>'
        "</header>"
    )


def _overlay_block(overlay: dict[str, Any] | None) -> str:
    if not overlay:
        return '<p class="overlay muted">No overlay was given: rules that need it say so.</p>'
    scalars = [(k, v) for k, v in overlay.items() if not isinstance(v, list | dict)]
    lists = [(k, v) for k, v in overlay.items() if isinstance(v, list) and all(isinstance(x, dict) for x in v)]
    out = ['<div class="overlay"><strong>Overlay</strong>']
    if scalars:
        out.append('<ul class="inline">' + "".join(f"<li>{_kv_html(k, v)}</li>" for k, v in scalars) + "</ul>")
    for key, rows in lists:
        out.append(f'<div class="muted">{esc(key)}, from the touch surface down</div><ol class="stack">')
        for row in rows:
            name = row.get("name") or row.get("material") or "layer"
            kind = f" ({esc(row['kind'])})" if row.get("kind") else ""
            rest = [
                _kv_html(k, v) for k, v in row.items()
                if k not in ("name", "material", "kind") and not k.endswith("source") and not isinstance(v, list | dict)
            ]
            sources = [f'<span class="src">{esc(v)}</span>' for k, v in row.items() if k.endswith("source") and v]
            out.append(f"<li><b>{esc(name)}</b>{kind}: {', '.join(rest)}{''.join(sources)}</li>")
        out.append("</ol>")
    out.append("</div>")
    return "".join(out)


def _kv_html(key: str, v: Any) -> str:
    name, unit = _unit_of(key)
    return f"{esc(name)}: <b>{esc(_value(v))}</b>{(' ' + unit) if unit and v is not None else ''}"


def _dict_table(rows: list[dict[str, Any]], caption: str | None = None) -> str:
    keys: list[str] = []
    for row in rows:
        for k in row:
            if k not in keys:
                keys.append(k)
    head = "".join(f"<th>{esc(_col(k))}</th>" for k in keys)
    body = "".join("<tr>" + "".join(f"<td>{esc(_value(row.get(k)))}</td>" for k in keys) + "</tr>" for row in rows)
    cap = f"<caption>{esc(caption)}</caption>" if caption else ""
    return f'<table class="grid">{cap}<thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>'


def _col(key: str) -> str:
    name, unit = _unit_of(key)
    return f"{name} ({unit})" if unit else name


def _toolbar(prefix: str, toggles: list[_Toggle]) -> str:
    boxes = "".join(
        f'<label class="tg"><input type="checkbox" checked data-target="{t.gid}">'
        f'<span class="sw {t.swatch}"></span>{esc(t.label)}</label>'
        for t in toggles
    )
    copper = [t for t in toggles if t.swatch.startswith("cu-")]
    overlays = [t.gid for t in toggles if not t.swatch.startswith("cu-") and t.swatch != "sw-drill"]
    drill = [t.gid for t in toggles if t.swatch == "sw-drill"]
    outline = [t.gid for t in toggles if t.swatch == "sw-outline"]
    findings = [t.gid for t in toggles if t.swatch == "sw-findings"]
    presets = [
        ("All", [t.gid for t in toggles]),
        ("Top", [t.gid for t in copper if t.side != "bottom"][:1] + overlays + drill),
        ("Bottom", [t.gid for t in copper if t.side == "bottom"][-1:] + overlays + drill),
        ("Drill", outline + drill + findings),
    ]
    preset_html = "".join(
        f'<button type="button" class="preset" data-show="{" ".join(ids)}">{name}</button>' for name, ids in presets
    )
    return (
        f'<div class="toolbar" role="toolbar" aria-label="Layers and view"><div class="toggles">{boxes}</div>'
        f'<div class="views"><span class="muted">View</span>{preset_html}'
        '<span class="sep"></span>'
        '<button type="button" class="zoom" data-zoom="in" title="Zoom in (+)">+</button>'
        '<button type="button" class="zoom" data-zoom="out" title="Zoom out (-)">−</button>'
        '<button type="button" class="zoom" data-zoom="home" title="Whole board (0)">Fit</button></div></div>'
    )


def _finding_item(f: Finding, fid: str, rules: dict[str, RuleInfo]) -> str:
    info = rules.get(f.rule_id)
    title = f' title="{esc(info.title)}"' if info is not None and info.title else ""
    meas = value_text(f)
    where = [esc(where_text(f.location))]
    sensors = finding_sensors(f)  # a grouped finding may cover several
    if sensors:
        where.append(("sensor " if len(sensors) == 1 else "sensors ") + ", ".join(f"<b>{esc(s)}</b>" for s in sensors))
    if f.nets:
        where.append("nets " + ", ".join(f"<code>{esc(n)}</code>" for n in f.nets))
    if f.location.file:
        src = esc(f.location.file) + (f":{f.location.line}" if f.location.line else "")
        where.append(f"<code>{src}</code>")
    located = _located(f)
    parts = [
        f'<li class="fitem {_sev_class(f)}" id="{fid}" data-fid="{fid}"{"" if located else " data-unplaced"}>',
        f'<button type="button" class="fbtn" data-fid="{fid}"{"" if located else " disabled"}>',
        f'<span class="sevtag">{"internal error" if f.kind == "internal-error" else f.severity}</span>',
        f'<code class="rule"{title}>{esc(f.rule_id)}</code>',
        f'<span class="msg">{esc(f.message)}</span>',
    ]
    if meas:
        parts.append(f'<span class="meas">{esc(meas)}</span>')
    if f.places > 1:
        parts.append(f'<span class="places">{f.places} places (all drawn; listed in the JSON and SARIF reports)</span>')
    parts.append(f'<span class="where">{" · ".join(where)}{"" if located else " · not on the drawing"}</span>')
    parts.append("</button>")
    if f.waived_by is not None:
        w = f.waived_by
        exp = f", expires {esc(w.expires)}" if w.expires else ", no expiry"
        parts.append(f'<p class="waiver">Waived: {esc(w.reason)}{exp}</p>')
    if f.fix:
        parts.append(f'<p class="fix">Fix: {esc(f.fix)}</p>')
    if f.reference:
        parts.append(f'<p class="ref">Rule: <code>{esc(f.reference)}</code></p>')
    if f.fingerprint:
        parts.append(f'<p class="fp">fingerprint <code>{esc(f.fingerprint)}</code></p>')
    parts.append("</li>")
    return "".join(parts)


def _findings_panel(prefix: str, findings: list[Finding], fids: dict[int, str], rules: dict[str, RuleInfo]) -> str:
    items = "".join(_finding_item(f, fids[i], rules) for i, f in enumerate(findings))
    if not items:
        items = '<li class="empty">No findings.</li>'
    filters = "".join(
        f'<label class="tg"><input type="checkbox" checked data-filter="{k}"><span class="sw {cls}"></span>{k}</label>'
        for k, cls in (("error", "sev-error"), ("warning", "sev-warning"), ("note", "sev-note"), ("waived", "waived"))
    )
    return (
        f'<div class="fpanel"><div class="fhead"><h3>Findings <span class="count">{len(findings)}</span></h3>'
        f'<div class="filters">{filters}</div></div>'
        f'<ol class="findings" id="{prefix}-findings-list">{items}</ol></div>'
    )


def _sensor_card(prefix: str, si: int, s: SensorSummary) -> str:
    rows = "".join(
        f"<tr><th>{esc(name)}</th><td>{esc(_value(v))}</td><td>{esc(unit) if v is not None else ''}</td></tr>"
        for name, unit, v in (((*_unit_of(k), v)) for k, v in s.values.items())
    )
    facts = [f"kind <b>{esc(s.kind)}</b>"]
    if s.layer:
        facts.append(f"layer <b>{esc(s.layer)}</b>")
    if s.nets:
        facts.append("nets " + ", ".join(f"<code>{esc(n)}</code>" for n in s.nets))
    out = [
        f'<article class="sensor-card" id="{prefix}-sensor{si}"><div class="card-head"><h4>{esc(s.name)}</h4>'
        + (f'<button type="button" class="show-sensor" data-sid="{prefix}-s{si}">show on board</button>'
           if s.box_mm or s.outline_rings else "")
        + "</div>",
        f'<p class="facts-line">{" · ".join(facts)}</p>',
    ]
    if rows:
        out.append(f'<table class="numbers"><caption>Layout numbers</caption><tbody>{rows}</tbody></table>')
    if s.estimate:
        out.append(_estimate_block(s.estimate))
    else:
        out.append('<p class="muted">No field-solver estimate for this sensor.</p>')
    out.append(_checklist(f"{prefix}-s{si}", s.checklist, "Reviewer checklist"))
    out.append("</article>")
    return "".join(out)


def _estimate_block(est: dict[str, Any]) -> str:
    out = ['<div class="estimate"><h5>Estimate <span class="muted">(a model, not a measurement)</span></h5>']
    if est.get("model"):
        out.append(f'<p class="model">Model: {esc(est["model"])}</p>')
    rows = []
    keys = [k for k in _ESTIMATE_SCALARS if k in est] + sorted(
        k for k, v in est.items()
        if k not in _ESTIMATE_SCALARS and k not in ("model", "curve", "notes", "channels", "crosstalk_pf", "sensor")
        and not isinstance(v, list | dict)
    )
    for k in keys:
        name, unit = _unit_of(k)
        v = est[k]
        if k == "turning_point_mm" and v is None:
            rows.append("<tr><th>turning point</th><td>none in the computed range</td><td></td></tr>")
            continue
        if k == "touch_delta_pf" and isinstance(v, int | float):  # fF, the unit every output uses
            rows.append(f"<tr><th>touch delta</th><td>{esc(_value(1000.0 * v))}</td><td>fF</td></tr>")
            continue
        rows.append(f"<tr><th>{esc(name)}</th><td>{esc(_value(v))}</td><td>{esc(unit) if v is not None else ''}</td></tr>")
    if rows:
        out.append(f'<table class="numbers"><tbody>{"".join(rows)}</tbody></table>')
    curve = est.get("curve")
    if isinstance(curve, list | tuple) and len(curve) >= 2:
        out.append(_curve_figure(est))
    channels = est.get("channels")
    if isinstance(channels, dict) and channels:
        body = "".join(
            f"<tr><td><code>{esc(k)}</code></td><td>{esc(_value(v[0] if isinstance(v, list | tuple) else v))}</td>"
            f"<td>{esc(_value(_ff(v[1]) if isinstance(v, list | tuple) and len(v) > 1 else None))}</td></tr>"
            for k, v in sorted(channels.items())
        )
        out.append(
            '<table class="grid"><caption>Channels</caption><thead><tr><th>net</th><th>baseline (pF)</th>'
            f"<th>touch delta (fF)</th></tr></thead><tbody>{body}</tbody></table>"
        )
    crosstalk = est.get("crosstalk_pf")
    if isinstance(crosstalk, dict) and crosstalk:
        body = "".join(
            f"<tr><td>{esc(k)}</td><td>{esc(_value(_ff(v)))}</td></tr>" for k, v in sorted(crosstalk.items())
        )
        out.append(
            '<table class="grid"><caption>Crosstalk: neighbour\'s delta with the finger here</caption>'
            f"<thead><tr><th>sensor</th><th>delta (fF)</th></tr></thead><tbody>{body}</tbody></table>"
        )
    notes = est.get("notes")
    if isinstance(notes, list) and notes:
        out.append('<ul class="est-notes">' + "".join(f"<li>{esc(n)}</li>" for n in notes) + "</ul>")
    out.append("</div>")
    return "".join(out)


def _nice_ticks(lo: float, hi: float, count: int = 5) -> list[float]:
    if hi <= lo:
        hi = lo + 1.0
    raw = (hi - lo) / count
    mag = 10 ** math.floor(math.log10(raw))
    step = next(m * mag for m in (1, 2, 2.5, 5, 10) if m * mag >= raw)
    start = math.ceil(lo / step - 1e-9) * step
    ticks = []
    t = start
    while t <= hi + 1e-9 * step:
        ticks.append(round(t, 10))
        t += step
    return ticks


def _curve_points(curve: Any) -> list[tuple[float, float]]:
    return sorted(
        (float(p[0]), float(p[1]))
        for p in (curve if isinstance(curve, list | tuple) else [])
        if isinstance(p, list | tuple) and len(p) >= 2 and math.isfinite(float(p[0])) and math.isfinite(float(p[1]))
    )


def _curve_figure(est: dict[str, Any]) -> str:
    """The approach curves as an SVG figure: value against finger height over the overlay surface.

    The approach over the most sensitive point, and over the node's centre where the solver
    computed that too (dashed); the turning point is marked on the curve it refers to.
    """
    pts = _curve_points(est["curve"])
    if len(pts) < 2:
        return ""
    centre_pts = _curve_points(est.get("curve_centre"))
    if len(centre_pts) < 2:
        centre_pts = []
    which = est.get("turning_curve")
    which = "centre" if which == "centre" and centre_pts else "best"
    kind = est.get("kind")
    ylabel = "Cm (pF)" if kind == "mutual" else "C (pF)"
    tp = est.get("turning_point_mm")
    tp = float(tp) if isinstance(tp, int | float) and math.isfinite(tp) else None
    W, H, L, R, T, B = 460.0, 250.0, 62.0, 14.0, 14.0, 42.0
    xs = [p[0] for p in pts] + [0.0] + ([tp] if tp is not None else [])
    ys = [p[1] for p in pts] + [p[1] for p in centre_pts]
    x_lo, x_hi = min(xs), max(xs)
    y_lo, y_hi = min(ys), max(ys)
    if y_hi - y_lo < 1e-12:
        y_lo, y_hi = y_lo - 0.5, y_hi + 0.5
    ypad = 0.08 * (y_hi - y_lo)
    y_lo, y_hi = y_lo - ypad, y_hi + ypad
    xt = _nice_ticks(x_lo, x_hi)
    yt = _nice_ticks(y_lo, y_hi)
    x_lo, x_hi = min(x_lo, xt[0]), max(x_hi, xt[-1])
    y_lo, y_hi = min(y_lo, yt[0]), max(y_hi, yt[-1])

    def px(x: float) -> float:
        return L + (x - x_lo) / (x_hi - x_lo) * (W - L - R)

    def py(y: float) -> float:
        return T + (y_hi - y) / (y_hi - y_lo) * (H - T - B)

    g = [f'<svg class="curve" viewBox="0 0 {int(W)} {int(H)}" xmlns="http://www.w3.org/2000/svg" role="img" '
         f'aria-label="approach curve">']
    g.append(f'<rect class="plot" x="{L}" y="{T}" width="{W - L - R}" height="{H - T - B}"/>')
    for t in xt:
        g.append(f'<line class="gridline" x1="{px(t):.1f}" y1="{T}" x2="{px(t):.1f}" y2="{H - B}"/>')
        g.append(f'<text class="tick" x="{px(t):.1f}" y="{H - B + 15}" text-anchor="middle">{esc(num(t))}</text>')
    for t in yt:
        g.append(f'<line class="gridline" x1="{L}" y1="{py(t):.1f}" x2="{W - R}" y2="{py(t):.1f}"/>')
        g.append(f'<text class="tick" x="{L - 6}" y="{py(t) + 4:.1f}" text-anchor="end">{esc(num(t))}</text>')
    g.append(
        f'<line class="surface" x1="{px(0):.1f}" y1="{T}" x2="{px(0):.1f}" y2="{H - B}"/>'
        f'<text class="mark-label" x="{px(0) + 4:.1f}" y="{T + 12}">overlay surface</text>'
    )
    over = "over the node centre" if which == "centre" else ("over the most sensitive point" if centre_pts else "")
    # every change of course of the curve drawn, labelled with its kind (estimates of old reports
    # carry only the turning point: a turn there)
    turns = [(float(t["height_mm"]), str(t["kind"]), t.get("curve")) for t in est.get("turnarounds") or []
             if isinstance(t, dict) and isinstance(t.get("height_mm"), int | float) and t.get("curve") in ("best", "centre")
             and (t["curve"] == "best" or centre_pts)]
    if not turns and tp is not None:
        turns = [(tp, "turns", which)]
    for i, (h, kind_t, c) in enumerate(turns):
        where = "" if not centre_pts else (" (over the node centre)" if c == "centre" else " (over the most sensitive point)")
        g.append(
            f'<line class="turn" x1="{px(h):.1f}" y1="{T}" x2="{px(h):.1f}" y2="{H - B}"/>'
            f'<text class="mark-label turn-label" x="{px(h) + 4:.1f}" y="{T + 26 + 14 * i}">{esc(kind_t)} at {esc(num(h))} mm'
            f'{esc(where)}</text>'
        )
    line = " ".join(f"{px(x):.1f},{py(y):.1f}" for x, y in pts)
    g.append(f'<polyline class="trace" points="{line}"/>')
    g.extend(f'<circle class="pt" cx="{px(x):.1f}" cy="{py(y):.1f}" r="2.6"/>' for x, y in pts)
    if centre_pts:
        line_c = " ".join(f"{px(x):.1f},{py(y):.1f}" for x, y in centre_pts)
        g.append(f'<polyline class="trace trace-centre" points="{line_c}"/>')
        g.extend(f'<circle class="pt pt-centre" cx="{px(x):.1f}" cy="{py(y):.1f}" r="2.2"/>' for x, y in centre_pts)
        g.append(
            f'<text class="legend" x="{W - R - 4:.1f}" y="{H - B - 22:.1f}" text-anchor="end">solid: finger over the most sensitive point</text>'
            f'<text class="legend" x="{W - R - 4:.1f}" y="{H - B - 8:.1f}" text-anchor="end">dashed: finger over the node centre</text>'
        )
    g.append(
        f'<text class="axis" x="{(L + W - R) / 2:.1f}" y="{H - 6}" text-anchor="middle">'
        "finger height above the overlay surface (mm)</text>"
        f'<text class="axis" transform="translate(14 {(T + H - B) / 2:.1f}) rotate(-90)" text-anchor="middle">{ylabel}</text>'
    )
    g.append("</svg>")
    if tp is None:
        cap = "No turning point in the computed range: the signal grows steadily as the finger approaches."
        if centre_pts:
            cap += " Both approaches (over the most sensitive point and over the node centre) are drawn."
    elif tp > 0:
        changes = " and ".join(f"{esc(k)} at {esc(num(h))} mm" for h, k, _ in turns)
        cap = (
            f"The signal {changes} above the overlay surface"
            f"{' (highest with the finger ' + esc(over) + ')' if over else ''}: a press can read as a release"
            + (" or as the opposite of a touch" if any(k == "reverses sign" for _, k, _ in turns) else "")
            + ". The signal should grow steadily down to the surface."
        )
    else:
        cap = f"The turning point ({esc(num(tp))} mm) stays below the overlay surface."
    return f'<figure class="curve-fig">{"".join(g)}<figcaption>Approach curve (estimate). {cap}</figcaption></figure>'


def _checklist(idp: str, items: Sequence[str], title: str) -> str:
    if not items:
        return f'<div class="checklist"><h5>{esc(title)}</h5><p class="muted">Nothing recorded to confirm.</p></div>'
    lis = "".join(
        f'<li><label><input type="checkbox" id="{idp}-c{i}"> {esc(item)}</label></li>' for i, item in enumerate(items)
    )
    return f'<div class="checklist"><h5>{esc(title)}</h5><ul>{lis}</ul></div>'


def _waivers(findings: list[Finding], fids: dict[int, str]) -> str:
    rows = []
    for i, f in enumerate(findings):
        w = f.waived_by
        if w is None:
            continue
        where = []
        if w.sensor:
            where.append(f"sensor {esc(w.sensor)}")
        if w.net:
            where.append(f"net <code>{esc(w.net)}</code>")
        if w.layer:
            where.append(f"layer {esc(w.layer)}")
        if w.box_mm:
            where.append("box " + esc(", ".join(num(v) for v in w.box_mm)) + " mm")
        if w.fingerprint:
            where.append(f"fingerprint <code>{esc(w.fingerprint)}</code>")
        rows.append(
            f'<tr><td><code>{esc(w.rule)}</code></td><td>{" · ".join(where) or "everywhere"}</td>'
            f"<td>{esc(w.reason)}</td><td>{esc(w.expires) if w.expires else 'no expiry'}</td>"
            f'<td><a href="#{fids[i]}" class="jump" data-fid="{fids[i]}">{esc(f.message)}</a></td></tr>'
        )
    if not rows:
        return ""
    return (
        '<section class="waivers"><h3>Waivers</h3><table class="grid"><thead><tr><th>rule</th><th>where</th>'
        f'<th>reason</th><th>expires</th><th>finding waived</th></tr></thead><tbody>{"".join(rows)}</tbody></table>'
        "</section>"
    )


def _details(result: Result, findings: list[Finding], rules: dict[str, RuleInfo]) -> str:
    out: list[str] = []
    if result.notes:
        out.append('<section class="notes"><h3>Notes</h3><ul>' + "".join(f"<li>{esc(n)}</li>" for n in result.notes) + "</ul></section>")
    if result.files:
        out.append(f'<details class="files"><summary>Files read ({len(result.files)})</summary>{_dict_table(result.files)}</details>')
    ids = sorted(dict.fromkeys([*result.rules_run, *(f.rule_id for f in findings)]))
    if ids:
        per_rule: dict[str, int] = {}
        for f in findings:
            per_rule[f.rule_id] = per_rule.get(f.rule_id, 0) + 1
        body = "".join(
            f"<tr><td><code>{esc(i)}</code></td><td>{esc(rules[i].title) if i in rules else ''}</td>"
            f"<td>{esc(rules[i].default_severity) if i in rules else ''}</td><td>{per_rule.get(i, 0)}</td></tr>"
            for i in ids
        )
        out.append(
            f'<details class="rules"><summary>Rules that ran ({len(ids)})</summary><table class="grid"><thead><tr>'
            f"<th>rule</th><th>title</th><th>default severity</th><th>findings</th></tr></thead><tbody>{body}</tbody>"
            "</table></details>"
        )
    return "".join(out)


def _board_data(prefix: str, result: Result, findings: list[Finding], fids: dict[int, str]) -> dict[str, Any]:
    """What the script needs: the first view, and the findings and sensors with their places (SVG axes)."""
    x0, y0, x1, y1 = _home_box(result)
    items = []
    for i, f in enumerate(findings):
        if not _located(f):
            continue
        x, y = _finding_point(f)
        box = f.location.box_mm if f.location.box_mm and _all_finite(*f.location.box_mm) else None
        items.append(
            {
                "id": fids[i],
                "x": round(x, 4),
                "y": round(-y, 4),
                "box": [round(box[0], 4), round(-box[3], 4), round(box[2], 4), round(-box[1], 4)] if box else None,
                "severity": f.severity,
                "rule": f.rule_id,
                "message": f.message,
                "waived": f.waived,
            }
        )
    sensors = []
    for si, s in enumerate(sensors_sorted(result)):
        box = s.box_mm or _rings_box(s.outline_rings)
        if box:
            sensors.append(
                {"id": f"{prefix}-s{si}", "name": s.name,
                 "box": [round(box[0], 4), round(-box[3], 4), round(box[2], 4), round(-box[1], 4)]}
            )
    return {
        "board": result.board,
        "home": [round(x0, 4), round(-y1, 4), round(x1 - x0, 4), round(y1 - y0, 4)],
        "findings": items,
        "sensors": sensors,
    }


def _board_section(index: int, label: str, result: Result, rules: dict[str, RuleInfo]) -> str:
    prefix = f"b{index}"
    findings = ordered(result.findings)
    fids = {i: f"{prefix}-f{i}" for i in range(len(findings))}
    svg, toggles = _svg(prefix, result, fids, findings)
    review_items = [f.review for f in findings if f.review]
    sensors = sensors_sorted(result)
    cards = "".join(_sensor_card(prefix, si, s) for si, s in enumerate(sensors))
    return (
        f'<section class="board" id="{prefix}" aria-labelledby="{prefix}-title">'
        f"{_header(prefix, label, result)}"
        '<div class="review">'
        f'<div class="viewer">{_toolbar(prefix, toggles)}'
        f'<div class="canvas" tabindex="0" aria-label="Board view: drag or arrow keys to pan, wheel or +/- to zoom, 0 to fit">{svg}</div>'
        f"{'' if result.drawing is not None else _NO_DRAWING}"
        '<div class="statusbar"><span class="coords">x, y (mm)</span>'
        '<span class="hint">drag to pan · wheel or +/− to zoom · 0 fits · click lists what is there</span></div>'
        '<div class="here" aria-live="polite"><p class="muted">Click the board to list what is there.</p></div>'
        "</div>"
        f"{_findings_panel(prefix, findings, fids, rules)}"
        "</div>"
        f'<section class="sensors"><h3>Sensors <span class="count">{len(sensors)}</span></h3>'
        f'{("<div class=\"cards\">" + cards + "</div>") if cards else "<p class=\"muted\">No sensors were found.</p>"}</section>'
        f'<section class="board-checklist">{_checklist(prefix + "-rv", review_items, "Reviewer checklist: findings to confirm")}</section>'
        f"{_waivers(findings, fids)}"
        f"{_details(result, findings, rules)}"
        f'<script type="application/json" class="board-data">{json_for_script(_board_data(prefix, result, findings, fids))}</script>'
        "</section>"
    )


def render(results: list[Result]) -> str:
    """The review page for one or more boards, as one self-contained HTML document."""
    css = _asset("review.css")
    js = _asset("review.js")
    labels = board_labels(results)
    rules = rule_catalogue(results)
    csp = (
        f"default-src 'none'; style-src {_csp_hash(css)}; script-src {_csp_hash(js)}; img-src data:; "
        "base-uri 'none'; form-action 'none'"
    )
    title = "sensorcheck review: " + ", ".join(labels) if labels else "sensorcheck review"
    version = results[0].tool_version if results else ""
    nav = ""
    if len(results) > 1:
        nav = '<nav class="boards-nav"><ul>' + "".join(
            f'<li><a href="#b{i}">{esc(label)}</a> <span class="muted">{esc(_summary(r))}</span></li>'
            for i, (label, r) in enumerate(zip(labels, results, strict=True))
        ) + "</ul></nav>"
    sections = "".join(_board_section(i, label, r, rules) for i, (label, r) in enumerate(zip(labels, results, strict=True)))
    if not results:
        sections = '<p class="muted">No boards were checked.</p>'
    return (
        "<!DOCTYPE html>\n"
        '<html lang="en"><head><meta charset="utf-8">'
        f'<meta http-equiv="Content-Security-Policy" content="{csp}">'
        '<meta name="viewport" content="width=device-width, initial-scale=1">'
        f'<meta name="generator" content="sensorcheck {esc(version)}">'
        f"<title>{esc(title)}</title><style>{css}</style></head>"
        '<body><header class="page-head"><div class="brand">sensorcheck <span>touch-sensor layout review</span></div>'
        f'<p class="page-sub">{plural(len(results), "board")} · sensorcheck {esc(version)}</p></header>'
        f"{nav}<main>{sections}</main>"
        '<footer class="page-foot">Written by sensorcheck. Estimates are models; confirm on a prototype.</footer>'
        f"<script>{js}</script></body></html>\n"
    )


def _summary(result: Result) -> str:
    c = counts(result.findings)
    return f"{c['error']} E · {c['warning']} W · {c['note']} N"
