/**
 * Nanosheet thickness and layer counts along a line profile drawn across a stack of layers.
 *
 * The profile is band-passed around the layer frequency with a zero-phase Gaussian filter that
 * keeps only positive frequencies, which yields the analytic signal directly: its real part is
 * the band-passed profile (layers at its extrema), its modulus the envelope of the periodic
 * signal (sheets where it is high).
 */
import { nextPow2, padReflect, sheetFft } from './signal';
import { chiSquareUpperQuantile } from '../measure/stats';

/** Options for `sheetsAlongProfile`. */
export interface SheetProfileOptions {
  /** Expected layer period in samples; default: estimated from the profile's periodogram. */
  periodPx?: number;
  /** Shortest period searched when estimating (samples, default 2.5). */
  minPeriodPx?: number;
  /** Longest period searched when estimating (samples, default length / 3). */
  maxPeriodPx?: number;
  /** Standard deviation of the Gaussian band-pass as a fraction of the layer frequency (default 0.3). */
  relBandwidth?: number;
  /** Layers are 'dark' fringes (minima, bright-field TEM; default) or 'bright' ones (maxima). */
  polarity?: 'dark' | 'bright';
  /** A periodic run must peak above this many times the noise envelope rms (default 3); it extends while the envelope stays above 2/3 of that level. */
  snrThreshold?: number;
  /** ... and above this fraction of the profile's largest envelope (half of it to extend; default 0.2). */
  relThreshold?: number;
  /** A run is split at an envelope dip below this fraction of the smaller neighbouring peak (default 0.6) and more than 3 noise rms below it. */
  splitRatio?: number;
  /** A spacing outside period × (1 ± this) breaks a sheet (default 0.3). */
  spacingTolerance?: number;
  /** Sheets with fewer layers are dropped (default 2; 1 keeps single fringes). */
  minLayers?: number;
  /** Sample spacing in nm for the nm fields (null or absent: nm fields are null). */
  nmPerSample?: number | null;
  /**
   * Least background, in independent envelope samples (about 1.3 periods each), that may lower
   * the noise estimate towards the white level (default 2.5). A shorter quiet stretch on a line
   * drawn anywhere is as likely a lull in coloured noise as a gap between sheets; where the
   * profile is known to cross a layered region (the automatic search), 1 is enough.
   */
  minBackgroundSamples?: number;
}

/** One sheet found along a profile. Positions are in samples from the profile's start. */
export interface ProfileSheet {
  /** Number of layers (extrema of the band-passed profile inside the sheet). */
  layers: number;
  /** Sub-sample positions of the layer centres, ascending. */
  layerPositionsPx: number[];
  /** Mean layer period inside the sheet (least-squares slope of centre against index, over the inner layers when there are four or more; the profile period for one layer). */
  periodPx: number;
  /** Standard deviation of the individual spacings (0 with fewer than 3 layers). */
  spacingSdPx: number;
  /** Thickness = (last − first layer centre) + periodPx = layers × periodPx. */
  thicknessPx: number;
  /** Distance between the envelope's half-maximum crossings on either side. */
  edgeToEdgePx: number;
  /** The two half-maximum crossings. */
  edgesPx: [number, number];
  /** Centre of the sheet (midway between first and last layer). */
  centerPx: number;
  /** Peak envelope (grey units of the band-passed signal). */
  amplitude: number;
  /** The sheet touches an end of the profile, so it may continue beyond it. */
  truncated: boolean;
  /** thicknessPx, edgeToEdgePx and periodPx in nm (null without nmPerSample). */
  thicknessNm: number | null;
  edgeToEdgeNm: number | null;
  periodNm: number | null;
}

/** The result of `sheetsAlongProfile`. */
export interface ProfileSheetsResult {
  /** The layer period the band-pass was centred on (samples). */
  periodPx: number;
  /** Whether periodPx was given or estimated. */
  periodSource: 'given' | 'estimated';
  /** The band-passed profile (real part of the analytic signal). */
  filtered: Float64Array;
  /** The envelope (modulus of the analytic signal). */
  envelope: Float64Array;
  /** The envelope level a periodic run had to reach (the high hysteresis level). */
  threshold: number;
  /** Noise envelope rms (larger of a white-noise and a background estimate; see the notes of `sheetsAlongProfile`). */
  noiseRms: number;
  /** The sheets, in order along the profile. */
  sheets: ProfileSheet[];
  /** Edge-to-edge gaps between consecutive sheets (length sheets.length − 1), samples. */
  gapsPx: number[];
  /** The gaps in nm (null without nmPerSample). */
  gapsNm: number[] | null;
}

