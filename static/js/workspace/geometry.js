/* Coordinates and hit tests of the workspace. Pure: no DOM, no state.

   Image coordinates have pixel centres at whole numbers, x to the right and y down (as the
   server's marks do). A view is {panX, panY, zoom}: screen = pan + (image + 0.5) × zoom. */

export function toScreen(view, x, y) {
  return [view.panX + (x + 0.5) * view.zoom, view.panY + (y + 0.5) * view.zoom];
}

export function toImage(view, sx, sy) {
  return [(sx - view.panX) / view.zoom - 0.5, (sy - view.panY) / view.zoom - 0.5];
}

/* The pixel nearest to `p`, inside a w × h image. */
export function clampPixel(p, w, h) {
  return [Math.min(w - 1, Math.max(0, Math.round(p[0]))), Math.min(h - 1, Math.max(0, Math.round(p[1])))];
}

export function inside(p, w, h) {
  return p[0] >= -0.5 && p[1] >= -0.5 && p[0] < w - 0.5 && p[1] < h - 0.5;
}

export function distToSegment(p, a, b) {
  var dx = b[0] - a[0], dy = b[1] - a[1], len = dx * dx + dy * dy;
  var t = len ? Math.max(0, Math.min(1, ((p[0] - a[0]) * dx + (p[1] - a[1]) * dy) / len)) : 0;
  return Math.hypot(p[0] - a[0] - t * dx, p[1] - a[1] - t * dy);
}

/* Whether `p` lies in the polygon by the non-zero winding rule (the canvas's own fill rule). */
export function insidePolygon(p, corners) {
  var winding = 0;
  for (var i = 0; i < corners.length; i++) {
    var a = corners[i], b = corners[(i + 1) % corners.length];
    var side = (b[0] - a[0]) * (p[1] - a[1]) - (p[0] - a[0]) * (b[1] - a[1]);
    if (a[1] <= p[1]) {
      if (b[1] > p[1] && side > 0) { winding += 1; }
    } else if (b[1] <= p[1] && side < 0) {
      winding -= 1;
    }
  }
  return winding !== 0;
}

/* Whether the screen point (sx, sy) touches `mark` drawn in `view`; `tolerance` in screen px. */
export function hitsMark(mark, sx, sy, view, tolerance) {
  var pts = mark.points.map(function (p) { return toScreen(view, p[0], p[1]); });
  if (mark.kind === "point") {
    return Math.hypot(sx - pts[0][0], sy - pts[0][1]) <= Math.max(tolerance, 1.5 * view.zoom);
  }
  if (mark.kind === "line") { return distToSegment([sx, sy], pts[0], pts[1]) <= tolerance; }
  if (mark.kind === "polygon") { return insidePolygon([sx, sy], pts); }
  var x0 = Math.min(pts[0][0], pts[1][0]) - view.zoom / 2, x1 = Math.max(pts[0][0], pts[1][0]) + view.zoom / 2;
  var y0 = Math.min(pts[0][1], pts[1][1]) - view.zoom / 2, y1 = Math.max(pts[0][1], pts[1][1]) + view.zoom / 2;
  return sx >= x0 - 2 && sx <= x1 + 2 && sy >= y0 - 2 && sy <= y1 + 2;
}

/* The topmost mark under (sx, sy), or null: marks drawn last are on top. */
export function markAt(marks, sx, sy, view, tolerance) {
  for (var i = marks.length - 1; i >= 0; i--) {
    if (hitsMark(marks[i], sx, sy, view, tolerance)) { return marks[i]; }
  }
  return null;
}

/* The index of the corner of `mark` within `handle` screen px of (sx, sy), or −1. */
export function vertexAt(mark, sx, sy, view, handle) {
  if (!mark || mark.kind === "point") { return -1; }
  for (var i = 0; i < mark.points.length; i++) {
    var s = toScreen(view, mark.points[i][0], mark.points[i][1]);
    if (Math.abs(sx - s[0]) <= handle && Math.abs(sy - s[1]) <= handle) { return i; }
  }
  return -1;
}
