/**
 * The period of a line profile: a spectral estimator and a real-space (fringe extrema) estimator,
 * so a user can compare the two on the same profile.
 */
import { type ComplexInterpolator, complexPeakOffset, magnitudeRatioOffset, type Complex } from './interpolate';
import { windowSamples, windowVarianceFactor } from './window';

/** A period estimated from a profile. */
export interface ProfilePeriod {
  /** Period in samples (pixels for a 1 px-step profile). */
  periodPx: number;
  /** Standard uncertainty (k = 1) of periodPx from the data alone. */
  uStatisticalPx: number;
  /** Number of fringe periods the estimate spans. */
  fringes: number;
  /** Which estimator produced it. */
  method: string;
  /** Signal-to-noise ratio η = A²/(2σ²) of the fitted sinusoid (amplitude A, residual variance σ²). */
  snr: number;
}

/** Options of {@link spectralPeriod}. */
export interface SpectralPeriodOptions {
  /** Window applied after detrending (default 'hann'; 'none' uses a complex interpolator). */
  window?: 'hann' | 'none';
  /** Interpolator for window 'none' (default 'candan'); window 'hann' always uses Grandke's Hann form. */
  interpolator?: ComplexInterpolator;
  /** Zero-padding factor for the coarse peak search (≥ 1, default 8). */
  padFactor?: number;
  /** Shortest period searched, in samples (≥ 2, default 2). */
  minPeriodPx?: number;
  /** Longest period searched, in samples (default: a third of the profile length). */
  maxPeriodPx?: number;
  /** With window 'hann': finish at the maximum of a Tukey(0.3)-windowed periodogram (default true). */
  refine?: boolean;
}

/** Removes the least-squares straight line from values; returns a new array. */
export function detrendLinear(values: ArrayLike<number>): Float64Array {
  const n = values.length;
  const c = (n - 1) / 2;
  let sy = 0;
  let sxy = 0;
  let sxx = 0;
  for (let i = 0; i < n; i++) {
    sy += values[i];
    sxy += (i - c) * values[i];
    sxx += (i - c) * (i - c);
  }
  const m = sy / n;
  const slope = sxx > 0 ? sxy / sxx : 0;
  const out = new Float64Array(n);
  for (let i = 0; i < n; i++) out[i] = values[i] - m - slope * (i - c);
  return out;
}

/** In-place iterative radix-2 complex FFT (length a power of two), forward sign e^(−2πikn/N). */
export function fftRadix2(re: Float64Array, im: Float64Array): void {
  const n = re.length;
  if (n & (n - 1)) throw new RangeError(`FFT length must be a power of two, got ${n}`);
  for (let i = 1, j = 0; i < n; i++) {
    let bit = n >> 1;
    for (; j & bit; bit >>= 1) j ^= bit;
    j ^= bit;
    if (i < j) {
      [re[i], re[j]] = [re[j], re[i]];
      [im[i], im[j]] = [im[j], im[i]];
    }
  }
  for (let len = 2; len <= n; len <<= 1) {
    const ang = (-2 * Math.PI) / len;
    const wr = Math.cos(ang);
    const wi = Math.sin(ang);
    for (let i = 0; i < n; i += len) {
      let cr = 1;
      let ci = 0;
      for (let k = 0; k < len / 2; k++) {
        const a = i + k;
        const b = a + len / 2;
        const tr = re[b] * cr - im[b] * ci;
        const ti = re[b] * ci + im[b] * cr;
        re[b] = re[a] - tr;
        im[b] = im[a] - ti;
        re[a] += tr;
        im[a] += ti;
        const nr = cr * wr - ci * wi;
        ci = cr * wi + ci * wr;
        cr = nr;
      }
    }
  }
}

/** DTFT of x at frequency f (cycles per sample). */
function dtft(x: Float64Array, f: number): Complex {
  let re = 0;
  let im = 0;
  const w = -2 * Math.PI * f;
  for (let n = 0; n < x.length; n++) {
    re += x[n] * Math.cos(w * n);
    im += x[n] * Math.sin(w * n);
  }
  return { re, im };
}

/**
 * Least-squares fit of c + d·n + a cos(2πfn) + b sin(2πfn) at a fixed frequency.
 * Returns the amplitude² a² + b² and the residual variance.
 */
