/* Where the marks' labels go on the canvas. Pure: no DOM, no state; screen coordinates.

   A shape is {kind, box: [x0, y0, x1, y1]} for "rectangle" and "ellipse" (the outline's
   bounding box), {kind: "polygon", corners: [[x, y]…]}, or {kind: "point" | "line",
   anchor: [x, y]} (a point's centre, a line's start). Each label is a w × h box.

   A label of an area mark goes inside its outline, as near its top-left as it fits, and
   never on a label placed before it. Points and lines have no inside: their label sits
   beside the anchor. Only when no place inside is free (a mark smaller than its label, or
   one filled with other labels) does the label go outside, next to the outline, with a
   leader line to it, so it still names its mark without covering another label. */

var GAP = 3;          // px between a label and another label, or a point's or line's anchor
var INSET = 5;        // px between a label and the outline it sits in: clear of the corner
                      // handles of a picked mark, which reach 4 px inside
var MAX_STEPS = 40;   // candidate rows and columns per shape: bounds the work per frame
var RINGS = 12;       // rings of outside candidates tried before giving up

export function overlaps(a, b) {
  return a.x < b.x + b.w + GAP && b.x < a.x + a.w + GAP && a.y < b.y + b.h + GAP && b.y < a.y + a.h + GAP;
}

/* Whether `p` lies in the polygon (even-odd rule). */
function inPolygon(p, corners) {
  var inside = false;
  for (var i = 0, j = corners.length - 1; i < corners.length; j = i++) {
    var a = corners[i], b = corners[j];
    if ((a[1] > p[1]) !== (b[1] > p[1]) && p[0] < (b[0] - a[0]) * (p[1] - a[1]) / (b[1] - a[1]) + a[0]) {
      inside = !inside;
    }
  }
  return inside;
}

function segmentsCross(p, q, r, s) {
  function side(a, b, c) { return (b[0] - a[0]) * (c[1] - a[1]) - (b[1] - a[1]) * (c[0] - a[0]); }
  var d1 = side(r, s, p), d2 = side(r, s, q), d3 = side(p, q, r), d4 = side(p, q, s);
  return ((d1 > 0 && d2 < 0) || (d1 < 0 && d2 > 0)) && ((d3 > 0 && d4 < 0) || (d3 < 0 && d4 > 0));
}

function corners(rect) {
  return [[rect.x, rect.y], [rect.x + rect.w, rect.y], [rect.x + rect.w, rect.y + rect.h], [rect.x, rect.y + rect.h]];
}

export function boundsOf(shape) {
  if (shape.box) { return shape.box; }
  if (shape.corners) {
    var xs = shape.corners.map(function (p) { return p[0]; }), ys = shape.corners.map(function (p) { return p[1]; });
    return [Math.min.apply(null, xs), Math.min.apply(null, ys), Math.max.apply(null, xs), Math.max.apply(null, ys)];
  }
  return [shape.anchor[0], shape.anchor[1], shape.anchor[0], shape.anchor[1]];
}

/* Whether the label box `rect` lies wholly inside the shape's outline (with GAP to spare). */
export function fitsInside(shape, rect) {
  var r = { x: rect.x - INSET, y: rect.y - INSET, w: rect.w + 2 * INSET, h: rect.h + 2 * INSET };
  if (shape.kind === "rectangle") {
    var b = shape.box;
    return r.x >= b[0] && r.y >= b[1] && r.x + r.w <= b[2] && r.y + r.h <= b[3];
  }
  if (shape.kind === "ellipse") {
    // An ellipse is convex: the box is inside when its four corners are.
    var e = shape.box, cx = (e[0] + e[2]) / 2, cy = (e[1] + e[3]) / 2;
    var rx = (e[2] - e[0]) / 2, ry = (e[3] - e[1]) / 2;
    if (rx <= 0 || ry <= 0) { return false; }
    return corners(r).every(function (p) {
      var dx = (p[0] - cx) / rx, dy = (p[1] - cy) / ry;
      return dx * dx + dy * dy <= 1;
    });
  }
  if (shape.kind === "polygon") {
    // A polygon may be concave: the corners inside and no edge of it crossing the box.
    var box = corners(r), poly = shape.corners;
    if (poly.length < 3 || !box.every(function (p) { return inPolygon(p, poly); })) { return false; }
    for (var i = 0; i < poly.length; i++) {
      var a = poly[i], c = poly[(i + 1) % poly.length];
      for (var k = 0; k < 4; k++) {
        if (segmentsCross(a, c, box[k], box[(k + 1) % 4])) { return false; }
      }
      if (a[0] > r.x && a[0] < r.x + r.w && a[1] > r.y && a[1] < r.y + r.h) { return false; }
    }
    return true;
  }
  return false;
}

function free(rect, placed) {
  for (var i = 0; i < placed.length; i++) { if (overlaps(rect, placed[i])) { return false; } }
  return true;
}

