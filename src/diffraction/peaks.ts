/**
 * Peak search and least-squares profile fitting of a diffraction pattern.
 */
import { dToQ, ka2Position, KA2_RATIO } from './bragg';
import { snipBackground } from './background';
import { levenbergMarquardt } from './lm';
import type { Pattern } from './pattern';
import { savitzkyGolay } from './smooth';

/** Options of findPeaks and fitPattern. */
export interface PeakSearchOptions {
  /** SNIP clipping window in points (default 40; make it ≥ the widest peak's full base width). */
  backgroundIterations?: number;
  /** Savitzky–Golay half window in points for the search (default 3). */
  smoothHalfWindow?: number;
  /** Minimum net height over its noise (standard uncertainty of the smoothed value) (default 4). */
  minSnr?: number;
  /** Minimum net height relative to the strongest peak (default 0.002). */
  minRelativeHeight?: number;
  /** Largest number of peaks kept, strongest first (default 60). */
  maxPeaks?: number;
  /** Restrict the search to x in [min, max] (pattern axis units). */
  range?: [number, number];
}

/** Options of fitPattern, on top of the search options. */
export interface FitOptions extends PeakSearchOptions {
  /** 'doublet': fit Kα1 + Kα2 (needs pattern.ka2Nm); 'none': single lines. Default: doublet when ka2Nm is known. */
  ka2?: 'doublet' | 'none';
  /** Half width of each fit window in estimated FWHMs (default 3). */
  windowFwhm?: number;
  /** Most peaks fitted together in one overlap group; a longer chain is cut (default 6). */
  maxGroup?: number;
  /** Peaks given by the user (pattern axis units) instead of the automatic search. */
  positions?: number[];
}

/** A candidate found by the search, before fitting. */
export interface PeakCandidate {
  /** Index of the local maximum. */
  index: number;
  /** Position on the pattern axis. */
  position: number;
  /** Prominence of the smoothed net (background-subtracted) curve: height above the higher neighbouring minimum. */
  height: number;
  /** Estimated FWHM on the pattern axis. */
  fwhm: number;
  /** height over its noise. */
  snr: number;
}

/** One fitted reflection (the Kα1 component when a doublet was fitted). */
export interface FittedPeak {
  /** 2θ in degrees (null for q data without a wavelength) and its standard uncertainty. */
  twoThetaDeg: number | null;
  twoThetaUncDeg: number | null;
  /** d-spacing in nm and its standard uncertainty. */
  dNm: number;
  dUncNm: number;
  /** q = 2π/d in nm⁻¹ and its standard uncertainty. */
  qInvNm: number;
  qUncInvNm: number;
  /** FWHM in degrees 2θ (null for q data without a wavelength) and its uncertainty. */
  fwhmDeg: number | null;
  fwhmUncDeg: number | null;
  /** FWHM in q (nm⁻¹) and its uncertainty. */
  fwhmInvNm: number;
  fwhmUncInvNm: number;
  /** Integrated area of the Kα1 component (intensity × axis unit) and its uncertainty. */
  area: number;
  areaUnc: number;
  /** Peak height of the Kα1 component above background, and its uncertainty. */
  intensity: number;
  intensityUnc: number;
  /** Pseudo-Voigt Lorentzian fraction η in [0, 1] and its uncertainty. */
  eta: number;
  etaUnc: number;
  /** True when a Kα2 companion (0.5 × area, Bragg-shifted) was fitted with it. */
  ka2: boolean;
  /** Index of the overlap group it was fitted in. */
  group: number;
  /** Reduced χ² of its group's fit. */
  reducedChi2: number;
  /** Parameters that ended on a bound (their uncertainties are unreliable). */
  atBound: string[];
}

/** Everything fitPattern produces. */
export interface PatternFit {
  /** SNIP background, per point. */
  background: Float64Array;
  /** Savitzky–Golay smoothed pattern used for the search. */
  smoothed: Float64Array;
  /** Full model (background + fitted peaks), per point. */
  model: Float64Array;
  /** Fitted peaks by increasing position. */
  peaks: FittedPeak[];
  /** Notes for the user. */
  notes: string[];
}

const LN2 = Math.LN2;

/** Area-normalised pseudo-Voigt at offset dx for FWHM g and Lorentzian fraction eta. */
export function pseudoVoigt(dx: number, g: number, eta: number): number {
  const t = (4 * dx * dx) / (g * g);
  const lor = 2 / (Math.PI * g) / (1 + t);
  const gau = ((2 / g) * Math.sqrt(LN2 / Math.PI)) * Math.exp(-LN2 * t);
  return eta * lor + (1 - eta) * gau;
}

