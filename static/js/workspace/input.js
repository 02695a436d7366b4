/* The inspector's hands: pointer and keyboard on the canvas, the tool buttons, the span,
   palette and zoom controls, the scale bar drag and the overlay switches. */

import { call } from "./hooks.js";
import {
  createMark, deleteMark, finishPolygon, hitMark, hitVertex, select, selected, shiftMark,
  updateMark
} from "./marks.js";
import { alignClickThermogram } from "./photo.js";
import { draw, fit, oneToOne, renderPicture, showReadout, zoomAt } from "./rendering.js";
import { api } from "./server.js";
import { spanCoveringMarks } from "./span.js";
import {
  $, canvas, scaleBar, state, HANDLE_PX, TOOLS,
  clampPixel, fmtT, fmtTU, fromUnit, inside, status, toImage, toScreen
} from "./state.js";
import { roundC } from "./units.js";

// --- mouse -------------------------------------------------------------------------------

function eventPoint(event) {
  var rect = canvas.getBoundingClientRect();
  return [event.clientX - rect.left, event.clientY - rect.top];
}

canvas.addEventListener("pointerdown", function (event) {
  if (!state.temps) { return; }
  canvas.focus();
  var s = eventPoint(event), p = toImage(s[0], s[1]);
  state.cursor = null;
  if (event.button === 1 || event.button === 2 || (event.button === 0 && event.shiftKey && state.tool === "select")) {
    state.drag = { type: "pan", start: s, panX: state.panX, panY: state.panY };
    canvas.classList.add("ws-panning");
    canvas.setPointerCapture(event.pointerId);
    return;
  }
  if (event.button !== 0) { return; }
  if (state.aligning) { alignClickThermogram(p); return; }
  if (state.tool === "select") {
    var current = selected(), vertex = hitVertex(current, s[0], s[1]);
    if (vertex >= 0) {
      state.drag = { type: "vertex", mark: current, vertex: vertex, original: current.points.map(function (q) { return q.slice(); }), moved: false };
    } else {
      var mark = hitMark(s[0], s[1]);
      if (mark) {
        select(mark.id);
        state.drag = { type: "move", mark: mark, start: p, original: mark.points.map(function (q) { return q.slice(); }), moved: false };
      } else {
        if (state.selectedId !== null) { select(null); }
        state.drag = { type: "pan", start: s, panX: state.panX, panY: state.panY };
        canvas.classList.add("ws-panning");
      }
    }
    canvas.setPointerCapture(event.pointerId);
    return;
  }
  if (!inside(p)) { return; }
  var q = clampPixel(p);
  if (state.tool === "point") {
    createMark("point", [q]);
  } else if (state.tool === "polygon") {
    if (!state.drawing) { state.drawing = { kind: "polygon", points: [q] }; } else {
      var first = toScreen(state.drawing.points[0][0], state.drawing.points[0][1]);
      var last = state.drawing.points[state.drawing.points.length - 1];
      if (state.drawing.points.length >= 3 && Math.hypot(s[0] - first[0], s[1] - first[1]) <= HANDLE_PX) {
        finishPolygon();
        return;
      }
      if (last[0] !== q[0] || last[1] !== q[1]) { state.drawing.points.push(q); }
    }
    draw();
  } else {
    state.drawing = { kind: state.tool, points: [q, q.slice()] };
    state.drag = { type: "draw" };
    canvas.setPointerCapture(event.pointerId);
    draw();
  }
});

canvas.addEventListener("pointermove", function (event) {
  if (!state.temps) { return; }
  var s = eventPoint(event), p = toImage(s[0], s[1]), drag = state.drag;
  showReadout(p);
  if (!drag) {
    if (state.tool === "polygon" && state.drawing) { state.hover = clampPixel(p); }
    return;
  }
  if (drag.type === "pan") {
    state.panX = drag.panX + s[0] - drag.start[0];
    state.panY = drag.panY + s[1] - drag.start[1];
    state.fitted = false;
    draw();
  } else if (drag.type === "draw") {
    state.drawing.points[1] = clampPixel(p);
    draw();
  } else if (drag.type === "vertex") {
    drag.mark.points[drag.vertex] = clampPixel(p);
    drag.moved = true;
    draw();
  } else if (drag.type === "move") {
    var dx = Math.round(p[0] - drag.start[0]), dy = Math.round(p[1] - drag.start[1]);
    var xs = drag.original.map(function (q) { return q[0]; }), ys = drag.original.map(function (q) { return q[1]; });
    dx = Math.max(-Math.min.apply(null, xs), Math.min(state.w - 1 - Math.max.apply(null, xs), dx));
    dy = Math.max(-Math.min.apply(null, ys), Math.min(state.h - 1 - Math.max.apply(null, ys), dy));
    drag.mark.points = drag.original.map(function (q) { return [q[0] + dx, q[1] + dy]; });
    drag.moved = dx !== 0 || dy !== 0;
    draw();
  }
});

