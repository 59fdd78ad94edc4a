/**
 * Data windows for spectral estimation and the variance they cost a frequency estimate.
 */

/** Window applied before a Fourier transform. */
export type WindowKind = 'hann' | 'tukey' | 'none';

/**
 * Samples of a data window of length n.
 *
 * Parameters: kind; n (≥ 1); tukeyAlpha, the tapered fraction of a Tukey window (0 < α ≤ 1, default 0.5).
 * Returns: Float64Array of n weights.
 * Notes: 'hann' is the periodic form w = 0.5 − 0.5 cos(2πk/n), whose DFT has exactly three non-zero
 * terms, which is what the Hann-window interpolators assume; 'tukey' tapers αn/2 samples at each end
 * with a raised cosine; 'none' is rectangular.
 * Reference: Harris, Proc. IEEE 66(1), 51–83 (1978).
 */
export function windowSamples(kind: WindowKind, n: number, tukeyAlpha = 0.5): Float64Array {
  if (!Number.isInteger(n) || n < 1) throw new RangeError(`window length must be a positive integer, got ${n}`);
  if (!(tukeyAlpha > 0 && tukeyAlpha <= 1)) throw new RangeError(`tukeyAlpha must be in (0, 1], got ${tukeyAlpha}`);
  const w = new Float64Array(n);
  if (kind === 'none') return w.fill(1);
  if (kind === 'hann') {
    for (let k = 0; k < n; k++) w[k] = 0.5 - 0.5 * Math.cos((2 * Math.PI * k) / n);
    return w;
  }
  if (kind === 'tukey') {
    const taper = (tukeyAlpha * (n - 1)) / 2;
    for (let k = 0; k < n; k++) {
      const e = Math.min(k, n - 1 - k);
      w[k] = e >= taper ? 1 : 0.5 - 0.5 * Math.cos((Math.PI * e) / taper);
    }
    return w;
  }
  throw new RangeError(`unknown window '${String(kind)}' (use hann, tukey or none)`);
}

/**
 * How much a window inflates the variance of a frequency estimate over the Cramér–Rao bound.
 *
 * Parameters: w, the window along the frequency's axis; wOther, the window along the other image
 * axis (omit for one-dimensional data).
 * Returns: the factor F ≥ 1 with var(f̂) ≈ F · CRB at high SNR.
 * Notes: linearising the maximiser of the windowed periodogram |Σ wₙ xₙ e^(−2πifn)|² around the
 * true frequency gives var ∝ Σ wₙ² nₙ² / (Σ wₙ nₙ²)², n measured from the window centre; dividing by
 * the rectangular case 1/Σ n² gives F (1 for no window). In 2D the window across the axis wastes
 * samples too: factor N Σ w² / (Σ w)² (1.5 for Hann). Hann: F ≈ 2.34 (1D), 3.5 (2D).
 * Reference: linearised periodogram-maximiser variance as in Rife & Boorstyn, IEEE Trans. Inf. Theory 20(5), 591 (1974) (derivation ours).
 */
export function windowVarianceFactor(w: Float64Array, wOther?: Float64Array): number {
  const n = w.length;
  const c = (n - 1) / 2;
  let a = 0;
  let b = 0;
  let d = 0;
  for (let k = 0; k < n; k++) {
    const t = (k - c) * (k - c);
    a += w[k] * w[k] * t;
    b += t;
    d += w[k] * t;
  }
  let f = d > 0 ? (a * b) / (d * d) : Infinity;
  if (wOther) {
    let s = 0;
    let s2 = 0;
    for (let k = 0; k < wOther.length; k++) {
      s += wOther[k];
      s2 += wOther[k] * wOther[k];
    }
    f *= (wOther.length * s2) / (s * s);
  }
  return f;
}
