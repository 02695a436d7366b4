/* The readings table of the marks (every number from the server) and the line profile. */

import { select, selected } from "./marks.js";
import { $, canvas, state, fmtDelta, fmtT, toUnit, unitLabel } from "./state.js";
import { differenceToUnit, formatNumber as fmtNum } from "./units.js";

export function cell(row, text, className) {
  var td = document.createElement("td");
  td.textContent = text;
  if (className) { td.className = className; }
  row.appendChild(td);
  return td;
}

export function renderTable() {
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
    cell(row, corrected.uncertainty_c === null ? "–" : "± " + differenceToUnit(corrected.uncertainty_c, state.unit).toFixed(1), "num");
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

export function drawProfile() {
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
