/**
 * Small signal routines for the sheet measurements: forward/inverse FFT on top of the shared
 * radix-2 transform, and reflect padding.
 */
import { fftRadix2 } from '../measure/period-profile';

/** In-place radix-2 complex FFT: sign −1 forward, +1 inverse (unscaled, by conjugation of the forward transform). */
export function sheetFft(re: Float64Array, im: Float64Array, sign: 1 | -1): void {
  if (re.length !== im.length) throw new RangeError(`re and im lengths differ: ${re.length} vs ${im.length}`);
  if (sign === -1) {
    fftRadix2(re, im);
    return;
  }
  for (let i = 0; i < im.length; i++) im[i] = -im[i];
  fftRadix2(re, im);
  for (let i = 0; i < im.length; i++) im[i] = -im[i];
}

/** Smallest power of two ≥ n. */
export function nextPow2(n: number): number {
  let p = 1;
  while (p < n) p <<= 1;
  return p;
}

/**
 * Reflect-pads a profile (after subtracting its mean) into a power-of-two buffer; returns the
 * buffer and the offset of sample 0 inside it.
 */
export function padReflect(values: ArrayLike<number>, padPx: number): { re: Float64Array; offset: number } {
  const n = values.length;
  let mean = 0;
  for (let i = 0; i < n; i++) mean += values[i];
  mean /= n;
  const pad = Math.min(Math.max(0, Math.round(padPx)), n - 1);
  const size = nextPow2(n + 2 * pad);
  const re = new Float64Array(size);
  const offset = pad;
  for (let i = 0; i < size; i++) {
    // index into values with mirror reflection about both ends, periodic with 2(n − 1)
    let k = i - offset;
    const m = 2 * (n - 1) || 1;
    k = ((k % m) + m) % m;
    if (k >= n) k = m - k;
    re[i] = values[k] - mean;
  }
  // taper the padding smoothly to zero so the circular wrap adds no edge
  const total = size - n;
  for (let i = 0; i < size; i++) {
    const k = i - offset;
    if (k >= 0 && k < n) continue;
    const dist = k < 0 ? -k : k - (n - 1);
    const reach = k < 0 ? offset : total - offset;
    const w = reach > 0 ? 0.5 * (1 + Math.cos((Math.PI * Math.min(dist, reach)) / reach)) : 0;
    re[i] *= w;
  }
  return { re, offset };
}
