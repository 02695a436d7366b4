// How the workspace words the server's judgements (static/js/workspace/wording.js). The
// expected texts are the product's own wording, the same as the page and the PDF.
import assert from "node:assert/strict";
import { test } from "node:test";

import {
  decisionText, intervalText, marginText, riseText, surfaceRhText
} from "../../static/js/workspace/wording.js";

test("a surface at or past saturation reads as condensation, not as a number", () => {
  assert.equal(surfaceRhText(118.2, true), "≥ 100 % (condensation)");
  assert.equal(surfaceRhText(83.4, false), "83 %");
  assert.equal(surfaceRhText(null, false), "–");
});

test("the margin says below or above which limit, with its ±", () => {
  assert.equal(marginText(-0.18, 2.3, "frost point", "C"), "0.2 ± 2.3 K below the frost point");
  assert.equal(marginText(2.73, 0, "dew point", "C"), "2.7 K above the dew point");
  // A kelvin is 9/5 of a degree Fahrenheit (docs/references.md § Decoding and rendering).
  assert.equal(marginText(-1.0, 1.0, "dew point", "F"), "1.8 ± 1.8 °F below the dew point");
});

test("decisions and intervals read as words", () => {
  assert.equal(decisionText("cannot tell"), "cannot tell within the camera's accuracy");
  assert.equal(decisionText("exceeded"), "exceeded");
  assert.equal(intervalText(84.7, 113.6), "85–114 %");
});

test("the measured rise comes first, the full-load one beside it with its n", () => {
  assert.equal(riseText(4.0, 6.3, 2, "C"), "+4.0 K measured, +6.3 K full-load (n = 2)");
  assert.equal(riseText(0.0, null, null, "C"), "0.0 K measured");
});
