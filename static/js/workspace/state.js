/* What every part of the workspace shares: the page's elements, the drawing constants and
   the one state object. Loaded only on the workspace page (templates/survey/workspace.html). */

import * as geometry from "./geometry.js";
import * as units from "./units.js";

export function $(id) { return document.getElementById(id); }

export var root = $("workspace");
export var canvas = $("ws-canvas");
export var ctx = canvas.getContext("2d");
export var scaleBar = $("ws-scalebar");
export var picture = document.createElement("canvas"); // the thermogram at 1 canvas px per pixel
export var photoImg = $("ws-photo");

export var TOOLS = ["select", "point", "rectangle", "ellipse", "polygon", "line"];
export var HANDLE_PX = 7;
export var MARK_COLOUR = "#00ff00";
export var SELECTED_COLOUR = "#ffe600";
export var OUTLINE_COLOUR = "#003300";

export var state = {
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

export function status(message, isError) {
  var el = $("ws-status");
  el.textContent = message || "";
  el.className = "ws-status" + (isError ? " ws-error" : "");
}

/* Formatting in the member's unit (units.js with the state's unit). */

export function fmtT(c, digits) { return units.formatTemperature(c, state.unit, digits); }
export function fmtTU(c) { return units.formatTemperatureWithUnit(c, state.unit); }
export function fmtDelta(k) { return units.formatDifference(k, state.unit); }
export function unitLabel() { return units.unitLabel(state.unit); }
export function fromUnit(v) { return units.fromUnit(v, state.unit); }
export function toUnit(c) { return units.toUnit(c, state.unit); }

/* Coordinates in the current view and image (geometry.js with the state's view). */

export function toScreen(x, y) { return geometry.toScreen(state, x, y); }
export function toImage(sx, sy) { return geometry.toImage(state, sx, sy); }
export function clampPixel(p) { return geometry.clampPixel(p, state.w, state.h); }
export function inside(p) { return geometry.inside(p, state.w, state.h); }