function noiseOf(pattern: Pattern, y: ArrayLike<number>, smoothed: ArrayLike<number>, gain: number, given?: Float64Array): Float64Array {
  const n = y.length;
  const out = new Float64Array(n);
  if (pattern.sigma && given) return given;
  if (pattern.sigma) {
    for (let i = 0; i < n; i++) out[i] = pattern.sigma[i] * gain;
    return out;
  }
  let counts = true;
  for (let i = 0; i < n && counts; i++) if (y[i] < 0) counts = false;
  const res: number[] = [];
  for (let i = 0; i < n; i++) res.push(Math.abs(y[i] - smoothed[i]));
  res.sort((a, b) => a - b);
  const mad = 1.4826 * res[Math.floor(n / 2)];
  for (let i = 0; i < n; i++) out[i] = (counts ? Math.max(Math.sqrt(Math.max(y[i], 1)), mad) : mad) * gain;
  return out;
}

/**
 * Finds peak candidates: local maxima of the Savitzky–Golay-smoothed pattern whose height above
 * the SNIP background (computed on the smoothed curve) and whose prominence both exceed minSnr
 * times their noise, and minRelativeHeight of the strongest.
 *
 * @param pattern the pattern
 * @param options search settings
 * @returns candidates by increasing position, background and smoothed curve
 * Notes: noise is σ from the third column, else √counts for non-negative data (never below the
 * robust scatter about the smooth), scaled by the smoothing filter's noise gain.
 * Reference: Savitzky & Golay, Anal. Chem. 36, 1627 (1964); SNIP: Ryan et al., NIM B 34, 396 (1988).
 */
export function findPeaks(
  pattern: Pattern,
  options: PeakSearchOptions = {},
): { candidates: PeakCandidate[]; background: Float64Array; smoothed: Float64Array } {
  const h = options.smoothHalfWindow ?? 3;
  const minSnr = options.minSnr ?? 4;
  const minRel = options.minRelativeHeight ?? 0.002;
  const maxPeaks = options.maxPeaks ?? 60;
  if (!(minSnr > 0)) throw new RangeError(`minSnr must be positive, got ${minSnr}`);
  if (!(minRel >= 0 && minRel < 1)) throw new RangeError(`minRelativeHeight must be in [0, 1), got ${minRel}`);
  const { x, y } = pattern;
  const n = x.length;
  const smoothed = savitzkyGolay(y, { halfWindow: h, order: 2 });
  // SNIP on the smoothed curve: clipping raw counting noise would pull the background down to
  // the noise's lower envelope
  const background = snipBackground(smoothed, { iterations: options.backgroundIterations ?? 40 });
  const gain = Math.sqrt((3 * (3 * (2 * h + 1) ** 2 - 7)) / (4 * (2 * h + 1) * ((2 * h + 1) ** 2 - 4)));
  const noise = noiseOf(pattern, y, smoothed, gain);
  // clipping sits on the lower envelope of the remaining noise: lift the background by the
  // median standardised residual of the points that look like background (|z| < 3, iterated)
  // (noise taken at the background level, so that points under peaks are not lifted more)
  const bgNoise = noiseOf(pattern, background, smoothed, gain, noise);
  const z = new Float64Array(n);
  for (let i = 0; i < n; i++) z[i] = (smoothed[i] - background[i]) / bgNoise[i];
  let lift = 0;
  for (let pass = 0; pass < 3; pass++) {
    const sel: number[] = [];
    for (let i = 0; i < n; i++) if (Math.abs(z[i] - lift) < 3) sel.push(z[i]);
    if (sel.length < 10) break;
    sel.sort((a, b) => a - b);
    lift = sel[Math.floor(sel.length / 2)];
  }
  if (lift > 0) for (let i = 0; i < n; i++) background[i] = Math.min(smoothed[i], background[i] + lift * bgNoise[i]);
  const net = new Float64Array(n);
  for (let i = 0; i < n; i++) net[i] = smoothed[i] - background[i];
  const [lo, hi] = options.range ?? [-Infinity, Infinity];
  const found: PeakCandidate[] = [];
  for (let i = 1; i < n - 1; i++) {
    if (x[i] < lo || x[i] > hi) continue;
    if (!(net[i] > net[i - 1] && net[i] >= net[i + 1])) continue;
    let isMax = true;
    for (let j = Math.max(0, i - h); j <= Math.min(n - 1, i + h) && isMax; j++) if (net[j] > net[i]) isMax = false;
    if (!isMax) continue;
    // prominence: height above the higher of the two lowest points reached before the curve
    // rises above this maximum again (searched up to `reach` points away)
    const reach = options.backgroundIterations ?? 40;
    let lmin = net[i];
    for (let j = i - 1; j >= Math.max(0, i - reach) && net[j] <= net[i]; j--) lmin = Math.min(lmin, net[j]);
    let rmin = net[i];
    for (let j = i + 1; j <= Math.min(n - 1, i + reach) && net[j] <= net[i]; j++) rmin = Math.min(rmin, net[j]);
    const base = Math.max(0, lmin, rmin);
    const prom = net[i] - base;
    // both the height over the background and the prominence must be significant: the first
    // rejects noise maxima, the second shoulders of broad features
    const snr = Math.min(prom, net[i]) / noise[i];
    if (snr < minSnr) continue;
    const half = base + prom / 2;
    let l = i;
    while (l > 0 && net[l] > half) l--;
    let r = i;
    while (r < n - 1 && net[r] > half) r++;
    const xl = net[l] <= half && l < i ? x[l] + ((half - net[l]) / (net[l + 1] - net[l])) * (x[l + 1] - x[l]) : x[l];
    const xr = net[r] <= half && r > i ? x[r - 1] + ((net[r - 1] - half) / (net[r - 1] - net[r])) * (x[r] - x[r - 1]) : x[r];
    const step = (x[Math.min(n - 1, i + 1)] - x[Math.max(0, i - 1)]) / 2;
    found.push({ index: i, position: x[i], height: prom, fwhm: Math.max(xr - xl, 2 * step), snr });
  }
  const top = Math.max(0, ...found.map((c) => c.height));
  let kept = found.filter((c) => c.height >= minRel * top);
  kept.sort((a, b) => b.height - a.height);
  kept = kept.slice(0, maxPeaks);
  kept.sort((a, b) => a.position - b.position);
  return { candidates: kept, background, smoothed };
}

