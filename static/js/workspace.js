/* The thermogram workspace: draws the °C array on a canvas, lets the inspector place marks
   and shows the server's readings. No framework; all numbers shown in the table come from
   the server (/api/...), the canvas only colours pixels and reads the value under the cursor. */
(function () {
  "use strict";

  var root = document.getElementById("workspace");
  if (!root) { return; }

  function $(id) { return document.getElementById(id); }

  var canvas = $("ws-canvas");
  var ctx = canvas.getContext("2d");
  var scaleBar = $("ws-scalebar");
  var picture = document.createElement("canvas"); // the thermogram at 1 canvas px per pixel
  var photoImg = $("ws-photo");

  var TOOLS = ["select", "point", "rectangle", "ellipse", "polygon", "line"];
  var HANDLE_PX = 7;
  var MARK_COLOUR = "#00ff00";
  var SELECTED_COLOUR = "#ffe600";
  var OUTLINE_COLOUR = "#003300";

  var state = {
    meta: null, temps: null, w: 0, h: 0,
    palette: null, low: 0, high: 1, lut: null, autoSpan: true,
    zoom: 1, panX: 0, panY: 0, fitted: true,
    tool: "select", marks: [], selectedId: null,
    drawing: null,            // {kind, points}: a mark being drawn
    drag: null,               // {type: "pan" | "move" | "vertex" | "span", ...}
    cursor: null,             // keyboard cross-hair, image pixel coordinates
    hover: null,
    iso: false, isoLow: null, isoHigh: null,
    cond: false,
    photoMode: "none", blend: 0.6, aligning: null,
    unit: "C", busy: false
  };

  // --- units and formatting -----------------------------------------------------------

  function toUnit(c) { return state.unit === "F" ? c * 9 / 5 + 32 : c; }
  function fromUnit(v) { return state.unit === "F" ? (v - 32) * 5 / 9 : v; }
  function unitLabel() { return state.unit === "F" ? "°F" : "°C"; }
  function fmtT(c, digits) {
    if (c === null || c === undefined || !isFinite(c)) { return "–"; }
    return toUnit(c).toFixed(digits === undefined ? 1 : digits);
  }
  function fmtTU(c) { return c === null || c === undefined ? "–" : fmtT(c) + " " + unitLabel(); }
  function fmtDelta(k) {
    if (k === null || k === undefined) { return "–"; }
    var v = state.unit === "F" ? k * 9 / 5 : k;
    return (v > 0 ? "+" : "") + v.toFixed(1) + (state.unit === "F" ? " °F" : " K");
  }
  function fmtNum(v, digits, suffix) {
    if (v === null || v === undefined) { return "–"; }
    return v.toFixed(digits) + (suffix || "");
  }

  function status(message, isError) {
    var el = $("ws-status");
    el.textContent = message || "";
    el.className = "ws-status" + (isError ? " ws-error" : "");
  }

  // --- server -------------------------------------------------------------------------

  function csrfToken() {
    var match = document.cookie.match(/(?:^|;\s*)csrftoken=([^;]+)/);
    return match ? decodeURIComponent(match[1]) : "";
  }

  function errorText(data, response) {
    if (data && data.error) {
      var fields = data.fields || {};
      var extra = Object.keys(fields).filter(function (k) { return data.error.indexOf(fields[k]) < 0; })
        .map(function (k) { return k + ": " + fields[k]; });
      return data.error + (extra.length ? " (" + extra.join("; ") + ")" : "");
    }
    return "The server answered " + response.status + ".";
  }

  function api(method, url, body) {
    var options = { method: method, credentials: "same-origin", headers: { "Accept": "application/json" } };
    if (body !== undefined) {
      options.headers["Content-Type"] = "application/json";
      options.body = JSON.stringify(body);
    }
    if (method !== "GET") { options.headers["X-CSRFToken"] = csrfToken(); }
    return fetch(url, options).then(function (response) {
      if (response.status === 204) { return null; }
      return response.json().catch(function () { return null; }).then(function (data) {
        if (!response.ok) { throw new Error(errorText(data, response)); }
        return data;
      });
    });
  }

  // --- loading --------------------------------------------------------------------------

  function load(apiUrl, pushHistory) {
    status("Loading…");
    return api("GET", apiUrl).then(function (meta) {
      if (meta.status !== "ready") {
        state.meta = meta;
        status("This thermogram is " + meta.status_label.toLowerCase() + (meta.error ? ": " + meta.error : "."), true);
        showHeader(meta);
        return null;
      }
      return fetch(meta.urls.temperatures, { credentials: "same-origin" }).then(function (response) {
        if (!response.ok) { throw new Error("Could not load the temperatures (" + response.status + ")."); }
        return response.arrayBuffer();
      }).then(function (buffer) {
        var temps = new Float32Array(buffer);
        if (temps.length !== meta.width * meta.height) { throw new Error("The temperature array has the wrong size."); }
        start(meta, temps);
        if (pushHistory) { history.pushState({ api: apiUrl }, "", meta.urls.page); }
        status("");
      });
    }).catch(function (error) { status(error.message, true); });
  }

  function start(meta, temps) {
    state.meta = meta;
    state.temps = temps;
    state.w = meta.width;
    state.h = meta.height;
    state.unit = meta.unit === "F" ? "F" : "C";
    state.marks = meta.marks;
    state.selectedId = null;
    state.drawing = null;
    state.cursor = null;
    state.aligning = null;
    var span = (meta.display.span_low_c !== null && meta.display.span_high_c !== null)
      ? [meta.display.span_low_c, meta.display.span_high_c] : meta.display.auto_span;
    state.low = span[0];
    state.high = span[1];
    state.autoSpan = meta.display.span_low_c === null || meta.display.span_high_c === null;
    $("ws-view-row").hidden = !meta.can_edit;
    showSavedView(meta);
    if (state.isoLow === null || state.isoLow < meta.min_c || state.isoHigh > meta.max_c) {
      state.isoHigh = meta.max_c;
      state.isoLow = meta.max_c - (meta.max_c - meta.min_c) * 0.1;
    }
    picture.width = state.w;
    picture.height = state.h;
    fillPalettes(meta);
    showHeader(meta);
    setupOverlays(meta);
    setupPhoto(meta);
    document.querySelectorAll(".ws-unit").forEach(function (el) { el.textContent = unitLabel(); });
    $("ws-settings").textContent = "Thermogram ε " + meta.capture.emissivity + ", reflected " +
      fmtTU(meta.capture.reflected_c) + ", transmittance " + meta.capture.transmittance +
      (meta.survey.reference_air_c !== null ? "; air " + fmtTU(meta.survey.reference_air_c) : "") +
      ". Corrected values use each mark's own ε and reflected temperature when set.";
    resize();
    fit();
    renderPicture();
    syncSpanInputs();
    refreshTable();
  }

  function showHeader(meta) {
    $("ws-title").textContent = meta.title;
    document.title = meta.title + " · Heatmark";
    var n = meta.neighbours;
    $("ws-position").textContent = n.position + " of " + n.count;
    $("ws-prev").disabled = !n.previous;
    $("ws-next").disabled = !n.next;
    $("ws-estimated").hidden = !meta.estimated;
  }

  function fillPalettes(meta) {
    var select = $("ws-palette");
    var wanted = state.palette && meta.palettes[state.palette] ? state.palette : meta.display.palette;
    if (!meta.palettes[wanted]) { wanted = Object.keys(meta.palettes)[0]; }
    select.textContent = "";
    Object.keys(meta.palettes).forEach(function (name) {
      var option = document.createElement("option");
      option.value = name;
      option.textContent = name;
      select.appendChild(option);
    });
    select.value = wanted;
    setPalette(wanted);
  }

  function setPalette(name) {
    state.palette = name;
    var ramp = state.meta.palettes[name];
    var lut = new Uint8ClampedArray(ramp.length * 3);
    ramp.forEach(function (rgb, i) { lut[i * 3] = rgb[0]; lut[i * 3 + 1] = rgb[1]; lut[i * 3 + 2] = rgb[2]; });
    state.lut = lut;
  }

  // --- rendering --------------------------------------------------------------------------

  function renderPicture() {
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

  function drawScaleBar() {
    var c = scaleBar.getContext("2d"), h = scaleBar.height, w = scaleBar.width, lut = state.lut;
    var size = lut.length / 3;
    for (var y = 0; y < h; y++) {
      var k = Math.round((1 - y / (h - 1)) * (size - 1)) * 3;
      c.fillStyle = "rgb(" + lut[k] + "," + lut[k + 1] + "," + lut[k + 2] + ")";
      c.fillRect(0, y, w, 1);
    }
  }

  function resize() {
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

  function viewSize() { return { w: canvas.width / (window.devicePixelRatio || 1), h: canvas.height / (window.devicePixelRatio || 1) }; }

  function fit() {
    if (!state.w) { return; }
    var v = viewSize();
    state.zoom = Math.min(v.w / state.w, v.h / state.h);
    state.panX = (v.w - state.w * state.zoom) / 2;
    state.panY = (v.h - state.h * state.zoom) / 2;
    state.fitted = true;
    draw();
  }

  function zoomAt(factor, sx, sy) {
    var v = viewSize();
    if (sx === undefined) { sx = v.w / 2; sy = v.h / 2; }
    var zoom = Math.max(0.1, Math.min(64, state.zoom * factor));
    state.panX = sx - (sx - state.panX) * zoom / state.zoom;
    state.panY = sy - (sy - state.panY) * zoom / state.zoom;
    state.zoom = zoom;
    state.fitted = false;
    draw();
  }

  function oneToOne() { zoomAt((1 / (window.devicePixelRatio || 1)) / state.zoom); }

  // Image coordinates have pixel centres at integers (as the server's marks do).
  function toScreen(x, y) { return [state.panX + (x + 0.5) * state.zoom, state.panY + (y + 0.5) * state.zoom]; }
  function toImage(sx, sy) { return [(sx - state.panX) / state.zoom - 0.5, (sy - state.panY) / state.zoom - 0.5]; }
  function clampPixel(p) {
    return [Math.min(state.w - 1, Math.max(0, Math.round(p[0]))), Math.min(state.h - 1, Math.max(0, Math.round(p[1])))];
  }
  function inside(p) { return p[0] >= -0.5 && p[1] >= -0.5 && p[0] < state.w - 0.5 && p[1] < state.h - 0.5; }

  function draw() {
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
    if (state.drawing) { drawShape(state.drawing.kind, state.drawing.points, SELECTED_COLOUR, null, true); }
    if (state.cursor) { drawCursor(state.cursor); }
    if (state.aligning) {
      state.aligning.pairs.forEach(function (pair, i) { drawPin(pair[1], String(i + 1)); });
      if (state.aligning.pending) { drawPin(state.aligning.pending, String(state.aligning.pairs.length + 1)); }
    }
  }

  function drawPin(p, text) {
    var s = toScreen(p[0], p[1]);
    ctx.strokeStyle = "#ff00ff"; ctx.lineWidth = 2;
    ctx.beginPath(); ctx.arc(s[0], s[1], 6, 0, Math.PI * 2); ctx.stroke();
    ctx.fillStyle = "#ff00ff"; ctx.font = "bold 13px sans-serif"; ctx.fillText(text, s[0] + 8, s[1] - 8);
  }

  function drawCursor(p) {
    var s = toScreen(p[0], p[1]);
    ctx.strokeStyle = "#ffffff"; ctx.lineWidth = 1;
    ctx.beginPath();
    ctx.moveTo(s[0] - 12, s[1]); ctx.lineTo(s[0] - 3, s[1]); ctx.moveTo(s[0] + 3, s[1]); ctx.lineTo(s[0] + 12, s[1]);
    ctx.moveTo(s[0], s[1] - 12); ctx.lineTo(s[0], s[1] - 3); ctx.moveTo(s[0], s[1] + 3); ctx.lineTo(s[0], s[1] + 12);
    ctx.stroke();
  }

  function shapePath(kind, points, singlePixel) {
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

  function drawShape(kind, points, colour, singlePixel, open) {
    if (!points.length) { return; }
    var shownKind = open && kind === "polygon" ? "line" : kind;
    shapePath(shownKind, points, singlePixel);
    ctx.lineWidth = 4; ctx.strokeStyle = OUTLINE_COLOUR; ctx.stroke();
    ctx.lineWidth = 2; ctx.strokeStyle = colour; ctx.stroke();
  }

  function drawMark(mark, selected) {
    var colour = selected ? SELECTED_COLOUR : MARK_COLOUR;
    drawShape(mark.kind, mark.points, colour, mark.single_pixel, false);
    var xs = mark.points.map(function (p) { return toScreen(p[0], p[1])[0]; });
    var ys = mark.points.map(function (p) { return toScreen(p[0], p[1])[1]; });
    var x = Math.min.apply(null, xs) + (mark.kind === "point" ? 8 : 0), y = Math.min.apply(null, ys) - 8;
    ctx.font = "bold 15px sans-serif";
    ctx.lineWidth = 3; ctx.strokeStyle = OUTLINE_COLOUR; ctx.strokeText(mark.label, x, Math.max(14, y));
    ctx.fillStyle = colour; ctx.fillText(mark.label, x, Math.max(14, y));
    if (selected && mark.kind !== "point") {
      mark.points.forEach(function (p) {
        var s = toScreen(p[0], p[1]);
        ctx.fillStyle = SELECTED_COLOUR; ctx.strokeStyle = OUTLINE_COLOUR; ctx.lineWidth = 1;
        ctx.fillRect(s[0] - 4, s[1] - 4, 8, 8); ctx.strokeRect(s[0] - 4, s[1] - 4, 8, 8);
      });
    }
  }

  // --- reading under the cursor -------------------------------------------------------------

  function apparentAt(p) {
    var q = clampPixel(p);
    return state.temps[q[1] * state.w + q[0]];
  }

  function correctedFrom(apparent) {
    var table = state.meta.correction;
    if (!table || apparent !== apparent) { return null; }
    var a = table.apparent_c, c = table.corrected_c, n = a.length;
    if (apparent < a[0] || apparent > a[n - 1]) { return null; }
    var f = (apparent - a[0]) / (a[n - 1] - a[0]) * (n - 1), i = Math.min(n - 2, Math.floor(f));
    if (c[i] === null || c[i + 1] === null) { return null; }
    return c[i] + (c[i + 1] - c[i]) * (f - i);
  }

  function showReadout(p) {
    if (!p || !inside(p)) { $("ws-readout").textContent = "Point at the picture to read temperatures."; return; }
    var q = clampPixel(p), t = apparentAt(q);
    if (t !== t) { $("ws-readout").textContent = "x " + q[0] + ", y " + q[1] + " · no reading at this pixel"; return; }
    var corrected = correctedFrom(t);
    $("ws-readout").textContent = "x " + q[0] + ", y " + q[1] + " · apparent " + fmtTU(t) +
      " · corrected " + (corrected === null ? "not computable at this ε" : fmtTU(corrected)) +
      " (ε " + state.meta.capture.emissivity + ", reflected " + fmtTU(state.meta.capture.reflected_c) + ")";
  }

  // --- marks: hit testing and editing ---------------------------------------------------------

  function selected() {
    for (var i = 0; i < state.marks.length; i++) { if (state.marks[i].id === state.selectedId) { return state.marks[i]; } }
    return null;
  }

  function distToSegment(p, a, b) {
    var dx = b[0] - a[0], dy = b[1] - a[1], len = dx * dx + dy * dy;
    var t = len ? Math.max(0, Math.min(1, ((p[0] - a[0]) * dx + (p[1] - a[1]) * dy) / len)) : 0;
    return Math.hypot(p[0] - a[0] - t * dx, p[1] - a[1] - t * dy);
  }

  function hitMark(sx, sy) {
    var tolerance = HANDLE_PX;
    for (var i = state.marks.length - 1; i >= 0; i--) {
      var mark = state.marks[i];
      var pts = mark.points.map(function (p) { return toScreen(p[0], p[1]); });
      var p = [sx, sy], hit = false;
      if (mark.kind === "point") {
        hit = Math.hypot(sx - pts[0][0], sy - pts[0][1]) <= Math.max(tolerance, 1.5 * state.zoom);
      } else if (mark.kind === "line") {
        hit = distToSegment(p, pts[0], pts[1]) <= tolerance;
      } else if (mark.kind === "polygon") {
        shapePath("polygon", mark.points, false);
        hit = ctx.isPointInPath(sx * (window.devicePixelRatio || 1), sy * (window.devicePixelRatio || 1));
      } else {
        var x0 = Math.min(pts[0][0], pts[1][0]) - state.zoom / 2, x1 = Math.max(pts[0][0], pts[1][0]) + state.zoom / 2;
        var y0 = Math.min(pts[0][1], pts[1][1]) - state.zoom / 2, y1 = Math.max(pts[0][1], pts[1][1]) + state.zoom / 2;
        hit = sx >= x0 - 2 && sx <= x1 + 2 && sy >= y0 - 2 && sy <= y1 + 2;
      }
      if (hit) { return mark; }
    }
    return null;
  }

  function hitVertex(mark, sx, sy) {
    if (!mark || mark.kind === "point") { return -1; }
    for (var i = 0; i < mark.points.length; i++) {
      var s = toScreen(mark.points[i][0], mark.points[i][1]);
      if (Math.abs(sx - s[0]) <= HANDLE_PX && Math.abs(sy - s[1]) <= HANDLE_PX) { return i; }
    }
    return -1;
  }

  function select(id) {
    state.selectedId = id;
    draw();
    showEditor();
    renderTable();
  }

  function refreshTable() {
    if (!state.meta) { return Promise.resolve(); }
    return api("GET", state.meta.urls.marks).then(function (data) {
      state.marks = data.marks;
      if (!selected()) { state.selectedId = null; }
      draw();
      renderTable();
      showEditor();
    }).catch(function (error) { status(error.message, true); });
  }

  function createMark(kind, points) {
    state.drawing = null;
    points = points.map(clampPixel);
    api("POST", state.meta.urls.marks, { kind: kind, points: points }).then(function (mark) {
      state.selectedId = mark.id;
      status("Mark " + mark.label + " added.");
      return refreshTable();
    }).catch(function (error) { status(error.message, true); draw(); });
  }

  function updateMark(mark, changes, message) {
    // The version read with the mark: a change someone else made meanwhile answers 409.
    changes = Object.assign({ version: mark.version }, changes);
    return api("PATCH", mark.url, changes).then(function (updated) {
      mark.version = updated.version;
      status(message || ("Mark " + updated.label + " saved."));
      return refreshTable();
    }).catch(function (error) { status(error.message, true); return refreshTable(); });
  }

  function deleteMark(mark) {
    if (!mark) { return; }
    api("DELETE", mark.url).then(function () {
      status("Mark " + mark.label + " deleted.");
      state.selectedId = null;
      return refreshTable();
    }).catch(function (error) { status(error.message, true); });
  }

  var nudgeTimer = null;
  function shiftMark(mark, dx, dy, vertex) {
    var pts = mark.points.map(function (p, i) {
      if (vertex !== undefined && i !== vertex) { return p.slice(); }
      return [p[0] + dx, p[1] + dy];
    });
    for (var i = 0; i < pts.length; i++) {
      if (pts[i][0] < 0 || pts[i][1] < 0 || pts[i][0] > state.w - 1 || pts[i][1] > state.h - 1) { return; }
    }
    mark.points = pts;
    draw();
    clearTimeout(nudgeTimer);
    nudgeTimer = setTimeout(function () { updateMark(mark, { points: mark.points }, "Mark " + mark.label + " moved."); }, 350);
  }

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
        state.drag = { type: "vertex", mark: current, vertex: vertex, moved: false };
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
      updateMark(drag.mark, { points: drag.mark.points }, "Mark " + drag.mark.label + " changed.");
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

  function finishPolygon() {
    if (!state.drawing || state.drawing.points.length < 3) { status("A polygon needs at least three corners."); return; }
    createMark("polygon", state.drawing.points);
  }

  // --- keyboard ------------------------------------------------------------------------------

  function setTool(tool) {
    state.tool = tool;
    state.drawing = null;
    document.querySelectorAll(".ws-tools button[data-tool]").forEach(function (button) {
      button.setAttribute("aria-pressed", button.dataset.tool === tool ? "true" : "false");
    });
    canvas.classList.toggle("ws-picking", tool === "select");
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

  canvas.addEventListener("keydown", function (event) {
    if (!state.temps) { return; }
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

  document.addEventListener("keydown", function (event) {
    var target = event.target;
    if (event.ctrlKey || event.metaKey || event.altKey) { return; }
    if (target && (target.tagName === "INPUT" || target.tagName === "TEXTAREA" || target.tagName === "SELECT")) { return; }
    var index = "123456".indexOf(event.key);
    if (index >= 0 && event.key.length === 1) { setTool(TOOLS[index]); return; }
    if (event.key === "+") { zoomAt(1.25); } else if (event.key === "-") { zoomAt(0.8); } else if (event.key === "0") { fit(); } else if (event.key === "=") { oneToOne(); } else if (event.key === "PageUp") { event.preventDefault(); goTo("previous"); } else if (event.key === "PageDown") { event.preventDefault(); goTo("next"); }
  });

  document.querySelectorAll(".ws-tools button[data-tool]").forEach(function (button) {
    button.addEventListener("click", function () { setTool(button.dataset.tool); canvas.focus(); });
  });

  // --- span, palette, zoom controls ------------------------------------------------------------

  function syncSpanInputs() {
    $("ws-low").value = fmtT(state.low);
    $("ws-high").value = fmtT(state.high);
    $("ws-iso-low").value = fmtT(state.isoLow);
    $("ws-iso-high").value = fmtT(state.isoHigh);
  }

  function setSpan(low, high, auto) {
    if (!(high > low)) { status("The top of the scale must be above its bottom.", true); syncSpanInputs(); return; }
    state.low = low; state.high = high;
    state.autoSpan = !!auto;
    syncSpanInputs();
    renderPicture();
  }

  $("ws-low").addEventListener("change", function () { setSpan(fromUnit(parseFloat(this.value)), state.high); });
  $("ws-high").addEventListener("change", function () { setSpan(state.low, fromUnit(parseFloat(this.value))); });
  $("ws-auto").addEventListener("click", function () { var s = state.meta.display.auto_span; setSpan(s[0], s[1], true); });
  $("ws-palette").addEventListener("change", function () { setPalette(this.value); renderPicture(); });

  // The palette and span on screen become the thermogram's own: its preview, the survey
  // page's thumbnail and the report are drawn with them.
  function showSavedView(meta) {
    var d = meta.display;
    $("ws-view-note").textContent = "Saved view: " + d.palette + ", " + (d.span_low_c === null || d.span_high_c === null
      ? "automatic span" : fmtT(d.span_low_c) + " to " + fmtTU(d.span_high_c)) + ".";
  }

  function roundC(c) { return Math.round(c * 100) / 100; }

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

  function setupOverlays(meta) {
    var cond = meta.condensation;
    $("ws-cond").disabled = !cond.available;
    if (!cond.available) { state.cond = false; $("ws-cond").checked = false; }
    $("ws-cond-note").textContent = cond.available
      ? "Indoor air " + fmtTU(cond.indoor_air_c) + ", " + cond.indoor_rh_pct + " % RH: mould risk at surfaces below " +
        fmtTU(cond.surface_c.rh80) + ", condensation below " + fmtTU(cond.surface_c.rh100) + " (at the thermogram's ε)."
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

  // --- photo -----------------------------------------------------------------------------------

  function setupPhoto(meta) {
    var has = !!meta.photo;
    $("ws-photo-tools").hidden = !has;
    if (!has) { state.photoMode = "none"; $("ws-photo-box").hidden = true; return; }
    if (photoImg.getAttribute("src") !== meta.photo.url) {
      photoImg.src = meta.photo.url;
      photoImg.onload = draw;
    }
    var aligned = !!meta.photo.alignment;
    $("ws-photo-mode").querySelector("option[value=blend]").disabled = !aligned;
    if (!aligned && state.photoMode === "blend") { state.photoMode = "beside"; }
    $("ws-photo-mode").value = state.photoMode;
    $("ws-align-clear").hidden = !aligned;
    $("ws-align-save").hidden = true;
    $("ws-align-help").textContent = aligned ? "Aligned with " + meta.photo.alignment.pairs.length + " pairs of points." : "Not aligned yet.";
    applyPhotoMode();
  }

  function applyPhotoMode() {
    $("ws-photo-box").hidden = !(state.photoMode === "beside" || state.aligning);
    resize();
  }

  $("ws-photo-mode").addEventListener("change", function () { state.photoMode = this.value; applyPhotoMode(); });
  $("ws-blend").addEventListener("input", function () { state.blend = this.value / 100; draw(); });
  $("ws-align").addEventListener("click", function () {
    state.aligning = { pairs: [], pending: null };
    $("ws-align-help").textContent = "Click a spot on the thermogram, then the same spot on the photo. Two or three pairs.";
    applyPhotoMode();
  });

  function alignClickThermogram(p) {
    var a = state.aligning;
    if (a.pairs.length >= 3) { return; }
    a.pending = clampPixel(p);
    $("ws-align-help").textContent = "Now click the same spot on the photo.";
    draw();
  }

  photoImg.addEventListener("click", function (event) {
    var a = state.aligning;
    if (!a || !a.pending) { return; }
    var rect = photoImg.getBoundingClientRect();
    var x = (event.clientX - rect.left) * photoImg.naturalWidth / rect.width;
    var y = (event.clientY - rect.top) * photoImg.naturalHeight / rect.height;
    a.pairs.push([[Math.round(x), Math.round(y)], a.pending]);
    a.pending = null;
    $("ws-align-save").hidden = a.pairs.length < 2;
    $("ws-align-help").textContent = a.pairs.length + " pair(s). " + (a.pairs.length < 3 ? "Add another, or save." : "Save the alignment.");
    draw();
  });

  $("ws-align-save").addEventListener("click", function () {
    api("PUT", state.meta.urls.alignment, { pairs: state.aligning.pairs }).then(function (data) {
      state.meta.photo.alignment = data.alignment;
      state.aligning = null;
      state.photoMode = "blend";
      status("Photo aligned.");
      setupPhoto(state.meta);
    }).catch(function (error) { status(error.message, true); });
  });
  $("ws-align-clear").addEventListener("click", function () {
    api("DELETE", state.meta.urls.alignment).then(function () {
      state.meta.photo.alignment = null;
      status("Alignment forgotten.");
      setupPhoto(state.meta);
    }).catch(function (error) { status(error.message, true); });
  });

  // --- mark editor ------------------------------------------------------------------------------

  function showEditor() {
    var mark = selected(), box = $("ws-editor");
    if (!mark || !state.meta.can_edit) { box.hidden = true; return; }
    box.hidden = false;
    $("ws-ed-label").textContent = mark.label;
    $("ws-ed-kind").textContent = mark.kind;
    var eps = $("ws-ed-eps"), refl = $("ws-ed-refl"), ref = $("ws-ed-ref"), note = $("ws-ed-note");
    if (box.dataset.markId !== String(mark.id) || document.activeElement === canvas || !box.contains(document.activeElement)) {
      eps.value = mark.emissivity === null ? "" : mark.emissivity;
      eps.placeholder = state.meta.capture.emissivity;
      refl.value = mark.reflected_c === null ? "" : fmtT(mark.reflected_c);
      refl.placeholder = fmtT(state.meta.capture.reflected_c);
      note.value = mark.note;
      ref.textContent = "";
      [["", "Nothing"], ["ambient", "Air temperature"]].concat(state.marks.filter(function (m) { return m.id !== mark.id; })
        .map(function (m) { return [m.label, "Mark " + m.label]; })).forEach(function (item) {
        var option = document.createElement("option");
        option.value = item[0]; option.textContent = item[1];
        ref.appendChild(option);
      });
      ref.value = mark.reference || "";
      box.dataset.markId = String(mark.id);
    }
  }

  $("ws-ed-form").addEventListener("submit", function (event) {
    event.preventDefault();
    var mark = selected();
    if (!mark) { return; }
    var epsText = $("ws-ed-eps").value.trim(), reflText = $("ws-ed-refl").value.trim();
    var changes = {
      emissivity: epsText === "" ? null : parseFloat(epsText),
      reflected_c: reflText === "" ? null : Math.round(fromUnit(parseFloat(reflText)) * 1000) / 1000,
      reference: $("ws-ed-ref").value,
      note: $("ws-ed-note").value
    };
    if (changes.emissivity !== null && !isFinite(changes.emissivity)) { status("Emissivity must be a number between 0.01 and 1.", true); return; }
    if (changes.reflected_c !== null && !isFinite(changes.reflected_c)) { status("Reflected temperature must be a number.", true); return; }
    $("ws-editor").dataset.markId = "";
    updateMark(mark, changes);
  });
  $("ws-ed-delete").addEventListener("click", function () { deleteMark(selected()); });

  // --- results table -----------------------------------------------------------------------------

  function cell(row, text, className) {
    var td = document.createElement("td");
    td.textContent = text;
    if (className) { td.className = className; }
    row.appendChild(td);
    return td;
  }

  function renderTable() {
    var building = state.meta.survey.is_building, u = unitLabel();
    var heads = ["Mark", "ε", "Max " + u, "Min " + u, "Mean " + u, "Corrected max", "Corrected min", "Corrected mean", "±", "ΔT", "Against"];
    if (building) { heads = heads.concat(["Dew point", "Surface RH", "To condensation", "To mould (80 %)"]); }
    heads.push("Note");
    var head = $("ws-table-head");
    head.textContent = "";
    heads.forEach(function (text, i) {
      var th = document.createElement("th");
      th.textContent = text;
      th.scope = "col";
      if (i > 0 && i < heads.length - 1) { th.className = "num"; }
      head.appendChild(th);
    });
    var body = $("ws-table-body");
    body.textContent = "";
    $("ws-empty").hidden = state.marks.length > 0;
    state.marks.forEach(function (mark) {
      var row = document.createElement("tr");
      row.dataset.label = mark.label;
      if (mark.id === state.selectedId) { row.className = "ws-selected"; }
      var first = document.createElement("td"), button = document.createElement("button");
      button.type = "button"; button.className = "secondary ws-label";
      button.textContent = mark.label;
      button.title = "Pick mark " + mark.label + " (" + mark.kind + ")";
      button.addEventListener("click", function () { select(mark.id); canvas.focus(); });
      first.appendChild(button);
      first.appendChild(document.createTextNode(" " + mark.kind));
      row.appendChild(first);
      var epsCell = cell(row, String(mark.effective_emissivity) + (mark.emissivity !== null ? " (own)" : ""), "num");
      if (mark.emissivity_warning) {
        epsCell.className = "num ws-warn";
        epsCell.title = mark.emissivity_warning === "not_quantitative"
          ? "Reflective surface: ΔT only qualitative" : "Low emissivity: reflections weigh heavily";
        epsCell.textContent += mark.emissivity_warning === "not_quantitative" ? " ⚠⚠" : " ⚠";
      }
      cell(row, fmtT(mark.stats.max_c), "num");
      cell(row, fmtT(mark.stats.min_c), "num");
      cell(row, fmtT(mark.stats.mean_c), "num");
      var corrected = mark.corrected;
      cell(row, fmtT(corrected.max_c), "num ws-corrected-max");
      cell(row, fmtT(corrected.min_c), "num");
      cell(row, fmtT(corrected.mean_c), "num");
      cell(row, corrected.uncertainty_c === null ? "–" : "± " + (state.unit === "F" ? corrected.uncertainty_c * 9 / 5 : corrected.uncertainty_c).toFixed(1), "num");
      var dt = cell(row, fmtDelta(mark.delta_t_c), "num");
      if (mark.delta_t_quantitative === false) { dt.textContent += " (not quantitative)"; dt.className = "num ws-warn"; }
      cell(row, mark.reference === "ambient" ? "air" : (mark.reference ? "mark " + mark.reference : "–"), "num");
      if (building) {
        cell(row, fmtT(mark.dew_point_c), "num");
        cell(row, fmtNum(mark.surface_rh_pct, 0, " %"), "num" + (mark.surface_rh_pct >= 80 ? " ws-bad" : ""));
        cell(row, fmtDelta(mark.condensation_margin_k), "num" + (mark.condensation_margin_k !== null && mark.condensation_margin_k <= 0 ? " ws-bad" : ""));
        cell(row, fmtDelta(mark.mould_margin_k), "num" + (mark.mould_margin_k !== null && mark.mould_margin_k <= 0 ? " ws-bad" : ""));
      }
      cell(row, mark.note || "", "ws-wrap");
      body.appendChild(row);
      if (mark.error) {
        var errorRow = document.createElement("tr"), td = cell(errorRow, mark.label + ": " + mark.error, "ws-wrap ws-bad");
        td.colSpan = heads.length;
        body.appendChild(errorRow);
      }
    });
    drawProfile();
  }

  // --- line profile ------------------------------------------------------------------------------

  function drawProfile() {
    var mark = selected();
    if (!mark || mark.kind !== "line") {
      mark = state.marks.filter(function (m) { return m.kind === "line"; })[0];
    }
    var box = $("ws-profile");
    if (!mark || !mark.profile || mark.profile.length < 2) { box.hidden = true; return; }
    box.hidden = false;
    $("ws-profile-title").textContent = "Apparent temperature along line " + mark.label + " (" + unitLabel() + " against pixels from its start)";
    var c = $("ws-profile-canvas"), g = c.getContext("2d"), W = c.width, H = c.height, left = 46, bottom = 22;
    var values = mark.profile.filter(function (p) { return p[1] !== null; }).map(function (p) { return toUnit(p[1]); });
    g.clearRect(0, 0, W, H);
    if (!values.length) { return; }
    var lo = Math.min.apply(null, values), hi = Math.max.apply(null, values);
    if (hi - lo < 0.5) { lo -= 0.25; hi += 0.25; }
    var length = mark.profile[mark.profile.length - 1][0] || 1;
    function X(d) { return left + d / length * (W - left - 8); }
    function Y(v) { return 8 + (1 - (v - lo) / (hi - lo)) * (H - 8 - bottom); }
    g.strokeStyle = "#aab2bd"; g.lineWidth = 1; g.fillStyle = "#1d2430"; g.font = "11px sans-serif";
    g.beginPath(); g.moveTo(left, 8); g.lineTo(left, H - bottom); g.lineTo(W - 8, H - bottom); g.stroke();
    g.fillText(hi.toFixed(1), 4, 14); g.fillText(lo.toFixed(1), 4, H - bottom);
    g.fillText("0", left, H - 6); g.fillText(length.toFixed(0) + " px", W - 50, H - 6);
    g.strokeStyle = "#0b5c8a"; g.lineWidth = 2; g.beginPath();
    var started = false;
    mark.profile.forEach(function (p) {
      if (p[1] === null) { started = false; return; }
      var x = X(p[0]), y = Y(toUnit(p[1]));
      if (started) { g.lineTo(x, y); } else { g.moveTo(x, y); started = true; }
    });
    g.stroke();
  }

  // --- previous / next -----------------------------------------------------------------------------

  function goTo(which) {
    var meta = state.meta;
    if (!meta || !meta.neighbours[which]) { return; }
    load(meta.neighbours[which].api, true);
  }
  $("ws-prev").addEventListener("click", function () { goTo("previous"); });
  $("ws-next").addEventListener("click", function () { goTo("next"); });
  window.addEventListener("popstate", function (event) {
    if (event.state && event.state.api) { load(event.state.api, false); }
  });

  var resizeTimer = null;
  window.addEventListener("resize", function () { clearTimeout(resizeTimer); resizeTimer = setTimeout(resize, 100); });

  history.replaceState({ api: root.dataset.api }, "", window.location.href);
  setTool("select");
  load(root.dataset.api, false);
})();