function inView(rect, view) {
  return !view || (rect.x >= 0 && rect.y >= 0 && rect.x + rect.w <= view.w && rect.y + rect.h <= view.h);
}

/* Candidates inside an area shape, row by row from its top-left. */
function insideCandidates(shape, w, h) {
  var b = boundsOf(shape), out = [];
  var spanX = b[2] - b[0] - w - 2 * INSET, spanY = b[3] - b[1] - h - 2 * INSET;
  if (spanX < 0 || spanY < 0) { return out; }
  var stepX = Math.max(1, spanX / MAX_STEPS), stepY = Math.max(1, spanY / MAX_STEPS);
  for (var y = b[1] + INSET; y <= b[3] - h - INSET + 1e-9; y += stepY) {
    for (var x = b[0] + INSET; x <= b[2] - w - INSET + 1e-9; x += stepX) { out.push({ x: x, y: y, w: w, h: h }); }
  }
  return out;
}

/* Candidates around a bounding box, ring by ring further out: above, right, below, left. */
function outsideCandidates(b, w, h, ring) {
  var d = GAP + ring * (h + GAP);
  return [
    { x: b[0], y: b[1] - d - h }, { x: b[2] + d, y: b[1] }, { x: b[0], y: b[3] + d },
    { x: b[0] - d - w, y: b[1] }, { x: b[2] + d, y: b[1] - d - h }, { x: b[0] - d - w, y: b[3] + d },
    { x: b[2] + d, y: b[3] + d }, { x: b[0] - d - w, y: b[1] - d - h }
  ].map(function (c) { return { x: c.x, y: c.y, w: w, h: h }; });
}

/* Where a leader line from (x, y) ends on the shape: the nearest point of a rectangle, the
   nearest corner of a polygon, the ellipse's outline towards (x, y). */
export function leaderEnd(shape, x, y) {
  var b = boundsOf(shape);
  if (shape.kind === "polygon") {
    return shape.corners.reduce(function (best, p) {
      return Math.hypot(p[0] - x, p[1] - y) < Math.hypot(best[0] - x, best[1] - y) ? p.slice() : best;
    }, shape.corners[0].slice());
  }
  if (shape.kind === "ellipse") {
    var cx = (b[0] + b[2]) / 2, cy = (b[1] + b[3]) / 2, rx = (b[2] - b[0]) / 2, ry = (b[3] - b[1]) / 2;
    var angle = Math.atan2((y - cy) * rx, (x - cx) * ry);
    return [cx + rx * Math.cos(angle), cy + ry * Math.sin(angle)];
  }
  if (shape.kind === "rectangle") { return [Math.max(b[0], Math.min(b[2], x)), Math.max(b[1], Math.min(b[3], y))]; }
  return shape.anchor.slice();
}

/* Place one label per shape, in order; earlier labels keep their place.

   labels: [{shape, w, h}]; view: {w, h} (labels outside it are avoided) or null.
   Returns [{x, y, w, h, inside, leader}] in the same order; `leader` is null or
   {from: [x, y], to: [x, y]}, a line from the label to its mark. */
export function placeLabels(labels, view) {
  var placed = [], out = [];
  labels.forEach(function (item) {
    var shape = item.shape, w = item.w, h = item.h, b = boundsOf(shape), chosen = null;
    var area = shape.kind === "rectangle" || shape.kind === "ellipse" || shape.kind === "polygon";
    if (area) {
      var inner = insideCandidates(shape, w, h);
      for (var i = 0; i < inner.length && !chosen; i++) {
        if (fitsInside(shape, inner[i]) && free(inner[i], placed)) { chosen = inner[i]; chosen.inside = true; }
      }
    }
    // A point's or a line's label beside its anchor needs no leader: ring 0 reads as its own.
    for (var ring = 0; ring < RINGS && !chosen; ring++) {
      var around = outsideCandidates(b, w, h, ring);
      for (var k = 0; k < around.length && !chosen; k++) {
        if (free(around[k], placed) && inView(around[k], view)) { chosen = around[k]; chosen.inside = false; }
      }
    }
    if (!chosen) {
      // Everything nearby is taken (hundreds of labels on a small view): the label goes
      // above its mark even if it covers another, rather than being left out.
      chosen = { x: b[0], y: b[1] - GAP - h, w: w, h: h, inside: false };
    }
    chosen.leader = null;
    if (!chosen.inside && (area || ring > 1)) {
      var cx = chosen.x + w / 2, cy = chosen.y + h / 2;
      var to = leaderEnd(shape, cx, cy);
      var from = [Math.max(chosen.x, Math.min(chosen.x + w, to[0])), Math.max(chosen.y, Math.min(chosen.y + h, to[1]))];
      chosen.leader = { from: from, to: to };
    }
    placed.push(chosen);
    out.push(chosen);
  });
  return out;
}
