/* Drawing the workspace: the coloured picture, the scale bar, marks and pins over it, the
   view (fit, zoom, pan) and the readout under the cursor. */

import { placeLabels } from "./labels.js";
import { apparentAt, correctedFrom } from "./readout.js";
import {
  $, canvas, ctx, drawHooks, scaleBar, picture, photoImg, state,
  MARK_COLOUR, SELECTED_COLOUR, OUTLINE_COLOUR,
  clampPixel, fmtTU, inside, toScreen
} from "./state.js";

export function renderPicture() {
  var meta = state.meta, temps = state.temps, lut = state.lut;
  var size = lut.length / 3, image = new ImageData(state.w, state.h), data = image.data;
  var low = state.low, factor = (size - 1) / (state.high - state.low);
  var none = meta.colours.no_data, iso = meta.colours.isotherm;
  var mould = meta.colours.mould_risk, wet = meta.colours.condensation;
  var cond = state.cond && meta.condensation.available ? meta.condensation.apparent_c : null;
  var isoOn = state.iso, isoLow = state.isoLow, isoHigh = state.isoHigh;
  for (var i = 0, n = temps.length; i < n; i++) {
    var t = temps[i], o = i * 4, r, g, b;
    if (t !== t) {
      r = none[0]; g = none[1]; b = none[2];
    } else if (cond && t <= cond.rh100) {
      r = wet[0]; g = wet[1]; b = wet[2];
    } else if (cond && t <= cond.rh80) {
      r = mould[0]; g = mould[1]; b = mould[2];
    } else if (isoOn && t >= isoLow && t <= isoHigh) {
      r = iso[0]; g = iso[1]; b = iso[2];
    } else {
      var k = (t - low) * factor;
      k = k < 0 ? 0 : (k > size - 1 ? size - 1 : k);
      k = Math.floor(k + 0.5) * 3;
      r = lut[k]; g = lut[k + 1]; b = lut[k + 2];
    }
    data[o] = r; data[o + 1] = g; data[o + 2] = b; data[o + 3] = 255;
  }
  picture.getContext("2d").putImageData(image, 0, 0);
  drawScaleBar();
  draw();
}

export function drawScaleBar() {
  var c = scaleBar.getContext("2d"), h = scaleBar.height, w = scaleBar.width, lut = state.lut;
  var size = lut.length / 3;
  for (var y = 0; y < h; y++) {
    var k = Math.round((1 - y / (h - 1)) * (size - 1)) * 3;
    c.fillStyle = "rgb(" + lut[k] + "," + lut[k + 1] + "," + lut[k + 2] + ")";
    c.fillRect(0, y, w, 1);
  }
}

export function resize() {
  var wrap = $("ws-canvas-wrap");
  var dpr = window.devicePixelRatio || 1;
  var width = Math.max(200, wrap.clientWidth);
  // Leave room under the picture for the readout and the first rows of the readings.
  var top = wrap.getBoundingClientRect().top + window.scrollY;
  var height = Math.max(260, Math.min(window.innerHeight - top - 150,
    state.w ? width * state.h / state.w + 20 : 600));
  canvas.style.width = width + "px";
  canvas.style.height = height + "px";
  canvas.width = Math.round(width * dpr);
  canvas.height = Math.round(height * dpr);
  scaleBar.height = Math.max(120, Math.round(height - 80));
  scaleBar.style.height = scaleBar.height + "px";
  ctx.setTransform(dpr, 0, 0, dpr, 0, 0);
  if (state.lut) { drawScaleBar(); }
  if (state.fitted) { fit(); } else { draw(); }
}

export function viewSize() { return { w: canvas.width / (window.devicePixelRatio || 1), h: canvas.height / (window.devicePixelRatio || 1) }; }

export function fit() {
  if (!state.w) { return; }
  var v = viewSize();
  state.zoom = Math.min(v.w / state.w, v.h / state.h);
  state.panX = (v.w - state.w * state.zoom) / 2;
  state.panY = (v.h - state.h * state.zoom) / 2;
  state.fitted = true;
  draw();
}

export function zoomAt(factor, sx, sy) {
  var v = viewSize();
  if (sx === undefined) { sx = v.w / 2; sy = v.h / 2; }
  var zoom = Math.max(0.1, Math.min(64, state.zoom * factor));
  state.panX = sx - (sx - state.panX) * zoom / state.zoom;
  state.panY = sy - (sy - state.panY) * zoom / state.zoom;
  state.zoom = zoom;
  state.fitted = false;
  draw();
}

export function oneToOne() { zoomAt((1 / (window.devicePixelRatio || 1)) / state.zoom); }

