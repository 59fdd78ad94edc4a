/**
 * Peak search and least-squares profile fitting of a diffraction pattern: a background that keeps
 * amorphous halos, a significance test for every peak, overlapping peaks fitted together, and
 * asymmetric two-dimensional (hk) bands recognised as such.
 */
import { ka2Position, KA2_RATIO } from './bragg';
import { findHalos, localBackground, type Halo } from './background';
import { DEFAULT_LP_GEOMETRY, lpFactor, lpGeometry, type LpGeometry } from './lorentz-polarisation';
import { levenbergMarquardt, solveLinear } from './lm';
import type { Pattern } from './pattern';
import { chiSquareUpperQuantile } from '../measure/stats';
import { savitzkyGolay } from './smooth';

export type { Halo } from './background';

/** Options of findPeaks and fitPattern. */
export interface PeakSearchOptions {
  /** Largest FWHM a peak may have, in pattern axis units; broader features are background (default 3° for 2θ, a tenth of the range for q). */
  maxPeakFwhm?: number;
  /** False-alarm probability of the whole pattern: the chance that pure noise yields one accepted peak (default 0.01). */
  falseAlarmRate?: number;
  /** Savitzky–Golay half window in points for the candidate search (default 3; a wider pass is added for broad peaks). */
  smoothHalfWindow?: number;
  /** Candidate threshold: net height over its noise before fitting (default 3; the fit's significance test decides). */
  minSnr?: number;
  /** Minimum net height relative to the strongest peak (default 0: only significance counts). */
  minRelativeHeight?: number;
  /** Largest number of peaks kept, most significant first (default 80). */
  maxPeaks?: number;
  /** Restrict the search to x in [min, max] (pattern axis units). */
  range?: [number, number];
  /** Former SNIP window in points; accepted and ignored (the background window follows maxPeakFwhm). */
  backgroundIterations?: number;
}

/** Options of fitPattern, on top of the search options. */
export interface FitOptions extends PeakSearchOptions {
  /** 'doublet': fit Kα1 + Kα2 (needs pattern.ka2Nm); 'none': single lines. Default: doublet when ka2Nm is known. */
  ka2?: 'doublet' | 'none';
  /** Half width of each fit window in FWHMs (default 4). */
  windowFwhm?: number;
  /** Most peaks fitted together in one overlap group; a longer stretch is fitted in windows of at most this many, the other windows held fixed (default 8). */
  maxGroup?: number;
  /** Peaks given by the user (pattern axis units) instead of the automatic search (each is kept whatever its significance). */
  positions?: number[];
  /** Look for peaks in the residual of each fitted group (weak peaks beside strong ones) (default true). */
  residualSearch?: boolean;
  /** Test strong peaks for an asymmetric (hk) band profile (default true). */
  bandTest?: boolean;
  /** A peak on a halo must be at most this fraction of the halo's FWHM (default 1/3). */
  haloWidthRatio?: number;
  /**
   * The Lorentz–polarisation factor across each line of a 2θ pattern: each profile is fitted as
   * LP(2θ)/LP(2θ₀) × its shape, so its centre 2θ₀ is the Bragg angle (default: random powder,
   * Bragg–Brentano, no monochromator; { specimen: 'none' } for transmission or synchrotron data
   * that need none). Not applied to a q pattern.
   */
  lp?: LpGeometry;
}

/** A candidate found by the search, before fitting. */
export interface PeakCandidate {
  /** Index of the local maximum. */
  index: number;
  /** Position on the pattern axis. */
  position: number;
  /** Prominence of the smoothed net (background-subtracted) curve. */
  height: number;
  /** Estimated FWHM on the pattern axis. */
  fwhm: number;
  /** height over its noise. */
  snr: number;
}

/** One fitted reflection (the Kα1 component when a doublet was fitted). */
export interface FittedPeak {
  /** 2θ in degrees (null for q data without a wavelength) and its standard uncertainty (fit). */
  twoThetaDeg: number | null;
  twoThetaUncDeg: number | null;
  /** d-spacing in nm and its standard uncertainty from the fit alone (see dBudget in analyse for the full budget). */
  dNm: number;
  dUncNm: number;
  /** q = 2π/d in nm⁻¹ and its standard uncertainty (fit). */
  qInvNm: number;
  qUncInvNm: number;
  /** FWHM in degrees 2θ (null for q data without a wavelength) and its uncertainty; for a split profile, the mean of the two sides. */
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
  /** Correlation coefficient of the fitted FWHM and η (0 when either was held); a size's ± needs it, as the two trade off. */
  fwhmEtaCorrelation: number;
  /** Right/left half-width ratio (1: symmetric profile fitted). */
  asymmetry: number;
  /** 'peak', or 'band': an asymmetric two-dimensional (hk) band of turbostratic layers (no Scherrer size). */
  kind: 'peak' | 'band';
  /** Significance: area over its standard uncertainty (the test compares it with the critical z). */
  significance: number;
  /** True when a Kα2 companion (ratio × area, Bragg-shifted) was fitted with it. */
  ka2: boolean;
  /** Index of the overlap group it was fitted in. */
  group: number;
  /** Reduced χ² of its group's fit. */
  reducedChi2: number;
  /** Parameters that ended on a bound (their uncertainties are unreliable). */
  atBound: string[];
  /** Index into PatternFit.halos of the halo it sits on, or null. */
  onHalo: number | null;
  /** True when the user placed it (kept regardless of significance). */
  given: boolean;
}

/** The test every peak passed, stated for the user. */
export interface DetectionTest {
  /** Critical z of the area over its uncertainty. */
  zCritical: number;
  /** False-alarm probability for the whole pattern. */
  falseAlarmRate: number;
  /** Independent positions the pattern offers (Bonferroni factor). */
  resolutionElements: number;
  /** Largest peak FWHM (axis units); broader is background. */
  maxPeakFwhm: number;
  /** A peak on a halo must be at most this fraction of the halo's FWHM. */
  haloWidthRatio: number;
  /** The test in words. */
  statement: string;
}

/** Everything fitPattern produces. */
export interface PatternFit {
  /** Background (including halos), per point. */
  background: Float64Array;
  /** Savitzky–Golay smoothed pattern used for the search. */
  smoothed: Float64Array;
  /** Full model (background + fitted peaks), per point. */
  model: Float64Array;
  /** Fitted peaks by decreasing d. */
  peaks: FittedPeak[];
  /** Broad halos of the background (amorphous scattering), reported, never fitted as peaks. */
  halos: Halo[];
  /** Variance factor of the counts: variance = gain × counts (1 for raw counts). */
  noiseGain: number;
  /** The significance test. */
  test: DetectionTest;
  /** Features fitted and rejected, with the reason. */
  rejected: Array<{ position: number; reason: string }>;
  /** Notes for the user. */
  notes: string[];
}

const LN2 = Math.LN2;
/** Profiles are evaluated within this many FWHMs of their centre: a Lorentzian has fallen to 0.1 % of its height there. */
const REACH_FWHM = 16;
/** Standard uncertainty of the restraint that pulls a free η towards the pattern's η trend (a judgement: loose enough for a phase of another shape to show). */
const ETA_RESTRAINT_SIGMA = 0.3;
/** A broad line split into two at the trend width must keep at least this share of its area (and at most its inverse) in the pair. */
const SPLIT_AREA_KEPT = 0.7;
/**
 * After the last pass, background and line profiles are refined in turn until the background moves
 * by less than this many standard deviations of a point's counts anywhere (a judgement: the change
 * falls about twofold a round, so what is left is about the last change, a small part of any line's height).
 */
const BACKGROUND_SETTLED_SIGMA = 0.1;
/** Most such rounds (the benchmark's crowded tetragonal patterns settle within about eight; a pattern that does not is left as the last pass fitted it). */
const MAX_BACKGROUND_ROUNDS = 12;
/** χ² quantiles at 0.1 % for 1–6 degrees of freedom: the likelihood-ratio test between two descriptions of a band (Wilks 1938). */
const CHI2_999 = [0, 10.83, 13.82, 16.27, 18.47, 20.52, 22.46];
/** A line broader than this many times the width trend is a broad line of its own kind (a clay order, a band), not a sharp line's tails. */
const BROAD_VS_TREND = 3;
/** Widths of the residual search's matched filters, in units of the group's typical FWHM. */
const RESIDUAL_WIDTHS = [1, 2.5, 6];

/** Area-normalised pseudo-Voigt at offset dx for FWHM g and Lorentzian fraction eta. */
export function pseudoVoigt(dx: number, g: number, eta: number): number {
  const t = (4 * dx * dx) / (g * g);
  const lor = 2 / (Math.PI * g) / (1 + t);
  // beyond t = 1000 the Gaussian is below 10⁻³⁰⁰ of its height
  const gau = t > 1000 ? 0 : ((2 / g) * 0.4697186393498258) * Math.exp(-LN2 * t);
  return eta * lor + (1 - eta) * gau;
}

/**
 * Area-normalised split pseudo-Voigt: left FWHM 2g/(1+ρ), right FWHM 2gρ/(1+ρ) (mean g), each
 * half scaled to meet at the maximum; ρ = 1 is the symmetric pseudoVoigt.
 */
export function splitPseudoVoigt(dx: number, g: number, eta: number, rho: number): number {
  if (rho === 1) return pseudoVoigt(dx, g, eta);
  const wl = (2 * g) / (1 + rho);
  const wr = wl * rho;
  const w = dx < 0 ? wl : wr;
  return pseudoVoigt(dx, w, eta) * ((2 * w) / (wl + wr));
}

/**
 * Adds (or writes) a line's profile over points [ja, jb) of the pattern: Kα1 and its Kα2
 * companion, each the (split) pseudo-Voigt times LP(2θ)/LP(2θ₀) of its own centre.
 * @param ctx the fit's context (x, Kα2, LP)
 * @param m centre c, area a, FWHM w, η eta and asymmetry rho (1: symmetric)
 * @param ja first point
 * @param jb one past the last point
 * @param out the profile is written (assign) or added at out[i − offset] for point i
 */
