"""The compare review page: one self-contained HTML file, no script, no outside resource.

For each sensor that changed (the biggest loss first): a drawing of both revisions' copper round
the sensor overlaid (old and new in two colours, copper added and removed marked, the old and new
electrode outlines and the zone), with check boxes that show either revision alone (CSS only);
both approach curves on one chart (the signal, value minus baseline, against the finger's height
above the overlay surface on a square-root scale); every number old -> new; findings new, fixed and unchanged.

All text from the boards is escaped (:func:`sensorcheck.report.html.esc`); the page's only style
is inline and allowed by its hash in the Content-Security-Policy.
"""

from __future__ import annotations

import math

from sensorcheck.compare.changes import METRICS, Comparison, SensorComparison
from sensorcheck.report.compare_text import change, counts_line, loss, matched, title, verdict
from sensorcheck.report.html import _c, _csp_hash, _ring_d, esc

STYLE = """
body{font:14px/1.45 system-ui,sans-serif;margin:1.5em auto;max-width:1100px;padding:0 1em;color:#222}
h1{font-size:1.4em}h2{font-size:1.15em;margin-top:2em;border-bottom:1px solid #ccc}
table{border-collapse:collapse;margin:.6em 0}td,th{border:1px solid #ccc;padding:.25em .5em;text-align:left}
.fail{color:#a00;font-weight:bold}.pass{color:#060;font-weight:bold}
.views{display:flex;flex-wrap:wrap;gap:1em;align-items:flex-start}
.view{border:1px solid #ccc;background:#fafafa}
.old{fill:#1f6fd1;fill-opacity:.35;stroke:none}.new{fill:#e07b00;fill-opacity:.35;stroke:none}
.bottom{fill-opacity:.15}
.added{fill:#0a0;fill-opacity:.75;stroke:#060;stroke-width:.05}
.removed{fill:#d00;fill-opacity:.75;stroke:#800;stroke-width:.05}
.ol-old{fill:none;stroke:#1f6fd1;stroke-width:.12;stroke-dasharray:.4 .3}
.ol-new{fill:none;stroke:#e07b00;stroke-width:.12}
.zone{fill:none;stroke:#666;stroke-width:.06;stroke-dasharray:.15 .15}
.toggles{max-width:440px}.toggles label{margin-right:1em}
.c-old{fill:none;stroke:#1f6fd1;stroke-width:2}.c-new{fill:none;stroke:#e07b00;stroke-width:2}
.axis{stroke:#444;stroke-width:1}.grid{stroke:#ddd;stroke-width:1}.tick{font-size:11px;fill:#444}
.legend-old{color:#1f6fd1}.legend-new{color:#e07b00}.legend-added{color:#0a0}.legend-removed{color:#d00}
"""


def _toggle_css(n: int) -> str:
    rules = []
    for i in range(n):
        for part in ("old", "new", "added", "removed"):
            rules.append(f"#s{i}-{part}:not(:checked)~svg .{part}{{display:none}}")
    return "".join(rules)