export function draw() {
  var v = viewSize();
  ctx.clearRect(0, 0, v.w, v.h);
  if (!state.temps) { return; }
  var meta = state.meta, w = state.w * state.zoom, h = state.h * state.zoom;
  var blended = state.photoMode === "blend" && meta.photo && meta.photo.alignment && photoImg.complete && photoImg.naturalWidth;
  if (blended) {
    var m = meta.photo.alignment.matrix, z = state.zoom;
    ctx.save();
    // photo px -> thermogram px (matrix) -> screen; pixel centres sit at +0.5.
    ctx.transform(z, 0, 0, z, state.panX + 0.5 * z, state.panY + 0.5 * z);
    ctx.transform(m[0][0], m[1][0], m[0][1], m[1][1], m[0][2], m[1][2]);
    ctx.drawImage(photoImg, 0, 0);
    ctx.restore();
    ctx.globalAlpha = state.blend;
  }
  ctx.imageSmoothingEnabled = false;
  ctx.drawImage(picture, state.panX, state.panY, w, h);
  ctx.globalAlpha = 1;
  $("ws-zoom").textContent = Math.round(state.zoom * (window.devicePixelRatio || 1) * 100) + " %";
  state.marks.forEach(function (mark) { drawMark(mark, mark.id === state.selectedId); });
  drawLabels(state.marks, v);
  drawHooks.forEach(function (hook) { hook(); });
  if (state.drawing) { drawShape(state.drawing.kind, state.drawing.points, SELECTED_COLOUR, null, true); }
  if (state.cursor) { drawCursor(state.cursor); }
  if (state.aligning) {
    state.aligning.pairs.forEach(function (pair, i) { drawPin(pair[1], String(i + 1)); });
    if (state.aligning.pending) { drawPin(state.aligning.pending, String(state.aligning.pairs.length + 1)); }
  }
}

export function drawPin(p, text) {
  var s = toScreen(p[0], p[1]);
  ctx.strokeStyle = "#ff00ff"; ctx.lineWidth = 2;
  ctx.beginPath(); ctx.arc(s[0], s[1], 6, 0, Math.PI * 2); ctx.stroke();
  ctx.fillStyle = "#ff00ff"; ctx.font = "bold 13px sans-serif"; ctx.fillText(text, s[0] + 8, s[1] - 8);
}

export function drawCursor(p) {
  var s = toScreen(p[0], p[1]);
  ctx.strokeStyle = "#ffffff"; ctx.lineWidth = 1;
  ctx.beginPath();
  ctx.moveTo(s[0] - 12, s[1]); ctx.lineTo(s[0] - 3, s[1]); ctx.moveTo(s[0] + 3, s[1]); ctx.lineTo(s[0] + 12, s[1]);
  ctx.moveTo(s[0], s[1] - 12); ctx.lineTo(s[0], s[1] - 3); ctx.moveTo(s[0], s[1] + 3); ctx.lineTo(s[0], s[1] + 12);
  ctx.stroke();
}

export function shapePath(kind, points, singlePixel) {
  var z = state.zoom, s;
  ctx.beginPath();
  if (kind === "point") {
    s = toScreen(points[0][0], points[0][1]);
    var half = (singlePixel ? 0.5 : 1.5) * z;
    ctx.rect(s[0] - half, s[1] - half, 2 * half, 2 * half);
    var arm = Math.max(half + 6, 10);
    ctx.moveTo(s[0] - arm, s[1]); ctx.lineTo(s[0] - half, s[1]);
    ctx.moveTo(s[0] + half, s[1]); ctx.lineTo(s[0] + arm, s[1]);
    ctx.moveTo(s[0], s[1] - arm); ctx.lineTo(s[0], s[1] - half);
    ctx.moveTo(s[0], s[1] + half); ctx.lineTo(s[0], s[1] + arm);
  } else if ((kind === "rectangle" || kind === "ellipse") && points.length >= 2) {
    var a = toScreen(Math.min(points[0][0], points[1][0]), Math.min(points[0][1], points[1][1]));
    var b = toScreen(Math.max(points[0][0], points[1][0]), Math.max(points[0][1], points[1][1]));
    if (kind === "rectangle") {
      ctx.rect(a[0] - z / 2, a[1] - z / 2, b[0] - a[0] + z, b[1] - a[1] + z);
    } else {
      ctx.ellipse((a[0] + b[0]) / 2, (a[1] + b[1]) / 2, Math.max(0.5, (b[0] - a[0]) / 2), Math.max(0.5, (b[1] - a[1]) / 2), 0, 0, Math.PI * 2);
    }
  } else {
    points.forEach(function (p, i) {
      s = toScreen(p[0], p[1]);
      if (i === 0) { ctx.moveTo(s[0], s[1]); } else { ctx.lineTo(s[0], s[1]); }
    });
    if (kind === "polygon" && points.length > 2) { ctx.closePath(); }
  }
}