/**
 * Power spectrum of a profile on a fixed frequency grid, for summing over several profiles.
 *
 * Schuster periodogram of the high-passed (Gaussian, σ = highPassPx), Hann-windowed profile, zero-padded to `size` (common practice).
 *
 * @param values the profile (at least 8 samples, at most size)
 * @param size transform length, a power of two ≥ values.length
 * @param highPassPx σ of the Gaussian smoothing subtracted first, samples
 * @returns power at bins 0 … size/2 (bin k is frequency k/size cycles per sample)
 */
export function profilePeriodogram(values: ArrayLike<number>, size: number, highPassPx: number): Float64Array {
  const n = values.length;
  if (n < 8) throw new RangeError(`profile needs at least 8 samples, got ${n}`);
  if (!(size >= n && (size & (size - 1)) === 0)) throw new RangeError(`size must be a power of two ≥ ${n}, got ${size}`);
  if (!(highPassPx > 0)) throw new RangeError(`highPassPx must be > 0, got ${highPassPx}`);
  const sigma = highPassPx;
  const r = Math.ceil(3 * sigma);
  const re = new Float64Array(size);
  const im = new Float64Array(size);
  // the kernel's taps once (the same values the exponential gives at each offset)
  const taps = new Float64Array(r + 1);
  for (let d = 0; d <= r; d++) taps[d] = Math.exp(-0.5 * (d / sigma) ** 2);
  for (let i = 0; i < n; i++) {
    let s = 0;
    let w = 0;
    for (let k = Math.max(0, i - r); k <= Math.min(n - 1, i + r); k++) {
      const g = taps[k > i ? k - i : i - k];
      s += g * values[k];
      w += g;
    }
    re[i] = (values[i] - s / w) * (0.5 - 0.5 * Math.cos((2 * Math.PI * (i + 0.5)) / n));
  }
  sheetFft(re, im, -1);
  const power = new Float64Array(size / 2 + 1);
  for (let k = 0; k <= size / 2; k++) power[k] = re[k] * re[k] + im[k] * im[k];
  return power;
}

/**
 * Candidate periods of a power spectrum on a grid of `size` bins, best first.
 *
 * Local maxima above 0.2 % of the largest (which leaves out weak harmonics of sharp layer lines), ranked by power over the median of the two octaves around them ([f/2, 2f]); parabola on log power (common practice).
 *
 * @param power bins 0 … size/2 (from `profilePeriodogram`, possibly summed)
 * @param size the transform length
 * @param minPeriodPx shortest period (≥ 2)
 * @param maxPeriodPx longest period
 * @param count how many candidates at most (periods within 15 % of a better one are skipped)
 * @returns candidates with their period in samples and peak power over the two octaves' median
 */
export function periodCandidates(
  power: Float64Array,
  size: number,
  minPeriodPx: number,
  maxPeriodPx: number,
  count = 3,
): { periodPx: number; peakToMedian: number }[] {
  if (!(minPeriodPx >= 2)) throw new RangeError(`minPeriodPx must be ≥ 2, got ${minPeriodPx}`);
  if (!(maxPeriodPx > minPeriodPx)) throw new RangeError(`maxPeriodPx must exceed minPeriodPx (${minPeriodPx}), got ${maxPeriodPx}`);
  if (!(Number.isInteger(count) && count >= 1)) throw new RangeError(`count must be a positive integer, got ${count}`);
  const kLo = Math.max(1, Math.floor(size / maxPeriodPx));
  const kHi = Math.min(size / 2 - 2, Math.ceil(size / minPeriodPx));
  let maxPower = 0;
  for (let k = kLo; k <= kHi; k++) maxPower = Math.max(maxPower, power[k]);
  const found: { k: number; score: number; median: number }[] = [];
  // the two octaves' samples (at most 129 of them: the step is a 64th of the span), sorted as numbers
  const window = new Float64Array(256);
  for (let k = kLo; k <= kHi; k++) {
    if (!(power[k] >= power[k - 1] && power[k] >= power[k + 1]) || power[k] < 0.002 * maxPower) continue;
    const a = Math.max(1, Math.floor(k / 2));
    const b = Math.min(size / 2 - 1, Math.ceil(k * 2));
    let nw = 0;
    for (let j = a; j <= b; j += Math.max(1, Math.floor((b - a) / 64))) window[nw++] = power[j];
    const sorted = window.subarray(0, nw).sort();
    const med = sorted[nw >> 1] || 1e-300;
    found.push({ k, score: power[k] / med, median: med });
  }
  found.sort((p, q) => q.score - p.score);
  const out: { periodPx: number; peakToMedian: number }[] = [];
  for (const c of found) {
    let delta = 0;
    const k = c.k;
    if (k > 1 && k < size / 2 - 1) {
      const pm = Math.log(power[k - 1] + 1e-300);
      const p0 = Math.log(power[k] + 1e-300);
      const pp = Math.log(power[k + 1] + 1e-300);
      const den = pm - 2 * p0 + pp;
      if (den < 0) delta = Math.max(-0.5, Math.min(0.5, (0.5 * (pm - pp)) / den));
    }
    const periodPx = size / (k + delta);
    if (out.some((o) => Math.abs(o.periodPx - periodPx) < 0.15 * o.periodPx)) continue;
    out.push({ periodPx, peakToMedian: c.score });
    if (out.length >= count) break;
  }
  if (out.length === 0) out.push({ periodPx: size / Math.max(kLo, 1), peakToMedian: 0 });
  return out;
}