function endDrag() {
  var drag = state.drag;
  state.drag = null;
  canvas.classList.remove("ws-panning");
  if (!drag) { return; }
  if (drag.type === "draw") {
    var pts = state.drawing.points;
    var same = pts[0][0] === pts[1][0] && pts[0][1] === pts[1][1];
    if (same && state.drawing.kind !== "rectangle") { state.drawing = null; draw(); status("Drag to draw: the two ends must differ."); return; }
    createMark(state.drawing.kind, pts);
  } else if ((drag.type === "move" || drag.type === "vertex") && drag.moved) {
    updateMark(drag.mark, { points: drag.mark.points }, "Mark " + drag.mark.label + " changed.", { points: drag.original });
  }
}
canvas.addEventListener("pointerup", endDrag);
canvas.addEventListener("pointercancel", endDrag);
canvas.addEventListener("pointerleave", function () { if (!state.drag) { showReadout(null); } });
canvas.addEventListener("contextmenu", function (event) { event.preventDefault(); });
canvas.addEventListener("dblclick", function () { if (state.drawing && state.drawing.kind === "polygon") { finishPolygon(); } });
canvas.addEventListener("wheel", function (event) {
  if (!state.temps) { return; }
  event.preventDefault();
  var s = eventPoint(event);
  zoomAt(event.deltaY < 0 ? 1.25 : 0.8, s[0], s[1]);
}, { passive: false });

// --- keyboard ------------------------------------------------------------------------------

/* A finger on the picture draws only while a drawing tool is chosen (or points are being
   matched with the photo); with Pick it scrolls the page like anywhere else. */
export function touchDrawing() {
  canvas.classList.toggle("ws-drawing", state.tool !== "select" || !!state.aligning);
}

export function setTool(tool) {
  state.tool = tool;
  state.drawing = null;
  document.querySelectorAll(".ws-tools button[data-tool]").forEach(function (button) {
    button.setAttribute("aria-pressed", button.dataset.tool === tool ? "true" : "false");
  });
  canvas.classList.toggle("ws-picking", tool === "select");
  touchDrawing();
  draw();
}

function keyboardPlace() {
  var p = state.cursor;
  if (state.tool === "select") {
    var s = toScreen(p[0], p[1]), mark = hitMark(s[0], s[1]);
    select(mark ? mark.id : null);
    return;
  }
  if (state.tool === "point") { createMark("point", [p.slice()]); return; }
  if (state.tool === "polygon") {
    if (!state.drawing) { state.drawing = { kind: "polygon", points: [] }; }
    state.drawing.points.push(p.slice());
    status("Corner " + state.drawing.points.length + " placed; press C to close the polygon.");
    draw();
    return;
  }
  if (!state.drawing) {
    state.drawing = { kind: state.tool, points: [p.slice(), p.slice()] };
    status("First end placed; move the cross-hair and press Enter again.");
    draw();
  } else {
    state.drawing.points[1] = p.slice();
    createMark(state.drawing.kind, state.drawing.points);
  }
}

function cycleMark(step) {
  if (!state.marks.length) { return; }
  var index = state.marks.findIndex(function (m) { return m.id === state.selectedId; });
  index = index < 0 ? (step > 0 ? 0 : state.marks.length - 1) : (index + step + state.marks.length) % state.marks.length;
  select(state.marks[index].id);
  status("Mark " + state.marks[index].label + " picked.");
}

