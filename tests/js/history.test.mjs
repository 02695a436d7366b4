// Undo and redo of mark edits (static/js/workspace/history.js): the stack and the requests
// each step makes. Expected values follow from the definitions in the module's comment.
import assert from "node:assert/strict";
import { test } from "node:test";

import {
  canRedo, canUndo, cancelUndo, clear, createBody, createHistory, describe, fieldsOf, nextUndo,
  push, redo, redoOperation, remap, snapshot, undo, undoOperation
} from "../../static/js/workspace/history.js";

const markA = {
  id: 7, label: "A", kind: "rectangle", points: [[1, 2], [10, 12]], single_pixel: false,
  name: "L1", emissivity: null, reflected_c: null, note: "", reference: null,
  rise_method: "hottest_to_hottest", load_current_a: 118, stats: { max_c: 40.5 }
};

test("a snapshot keeps what it takes to draw the mark again, and copies it", () => {
  const snap = snapshot(markA);
  assert.deepEqual(Object.keys(snap).sort(), [
    "emissivity", "kind", "load_current_a", "name", "note", "points", "reference", "reflected_c", "rise_method",
    "single_pixel"
  ]);
  snap.points[0][0] = 99;
  assert.equal(markA.points[0][0], 1);
});

test("undo of a drawn mark deletes it; redo draws it again", () => {
  const history = createHistory();
  push(history, { type: "add", markId: 7, label: "A", after: snapshot(markA) });
  assert.ok(canUndo(history) && !canRedo(history));
  const entry = undo(history);
  assert.deepEqual(undoOperation(entry), { op: "delete", markId: 7 });
  assert.ok(!canUndo(history) && canRedo(history));
  const again = redo(history);
  const operation = redoOperation(again);
  assert.equal(operation.op, "create");
  assert.deepEqual(createBody(operation.snapshot), {
    kind: "rectangle", points: [[1, 2], [10, 12]], single_pixel: false, name: "L1", note: "",
    rise_method: "hottest_to_hottest", load_current_a: 118 // the measured load comes back too
  });
});

test("undo of a move patches the old points back, redo the new ones", () => {
  const history = createHistory();
  const before = fieldsOf(markA, { points: null });
  push(history, { type: "change", markId: 7, label: "A", before, after: { points: [[3, 4], [12, 14]] } });
  assert.equal(describe(nextUndo(history)), "move or reshape mark A");
  assert.deepEqual(undoOperation(undo(history)), { op: "patch", markId: 7, body: { points: [[1, 2], [10, 12]] } });
  assert.deepEqual(redoOperation(redo(history)), { op: "patch", markId: 7, body: { points: [[3, 4], [12, 14]] } });
});

test("undo of a delete draws the mark again and restores who compared with it", () => {
  const history = createHistory();
  push(history, { type: "delete", markId: 7, label: "A", before: snapshot(markA), referencedBy: [8] });
  const operation = undoOperation(undo(history));
  assert.equal(operation.op, "create");
  assert.deepEqual(operation.referencedBy, [8]);
  assert.equal(createBody(operation.snapshot).name, "L1");
});

test("a new action clears the redo side", () => {
  const history = createHistory();
  push(history, { type: "add", markId: 1, label: "A", after: snapshot(markA) });
  undo(history);
  push(history, { type: "add", markId: 2, label: "B", after: snapshot(markA) });
  assert.ok(!canRedo(history));
});

test("a failed request puts the entry back", () => {
  const history = createHistory();
  push(history, { type: "add", markId: 1, label: "A", after: snapshot(markA) });
  undo(history);
  cancelUndo(history);
  assert.ok(canUndo(history) && !canRedo(history));
});

test("remap follows a mark drawn again under a new id and letter", () => {
  const history = createHistory();
  push(history, { type: "delete", markId: 7, label: "A", before: snapshot(markA), referencedBy: [] });
  push(history, {
    type: "change", markId: 8, label: "B", before: { reference: "A" }, after: { reference: "" }
  });
  push(history, { type: "change", markId: 7, label: "A", before: { note: "" }, after: { note: "x" } });
  remap(history, 7, 21, "A", "C");
  assert.equal(history.done[0].markId, 21);
  assert.equal(history.done[2].markId, 21);
  assert.equal(history.done[2].label, "C");
  assert.equal(history.done[1].before.reference, "C");
});

test("the stack keeps at most its limit, oldest dropped first", () => {
  const history = createHistory(3);
  for (let id = 1; id <= 5; id++) { push(history, { type: "add", markId: id, label: "A", after: {} }); }
  assert.deepEqual(history.done.map((e) => e.markId), [3, 4, 5]);
  clear(history);
  assert.ok(!canUndo(history) && !canRedo(history));
});