/** The best candidate of `periodCandidates` (see there). */
export function periodFromPeriodogram(
  power: Float64Array,
  size: number,
  minPeriodPx: number,
  maxPeriodPx: number,
): { periodPx: number; peakToMedian: number } {
  return periodCandidates(power, size, minPeriodPx, maxPeriodPx, 1)[0];
}

/**
 * Periodogram estimate of the dominant period of a profile.
 *
 * Schuster periodogram (high-passed, Hann window, zero-padded ×8) and two-octave contrast peak choice, see `periodFromPeriodogram` (common practice).
 *
 * @param values the profile
 * @param minPeriodPx shortest period searched (≥ 2)
 * @param maxPeriodPx longest period searched
 * @returns the period in samples and its peak power over the median power of the two octaves around it
 */
export function profilePeriod(
  values: ArrayLike<number>,
  minPeriodPx = 2.5,
  maxPeriodPx = values.length / 3,
): { periodPx: number; peakToMedian: number } {
  const n = values.length;
  if (n < 8) throw new RangeError(`profile needs at least 8 samples, got ${n}`);
  if (!(minPeriodPx >= 2)) throw new RangeError(`minPeriodPx must be ≥ 2, got ${minPeriodPx}`);
  if (!(maxPeriodPx > minPeriodPx)) throw new RangeError(`maxPeriodPx must exceed minPeriodPx (${minPeriodPx}), got ${maxPeriodPx}`);
  let size = 1;
  while (size < 8 * n) size <<= 1;
  const power = profilePeriodogram(values, size, Math.max(maxPeriodPx / 2, 2 * minPeriodPx));
  return periodFromPeriodogram(power, size, minPeriodPx, maxPeriodPx);
}

/**
 * Mean of exponentially distributed values, robust to a few large ones: the mean of the values
 * below the sample 90 % quantile, divided by E[X | X < q90] / E[X] = 1 − 0.1 ln 10 / 0.9 (for an
 * exponential distribution, closed form). About 1.4 times as precise as the median / ln 2.
 */
function trimmedExponentialMean(values: number[]): number {
  if (values.length === 0) return 0;
  const sorted = Float64Array.from(values).sort();
  const keep = Math.max(1, Math.floor(0.9 * sorted.length));
  let sum = 0;
  for (let i = 0; i < keep; i++) sum += sorted[i];
  return sum / keep / (1 - (0.1 * Math.LN10) / 0.9);
}

/** Σ w² of the Hann window on n samples (the noise power per bin of a windowed periodogram is σ² Σ w²). */
function hannPowerSum(n: number): number {
  let s = 0;
  for (let i = 0; i < n; i++) s += (0.5 - 0.5 * Math.cos((2 * Math.PI * (i + 0.5)) / n)) ** 2;
  return s;
}

/**
 * Bin powers of a profile's Hann-windowed periodogram (mean removed, zero-padded to a power of
 * two ≥ 2n) in three bands around the layer frequency f0: [0.45, 0.7] f0 and [1.45, 1.8] f0
 * next to the layer band, where coloured (amorphous) backgrounds have about the in-band level,
 * and the upper band from 2.3 f0 away from the harmonics (white noise). The profile itself is
 * transformed, not a reflect-padded copy: mirrored samples are not independent, and the power of
 * their bins is no longer exponentially distributed, so its median would understate the noise.
 */