function sineFit(x: ArrayLike<number>, f: number): { amp2: number; residVar: number } {
  const n = x.length;
  const cols = 4;
  const ata = new Float64Array(cols * cols);
  const atb = new Float64Array(cols);
  const c = (n - 1) / 2;
  const row = new Float64Array(cols);
  for (let i = 0; i < n; i++) {
    const ph = 2 * Math.PI * f * i;
    row[0] = 1;
    row[1] = i - c;
    row[2] = Math.cos(ph);
    row[3] = Math.sin(ph);
    for (let p = 0; p < cols; p++) {
      atb[p] += row[p] * x[i];
      for (let q = 0; q < cols; q++) ata[p * cols + q] += row[p] * row[q];
    }
  }
  const beta = solve(ata, atb, cols);
  let rss = 0;
  for (let i = 0; i < n; i++) {
    const ph = 2 * Math.PI * f * i;
    const r = x[i] - beta[0] - beta[1] * (i - c) - beta[2] * Math.cos(ph) - beta[3] * Math.sin(ph);
    rss += r * r;
  }
  return { amp2: beta[2] * beta[2] + beta[3] * beta[3], residVar: rss / Math.max(1, n - cols) };
}

/** Solves a small dense system by Gaussian elimination with partial pivoting (a is n×n, row-major). */
export function solve(a: Float64Array, b: Float64Array, n: number): Float64Array {
  const m = Float64Array.from(a);
  const x = Float64Array.from(b);
  for (let k = 0; k < n; k++) {
    let p = k;
    for (let i = k + 1; i < n; i++) if (Math.abs(m[i * n + k]) > Math.abs(m[p * n + k])) p = i;
    if (p !== k) {
      for (let j = 0; j < n; j++) [m[k * n + j], m[p * n + j]] = [m[p * n + j], m[k * n + j]];
      [x[k], x[p]] = [x[p], x[k]];
    }
    const piv = m[k * n + k];
    if (piv === 0) continue;
    for (let i = k + 1; i < n; i++) {
      const f = m[i * n + k] / piv;
      for (let j = k; j < n; j++) m[i * n + j] -= f * m[k * n + j];
      x[i] -= f * x[k];
    }
  }
  for (let k = n - 1; k >= 0; k--) {
    let s = x[k];
    for (let j = k + 1; j < n; j++) s -= m[k * n + j] * x[j];
    x[k] = m[k * n + k] !== 0 ? s / m[k * n + k] : 0;
  }
  return x;
}

/**
 * Cramér–Rao lower bound on the standard deviation of the frequency (cycles/sample) of one real
 * sinusoid in white noise.
 *
 * Parameters: snr η = A²/(2σ²); n, the number of samples; nOther, samples along the other axis for
 * a 2D plane wave (1 for a profile).
 * Returns: σ_f in cycles per sample.
 * Notes: var(f̂) ≥ 12 / ((2π)² η n (n² − 1) nOther); in 2D the Fisher information for one frequency
 * component sums over all n · nOther samples.
 * Reference: Rife & Boorstyn, IEEE Trans. Inf. Theory 20(5), 591–598 (1974).
 */
export function frequencyCrbStd(snr: number, n: number, nOther = 1): number {
  if (!(snr > 0)) return Infinity;
  return Math.sqrt(12 / (4 * Math.PI * Math.PI * snr * n * (n * n - 1) * nOther));
}

function checkProfile(values: ArrayLike<number>): void {
  if (!values || values.length < 8) throw new RangeError(`a profile needs at least 8 samples, got ${values?.length}`);
  for (let i = 0; i < values.length; i++) {
    if (!Number.isFinite(values[i])) throw new RangeError(`profile sample ${i} is not finite (${values[i]})`);
  }
}

/**
 * Period of a profile from its spectrum.
 *
 * Parameters: values, the profile (equally spaced samples); options.
 * Returns: period, standard uncertainty, number of periods spanned, SNR; null when no peak lies in
 * the searched range.
 * Notes: the profile is detrended (straight line removed) and windowed (periodic Hann by default),
 * zero-padded for the coarse search of the strongest non-DC peak, then refined below one bin by
 * evaluating the transform exactly at f̂ and f̂ ± 1/N and applying Grandke's Hann magnitude-ratio form
 * (or a complex-value interpolator for no window), iterated to a fixed point; then (refine) Newton
 * steps to the maximum of a Tukey(0.3)-windowed periodogram, the maximum-likelihood estimate with a
 * light taper, whose variance is closer to the bound than the Hann interpolation. Uncertainty: the
 * Cramér–Rao bound for the fitted amplitude and residual noise, times the window's variance factor
 * ({@link windowVarianceFactor}); σ_P = σ_f / f².
 * Reference: Grandke, IEEE Trans. Instrum. Meas. 32(2), 350 (1983); bound: Rife & Boorstyn, IEEE Trans. Inf. Theory 20(5), 591 (1974).
 */
