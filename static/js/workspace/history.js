/* Undo and redo of mark edits, as plain data: no page, no server.

   An entry says what happened to one mark:
     {type: "add", markId, label, after}            a mark was drawn (after: its snapshot)
     {type: "delete", markId, label, before, referencedBy: [ids]}
                                                    a mark was deleted; marks that compared
                                                    with it (by label) are in referencedBy
     {type: "change", markId, label, before, after} fields of a mark changed (points, ε, …)
   A snapshot holds what it takes to draw the mark again: kind, points, single_pixel,
   name, emissivity, reflected_c, note, reference, rise_method.

   undoOperation / redoOperation turn an entry into the request to make:
     {op: "create", snapshot, referencedBy}, {op: "delete", markId}, {op: "patch", markId, body}.
   A mark drawn again gets a new id (and maybe a new letter): remap() updates the stack. */

export var SNAPSHOT_FIELDS = [
  "kind", "points", "single_pixel", "name", "emissivity", "reflected_c", "note", "reference", "rise_method",
  "load_current_a"
];

function copy(value) { return value === undefined ? undefined : JSON.parse(JSON.stringify(value)); }

export function snapshot(mark) {
  var result = {};
  SNAPSHOT_FIELDS.forEach(function (name) {
    if (mark[name] !== undefined) { result[name] = copy(mark[name]); }
  });
  return result;
}

// The fields of `mark` named in `changes`, as they were: what a change is undone with.
export function fieldsOf(mark, changes) {
  var result = {};
  Object.keys(changes).forEach(function (name) { result[name] = copy(mark[name]); });
  return result;
}

export function createHistory(limit) {
  return { done: [], undone: [], limit: limit || 100 };
}

export function push(history, entry) {
  history.done.push(copy(entry));
  while (history.done.length > history.limit) { history.done.shift(); }
  history.undone = [];
  return history;
}

export function canUndo(history) { return history.done.length > 0; }
export function canRedo(history) { return history.undone.length > 0; }

// Take the entry to undo (moved to the redo side); null when there is none.
export function undo(history) {
  if (!history.done.length) { return null; }
  var entry = history.done.pop();
  history.undone.push(entry);
  return entry;
}

export function redo(history) {
  if (!history.undone.length) { return null; }
  var entry = history.undone.pop();
  history.done.push(entry);
  return entry;
}

// The request failed: put the entry back where it was.
export function cancelUndo(history) {
  if (history.undone.length) { history.done.push(history.undone.pop()); }
  return history;
}

export function cancelRedo(history) {
  if (history.done.length) { history.undone.push(history.done.pop()); }
  return history;
}

export function clear(history) {
  history.done = [];
  history.undone = [];
  return history;
}

export function undoOperation(entry) {
  if (entry.type === "add") { return { op: "delete", markId: entry.markId }; }
  if (entry.type === "delete") {
    return { op: "create", snapshot: copy(entry.before), referencedBy: copy(entry.referencedBy || []) };
  }
  return { op: "patch", markId: entry.markId, body: copy(entry.before) };
}

export function redoOperation(entry) {
  if (entry.type === "add") { return { op: "create", snapshot: copy(entry.after), referencedBy: [] }; }
  if (entry.type === "delete") { return { op: "delete", markId: entry.markId }; }
  return { op: "patch", markId: entry.markId, body: copy(entry.after) };
}

// The body that draws a snapshot again through POST …/marks/.
export function createBody(snap) {
  var body = { kind: snap.kind, points: copy(snap.points) };
  ["single_pixel", "name", "emissivity", "reflected_c", "note", "rise_method", "load_current_a"].forEach(function (name) {
    if (snap[name] !== undefined && snap[name] !== null) { body[name] = copy(snap[name]); }
  });
  if (snap.reference) { body.reference = snap.reference; }
  return body;
}

function remapReference(value, oldLabel, newLabel) {
  return value === oldLabel ? newLabel : value;
}

// A mark drawn again: every entry that named oldId / oldLabel now names newId / newLabel.
export function remap(history, oldId, newId, oldLabel, newLabel) {
  [history.done, history.undone].forEach(function (stack) {
    stack.forEach(function (entry) {
      if (entry.markId === oldId) { entry.markId = newId; entry.label = newLabel; }
      if (entry.referencedBy) {
        entry.referencedBy = entry.referencedBy.map(function (id) { return id === oldId ? newId : id; });
      }
      if (oldLabel !== newLabel) {
        ["before", "after"].forEach(function (side) {
          if (entry[side] && entry[side].reference !== undefined) {
            entry[side].reference = remapReference(entry[side].reference, oldLabel, newLabel);
          }
        });
      }
    });
  });
  return history;
}

// What the undo and redo buttons say: "Undo: move mark A" or "" when there is nothing.
var WORDS = { add: "draw", delete: "delete", change: "change" };

export function describe(entry) {
  if (!entry) { return ""; }
  var what = entry.type === "change" && entry.after && Object.keys(entry.after).length === 1 &&
    entry.after.points ? "move or reshape" : WORDS[entry.type];
  return what + " mark " + entry.label;
}

export function nextUndo(history) { return history.done[history.done.length - 1] || null; }
export function nextRedo(history) { return history.undone[history.undone.length - 1] || null; }
