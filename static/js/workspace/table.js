/* The readings table of the marks (every number from the server) and the line profile. */

import { call } from "./hooks.js";
import { $, canvas, state, fmtDelta, fmtT, toUnit, unitLabel } from "./state.js";
import { differenceToUnit } from "./units.js";
import { decisionText, intervalText, marginText, riseText, surfaceRhText } from "./wording.js";

export function cell(row, text, className) {
  var td = document.createElement("td");
  td.textContent = text;
  if (className) { td.className = className; }
  row.appendChild(td);
  return td;
}

// Marks ticked for a new finding, by id; kept while the table is drawn again.
var chosen = new Set();

function stack(td, lines) {
  td.textContent = "";
  lines.forEach(function (line) {
    var div = document.createElement("div");
    div.className = "ws-line";
    if (line.className) {
      var span = document.createElement("span");
      span.className = line.className;
      span.textContent = line.value;
      div.append(line.name + " ", span);
    } else {
      div.textContent = line.name + " " + line.value;
    }
    td.appendChild(div);
  });
  return td;
}

/* The "New finding from the selected marks" button: on when a mark is ticked. */
function showChosen() {
  var url = state.meta.urls.new_finding, button = $("ws-new-finding");
  $("ws-finding-row").hidden = !url || !state.marks.length;
  var ids = state.marks.filter(function (m) { return chosen.has(m.id); });
  button.disabled = !ids.length;
  $("ws-chosen-note").textContent = ids.length
    ? "Chosen: " + ids.map(function (m) { return m.title || m.label; }).join(", ") + "."
    : "Tick the marks the finding is about (the first one ticked is the place judged).";
}

$("ws-new-finding").addEventListener("click", function () {
  var ids = state.marks.filter(function (m) { return chosen.has(m.id); }).map(function (m) { return m.id; });
  if (!ids.length || !state.meta.urls.new_finding) { return; }
  var query = ids.map(function (id) { return "marks=" + encodeURIComponent(id); }).join("&");
  window.location.assign(state.meta.urls.new_finding + "?" + query);
});