export function spectralPeriod(values: ArrayLike<number>, options: SpectralPeriodOptions = {}): ProfilePeriod | null {
  checkProfile(values);
  const n = values.length;
  const window = options.window ?? 'hann';
  if (window !== 'hann' && window !== 'none') throw new RangeError(`window must be 'hann' or 'none', got '${String(window)}'`);
  const padFactor = options.padFactor ?? 8;
  if (!(padFactor >= 1)) throw new RangeError(`padFactor must be ≥ 1, got ${padFactor}`);
  const minP = options.minPeriodPx ?? 2;
  const maxP = options.maxPeriodPx ?? n / 3;
  if (!(minP >= 2)) throw new RangeError(`minPeriodPx must be ≥ 2, got ${minP}`);
  if (!(maxP > minP)) throw new RangeError(`maxPeriodPx (${maxP}) must exceed minPeriodPx (${minP})`);
  const interp = options.interpolator ?? 'candan';
  const d = detrendLinear(values);
  const w = windowSamples(window, n);
  const xw = new Float64Array(n);
  for (let i = 0; i < n; i++) xw[i] = d[i] * w[i];
  let m = 1;
  while (m < n * padFactor) m <<= 1;
  const re = new Float64Array(m);
  const im = new Float64Array(m);
  re.set(xw);
  fftRadix2(re, im);
  // Exclude the DC lobe: at least 1.5 original bins (2.5 for Hann's wider main lobe).
  const fLo = Math.max(1 / maxP, (window === 'hann' ? 2.5 : 1.5) / n);
  const fHi = Math.min(0.5, 1 / minP);
  let best = -1;
  let bestP = -Infinity;
  for (let k = Math.ceil(fLo * m); k <= Math.floor(fHi * m); k++) {
    const p = re[k] * re[k] + im[k] * im[k];
    if (p > bestP && (k === 0 || p >= re[k - 1] ** 2 + im[k - 1] ** 2) && p >= re[k + 1] ** 2 + im[k + 1] ** 2) {
      bestP = p;
      best = k;
    }
  }
  if (best < 0) return null;
  let f = best / m;
  for (let it = 0; it < 6; it++) {
    const xm = dtft(xw, f - 1 / n);
    const x0 = dtft(xw, f);
    const xp = dtft(xw, f + 1 / n);
    const delta =
      window === 'hann'
        ? magnitudeRatioOffset(Math.hypot(xm.re, xm.im), Math.hypot(x0.re, x0.im), Math.hypot(xp.re, xp.im), 'hann')
        : complexPeakOffset(xm, x0, xp, interp, n);
    f += delta / n;
    if (Math.abs(delta) < 1e-9) break;
  }
  if (!(f > 0 && f < 0.5)) return null;
  let method = window === 'hann' ? 'spectral (Hann, Grandke interpolation)' : `spectral (no window, ${interp} interpolation)`;
  let wUsed = w;
  if (window === 'hann' && (options.refine ?? true)) {
    const wt = windowSamples('tukey', n, 0.3);
    const ft = periodogramMaximum(d, wt, f);
    if (ft !== null) {
      f = ft;
      wUsed = wt;
      method = 'spectral (Hann + Grandke, then Tukey(0.3) periodogram maximum)';
    }
  }
  const fit = sineFit(d, f);
  const snr = fit.residVar > 0 ? fit.amp2 / (2 * fit.residVar) : Infinity;
  const sf = frequencyCrbStd(snr, n) * Math.sqrt(windowVarianceFactor(wUsed));
  return {
    periodPx: 1 / f,
    uStatisticalPx: Number.isFinite(sf) ? sf / (f * f) : Infinity,
    fringes: n * f,
    method,
    snr,
  };
}

/**
 * Newton iteration to the maximum of the windowed periodogram |Σ wₙ xₙ e^(−2πifn)|² near f0;
 * null when it leaves ±half a bin of f0 or is not at a maximum (the caller keeps f0).
 */
