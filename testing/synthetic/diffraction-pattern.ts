/**
 * Seeded synthetic powder patterns with known truth, for tests and benchmarks: pseudo-Voigt
 * reflections with their Kα2 companions, asymmetric two-dimensional (hk) bands of turbostratic
 * layers, the lines multiplied across their profiles by the Lorentz–polarisation factor of the
 * geometry, broad amorphous halos, a zero shift, and Poisson counting noise.
 */
import { dToTwoTheta, ka2Position, KA2_RATIO } from '../../src/diffraction/bragg';
import type { Pattern } from '../../src/diffraction/pattern';
import { DEFAULT_LP_GEOMETRY, lpFactor, lpGeometry, type LpGeometry } from '../../src/diffraction/lorentz-polarisation';
import { pseudoVoigt } from '../../src/diffraction/peaks';
import { voigtToPseudoVoigt } from '../../src/diffraction/voigt';
import { rng } from '../random';

/** A reflection to draw. */
export interface SyntheticPeak {
  /** Kα1 position in degrees 2θ (before the zero shift). */
  twoThetaDeg: number;
  /** Integrated Kα1 area (counts × degrees). */
  area: number;
  /** FWHM in degrees 2θ (for a band: ignored). */
  fwhmDeg: number;
  /** Lorentzian fraction η. */
  eta: number;
  /** 'band': a two-dimensional (hk) band of turbostratic layers (Warren profile) starting at twoThetaDeg. Default 'peak'. */
  kind?: 'peak' | 'band';
  /** For a band: the layers' lateral size La in nm (default 8). */
  bandLaNm?: number;
}

/** A broad amorphous halo (Gaussian in 2θ). */
export interface SyntheticHalo {
  centerDeg: number;
  fwhmDeg: number;
  /** Height in counts. */
  height: number;
}

/** Options of syntheticPattern. */
export interface SyntheticOptions {
  /** 2θ range in degrees [start, end] (default [2, 60]). */
  rangeDeg?: [number, number];
  /** Step in degrees (default 0.02). */
  stepDeg?: number;
  /** Kα1 wavelength in nm (default Cu Kα1, ITC C Table 4.2.2.6). */
  wavelengthNm?: number;
  /** Kα2 wavelength in nm, or null for a single line (default Cu Kα2, Hölzer et al. 1997). */
  ka2Nm?: number | null;
  /** Kα2 : Kα1 ratio (default 0.5). */
  ka2Ratio?: number;
  /** Background: a + b·exp(−2θ/c) + slope·2θ (default a = 200, b = 2000, c = 4, slope = 0). */
  background?: { a: number; b: number; c: number; slope?: number };
  /** Amorphous halos added to the background. */
  halos?: SyntheticHalo[];
  /** Zero shift added to every position, degrees (default 0). */
  zeroShiftDeg?: number;
  /** Seed of the Poisson noise; null for noise-free (default 1). */
  seed?: number | null;
  /**
   * The Lorentz–polarisation factor drawn across each line (not a band): a line of area A centred at
   * 2θ₀ is A·shape(2θ − 2θ₀)·LP(2θ)/LP(2θ₀), LP at the true angle (before the zero shift); halos and
   * the background are drawn as given (default: random powder, Bragg–Brentano, no monochromator).
   */
  lp?: LpGeometry;
}

/** The seeded uniform generator on [0, 1) used for synthetic patterns (mulberry32, testing/random.ts). */
export const seededRandom = rng;

/** Poisson deviate: Knuth's product method below 30, normal approximation above. */
function poisson(mean: number, rnd: () => number): number {
  if (mean < 30) {
    const l = Math.exp(-mean);
    let k = 0;
    let p = 1;
    do {
      k++;
      p *= rnd();
    } while (p > l);
    return k - 1;
  }
  const u = Math.max(rnd(), 1e-300);
  const v = rnd();
  return Math.max(0, Math.round(mean + Math.sqrt(mean) * Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * v)));
}

/**
 * The Warren line shape of a two-dimensional (hk) reflection of randomly stacked layers,
 * P(a) = ∫₀^∞ exp(−(x² − a)²) dx with a = (2√π La/λ)(sin θ − sin θ₀): a sharp rise at θ₀ and a
 * long tail to high angle. Normalised numerically by the caller.
 * Reference: Warren, Phys. Rev. 59, 693 (1941).
 */
