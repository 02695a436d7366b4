// The workspace's units against the definitions of the scales (0 °C = 32 °F, 100 °C = 212 °F,
// −40 the same on both; a kelvin is 9/5 of a degree Fahrenheit), as survey/thermal/units.py.
import assert from "node:assert/strict";
import { test } from "node:test";

import {
  differenceToUnit, formatDifference, formatNumber, formatTemperature, formatTemperatureWithUnit,
  fromUnit, roundC, toUnit, unitLabel
} from "../../static/js/workspace/units.js";

test("toUnit converts the fixed points of the scales", () => {
  assert.equal(toUnit(0, "F"), 32);
  assert.equal(toUnit(100, "F"), 212);
  assert.equal(toUnit(-40, "F"), -40);
  assert.equal(toUnit(21.5, "C"), 21.5);
});

test("fromUnit undoes toUnit", () => {
  for (const c of [-40, -12.5, 0, 21.5, 100, 350]) {
    assert.ok(Math.abs(fromUnit(toUnit(c, "F"), "F") - c) < 1e-9);
  }
});

test("a difference converts without the offset", () => {
  assert.equal(differenceToUnit(10, "F"), 18);
  assert.equal(formatDifference(10, "F"), "+18.0 °F");
  assert.equal(formatDifference(-2.5, "C"), "-2.5 K");
  assert.equal(formatDifference(null, "C"), "–");
});

test("temperatures are written with one decimal and their symbol", () => {
  assert.equal(formatTemperature(20, "F"), "68.0");
  assert.equal(formatTemperatureWithUnit(20, "C"), "20.0 °C");
  assert.equal(formatTemperature(Number.NaN, "C"), "–");
  assert.equal(unitLabel("F"), "°F");
  assert.equal(formatNumber(83.4, 0, " %"), "83 %");
  assert.equal(roundC(21.456), 21.46);
});