function periodogramMaximum(x: Float64Array, w: Float64Array, f0: number): number | null {
  const n = x.length;
  const c = (n - 1) / 2;
  let om = 2 * Math.PI * f0;
  for (let it = 0; it < 5; it++) {
    let yr = 0, yi = 0, y1r = 0, y1i = 0, y2r = 0, y2i = 0;
    for (let k = 0; k < n; k++) {
      const t = k - c;
      const a = w[k] * x[k];
      const cr = a * Math.cos(om * t);
      const ci = -a * Math.sin(om * t);
      yr += cr;
      yi += ci;
      // Y' = −i Σ t a e^(−iωt), Y'' = −Σ t² a e^(−iωt)
      y1r += t * ci;
      y1i += -t * cr;
      y2r += -t * t * cr;
      y2i += -t * t * ci;
    }
    const g = 2 * (yr * y1r + yi * y1i);
    const hss = 2 * (y1r * y1r + y1i * y1i + yr * y2r + yi * y2i);
    if (!(hss < 0)) return null;
    om -= g / hss;
    if (Math.abs(om / (2 * Math.PI) - f0) > 0.5 / n) return null;
  }
  return om / (2 * Math.PI);
}

/** Options of {@link realSpacePeriod}. */
export interface RealSpacePeriodOptions {
  /** A first guess of the period in samples; default: the spectral estimate. */
  approxPeriodPx?: number;
  /** Shortest period searched for the first guess (≥ 2, default 2). */
  minPeriodPx?: number;
  /** Longest period searched for the first guess (default a third of the profile). */
  maxPeriodPx?: number;
}

/** A real-space period with the fringe extrema it was computed from. */
export interface RealSpacePeriod extends ProfilePeriod {
  /** Sub-sample positions of the extrema used, in samples from the profile start. */
  extremaPx: number[];
  /** Half-period index of each extremum (even: maxima, odd: minima, or the reverse). */
  halfIndex: number[];
}

/**
 * Period of a profile from the positions of its fringe extrema.
 *
 * Parameters: values, the profile; options (first guess of the period).
 * Returns: period, standard uncertainty, number of fringes spanned, the extrema; null when fewer
 * than four extrema are found.
 * Notes: maxima and minima are found on a copy smoothed by a Gaussian of σ = P/8, each is located to
 * sub-sample precision by a least-squares fit of a + b cos θ + c sin θ (θ = 2π(x − xᵢ)/P) to the raw
 * samples within half a period, and numbered in half periods. The period is twice the slope of the
 * least-squares line through position against half index (separate offsets for maxima and minima,
 * so an asymmetric fringe shape does not bias it): the "measure across N fringes and divide"
 * practice, using every fringe. Uncertainty: the slope's standard error from the residuals, plus
 * the first guess's uncertainty propagated through dP/dP_guess (when the guess is the spectral estimate).
 * Reference: least-squares straight line and slope standard error, Taylor, An Introduction to Error Analysis, 2nd ed. §8 (1997).
 */
export function realSpacePeriod(values: ArrayLike<number>, options: RealSpacePeriodOptions = {}): RealSpacePeriod | null {
  checkProfile(values);
  const n = values.length;
  let p = options.approxPeriodPx;
  let guessU = 0;
  if (p === undefined) {
    const s = spectralPeriod(values, { minPeriodPx: options.minPeriodPx, maxPeriodPx: options.maxPeriodPx });
    if (!s) return null;
    p = s.periodPx;
    guessU = Number.isFinite(s.uStatisticalPx) ? s.uStatisticalPx : 0;
  }
  if (!(p >= 2 && p < n / 2)) throw new RangeError(`approxPeriodPx must be in [2, ${n / 2}), got ${p}`);
  const result = extremaPeriod(values, p);
  if (!result || guessU === 0) return result;
  // The local fits use the guessed period, so the result leans on the guess (strongly when a
  // quarter period spans only a few samples): propagate the guess's uncertainty through the
  // numerical derivative dP/dP_guess and add it in quadrature.
  const h = Math.max(guessU, 1e-4 * p);
  const shifted = extremaPeriod(values, p + h);
  if (shifted) {
    const slope = (shifted.periodPx - result.periodPx) / h;
    result.uStatisticalPx = Math.hypot(result.uStatisticalPx, slope * guessU);
  }
  return result;
}