def _drawing(i: int, s: SensorComparison) -> str:
    if s.view_box_mm is None:
        return "<p>No copper to draw (a side is a JSON report).</p>"
    x0, y0, x1, y1 = s.view_box_mm
    w, h = x1 - x0, y1 - y0
    px = 420.0
    parts = [f'<svg class="view" width="{_c(px)}" height="{_c(px * h / w if w else px)}" '
             f'viewBox="{_c(x0)} {_c(-y1)} {_c(w)} {_c(h)}" role="img" aria-label="copper of both revisions">']
    for rev, rings in (("old", s.old_copper_rings), ("new", s.new_copper_rings)):
        for layer in sorted(rings, key=lambda ly: (s.layer_sides.get(ly) != "bottom", ly)):
            face = " bottom" if s.layer_sides.get(layer) == "bottom" else ""
            parts.append(f'<path class="{rev}{face}" fill-rule="evenodd" d="{_ring_d(rings[layer])}"><title>{esc(rev)} '
                         f'{esc(layer)}</title></path>')
    for cu in s.copper:
        if cu.added_rings:
            parts.append(f'<path class="added" fill-rule="evenodd" d="{_ring_d(cu.added_rings)}"><title>added on '
                         f'{esc(cu.layer)}: {cu.added_mm2:.2f} mm2</title></path>')
        if cu.removed_rings:
            parts.append(f'<path class="removed" fill-rule="evenodd" d="{_ring_d(cu.removed_rings)}"><title>removed '
                         f'on {esc(cu.layer)}: {cu.removed_mm2:.2f} mm2</title></path>')
    if s.zone_rings:
        parts.append(f'<path class="zone" d="{_ring_d(s.zone_rings)}"/>')
    if s.old_outline_rings:
        parts.append(f'<path class="ol-old old-outline" d="{_ring_d(s.old_outline_rings)}"/>')
    if s.new_outline_rings:
        parts.append(f'<path class="ol-new new-outline" d="{_ring_d(s.new_outline_rings)}"/>')
    parts.append("</svg>")
    boxes = "".join(f'<input type="checkbox" id="s{i}-{p}" checked><label for="s{i}-{p}" class="legend-{p}">{p}</label>'
                    for p in ("old", "new", "added", "removed"))
    return f'<div class="toggles">{boxes}{"".join(parts)}</div>'


def _signal(curve: list[list[float]]) -> list[tuple[float, float]]:
    """(height mm, signal fF) from an approach curve (far to near): value minus the far value."""
    pts = [(float(hv[0]), float(hv[1])) for hv in curve if len(hv) == 2]
    if not pts:
        return []
    far = max(pts, key=lambda p: p[0])[1]
    return [(h, 1000.0 * (v - far)) for h, v in pts]


def _chart(s: SensorComparison) -> str:
    curves = {"old": _signal(s.old_curve), "new": _signal(s.new_curve)}
    pts = [p for c in curves.values() for p in c]
    if not pts:
        return "<p>No approach curve (no estimate).</p>"
    w, h, m = 420.0, 260.0, 44.0
    hx = max(p[0] for p in pts) or 1.0
    lo, hi = min(0.0, *(p[1] for p in pts)), max(0.0, *(p[1] for p in pts))
    if hi == lo:
        hi = lo + 1.0

    def X(v: float) -> float:  # a square-root scale: the near field, where curves turn, gets room
        return m + (w - 2 * m) * math.sqrt(max(v, 0.0) / hx)

    def Y(v: float) -> float:
        return h - m - (h - 2 * m) * (v - lo) / (hi - lo)

    out = [f'<svg width="{_c(w)}" height="{_c(h)}" role="img" aria-label="approach curves, old and new">',
           f'<line class="axis" x1="{_c(m)}" y1="{_c(Y(0))}" x2="{_c(w - m)}" y2="{_c(Y(0))}"/>',
           f'<line class="axis" x1="{_c(m)}" y1="{_c(m)}" x2="{_c(m)}" y2="{_c(h - m)}"/>']
    for k in range(5):
        v = lo + (hi - lo) * k / 4
        out.append(f'<text class="tick" x="2" y="{_c(Y(v) + 4)}">{v:.3g}</text>')
    for hv in (0.0, 0.5, 1.0, 2.0, 5.0, 10.0, 20.0, 50.0):
        if hv <= hx:
            out.append(f'<text class="tick" x="{_c(X(hv) - 6)}" y="{_c(h - m + 16)}">{hv:g}</text>')
    out.append(f'<text class="tick" x="{_c(w / 2 - 90)}" y="{_c(h - 6)}">finger height above the overlay (mm)</text>')
    out.append('<text class="tick" x="2" y="14">signal (fF)</text>')
    for rev, c in curves.items():
        if c:
            d = " ".join(f"{_c(X(x))},{_c(Y(y))}" for x, y in sorted(c))
            out.append(f'<polyline class="c-{rev}" points="{d}"><title>{rev}</title></polyline>')
    out.append("</svg>")
    return "".join(out) + '<div><span class="legend-old">old</span> / <span class="legend-new">new</span></div>'