function addLine(ctx: Context, m: { c: number; a: number; w: number; eta: number; rho: number }, ja: number, jb: number, out: Float64Array, offset: number, assign: boolean): void {
  // the LP factor across a line (clay-mineral profile modelling, Reynolds, Acta Cryst. A24, 319, 1968): the fitted centre is the Bragg angle
  const { x } = ctx;
  const lp = ctx.withLp;
  const c2 = ctx.ka2Of(m.c);
  const k1 = lp ? m.a / ctx.lpOf(m.c) : m.a;
  const k2 = Number.isNaN(c2) ? 0 : lp ? (ctx.ratio * m.a) / ctx.lpOf(c2) : ctx.ratio * m.a;
  for (let i = ja; i < jb; i++) {
    let v = k1 * splitPseudoVoigt(x[i] - m.c, m.w, m.eta, m.rho);
    if (k2 !== 0) v += k2 * splitPseudoVoigt(x[i] - c2, m.w, m.eta, m.rho);
    if (lp) v *= ctx.lpAt[i];
    if (assign) out[i - offset] = v;
    else out[i - offset] += v;
  }
}

/** Inverse of the standard normal distribution function (Acklam's rational approximation, relative error < 1.2×10⁻⁹; from memory). */
export function normalQuantile(p: number): number {
  if (!(p > 0 && p < 1)) throw new RangeError(`p must be in (0, 1), got ${p}`);
  const a = [-3.969683028665376e1, 2.209460984245205e2, -2.759285104469687e2, 1.38357751867269e2, -3.066479806614716e1, 2.506628277459239];
  const b = [-5.447609879822406e1, 1.615858368580409e2, -1.556989798598866e2, 6.680131188771972e1, -1.328068155288572e1];
  const c = [-7.784894002430293e-3, -3.223964580411365e-1, -2.400758277161838, -2.549732539343734, 4.374664141464968, 2.938163982698783];
  const d = [7.784695709041462e-3, 3.224671290700398e-1, 2.445134137142996, 3.754408661907416];
  const pl = 0.02425;
  if (p < pl) {
    const q = Math.sqrt(-2 * Math.log(p));
    return (((((c[0] * q + c[1]) * q + c[2]) * q + c[3]) * q + c[4]) * q + c[5]) / ((((d[0] * q + d[1]) * q + d[2]) * q + d[3]) * q + 1);
  }
  if (p > 1 - pl) return -normalQuantile(1 - p);
  const q = p - 0.5;
  const r = q * q;
  return ((((((a[0] * r + a[1]) * r + a[2]) * r + a[3]) * r + a[4]) * r + a[5]) * q) / (((((b[0] * r + b[1]) * r + b[2]) * r + b[3]) * r + b[4]) * r + 1);
}

/** The noise of the counts. */
interface Noise {
  /** Variance per point. */
  variance: Float64Array;
  gain: number;
  kind: 'sigma' | 'counts' | 'constant';
}

/**
 * Noise of the pattern: σ² from the third column; for counts, variance = g·counts with g from the
 * scatter of second differences about the smooth curve (g = 1 for raw Poisson counts); else a
 * constant from the same scatter.
 */
function noiseOf(pattern: Pattern, smoothed: Float64Array): Noise {
  const { y } = pattern;
  const n = y.length;
  if (pattern.sigma) return { variance: Float64Array.from(pattern.sigma, (s) => s * s), gain: 1, kind: 'sigma' };
  let counts = true;
  for (let i = 0; i < n && counts; i++) if (y[i] < 0) counts = false;
  const ratios: number[] = [];
  const r2: number[] = [];
  for (let i = 1; i < n - 1; i++) {
    const r = y[i] - 0.5 * (y[i - 1] + y[i + 1]);
    r2.push(r * r / 1.5);
    ratios.push((r * r) / 1.5 / Math.max(smoothed[i], 1));
  }
  ratios.sort((a, b) => a - b);
  r2.sort((a, b) => a - b);
  // median of a χ²₁ variable is 0.4549 (common practice)
  if (counts) {
    const gain = Math.max(1e-6, ratios[Math.floor(ratios.length / 2)] / 0.4549);
    return { variance: Float64Array.from(smoothed, (s) => gain * Math.max(s, 1)), gain, kind: 'counts' };
  }
  const v = Math.max(1e-300, r2[Math.floor(r2.length / 2)] / 0.4549);
  return { variance: new Float64Array(n).fill(v), gain: 1, kind: 'constant' };
}

/** Shared state of one fit. */
interface Context {
  pattern: Pattern;
  x: Float64Array;
  y: Float64Array;
  n: number;
  step: number;
  noise: Noise;
  useKa2: boolean;
  ratio: number;
  ka2Of: (c: number) => number;
  /** The LP factor at each point (all 1 without one). */
  lpAt: Float64Array;
  /** The LP factor at a line's centre (1 without one). */
  lpOf: (c: number) => number;
  /** True when an LP factor is modelled across the lines. */
  withLp: boolean;
  zCrit: number;
  /** The false-alarm probability per position behind zCrit (Bonferroni: the pattern's rate over its positions). */
  alphaPerPosition: number;
  maxFwhm: number;
  minFwhm: number;
  windowFwhm: number;
  maxGroup: number;
  /** FWHM and η expected at a position, from the strong peaks of the first fit (null before it). */
  trend: ((c: number) => { w: number; eta: number }) | null;
}

/** A peak being fitted. */
interface Member {
  c: number;
  a: number;
  w: number;
  eta: number;
  rho: number;
  split: boolean;
  given: boolean;
  /** The starting values it came with (a member that collapsed in a crowded fit starts again from them). */
  init?: { c: number; a: number; w: number };
  /** Width and η held at the pattern's width trend (weak lines; the two halves of a split test). */
  fixed?: boolean;
}

/** A member after a fit, with its standard uncertainties. */
interface FitMember extends Member {
  sc: number;
  sa: number;
  sw: number;
  se: number;
  srho: number;
  covAW: number;
  covAE: number;
  covWE: number;
  atBound: string[];
}

interface GroupFit {
  members: FitMember[];
  i0: number;
  i1: number;
  chi2: number;
  reducedChi2: number;
  model: Float64Array;
  b0: number;
  b1: number;
}

/** A member's free parameters in a group fit: position and area always; FWHM, η (and the asymmetry of a split profile) unless its shape is held. */
function freeParameters(m: Member): number {
  return m.fixed ? 2 : m.split ? 5 : 4;
}

/** Extent of a member's profile (both lines) for windows and masks. */
function extent(ctx: Context, m: Member, fwhms: number): [number, number] {
  const wl = (2 * m.w) / (1 + m.rho);
  const wr = wl * m.rho;
  const c2 = ctx.ka2Of(m.c);
  return [m.c - fwhms * wl, (Number.isNaN(c2) ? m.c : c2) + fwhms * wr];
}

/** Index of the first x ≥ v. */
function lowerIndex(x: Float64Array, v: number): number {
  let a = 0;
  let b = x.length;
  while (a < b) {
    const mid = (a + b) >>> 1;
    if (x[mid] < v) a = mid + 1;
    else b = mid;
  }
  return a;
}

/**
 * Fits one overlap group: the members' profiles (with Kα2 companions) on the background plus a
 * local linear correction, weights 1/σ², by Levenberg–Marquardt.
 */