export function renderTable() {
  var building = state.meta.survey.is_building, u = unitLabel();
  // Apparent and corrected max, min and mean share a cell each, one per line, so that a
  // building survey's humidity columns fit beside them on a 1400 px screen.
  var heads = ["Choose", "Mark", "ε", "Apparent " + u, "Corrected " + u, "ΔT and against what"];
  if (!building) { heads.push("Suggested level"); }
  if (building) { heads = heads.concat(["Dew or frost point", "Surface RH (95 % interval)", "To condensation", "To mould (80 %)", "fRsi (needed)"]); }
  heads.push("Note");
  var head = $("ws-table-head");
  head.textContent = "";
  heads.forEach(function (text, i) {
    var th = document.createElement("th");
    th.scope = "col";
    if (i === 0) {
      var hidden = document.createElement("span");
      hidden.className = "visually-hidden";
      hidden.textContent = "Choose for a new finding";
      th.appendChild(hidden);
    } else {
      th.textContent = text;
    }
    if (i > 1 && i < heads.length - 1) { th.className = "num"; }
    head.appendChild(th);
  });
  var body = $("ws-table-body");
  body.textContent = "";
  $("ws-empty").hidden = state.marks.length > 0;
  var present = new Set(state.marks.map(function (m) { return m.id; }));
  chosen.forEach(function (id) { if (!present.has(id)) { chosen.delete(id); } });
  state.marks.forEach(function (mark) {
    var row = document.createElement("tr");
    row.dataset.label = mark.label;
    if (mark.id === state.selectedId) { row.className = "ws-selected"; }
    var tick = document.createElement("td"), box = document.createElement("input");
    box.type = "checkbox"; box.className = "ws-choose"; box.value = String(mark.id);
    box.checked = chosen.has(mark.id);
    box.setAttribute("aria-label", "Choose mark " + (mark.title || mark.label) + " for a new finding");
    box.addEventListener("change", function () {
      if (box.checked) { chosen.add(mark.id); } else { chosen.delete(mark.id); }
      showChosen();
    });
    tick.appendChild(box);
    row.appendChild(tick);
    var first = document.createElement("td"), button = document.createElement("button");
    button.type = "button"; button.className = "secondary ws-label";
    button.textContent = mark.title || mark.label;
    button.title = "Pick mark " + (mark.title || mark.label) + " (" + mark.kind + ")";
    button.addEventListener("click", function () { call("select", mark.id); canvas.focus(); });
    first.appendChild(button);
    first.appendChild(document.createTextNode(" " + mark.kind));
    if (mark.load_current_a !== null && mark.load_current_a !== undefined && mark.caption) {
      var caption = document.createElement("div");
      caption.className = "ws-caption";
      caption.textContent = mark.caption;
      first.appendChild(caption);
    }
    first.className = "ws-wrap";
    row.appendChild(first);
    var epsCell = cell(row, String(mark.effective_emissivity) + (mark.emissivity !== null ? " (own)" : ""), "num");
    if (mark.emissivity_warning) {
      epsCell.className = "num ws-warn";
      epsCell.title = mark.emissivity_warning === "not_quantitative"
        ? "Reflective surface: ΔT only qualitative" : "Low emissivity: reflections weigh heavily";
      epsCell.textContent += mark.emissivity_warning === "not_quantitative" ? " ⚠⚠" : " ⚠";
    }
    stack(cell(row, "", "num"), [
      { name: "max", value: fmtT(mark.stats.max_c) },
      { name: "min", value: fmtT(mark.stats.min_c) },
      { name: "mean", value: fmtT(mark.stats.mean_c) }
    ]);
    var corrected = mark.corrected;
    stack(cell(row, "", "num"), [
      { name: "max", value: fmtT(corrected.max_c), className: "ws-corrected-max" },
      { name: "min", value: fmtT(corrected.min_c) },
      { name: "mean", value: fmtT(corrected.mean_c) },
      { name: "±", value: corrected.uncertainty_c === null ? "–" : differenceToUnit(corrected.uncertainty_c, state.unit).toFixed(1) }
    ]);
    var dt = cell(row, "", "num ws-wrap ws-delta");
    var rise = document.createElement("div");
    rise.textContent = mark.delta_t_c === null ? fmtDelta(null) : riseText(mark.delta_t_c, mark.full_load_delta_t_c, mark.load_exponent, state.unit);
    if (mark.delta_t_quantitative === false) { rise.textContent += " (not quantitative)"; dt.className += " ws-warn"; }
    dt.appendChild(rise);
    if (mark.delta_t_text) {
      var against = document.createElement("div");
      against.className = "ws-against";
      against.textContent = mark.delta_t_text;
      dt.appendChild(against);
    }
    if (!building) {
      var level = mark.suggested_level;
      var levelCell = cell(row, level ? String(level) : (mark.delta_t_c === null ? "–" : "no finding"), "num ws-wrap");
      if (mark.suggestion) { levelCell.title = "Table row " + mark.suggestion.row + " (" + mark.suggestion.interval + ")"; }
      if (mark.load_too_low) { levelCell.textContent += " (load too low to rank)"; levelCell.className = "num ws-wrap ws-warn"; }
    }
    if (building) {
      cell(row, mark.dew_point_c === null ? "–" : fmtT(mark.dew_point_c) + " " + (mark.dew_point_name || ""), "num ws-wrap");
      var rh = cell(row, surfaceRhText(mark.surface_rh_pct, mark.condensation), "num ws-wrap" + (mark.surface_rh_pct >= 80 ? " ws-bad" : ""));
      if (mark.surface_rh_low_pct !== null) { rh.textContent += " (" + intervalText(mark.surface_rh_low_pct, mark.surface_rh_high_pct) + ")"; }
      var wet = cell(row, marginText(mark.condensation_margin_k, mark.margin_u_k, mark.dew_point_name, state.unit), "num ws-wrap" + (mark.condensation_margin_k !== null && mark.condensation_margin_k <= 0 ? " ws-bad" : ""));
      if (mark.condensation_decision) { wet.textContent += ": " + decisionText(mark.condensation_decision); }
      var mould = cell(row, marginText(mark.mould_margin_k, mark.margin_u_k, "80 % limit", state.unit), "num ws-wrap" + (mark.mould_margin_k !== null && mark.mould_margin_k <= 0 ? " ws-bad" : ""));
      if (mark.mould_decision) { mould.textContent += ": " + decisionText(mark.mould_decision); }
      var factor = "–";
      if (mark.temperature_factor !== null) {
        factor = mark.temperature_factor.toFixed(2) + " (" + mark.critical_factor.toFixed(2) + (mark.design_critical_factor !== null ? "; design " + mark.design_critical_factor.toFixed(2) : "") + "): " + decisionText(mark.factor_decision);
      }
      cell(row, factor, "num ws-wrap");
    }
    cell(row, mark.note || "", "ws-wrap ws-note");
    body.appendChild(row);
    if (mark.error) {
      var errorRow = document.createElement("tr"), td = cell(errorRow, mark.label + ": " + mark.error, "ws-wrap ws-bad");
      td.colSpan = heads.length;
      body.appendChild(errorRow);
    }
  });
  $("ws-table-note").textContent = state.marks.length ? "± is the expanded uncertainty at k = 2 (about 95 %); a limit is exceeded only when the whole interval lies beyond it." : "";
  showChosen();
  drawProfile();
}

export function drawProfile() {
  var mark = call("selected");
  if (!mark || mark.kind !== "line") {
    mark = state.marks.filter(function (m) { return m.kind === "line"; })[0];
  }
  var box = $("ws-profile");
  if (!mark || !mark.profile || mark.profile.length < 2) { box.hidden = true; return; }
  box.hidden = false;
  $("ws-profile-title").textContent = "Apparent temperature along line " + (mark.title || mark.label) + " (" + unitLabel() + " against pixels from its start)";
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