export function drawShape(kind, points, colour, singlePixel, open) {
  if (!points.length) { return; }
  var shownKind = open && kind === "polygon" ? "line" : kind;
  shapePath(shownKind, points, singlePixel);
  // Dark outline, white halo, coloured core, as the printed report draws marks
  // (survey/thermal/drawing.py): the lightness contrast holds for red-green colour-blind eyes.
  ctx.lineWidth = 6; ctx.strokeStyle = OUTLINE_COLOUR; ctx.stroke();
  ctx.lineWidth = 4; ctx.strokeStyle = "#ffffff"; ctx.stroke();
  ctx.lineWidth = 2; ctx.strokeStyle = colour; ctx.stroke();
}

export function drawMark(mark, selected) {
  var colour = selected ? SELECTED_COLOUR : MARK_COLOUR;
  drawShape(mark.kind, mark.points, colour, mark.single_pixel, false);
  if (selected && mark.kind !== "point") {
    mark.points.forEach(function (p) {
      var s = toScreen(p[0], p[1]);
      ctx.fillStyle = SELECTED_COLOUR; ctx.strokeStyle = OUTLINE_COLOUR; ctx.lineWidth = 1;
      ctx.fillRect(s[0] - 4, s[1] - 4, 8, 8); ctx.strokeRect(s[0] - 4, s[1] - 4, 8, 8);
    });
  }
}

var LABEL_FONT = "bold 15px sans-serif", LABEL_HEIGHT = 16;

/* A mark's outline in screen px, as labels.js wants it (the same outline shapePath draws). */
export function labelShape(mark) {
  var z = state.zoom, pts = mark.points.map(function (p) { return toScreen(p[0], p[1]); });
  if (mark.kind === "rectangle" || mark.kind === "ellipse") {
    var x0 = Math.min(pts[0][0], pts[1][0]), y0 = Math.min(pts[0][1], pts[1][1]);
    var x1 = Math.max(pts[0][0], pts[1][0]), y1 = Math.max(pts[0][1], pts[1][1]);
    var pad = mark.kind === "rectangle" ? z / 2 : 0;
    return { kind: mark.kind, box: [x0 - pad, y0 - pad, x1 + pad, y1 + pad] };
  }
  if (mark.kind === "polygon") { return { kind: "polygon", corners: pts }; }
  if (mark.kind === "point") {
    var arm = Math.max((mark.single_pixel ? 0.5 : 1.5) * z + 6, 10);
    return { kind: "point", anchor: pts[0], box: [pts[0][0] - arm, pts[0][1] - arm, pts[0][0] + arm, pts[0][1] + arm] };
  }
  return { kind: "line", anchor: pts[0] };
}

/* Every mark's label, placed by labels.js so that none covers another or leaves its outline. */
export function drawLabels(marks, view) {
  ctx.font = LABEL_FONT;
  var items = marks.map(function (mark) {
    return { shape: labelShape(mark), w: Math.ceil(ctx.measureText(mark.label).width) + 2, h: LABEL_HEIGHT };
  });
  var placed = placeLabels(items, view);
  ctx.textBaseline = "top";
  marks.forEach(function (mark, i) {
    var p = placed[i], colour = mark.id === state.selectedId ? SELECTED_COLOUR : MARK_COLOUR;
    if (p.leader) {
      ctx.beginPath(); ctx.moveTo(p.leader.from[0], p.leader.from[1]); ctx.lineTo(p.leader.to[0], p.leader.to[1]);
      ctx.lineWidth = 3; ctx.strokeStyle = OUTLINE_COLOUR; ctx.stroke();
      ctx.lineWidth = 1; ctx.strokeStyle = colour; ctx.stroke();
    }
    ctx.lineWidth = 3; ctx.strokeStyle = OUTLINE_COLOUR; ctx.strokeText(mark.label, p.x + 1, p.y + 1);
    ctx.fillStyle = colour; ctx.fillText(mark.label, p.x + 1, p.y + 1);
  });
  ctx.textBaseline = "alphabetic";
}

export function showReadout(p) {
  if (!p || !inside(p)) { $("ws-readout").textContent = "Point at the picture to read temperatures."; return; }
  var q = clampPixel(p), t = apparentAt(state.temps, state.w, state.h, q);
  if (t !== t) { $("ws-readout").textContent = "x " + q[0] + ", y " + q[1] + " · no reading at this pixel"; return; }
  var corrected = correctedFrom(state.meta.correction, t);
  $("ws-readout").textContent = "x " + q[0] + ", y " + q[1] + " · apparent " + fmtTU(t) +
    " · corrected " + (corrected === null ? "not computable at this ε" : fmtTU(corrected)) +
    " (ε " + state.meta.capture.emissivity + ", reflected " + fmtTU(state.meta.capture.reflected_c) + ")";
}
