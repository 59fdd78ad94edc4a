import { expect, test } from 'vitest';
import { makeGreyImage } from '../../src/image/grey-image';
import { makeThumbnail } from '../../src/store/thumbnail';

test('a thumbnail keeps the aspect ratio and is never enlarged', () => {
  const big = makeGreyImage(400, 200, new Float32Array(400 * 200).map((_, i) => i % 400));
  const t = makeThumbnail(big, { maxSidePx: 96 });
  // The smallest whole block size that fits 400 px into 96 is 5: 80 × 40.
  expect([t.width, t.height]).toEqual([80, 40]);
  expect(t.grey.length).toBe(80 * 40);
  const small = makeThumbnail(makeGreyImage(10, 5, new Float32Array(50).map((_, i) => i)), { maxSidePx: 96 });
  expect([small.width, small.height]).toEqual([10, 5]);
});

test('a horizontal ramp becomes a ramp from black to white, stretched between the percentiles', () => {
  // Synthetic truth: x-ramp; the 0.5 %/99.5 % percentile stretch is common practice for display.
  const w = 256;
  const ramp = makeGreyImage(w, 16, new Float32Array(w * 16).map((_, i) => i % w));
  const t = makeThumbnail(ramp, { maxSidePx: 64 });
  const row = Array.from(t.grey.subarray(0, t.width));
  expect(row[0]).toBe(0);
  expect(row[t.width - 1]).toBe(255);
  for (let i = 1; i < row.length; i++) expect(row[i]).toBeGreaterThanOrEqual(row[i - 1]);
});

test('a flat image gives a black thumbnail rather than dividing by zero', () => {
  const t = makeThumbnail(makeGreyImage(8, 8, new Float32Array(64).fill(5)));
  expect(Array.from(t.grey).every((v) => v === 0)).toBe(true);
});

test('bad options are rejected with the offending value', () => {
  const im = makeGreyImage(2, 2, new Float32Array(4));
  expect(() => makeThumbnail(im, { maxSidePx: 0 })).toThrow(/maxSidePx .* got 0/);
  expect(() => makeThumbnail(im, { lowPercent: 60, highPercent: 40 })).toThrow(/60 and 40/);
});