function noiseBandPowers(values: ArrayLike<number>, periodPx: number): { lowBand: number[]; highBand: number[]; upperBand: number[]; binsPerIndependent: number } {
  const n = values.length;
  let mean = 0;
  for (let i = 0; i < n; i++) mean += values[i];
  mean /= n;
  const size = nextPow2(2 * n);
  const re = new Float64Array(size);
  const im = new Float64Array(size);
  for (let i = 0; i < n; i++) re[i] = (values[i] - mean) * (0.5 - 0.5 * Math.cos((2 * Math.PI * (i + 0.5)) / n));
  sheetFft(re, im, -1);
  const f0 = size / periodPx;
  const lowBand: number[] = [];
  const highBand: number[] = [];
  const upperBand: number[] = [];
  for (let k = Math.max(1, Math.floor(0.45 * f0)); k < size / 2; k++) {
    const h = k / f0;
    const p = re[k] * re[k] + im[k] * im[k];
    if (h >= 0.45 && h <= 0.7) lowBand.push(p);
    if (h >= 1.45 && h <= 1.8) highBand.push(p);
    if (h >= 2.3 && Math.abs(h - Math.round(h)) > 0.3) upperBand.push(p);
  }
  // zero-padding to size ≥ 2n and the Hann window (noise bandwidth 1.5 bins) correlate neighbours
  return { lowBand, highBand, upperBand, binsPerIndependent: (1.5 * size) / n };
}

/** Analytic signal of the Gaussian band-passed profile: returns real part and modulus, plus the noise envelope rms. */
function bandpassAnalytic(
  values: ArrayLike<number>,
  periodPx: number,
  relBandwidth: number,
): { filtered: Float64Array; quadrature: Float64Array; envelope: Float64Array; noiseRms: number; whiteRms: number; whiteDof: number; sideRms: number } {
  const n = values.length;
  const { re, offset } = padReflect(values, 3 * periodPx);
  const size = re.length;
  const im = new Float64Array(size);
  sheetFft(re, im, -1);
  const f0 = size / periodPx; // layer frequency in bins
  const sigma = relBandwidth * f0;
  const { lowBand, highBand, upperBand, binsPerIndependent } = noiseBandPowers(values, periodPx);
  let gainSq = 0;
  for (let k = 1; k < size / 2; k++) {
    const g = 2 * Math.exp(-0.5 * ((k - f0) / sigma) ** 2);
    re[k] *= g;
    im[k] *= g;
    gainSq += g * g;
  }
  re[0] = 0; im[0] = 0;
  for (let k = size / 2; k < size; k++) { re[k] = 0; im[k] = 0; }
  sheetFft(re, im, 1);
  const filtered = new Float64Array(n);
  const quadrature = new Float64Array(n);
  const envelope = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const a = re[i + offset] / size;
    const b = im[i + offset] / size;
    filtered[i] = a;
    quadrature[i] = b;
    envelope[i] = Math.hypot(a, b);
  }
  // Noise envelope rms, the larger of two estimates: (a) white noise from the upper spectrum
  // away from the harmonics; (b) the smaller of the side bands next to the layer band (coloured,
  // amorphous backgrounds have about the in-band level there) and of the envelope's 10 % quantile
  // (Rayleigh: q10 = 0.325 rms), which is low wherever a tenth of the profile is background.
  // A white-noise bin's power is exponential: median = ln 2 × mean (common practice).
  const medianOf = (v: number[]) => (v.length ? v.sort((x, y) => x - y)[v.length >> 1] : 0);
  // per-sample noise variance σ² = median / ln 2 of the bins' power over Σw²; the envelope's
  // variance is σ² Σ|g|² / size for the band-pass gain g on this transform's grid
  const fromBins = (perBinMedian: number) => Math.sqrt((perBinMedian / Math.LN2 / hannPowerSum(n)) * (gainSq / size));
  const white = fromBins(Math.LN2 * trimmedExponentialMean(upperBand));
  const side = fromBins(Math.max(medianOf(lowBand), medianOf(highBand)));
  const q10 = Float64Array.from(envelope).sort()[Math.floor(0.1 * (n - 1))] / Math.sqrt(-Math.log(0.9));
  const noiseRms = Math.max(white, Math.min(side, q10));
  return { filtered, quadrature, envelope, noiseRms, whiteRms: white, whiteDof: (2 * upperBand.length) / binsPerIndependent, sideRms: side };
}