/** One pass of realSpacePeriod with a given period guess p. */
function extremaPeriod(values: ArrayLike<number>, p: number): RealSpacePeriod | null {
  const n = values.length;
  const d = detrendLinear(values);
  // Gaussian smoothing, σ = P/8.
  const sigma = p / 8;
  const r = Math.max(1, Math.ceil(3 * sigma));
  const kernel = new Float64Array(2 * r + 1);
  for (let k = -r; k <= r; k++) kernel[k + r] = Math.exp((-0.5 * k * k) / (sigma * sigma));
  const sm = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    let s = 0;
    let ws = 0;
    for (let k = -r; k <= r; k++) {
      const j = i + k;
      if (j < 0 || j >= n) continue;
      s += kernel[k + r] * d[j];
      ws += kernel[k + r];
    }
    sm[i] = s / ws;
  }
  const half = p / 2;
  const positions: number[] = [];
  const isMax: boolean[] = [];
  const reach = Math.max(1, Math.round(p / 4));
  for (let i = 1; i < n - 1; i++) {
    let top = true;
    let bottom = true;
    for (let k = -reach; k <= reach; k++) {
      const j = i + k;
      if (k === 0 || j < 0 || j >= n) continue;
      if (sm[j] > sm[i] || (k > 0 && sm[j] === sm[i])) top = false;
      if (sm[j] < sm[i] || (k > 0 && sm[j] === sm[i])) bottom = false;
    }
    if (!top && !bottom) continue;
    // Extrema within half a period of the ends cannot be fitted over a full window.
    if (i - half < 0 || i + half > n - 1) continue;
    // Fit over ±P/4 (at least ±1 sample) so neighbouring extrema use disjoint samples.
    const fitHalf = Math.max(1, p / 4);
    const lo = Math.max(0, Math.ceil(i - fitHalf));
    const hi = Math.min(n - 1, Math.floor(i + fitHalf));
    const ata = new Float64Array(9);
    const atb = new Float64Array(3);
    for (let j = lo; j <= hi; j++) {
      const th = (2 * Math.PI * (j - i)) / p;
      const row = [1, Math.cos(th), Math.sin(th)];
      for (let a = 0; a < 3; a++) {
        atb[a] += row[a] * d[j];
        for (let b = 0; b < 3; b++) ata[a * 3 + b] += row[a] * row[b];
      }
    }
    const beta = solve(ata, atb, 3);
    let psi = Math.atan2(beta[2], beta[1]);
    if (bottom) psi = psi + Math.PI;
    psi = Math.atan2(Math.sin(psi), Math.cos(psi));
    if (Math.abs(psi) > Math.PI / 2) continue; // the fit disagrees with the smoothed extremum
    positions.push(i + (psi * p) / (2 * Math.PI));
    isMax.push(top);
  }
  if (positions.length < 4) return null;
  const x0 = positions[0];
  const halfIndex = positions.map((x) => Math.round((x - x0) / half));
  // Fit x = a + c·[minimum] + s·m (three parameters).
  const ata = new Float64Array(9);
  const atb = new Float64Array(3);
  for (let k = 0; k < positions.length; k++) {
    const row = [1, isMax[k] ? 0 : 1, halfIndex[k]];
    for (let a = 0; a < 3; a++) {
      atb[a] += row[a] * positions[k];
      for (let b = 0; b < 3; b++) ata[a * 3 + b] += row[a] * row[b];
    }
  }
  const beta = solve(ata, atb, 3);
  let rss = 0;
  for (let k = 0; k < positions.length; k++) {
    const e = positions[k] - beta[0] - beta[1] * (isMax[k] ? 0 : 1) - beta[2] * halfIndex[k];
    rss += e * e;
  }
  const dof = positions.length - 3;
  // Covariance of the slope: s² (AᵀA)⁻¹[2][2].
  const inv = solve(ata, Float64Array.from([0, 0, 1]), 3);
  const s2 = dof > 0 ? rss / dof : 0;
  const slopeSe = Math.sqrt(Math.max(0, s2 * inv[2]));
  const span = (halfIndex[halfIndex.length - 1] - halfIndex[0]) / 2;
  const fit = sineFit(d, 1 / (2 * beta[2]));
  return {
    periodPx: 2 * beta[2],
    uStatisticalPx: 2 * slopeSe,
    fringes: span,
    method: 'real space (extrema, least-squares line)',
    snr: fit.residVar > 0 ? fit.amp2 / (2 * fit.residVar) : Infinity,
    extremaPx: positions,
    halfIndex,
  };
}
