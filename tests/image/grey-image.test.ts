import { describe, expect, test } from 'vitest';
import { lengthUncertaintyNm, makeGreyImage } from '../../src/image/grey-image';

describe('makeGreyImage', () => {
  test('computes the value range', () => {
    const img = makeGreyImage(2, 2, new Float32Array([3, -1, 7, 2]));
    expect([img.min, img.max]).toEqual([-1, 7]);
    expect(img.calibration).toBeNull();
  });
  test('rejects a data length that does not match the size, naming both', () => {
    expect(() => makeGreyImage(3, 2, new Float32Array(5))).toThrow(/5 does not match 3 × 2 = 6/);
  });
  test('rejects non-integer sizes', () => {
    expect(() => makeGreyImage(0, 2, new Float32Array(0))).toThrow(/width/);
  });
});

describe('lengthUncertaintyNm', () => {
  // Real-space averaging, tests/fixtures/reference-values.md §5 (computed): 1 px at each end over a
  // 100 px length is √2 px, i.e. 1.4 % of the length, added in quadrature to the calibration.
  test('combines end-point and calibration parts in quadrature', () => {
    const cal = { nmPerPx: 0.1, source: 'manual' as const, relUncertainty: 0.02, detail: '' };
    const u = lengthUncertaintyNm(100, Math.SQRT2, cal);
    expect(u).toBeCloseTo(Math.hypot(Math.SQRT2 * 0.1, 10 * 0.02), 12);
  });
});
