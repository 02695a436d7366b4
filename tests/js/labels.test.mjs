// Label placement on the canvas: inside the outline, never on another label, outside with a
// leader line only when nothing fits. Expected positions worked out by hand from the rules.
import assert from "node:assert/strict";
import { test } from "node:test";

import { fitsInside, leaderEnd, overlaps, placeLabels } from "../../static/js/workspace/labels.js";

const W = 14, H = 16; // a one-letter label in bold 15 px

function rect(x0, y0, x1, y1) { return { kind: "rectangle", box: [x0, y0, x1, y1] }; }

function noOverlaps(placed) {
  for (let i = 0; i < placed.length; i++) {
    for (let j = i + 1; j < placed.length; j++) {
      assert.ok(!overlaps(placed[i], placed[j]), `labels ${i} and ${j} overlap`);
    }
  }
}

test("a label goes inside its rectangle at the top-left, 5 px in", () => {
  const [label] = placeLabels([{ shape: rect(100, 50, 200, 120), w: W, h: H }], null);
  assert.deepEqual([label.x, label.y, label.inside, label.leader], [105, 55, true, null]);
});

test("labels of two marks sharing a top-left corner do not overlap, both inside", () => {
  const shape = rect(100, 50, 200, 120);
  const placed = placeLabels([{ shape, w: W, h: H }, { shape: rect(100, 50, 150, 90), w: W, h: H }], null);
  noOverlaps(placed);
  for (const p of placed) { assert.ok(p.inside && fitsInside(shape, p)); }
  assert.equal(placed[1].y, 55); // same row, further right: 105 + 14 + 3 = 122 or later
  assert.ok(placed[1].x >= 122);
});

test("a crowded rectangle fills row by row and never overlaps", () => {
  const shape = rect(0, 0, 60, 60);
  const placed = placeLabels(Array.from({ length: 6 }, () => ({ shape, w: W, h: H })), null);
  noOverlaps(placed);
  assert.ok(placed.every((p) => p.inside && fitsInside(shape, p)));
});

test("a concave polygon's label avoids the notch", () => {
  // An L: the top-right quarter is cut away; the label may not sit across the notch edge.
  const L = { kind: "polygon", corners: [[0, 0], [40, 0], [40, 40], [100, 40], [100, 100], [0, 100]] };
  const [label] = placeLabels([{ shape: L, w: 50, h: H }], null);
  assert.ok(label.inside && fitsInside(L, label));
  // 50 px wide does not fit in the 40 px wide upper arm: it goes down to the lower part.
  assert.ok(label.y >= 40);
  assert.ok(!fitsInside(L, { x: 5, y: 5, w: 50, h: H }));
});

test("an ellipse's label keeps its corners inside the outline", () => {
  const shape = { kind: "ellipse", box: [0, 0, 100, 60] };
  const [label] = placeLabels([{ shape, w: W, h: H }], null);
  assert.ok(label.inside && fitsInside(shape, label));
  assert.ok(label.x > 5); // the box's own top-left corner is outside the ellipse
});

test("a mark smaller than its label gets it outside with a leader line to the outline", () => {
  const small = rect(200, 200, 208, 206);
  const [label] = placeLabels([{ shape: small, w: W, h: H }], { w: 500, h: 500 });
  assert.equal(label.inside, false);
  assert.ok(label.leader, "a leader line");
  assert.ok(label.y + H <= 200 || label.x >= 208 || label.y >= 206 || label.x + W <= 200, "outside the mark");
  // The leader ends on the rectangle and starts on the label.
  const [tx, ty] = label.leader.to;
  assert.ok(tx >= 200 && tx <= 208 && ty >= 200 && ty <= 206);
});

test("outside labels of neighbouring small marks stay apart and inside the view", () => {
  const view = { w: 300, h: 200 };
  const items = [0, 1, 2, 3, 4].map((i) => ({ shape: rect(100 + 4 * i, 100, 102 + 4 * i, 102), w: W, h: H }));
  const placed = placeLabels(items, view);
  noOverlaps(placed);
  for (const p of placed) {
    assert.ok(p.x >= 0 && p.y >= 0 && p.x + p.w <= view.w && p.y + p.h <= view.h);
  }
});

test("a point's label sits beside it, and moves out of another label's way", () => {
  const view = { w: 400, h: 400 };
  const point = { kind: "point", anchor: [50, 50] };
  const placed = placeLabels([{ shape: point, w: W, h: H }, { shape: { kind: "point", anchor: [52, 50] }, w: W, h: H }], view);
  assert.deepEqual([placed[0].x, placed[0].y, placed[0].leader], [50, 31, null]); // above: 50 − 3 − 16
  noOverlaps(placed);
});

test("a label near the top of the view is not pushed above it", () => {
  const [label] = placeLabels([{ shape: { kind: "point", anchor: [50, 5] }, w: W, h: H }], { w: 400, h: 400 });
  assert.ok(label.y >= 0);
});

test("leaderEnd finds the ellipse's outline towards the label", () => {
  const end = leaderEnd({ kind: "ellipse", box: [0, 0, 100, 60] }, 50, -40);
  assert.deepEqual(end.map((v) => Math.round(v * 1e6) / 1e6), [50, 0]); // straight up: the top
});
