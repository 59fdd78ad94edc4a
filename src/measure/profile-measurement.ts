/**
 * The period along a drawn line as a measurement record: both profile estimators with their
 * uncertainty budgets (statistical, local variation along the line, estimator disagreement).
 */
import type { GreyImage } from '../image/grey-image';
import type { ComplexInterpolator } from './interpolate';
import { type Measurement, type Periodicity, recordHead } from './measurement';
import { type ProfilePeriod, type RealSpacePeriod, realSpacePeriod, spectralPeriod } from './period-profile';
import { localSpread } from './pool';
import { type LineProfile, lineProfile } from './profile';

/** How the spectral estimator treats a profile: Hann window, or no window with a complex interpolator. */
export type ProfileEstimator = 'hann' | ComplexInterpolator;

/** A straight line of a given width, in image pixels. */
export interface ProfileLine {
  x0: number;
  y0: number;
  x1: number;
  y1: number;
  /** Averaging width across the line, px (≥ 1). */
  widthPx: number;
}

/** Options of {@link analyseProfile}. */
export interface ProfileMeasurementOptions {
  /** Spectral estimator (default 'hann': Grandke, then the Tukey periodogram maximum). */
  estimator?: ProfileEstimator;
  /** File name recorded in the measurement (default ''). */
  fileName?: string;
  /** Stored image id recorded in the measurement (default null). */
  imageId?: string | null;
  /** Significance level of the local-variation test over segments (default 0.01). */
  spreadLevel?: number;
}

/** A profile, its two estimates and the record. */
export interface ProfileAnalysis {
  /** The sampled profile (distances in px). */
  profile: LineProfile;
  /** Spectral estimate, or null when no peak lies in the searched range. */
  spectral: ProfilePeriod | null;
  /** Real-space (fringe extrema) estimate, or null when fewer than four extrema are found. */
  realSpace: RealSpacePeriod | null;
  /** Local periods of the segments the line was cut into (px; empty when too short). */
  segmentPeriodsPx: number[];
  /** The record: one periodicity per estimator that gave one, spectral first. */
  measurement: Measurement;
}

/**
 * Period of a line profile with its full uncertainty budget.
 *
 * Parameters: image; line (px, with its width); options (estimator, file name, image id).
 * Returns: the profile, both estimates, the segments' local periods and a record with tool 'profile'.
 * Notes: statistical part: each estimator's own standard uncertainty (Cramér–Rao bound with the
 * window factor; the real-space line fit). Local variation: the line is cut into 2–4 segments of
 * at least six periods, each measured by the spectral estimator; when their periods differ more
 * than their uncertainties allow (Cochran's Q at the 1 % level) the spread τ of the local periods
 * is the local-variation part (DerSimonian–Laird), so a period that changes along the line is not
 * stated with the precision of one fit. Method part: when both estimators give a period, the true
 * value may lie anywhere between them; |Δ|/√3 is the standard uncertainty of the reported value
 * for a rectangular distribution over the interval of width |Δ| (GUM §4.3.7).
 * Reference: GUM, JCGM 100:2008; Cochran, Biometrics 10, 101 (1954).
 */
export function analyseProfile(image: GreyImage, line: ProfileLine, options: ProfileMeasurementOptions = {}): ProfileAnalysis {
  const estimator = options.estimator ?? 'hann';
  const profile = lineProfile(image, line.x0, line.y0, line.x1, line.y1, { widthPx: line.widthPx });
  const notes: string[] = [];
  let spectral: ProfilePeriod | null = null;
  let realSpace: RealSpacePeriod | null = null;
  const values = profile.mean;
  const spec = (v: ArrayLike<number>, o: { minPeriodPx?: number; maxPeriodPx?: number } = {}) =>
    estimator === 'hann' ? spectralPeriod(v, { window: 'hann', ...o }) : spectralPeriod(v, { window: 'none', interpolator: estimator, ...o });
  if (values.length < 16) {
    notes.push(`the line is ${profile.lengthPx.toFixed(1)} px long: draw at least 16 px, across several fringes`);
  } else {
    spectral = spec(values);
    if (!spectral) notes.push('spectral: no peak between 2 px and a third of the line length');
    if (spectral && spectral.periodPx >= 2 && spectral.periodPx < values.length / 2) {
      realSpace = realSpacePeriod(values, { approxPeriodPx: spectral.periodPx });
    }
    if (!realSpace) notes.push('real space: fewer than four fringe extrema found away from the line ends');
  }
  // Local periods of segments of at least six periods each.
  const segmentPeriodsPx: number[] = [];
  const segmentItems: { value: number; u: number }[] = [];
  if (spectral) {
    const p = spectral.periodPx;
    const k = Math.min(4, Math.floor(values.length / (6 * p)));
    if (k >= 2) {
      const len = Math.floor(values.length / k);
      for (let i = 0; i < k; i++) {
        const seg = values.subarray(i * len, (i + 1) * len);
        const e = spec(seg, { minPeriodPx: Math.max(2, 0.7 * p), maxPeriodPx: Math.min(seg.length / 3, 1.4 * p) });
        if (e && Number.isFinite(e.uStatisticalPx) && e.uStatisticalPx > 0) {
          segmentPeriodsPx.push(e.periodPx);
          segmentItems.push({ value: e.periodPx, u: e.uStatisticalPx });
        }
      }
    }
  }
  const spread = localSpread(segmentItems, options.spreadLevel ?? 0.01);
  if (spread.significant) notes.push(`the period changes along the line: segments give ${segmentPeriodsPx.map((v) => v.toFixed(3)).join(', ')} px`);
  const disagreement = spectral && realSpace ? Math.abs(spectral.periodPx - realSpace.periodPx) / Math.sqrt(3) : 0;
  const periodicities: Periodicity[] = [spectral, realSpace]
    .filter((e): e is ProfilePeriod => e !== null)
    .map((e) => ({
      periodPx: e.periodPx,
      angleDeg: profile.angleDeg,
      geometry: 'line',
      u: { statisticalPx: Number.isFinite(e.uStatisticalPx) ? e.uStatisticalPx : 0, localVariationPx: spread.spread, methodPx: disagreement },
      uAngleDeg: 0,
      strength: Number.isFinite(e.snr) ? e.snr : 0,
      flags: [],
    }));
  if (!image.calibration) notes.push('image not calibrated: periods in px only');
  const widthPx = Math.max(1, Math.round(line.widthPx));
  const measurement: Measurement = {
    ...recordHead('profile', options),
    region: { kind: 'line', x0: line.x0, y0: line.y0, x1: line.x1, y1: line.y1, widthPx },
    calibration: image.calibration,
    settings: { widthPx, spectralEstimator: estimator, sampleStepPx: 1 },
    periodicities,
    detail: {
      estimators: [spectral, realSpace]
        .filter((e): e is ProfilePeriod => e !== null)
        .map((e) => ({ method: e.method, periodPx: e.periodPx, uStatisticalPx: e.uStatisticalPx, fringes: e.fringes, snr: Number.isFinite(e.snr) ? e.snr : null })),
      segmentPeriodsPx,
      segmentsDiffer: spread.significant,
      extremaPx: realSpace ? realSpace.extremaPx.map((v) => +v.toPrecision(6)) : [],
      lengthPx: profile.lengthPx,
      lineAngleDeg: profile.angleDeg,
    },
    notes,
  };
  return { profile, spectral, realSpace, segmentPeriodsPx, measurement };
}