function fitGroup(ctx: Context, members: Member[], bg: Float64Array, own?: { y: Float64Array; window: [number, number] }): GroupFit | null {
  const x = ctx.x;
  const y = own?.y ?? ctx.y;
  let lo = Infinity;
  let hi = -Infinity;
  for (const m of members) {
    const [a, b] = extent(ctx, m, ctx.windowFwhm);
    lo = Math.min(lo, a);
    hi = Math.max(hi, b);
  }
  if (own) [lo, hi] = own.window;
  const i0 = Math.max(0, lowerIndex(x, lo));
  const i1 = Math.min(ctx.n - 1, lowerIndex(x, hi));
  const np = 2 + members.reduce((s, m) => s + freeParameters(m), 0);
  if (i1 - i0 + 1 < np + 3) return null;
  const xs = x.subarray(i0, i1 + 1);
  const ys = y.subarray(i0, i1 + 1);
  const bgs = bg.subarray(i0, i1 + 1);
  const xc = 0.5 * (xs[0] + xs[xs.length - 1]);
  const half = 0.5 * (xs[xs.length - 1] - xs[0]) || 1;
  const p0: number[] = [0, 0];
  const lower: number[] = [-Infinity, -Infinity];
  const upper: number[] = [Infinity, Infinity];
  const offsets: number[] = [];
  for (const m of members) {
    offsets.push(p0.length);
    const span = Math.max(0.6 * m.w, 2 * ctx.step);
    p0.push(m.c, Math.max(m.a, 1e-9));
    lower.push(m.c - span, 0);
    upper.push(m.c + span, Infinity);
    if (m.fixed) continue;
    p0.push(Math.min(Math.max(m.w, ctx.minFwhm), ctx.maxFwhm * 1.05), m.eta);
    lower.push(ctx.minFwhm, 0);
    upper.push(ctx.maxFwhm * 1.05, 1);
    if (m.split) {
      p0.push(m.rho);
      lower.push(0.2);
      upper.push(8);
    }
  }
  /** A member's profile parameters read from a parameter vector. */
  const read = (src: ArrayLike<number>, k: number) => {
    const m = members[k];
    const o = offsets[k];
    return m.fixed
      ? { c: src[o], a: src[o + 1], w: m.w, e: m.eta, rho: m.rho }
      : { c: src[o], a: src[o + 1], w: src[o + 2], e: src[o + 3], rho: m.split ? src[o + 4] : 1 };
  };
  const len = xs.length;
  // a free η is restrained towards the pattern's η trend (a pseudo-observation η = η_trend ± ETA_RESTRAINT_SIGMA;
  // restrained least squares: Waser, Acta Cryst. 16, 1091, 1963):
  // a weak line's η is barely determined by its points, and one that wanders to a pure Gaussian
  // takes width and area with it; a strong line's own points outweigh the restraint
  const restrained: number[] = [];
  const etaTarget: number[] = [];
  if (ctx.trend) {
    members.forEach((m, k) => {
      if (m.fixed) return;
      restrained.push(offsets[k] + 3);
      etaTarget.push(ctx.trend!(m.c).eta);
    });
  }
  const rows = len + restrained.length;
  const weights = new Float64Array(rows);
  for (let i = 0; i < len; i++) weights[i] = 1 / ctx.noise.variance[i0 + i];
  const target = new Float64Array(rows);
  target.set(ys);
  restrained.forEach((_, r) => {
    target[len + r] = etaTarget[r];
    weights[len + r] = 1 / (ETA_RESTRAINT_SIGMA * ETA_RESTRAINT_SIGMA);
  });
  const addProfile = (r: { c: number; a: number; w: number; e: number; rho: number }, out: Float64Array, ja: number, jb: number, assign: boolean) => {
    addLine(ctx, { c: r.c, a: r.a, w: r.w, eta: r.e, rho: r.rho }, i0 + ja, i0 + jb, out, assign ? i0 + ja : i0, assign);
  };
  const reachOf = (r: { c: number; w: number; rho: number }) => {
    const c2 = ctx.ka2Of(r.c);
    const reach = REACH_FWHM * r.w * Math.max(r.rho, 1 / r.rho) + 2 * r.w;
    return [lowerIndex(xs, r.c - reach), Math.min(len, lowerIndex(xs, (Number.isNaN(c2) ? r.c : c2) + reach))];
  };
  const evalModel = (p: Float64Array, out: Float64Array) => {
    for (let i = 0; i < len; i++) out[i] = bgs[i] + p[0] + (p[1] * (xs[i] - xc)) / half;
    if (out.length > len) restrained.forEach((j, r) => (out[len + r] = p[j]));
    members.forEach((_, k) => {
      const r = read(p, k);
      const [ja, jb] = reachOf(r);
      addProfile(r, out, ja, jb, false);
    });
  };
  // Jacobian: the background terms exactly, each member's parameters by forward differences of
  // that member's own profile over its own reach (the other members do not change)
  const base = new Float64Array(len);
  const moved = new Float64Array(len);
  const jacobian = (p: Float64Array, _f: Float64Array, out: Float64Array) => {
    out.fill(0);
    for (let i = 0; i < len; i++) {
      out[i * np] = 1;
      out[i * np + 1] = (xs[i] - xc) / half;
    }
    restrained.forEach((j, r) => (out[(len + r) * np + j] = 1));
    const q = Float64Array.from(p);
    members.forEach((m, k) => {
      const o = offsets[k];
      const r0 = read(p, k);
      const [ja, jb] = reachOf(r0);
      addProfile(r0, base, ja, jb, true);
      for (let t = 0; t < freeParameters(m); t++) {
        const j = o + t;
        const old = q[j];
        let h = t === 0 ? 1e-4 * ctx.step : 1e-6 * Math.max(Math.abs(old), 1e-2);
        if (old + h > upper[j]) h = -h;
        q[j] = old + h;
        addProfile(read(q, k), moved, ja, jb, true);
        q[j] = old;
        for (let i = ja; i < jb; i++) out[i * np + j] = (moved[i - ja] - base[i - ja]) / h;
      }
    });
  };
  let fit;
  try {
    fit = levenbergMarquardt(evalModel, target, p0, { lower, upper, weights, scaleCovariance: false, maxIterations: 80, tolerance: 1e-9, chi2Tolerance: 1e-3, jacobian });
  } catch {
    return null;
  }
  const dof = Math.max(1, xs.length - np);
  const red = fit.chi2 / dof;
  // uncertainties: the covariance scaled by the reduced χ² when the model leaves more scatter than the noise
  const scale = Math.max(1, red);
  const C = fit.covariance;
  const cov = (a: number, b: number) => C[a * np + b] * scale;
  const P = fit.params;
  const out: FitMember[] = members.map((m, k) => {
    const o = offsets[k];
    const names = ['position', 'area', 'fwhm', 'eta', 'asymmetry'];
    const atBound: string[] = [];
    for (let q = 0; q < freeParameters(m); q++) {
      if (q === 3) continue; // η = 0 or 1 is a legitimate pure Gaussian or Lorentzian
      const span = Math.abs(upper[o + q] - lower[o + q]);
      const tolB = Number.isFinite(span) ? 1e-6 * span : 1e-12;
      if (Math.abs(P[o + q] - lower[o + q]) <= tolB || Math.abs(P[o + q] - upper[o + q]) <= tolB) atBound.push(names[q]);
    }
    const sd = (q: number) => (q < freeParameters(m) ? Math.sqrt(Math.max(0, cov(o + q, o + q))) : 0);
    const cv = (a: number, b: number) => (a < freeParameters(m) && b < freeParameters(m) ? cov(o + a, o + b) : 0);
    const r = read(P, k);
    return {
      c: r.c, a: r.a, w: r.w, eta: r.e, rho: r.rho, split: m.split, given: m.given, fixed: m.fixed, init: m.init ?? { c: m.c, a: m.a, w: m.w },
      sc: sd(0), sa: sd(1), sw: sd(2), se: sd(3), srho: m.split && !m.fixed ? sd(4) : 0,
      covAW: cv(1, 2), covAE: cv(1, 3), covWE: cv(2, 3),
      atBound,
    };
  });
  const model = new Float64Array(xs.length);
  evalModel(P, model);
  return { members: out, i0, i1, chi2: fit.chi2, reducedChi2: red, model, b0: P[0], b1: P[1] };
}

/**
 * The strongest significant maximum of the residual of a group, by a matched filter (a Gaussian
 * of the group's typical FWHM) on the residual weighted by 1/σ²: z = Σkᵢrᵢ/σᵢ² / √(Σkᵢ²/σᵢ²).
 */
function residualPeak(ctx: Context, g: GroupFit, width: number): { c: number; z: number; amp: number } | null {
  const { x, y } = ctx;
  const len = g.i1 - g.i0 + 1;
  const r = new Float64Array(len);
  for (let i = 0; i < len; i++) r[i] = y[g.i0 + i] - g.model[i];
  const hw = Math.max(2, Math.round((1.2 * width) / ctx.step));
  const sig = width / 2.3548 / ctx.step;
  const kern = new Float64Array(2 * hw + 1);
  for (let j = -hw; j <= hw; j++) kern[j + hw] = Math.exp((-0.5 * j * j) / (sig * sig));
  let best: { c: number; z: number; amp: number } | null = null;
  for (let i = hw; i < len - hw; i++) {
    let num = 0;
    let den = 0;
    let kk = 0;
    for (let j = -hw; j <= hw; j++) {
      const v = ctx.noise.variance[g.i0 + i + j];
      num += (kern[j + hw] * r[i + j]) / v;
      den += (kern[j + hw] * kern[j + hw]) / v;
      kk += kern[j + hw] * kern[j + hw];
    }
    const z = num / Math.sqrt(den);
    if (!best || z > best.z) best = { c: x[g.i0 + i], z, amp: (num / den) * (kk > 0 ? 1 : 0) };
  }
  return best;
}

/**
 * Finds peak candidates: local maxima of the Savitzky–Golay-smoothed net pattern (pattern less
 * background) whose height and prominence both exceed minSnr times their noise, searched at two
 * smoothing widths (narrow and broad peaks).
 *
 * @param pattern the pattern
 * @param options search settings
 * @returns candidates by increasing position, the background (LOESS with halos kept) and the smoothed curve
 * Reference: Savitzky & Golay, Anal. Chem. 36, 1627 (1964); background: see localBackground.
 */
export function findPeaks(pattern: Pattern, options: PeakSearchOptions = {}): { candidates: PeakCandidate[]; background: Float64Array; smoothed: Float64Array } {
  const ctx = context(pattern, options, {});
  const smoothed = savitzkyGolay(pattern.y, { halfWindow: Math.min(options.smoothHalfWindow ?? 3, Math.floor((pattern.y.length - 1) / 2)), order: 2 });
  const background = localBackground(ctx.x, ctx.y, ctx.noise.variance, { halfWidth: 1.25 * ctx.maxFwhm, robustHalfWindow: Math.min(Math.floor(ctx.n / 8), Math.round((0.2 * ctx.maxFwhm) / ctx.step)) });
  return { candidates: candidatesOf(ctx, background, options), background, smoothed };
}

function candidatesOf(ctx: Context, background: Float64Array, options: PeakSearchOptions): PeakCandidate[] {
  const { x, y, n } = ctx;
  const minSnr = options.minSnr ?? 3;
  const minRel = options.minRelativeHeight ?? 0;
  if (!(minSnr > 0)) throw new RangeError(`minSnr must be positive, got ${minSnr}`);
  if (!(minRel >= 0 && minRel < 1)) throw new RangeError(`minRelativeHeight must be in [0, 1), got ${minRel}`);
  const [lo, hi] = options.range ?? [-Infinity, Infinity];
  const found: PeakCandidate[] = [];
  const h1 = options.smoothHalfWindow ?? 3;
  const hBroad = Math.max(h1 + 2, Math.min(25, Math.round((0.15 * ctx.maxFwhm) / ctx.step)));
  for (const h of [h1, hBroad]) {
    if (2 * h + 1 > n) continue;
    const s = savitzkyGolay(y, { halfWindow: h, order: 2 });
    const gain = Math.sqrt((3 * (3 * (2 * h + 1) ** 2 - 7)) / (4 * (2 * h + 1) * ((2 * h + 1) ** 2 - 4)));
    const net = new Float64Array(n);
    for (let i = 0; i < n; i++) net[i] = s[i] - background[i];
    const reach = Math.round((2 * ctx.maxFwhm) / ctx.step);
    for (let i = 1; i < n - 1; i++) {
      if (x[i] < lo || x[i] > hi) continue;
      if (!(net[i] > net[i - 1] && net[i] >= net[i + 1])) continue;
      let isMax = true;
      for (let j = Math.max(0, i - h); j <= Math.min(n - 1, i + h) && isMax; j++) if (net[j] > net[i]) isMax = false;
      if (!isMax) continue;
      let lmin = net[i];
      for (let j = i - 1; j >= Math.max(0, i - reach) && net[j] <= net[i]; j--) lmin = Math.min(lmin, net[j]);
      let rmin = net[i];
      for (let j = i + 1; j <= Math.min(n - 1, i + reach) && net[j] <= net[i]; j++) rmin = Math.min(rmin, net[j]);
      const base = Math.max(0, lmin, rmin);
      const prom = net[i] - base;
      const noise = Math.sqrt(ctx.noise.variance[i]) * gain;
      const snr = Math.min(prom, net[i]) / noise;
      if (snr < minSnr) continue;
      const halfH = base + prom / 2;
      let l = i;
      while (l > 0 && net[l] > halfH) l--;
      let r = i;
      while (r < n - 1 && net[r] > halfH) r++;
      const fwhm = Math.max(x[r] - x[l], 3 * ctx.step);
      if (found.some((f) => Math.abs(f.position - x[i]) < 0.5 * (h === h1 ? Math.min(f.fwhm, fwhm) : Math.max(f.fwhm, fwhm)))) continue;
      found.push({ index: i, position: x[i], height: prom, fwhm: Math.min(fwhm, ctx.maxFwhm), snr });
    }
  }
  const top = Math.max(0, ...found.map((c) => c.height));
  let kept = found.filter((c) => c.height >= minRel * top);
  kept.sort((a, b) => b.snr - a.snr);
  kept = kept.slice(0, options.maxPeaks ?? 80);
  kept.sort((a, b) => a.position - b.position);
  return kept;
}

