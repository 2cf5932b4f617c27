/* sensorcheck review page: pan, zoom, layer switches, finding selection, what-is-here.
   Our own code; no libraries. Text from the board only ever goes in through textContent. */
(function () {
  "use strict";

  function all(root, sel) { return Array.prototype.slice.call(root.querySelectorAll(sel)); }
  function fmt(n) { return String(Math.round(n * 10000) / 10000); }
  function mm(n) { return (Math.round(n * 100) / 100).toFixed(2); }
  function el(tag, cls, text) {
    var e = document.createElement(tag);
    if (cls) { e.className = cls; }
    if (text !== undefined) { e.textContent = text; }
    return e;
  }

  function Board(section) {
    var data = JSON.parse(section.querySelector("script.board-data").textContent);
    var svg = section.querySelector("svg.board-svg");
    var canvas = section.querySelector(".canvas");
    var here = section.querySelector(".here");
    var coords = section.querySelector(".coords");
    var home = data.home.slice();
    var view = home.slice();
    var byId = {};
    data.findings.forEach(function (f) { byId[f.id] = f; });
    var minSpan = Math.max(home[2], home[3]) / 2000;
    var maxSpan = Math.max(home[2], home[3]) * 8;

    function unitsPerPx() {
      var m = svg.getScreenCTM();
      return m && m.a ? 1 / m.a : home[2] / Math.max(svg.clientWidth, 1);
    }
    function rescale() { svg.style.setProperty("--u", String(unitsPerPx())); }
    function setView(v) {
      var span = Math.max(v[2], v[3]);
      if (span < minSpan || span > maxSpan) {
        var k = (span < minSpan ? minSpan : maxSpan) / span;
        var cx = v[0] + v[2] / 2, cy = v[1] + v[3] / 2;
        v = [cx - v[2] * k / 2, cy - v[3] * k / 2, v[2] * k, v[3] * k];
      }
      view = v;
      svg.setAttribute("viewBox", view.map(fmt).join(" "));
      rescale();
    }
    function toUser(cx, cy) {
      var p = svg.createSVGPoint();
      p.x = cx; p.y = cy;
      var m = svg.getScreenCTM();
      return m ? p.matrixTransform(m.inverse()) : p;
    }
    function zoomAt(x, y, f) {
      setView([x - (x - view[0]) * f, y - (y - view[1]) * f, view[2] * f, view[3] * f]);
    }
    function zoomCentre(f) { zoomAt(view[0] + view[2] / 2, view[1] + view[3] / 2, f); }
    function pan(fx, fy) { setView([view[0] + fx * view[2], view[1] + fy * view[3], view[2], view[3]]); }

    // drag to pan, click to list what is there
    var drag = null;
    svg.addEventListener("pointerdown", function (e) {
      if (e.button !== 0) { return; }
      canvas.focus({ preventScroll: true });
      drag = { x: e.clientX, y: e.clientY, v: view.slice(), k: unitsPerPx(), moved: false, id: e.pointerId };
    });
    svg.addEventListener("pointermove", function (e) {
      var p = toUser(e.clientX, e.clientY);
      coords.textContent = "x " + mm(p.x) + "  y " + mm(-p.y) + " mm";
      if (!drag) { return; }
      var dx = e.clientX - drag.x, dy = e.clientY - drag.y;
      if (!drag.moved && Math.abs(dx) + Math.abs(dy) < 4) { return; }
      if (!drag.moved) {
        drag.moved = true;
        canvas.classList.add("dragging");
        try { svg.setPointerCapture(drag.id); } catch (err) { /* pointer already gone */ }
      }
      setView([drag.v[0] - dx * drag.k, drag.v[1] - dy * drag.k, drag.v[2], drag.v[3]]);
    });
    function endDrag(e, cancelled) {
      if (!drag) { return; }
      var d = drag;
      drag = null;
      canvas.classList.remove("dragging");
      if (!d.moved && !cancelled) { pick(e.clientX, e.clientY, e.target); }
    }
    svg.addEventListener("pointerup", function (e) { endDrag(e, false); });
    svg.addEventListener("pointercancel", function (e) { endDrag(e, true); });
    svg.addEventListener("wheel", function (e) {
      e.preventDefault();
      var p = toUser(e.clientX, e.clientY);
      var dy = e.deltaMode === 1 ? e.deltaY * 16 : e.deltaY;
      zoomAt(p.x, p.y, Math.exp(Math.max(-200, Math.min(200, dy)) * 0.002));
    }, { passive: false });
    canvas.addEventListener("keydown", function (e) {
      var used = true;
      switch (e.key) {
        case "ArrowLeft": pan(-0.1, 0); break;
        case "ArrowRight": pan(0.1, 0); break;
        case "ArrowUp": pan(0, -0.1); break;
        case "ArrowDown": pan(0, 0.1); break;
        case "+": case "=": zoomCentre(1 / 1.25); break;
        case "-": case "_": zoomCentre(1.25); break;
        case "0": setView(home.slice()); break;
        default: used = false;
      }
      if (used) { e.preventDefault(); }
    });
    all(section, "button.zoom").forEach(function (b) {
      b.addEventListener("click", function () {
        var z = b.getAttribute("data-zoom");
        if (z === "in") { zoomCentre(1 / 1.25); } else if (z === "out") { zoomCentre(1.25); } else { setView(home.slice()); }
      });
    });

    // layer switches and view presets
    var toggles = all(section, "input[data-target]");
    function applyToggle(cb) {
      var g = document.getElementById(cb.getAttribute("data-target"));
      if (g) { g.classList.toggle("off", !cb.checked); }
    }
    toggles.forEach(function (cb) { cb.addEventListener("change", function () { applyToggle(cb); }); });
    all(section, "button.preset").forEach(function (b) {
      b.addEventListener("click", function () {
        var show = (b.getAttribute("data-show") || "").split(" ");
        toggles.forEach(function (cb) { cb.checked = show.indexOf(cb.getAttribute("data-target")) >= 0; applyToggle(cb); });
      });
    });
    // severity filters (list and board together)
    all(section, "input[data-filter]").forEach(function (cb) {
      cb.addEventListener("change", function () { section.classList.toggle("hide-" + cb.getAttribute("data-filter"), !cb.checked); });
    });

    // a box [x0, y0, x1, y1] (SVG axes) filling most of the view, never closer than 6 % of the board
    function zoomTo(b) {
      var w = b[2] - b[0], h = b[3] - b[1];
      var span = Math.max(w, h, Math.max(home[2], home[3]) * 0.06) * 1.8;
      var cx = (b[0] + b[2]) / 2, cy = (b[1] + b[3]) / 2;
      var aspect = home[3] / home[2];
      var vw = aspect > 1 ? span / aspect : span, vh = aspect > 1 ? span : span * aspect;
      if (vw < w * 1.3) { vw = w * 1.3; vh = vw * aspect; }
      if (vh < h * 1.3) { vh = h * 1.3; vw = vh / aspect; }
      setView([cx - vw / 2, cy - vh / 2, vw, vh]);
    }
    var sensorsById = {};
    data.sensors.forEach(function (s) { sensorsById[s.id] = s; });
    all(section, "button.show-sensor").forEach(function (b) {
      b.addEventListener("click", function () {
        var sid = b.getAttribute("data-sid");
        all(svg, ".sensor.hl").forEach(function (g) { g.classList.remove("hl"); });
        var g = document.getElementById(sid);
        if (g) { g.classList.add("hl"); }
        if (sensorsById[sid]) { zoomTo(sensorsById[sid].box); }
        canvas.scrollIntoView({ block: "center" });
      });
    });

    // selecting a finding: highlight its marker and list entry, zoom to it
    function select(fid, zoom) {
      all(section, ".fmark.hl").forEach(function (m) { m.classList.remove("hl"); });
      all(section, ".fitem.sel").forEach(function (li) { li.classList.remove("sel"); li.removeAttribute("aria-current"); });
      var mark = svg.querySelector('.fmark[data-fid="' + fid + '"]');
      var item = section.querySelector('.fitem[data-fid="' + fid + '"]');
      if (item) { item.classList.add("sel"); item.setAttribute("aria-current", "true"); }
      if (!mark) { return; }
      mark.classList.add("hl");
      mark.parentNode.appendChild(mark);
      var f = byId[fid];
      if (zoom && f) { zoomTo(f.box || [f.x, f.y, f.x, f.y]); }
      return item;
    }
    all(section, ".fbtn").forEach(function (b) {
      b.addEventListener("click", function () { select(b.getAttribute("data-fid"), true); });
    });
    all(section, "a.jump").forEach(function (a) {
      a.addEventListener("click", function () { select(a.getAttribute("data-fid"), true); });
    });

    function visible(node) {
      return !node.closest(".off") && getComputedStyle(node).display !== "none";
    }
    function pick(cx, cy, target) {
      var p = toUser(cx, cy);
      var tol = 9 * unitsPerPx();
      var layers = [], sensors = [], found = [];
      document.elementsFromPoint(cx, cy).forEach(function (e) {
        if (!svg.contains(e)) { return; }
        var g = e.closest("[data-layer]");
        if (g && g.classList.contains("copper")) {
          var name = g.getAttribute("data-layer");
          if (layers.indexOf(name) < 0) { layers.push(name); }
        }
        var s = e.closest("[data-sensor]");
        if (s) {
          var sn = s.getAttribute("data-sensor");
          if (sensors.indexOf(sn) < 0) { sensors.push(sn); }
        }
      });
      data.findings.forEach(function (f) {
        var mark = svg.querySelector('.fmark[data-fid="' + f.id + '"]');
        if (!mark || !visible(mark)) { return; }
        var b = f.box;
        var near = Math.abs(f.x - p.x) <= tol && Math.abs(f.y - p.y) <= tol;
        var inside = b && p.x >= b[0] - tol && p.x <= b[2] + tol && p.y >= b[1] - tol && p.y <= b[3] + tol;
        if (near || inside) { found.push(f); }
      });
      here.textContent = "";
      here.appendChild(el("p", null, "At x " + mm(p.x) + ", y " + mm(-p.y) + " mm:"));
      var ul = el("ul");
      ul.appendChild(el("li", null, layers.length ? "copper on " + layers.join(", ") : "no copper drawn here"));
      if (sensors.length) { ul.appendChild(el("li", null, "sensor " + sensors.join(", "))); }
      found.forEach(function (f) {
        var li = el("li");
        var b = el("button", null, "[" + f.severity + (f.waived ? ", waived" : "") + "] " + f.rule + ": " + f.message);
        b.type = "button";
        b.addEventListener("click", function () {
          var item = select(f.id, true);
          if (item) { item.scrollIntoView({ block: "nearest" }); }
        });
        li.appendChild(b);
        ul.appendChild(li);
      });
      if (!found.length) { ul.appendChild(el("li", "muted", "no findings here")); }
      here.appendChild(ul);
      if (found.length === 1) {
        var item = select(found[0].id, false);
        if (item) { item.scrollIntoView({ block: "nearest" }); }
      }
    }

    window.addEventListener("resize", rescale);
    setView(home.slice());
  }

  function start() {
    all(document, "section.board").forEach(function (s) { Board(s); });
    document.documentElement.setAttribute("data-ready", "1");
  }
  if (document.readyState === "loading") {
    document.addEventListener("DOMContentLoaded", start);
  } else {
    start();
  }
})();
