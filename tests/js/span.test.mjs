// The workspace's "Auto span" covers every mark's apparent extremes (the rule of the printed
// report, issue 14). Expected spans are worked by hand from the inputs: common practice, no
// source.
import assert from "node:assert/strict";
import { test } from "node:test";

import { spanCoveringMarks } from "../../static/js/workspace/span.js";

test("a mark hotter than the percentile span widens its top", () => {
  const marks = [{ stats: { min_c: 30.2, max_c: 75.4 } }];
  assert.deepEqual(spanCoveringMarks([27.0, 36.0], marks), [27.0, 75.4]);
});

test("a mark colder than the span widens its bottom", () => {
  const marks = [{ stats: { min_c: -12.5, max_c: 1.0 } }, { stats: { min_c: 2.0, max_c: 3.0 } }];
  assert.deepEqual(spanCoveringMarks([0.0, 8.0], marks), [-12.5, 8.0]);
});

test("marks inside the span, without statistics or with gaps leave it as it is", () => {
  const marks = [{ stats: { min_c: 21.0, max_c: 22.0 } }, { stats: null }, {}, { stats: { min_c: null, max_c: NaN } }];
  assert.deepEqual(spanCoveringMarks([20.0, 25.0], marks), [20.0, 25.0]);
  assert.deepEqual(spanCoveringMarks([20.0, 25.0], undefined), [20.0, 25.0]);
});