function context(pattern: Pattern, options: FitOptions, extra: { useKa2?: boolean }): Context {
  const { x, y } = pattern;
  const n = x.length;
  if (n < 7) throw new RangeError(`a pattern needs at least 7 points to fit peaks, got ${n}`);
  const step = (x[n - 1] - x[0]) / (n - 1);
  const smooth = savitzkyGolay(y, { halfWindow: 3, order: 2 });
  const noise = noiseOf(pattern, smooth);
  const alpha = options.falseAlarmRate ?? 0.01;
  if (!(alpha > 0 && alpha < 0.5)) throw new RangeError(`falseAlarmRate must be in (0, 0.5), got ${alpha}`);
  const elements = Math.max(1, Math.round(n / 3));
  const zCrit = normalQuantile(1 - alpha / elements);
  const defMax = pattern.axis === 'twoTheta' ? 3 : (x[n - 1] - x[0]) / 10;
  const maxFwhm = options.maxPeakFwhm ?? defMax;
  if (!(maxFwhm > 2 * step)) throw new RangeError(`maxPeakFwhm must exceed two steps (${2 * step}), got ${maxFwhm}`);
  const lambda = pattern.wavelengthNm;
  const useKa2 = extra.useKa2 ?? false;
  const lp = lpGeometry(options.lp ?? DEFAULT_LP_GEOMETRY);
  const withLp = pattern.axis === 'twoTheta' && lp.specimen !== 'none';
  if (withLp && !(x[0] > 0 && x[n - 1] < 180)) throw new RangeError(`an LP factor needs 2θ within (0, 180)°, the pattern spans ${x[0]}–${x[n - 1]}°: give lp { specimen: 'none' }`);
  return {
    pattern, x, y, n, step, noise, useKa2,
    ratio: pattern.radiation?.ka2Ratio || KA2_RATIO,
    ka2Of: (c: number) => (useKa2 ? ka2Position(c, lambda!, pattern.ka2Nm!) : NaN),
    lpAt: withLp ? Float64Array.from(x, (t) => lpFactor(t, lp)) : new Float64Array(n).fill(1),
    lpOf: withLp ? (c: number) => (c > 0 && c < 180 ? lpFactor(c, lp) : Infinity) : () => 1,
    withLp,
    zCrit, alphaPerPosition: alpha / elements, maxFwhm,
    minFwhm: 1.2 * step,
    windowFwhm: options.windowFwhm ?? 4,
    maxGroup: options.maxGroup ?? 8,
    trend: null,
  };
}

/**
 * Chains of members whose fit windows overlap, a chain longer than maxGroup cut into windows of at
 * most maxGroup members (as few as that allows) at its weakest valleys (where the members' summed
 * starting profiles are lowest between two neighbours), so a crowded stretch is fitted a window at a time.
 */
function chainsOf(ctx: Context, members: Member[]): Member[][][] {
  const sorted = [...members].sort((a, b) => a.c - b.c);
  const chains: Member[][] = [];
  let end = -Infinity;
  for (const m of sorted) {
    const [a, b] = extent(ctx, m, ctx.windowFwhm);
    const g = chains[chains.length - 1];
    if (g && a < end) {
      g.push(m);
      end = Math.max(end, b);
    } else {
      chains.push([m]);
      end = b;
    }
  }
  const level = (chain: Member[], v: number) => chain.reduce((s, m) => s + m.a * splitPseudoVoigt(v - m.c, m.w, m.eta, m.rho), 0);
  const cut = (chain: Member[]): Member[][] => {
    if (chain.length <= ctx.maxGroup) return [chain];
    // as few windows as the cap allows: a cut may not raise the number of windows needed
    const need = (len: number) => Math.ceil(len / ctx.maxGroup);
    let best = 1;
    let bestLevel = Infinity;
    for (let k = 1; k < chain.length; k++) {
      if (need(k) + need(chain.length - k) > need(chain.length)) continue;
      const v = level(chain, 0.5 * (chain[k - 1].c + chain[k].c));
      if (v < bestLevel) {
        bestLevel = v;
        best = k;
      }
    }
    return [...cut(chain.slice(0, best)), ...cut(chain.slice(best))];
  };
  return chains.map(cut);
}

/** The background plus the profiles (with Kα2 companions) of members held fixed. */
function withHeld(ctx: Context, bg: Float64Array, held: Member[]): Float64Array {
  const out = Float64Array.from(bg);
  const { x } = ctx;
  for (const m of held) {
    const c2 = ctx.ka2Of(m.c);
    const reach = REACH_FWHM * m.w * Math.max(m.rho, 1 / m.rho) + 2 * m.w;
    const j1 = Math.min(ctx.n, lowerIndex(x, (Number.isNaN(c2) ? m.c : c2) + reach));
    addLine(ctx, m, lowerIndex(x, m.c - reach), j1, out, 0, false);
  }
  return out;
}

/** Plain copy of a fitted member as a member to fit again. */
function again(m: FitMember): Member {
  return { c: m.c, a: m.a, w: m.w, eta: m.eta, rho: m.rho, split: m.split, given: m.given, init: m.init, fixed: m.fixed };
}

const zOf = (m: FitMember) => (m.sa > 0 && Number.isFinite(m.a / m.sa) ? m.a / m.sa : 0);

/**
 * A line across whose FWHM the LP factor changes by more than this (LP(2θ₀ − w/2)/LP(2θ₀ + w/2) − 1)
 * is background: so broad a feature so close to the beam cannot be told from the low-angle rise (a
 * judgement: a random powder's clay 001 at 7° with a FWHM of 0.8° has 0.25, a 1.5 nm smectite's
 * at 5.9° with 0.95° 0.38; on a measured pattern's steep low-angle background a 1.5° hump at 4.9°
 * had 0.83 and, tilted, took the background's curvature: significant only with the factor).
 */
const LP_TILT_MAX = 0.6;

/** How much the LP factor changes across a line's FWHM (0 without one). */
function lpTilt(ctx: Context, m: { c: number; w: number }): number {
  if (!ctx.withLp) return 0;
  return ctx.lpOf(m.c - 0.5 * m.w) / ctx.lpOf(m.c + 0.5 * m.w) - 1;
}

/**
 * Fits a group until every member is significant: fit, drop the least significant member that
 * fails the test (a weak line is first tried with its width and shape held at the pattern's width
 * trend, the way a constrained profile fit treats weak lines), add the strongest significant
 * residual maximum, test a member much broader than the trend as two lines, and fit again.
 */
