// The batch page's progress text and change detection (static/js/batch-progress.js).
import { test } from "node:test";
import assert from "node:assert/strict";

import { changedRows, nextDelay, summarise } from "../../static/js/batch-progress.js";

test("summarise counts done, failed and total", () => {
  const progress = summarise({ done: 3, failed: 1, total: 10, thermograms: [] });
  assert.equal(progress.text, "3 of 10 processed (1 could not be read)");
  assert.equal(progress.fraction, 0.3);
  assert.equal(progress.finished, false);
});

test("summarise says when all are processed", () => {
  const progress = summarise({ done: 4, failed: 0, total: 4, thermograms: [] });
  assert.equal(progress.text, "All 4 processed");
  assert.equal(progress.finished, true);
});

test("summarise of an empty survey shows nothing and is finished", () => {
  const progress = summarise({ done: 0, total: 0, thermograms: [] });
  assert.equal(progress.text, "");
  assert.equal(progress.finished, true);
});

test("changedRows keeps only rows that differ from what is shown", () => {
  const shown = new Map([
    [1, { id: 1, status: "ready", stalled: false, error: "", thumbnail: "/t1" }],
    [2, { id: 2, status: "queued", stalled: false, error: "", thumbnail: null }],
  ]);
  const rows = [
    { id: 1, status: "ready", stalled: false, error: "", thumbnail: "/t1" },
    { id: 2, status: "ready", stalled: false, error: "", thumbnail: "/t2" },
    { id: 3, status: "queued", stalled: false, error: "", thumbnail: null },
  ];
  assert.deepEqual(changedRows(shown, rows).map((row) => row.id), [2, 3]);
});

test("nextDelay backs off to at most 15 s", () => {
  assert.equal(nextDelay(2000), 3000);
  assert.equal(nextDelay(12000), 15000);
});