// Single-key shortcuts (WCAG 2.1.4) act only here, while the picture has focus: typing in a
// field or anywhere else on the page never chooses a tool or zooms.
function toolOrViewKey(event) {
  if (event.ctrlKey || event.metaKey || event.altKey) { return false; }
  var index = "123456".indexOf(event.key);
  if (index >= 0 && event.key.length === 1) { setTool(TOOLS[index]); return true; }
  var views = { "+": function () { zoomAt(1.25); }, "-": function () { zoomAt(0.8); }, "0": fit, "=": oneToOne };
  if (views[event.key]) { event.preventDefault(); views[event.key](); return true; }
  return false;
}

canvas.addEventListener("keydown", function (event) {
  if (!state.temps) { return; }
  if (toolOrViewKey(event)) { return; }
  var key = event.key, step = event.shiftKey ? 10 : 1, mark = selected();
  var arrows = { ArrowLeft: [-1, 0], ArrowRight: [1, 0], ArrowUp: [0, -1], ArrowDown: [0, 1] };
  if (arrows[key]) {
    event.preventDefault();
    var d = arrows[key];
    if (mark && state.tool === "select" && !state.cursor) {
      shiftMark(mark, d[0] * step, d[1] * step, event.altKey ? mark.points.length - 1 : undefined);
      return;
    }
    var c = state.cursor || clampPixel([state.w / 2, state.h / 2]);
    state.cursor = clampPixel([c[0] + d[0] * step, c[1] + d[1] * step]);
    if (state.drawing && state.drawing.kind !== "polygon") { state.drawing.points[1] = state.cursor.slice(); }
    showReadout(state.cursor);
    draw();
  } else if (key === "Enter") {
    event.preventDefault();
    if (!state.cursor) { state.cursor = clampPixel([state.w / 2, state.h / 2]); draw(); return; }
    if (state.aligning) { alignClickThermogram(state.cursor); return; }
    keyboardPlace();
  } else if (key === "Delete" || key === "Backspace") {
    event.preventDefault();
    deleteMark(mark);
  } else if (key === "Escape") {
    if (state.drawing) { state.drawing = null; status("Drawing stopped."); } else if (state.cursor) { state.cursor = null; } else { select(null); }
    draw();
  } else if ((key === "c" || key === "C") && state.drawing && state.drawing.kind === "polygon") {
    finishPolygon();
  } else if (key === "]") { cycleMark(1); } else if (key === "[") { cycleMark(-1); }
});

// Page Up and Page Down are not character keys: they move between thermograms from anywhere
// but a field (where they move the text cursor).
document.addEventListener("keydown", function (event) {
  var target = event.target;
  if (event.ctrlKey || event.metaKey || event.altKey) { return; }
  if (target && (target.tagName === "INPUT" || target.tagName === "TEXTAREA" || target.tagName === "SELECT")) { return; }
  if (event.key === "PageUp") { event.preventDefault(); call("goTo", "previous"); } else if (event.key === "PageDown") { event.preventDefault(); call("goTo", "next"); }
});

document.querySelectorAll(".ws-tools button[data-tool]").forEach(function (button) {
  button.addEventListener("click", function () { setTool(button.dataset.tool); canvas.focus(); });
});

// --- span, palette, zoom controls ------------------------------------------------------------

export function syncSpanInputs() {
  $("ws-low").value = fmtT(state.low);
  $("ws-high").value = fmtT(state.high);
  $("ws-iso-low").value = fmtT(state.isoLow);
  $("ws-iso-high").value = fmtT(state.isoHigh);
}

export function setSpan(low, high, auto) {
  if (!(high > low)) { status("The top of the scale must be above its bottom.", true); syncSpanInputs(); return; }
  state.low = low; state.high = high;
  state.autoSpan = !!auto;
  syncSpanInputs();
  renderPicture();
}

$("ws-low").addEventListener("change", function () { setSpan(fromUnit(parseFloat(this.value)), state.high); });
$("ws-high").addEventListener("change", function () { setSpan(state.low, fromUnit(parseFloat(this.value))); });
// The server's automatic span covers the saved marks; marks drawn since are covered here.
$("ws-auto").addEventListener("click", function () { var s = spanCoveringMarks(state.meta.display.auto_span, state.marks); setSpan(s[0], s[1], true); });
$("ws-palette").addEventListener("change", function () { call("setPalette", this.value); renderPicture(); });

