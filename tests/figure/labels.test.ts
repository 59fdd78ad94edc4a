// Label placement: whatever the points, no two placed labels overlap, none covers a mark and all
// stay inside the drawing (the property the figures rely on: "labels that never overlap").
import { expect, test } from 'vitest';
import { boxesOverlap, placeLabels, ruleLabelCandidates } from '../../src/figure/labels';
import { rng } from '../../testing/random';

test('random crowded points: placed labels never overlap each other, the marks or the edges', () => {
  for (let seed = 1; seed <= 40; seed++) {
    const rnd = rng(seed);
    const n = 5 + Math.floor(rnd() * 60);
    const bounds = { x: 0, y: 0, width: 300 + rnd() * 400, height: 200 + rnd() * 400 };
    const pts = Array.from({ length: n }, () => ({ x: rnd() * bounds.width, y: rnd() * bounds.height }));
    const marks = pts.map((p) => ({ x: p.x - 6, y: p.y - 6, width: 12, height: 12 }));
    const placed = placeLabels(pts.map((p) => ({ ...p, width: 40 + rnd() * 80, height: 14 })), { bounds, obstacles: marks, gap: 8 });
    const boxes = placed.filter((q) => q.placed).map((q) => q.box);
    for (let i = 0; i < boxes.length; i++) {
      const b = boxes[i];
      expect(b.x >= 0 && b.y >= 0 && b.x + b.width <= bounds.width && b.y + b.height <= bounds.height).toBe(true);
      for (const m of marks) expect(boxesOverlap(b, m)).toBe(false);
      for (let j = i + 1; j < boxes.length; j++) expect(boxesOverlap(b, boxes[j])).toBe(false);
    }
  }
});

test('sparse points all get a label, beside their point', () => {
  const placed = placeLabels([{ x: 50, y: 50, width: 30, height: 12 }, { x: 200, y: 150, width: 30, height: 12 }], { bounds: { x: 0, y: 0, width: 300, height: 300 }, gap: 4 });
  expect(placed.every((p) => p.placed)).toBe(true);
  // first choice: right of and above the point
  expect(placed[0].box).toEqual({ x: 54, y: 34, width: 30, height: 12 });
});

test('two rules at the same place: the second label goes to the other side or a row lower', () => {
  const c = (x: number) => ruleLabelCandidates(x, 10, 60, 14);
  const placed = placeLabels([{ x: 100, y: 10, width: 60, height: 14, candidates: c(100) }, { x: 102, y: 10, width: 60, height: 14, candidates: c(102) }],
    { bounds: { x: 0, y: 0, width: 400, height: 200 } });
  expect(placed.every((p) => p.placed)).toBe(true);
  expect(boxesOverlap(placed[0].box, placed[1].box)).toBe(false);
});

test('a label bigger than the drawing is left out, and bad input is refused by name', () => {
  expect(placeLabels([{ x: 5, y: 5, width: 500, height: 12 }], { bounds: { x: 0, y: 0, width: 100, height: 100 } })[0].placed).toBe(false);
  expect(() => placeLabels([{ x: NaN, y: 0, width: 5, height: 5 }], { bounds: { x: 0, y: 0, width: 10, height: 10 } })).toThrow(/label 0/);
  expect(() => placeLabels([], { bounds: { x: 0, y: 0, width: 0, height: 10 } })).toThrow(/bounds/);
});
