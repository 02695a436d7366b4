/* Loading a thermogram: its description and °C array from the API, then everything set up
   for it; previous / next move through the survey without leaving the page. */

import { setupOverlays, showSavedView, syncSpanInputs } from "./input.js";
import { refreshTable } from "./marks.js";
import { setupPhoto } from "./photo.js";
import { fit, renderPicture, resize } from "./rendering.js";
import { api } from "./server.js";
import { $, picture, state, fmtTU, status, unitLabel } from "./state.js";

export function load(apiUrl, pushHistory) {
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

export function start(meta, temps) {
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

export function showHeader(meta) {
  $("ws-title").textContent = meta.title;
  document.title = meta.title + " · Heatmark";
  var n = meta.neighbours;
  $("ws-position").textContent = n.position + " of " + n.count;
  $("ws-prev").disabled = !n.previous;
  $("ws-next").disabled = !n.next;
  $("ws-estimated").hidden = !meta.estimated;
}

export function fillPalettes(meta) {
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

export function setPalette(name) {
  state.palette = name;
  var ramp = state.meta.palettes[name];
  var lut = new Uint8ClampedArray(ramp.length * 3);
  ramp.forEach(function (rgb, i) { lut[i * 3] = rgb[0]; lut[i * 3 + 1] = rgb[1]; lut[i * 3 + 2] = rgb[2]; });
  state.lut = lut;
}

export function goTo(which) {
  var meta = state.meta;
  if (!meta || !meta.neighbours[which]) { return; }
  load(meta.neighbours[which].api, true);
}
