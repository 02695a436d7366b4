/* Marks: which one is picked, hit tests on screen, and adding, changing and deleting them
   through the API; the editor of the picked mark's own ε, reflected temperature, reference
   and note. */

import { markAt, vertexAt } from "./geometry.js";
import { fieldsOf, snapshot } from "./history.js";
import { draw } from "./rendering.js";
import { api } from "./server.js";
import { $, canvas, state, HANDLE_PX, clampPixel, fmtT, fromUnit, status } from "./state.js";
import { renderTable } from "./table.js";
import { record, updateButtons } from "./undo.js";
import { provide } from "./hooks.js";

export function selected() {
  for (var i = 0; i < state.marks.length; i++) { if (state.marks[i].id === state.selectedId) { return state.marks[i]; } }
  return null;
}

export function hitMark(sx, sy) { return markAt(state.marks, sx, sy, state, HANDLE_PX); }

export function hitVertex(mark, sx, sy) { return vertexAt(mark, sx, sy, state, HANDLE_PX); }

export function select(id) {
  state.selectedId = id;
  draw();
  showEditor();
  renderTable();
}

export function refreshTable() {
  if (!state.meta) { return Promise.resolve(); }
  return api("GET", state.meta.urls.marks).then(function (data) {
    state.marks = data.marks;
    if (!selected()) { state.selectedId = null; }
    draw();
    renderTable();
    showEditor();
    updateButtons();
  }).catch(function (error) { status(error.message, true); });
}

export function createMark(kind, points) {
  state.drawing = null;
  points = points.map(clampPixel);
  api("POST", state.meta.urls.marks, { kind: kind, points: points }).then(function (mark) {
    state.selectedId = mark.id;
    record({ type: "add", markId: mark.id, label: mark.label, after: snapshot(mark) });
    status("Mark " + mark.label + " added.");
    return refreshTable();
  }).catch(function (error) { status(error.message, true); draw(); });
}

// `before` holds the changed fields as they were (a drag changes the mark's points on
// screen before it is saved); without it they are read from the mark.
export function updateMark(mark, changes, message, before) {
  var old = before || fieldsOf(mark, changes);
  // The version read with the mark: a change someone else made meanwhile answers 409.
  var body = Object.assign({ version: mark.version }, changes);
  return api("PATCH", mark.url, body).then(function (updated) {
    mark.version = updated.version;
    record({ type: "change", markId: updated.id, label: updated.label, before: old, after: changes });
    status(message || ("Mark " + updated.label + " saved."));
    return refreshTable();
  }).catch(function (error) { status(error.message, true); return refreshTable(); });
}

export function deleteMark(mark) {
  if (!mark) { return; }
  if (!window.confirm("Delete mark " + mark.title + " (" + mark.kind + ")? Ctrl+Z brings it back.")) {
    status("Mark " + mark.title + " kept.");
    return;
  }
  var before = snapshot(mark);
  var referencedBy = state.marks.filter(function (m) { return m.reference === mark.label; })
    .map(function (m) { return m.id; });
  api("DELETE", mark.url).then(function () {
    record({ type: "delete", markId: mark.id, label: mark.label, before: before, referencedBy: referencedBy });
    status("Mark " + mark.title + " deleted. Ctrl+Z brings it back.");
    state.selectedId = null;
    return refreshTable();
  }).catch(function (error) { status(error.message, true); });
}

var nudgeTimer = null, nudgeBefore = null;
export function shiftMark(mark, dx, dy, vertex) {
  var pts = mark.points.map(function (p, i) {
    if (vertex !== undefined && i !== vertex) { return p.slice(); }
    return [p[0] + dx, p[1] + dy];
  });
  for (var i = 0; i < pts.length; i++) {
    if (pts[i][0] < 0 || pts[i][1] < 0 || pts[i][0] > state.w - 1 || pts[i][1] > state.h - 1) { return; }
  }
  if (!nudgeBefore || nudgeBefore.id !== mark.id) { nudgeBefore = { id: mark.id, points: mark.points.map(function (p) { return p.slice(); }) }; }
  mark.points = pts;
  draw();
  clearTimeout(nudgeTimer);
  nudgeTimer = setTimeout(function () {
    var before = { points: nudgeBefore.points };
    nudgeBefore = null;
    updateMark(mark, { points: mark.points }, "Mark " + mark.label + " moved.", before);
  }, 350);
}

export function finishPolygon() {
  if (!state.drawing || state.drawing.points.length < 3) { status("A polygon needs at least three corners."); return; }
  createMark("polygon", state.drawing.points);
}

// --- the picked mark's editor ---------------------------------------------------------------

export function showEditor() {
  var mark = selected(), box = $("ws-editor");
  if (!mark || !state.meta.can_edit) { box.hidden = true; return; }
  box.hidden = false;
  $("ws-ed-label").textContent = mark.title;
  $("ws-ed-kind").textContent = mark.kind;
  var eps = $("ws-ed-eps"), refl = $("ws-ed-refl"), ref = $("ws-ed-ref"), note = $("ws-ed-note");
  var name = $("ws-ed-name"), method = $("ws-ed-method");
  if (box.dataset.markId !== String(mark.id) || document.activeElement === canvas || !box.contains(document.activeElement)) {
    name.value = mark.name || "";
    // A load current belongs to equipment: electrical and mechanical surveys.
    $("ws-ed-load-box").hidden = state.meta.survey.is_building;
    $("ws-ed-load").value = mark.load_current_a === null || mark.load_current_a === undefined ? "" : mark.load_current_a;
    method.value = mark.rise_method || "hottest_to_hottest";
    eps.value = mark.emissivity === null ? "" : mark.emissivity;
    eps.placeholder = state.meta.capture.emissivity;
    refl.value = mark.reflected_c === null ? "" : fmtT(mark.reflected_c);
    refl.placeholder = fmtT(state.meta.capture.reflected_c);
    note.value = mark.note;
    ref.textContent = "";
    [["", "Nothing"], ["ambient", "Air temperature"]].concat(state.marks.filter(function (m) { return m.id !== mark.id; })
      .map(function (m) { return [m.label, "Mark " + m.title]; })).forEach(function (item) {
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
    note: $("ws-ed-note").value,
    name: $("ws-ed-name").value.trim(),
    rise_method: $("ws-ed-method").value
  };
  if (!state.meta.survey.is_building) {
    var loadText = $("ws-ed-load").value.trim();
    changes.load_current_a = loadText === "" ? null : parseFloat(loadText);
    if (changes.load_current_a !== null && !(isFinite(changes.load_current_a) && changes.load_current_a >= 0)) {
      status("The load current must be a number of amperes, 0 or more.", true);
      return;
    }
  }
  if (changes.emissivity !== null && !isFinite(changes.emissivity)) { status("Emissivity must be a number between 0.01 and 1.", true); return; }
  if (changes.reflected_c !== null && !isFinite(changes.reflected_c)) { status("Reflected temperature must be a number.", true); return; }
  $("ws-editor").dataset.markId = "";
  var before = fieldsOf(mark, changes);
  before.reference = mark.reference || "";
  updateMark(mark, changes, null, before);
});
$("ws-ed-delete").addEventListener("click", function () { deleteMark(selected()); });

provide("select", select);
provide("selected", selected);
provide("refreshTable", refreshTable);