def _findings(s: SensorComparison) -> str:
    rows = []
    for tag, items in (("new", s.new_findings), ("fixed", s.fixed_findings), ("unchanged", s.unchanged_findings)):
        for f in items:
            rows.append(f"<tr><td>{tag}</td><td>{esc(f.severity)}</td><td>{esc(f.rule_id)}</td><td>{esc(f.message)}</td></tr>")
    if not rows:
        return ""
    return "<table><tr><th></th><th>severity</th><th>rule</th><th>message</th></tr>" + "".join(rows) + "</table>"


def _card(i: int, s: SensorComparison) -> str:
    rows = "".join(f"<tr><td>{esc(label)}</td><td>{esc(change(key, s.values[key]))}</td></tr>"
                   for key, label, _ in METRICS if key in s.values and
                   (s.values[key].old is not None or s.values[key].new is not None))
    rows += "".join(f"<tr><td>crosstalk to {esc(nb)}</td><td>{esc(change('crosstalk_pf', c))}</td></tr>"
                    for nb, c in s.crosstalk.items() if c.changed)
    rows += "".join(f"<tr><td>copper in zone, {esc(cu.layer)}</td><td>{cu.added_mm2:.2f} mm² added, "
                    f"{cu.removed_mm2:.2f} mm² removed</td></tr>" for cu in s.copper)
    notes = "".join(f"<li>{esc(n)}</li>" for n in s.notes)
    return (f'<h2 id="sensor-{i}">{esc(title(s))}: {esc(loss(s))}</h2>'
            + (f"<p>{esc(matched(s))}</p>" if matched(s) else "")
            + f'<div class="views">{_drawing(i, s)}<div>{_chart(s)}</div></div>'
            + f"<table>{rows}</table>{_findings(s)}" + (f"<ul>{notes}</ul>" if notes else ""))


def render(cmp: Comparison) -> str:
    changed = cmp.changed
    style = STYLE + _toggle_css(len(changed))
    csp = f"default-src 'none'; style-src {_csp_hash(style)}; img-src data:"
    ok = "fail" if cmp.gate.failed else "pass"
    index = "".join(f'<li><a href="#sensor-{i}">{esc(title(s))}</a>: {esc(loss(s))}</li>' for i, s in enumerate(changed))
    unchanged = [s.name for s in cmp.sensors if s.status == "unchanged"]
    board = "".join(f"<li>board, {tag}: {esc(f.severity)} {esc(f.rule_id)}: {esc(f.message)}</li>"
                    for tag, items in (("new", cmp.board_new), ("fixed", cmp.board_fixed)) for f in items)
    body = [
        f"<h1>sensorcheck compare: {esc(cmp.old_label)} → {esc(cmp.new_label)}</h1>",
        f'<p class="{ok}">{esc(verdict(cmp))}</p>',
        f"<p>{esc(counts_line(cmp))}</p>",
        f"<ol>{index}</ol>" if index else "<p>No sensor changed.</p>",
        *(_card(i, s) for i, s in enumerate(changed)),
        f"<p>Unchanged: {esc(', '.join(unchanged))}</p>" if unchanged else "",
        f"<ul>{board}</ul>" if board else "",
        "".join(f"<p>{esc(n)}</p>" for n in cmp.notes),
        "".join(f"<p><strong>{esc(c)}</strong></p>" for c in cmp.cautions),
    ]
    return ("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
            f'<meta http-equiv="Content-Security-Policy" content="{csp}">'
            f"<title>sensorcheck compare: {esc(cmp.new_label)}</title><style>{style}</style></head><body>"
            + "".join(body) + "</body></html>\n")
