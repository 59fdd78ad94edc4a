/**
 * Sub-bin refinement of a spectral peak from the DFT values at the peak bin and its two neighbours.
 *
 * Sign convention for all: X_k = Σ xₙ e^(−2πikn/N); the returned δ is the offset of the true peak
 * from the middle bin, in bins (positive towards the +1 neighbour), in [−0.5, 0.5] for the
 * magnitude forms.
 */

/** A complex DFT value. */
export interface Complex {
  re: number;
  im: number;
}

/** Interpolators for complex DFT values (rectangular window). */
export type ComplexInterpolator = 'jacobsen' | 'candan' | 'quinn' | 'macleod';

function div(a: Complex, b: Complex): Complex {
  const d = b.re * b.re + b.im * b.im;
  return { re: (a.re * b.re + a.im * b.im) / d, im: (a.im * b.re - a.re * b.im) / d };
}

/**
 * Peak offset from three complex DFT values of rectangular-window data.
 *
 * Parameters: xm, x0, xp, the values at bins k − 1, k, k + 1; method; n, the transform length
 * (needed by 'candan').
 * Returns: δ in bins.
 * Notes: these forms are for rectangular windows; on Hann-windowed data the plain Jacobsen form is
 * biased by up to 0.25 bin: use {@link magnitudeRatioOffset} with 'hann' there.
 * Reference: Jacobsen & Kootsookos, IEEE Signal Process. Mag. 24(3), 123 (2007); Candan, IEEE Signal Process. Lett. 18(6), 351 (2011); Quinn, IEEE Trans. Signal Process. 42(5), 1264 (1994); Macleod, IEEE Trans. Signal Process. 46(1), 141 (1998).
 */
export function complexPeakOffset(xm: Complex, x0: Complex, xp: Complex, method: ComplexInterpolator, n = 0): number {
  if (method === 'jacobsen' || method === 'candan') {
    const num = { re: xm.re - xp.re, im: xm.im - xp.im };
    const den = { re: 2 * x0.re - xm.re - xp.re, im: 2 * x0.im - xm.im - xp.im };
    const d = div(num, den).re;
    if (method === 'jacobsen') return d;
    if (!(n > 1)) throw new RangeError(`candan needs the transform length n > 1, got ${n}`);
    const t = Math.PI / n;
    return (Math.tan(t) / t) * d;
  }
  if (method === 'quinn') {
    const am = div(xm, x0).re;
    const ap = div(xp, x0).re;
    const dm = am / (1 - am);
    const dp = -ap / (1 - ap);
    return dp > 0 && dm > 0 ? dp : dm;
  }
  if (method === 'macleod') {
    const r = (a: Complex) => a.re * x0.re + a.im * x0.im; // Re{X(n) X0*}
    const rm = r(xm);
    const r0 = r(x0);
    const rp = r(xp);
    const d = (rm - rp) / (2 * r0 + rm + rp);
    if (Math.abs(d) < 1e-12) return 0;
    return (Math.sqrt(1 + 8 * d * d) - 1) / (4 * d);
  }
  throw new RangeError(`unknown interpolator '${String(method)}'`);
}

/**
 * Peak offset from three DFT magnitudes, exact for one tone under the named window.
 *
 * Parameters: am, a0, ap, the magnitudes |X| (not power) at bins k − 1, k, k + 1; window: 'hann'
 * (periodic Hann) or 'none' (rectangular).
 * Returns: δ in bins, in [−0.5, 0.5] when the middle bin is the largest.
 * Notes: with α the ratio of the larger neighbour to the middle value, the kernel shapes give
 * δ = (2α − 1)/(α + 1) for Hann and δ = α/(1 + α) for rectangular data, exact up to O(1/N²) for a
 * tone far from DC and Nyquist. Works on magnitudes only, so a 2D power spectrum can be refined
 * along each axis separately (the 2D Hann kernel is separable).
 * Reference: Grandke, IEEE Trans. Instrum. Meas. 32(2), 350–355 (1983).
 */
