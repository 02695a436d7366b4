/* Undo and redo of mark edits in the workspace: the stack of history.js (pure, tested with
   node) applied through the API. Ctrl+Z undoes, Ctrl+Shift+Z (or Ctrl+Y) redoes; the
   buttons in the toolbar do the same. The history is per thermogram. */

import * as H from "./history.js";
import { call } from "./hooks.js";
import { api } from "./server.js";
import { $, state, status } from "./state.js";

export var history = H.createHistory(100);
var busy = false;

export function updateButtons() {
  var undoButton = $("ws-undo"), redoButton = $("ws-redo");
  if (!undoButton || !redoButton) { return; }
  var editable = !!(state.meta && state.meta.can_edit);
  undoButton.disabled = !editable || busy || !H.canUndo(history);
  redoButton.disabled = !editable || busy || !H.canRedo(history);
  var next = H.describe(H.nextUndo(history)), again = H.describe(H.nextRedo(history));
  undoButton.title = next ? "Undo: " + next + " (Ctrl+Z)" : "Nothing to undo (Ctrl+Z)";
  redoButton.title = again ? "Redo: " + again + " (Ctrl+Shift+Z)" : "Nothing to redo (Ctrl+Shift+Z)";
}

export function record(entry) {
  H.push(history, entry);
  updateButtons();
}

export function resetHistory() {
  H.clear(history);
  updateButtons();
}

function markById(id) {
  for (var i = 0; i < state.marks.length; i++) { if (state.marks[i].id === id) { return state.marks[i]; } }
  return null;
}

function apply(operation, entry) {
  if (operation.op === "create") {
    return api("POST", state.meta.urls.marks, H.createBody(operation.snapshot)).then(function (mark) {
      H.remap(history, entry.markId, mark.id, entry.label, mark.label);
      state.selectedId = mark.id;
      // Marks that compared with the deleted one compare with it again.
      return operation.referencedBy.reduce(function (chain, id) {
        return chain.then(function () {
          var other = markById(id);
          return other ? api("PATCH", other.url, { reference: mark.label }) : null;
        });
      }, Promise.resolve());
    });
  }
  var mark = markById(operation.markId);
  if (!mark) { return Promise.reject(new Error("Mark " + entry.label + " is no longer on this thermogram.")); }
  if (operation.op === "delete") { return api("DELETE", mark.url); }
  return api("PATCH", mark.url, operation.body);
}

function step(forward) {
  if (busy || !state.meta || !state.meta.can_edit) { return; }
  var entry = forward ? H.redo(history) : H.undo(history);
  if (!entry) { status(forward ? "Nothing to redo." : "Nothing to undo."); return; }
  var words = H.describe(entry);
  var operation = forward ? H.redoOperation(entry) : H.undoOperation(entry);
  busy = true;
  updateButtons();
  apply(operation, entry).then(function () {
    status((forward ? "Redone: " : "Undone: ") + words + ".");
  }).catch(function (error) {
    if (forward) { H.cancelRedo(history); } else { H.cancelUndo(history); }
    status(error.message, true);
  }).then(function () {
    busy = false;
    return call("refreshTable");
  }).then(updateButtons);
}

export function undoLast() { step(false); }
export function redoLast() { step(true); }

$("ws-undo").addEventListener("click", undoLast);
$("ws-redo").addEventListener("click", redoLast);

document.addEventListener("keydown", function (event) {
  if (!(event.ctrlKey || event.metaKey) || event.altKey) { return; }
  var target = event.target;
  // Text fields keep their own undo.
  if (target && (target.tagName === "INPUT" || target.tagName === "TEXTAREA" || target.tagName === "SELECT")) { return; }
  var key = event.key.toLowerCase();
  if (key === "z" && !event.shiftKey) { event.preventDefault(); undoLast(); } else if ((key === "z" && event.shiftKey) || key === "y") { event.preventDefault(); redoLast(); }
});