function warren(a: number): number {
  const top = Math.sqrt(Math.max(0, a)) + 4;
  const n = 200;
  const h = top / n;
  let s = 0;
  for (let k = 0; k <= n; k++) {
    const x = k * h;
    const v = Math.exp(-((x * x - a) ** 2));
    s += (k === 0 || k === n ? 0.5 : 1) * v;
  }
  return s * h;
}

/**
 * Draws a powder pattern: pseudo-Voigt reflections (with their Kα2 companions), each multiplied
 * across its profile by the LP factor, Warren (hk) bands, halos and a smooth background, with
 * seeded Poisson counting noise.
 * @param peaks reflections (Kα1)
 * @param options range, step, radiation, background, halos, zero shift, LP geometry and seed
 * @returns a Pattern with the wavelength set (a doublet when ka2Nm is given)
 * Reference: synthetic data with known truth (common practice for testing profile fits).
 */
export function syntheticPattern(peaks: SyntheticPeak[], options: SyntheticOptions = {}): Pattern {
  const [x0, x1] = options.rangeDeg ?? [2, 60];
  const step = options.stepDeg ?? 0.02;
  if (!(step > 0) || !(x1 > x0)) throw new RangeError(`bad range ${x0}–${x1} or step ${step}`);
  const lambda = options.wavelengthNm ?? 0.154059292;
  const ka2 = options.ka2Nm === undefined ? 0.15444274 : options.ka2Nm;
  const ratio = options.ka2Ratio ?? KA2_RATIO;
  const bg = options.background ?? { a: 200, b: 2000, c: 4 };
  const zero = options.zeroShiftDeg ?? 0;
  const lp = lpGeometry(options.lp ?? DEFAULT_LP_GEOMETRY);
  const seed = options.seed === undefined ? 1 : options.seed;
  const rnd = seed === null ? null : seededRandom(seed);
  const n = Math.floor((x1 - x0) / step + 1e-9) + 1;
  const x = new Float64Array(n);
  const y = new Float64Array(n);
  for (let i = 0; i < n; i++) x[i] = x0 + i * step;
  for (let i = 0; i < n; i++) {
    const t = x[i];
    let v = bg.a + bg.b * Math.exp(-t / bg.c) + (bg.slope ?? 0) * t;
    for (const h of options.halos ?? []) v += h.height * Math.exp((-4 * Math.LN2 * (t - h.centerDeg) ** 2) / h.fwhmDeg ** 2);
    y[i] = v;
  }
  // the LP factor at each point's true angle (the zero shift moves the scale, not the physics)
  const lpAt = Float64Array.from(x, (t) => lpFactor(t - zero, lp));
  for (const p of peaks) {
    const own: Array<{ at: number; scale: number }> = [{ at: p.twoThetaDeg, scale: 1 }];
    if (ka2) {
      const c2 = ka2Position(p.twoThetaDeg, lambda, ka2);
      if (!Number.isNaN(c2)) own.push({ at: c2, scale: ratio });
    }
    for (const l of own) {
      const lam = l.scale === 1 ? lambda : ka2!;
      if (p.kind === 'band') {
        // Warren band: sample the shape, normalise to unit area over the pattern, scale (drawn without
        // the LP factor, as before: a two-dimensional reflection's angle factor differs from a line's
        // and is not drawn)
        const la = p.bandLaNm ?? 8;
        const s0 = Math.sin((l.at * Math.PI) / 360);
        const shape = new Float64Array(n);
        let sum = 0;
        for (let i = 0; i < n; i++) {
          const a = ((2 * Math.sqrt(Math.PI) * la) / lam) * (Math.sin(((x[i] - zero) * Math.PI) / 360) - s0);
          shape[i] = a < -6 ? 0 : warren(a);
          sum += shape[i] * step;
        }
        if (sum > 0) for (let i = 0; i < n; i++) y[i] += (l.scale * p.area * shape[i]) / sum;
      } else {
        const lp0 = lpFactor(l.at, lp);
        for (let i = 0; i < n; i++) y[i] += (l.scale * p.area * pseudoVoigt(x[i] - l.at - zero, p.fwhmDeg, p.eta) * lpAt[i]) / lp0;
      }
    }
  }
  if (rnd) for (let i = 0; i < n; i++) y[i] = poisson(y[i], rnd);
  return {
    axis: 'twoTheta',
    x,
    y,
    sigma: null,
    wavelengthNm: lambda,
    ka2Nm: ka2,
    wavelengthFrom: 'option',
    radiation: null,
    notes: [],
  };
}

