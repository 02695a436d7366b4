/* The reading under the cursor: the apparent °C of a pixel and its corrected value,
   interpolated in the server's apparent → corrected table. Pure: no DOM, no state. */

import { clampPixel } from "./geometry.js";

/* The apparent temperature of the pixel nearest `p` in a row-major w × h array. */
export function apparentAt(temps, w, h, p) {
  var q = clampPixel(p, w, h);
  return temps[q[1] * w + q[0]];
}

/* The corrected temperature of an apparent one, linear between the table's evenly spaced
   samples; null outside the table, for NaN, or where the server found no object temperature. */
export function correctedFrom(table, apparent) {
  if (!table || apparent !== apparent) { return null; }
  var a = table.apparent_c, c = table.corrected_c, n = a.length;
  if (apparent < a[0] || apparent > a[n - 1]) { return null; }
  var f = (apparent - a[0]) / (a[n - 1] - a[0]) * (n - 1), i = Math.min(n - 2, Math.floor(f));
  if (c[i] === null || c[i + 1] === null) { return null; }
  return c[i] + (c[i + 1] - c[i]) * (f - i);
}
