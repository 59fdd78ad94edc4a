import { describe, expect, test } from 'vitest';
import { makeGreyImage } from '../../src/image/grey-image';

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