/** Sub-sample position of the extremum at i by a three-point parabola. */
function parabolicPeak(y: Float64Array, i: number): number {
  const a = y[i - 1];
  const b = y[i];
  const c = y[i + 1];
  const den = a - 2 * b + c;
  if (den === 0) return i;
  return i + Math.max(-0.5, Math.min(0.5, (0.5 * (a - c)) / den));
}

/** Wraps an angle to (−π, π]. */
function wrapPi(a: number): number {
  return a - 2 * Math.PI * Math.round(a / (2 * Math.PI));
}

/**
 * Sub-sample position of the layer at extremum i from the phase of the analytic signal: where
 * the phase reaches targetRad (π for minima, 0 for maxima), at the local instantaneous
 * frequency. Unlike a parabola through three samples it stays unbiased near 2–3 samples per
 * period, where a cosine is far from a parabola (instantaneous phase, Boashash, Proc. IEEE 80, 520 (1992)).
 */
function phasePeak(re: Float64Array, im: Float64Array, i: number, targetRad: number): number {
  const phase = (k: number) => Math.atan2(im[k], re[k]);
  const omega = 0.5 * (wrapPi(phase(i + 1) - phase(i)) + wrapPi(phase(i) - phase(i - 1)));
  if (!(omega > 0.1)) return parabolicPeak(re, i);
  return i + Math.max(-0.75, Math.min(0.75, wrapPi(targetRad - phase(i)) / omega));
}

/** Linear interpolation of where y crosses level between indices i and i + 1. */
function crossing(y: Float64Array, i: number, level: number): number {
  const d = y[i + 1] - y[i];
  return d === 0 ? i + 0.5 : i + (level - y[i]) / d;
}

/**
 * Locates layers along a width-averaged profile drawn across a stack and groups them into sheets.
 *
 * Analytic signal (Gabor, J. IEE 93, 429 (1946)) of a Gaussian band-pass around the layer frequency; sheets where its envelope is high.
 *
 * @param values the profile (grey values at equal sample spacing, e.g. `lineProfile(...).mean`)
 * @param options period, band-pass width, polarity, thresholds, calibration
 * @returns the band-passed profile, envelope, layer positions grouped into sheets, and the gaps
 * Notes:
 * - Layers are the sub-sample extrema (three-point parabola) of the band-passed profile from the
 *   first to the last one whose envelope is at least half the sheet's peak envelope.
 * - A run of samples above threshold (noise-based and relative, with hysteresis) is split where the envelope dips
 *   below `splitRatio` of the smaller neighbouring peak, and where a spacing breaks the period.
 * - thicknessPx = (last − first layer centre) + the sheet's mean period (= layers × period);
 *   edgeToEdgePx = distance between the envelope's half-maximum crossings. For a uniform stack
 *   both approach layers × period; edge-to-edge is widened by the filter for one or two layers.
 */
