/* Temperature units of the workspace: °C is what the server sends and stores; the member
   may read and type °F. A temperature converts with the offset, a difference without.
   The Python twin of this module is survey/thermal/units.py. Pure: no DOM, no state. */

export function toUnit(c, unit) { return unit === "F" ? c * 9 / 5 + 32 : c; }

export function fromUnit(v, unit) { return unit === "F" ? (v - 32) * 5 / 9 : v; }

export function differenceToUnit(k, unit) { return unit === "F" ? k * 9 / 5 : k; }

export function unitLabel(unit) { return unit === "F" ? "°F" : "°C"; }

export function differenceLabel(unit) { return unit === "F" ? "°F" : "K"; }

/* A temperature in `unit` without its symbol, "–" when missing. */
export function formatTemperature(c, unit, digits) {
  if (c === null || c === undefined || !isFinite(c)) { return "–"; }
  return toUnit(c, unit).toFixed(digits === undefined ? 1 : digits);
}

/* A temperature with its symbol, e.g. "21.5 °C". */
export function formatTemperatureWithUnit(c, unit) {
  return c === null || c === undefined ? "–" : formatTemperature(c, unit) + " " + unitLabel(unit);
}

/* A signed difference, e.g. "+3.2 K" or "+5.8 °F". */
export function formatDifference(k, unit) {
  if (k === null || k === undefined) { return "–"; }
  var v = differenceToUnit(k, unit);
  return (v > 0 ? "+" : "") + v.toFixed(1) + " " + differenceLabel(unit);
}

export function formatNumber(v, digits, suffix) {
  if (v === null || v === undefined) { return "–"; }
  return v.toFixed(digits) + (suffix || "");
}

/* °C rounded to 0.01, as the server stores a span. */
export function roundC(c) { return Math.round(c * 100) / 100; }