// The palette and span on screen become the thermogram's own: its preview, the survey
// page's thumbnail and the report are drawn with them.
export function showSavedView(meta) {
  var d = meta.display;
  $("ws-view-note").textContent = "Saved view: " + d.palette + ", " + (d.span_low_c === null || d.span_high_c === null
    ? "automatic span" : fmtT(d.span_low_c) + " to " + fmtTU(d.span_high_c)) + ".";
}

$("ws-save-view").addEventListener("click", function () {
  if (!state.meta) { return; }
  var body = {
    palette: state.palette,
    span_low_c: state.autoSpan ? null : roundC(state.low),
    span_high_c: state.autoSpan ? null : roundC(state.high)
  };
  var button = this;
  button.disabled = true;
  api("PATCH", state.meta.urls.self, body).then(function (meta) {
    state.meta.display = meta.display;
    showSavedView(meta);
    status("View saved: the preview, the survey page and the report now use it.");
  }).catch(function (error) { status(error.message, true); })
    .then(function () { button.disabled = false; });
});

$("ws-fit").addEventListener("click", fit);
$("ws-one").addEventListener("click", oneToOne);
$("ws-zoom-in").addEventListener("click", function () { zoomAt(1.25); });
$("ws-zoom-out").addEventListener("click", function () { zoomAt(0.8); });

scaleBar.addEventListener("pointerdown", function (event) {
  if (!state.temps) { return; }
  var rect = scaleBar.getBoundingClientRect(), y = (event.clientY - rect.top) / rect.height;
  var end = y < 0.25 ? "high" : (y > 0.75 ? "low" : "both");
  state.drag = { type: "span", end: end, y: event.clientY, low: state.low, high: state.high, height: rect.height };
  scaleBar.setPointerCapture(event.pointerId);
});
scaleBar.addEventListener("pointermove", function (event) {
  var drag = state.drag;
  if (!drag || drag.type !== "span") { return; }
  var dt = -(event.clientY - drag.y) / drag.height * (drag.high - drag.low);
  var low = drag.low + (drag.end !== "high" ? dt : 0), high = drag.high + (drag.end !== "low" ? dt : 0);
  if (high - low > 0.05) { state.low = low; state.high = high; state.autoSpan = false; syncSpanInputs(); renderPicture(); }
});
scaleBar.addEventListener("pointerup", function () { state.drag = null; });

// --- overlays ------------------------------------------------------------------------------

export function setupOverlays(meta) {
  var cond = meta.condensation;
  $("ws-cond").disabled = !cond.available;
  if (!cond.available) { state.cond = false; $("ws-cond").checked = false; }
  $("ws-cond-note").textContent = cond.available
    ? "Indoor air " + fmtTU(cond.indoor_air_c) + ", " + cond.indoor_rh_pct + " % RH: mould risk at surfaces below " +
      fmtTU(cond.surface_c.rh80) + ", condensation at or below " + fmtTU(cond.surface_c.rh100) + " (the " + (cond.rh100_name || "dew point") +
      "; saturation over ice below " + fmtTU(0) + "), at the thermogram's ε."
    : cond.reason;
  $("ws-cond-legend").hidden = !cond.available;
  var mould = meta.colours.mould_risk, wet = meta.colours.condensation, iso = meta.colours.isotherm;
  $("ws-swatch-mould").style.background = "rgb(" + mould.join(",") + ")";
  $("ws-swatch-wet").style.background = "rgb(" + wet.join(",") + ")";
  $("ws-iso").parentNode.style.borderLeft = "6px solid rgb(" + iso.join(",") + ")";
}

$("ws-iso").addEventListener("change", function () { state.iso = this.checked; renderPicture(); });
$("ws-cond").addEventListener("change", function () { state.cond = this.checked; renderPicture(); });
function isoInputs() {
  var low = fromUnit(parseFloat($("ws-iso-low").value)), high = fromUnit(parseFloat($("ws-iso-high").value));
  if (!(high >= low)) { status("The isotherm's upper limit must be at or above its lower one.", true); return; }
  state.isoLow = low; state.isoHigh = high;
  if (!state.iso) { state.iso = true; $("ws-iso").checked = true; }
  renderPicture();
}
$("ws-iso-low").addEventListener("change", isoInputs);
$("ws-iso-high").addEventListener("change", isoInputs);