/** An instrument's width functions: Gaussian FWHM² = U tan²θ + V tan θ + W, Lorentzian FWHM = X tan θ + Y / cos θ (degrees 2θ). */
export interface SyntheticInstrument {
  u: number;
  v: number;
  w: number;
  x: number;
  y: number;
}

/** A typical laboratory Bragg–Brentano instrument (about 0.06–0.1° FWHM; common practice). */
export const LAB_INSTRUMENT: SyntheticInstrument = { u: 0.004, v: -0.002, w: 0.0025, x: 0.02, y: 0.01 };

/**
 * FWHM and η of a reflection broadened by the instrument and by crystallites of size D
 * (Lorentzian, Scherrer: β = Kλ/(D cos θ)), combined as a Voigt.
 * @param twoThetaDeg position
 * @param sizeNm crystallite size in nm (Infinity: instrument only)
 * @param wavelengthNm wavelength
 * @param instrument width functions (default LAB_INSTRUMENT)
 * @param k Scherrer constant (default 0.9)
 * @returns fwhmDeg and eta
 * Reference: Scherrer (1918); Caglioti et al. (1958); Thompson, Cox & Hastings (1987).
 */
export function reflectionWidth(twoThetaDeg: number, sizeNm: number, wavelengthNm: number, instrument: SyntheticInstrument = LAB_INSTRUMENT, k = 0.9): { fwhmDeg: number; eta: number } {
  const th = (twoThetaDeg * Math.PI) / 360;
  const t = Math.tan(th);
  const gG = Math.sqrt(Math.max(1e-8, instrument.u * t * t + instrument.v * t + instrument.w));
  const gLi = instrument.x * t + instrument.y / Math.cos(th);
  const gLs = Number.isFinite(sizeNm) ? ((k * wavelengthNm) / (sizeNm * Math.cos(th)) * 180) / Math.PI : 0;
  const pv = voigtToPseudoVoigt(gG, gLi + gLs);
  return { fwhmDeg: pv.fwhm, eta: pv.eta };
}

/** 2θ of d at a wavelength (re-exported for the generators' callers). */
export const twoThetaOf = dToTwoTheta;

/**
 * A crowded stretch for the overlap-group tests: `count` lines (Kα1 only) a fixed spacing apart,
 * each overlapping its neighbours, areas drawn between 0.6 and 1.4 × `area`, and one weak line
 * (`weakFraction` × `area`) placed between two of them, at a seeded place away from the ends.
 * @param options start, count, spacing, width, η, area, weak fraction and seed
 * @returns the lines (sorted by position) and the weak line's position
 * Reference: synthetic data with known truth (common practice for testing profile fits).
 */
export function crowdedStretch(options: { startDeg?: number; count?: number; spacingDeg?: number; fwhmDeg?: number; eta?: number; area?: number; weakFraction?: number; seed?: number } = {}): { peaks: SyntheticPeak[]; weakDeg: number } {
  const start = options.startDeg ?? 30;
  const count = options.count ?? 12;
  const spacing = options.spacingDeg ?? 0.4;
  const fwhm = options.fwhmDeg ?? 0.12;
  const eta = options.eta ?? 0.4;
  const area = options.area ?? 60;
  const weak = options.weakFraction ?? 0.3;
  if (!(count >= 3) || !(spacing > 0) || !(fwhm > 0) || !(area > 0) || !(weak > 0)) throw new RangeError(`bad crowded stretch: count ${count}, spacing ${spacing}, FWHM ${fwhm}, area ${area}, weak fraction ${weak}`);
  const rnd = seededRandom(options.seed ?? 1);
  const peaks: SyntheticPeak[] = [];
  for (let k = 0; k < count; k++) peaks.push({ twoThetaDeg: start + k * spacing, area: area * (0.6 + 0.8 * rnd()), fwhmDeg: fwhm, eta });
  const at = 1 + Math.floor(rnd() * (count - 2));
  const weakDeg = start + (at + 0.5) * spacing;
  peaks.push({ twoThetaDeg: weakDeg, area: weak * area, fwhmDeg: fwhm, eta });
  peaks.sort((a, b) => a.twoThetaDeg - b.twoThetaDeg);
  return { peaks, weakDeg };
}
