/* The proposed-marks list's pure rules: which key does what, and which proposal is
   highlighted after one is accepted or rejected. No DOM, no state: tested with node. */

/* The action of a key press on the list or the picture: "accept", "reject", "next",
   "previous" or null. Character keys act only without Ctrl, Alt or Meta, so the browser's
   and assistive technology's own shortcuts keep working (WCAG 2.1.4). */
export function keyAction(event, inList) {
  if (event.ctrlKey || event.altKey || event.metaKey) { return null; }
  var key = event.key;
  if (key === "a" || key === "A") { return "accept"; }
  if (key === "r" || key === "R") { return "reject"; }
  if (inList && key === "ArrowDown") { return "next"; }
  if (inList && key === "ArrowUp") { return "previous"; }
  return null;
}

/* The index highlighted after moving by `step` through `count` proposals (clamped). */
export function moved(count, index, step) {
  if (count <= 0) { return -1; }
  if (index < 0) { return step >= 0 ? 0 : count - 1; }
  return Math.max(0, Math.min(count - 1, index + step));
}

/* After the proposal at `index` left a list of `count` (count includes it): the one that
   took its place, or the new last one; -1 when none is left. */
export function afterRemoval(count, index) {
  var left = count - 1;
  if (left <= 0) { return -1; }
  return Math.min(index, left - 1);
}

/* The list's line for one proposal: what, why, and its rank within the list. */
export function describe(proposal, position, count) {
  return position + " of " + count + ": " + proposal.category_label + " — " + proposal.reason;
}
