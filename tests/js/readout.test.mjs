// The reading under the cursor: the nearest pixel's apparent °C and the corrected value
// interpolated linearly in the server's table. Expected values by hand.
import assert from "node:assert/strict";
import { test } from "node:test";

import { apparentAt, correctedFrom } from "../../static/js/workspace/readout.js";

test("apparentAt reads the nearest pixel of a row-major array", () => {
  const temps = new Float32Array([10, 11, 12, 20, 21, 22]); // 3 wide, 2 high
  assert.equal(apparentAt(temps, 3, 2, [1.2, 0.9]), 21);
  assert.equal(apparentAt(temps, 3, 2, [-5, -5]), 10);
});

const table = { apparent_c: [10, 20, 30], corrected_c: [12, 24, null] };

test("correctedFrom interpolates between the table's samples", () => {
  assert.equal(correctedFrom(table, 10), 12);
  assert.equal(correctedFrom(table, 15), 18); // halfway between 12 and 24
});

test("correctedFrom answers null where no corrected value exists", () => {
  assert.equal(correctedFrom(table, 25), null); // the upper sample has no object temperature
  assert.equal(correctedFrom(table, 9.9), null); // outside the table
  assert.equal(correctedFrom(table, Number.NaN), null);
  assert.equal(correctedFrom(null, 15), null);
});