export function sheetsAlongProfile(values: ArrayLike<number>, options: SheetProfileOptions = {}): ProfileSheetsResult {
  const n = values.length;
  if (n < 8) throw new RangeError(`profile needs at least 8 samples, got ${n}`);
  for (let i = 0; i < n; i++) {
    if (!Number.isFinite(values[i])) throw new RangeError(`values[${i}] must be finite, got ${values[i]}`);
  }
  const relBandwidth = options.relBandwidth ?? 0.3;
  const snrThreshold = options.snrThreshold ?? 3;
  const relThreshold = options.relThreshold ?? 0.2;
  const splitRatio = options.splitRatio ?? 0.6;
  const spacingTolerance = options.spacingTolerance ?? 0.3;
  const minLayers = options.minLayers ?? 2;
  const nm = options.nmPerSample ?? null;
  const minBackgroundSamples = options.minBackgroundSamples ?? 2.5;
  const polarity = options.polarity ?? 'dark';
  if (!(relBandwidth > 0 && relBandwidth <= 1)) throw new RangeError(`relBandwidth must be in (0, 1], got ${relBandwidth}`);
  if (!(snrThreshold >= 0)) throw new RangeError(`snrThreshold must be ≥ 0, got ${snrThreshold}`);
  if (!(relThreshold >= 0 && relThreshold < 1)) throw new RangeError(`relThreshold must be in [0, 1), got ${relThreshold}`);
  if (!(splitRatio > 0 && splitRatio <= 1)) throw new RangeError(`splitRatio must be in (0, 1], got ${splitRatio}`);
  if (!(spacingTolerance > 0 && spacingTolerance < 1)) throw new RangeError(`spacingTolerance must be in (0, 1), got ${spacingTolerance}`);
  if (!(Number.isInteger(minLayers) && minLayers >= 1)) throw new RangeError(`minLayers must be an integer ≥ 1, got ${minLayers}`);
  if (!(minBackgroundSamples >= 1 && Number.isFinite(minBackgroundSamples))) throw new RangeError(`minBackgroundSamples must be a number ≥ 1, got ${minBackgroundSamples}`);
  if (nm !== null && !(nm > 0 && Number.isFinite(nm))) throw new RangeError(`nmPerSample must be a positive number, got ${nm}`);
  if (polarity !== 'dark' && polarity !== 'bright') throw new RangeError(`polarity must be 'dark' or 'bright', got ${String(polarity)}`);

  let periodPx: number;
  let periodSource: ProfileSheetsResult['periodSource'];
  if (options.periodPx !== undefined) {
    if (!(options.periodPx >= 2 && options.periodPx <= n / 1.5)) {
      throw new RangeError(`periodPx must be in [2, ${(n / 1.5).toFixed(1)}] for a ${n}-sample profile, got ${options.periodPx}`);
    }
    periodPx = options.periodPx;
    periodSource = 'given';
  } else {
    periodPx = profilePeriod(values, options.minPeriodPx ?? 2.5, options.maxPeriodPx ?? n / 3).periodPx;
    periodSource = 'estimated';
  }

  const band = bandpassAnalytic(values, periodPx, relBandwidth);
  const { filtered, envelope } = band;
  let maxEnv = 0;
  for (let i = 0; i < n; i++) if (envelope[i] > maxEnv) maxEnv = envelope[i];
  // hysteresis (as in Canny, IEEE PAMI 8, 679 (1986)): a run is the samples above the low level,
  // kept when its peak clears the high level
  const levels = (noise: number) => ({
    high: Math.max(snrThreshold * noise, relThreshold * maxEnv, 1e-12 * (maxEnv || 1)),
    low: Math.max((2 / 3) * snrThreshold * noise, 0.5 * relThreshold * maxEnv, 1e-12 * (maxEnv || 1)),
  });
  const findRuns = (high: number, low: number): [number, number][] => {
    const out: [number, number][] = [];
    for (let i = 0; i < n; ) {
      if (envelope[i] <= low) { i++; continue; }
      let j = i;
      let top = envelope[i];
      while (j + 1 < n && envelope[j + 1] > low) { j++; top = Math.max(top, envelope[j]); }
      if (top > high) out.push([i, j]);
      i = j + 1;
    }
    return out;
  };
  // The noise envelope rms in the layer band. Two measurements of it: the white level from the
  // upper spectrum (every sample, but few bins: about ±20 % on a short profile), and the mean
  // envelope power of the background between and beside the sheets (the direct measurement, also
  // of coloured noise from an amorphous film, but only where there is background). Start from
  // the larger of the white level and the smaller of the side bands and the envelope's 10 %
  // quantile. Mask the runs found at the white level (the first time) or the current one, widened
  // by 1.5 periods (about three spatial σ of the band-pass), and compare: for k independent
  // envelope samples (one per correlation length σₓ√(2π) of |z|², σₓ the band-pass impulse
  // response's σ) the background's mean power is white² · χ²(2k)/(2k) under white noise.
  // - No significant excess (1 % false alarm): both measure the same level; pool them by their
  //   degrees of freedom. This holds with a background of a few periods between two stacks, where
  //   the side bands (raised by the stacks' sidelobes) and the quantile would read 2–3 times high.
  // - A significant excess: coloured noise. The level is the background's own (30 % quantile,
  //   robust to faint sheets still unmasked, Rayleigh: q30 = 0.597 rms), capped by the side bands,
  //   once four periods of background are left; a shorter background is the lowest stretches
  //   between the masks, biased low, and the current estimate stands.
  // - Less background than minBackgroundSamples: the current estimate stands.
  // Repeat until it settles (iterative clipping of the background, as in Stetson, PASP 99, 191 (1987)).
  const sigmaXPx = periodPx / (2 * Math.PI * relBandwidth);
  const correlationPx = sigmaXPx * Math.sqrt(2 * Math.PI);
  const white2 = band.whiteRms * band.whiteRms;
  let noiseRms = band.noiseRms;
  for (let iter = 0; iter < 4; iter++) {
    const current = levels(iter === 0 ? band.whiteRms : noiseRms);
    const reach = Math.ceil(1.5 * periodPx);
    const inSheet = new Uint8Array(n);
    for (const [a, b] of findRuns(current.high, current.low)) {
      for (let i = Math.max(0, a - reach); i <= Math.min(n - 1, b + reach); i++) inSheet[i] = 1;
    }
    const background: number[] = [];
    for (let i = 0; i < n; i++) if (!inSheet[i]) background.push(envelope[i]);
    const k = background.length / correlationPx;
    // A background of fewer than minBackgroundSamples (default 2.5, about 3 periods) is as likely
    // a quiet stretch between the peaks of coloured noise as a true gap between sheets: the
    // estimate stands. (Pooling from one sample on doubled the false sheets on 100 profiles of
    // smoothed noise, tests/sheets/sheets-profile.test.ts, from 9 to 19; 2.5 kept every gain of
    // bench:sheets part A.)
    if (k < minBackgroundSamples) break;
    let next: number;
    {
      let ms = 0;
      for (const e of background) ms += e * e;
      ms /= background.length;
      if (ms > (white2 * chiSquareUpperQuantile(0.01, 2 * k)) / (2 * k)) {
        // coloured: a short background is the lowest stretches between masks, biased low, so
        // the current estimate stands until four periods of background are left
        if (background.length < 4 * periodPx) break;
        background.sort((x, y) => x - y);
        const q = 0.3;
        const backgroundRms = background[Math.floor(q * (background.length - 1))] / Math.sqrt(-Math.log(1 - q));
        next = Math.max(band.whiteRms, Math.min(band.sideRms, backgroundRms));
      } else {
        next = Math.sqrt((band.whiteDof * white2 + 2 * k * ms) / (band.whiteDof + 2 * k));
      }
    }
    const settled = Math.abs(next - noiseRms) < 0.01 * noiseRms;
    noiseRms = next;
    if (settled) break;
  }
  const { high: threshold, low } = levels(noiseRms);
  const runs = findRuns(threshold, low);

  // split each run at deep envelope dips
  const segments: [number, number][] = [];
  for (const [a, b] of runs) {
    let start = a;
    let peakSoFar = envelope[a];
    for (let i = a + 1; i < b; i++) {
      peakSoFar = Math.max(peakSoFar, envelope[i]);
      if (!(envelope[i] <= envelope[i - 1] && envelope[i] <= envelope[i + 1])) continue;
      let nextPeak = envelope[i];
      for (let k = i + 1; k <= b; k++) nextPeak = Math.max(nextPeak, envelope[k]);
      // the right peak: the largest value up to the next dip deeper than this one is simply the run's remaining max
      // ... and only where the dip is significant: deeper than 3 noise rms below the smaller
      // peak (the envelope's noise is about rms/√2 along the signal's phase, and the difference of
      // two such values has sd ≈ rms), so the noise alone does not split a stack (3σ rule, common practice)
      const smallerPeak = Math.min(peakSoFar, nextPeak);
      if (envelope[i] < splitRatio * smallerPeak && smallerPeak - envelope[i] > 3 * noiseRms) {
        segments.push([start, i]);
        start = i;
        peakSoFar = envelope[i];
      }
    }
    segments.push([start, b]);
  }

  const sign = polarity === 'dark' ? -1 : 1;
  const sheets: ProfileSheet[] = [];
  const spacingOk = (d: number) => Math.abs(d - periodPx) <= spacingTolerance * periodPx;
  for (const [a, b] of segments) {
    let peak = 0;
    let peakAt = a;
    for (let i = a; i <= b; i++) if (envelope[i] > peak) { peak = envelope[i]; peakAt = i; }
    const half = 0.5 * peak;
    // layer extrema inside the segment with envelope ≥ half the segment's peak
    const extrema: number[] = [];
    let firstOk = -1;
    let lastOk = -1;
    for (let i = Math.max(1, a); i <= Math.min(n - 2, b); i++) {
      const v = sign * filtered[i];
      if (v > 0 && v >= sign * filtered[i - 1] && v > sign * filtered[i + 1]) {
        if (envelope[i] >= half) {
          if (firstOk < 0) firstOk = extrema.length;
          lastOk = extrema.length;
        }
        extrema.push(i);
      }
    }
    // every extremum from the first to the last one at ≥ half the peak envelope is a layer
    const target = sign < 0 ? Math.PI : 0;
    const layers = firstOk < 0 ? [] : extrema.slice(firstOk, lastOk + 1).map((i) => phasePeak(filtered, band.quadrature, i, target));
    if (layers.length === 0) continue;
    // split at spacing breaks
    let groupStart = 0;
    for (let k = 1; k <= layers.length; k++) {
      if (k < layers.length && spacingOk(layers[k] - layers[k - 1])) continue;
      const group = layers.slice(groupStart, k);
      groupStart = k;
      if (group.length < minLayers) continue;
      sheets.push(makeSheet(group, envelope, filtered, periodPx, a, b, peakAt, nm, n));
    }
  }
  sheets.sort((s, t) => s.centerPx - t.centerPx);
  const gapsPx: number[] = [];
  for (let k = 1; k < sheets.length; k++) gapsPx.push(sheets[k].edgesPx[0] - sheets[k - 1].edgesPx[1]);
  return {
    periodPx,
    periodSource,
    filtered,
    envelope,
    threshold,
    noiseRms,
    sheets,
    gapsPx,
    gapsNm: nm === null ? null : gapsPx.map((g) => g * nm),
  };
}

