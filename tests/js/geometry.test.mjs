// Coordinates and hit tests of the workspace: pixel centres at whole numbers, a view is
// {panX, panY, zoom} with screen = pan + (image + 0.5) × zoom. Expected values by hand.
import assert from "node:assert/strict";
import { test } from "node:test";

import {
  clampPixel, distToSegment, hitsMark, inside, insidePolygon, markAt, toImage, toScreen, vertexAt
} from "../../static/js/workspace/geometry.js";

const view = { panX: 10, panY: 20, zoom: 4 };

test("toScreen puts a pixel's centre half a pixel in", () => {
  // (0, 0) → 10 + 0.5·4 = 12, 20 + 0.5·4 = 22.
  assert.deepEqual(toScreen(view, 0, 0), [12, 22]);
  assert.deepEqual(toScreen(view, 3, 1), [24, 26]); // 10 + 3.5·4, 20 + 1.5·4
});

test("toImage undoes toScreen", () => {
  for (const [x, y] of [[0, 0], [3, 1], [12.25, 7.5]]) {
    const [sx, sy] = toScreen(view, x, y);
    assert.deepEqual(toImage(view, sx, sy), [x, y]);
  }
});

test("clampPixel rounds to the nearest pixel inside the image", () => {
  assert.deepEqual(clampPixel([2.4, 2.6], 10, 8), [2, 3]);
  assert.deepEqual(clampPixel([-3, 99], 10, 8), [0, 7]);
});

test("inside counts the outer half pixel of the border pixels", () => {
  assert.equal(inside([-0.5, -0.5], 10, 8), true);
  assert.equal(inside([9.49, 7.49], 10, 8), true);
  assert.equal(inside([9.5, 0], 10, 8), false);
});

test("distToSegment measures to the nearest point of the segment", () => {
  assert.equal(distToSegment([5, 3], [0, 0], [10, 0]), 3);
  assert.equal(distToSegment([13, 4], [0, 0], [10, 0]), 5); // past the end: 3-4-5 triangle
  assert.equal(distToSegment([1, 1], [1, 1], [1, 1]), 0);
});

test("insidePolygon follows the non-zero rule, as the canvas fills", () => {
  const square = [[0, 0], [10, 0], [10, 10], [0, 10]];
  assert.equal(insidePolygon([5, 5], square), true);
  assert.equal(insidePolygon([15, 5], square), false);
  // A pentagram traced in one direction: its centre is wound twice, so it is inside.
  const star = [[50, 0], [79, 90], [2, 35], [98, 35], [21, 90]];
  assert.equal(insidePolygon([50, 45], star), true);
});

test("hitsMark and markAt find the topmost mark under the pointer", () => {
  const one = { panX: 0, panY: 0, zoom: 1 };
  const rectangle = { id: 1, kind: "rectangle", points: [[10, 10], [20, 20]] };
  const point = { id: 2, kind: "point", points: [[15, 15]] };
  const line = { id: 3, kind: "line", points: [[0, 50], [40, 50]] };
  assert.equal(hitsMark(rectangle, 12.5, 12.5, one, 7), true);
  assert.equal(hitsMark(rectangle, 40, 40, one, 7), false);
  assert.equal(hitsMark(line, 20.5, 55, one, 7), true);
  assert.equal(markAt([rectangle, point], 15.5, 15.5, one, 7).id, 2);
  assert.equal(markAt([rectangle, point, line], 100, 100, one, 7), null);
});

test("vertexAt finds a corner within the handle size", () => {
  const mark = { kind: "polygon", points: [[0, 0], [10, 0], [10, 10]] };
  assert.equal(vertexAt(mark, 10.5 + 3, 0.5, { panX: 0, panY: 0, zoom: 1 }, 7), 1);
  assert.equal(vertexAt(mark, 50, 50, { panX: 0, panY: 0, zoom: 1 }, 7), -1);
  assert.equal(vertexAt({ kind: "point", points: [[0, 0]] }, 0.5, 0.5, view, 7), -1);
});
