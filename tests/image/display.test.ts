// The one display stretch and the view pyramid. Percentiles follow Hyndman & Fan, "Sample
// quantiles in statistical packages", Am. Stat. 50, 361 (1996), definition 7; a linear window
// maps black to 0 and white to 255 (common practice); a pyramid level is the 2 × 2 box mean of the
// one before (Burt & Adelson, IEEE Trans. Commun. 31, 532, 1983).
import { describe, expect, test } from 'vitest';
import { displayLimits, displayPicture, greyHistogram, reduceForDisplay, stretchToGrey } from '../../src/image/display';
import { makeGreyImage } from '../../src/image/grey-image';
import { buildPyramid } from '../../src/image/pyramid';
import { cropImage } from '../../src/image/crop';

describe('display stretch', () => {
  test('black and white at the percentiles; linear between, clipped, rounded', () => {
    const data = Float32Array.from({ length: 201 }, (_, i) => i); // 0..200: percentile p is 2p exactly (type 7)
    expect(displayLimits(data, { lowPercent: 10, highPercent: 90 })).toEqual({ black: 20, white: 180 });
    const g = stretchToGrey(Float32Array.from([0, 20, 100, 180, 250, NaN]), { black: 20, white: 180 });
    expect(Array.from(g)).toEqual([0, 0, 128, 255, 255, 0]);
    const inv = stretchToGrey([20, 180], { black: 20, white: 180 }, new Uint8Array(2), { invert: true });
    expect(Array.from(inv)).toEqual([255, 0]);
    const f = stretchToGrey([100], { black: 20, white: 180 }, new Float32Array(1));
    expect(f[0]).toBeCloseTo(127.5, 5);
  });

  test('a flat image shows black rather than dividing by zero; bad limits are refused by name', () => {
    expect(displayLimits(new Float32Array(10).fill(7))).toEqual({ black: 7, white: 8 });
    expect(displayLimits(Float32Array.from([NaN, NaN]))).toEqual({ black: 0, white: 1 });
    expect(() => stretchToGrey([1], { black: 5, white: 5 })).toThrow(/white above black, got black 5, white 5/);
    expect(() => stretchToGrey([1, 2], { black: 0, white: 1 }, new Uint8Array(1))).toThrow(/out holds 1 values, fewer than the 2 given/);
  });

  test('a picture takes its limits from the part asked for', () => {
    // 4 × 2: the centre 2 × 2 holds 10 and 20, the edges 0 and 1000
    const v = Float32Array.from([0, 10, 20, 1000, 0, 10, 20, 1000]);
    const p = displayPicture(v, 4, 2, { lowPercent: 0, highPercent: 100, limitsFrom: { x: 1, y: 0, width: 2, height: 2 } });
    expect(Array.from(p.rgba.filter((_, i) => i % 4 === 0))).toEqual([0, 0, 255, 255, 0, 0, 255, 255]);
    expect(p.rgba[3]).toBe(255);
  });

  test('reduction keeps the block maximum or mean; the histogram counts every finite value', () => {
    const v = [1, 2, 3, 4, 5, 6, 7, 8];
    expect(Array.from(reduceForDisplay(v, 4, 2, 2, 'max').data)).toEqual([6, 8]);
    expect(Array.from(reduceForDisplay(v, 4, 2, 2, 'mean').data)).toEqual([3.5, 5.5]);
    const img = makeGreyImage(4, 2, Float32Array.from([0, 1, 2, 3, 4, 5, 6, NaN]), { sampleKind: 'float' });
    const h = greyHistogram(img, 4);
    expect(h.counts.reduce((a, b) => a + b, 0)).toBe(7);
  });
});

describe('pyramid and crop', () => {
  test('each level is the 2 × 2 box mean of the one before, down to the smallest side asked for', () => {
    const img = makeGreyImage(8, 4, Float32Array.from({ length: 32 }, (_, i) => i), { calibration: { nmPerPx: 0.5, source: 'manual', relUncertainty: 0.05, detail: 'x' } });
    const levels = buildPyramid(img, { smallestSidePx: 2 });
    expect(levels.map((l) => [l.width, l.height])).toEqual([[4, 2], [2, 1]]);
    // block (0..1) × (0..1) of 0, 1, 8, 9 → 4.5
    expect(levels[0].data[0]).toBe(4.5);
    expect(levels[1].calibration?.nmPerPx).toBe(2);
    expect(() => buildPyramid(img, { smallestSidePx: 0 })).toThrow(/smallestSidePx must be ≥ 1, got 0/);
  });

  test('a crop copies the rectangle and keeps the calibration; one outside the image is refused by its numbers', () => {
    const img = makeGreyImage(4, 3, Float32Array.from({ length: 12 }, (_, i) => i), { calibration: { nmPerPx: 1, source: 'manual', relUncertainty: 0.05, detail: 'x' } });
    const c = cropImage(img, { x: 1, y: 1, width: 2, height: 2 });
    expect(Array.from(c.data)).toEqual([5, 6, 9, 10]);
    expect(c.calibration).toEqual(img.calibration);
    expect(c.data.buffer).not.toBe(img.data.buffer);
    expect(() => cropImage(img, { x: 3, y: 0, width: 2, height: 1 })).toThrow(/crop x 3, y 0, 2 × 1 lies outside the 4 × 3 image/);
  });
});
