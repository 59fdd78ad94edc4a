/**
 * Small signal helpers for the sheet measurements: an in-place radix-2 FFT and the analytic
 * signal of a Gaussian band-passed profile. Private to the sheets code (not a general FFT).
 */

/** In-place iterative radix-2 complex FFT (Cooley & Tukey, Math. Comput. 19, 297 (1965)); sign −1 forward, +1 inverse (unscaled). */
export function sheetFft(re: Float64Array, im: Float64Array, sign: 1 | -1): void {
  const n = re.length;
  if (n !== im.length) throw new RangeError(`re and im lengths differ: ${n} vs ${im.length}`);
  if (n & (n - 1)) throw new RangeError(`FFT length must be a power of two, got ${n}`);
  for (let i = 1, j = 0; i < n; i++) {
    let bit = n >> 1;
    for (; j & bit; bit >>= 1) j ^= bit;
    j ^= bit;
    if (i < j) {
      let t = re[i]; re[i] = re[j]; re[j] = t;
      t = im[i]; im[i] = im[j]; im[j] = t;
    }
  }
  for (let len = 2; len <= n; len <<= 1) {
    const ang = (sign * 2 * Math.PI) / len;
    const wr = Math.cos(ang);
    const wi = Math.sin(ang);
    const half = len >> 1;
    for (let i = 0; i < n; i += len) {
      let cr = 1;
      let ci = 0;
      for (let k = 0; k < half; k++) {
        const a = i + k;
        const b = a + half;
        const xr = re[b] * cr - im[b] * ci;
        const xi = re[b] * ci + im[b] * cr;
        re[b] = re[a] - xr; im[b] = im[a] - xi;
        re[a] += xr; im[a] += xi;
        const t = cr * wr - ci * wi;
        ci = cr * wi + ci * wr;
        cr = t;
      }
    }
  }
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