export function magnitudeRatioOffset(am: number, a0: number, ap: number, window: 'hann' | 'none'): number {
  if (!(a0 > 0)) return 0;
  const right = ap >= am;
  const alpha = Math.min(1, (right ? ap : am) / a0);
  let d: number;
  if (window === 'hann') d = (2 * alpha - 1) / (alpha + 1);
  else if (window === 'none') d = alpha / (1 + alpha);
  else throw new RangeError(`magnitude-ratio interpolation needs window 'hann' or 'none', got '${String(window)}'`);
  d = Math.max(0, Math.min(0.5, d));
  return right ? d : -d;
}

/**
 * Peak offset from a parabola through three log-power values (Gaussian interpolation).
 *
 * Parameters: pm, p0, pp, powers at bins k − 1, k, k + 1 (all > 0).
 * Returns: δ in bins, clamped to [−0.5, 0.5].
 * Notes: window-agnostic but biased for any window whose main lobe is not Gaussian: up to about
 * 0.1 bin on Tukey(0.5) data (our computation), so the spectrum code uses kernelRatioOffset instead.
 * Reference: Gasior & Gonzalez, CERN-AB-2004-023 (2004), Gaussian interpolation of DFT spectra.
 */
export function logParabolaOffset(pm: number, p0: number, pp: number): number {
  if (!(pm > 0 && p0 > 0 && pp > 0)) return 0;
  const lm = Math.log(pm);
  const l0 = Math.log(p0);
  const lp = Math.log(pp);
  const den = lm - 2 * l0 + lp;
  if (!(den < 0)) return 0;
  return Math.max(-0.5, Math.min(0.5, (lm - lp) / (2 * den)));
}

/** |DTFT| of a window at x bins from its centre frequency: |Σ wₙ e^(−2πixn/N)|. */
function kernelMagnitude(w: Float64Array, x: number): number {
  const n = w.length;
  let re = 0;
  let im = 0;
  for (let k = 0; k < n; k++) {
    const a = (-2 * Math.PI * x * k) / n;
    re += w[k] * Math.cos(a);
    im += w[k] * Math.sin(a);
  }
  return Math.hypot(re, im);
}

/**
 * Peak offset from three DFT magnitudes under any symmetric window, by inverting the window's own
 * kernel ratio.
 *
 * Parameters: am, a0, ap, magnitudes |X| at bins k − 1, k, k + 1; w, the window samples used.
 * Returns: δ in bins, in [−0.5, 0.5].
 * Notes: a tone δ bins above bin k gives |X(k + j)| ∝ K(j − δ), K the magnitude of the window's
 * DTFT; the ratio K(1 − δ)/K(δ) of the larger neighbour to the middle bin rises monotonically on
 * [0, 0.5], so δ follows by bisection. For the periodic Hann window this reduces to Grandke's closed
 * form; for a Tukey window, where the log-parabola is biased by up to 0.11 bin (α = 0.5), it is exact
 * up to the neglected negative-frequency image.
 * Reference: generalises the ratio method of Grandke, IEEE Trans. Instrum. Meas. 32(2), 350–355 (1983).
 */
export function kernelRatioOffset(am: number, a0: number, ap: number, w: Float64Array): number {
  if (!(a0 > 0) || w.length < 2) return 0;
  const right = ap >= am;
  const alpha = Math.min(1, (right ? ap : am) / a0);
  const ratio = (d: number) => kernelMagnitude(w, 1 - d) / kernelMagnitude(w, d);
  let lo = 0;
  let hi = 0.5;
  if (alpha <= ratio(0)) return 0;
  for (let it = 0; it < 40; it++) {
    const mid = 0.5 * (lo + hi);
    if (ratio(mid) < alpha) lo = mid;
    else hi = mid;
  }
  const d = 0.5 * (lo + hi);
  return right ? d : -d;
}
