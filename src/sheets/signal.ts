/**
 * Small signal routines for the sheet measurements: forward/inverse FFT on top of the shared
 * radix-2 transform, reflect padding, and a sinusoid fitted with a straight trend.
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

/**
 * Least-squares fit of a constant, a straight trend and a sinusoid of a given period to samples
 * [from, to) of a profile. The trend's abscissa runs from −0.5 to 0.5 over the range; the
 * sinusoid's phase counts from sample 0. Linear least squares by the normal equations, solved by
 * Gaussian elimination with pivoting (common practice).
 *
 * @param values the profile
 * @param periodSamples the sinusoid's period, in samples
 * @param from first sample (default 0)
 * @param to one past the last sample (default the profile's length)
 * @returns the coefficients [constant, trend, cos, sin] and the residual sum of squares, or null
 *   when the system is singular
 */
export function fitSinusoidTrend(values: ArrayLike<number>, periodSamples: number, from = 0, to = values.length): { coef: [number, number, number, number]; rss: number } | null {
  if (!(periodSamples > 0 && Number.isFinite(periodSamples))) throw new RangeError(`periodSamples must be positive and finite, got ${periodSamples}`);
  if (!(Number.isInteger(from) && Number.isInteger(to) && from >= 0 && to <= values.length && to - from >= 4)) throw new RangeError(`from and to must select at least 4 of ${values.length} samples, got ${from} to ${to}`);
  const n = to - from;
  const cols = (i: number) => [1, (i - from) / n - 0.5, Math.cos((2 * Math.PI * i) / periodSamples), Math.sin((2 * Math.PI * i) / periodSamples)];
  const a = Array.from({ length: 4 }, () => new Float64Array(5));
  for (let i = from; i < to; i++) {
    const c = cols(i);
    for (let r = 0; r < 4; r++) {
      for (let k = 0; k < 4; k++) a[r][k] += c[r] * c[k];
      a[r][4] += c[r] * values[i];
    }
  }
  for (let r = 0; r < 4; r++) {
    let piv = r;
    for (let k = r + 1; k < 4; k++) if (Math.abs(a[k][r]) > Math.abs(a[piv][r])) piv = k;
    [a[r], a[piv]] = [a[piv], a[r]];
    if (Math.abs(a[r][r]) < 1e-12) return null;
    for (let k = 0; k < 4; k++) {
      if (k === r) continue;
      const f = a[k][r] / a[r][r];
      for (let j = r; j < 5; j++) a[k][j] -= f * a[r][j];
    }
  }
  const coef = a.map((row, r) => row[4] / row[r]) as [number, number, number, number];
  let rss = 0;
  for (let i = from; i < to; i++) {
    const c = cols(i);
    rss += (values[i] - coef[0] - coef[1] * c[1] - coef[2] * c[2] - coef[3] * c[3]) ** 2;
  }
  return { coef, rss };
}