function settleGroup(ctx: Context, start: Member[], bg: Float64Array, residualSearch: boolean, rejected: PatternFit['rejected']): GroupFit | null {
  let members = start.map((m) => ({ ...m }));
  let fit: GroupFit | null = null;
  const tried = new Set<number>();
  const splitTried = new Set<number>();
  const trend = ctx.trend;
  for (let round = 0; round < 3 * start.length + 10 && members.length > 0; round++) {
    fit = fitGroup(ctx, members, bg);
    if (!fit) return null;
    // worst offender first
    let worst = -1;
    let worstScore = Infinity;
    let reason = '';
    fit.members.forEach((m, k) => {
      if (m.given) return;
      const z = zOf(m);
      let score = z;
      let why = `area ${score.toFixed(1)}σ, below the critical ${ctx.zCrit.toFixed(2)}σ`;
      if (m.atBound.includes('area')) {
        score = -2;
        why = 'no area left';
      } else if (m.w > ctx.maxFwhm || (m.atBound.includes('fwhm') && m.w > ctx.maxFwhm * 0.99)) {
        score = -1;
        why = `FWHM ${m.w.toPrecision(3)} broader than the largest peak width ${ctx.maxFwhm.toPrecision(3)}: background`;
      } else if (lpTilt(ctx, m) > LP_TILT_MAX) {
        score = -1;
        why = `the LP factor changes by ${(100 * lpTilt(ctx, m)).toFixed(0)} % across its FWHM ${m.w.toPrecision(3)} (more than ${100 * LP_TILT_MAX} %): not told from the low-angle background`;
      } else if (m.atBound.includes('fwhm') && m.w <= ctx.minFwhm * 1.001) {
        score = -0.5;
        why = 'narrower than the sampling allows (a spike)';
      } else {
        for (let j = 0; j < fit!.members.length; j++) {
          const o = fit!.members[j];
          if (j !== k && Math.abs(o.c - m.c) < 0.25 * Math.min(o.w, m.w) && o.a >= m.a) {
            score = -0.25;
            why = 'merged with a stronger neighbour';
          }
        }
      }
      if (score < ctx.zCrit && score < worstScore) {
        worstScore = score;
        worst = k;
        reason = why;
      }
    });
    if (worst >= 0) {
      const w0 = fit.members[worst];
      // a weak free line: held at the width trend it has fewer free parameters; kept when it then
      // passes and fits about as well (likelihood ratio, 2 parameters, 5 %)
      if (trend && !w0.fixed && worstScore >= 0 && !w0.split) {
        const t = trend(w0.c);
        const trial = fit.members.map((m, k) => (k === worst ? { ...again(m), w: t.w, eta: t.eta, fixed: true } : again(m)));
        const tf = fitGroup(ctx, trial, bg);
        if (tf && zOf(tf.members[worst]) >= ctx.zCrit && tf.chi2 - fit.chi2 < 5.99 * Math.max(1, fit.reducedChi2)) {
          members = trial;
          continue;
        }
      }
      rejected.push({ position: w0.c, reason });
      // the others go on from where they are, except those that failed the test too: they start again
      members = fit.members
        .filter((_, k) => k !== worst)
        .map((m) => {
          const back = zOf(m) < ctx.zCrit && m.init && !m.given;
          return back ? { c: m.init!.c, a: m.init!.a, w: m.init!.w, eta: 0.5, rho: 1, split: false, given: m.given, init: m.init } : again(m);
        });
      if (members.length === 0) return null;
      continue;
    }
    // a held line that turned out strong gets its own width back
    if (fit.members.some((m) => m.fixed && zOf(m) >= 3 * ctx.zCrit)) {
      members = fit.members.map((m) => (m.fixed && zOf(m) >= 3 * ctx.zCrit ? { ...again(m), fixed: false } : again(m)));
      continue;
    }
    if (!residualSearch || members.length >= ctx.maxGroup) break;
    // a line much broader than the width trend may be two: tried as two lines at the trend's width
    if (trend) {
      let splitDone = false;
      for (let k = 0; k < fit.members.length && !splitDone; k++) {
        const m = fit.members[k];
        const key = Math.round(m.c / ctx.step);
        if (m.fixed || m.split || m.given || splitTried.has(key)) continue;
        const t = trend(m.c);
        // two Lorentzian-like lines fitted as one come out as a broad Gaussian (a flat top), and
        // lose significance to the width and η they trade with the area: such a member, more than
        // twice the trend's width where the pattern's lines are Lorentzian-like, is tried once it
        // passes the detection test itself; any other needs twice the critical z
        const mergedPair = m.w > 2 * t.w && m.eta < 0.1 && t.eta > 0.5;
        if (!(m.w > 1.6 * t.w) || zOf(m) < (mergedPair ? 1 : 2) * ctx.zCrit) continue;
        splitTried.add(key);
        const others = fit.members.filter((_, j) => j !== k).map(again);
        const pair: Member[] = [-1, 1].map((sgn) => ({ c: m.c + sgn * 0.3 * m.w, a: m.a / 2, w: t.w, eta: t.eta, rho: 1, split: false, given: false, fixed: true, init: { c: m.c + sgn * 0.3 * m.w, a: m.a / 2, w: t.w } }));
        const tf = fitGroup(ctx, [...others, ...pair], bg);
        if (!tf) continue;
        const two = tf.members.slice(-2);
        // two lines that make up the broad one carry its intensity between them: a pair holding much
        // less left the rest to the background, and is a broad line cut into narrow pieces
        const kept = (two[0].a + two[1].a) / m.a;
        if (tf.chi2 < fit.chi2 && two.every((q) => zOf(q) >= ctx.zCrit) && Math.abs(two[0].c - two[1].c) > 0.5 * t.w && kept > SPLIT_AREA_KEPT && kept < 1 / SPLIT_AREA_KEPT) {
          members = [...others, ...two.map(again)];
          splitDone = true;
        }
      }
      if (splitDone) continue;
    }
    const widths = fit.members.map((m) => m.w).sort((a, b) => a - b);
    const wTyp = widths[Math.floor(widths.length / 2)];
    // the residual's own width: a matched filter at the group's typical width and at broader ones;
    // a broad residual (a broad line of another phase that was lost) comes back free at its width,
    // not held at the trend, so it is not cut into narrow pieces
    let rp: { c: number; z: number; amp: number; w: number } | null = null;
    for (const f of RESIDUAL_WIDTHS) {
      const wf = Math.min(f * wTyp, ctx.maxFwhm);
      const r = residualPeak(ctx, fit, wf);
      if (r && (!rp || r.z > rp.z)) rp = { ...r, w: wf };
      if (wf >= ctx.maxFwhm) break;
    }
    // the threshold grows with the group's misfit, so profile-shape errors of strong peaks are not taken for peaks
    if (!rp || rp.z < ctx.zCrit * Math.sqrt(Math.max(1, fit.reducedChi2))) break;
    const key = Math.round(rp.c / ctx.step);
    if (tried.has(key)) break;
    tried.add(key);
    if (fit.members.some((m) => Math.abs(m.c - rp.c) < 0.3 * Math.min(m.w, wTyp))) break;
    members = fit.members.map(again);
    const t = trend ? trend(rp.c) : { w: wTyp, eta: 0.5 };
    const broad = rp.w > 1.6 * Math.max(t.w, wTyp);
    const wNew = broad ? rp.w : t.w;
    const a0 = Math.max(rp.amp * wNew * 1.06, 1e-6);
    members.push({ c: rp.c, a: a0, w: wNew, eta: broad ? 0.5 : t.eta, rho: 1, split: false, given: false, fixed: !!trend && !broad, init: { c: rp.c, a: a0, w: wNew } });
  }
  return fit;
}

/**
 * The width trend of a pattern from its strong, free, symmetric peaks: FWHM² = U tan²θ + V tan θ
 * + W for 2θ data (a constant for fewer than four peaks, a straight line in q for q data), with
 * lines more than a factor 1.5 off the first fit left out of the second; η is their median.
 * Reference: Caglioti, Paoletti & Ricci, Nucl. Instrum. 3, 223 (1958) (the form).
 */
function widthTrend(ctx: Context, fits: GroupFit[]): ((c: number) => { w: number; eta: number }) | null {
  const strong = fits.flatMap((f) => f.members).filter((m) => !m.fixed && !m.split && !m.given && zOf(m) >= 3 * ctx.zCrit && m.atBound.length === 0);
  if (strong.length === 0) return null;
  const etas = strong.map((m) => m.eta).sort((a, b) => a - b);
  const eta = etas[Math.floor(etas.length / 2)];
  const twoTheta = ctx.pattern.axis === 'twoTheta';
  const feat = (c: number) => {
    if (!twoTheta) return [1, c, 0];
    const t = Math.tan((c * Math.PI) / 360);
    return [t * t, t, 1];
  };
  const solve = (pts: FitMember[]) => {
    const ws = pts.map((m) => m.w).sort((a, b) => a - b);
    const med = ws[Math.floor(ws.length / 2)];
    // two or three lines: the size and strain form alone, w² = a + b·tan²θ (a, b ≥ 0), so that a
    // broad line at high angle is not held to the width of the lines below it; one line: its width
    const k = pts.length >= 4 ? (twoTheta ? 3 : 2) : 0;
    if (k === 0) {
      if (!twoTheta || pts.length < 2) return () => med;
      let sx = 0;
      let sy = 0;
      let sxx = 0;
      let sxy = 0;
      for (const m of pts) {
        const t2 = Math.tan((m.c * Math.PI) / 360) ** 2;
        sx += t2;
        sy += m.w * m.w;
        sxx += t2 * t2;
        sxy += t2 * m.w * m.w;
      }
      const np = pts.length;
      const den = np * sxx - sx * sx;
      const b = den > 0 ? (np * sxy - sx * sy) / den : -1;
      const a = (sy - b * sx) / np;
      if (!(b >= 0 && a > 0)) return () => med;
      return (c: number) => Math.min(Math.max(Math.sqrt(a + b * Math.tan((c * Math.PI) / 360) ** 2), 0.5 * ws[0]), 2 * ws[ws.length - 1]);
    }
    const ata = new Float64Array(k * k);
    const atb = new Float64Array(k);
    for (const m of pts) {
      const f = feat(m.c).slice(0, k);
      const target = twoTheta ? m.w * m.w : m.w;
      for (let i = 0; i < k; i++) {
        atb[i] += f[i] * target;
        for (let j = 0; j < k; j++) ata[i * k + j] += f[i] * f[j];
      }
    }
    const sol = solveLinear(ata, atb, k);
    if (!sol) return () => med;
    return (c: number) => {
      const f = feat(c);
      const v = f.slice(0, k).reduce((s, fi, i) => s + fi * sol[i], 0);
      const w = twoTheta ? Math.sqrt(Math.max(v, 0)) : v;
      return Math.min(Math.max(w, 0.5 * ws[0]), 2 * ws[ws.length - 1]);
    };
  };
  let f = solve(strong);
  const kept = strong.filter((m) => m.w / f(m.c) < 1.5 && f(m.c) / m.w < 1.5);
  if (kept.length >= 3 && kept.length < strong.length) f = solve(kept);
  return (c: number) => ({ w: Math.max(ctx.minFwhm, f(c)), eta });
}

/**
 * The background of the pattern less the fitted peak profiles (both lines, tails included), the
 * central ±1 FWHM of each peak left out.
 */
function backgroundWithout(ctx: Context, fits: GroupFit[], members: Member[], halfWidth: number, robustHalfWindow: number): Float64Array {
  const { x, y, n } = ctx;
  const stripped = Float64Array.from(y);
  for (const f of fits) {
    for (const m of f.members) {
      const pr = new Float64Array(n);
      addLine(ctx, m, 0, n, pr, 0, true);
      for (let i = 0; i < n; i++) stripped[i] -= pr[i];
    }
  }
  const mask = new Uint8Array(n);
  for (const m of members) {
    const [a, b] = extent(ctx, m, 1);
    for (let i = lowerIndex(x, a); i < n && x[i] <= b; i++) mask[i] = 1;
  }
  let floor = Infinity;
  for (let i = 0; i < n; i++) if (y[i] > 0) floor = Math.min(floor, y[i]);
  for (let i = 0; i < n; i++) if (!(stripped[i] > 0)) mask[i] = 1;
  for (let i = 0; i < n; i++) stripped[i] = Math.max(stripped[i], Number.isFinite(floor) ? 0.5 * floor : 1e-6);
  return localBackground(x, stripped, ctx.noise.variance, { halfWidth, mask, log: ctx.y.every((v) => v > 0), robustHalfWindow });
}

/**
 * The last pass's lines and the background refined in turn, no line added: each group of lines
 * refitted on the background with every other line's profile held (tails included), the background
 * taken again from the pattern less all the profiles, until it moves by less than
 * BACKGROUND_SETTLED_SIGMA. Between closely spaced lines the background and the lines' Lorentzian
 * tails trade off: a background left high under a crowded stretch takes the tails with it (η and
 * area too low, FWHM too large, the size too small), and the passes undo only part of that.
 * The groups in `keep` (fitted on the previous pass's background, or holding a broad line) keep
 * their fit and their background. A line that no longer passes the significance test on the
 * settled background is dropped (rejected, with the reason). The caller takes the result only when
 * the background settled; otherwise the last pass stands, with a note.
 * Reference: alternating least squares, each step lowering the same misfit (Bezdek & Hathaway,
 * Neural Parallel Sci. Comput. 11, 351 (2003), from memory).
 */
