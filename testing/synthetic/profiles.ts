/**
 * Fringe profiles: the intensity across one period of a lattice fringe or lamella, as a short
 * Fourier series, so the harmonics a profile carries are known exactly and can be cut at the
 * sampling limit (test-only code).
 */

/** The shapes of profile the generators use. */
export type ProfileKind = 'sine' | 'mild' | 'dark-lines' | 'doublet' | 'sawtooth';

/**
 * p(φ) = Σₘ Re(cₘ e^(2πimφ)), m = 1…M, φ in periods. Zero mean; normalised to a peak-to-peak of 2
 * (a plain cosine runs −1…1), so a set's contrast is half its peak-to-peak relative modulation.
 */
export interface FringeProfile {
  kind: ProfileKind;
  /** Real parts of c₁…c_M. */
  re: number[];
  /** Imaginary parts of c₁…c_M. */
  im: number[];
}

/** Most harmonics any profile keeps. */
export const MAX_HARMONICS = 12;

/**
 * Peak-to-peak of a coefficient set, sampled at 2048 phases.
 * @param re real parts; @param im imaginary parts
 * @returns max − min of p over one period
 */
function peakToPeak(re: number[], im: number[]): number {
  let lo = Infinity;
  let hi = -Infinity;
  for (let s = 0; s < 2048; s++) {
    const v = evaluate(re, im, s / 2048);
    if (v < lo) lo = v;
    if (v > hi) hi = v;
  }
  return hi - lo;
}

/** Σ Re(cₘ e^(2πimφ)). */
function evaluate(re: number[], im: number[], phi: number): number {
  let v = 0;
  for (let m = 1; m <= re.length; m++) {
    const a = 2 * Math.PI * m * phi;
    v += re[m - 1] * Math.cos(a) - im[m - 1] * Math.sin(a);
  }
  return v;
}

/** Normalises a coefficient set to peak-to-peak 2. */
function normalised(kind: ProfileKind, re: number[], im: number[]): FringeProfile {
  const pp = peakToPeak(re, im);
  if (!(pp > 0)) throw new RangeError(`a ${kind} profile with these parameters is flat`);
  return { kind, re: re.map((v) => (2 * v) / pp), im: im.map((v) => (2 * v) / pp) };
}

/**
 * Coefficients of a comb of Gaussian lines, one comb per period.
 * @param lines position (periods), depth (> 0: dark) and width σ (periods) of each line
 * @returns cₘ = −Σ depth e^(−2π²m²σ²) e^(−2πim·pos), m = 1…MAX_HARMONICS
 * Notes: the Fourier series of a periodic Gaussian (common practice).
 */
function lineComb(lines: { pos: number; depth: number; widthPeriods: number }[]): { re: number[]; im: number[] } {
  const re: number[] = [];
  const im: number[] = [];
  for (let m = 1; m <= MAX_HARMONICS; m++) {
    let a = 0;
    let b = 0;
    for (const l of lines) {
      const g = -l.depth * Math.exp(-2 * Math.PI * Math.PI * m * m * l.widthPeriods * l.widthPeriods);
      a += g * Math.cos(2 * Math.PI * m * l.pos);
      b -= g * Math.sin(2 * Math.PI * m * l.pos);
    }
    re.push(a);
    im.push(b);
  }
  return { re, im };
}

/** A plain cosine: one harmonic. */
export function sineProfile(): FringeProfile {
  return normalised('sine', [1], [0]);
}

/**
 * A cosine with a weaker second harmonic.
 * @param secondRatio |c₂|/|c₁| (0…1); @param secondPhaseRad phase of c₂
 * @returns the normalised profile
 */
export function mildProfile(secondRatio: number, secondPhaseRad: number): FringeProfile {
  return normalised('mild', [1, secondRatio * Math.cos(secondPhaseRad)], [0, secondRatio * Math.sin(secondPhaseRad)]);
}

