// The proposed-marks list's rules: one character key each for accept and reject, never with
// a modifier (WCAG 2.1.4 leaves Ctrl/Alt/Meta combinations to the browser and assistive
// technology); arrows only inside the list; which proposal is highlighted next.
import assert from "node:assert/strict";
import { test } from "node:test";

import { afterRemoval, describe, keyAction, moved } from "../../static/js/workspace/proposal_list.js";

const key = (k, extra = {}) => ({ key: k, ctrlKey: false, altKey: false, metaKey: false, ...extra });

test("keyAction maps A and R to accept and reject, either case", () => {
  assert.equal(keyAction(key("a"), false), "accept");
  assert.equal(keyAction(key("A"), true), "accept");
  assert.equal(keyAction(key("r"), false), "reject");
  assert.equal(keyAction(key("R"), true), "reject");
});

test("keyAction leaves modified keys and other keys alone", () => {
  assert.equal(keyAction(key("a", { ctrlKey: true }), true), null); // select all
  assert.equal(keyAction(key("r", { metaKey: true }), true), null); // reload
  assert.equal(keyAction(key("a", { altKey: true }), false), null);
  assert.equal(keyAction(key("c"), false), null); // the polygon tool's close key
  assert.equal(keyAction(key("Enter"), true), null);
});

test("keyAction moves with the arrows only inside the list", () => {
  assert.equal(keyAction(key("ArrowDown"), true), "next");
  assert.equal(keyAction(key("ArrowUp"), true), "previous");
  assert.equal(keyAction(key("ArrowDown"), false), null); // on the picture: the cross-hair's
});

test("moved stays within the list", () => {
  assert.equal(moved(3, 0, 1), 1);
  assert.equal(moved(3, 2, 1), 2);
  assert.equal(moved(3, 0, -1), 0);
  assert.equal(moved(3, -1, 1), 0);
  assert.equal(moved(3, -1, -1), 2);
  assert.equal(moved(0, -1, 1), -1);
});

test("afterRemoval highlights the proposal that took the decided one's place", () => {
  assert.equal(afterRemoval(3, 0), 0); // the second moves up
  assert.equal(afterRemoval(3, 2), 1); // the last went: the new last
  assert.equal(afterRemoval(1, 0), -1); // none left
});

test("describe says where in the list, what and why", () => {
  const proposal = { category_label: "Hot spot", reason: "12.3 K above like components" };
  assert.equal(describe(proposal, 2, 5), "2 of 5: Hot spot — 12.3 K above like components");
});
