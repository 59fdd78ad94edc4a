import { describe, expect, test } from 'vitest';
import { makeGreyImage } from '../../src/image/grey-image';
import { downsample } from '../../src/image/downsample';
import { percentileRange } from '../../src/image/display';
import { lcg } from './fixtures';

/** Type 7 sample quantile by sorting (Hyndman & Fan, Am. Stat. 50, 361, 1996): the reference. */
function quantile7(values: number[], p: number): number {
  const s = values.filter(Number.isFinite).sort((a, b) => a - b);
  const h = ((s.length - 1) * p) / 100;
  const lo = Math.floor(h);
  return lo + 1 < s.length ? s[lo] + (h - lo) * (s[lo + 1] - s[lo]) : s[lo];
}

describe('downsample', () => {
  test('each output pixel is the mean of its block (synthetic, known truth)', () => {
    // 4 × 2 image, factor 2: blocks [0 1 4 5] and [2 3 6 7] → 2.5 and 4.5.
    const img = makeGreyImage(4, 2, Float32Array.from([0, 1, 2, 3, 4, 5, 6, 7]), { bitDepth: 16, sampleKind: 'uint' });
    const d = downsample(img, 2);
    expect([d.width, d.height, d.bitDepth, d.sampleKind]).toEqual([2, 1, 16, 'uint']);
    expect(Array.from(d.data)).toEqual([2.5, 4.5]);
  });
  test('partial edge blocks average only the pixels they cover', () => {
    // 5 × 1, factor 2: [0 1] [2 3] [4] → 0.5, 2.5, 4.
    const d = downsample(makeGreyImage(5, 1, Float32Array.from([0, 1, 2, 3, 4])), 2);
    expect(Array.from(d.data)).toEqual([0.5, 2.5, 4]);
  });
  test('keeps the mean of the whole image when the factor divides the size', () => {
    const r = lcg(3);
    const img = makeGreyImage(60, 36, Float32Array.from({ length: 60 * 36 }, () => r() * 1000));
    const d = downsample(img, 6);
    const mean = (a: ArrayLike<number>) => Array.from(a).reduce((s, v) => s + v, 0) / a.length;
    expect(mean(d.data)).toBeCloseTo(mean(img.data), 3);
  });
  test('scales the calibration by the factor and keeps the warnings', () => {
    const img = makeGreyImage(8, 8, new Float32Array(64), {
      calibration: { nmPerPx: 0.2, nmPerPxY: 0.3, source: 'metadata', relUncertainty: 0.05, detail: 'TIFF' },
      warnings: ['w'],
    });
    const d = downsample(img, 4);
    expect(d.calibration).toMatchObject({ nmPerPx: 0.8, source: 'metadata', relUncertainty: 0.05 });
    expect(d.calibration?.nmPerPxY).toBeCloseTo(1.2, 12);
    expect(d.calibration?.detail).toMatch(/downsampled ×4/);
    expect(d.warnings).toEqual(['w']);
    expect(downsample(img, 1).data).not.toBe(img.data);
  });
  test('rejects a bad factor, naming it', () => {
    const img = makeGreyImage(2, 2, new Float32Array(4));
    expect(() => downsample(img, 1.5)).toThrow(/got 1.5/);
    expect(() => downsample(img, 0)).toThrow(/got 0/);
  });
});

describe('percentileRange', () => {
  test('16-bit integer data give the exact type 7 quantiles', () => {
    const r = lcg(11);
    const values = Array.from({ length: 20001 }, () => Math.floor(r() * r() * 65536));
    const data = Float32Array.from(values);
    for (const [lo, hi] of [[0.5, 99.5], [1, 99], [0, 100], [25, 75], [50, 50]]) {
      const got = percentileRange(data, lo, hi);
      expect(got.low).toBeCloseTo(quantile7(values, lo), 9);
      expect(got.high).toBeCloseTo(quantile7(values, hi), 9);
    }
  });
  // Hyndman & Fan definition 7 worked case: 1..10, p = 25 % → h = 9 × 0.25 = 2.25 → 3 + 0.25 = 3.25.
  test('worked example: the quartiles of 1..10', () => {
    const got = percentileRange(Float32Array.from([10, 9, 8, 7, 6, 5, 4, 3, 2, 1]), 25, 75);
    expect(got).toEqual({ low: 3.25, high: 7.75 });
  });
  test('float data are within one bin width of the sorted result', () => {
    const r = lcg(5);
    const values = Array.from({ length: 50000 }, () => Math.fround((r() - 0.3) * 1e3 * r()));
    const data = Float32Array.from(values);
    const bins = 4096;
    const range = Math.max(...values) - Math.min(...values);
    const got = percentileRange(data, 2, 98, { bins });
    expect(Math.abs(got.low - quantile7(values, 2))).toBeLessThan(range / bins);
    expect(Math.abs(got.high - quantile7(values, 98))).toBeLessThan(range / bins);
  });
  test('NaN and infinities are skipped; no finite value gives NaN', () => {
    const got = percentileRange(Float32Array.from([NaN, 1, Infinity, 3, -Infinity, 2]), 0, 100);
    expect(got).toEqual({ low: 1, high: 3 });
    expect(percentileRange(Float32Array.from([NaN]), 1, 99)).toEqual({ low: NaN, high: NaN });
    expect(percentileRange(Float32Array.from([4, 4, 4]), 1, 99)).toEqual({ low: 4, high: 4 });
  });
  test('step uses every step-th value', () => {
    const data = Float32Array.from({ length: 100 }, (_, i) => (i % 2 ? 1000 : i));
    expect(percentileRange(data, 0, 100, { step: 2 })).toEqual({ low: 0, high: 98 });
  });
  test('rejects bad percentiles and options, naming them', () => {
    const d = new Float32Array(4);
    expect(() => percentileRange(d, -1, 50)).toThrow(/lowPercent .* got -1/);
    expect(() => percentileRange(d, 60, 50)).toThrow(/highPercent .* got 50/);
    expect(() => percentileRange(d, 1, 99, { bins: 0 })).toThrow(/bins .* got 0/);
    expect(() => percentileRange(d, 1, 99, { step: 0.5 })).toThrow(/step .* got 0.5/);
  });
});
