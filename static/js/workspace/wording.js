/* How the readings table words the server's judgements. Pure: no DOM, no state. The
   Python side words them the same way (survey/services/readings.py, the PDF template). */

import { differenceLabel, differenceToUnit } from "./units.js";

export var DECISIONS = {
  "exceeded": "exceeded",
  "not exceeded": "not exceeded",
  "cannot tell": "cannot tell within the camera's accuracy"
};

/* Surface RH as printed: "≥ 100 % (condensation)" at or above saturation, else "83 %". */
export function surfaceRhText(rhPct, condensation) {
  if (rhPct === null || rhPct === undefined) { return "–"; }
  return condensation ? "≥ 100 % (condensation)" : rhPct.toFixed(0) + " %";
}

/* "84–114 %": the 95 % interval of the surface RH. */
export function intervalText(low, high) {
  if (low === null || low === undefined || high === null || high === undefined) { return ""; }
  return low.toFixed(0) + "–" + high.toFixed(0) + " %";
}

/* "1.2 ± 2.3 K below the frost point" (margin ≤ 0) or "0.8 ± 2.3 K above the dew point". */
export function marginText(marginK, uK, limitName, unit) {
  if (marginK === null || marginK === undefined) { return "–"; }
  var value = Math.abs(differenceToUnit(marginK, unit)).toFixed(1);
  var plusMinus = uK ? " ± " + differenceToUnit(uK, unit).toFixed(1) : "";
  return value + plusMinus + " " + differenceLabel(unit) + (marginK <= 0 ? " below " : " above ") + "the " + (limitName || "dew point");
}

export function decisionText(decision) { return decision ? (DECISIONS[decision] || decision) : ""; }

/* "+4.0 K measured, +6.3 K full-load (n = 2)" in the member's unit. */
export function riseText(measuredK, fullLoadK, exponent, unit) {
  if (measuredK === null || measuredK === undefined) { return "–"; }
  function signed(k) { var v = differenceToUnit(k, unit); return (v > 0 ? "+" : "") + v.toFixed(1) + " " + differenceLabel(unit); }
  var text = signed(measuredK) + " measured";
  if (fullLoadK !== null && fullLoadK !== undefined) { text += ", " + signed(fullLoadK) + " full-load (n = " + exponent + ")"; }
  return text;
}