function makeSheet(
  layers: number[],
  envelope: Float64Array,
  _filtered: Float64Array,
  profilePeriodPx: number,
  segA: number,
  segB: number,
  _segPeakAt: number,
  nm: number | null,
  n: number,
): ProfileSheet {
  const first = layers[0];
  const last = layers[layers.length - 1];
  const count = layers.length;
  // mean period: least-squares slope of layer position against layer index
  // over the inner layers when there are four or more: the band-pass pulls the two outer ones
  // outward (by about 3 % of a period on a noise-free stack), which would bias the slope high
  let periodPx = profilePeriodPx;
  if (count > 1) {
    const fit = count >= 4 ? layers.slice(1, -1) : layers;
    const m = fit.length;
    const mk = (m - 1) / 2;
    let mx = 0;
    for (const x of fit) mx += x;
    mx /= m;
    let sxy = 0;
    let sxx = 0;
    fit.forEach((x, k) => { sxy += (k - mk) * (x - mx); sxx += (k - mk) ** 2; });
    periodPx = sxy / sxx;
  }
  let spacingSdPx = 0;
  if (count > 2) {
    let ss = 0;
    for (let k = 1; k < count; k++) ss += (layers[k] - layers[k - 1] - periodPx) ** 2;
    spacingSdPx = Math.sqrt(ss / (count - 2));
  }
  // envelope peak between the first and last layer (± half a period)
  const lo = Math.max(segA, Math.floor(first - periodPx / 2));
  const hi = Math.min(segB, Math.ceil(last + periodPx / 2));
  let peak = 0;
  for (let i = lo; i <= hi; i++) peak = Math.max(peak, envelope[i]);
  const half = 0.5 * peak;
  // half-maximum crossings outward from the first and last layer, not beyond the segment
  let left = Math.max(0, Math.floor(first));
  while (left > segA && envelope[left - 1] >= half) left--;
  let leftEdge = left > 0 && envelope[left - 1] < half ? crossing(envelope, left - 1, half) : left;
  let right = Math.min(n - 1, Math.ceil(last));
  while (right < segB && envelope[right + 1] >= half) right++;
  let rightEdge = right < n - 1 && envelope[right + 1] < half ? crossing(envelope, right, half) : right;
  const truncated = left <= 0 || right >= n - 1 || first < profilePeriodPx / 2 || last > n - 1 - profilePeriodPx / 2;
  if (leftEdge > first) leftEdge = first;
  if (rightEdge < last) rightEdge = last;
  const thicknessPx = last - first + periodPx;
  const edgeToEdgePx = rightEdge - leftEdge;
  return {
    layers: count,
    layerPositionsPx: layers,
    periodPx,
    spacingSdPx,
    thicknessPx,
    edgeToEdgePx,
    edgesPx: [leftEdge, rightEdge],
    centerPx: 0.5 * (first + last),
    amplitude: peak,
    truncated,
    thicknessNm: nm === null ? null : thicknessPx * nm,
    edgeToEdgeNm: nm === null ? null : edgeToEdgePx * nm,
    periodNm: nm === null ? null : periodPx * nm,
  };
}