/**
 * Fits every peak of a pattern, overlapping peaks together, as pseudo-Voigt profiles on the SNIP
 * background plus a local linear correction, by Levenberg–Marquardt; with Kα2 handled as a
 * doublet (same shape, area ratio 0.5, position from Bragg's law with the Kα2 wavelength).
 *
 * @param pattern the pattern (2θ patterns need a wavelength)
 * @param options search and fit settings
 * @returns background, smoothed curve, full model and the fitted peaks with uncertainties
 *
 * Notes: uncertainties come from the covariance (JᵀWJ)⁻¹, with W = 1/σ² from the third column
 * (unscaled), else Poisson weights 1/max(y, 1) (counts) or unit weights, scaled by the reduced χ².
 * They are fit (statistical) uncertainties only: zero offset, sample displacement and the
 * wavelength's own uncertainty are not included. The doublet uses one FWHM for both lines.
 * Candidates within 30 % of a FWHM of a stronger peak's Kα2 position are taken as that Kα2.
 * Reference: pseudo-Voigt: Wertheim et al., Rev. Sci. Instrum. 45, 1369 (1974); Kα2 ratio 0.5:
 * Rachinger (1948), ITC C §2.3.3.2; LM: Marquardt (1963).
 */
export function fitPattern(pattern: Pattern, options: FitOptions = {}): PatternFit {
  const { x, y } = pattern;
  const n = x.length;
  const lambda = pattern.wavelengthNm;
  if (pattern.axis === 'twoTheta' && lambda === null) throw new RangeError('a 2θ pattern needs a wavelength to give d-spacings');
  const windowFwhm = options.windowFwhm ?? 3;
  if (!(windowFwhm > 0)) throw new RangeError(`windowFwhm must be positive, got ${windowFwhm}`);
  const notes: string[] = [];
  const useKa2 = (options.ka2 ?? (pattern.ka2Nm ? 'doublet' : 'none')) === 'doublet';
  if (useKa2 && (pattern.axis !== 'twoTheta' || !pattern.ka2Nm || !lambda)) throw new RangeError('Kα2 doublet fitting needs a 2θ pattern with a Kα2 wavelength');
  const ka2Of = (c: number) => (useKa2 ? ka2Position(c, lambda!, pattern.ka2Nm!) : NaN);
  const { candidates, background, smoothed } = findPeaks(pattern, options);
  let cands = candidates;
  if (options.positions) {
    cands = options.positions.map((p) => {
      if (!(p > x[0] && p < x[n - 1])) throw new RangeError(`peak position ${p} is outside the pattern ${x[0]}–${x[n - 1]}`);
      let i = 0;
      while (i < n - 1 && x[i] < p) i++;
      const near = candidates.find((c) => Math.abs(c.position - p) < c.fwhm);
      return { index: i, position: p, height: Math.max(smoothed[i] - background[i], 1e-9), fwhm: near?.fwhm ?? 5 * (x[1] - x[0]), snr: near?.snr ?? 0 };
    });
  } else if (useKa2) {
    const byHeight = [...cands].sort((a, b) => b.height - a.height);
    const drop = new Set<PeakCandidate>();
    for (const strong of byHeight) {
      if (drop.has(strong)) continue;
      const p2 = ka2Of(strong.position);
      for (const c of cands) {
        if (c !== strong && !drop.has(c) && c.height < 0.8 * strong.height && Math.abs(c.position - p2) < 0.3 * strong.fwhm + (x[1] - x[0])) drop.add(c);
      }
    }
    if (drop.size) notes.push(`${drop.size} maxima taken as Kα2 companions of stronger peaks`);
    cands = cands.filter((c) => !drop.has(c));
  }
  // overlap groups
  const ext = cands.map((c) => {
    const p2 = ka2Of(c.position);
    return [c.position - windowFwhm * c.fwhm, (Number.isNaN(p2) ? c.position : p2) + windowFwhm * c.fwhm];
  });
  const maxGroup = options.maxGroup ?? 6;
  if (!Number.isInteger(maxGroup) || maxGroup < 1) throw new RangeError(`maxGroup must be a positive integer, got ${maxGroup}`);
  const groups: number[][] = [];
  for (let k = 0; k < cands.length; k++) {
    const g = groups[groups.length - 1];
    if (g && g.length < maxGroup && ext[k][0] < Math.max(...g.map((j) => ext[j][1]))) g.push(k);
    else groups.push([k]);
  }
  const model = Float64Array.from(background);
  const peaks: FittedPeak[] = [];
  const counts = !pattern.sigma && Array.prototype.every.call(y, (v: number) => v >= 0);
  groups.forEach((g, gi) => {
    const x0 = Math.min(...g.map((k) => ext[k][0]));
    const x1 = Math.max(...g.map((k) => ext[k][1]));
    let i0 = 0;
    while (i0 < n && x[i0] < x0) i0++;
    let i1 = n - 1;
    while (i1 > 0 && x[i1] > x1) i1--;
    const np = g.length * 4 + 2;
    if (i1 - i0 + 1 < np + 2) {
      notes.push(`peak near ${cands[g[0]].position.toFixed(4)} skipped: only ${i1 - i0 + 1} points in its window`);
      return;
    }
    const xs = x.subarray(i0, i1 + 1);
    const ys = y.subarray(i0, i1 + 1);
    const bg = background.subarray(i0, i1 + 1);
    const xc = 0.5 * (xs[0] + xs[xs.length - 1]);
    const p0: number[] = [0, 0];
    const lower: number[] = [-Infinity, -Infinity];
    const upper: number[] = [Infinity, Infinity];
    for (const k of g) {
      const c = cands[k];
      const shape = 1.3;
      p0.push(c.position, (c.height * c.fwhm * shape) / (useKa2 ? 1.25 : 1), c.fwhm, 0.5);
      lower.push(c.position - c.fwhm, 0, 0.2 * c.fwhm, 0);
      upper.push(c.position + c.fwhm, Infinity, 5 * c.fwhm, 1);
    }
    const c2s = new Float64Array(g.length);
    const evalModel = (p: Float64Array, out: Float64Array) => {
      for (let k = 0; k < g.length; k++) c2s[k] = useKa2 ? ka2Of(p[2 + 4 * k]) : NaN;
      for (let i = 0; i < xs.length; i++) {
        let v = bg[i] + p[0] + p[1] * (xs[i] - xc);
        for (let k = 0; k < g.length; k++) {
          const c = p[2 + 4 * k];
          const a = p[3 + 4 * k];
          const w = p[4 + 4 * k];
          const e = p[5 + 4 * k];
          v += a * pseudoVoigt(xs[i] - c, w, e);
          if (!Number.isNaN(c2s[k])) v += KA2_RATIO * a * pseudoVoigt(xs[i] - c2s[k], w, e);
        }
        out[i] = v;
      }
    };
    const weights = new Float64Array(xs.length);
    for (let i = 0; i < xs.length; i++) {
      weights[i] = pattern.sigma ? 1 / pattern.sigma[i0 + i] ** 2 : counts ? 1 / Math.max(ys[i], 1) : 1;
    }
    const fit = levenbergMarquardt(evalModel, ys, p0, { lower, upper, weights, scaleCovariance: !pattern.sigma, maxIterations: 300, tolerance: 1e-7 });
    const full = new Float64Array(xs.length);
    evalModel(fit.params, full);
    for (let i = 0; i < xs.length; i++) model[i0 + i] = full[i];
    const P = fit.params;
    const C = fit.covariance;
    const cov = (a: number, b: number) => C[a * np + b];
    g.forEach((_, k) => {
      const ic = 2 + 4 * k;
      const c = P[ic];
      const a = P[ic + 1];
      const w = P[ic + 2];
      const e = P[ic + 3];
      const sc = Math.sqrt(Math.max(0, cov(ic, ic)));
      const sa = Math.sqrt(Math.max(0, cov(ic + 1, ic + 1)));
      const sw = Math.sqrt(Math.max(0, cov(ic + 2, ic + 2)));
      const se = Math.sqrt(Math.max(0, cov(ic + 3, ic + 3)));
      // height = a·[e·2/(πw) + (1−e)·2√(ln2/π)/w]
      const kl = 2 / Math.PI;
      const kg = 2 * Math.sqrt(LN2 / Math.PI);
      const hgt = (a * (e * kl + (1 - e) * kg)) / w;
      const grad = [hgt / a, -hgt / w, (a * (kl - kg)) / w];
      const idx = [ic + 1, ic + 2, ic + 3];
      let vh = 0;
      for (let u = 0; u < 3; u++) for (let v = 0; v < 3; v++) vh += grad[u] * grad[v] * cov(idx[u], idx[v]);
      const atBound: string[] = [];
      const names = ['position', 'area', 'fwhm', 'eta'];
      for (let q = 0; q < 4; q++) {
        const pv = P[ic + q];
        const span = Math.abs(upper[ic + q] - lower[ic + q]);
        const tolB = Number.isFinite(span) ? 1e-6 * span : 1e-12;
        if ((q !== 3 || true) && (Math.abs(pv - lower[ic + q]) <= tolB || Math.abs(pv - upper[ic + q]) <= tolB)) {
          if (q === 3) continue; // η = 0 or 1 is a legitimate pure Gaussian or Lorentzian
          atBound.push(names[q]);
        }
      }
      let twoThetaDeg: number | null;
      let twoThetaUncDeg: number | null;
      let dNm: number;
      let dUncNm: number;
      let fwhmDeg: number | null;
      let fwhmUncDeg: number | null;
      let fwhmInvNm: number;
      let fwhmUncInvNm: number;
      if (pattern.axis === 'twoTheta') {
        const th = (c * Math.PI) / 360;
        dNm = lambda! / (2 * Math.sin(th));
        dUncNm = (dNm * ((sc * Math.PI) / 360)) / Math.tan(th);
        twoThetaDeg = c;
        twoThetaUncDeg = sc;
        fwhmDeg = w;
        fwhmUncDeg = sw;
        const f = ((2 * Math.PI) / lambda!) * Math.cos(th) * (Math.PI / 180);
        fwhmInvNm = w * f;
        fwhmUncInvNm = sw * f;
      } else {
        dNm = (2 * Math.PI) / c;
        dUncNm = (dNm * sc) / c;
        fwhmInvNm = w;
        fwhmUncInvNm = sw;
        if (lambda && lambda / (2 * dNm) < 1) {
          const th = Math.asin(lambda / (2 * dNm));
          twoThetaDeg = (360 / Math.PI) * th;
          const f = ((2 * Math.PI) / lambda) * Math.cos(th) * (Math.PI / 180);
          twoThetaUncDeg = sc / ((4 * Math.PI) / lambda) / Math.cos(th) * (360 / Math.PI);
          fwhmDeg = w / f;
          fwhmUncDeg = sw / f;
        } else {
          twoThetaDeg = null;
          twoThetaUncDeg = null;
          fwhmDeg = null;
          fwhmUncDeg = null;
        }
      }
      const qInvNm = dToQ(dNm);
      peaks.push({
        twoThetaDeg,
        twoThetaUncDeg,
        dNm,
        dUncNm,
        qInvNm,
        qUncInvNm: (qInvNm * dUncNm) / dNm,
        fwhmDeg,
        fwhmUncDeg,
        fwhmInvNm,
        fwhmUncInvNm,
        area: a,
        areaUnc: sa,
        intensity: hgt,
        intensityUnc: Math.sqrt(Math.max(0, vh)),
        eta: e,
        etaUnc: se,
        ka2: useKa2 && !Number.isNaN(ka2Of(c)),
        group: gi,
        reducedChi2: fit.reducedChi2,
        atBound,
      });
    });
  });
  peaks.sort((p, q) => q.dNm - p.dNm);
  if (useKa2) notes.push('Kα2 fitted as a doublet: same shape, area ratio 0.5 (Rachinger convention)');
  return { background, smoothed, model, peaks, notes };
}