function settleBackground(ctx: Context, fits0: GroupFit[], keep: Set<GroupFit>, background0: Float64Array, halfWidth: number): { background: Float64Array; fits: GroupFit[]; moved: number; rejected: PatternFit['rejected'] } {
  const rejected: PatternFit['rejected'] = [];
  let background = background0;
  const fits = [...fits0];
  const all = () => fits.flatMap((f) => f.members);
  let moved = Infinity;
  for (let round = 0; round < MAX_BACKGROUND_ROUNDS; round++) {
    const updated = backgroundWithout(ctx, fits, all(), halfWidth, 1);
    for (const f of keep) for (let i = f.i0; i <= f.i1; i++) updated[i] = background[i];
    moved = 0;
    for (let i = 0; i < ctx.n; i++) moved = Math.max(moved, Math.abs(updated[i] - background[i]) / Math.sqrt(ctx.noise.variance[i]));
    background = updated;
    fits.forEach((f, k) => {
      if (keep.has(f)) return;
      const others = fits.filter((_, j) => j !== k).flatMap((g) => g.members.map(again));
      const g = fitGroup(ctx, f.members.map(again), withHeld(ctx, background, others));
      if (g) fits[k] = g;
    });
    if (moved < BACKGROUND_SETTLED_SIGMA) break;
  }
  // every line kept passes the test on the settled background
  const out = fits.map((f) => {
    const weak = f.members.filter((m) => !m.given && zOf(m) < ctx.zCrit);
    for (const m of weak) rejected.push({ position: m.c, reason: `area ${zOf(m).toFixed(1)}σ on the settled background, below the critical ${ctx.zCrit.toFixed(2)}σ` });
    return weak.length ? { ...f, members: f.members.filter((m) => !weak.includes(m)) } : f;
  }).filter((f) => f.members.length > 0);
  return { background, fits: out, moved, rejected };
}

/**
 * Fits every peak of a pattern, overlapping peaks together, as pseudo-Voigt profiles on a
 * background that keeps amorphous halos (LOESS with peaks masked), plus a local linear correction,
 * by Levenberg–Marquardt; with Kα2 handled as a doublet (same shape, the radiation's ratio,
 * position from Bragg's law with the Kα2 wavelength).
 *
 * @param pattern the pattern (2θ patterns need a wavelength)
 * @param options search, test and fit settings
 * @returns background, smoothed curve, full model, the fitted peaks with uncertainties, the halos,
 *   the significance test and the rejected features
 *
 * Notes — the test a peak passes (stated in `test`):
 * - its fitted area stands z_crit standard uncertainties above zero, z_crit = Φ⁻¹(1 − α/N):
 *   α the false-alarm probability of the whole pattern (default 1 %), N = points/3 independent
 *   positions (Bonferroni), so pure noise yields a false peak in at most α of patterns; the
 *   uncertainty is that of the fit with counting-noise weights, inflated by the group's reduced χ²
 *   when it exceeds 1;
 * - its FWHM is at most maxPeakFwhm (default 3° 2θ): anything broader is background; and on a halo
 *   at most a third of the halo's FWHM;
 * - candidates come from the smoothed net pattern; each overlap group is refitted after adding the
 *   strongest significant residual maximum (a weak peak beside a strong one) and dropping members
 *   that fail the test; a stretch of more than maxGroup overlapping peaks is cut at its weakest
 *   valleys into windows fitted in turn with the other windows' peaks held fixed; the residual is
 *   searched at the group's typical width and broader (a lost broad line of another phase comes
 *   back free at its own width, not cut into narrow pieces); a broad line is only taken for two
 *   narrow ones when the pair keeps its area; a window whose lines all lose their significance at
 *   once on a new background estimate (one taken under a long stretch of peak cores, such as a
 *   band with lines on its tail) is fitted on the previous pass's background, shown under it too;
 * - each line is fitted as LP(2θ)/LP(2θ₀) × its pseudo-Voigt for the geometry in options.lp
 *   (default random powder, Bragg–Brentano), so its centre is the Bragg angle and its FWHM its own;
 *   a line across whose FWHM the factor changes by more than 60 % is background (not told from the
 *   low-angle rise);
 * - a free η is restrained towards the pattern's η trend (± 0.3), so a weak line's shape does not
 *   wander to a pure Gaussian and take its width and area with it (a restraint in the sense of
 *   Waser, Acta Cryst. 16, 1091, 1963);
 * - after the last pass, the lines (none added) and the background are refined in turn until the
 *   background moves by less than 0.1 σ of a point's counts (at most 12 rounds; if it does not
 *   settle, the last pass stands and a note says so): between closely spaced lines the background
 *   and the lines' Lorentzian tails trade off, and a background left high under a crowded stretch
 *   takes the tails with it (η and area too low, FWHM too large, the Scherrer size too small);
 *   groups holding a line more than 3 times the width trend (a clay order, a band) keep their fit;
 * - a significant, broad peak (area above the critical z, FWHM at least a tenth of the widest
 *   allowed) is refitted alone with different left and right widths; when that improves χ² beyond
 *   chance (p < 0.001) and the high-angle side is at least twice as wide, it is a two-dimensional
 *   (hk) band of turbostratic layers (Warren 1941), reported without a size.
 * Uncertainties here are those of the fit alone (see analysePattern for the full d budget).
 * Reference: pseudo-Voigt: Wertheim et al., Rev. Sci. Instrum. 45, 1369 (1974); Kα2 ratio 0.5:
 * Rachinger (1948), ITC C §2.3.3.2; LM: Marquardt (1963); band shape: Warren, Phys. Rev. 59, 693 (1941).
 */