/**
 * Narrow dark lines on a bright ground (one per period): strong harmonics.
 * @param widthPeriods Gaussian σ of a line as a fraction of the period (e.g. 0.04–0.2)
 * @returns the normalised profile (c₂/c₁ = e^(−6π²σ²), c₃/c₁ = e^(−16π²σ²))
 */
export function darkLinesProfile(widthPeriods: number): FringeProfile {
  if (!(widthPeriods > 0)) throw new RangeError(`widthPeriods must be positive, got ${widthPeriods}`);
  const { re, im } = lineComb([{ pos: 0, depth: 1, widthPeriods }]);
  return normalised('dark-lines', re, im);
}

/**
 * Two dark lines per period of different depth (two similar layers per repeat): the second
 * harmonic can exceed the fundamental, which must still be the one reported as the period.
 * @param widthPeriods line σ (periods); @param depthRatio depth of the second line over the first (0…1)
 * @param shiftPeriods shift of the second line from half a period
 * @returns the normalised profile
 */
export function doubletProfile(widthPeriods: number, depthRatio: number, shiftPeriods: number): FringeProfile {
  const { re, im } = lineComb([
    { pos: 0, depth: 1, widthPeriods },
    { pos: 0.5 + shiftPeriods, depth: depthRatio, widthPeriods },
  ]);
  return normalised('doublet', re, im);
}

/**
 * A softened sawtooth (asymmetric layers): cₘ ∝ −i/m · e^(−2π²m²σ²).
 * @param softPeriods softening σ (periods)
 * @returns the normalised profile
 */
export function sawtoothProfile(softPeriods: number): FringeProfile {
  const re: number[] = [];
  const im: number[] = [];
  for (let m = 1; m <= MAX_HARMONICS; m++) {
    re.push(0);
    im.push((-1 / m) * Math.exp(-2 * Math.PI * Math.PI * m * m * softPeriods * softPeriods));
  }
  return normalised('sawtooth', re, im);
}

/**
 * The profile with every harmonic at or beyond the sampling limit removed (m/d ≥ 0.5 cycles/px,
 * the information limit of the stand-in transfer), renormalised to peak-to-peak 2.
 * @param p the profile; @param periodPx the period it will be drawn at
 * @returns a profile whose highest harmonic is below the Nyquist frequency along any direction
 */
export function bandLimited(p: FringeProfile, periodPx: number): FringeProfile {
  if (!(periodPx > 2)) throw new RangeError(`periodPx must exceed 2 (the Nyquist limit), got ${periodPx}`);
  const keep = Math.max(1, Math.min(p.re.length, Math.ceil(periodPx / 2) - 1));
  return normalised(p.kind, p.re.slice(0, keep), p.im.slice(0, keep));
}

/**
 * Modulus of harmonic m relative to the peak-to-peak/2 scale.
 * @param p the profile; @param m harmonic (1 = fundamental)
 * @returns |cₘ| (0 when absent)
 */
export function harmonicAmplitude(p: FringeProfile, m: number): number {
  return m >= 1 && m <= p.re.length ? Math.hypot(p.re[m - 1], p.im[m - 1]) : 0;
}

/** Samples per period of a profile table. */
const TABLE = 2048;

/**
 * The profile tabulated over one period, for fast drawing.
 * @param p the profile
 * @returns TABLE + 1 samples at φ = k/TABLE (the last repeats the first)
 */
export function profileTable(p: FringeProfile): Float64Array {
  const t = new Float64Array(TABLE + 1);
  for (let k = 0; k <= TABLE; k++) t[k] = evaluate(p.re, p.im, k / TABLE);
  return t;
}

/**
 * Linear interpolation in a profile table.
 * @param table from {@link profileTable}; @param phi phase in periods (any real)
 * @returns p(φ) (error below 1e-5 of the peak-to-peak for band-limited profiles)
 */
export function lookupProfile(table: Float64Array, phi: number): number {
  const f = (phi - Math.floor(phi)) * TABLE;
  const i = Math.min(TABLE - 1, Math.floor(f));
  const t = f - i;
  return table[i] + (table[i + 1] - table[i]) * t;
}
