// The 2D transform of the spectrum tools (src/image/fft.ts) against a direct double-precision
// DFT (the definition) and against opencv.js's dft, which it replaced: the same numbers within
// float32 rounding.
import { createRequire } from 'node:module';
import { expect, test } from 'vitest';
import { ComplexFft, realDft2d } from '../../src/image/fft';
import { wrapCv } from '../../src/image/cv';
import { spectrumBinIndex } from '../../src/measure/spot-field';
import { rng } from '../../testing/random';

/** Direct DFT of a real w × h array in double precision: X(u, v) = Σ x e^{−2πi(ui/w + vj/h)}. */
function directDft(x: Float64Array, w: number, h: number): { re: Float64Array; im: Float64Array } {
  const re = new Float64Array(w * h);
  const im = new Float64Array(w * h);
  for (let v = 0; v < h; v++) {
    for (let u = 0; u < w; u++) {
      let sr = 0;
      let si = 0;
      for (let j = 0; j < h; j++) {
        for (let i = 0; i < w; i++) {
          const a = -2 * Math.PI * (((u * i) % w) / w + ((v * j) % h) / h);
          sr += x[j * w + i] * Math.cos(a);
          si += x[j * w + i] * Math.sin(a);
        }
      }
      re[v * w + u] = sr;
      im[v * w + u] = si;
    }
  }
  return { re, im };
}

function randomImage(w: number, h: number, seed: number): Float64Array {
  const r = rng(seed);
  return Float64Array.from({ length: w * h }, () => r() - 0.5);
}

async function transform(x: Float64Array, w: number, h: number) {
  const complex = new Float32Array(2 * w * h);
  const power = new Float32Array(w * h);
  const fill = (m: Float32Array, j: number) => {
    for (let i = 0; i < w; i++) m[i] = x[j * w + i];
  };
  await realDft2d(w, h, fill, { kind: 'complex', out: complex });
  await realDft2d(w, h, fill, { kind: 'power', out: power });
  return { complex, power };
}

// Sizes: PFFFT rows and columns (64 × 32), PFFFT rows with fallback columns (32 × 18), fallback
// rows (odd width 15: no Nyquist column; 40 = 2³·5), prime lengths (Bluestein: 7, 13), and 1.
test.each([
  [64, 32],
  [32, 18],
  [15, 32],
  [40, 24],
  [13, 7],
  [96, 48],
  [1, 16],
  [16, 1],
])('realDft2d %i × %i equals the direct DFT within float32 rounding', async (w, h) => {
  const x = randomImage(w, h, 7 * w + h);
  const want = directDft(x, w, h);
  const got = await transform(x, w, h);
  let scale = 0;
  for (let k = 0; k < w * h; k++) scale = Math.max(scale, Math.hypot(want.re[k], want.im[k]));
  let err = 0;
  let perr = 0;
  for (let k = 0; k < w * h; k++) {
    err = Math.max(err, Math.abs(got.complex[2 * k] - want.re[k]), Math.abs(got.complex[2 * k + 1] - want.im[k]));
    perr = Math.max(perr, Math.abs(got.power[k] - (want.re[k] ** 2 + want.im[k] ** 2)));
  }
  // float32 has a unit roundoff of 6e-8; a transform of n points adds O(log n) of them
  expect(err / scale).toBeLessThan(2e-6);
  expect(perr / scale ** 2).toBeLessThan(4e-6);
});

test.each([
  [64, 32],
  [32, 18],
  [15, 32],
  [40, 24],
  [13, 7],
  [1, 16],
])('the half spectrum %i × %i holds every bin of the full one exactly (Hermitian symmetry of a real input)', async (w, h) => {
  // Bracewell, The Fourier Transform and Its Applications (from memory): for real x,
  // X(−u, −v) = X(u, v)*; the half u ≤ w/2 is stored and every other bin is read as its mirror.
  const x = randomImage(w, h, 3 * w + h);
  const { complex } = await transform(x, w, h);
  const half = new Float32Array(2 * ((w >> 1) + 1) * h);
  const fill = (m: Float32Array, j: number) => {
    for (let i = 0; i < w; i++) m[i] = x[j * w + i];
  };
  await realDft2d(w, h, fill, { kind: 'half-complex', out: half });
  for (let v = 0; v < h; v++) {
    for (let u = 0; u < w; u++) {
      const at = spectrumBinIndex(u, v, w, h);
      const k = at >= 0 ? at : -at - 1;
      const k2 = 2 * (v * w + u);
      expect(half[k], `re (${u}, ${v})`).toBe(complex[k2]);
      expect(at >= 0 ? half[k + 1] : -half[k + 1], `im (${u}, ${v})`).toBe(complex[k2 + 1]);
    }
  }
});

test('the one-dimensional fallback equals the direct DFT for 5-smooth and prime lengths', () => {
  for (const n of [1, 2, 3, 4, 5, 6, 8, 12, 30, 45, 64, 7, 11, 97]) {
    const f = new ComplexFft(n);
    const r = rng(n);
    const xr = Float64Array.from({ length: n }, () => r() - 0.5);
    const xi = Float64Array.from({ length: n }, () => r() - 0.5);
    f.re.set(xr);
    f.im.set(xi);
    f.forward();
    for (let k = 0; k < n; k++) {
      let sr = 0;
      let si = 0;
      for (let j = 0; j < n; j++) {
        const a = (-2 * Math.PI * ((j * k) % n)) / n;
        sr += xr[j] * Math.cos(a) - xi[j] * Math.sin(a);
        si += xr[j] * Math.sin(a) + xi[j] * Math.cos(a);
      }
      expect(Math.abs(f.re[k] - sr)).toBeLessThan(1e-12 * n);
      expect(Math.abs(f.im[k] - si)).toBeLessThan(1e-12 * n);
    }
  }
});

test('realDft2d gives opencv.js dft\'s numbers (the transform it replaced) at 256 × 240 and 200 × 150', async () => {
  const { cv } = await wrapCv(createRequire(import.meta.url)('@techstark/opencv-js'));
  for (const [w, h] of [
    [256, 240],
    [200, 150],
  ]) {
    const x = randomImage(w, h, w);
    const mat = new cv.Mat(h, w, cv.CV_32F);
    const out = new cv.Mat();
    try {
      (mat.data32F as Float32Array).set(Float32Array.from(x));
      cv.dft(mat, out, cv.DFT_COMPLEX_OUTPUT);
      const ref = out.data32F as Float32Array;
      const got = await transform(Float64Array.from(Float32Array.from(x)), w, h);
      let scale = 0;
      for (let k = 0; k < ref.length; k++) scale = Math.max(scale, Math.abs(ref[k]));
      let err = 0;
      for (let k = 0; k < ref.length; k++) err = Math.max(err, Math.abs(ref[k] - got.complex[k]));
      expect(err / scale).toBeLessThan(2e-6);
    } finally {
      mat.delete();
      out.delete();
    }
  }
});

test('bad sizes and output arrays are refused by name', async () => {
  await expect(realDft2d(0, 4, () => {}, { kind: 'power', out: new Float32Array(0) })).rejects.toThrow(/width must be a positive integer, got 0/);
  await expect(realDft2d(4, 4, () => {}, { kind: 'complex', out: new Float32Array(16) })).rejects.toThrow(/output.out must be a Float32Array of 32 values/);
  await expect(realDft2d(5, 4, () => {}, { kind: 'half-complex', out: new Float32Array(40) })).rejects.toThrow(/output.out must be a Float32Array of 24 values/);
});
