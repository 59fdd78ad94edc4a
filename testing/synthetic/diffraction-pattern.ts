/**
 * Seeded synthetic powder patterns with known truth, for tests and benchmarks.
 */
import { ka2Position, KA2_RATIO } from '../../src/diffraction/bragg';
import type { Pattern } from '../../src/diffraction/pattern';
import { pseudoVoigt } from '../../src/diffraction/peaks';
import { rng } from '../random';

/** A reflection to draw. */
export interface SyntheticPeak {
  /** Kα1 position in degrees 2θ. */
  twoThetaDeg: number;
  /** Integrated Kα1 area (counts × degrees). */
  area: number;
  /** FWHM in degrees 2θ. */
  fwhmDeg: number;
  /** Lorentzian fraction η. */
  eta: number;
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
  /** Background: a + b·exp(−2θ/c) + slope·2θ (default a = 200, b = 2000, c = 4, slope = 0). */
  background?: { a: number; b: number; c: number; slope?: number };
  /** Seed of the Poisson noise; null for noise-free (default 1). */
  seed?: number | null;
}

/** The seeded uniform generator on [0, 1) used for synthetic patterns (mulberry32, src/synthetic/random.ts). */
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
 * Draws a powder pattern: pseudo-Voigt reflections (with their Kα2 companions at 0.5 × area)
 * on a smooth background, with seeded Poisson counting noise.
 * @param peaks reflections (Kα1)
 * @param options range, step, radiation, background and seed
 * @returns a Pattern with the wavelength set
 * Reference: synthetic data with known truth (common practice for testing profile fits).
 */
export function syntheticPattern(peaks: SyntheticPeak[], options: SyntheticOptions = {}): Pattern {
  const [x0, x1] = options.rangeDeg ?? [2, 60];
  const step = options.stepDeg ?? 0.02;
  if (!(step > 0) || !(x1 > x0)) throw new RangeError(`bad range ${x0}–${x1} or step ${step}`);
  const lambda = options.wavelengthNm ?? 0.154059292;
  const ka2 = options.ka2Nm === undefined ? 0.15444274 : options.ka2Nm;
  const bg = options.background ?? { a: 200, b: 2000, c: 4 };
  const seed = options.seed === undefined ? 1 : options.seed;
  const rnd = seed === null ? null : seededRandom(seed);
  const n = Math.floor((x1 - x0) / step + 1e-9) + 1;
  const x = new Float64Array(n);
  const y = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const t = x0 + i * step;
    x[i] = t;
    let v = bg.a + bg.b * Math.exp(-t / bg.c) + (bg.slope ?? 0) * t;
    for (const p of peaks) {
      v += p.area * pseudoVoigt(t - p.twoThetaDeg, p.fwhmDeg, p.eta);
      if (ka2) {
        const c2 = ka2Position(p.twoThetaDeg, lambda, ka2);
        if (!Number.isNaN(c2)) v += KA2_RATIO * p.area * pseudoVoigt(t - c2, p.fwhmDeg, p.eta);
      }
    }
    y[i] = rnd ? poisson(v, rnd) : v;
  }
  return { axis: 'twoTheta', x, y, sigma: null, wavelengthNm: lambda, ka2Nm: ka2, wavelengthFrom: 'option', notes: [] };
}