export function fitPattern(pattern: Pattern, options: FitOptions = {}): PatternFit {
  const lambda = pattern.wavelengthNm;
  if (pattern.axis === 'twoTheta' && lambda === null) throw new RangeError('a 2θ pattern needs a wavelength to give d-spacings');
  const windowFwhm = options.windowFwhm ?? 4;
  if (!(windowFwhm > 0)) throw new RangeError(`windowFwhm must be positive, got ${windowFwhm}`);
  const maxGroup = options.maxGroup ?? 8;
  if (!Number.isInteger(maxGroup) || maxGroup < 1) throw new RangeError(`maxGroup must be a positive integer, got ${maxGroup}`);
  const haloRatio = options.haloWidthRatio ?? 1 / 3;
  if (!(haloRatio > 0 && haloRatio <= 1)) throw new RangeError(`haloWidthRatio must be in (0, 1], got ${haloRatio}`);
  const useKa2 = (options.ka2 ?? (pattern.ka2Nm ? 'doublet' : 'none')) === 'doublet';
  if (useKa2 && (pattern.axis !== 'twoTheta' || !pattern.ka2Nm || !lambda)) throw new RangeError('Kα2 doublet fitting needs a 2θ pattern with a Kα2 wavelength');
  const ctx = context(pattern, options, { useKa2 });
  const { x, y, n } = ctx;
  const notes: string[] = [];
  const rejected: PatternFit['rejected'] = [];
  if (ctx.noise.kind === 'counts' && Math.abs(Math.log(ctx.noise.gain)) > Math.log(1.5)) {
    notes.push(`the intensities scatter ${Math.sqrt(ctx.noise.gain).toPrecision(2)} times as much as raw counts would: variance taken as ${ctx.noise.gain.toPrecision(2)} × intensity`);
  }
  const smoothed = savitzkyGolay(y, { halfWindow: Math.min(options.smoothHalfWindow ?? 3, Math.floor((n - 1) / 2)), order: 2 });
  const halfWidth = 1.25 * ctx.maxFwhm;
  const robustHalfWindow = Math.min(Math.floor(n / 8), Math.round((0.2 * ctx.maxFwhm) / ctx.step));
  let background = localBackground(x, y, ctx.noise.variance, { halfWidth, robustHalfWindow });
  const given = options.positions !== undefined;
  let members: Member[] = [];
  if (given) {
    for (const p of options.positions!) {
      if (!(p > x[0] && p < x[n - 1])) throw new RangeError(`peak position ${p} is outside the pattern ${x[0]}–${x[n - 1]}`);
    }
  }
  const residualSearch = options.residualSearch ?? !given;
  let fits: GroupFit[] = [];
  // the background of the pass before (null in the first) and where this pass kept it
  let previousBackground: Float64Array | null = null;
  let spliced = background;
  // groups whose fit and background the settling below leaves as they are: the last pass's windows
  // fitted on the previous pass's background (and, added below, groups holding a broad line)
  const heldGroups = new Set<GroupFit>();
  for (let pass = 0; pass < 3; pass++) {
    spliced = Float64Array.from(background);
    const fromLastPass = new Set(given ? [] : members.map((m) => m.c));
    // candidates of this pass: the peaks kept so far, and new maxima of the net pattern
    let cands: Member[];
    if (given) {
      cands = options.positions!.map((p) => {
        const i = Math.min(n - 1, lowerIndex(x, p));
        const old = members.find((m) => Math.abs(m.c - p) < 0.5 * m.w);
        if (old) return old;
        // width from the smoothed net curve: where it falls to half its height on each side
        const h = Math.max(smoothed[i] - background[i], 1e-6);
        let l = i;
        while (l > 0 && smoothed[l] - background[l] > h / 2 && x[i] - x[l] < ctx.maxFwhm) l--;
        let r = i;
        while (r < n - 1 && smoothed[r] - background[r] > h / 2 && x[r] - x[i] < ctx.maxFwhm) r++;
        const w = Math.min(ctx.maxFwhm, Math.max(x[r] - x[l], 3 * ctx.step));
        const a = (h * w * 1.3) / (useKa2 ? 1 + ctx.ratio : 1);
        return { c: p, a, w, eta: 0.5, rho: 1, split: false, given: true, init: { c: p, a, w } };
      });
    } else {
      const found = candidatesOf(ctx, background, options);
      cands = members.map((m) => ({ ...m }));
      const byHeight = [...found].sort((a, b) => b.height - a.height);
      const dropped = new Set<PeakCandidate>();
      if (useKa2) {
        // a maximum at a stronger peak's Kα2 position is that Kα2
        for (const strong of byHeight) {
          if (dropped.has(strong)) continue;
          const p2 = ctx.ka2Of(strong.position);
          for (const c of found) {
            if (c !== strong && !dropped.has(c) && c.height < 0.8 * strong.height && Math.abs(c.position - p2) < 0.3 * strong.fwhm + ctx.step) dropped.add(c);
          }
        }
      }
      for (const c of found) {
        if (dropped.has(c)) continue;
        if (cands.some((m) => Math.abs(m.c - c.position) < 0.5 * Math.min(m.w, c.fwhm))) continue;
        // the Kα2 line of a peak already fitted is part of that peak
        if (useKa2 && members.some((m) => Math.abs(ctx.ka2Of(m.c) - c.position) < 0.3 * m.w + ctx.step)) continue;
        const netH = Math.max(c.height, 1e-6);
        const a0 = (netH * c.fwhm * 1.3) / (useKa2 ? 1 + ctx.ratio : 1);
        cands.push({ c: c.position, a: a0, w: c.fwhm, eta: 0.5, rho: 1, split: false, given: false, init: { c: c.position, a: a0, w: c.fwhm } });
      }
    }
    fits = [];
    members = [];
    for (const windows of chainsOf(ctx, cands)) {
      // a crowded chain: each window fitted with the other windows' peaks held fixed (at their
      // fitted values once fitted, else at their starting values), twice over, with the residual
      // search inside each window (a weak line on a strong one's flank is found there too)
      const now: Member[][] = windows.map((w) => w.map((m) => ({ ...m })));
      const got: (GroupFit | null)[] = windows.map(() => null);
      const lastBackground: boolean[] = windows.map(() => false);
      const sweeps = windows.length > 1 ? 2 : 1;
      const early: PatternFit['rejected'] = [];
      for (let sweep = 0; sweep < sweeps; sweep++) {
        for (let k = 0; k < windows.length; k++) {
          if (now[k].length === 0) continue;
          // a window of lines the last pass found whose fit on this pass's background loses every
          // line's significance at once is fitted on the last pass's background instead: a new
          // background that went wrong under a broad band (a long stretch masked by peak cores)
          // must not make the window give up its lines one by one and let narrow pieces take their place
          if (sweep === 0 && previousBackground && now[k].some((m) => fromLastPass.has(m.c))) {
            const trial = fitGroup(ctx, now[k], windows.length > 1 ? withHeld(ctx, background, now.filter((_, j) => j !== k).flat()) : background);
            lastBackground[k] = trial !== null && trial.members.every((m) => m.given || zOf(m) < ctx.zCrit);
          }
          const bgUsed = lastBackground[k] ? previousBackground! : background;
          const bgK = windows.length > 1 ? withHeld(ctx, bgUsed, now.filter((_, j) => j !== k).flat()) : bgUsed;
          const f = settleGroup(ctx, now[k], bgK, residualSearch, sweep === sweeps - 1 ? rejected : early);
          if (f) {
            got[k] = f;
            now[k] = f.members.map(again);
          } else if (sweep === sweeps - 1 && now[k].some((m) => m.given)) notes.push(`peak near ${now[k][0].c.toPrecision(5)} could not be fitted (too few points in its window)`);
        }
      }
      // what the first sweep rejected stays rejected unless the second found a line there
      const kept = now.flat();
      for (const r of early) if (!kept.some((m) => Math.abs(m.c - r.position) < 0.5 * m.w) && !rejected.some((q) => Math.abs(q.position - r.position) < ctx.step)) rejected.push(r);
      got.forEach((f, k) => {
        if (!f) return;
        // the background shown under such a window is the one its lines were fitted on
        if (lastBackground[k]) {
          if (pass === 2) heldGroups.add(f);
          for (let i = f.i0; i <= f.i1; i++) spliced[i] = previousBackground![i];
          const first = f.members[0].c.toPrecision(4);
          const last = f.members[f.members.length - 1].c.toPrecision(4);
          const where = first === last ? `the line at ${first}` : `lines at ${first}–${last}`;
          notes.push(`${where} fitted on the previous background estimate: on the last one every line of that window lost its significance`);
        }
        fits.push(f);
        members.push(...f.members.map((m) => ({ c: m.c, a: m.a, w: m.w, eta: m.eta, rho: m.rho, split: m.split, given: m.given, init: { c: m.c, a: m.a, w: m.w } })));
      });
    }
    if (pass === 2) break;
    previousBackground = background;
    ctx.trend = widthTrend(ctx, fits) ?? ctx.trend;
    // background again, from the pattern less every fitted profile (tails included); the cores,
    // where a profile error would matter most, are left out
    // (the fitted peaks are gone from it, so each point may speak for itself)
    background = backgroundWithout(ctx, fits, members, halfWidth, 1);
    if (pass === 0) rejected.length = 0; // what the first background suggested is decided again on the better one
  }
  background = spliced;
  if (fits.length) {
    // groups holding a line far broader than the width trend (a clay order, an (hk) band before its
    // test) keep their fit and background too: the trade-off fixed here is that of sharp lines'
    // tails, and a broad line on a halo moves with any background change
    const trend = ctx.trend;
    for (const f of fits) if (trend && f.members.some((m) => m.w > BROAD_VS_TREND * trend(m.c).w)) heldGroups.add(f);
    const settled = settleBackground(ctx, fits, heldGroups, background, halfWidth);
    if (settled.moved < BACKGROUND_SETTLED_SIGMA) {
      background = settled.background;
      fits = settled.fits;
      rejected.push(...settled.rejected);
    } else notes.push(`the background did not settle in ${MAX_BACKGROUND_ROUNDS} rounds of refinement with the lines (its last change ${settled.moved.toPrecision(2)} standard deviations of a point's counts): the lines are those of the last pass, and in crowded stretches their η, FWHM and area may carry a bias from the background`);
  }
  // asymmetric profiles: the band test on strong, broad peaks, each fitted alone (the others
  // subtracted) over a window reaching far to high angle, on a background taken with a window three
  // times wider, so that a long tail is not mistaken for background
  if ((options.bandTest ?? true) && fits.length) {
    const all = fits.flatMap((f) => f.members);
    const profileOf = (m: FitMember) => {
      const out = new Float64Array(n);
      addLine(ctx, m, 0, n, out, 0, true);
      return out;
    };
    const profiles = all.map(profileOf);
    const strippedAll = Float64Array.from(y);
    for (const pr of profiles) for (let i = 0; i < n; i++) strippedAll[i] -= pr[i];
    let floor = Infinity;
    for (let i = 0; i < n; i++) if (y[i] > 0) floor = Math.min(floor, y[i]);
    const positive = Float64Array.from(strippedAll, (v) => Math.max(v, Number.isFinite(floor) ? 0.5 * floor : 1e-6));
    let wide: Float64Array | null = null;
    const reshaped = new Set<GroupFit>();
    all.forEach((m, k) => {
      if (m.given || !(m.sa > 0) || m.a / m.sa < ctx.zCrit || m.w < 0.1 * ctx.maxFwhm || m.w < 4 * ctx.step) return;
      wide ??= localBackground(x, positive, ctx.noise.variance, { halfWidth: 3 * halfWidth, robustHalfWindow });
      const others = Float64Array.from(strippedAll);
      for (let i = 0; i < n; i++) others[i] += profiles[k][i];
      const window: [number, number] = [m.c - 3 * m.w, (Number.isNaN(ctx.ka2Of(m.c)) ? m.c : ctx.ka2Of(m.c)) + 12 * m.w];
      const start = { c: m.c, a: m.a, w: m.w, eta: m.eta, rho: 1, split: false, given: false };
      const sym = fitGroup(ctx, [start], wide, { y: others, window });
      const spl = fitGroup(ctx, [{ ...start, a: m.a * 2, rho: 3, split: true }], wide, { y: others, window });
      if (!sym || !spl) return;
      const b = spl.members[0];
      const gain = (sym.chi2 - spl.chi2) / Math.max(1, spl.reducedChi2);
      if (gain > 10.83 && b.rho >= 2 && !b.atBound.includes('asymmetry') && b.a / Math.max(b.sa, 1e-300) >= ctx.zCrit) {
        Object.assign(m, { c: b.c, a: b.a, w: b.w, eta: b.eta, rho: b.rho, split: true, sc: b.sc, sa: b.sa, sw: b.sw, se: b.se, srho: b.srho, covAW: b.covAW, covAE: b.covAE, covWE: b.covWE, atBound: b.atBound });
        const g = fits.find((f) => f.members.includes(m));
        if (g) reshaped.add(g);
      }
    });
    if (wide) for (const g of bandTailLines(ctx, fits, wide, y, profileOf)) reshaped.add(g);
    // the groups whose members changed shape: their model drawn again from the members
    for (const g of reshaped) {
      const prs = g.members.map(profileOf);
      for (let i = g.i0; i <= g.i1; i++) g.model[i - g.i0] = background[i] + prs.reduce((sum, pr) => sum + pr[i], 0);
    }
  }
  // the model, the halos and the peaks
  const model = Float64Array.from(background);
  for (const f of fits) {
    for (let i = f.i0; i <= f.i1; i++) model[i] = f.model[i - f.i0];
  }
  const medianVar = [...ctx.noise.variance].sort((a, b) => a - b)[Math.floor(n / 2)];
  const halos: Halo[] = [];
  // one halo per hump: maxima within half a FWHM of a stronger one are the same halo
  for (const h of [...findHalos(x, background, { minFwhm: 1.5 * ctx.maxFwhm, minHeight: 5 * Math.sqrt(medianVar), minRelative: 0.15, baselineHalfWidth: 4 * ctx.maxFwhm })].sort((a, b) => b.height - a.height)) {
    if (!halos.some((k) => Math.abs(k.position - h.position) < 0.5 * Math.max(k.fwhm, h.fwhm))) halos.push(h);
  }
  halos.sort((a, b) => a.position - b.position);
  const peaks: FittedPeak[] = [];
  fits.forEach((f, gi) => {
    f.members.forEach((m) => {
      const onHalo = halos.findIndex((h) => Math.abs(m.c - h.position) < h.fwhm / 2);
      if (onHalo >= 0 && !m.given && m.w > haloRatio * halos[onHalo].fwhm) {
        rejected.push({ position: m.c, reason: `on the halo at ${halos[onHalo].position.toPrecision(4)} and not distinctly narrower (FWHM ${m.w.toPrecision(3)} > ${haloRatio.toPrecision(2)} × ${halos[onHalo].fwhm.toPrecision(3)})` });
        return;
      }
      peaks.push(describe(ctx, m, f, gi, onHalo >= 0 ? onHalo : null));
    });
  });
  peaks.sort((p, q) => q.dNm - p.dNm);
  const test: DetectionTest = {
    zCritical: ctx.zCrit,
    falseAlarmRate: options.falseAlarmRate ?? 0.01,
    resolutionElements: Math.max(1, Math.round(n / 3)),
    maxPeakFwhm: ctx.maxFwhm,
    haloWidthRatio: haloRatio,
    statement: `a peak's fitted area stands at least ${ctx.zCrit.toFixed(2)} standard uncertainties above zero (false-alarm probability ${((options.falseAlarmRate ?? 0.01) * 100).toPrecision(2)} % per pattern, Bonferroni over ${Math.max(1, Math.round(n / 3))} positions), its FWHM is at most ${Number(ctx.maxFwhm.toPrecision(3))}${pattern.axis === 'twoTheta' ? '°' : ' nm⁻¹'} and, on a halo, at most ${Number(haloRatio.toPrecision(2))} of the halo's FWHM`,
  };
  if (useKa2) notes.push(`Kα2 fitted as a doublet: same shape, area ratio ${ctx.ratio}`);
  if (halos.length) notes.push(`${halos.length} broad halo(s) in the background (amorphous scattering): ${halos.map((h) => `at ${h.position.toPrecision(4)}, FWHM ${h.fwhm.toPrecision(3)}`).join('; ')}; not peaks`);
  return { background, smoothed, model, peaks, halos, noiseGain: ctx.noise.gain, test, rejected, notes };
}

