import { expect, test } from 'vitest';
import { loadCv } from '../../src/image/cv';

test('opencv.js loads once through the wrapper and computes a DFT', async () => {
  const { cv } = await loadCv();
  // Never resolve a promise with cv itself: the module object is thenable (see src/image/cv.ts).
  const again = await loadCv();
  expect(again.cv === cv).toBe(true);
  // DFT of a constant 4×4 image: all energy in the DC term (DFT definition).
  const src = cv.matFromArray(4, 4, cv.CV_32F, new Array(16).fill(1));
  const dst = new cv.Mat();
  cv.dft(src, dst, cv.DFT_COMPLEX_OUTPUT);
  const out = dst.data32F as Float32Array;
  expect(out[0]).toBeCloseTo(16, 5);
  expect(Math.max(...Array.from(out.slice(2)).map(Math.abs))).toBeLessThan(1e-5);
  src.delete();
  dst.delete();
});