/**
 * A line on the high-angle tail of an (hk) band (a clay's basal order beside its band, as 003 beside
 * the 02,11 band of a smectite). Fitted alone, such a pair reads as one broad symmetric line, or as two
 * bands: the band's tail, left to the background, makes the line look asymmetric. Each strong broad
 * member is described again together with the members on its tail: as a band followed by symmetric
 * lines (the neighbours' own asymmetry withdrawn), or, with no neighbour, as a band plus one new line
 * (started on a grid of positions along the tail). The likelihood-ratio test (Δχ², scaled by the
 * reduced χ²) decides: a description with fewer parameters stands unless the other is better at 0.1 %;
 * a new line is a detection and must pass the pattern's own false-alarm level (the peak test's critical
 * z, Bonferroni over positions) as a χ² quantile for the added parameters (Wilson–Hilferty). The band
 * must be significant and asymmetric (ρ ≥ 2, not at its bound); each line at least 2 standard
 * uncertainties above zero (its area trades with the band's, so the joint test, not its own z, is its
 * evidence), narrower than the band, above it in angle and at no bound. Members are changed in place;
 * a new line joins its band's group.
 * @returns the groups whose members changed
 * Reference: band shape, Warren, Phys. Rev. 59, 693 (1941); test, Wilks, Ann. Math. Stat. 9, 60 (1938);
 * χ² quantile, Wilson & Hilferty, Proc. Natl Acad. Sci. 17, 684 (1931).
 */
function bandTailLines(ctx: Context, fits: GroupFit[], wide: Float64Array, y: Float64Array, profileOf: (m: FitMember) => Float64Array): Set<GroupFit> {
  const changed = new Set<GroupFit>();
  const { x, n } = ctx;
  const params = (ms: Member[]) => ms.reduce((s2, q) => s2 + freeParameters(q), 0);
  const asStart = (q: Member): Member => ({ c: q.c, a: q.a, w: q.w, eta: q.eta, rho: q.rho, split: q.split, given: q.given });
  const sig = (q: FitMember) => q.a / Math.max(q.sa, 1e-300) >= ctx.zCrit;
  const eligible = (q: FitMember) => !q.given && !q.fixed && q.sa > 0 && sig(q) && q.w >= 0.1 * ctx.maxFwhm && q.w >= 4 * ctx.step;
  const done = new Set<FitMember>();
  for (const f of fits) {
    for (const m of [...f.members]) {
      if (done.has(m) || !eligible(m)) continue;
      const all = fits.flatMap((g) => g.members);
      const nb = all.filter((q) => q !== m && !q.given && q.c > m.c && q.c <= m.c + 4 * m.w);
      // the counts with every other member taken away
      const data = Float64Array.from(y);
      for (const q of all) {
        if (q === m || nb.includes(q)) continue;
        const pr = profileOf(q);
        for (let i = 0; i < n; i++) data[i] -= pr[i];
      }
      const c2 = ctx.ka2Of(m.c);
      const window: [number, number] = [m.c - 3 * m.w, (Number.isNaN(c2) ? m.c : c2) + 12 * m.w];
      const nowStart = [m, ...nb].map(asStart);
      const now = fitGroup(ctx, nowStart, wide, { y: data, window });
      if (!now) continue;
      const band: Member = { ...asStart(m), a: m.a * (m.split ? 1 : 1.5), rho: m.split ? m.rho : 3, split: true };
      const trials: Member[][] = [];
      if (nb.length > 0) {
        if (!nb.some((q) => q.split) && m.split) continue; // already a band with lines on its tail
        trials.push([band, ...nb.map((q) => ({ ...asStart(q), rho: 1, split: false }))]);
      } else {
        for (const back of [0, 0.3]) for (const ahead of [0.15, 0.35, 0.6, 0.9, 1.3]) {
          const lw = 0.45 * m.w;
          trials.push([{ ...band, c: m.c - back * m.w }, { c: m.c + ahead * m.w, a: 0.3 * m.a, w: lw, eta: m.eta, rho: 1, split: false, given: false }]);
        }
      }
      let best: GroupFit | null = null;
      for (const t of trials) {
        const r = fitGroup(ctx, t, wide, { y: data, window });
        if (!r) continue;
        const [b, ...lines] = r.members;
        const ok = b.rho >= 2 && !b.atBound.includes('asymmetry') && sig(b) && lines.every((l) => l.a >= 2 * l.sa && l.w < b.w && l.c > b.c && l.atBound.length === 0);
        if (ok && (!best || r.chi2 < best.chi2)) best = r;
      }
      if (!best) continue;
      const dp = params(best.members) - params(nowStart);
      const gain = (now.chi2 - best.chi2) / Math.max(1, best.reducedChi2);
      // a new line is a detection: its Δχ² must pass the pattern's false-alarm level (the peak
      // test's, Bonferroni over positions) for dp degrees of freedom; fewer parameters: the simpler
      // stands unless 0.1 % says no
      const accept = dp > 0 ? gain > Math.max(CHI2_999[Math.min(dp, 6)], chiSquareUpperQuantile(ctx.alphaPerPosition, dp)) : dp < 0 ? gain > -CHI2_999[Math.min(-dp, 6)] : gain > 0;
      if (!accept) continue;
      const [b, ...lines] = best.members;
      Object.assign(m, b, { split: true });
      done.add(m);
      changed.add(f);
      lines.forEach((l, i) => {
        if (i < nb.length) {
          Object.assign(nb[i], l, { split: false, rho: 1 });
          done.add(nb[i]);
          const g = fits.find((h) => h.members.includes(nb[i]));
          if (g) changed.add(g);
        } else {
          f.members.push(l);
          done.add(l);
        }
      });
    }
  }
  return changed;
}

/** A fitted member in every unit, with the fit uncertainties. */
function describe(ctx: Context, m: FitMember, f: GroupFit, group: number, onHalo: number | null): FittedPeak {
  const { pattern } = ctx;
  const lambda = pattern.wavelengthNm;
  const c = m.c;
  const sc = m.sc;
  const w = m.w;
  const sw = m.sw;
  // height of the Kα1 component: at the maximum, both halves meet; area × (η·2/(πw') + (1−η)·2√(ln2/π)/w')·(2w'/(wl+wr))
  const kl = 2 / Math.PI;
  const kg = 2 * Math.sqrt(LN2 / Math.PI);
  const hgt = (m.a * (m.eta * kl + (1 - m.eta) * kg)) / w;
  const grad = [hgt / m.a, -hgt / w, (m.a * (kl - kg)) / w];
  const cv = [
    [m.sa * m.sa, m.covAW, m.covAE],
    [m.covAW, m.sw * m.sw, m.covWE],
    [m.covAE, m.covWE, m.se * m.se],
  ];
  let vh = 0;
  for (let u = 0; u < 3; u++) for (let v = 0; v < 3; v++) vh += grad[u] * grad[v] * cv[u][v];
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
    const fq = ((2 * Math.PI) / lambda!) * Math.cos(th) * (Math.PI / 180);
    fwhmInvNm = w * fq;
    fwhmUncInvNm = sw * fq;
  } else {
    dNm = (2 * Math.PI) / c;
    dUncNm = (dNm * sc) / c;
    fwhmInvNm = w;
    fwhmUncInvNm = sw;
    if (lambda && lambda / (2 * dNm) < 1) {
      const th = Math.asin(lambda / (2 * dNm));
      twoThetaDeg = (360 / Math.PI) * th;
      const fq = ((2 * Math.PI) / lambda) * Math.cos(th) * (Math.PI / 180);
      twoThetaUncDeg = (sc / ((4 * Math.PI) / lambda) / Math.cos(th)) * (360 / Math.PI);
      fwhmDeg = w / fq;
      fwhmUncDeg = sw / fq;
    } else {
      twoThetaDeg = null;
      twoThetaUncDeg = null;
      fwhmDeg = null;
      fwhmUncDeg = null;
    }
  }
  const qInvNm = (2 * Math.PI) / dNm;
  return {
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
    area: m.a,
    areaUnc: m.sa,
    intensity: hgt,
    intensityUnc: Math.sqrt(Math.max(0, vh)),
    eta: m.eta,
    etaUnc: m.se,
    fwhmEtaCorrelation: m.sw > 0 && m.se > 0 ? Math.max(-1, Math.min(1, m.covWE / (m.sw * m.se))) : 0,
    asymmetry: m.rho,
    kind: m.split && m.rho >= 2 ? 'band' : 'peak',
    significance: m.sa > 0 ? m.a / m.sa : Infinity,
    ka2: ctx.useKa2 && !Number.isNaN(ctx.ka2Of(c)),
    group,
    reducedChi2: f.reducedChi2,
    atBound: m.atBound,
    onHalo,
    given: m.given,
  };
}
