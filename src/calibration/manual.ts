/**
 * Manual calibration: two points on a feature of known length, or a pixel size typed in.
 */
import type { Calibration } from '../image/grey-image';
import { makeCalibration } from './calibration';

export interface ManualCalibrationInput {
  /** Distance between the two points, px. */
  lengthPx: number;
  /**
   * Standard uncertainty of lengthPx, px. When absent: each end placed to ±0.5 px (a rectangular
   * bound, 0.5/√3 = 0.29 px) and the two ends independent, √2 × 0.29 = 0.41 px.
   */
  uncertaintyPx?: number;
  /** The feature's true length, nm. */
  knownLengthNm: number;
  /** Standard uncertainty of knownLengthNm, nm; 0 when absent. */
  knownUncertaintyNm?: number;
  /** What the feature is, for the record. */
  note?: string;
}

/** Default length uncertainty of two hand-placed points, px (see ManualCalibrationInput). */
export const MANUAL_POINTS_UNCERTAINTY_PX = Math.SQRT2 * (0.5 / Math.sqrt(3));

/**
 * Pixel size from two points on a feature of known length.
 * @param input length in px, its uncertainty, the known length and its uncertainty
 * @returns a Calibration with source 'manual'
 * Notes: nm/px = L_nm / L_px; u_rel = √((u_px/L_px)² + (u_nm/L_nm)²) (JCGM 100:2008, GUM,
 * §5.1.6). A rectangular bound a has standard uncertainty a/√3 (GUM §4.3.7).
 */
export function manualCalibration(input: ManualCalibrationInput): Calibration {
  const { lengthPx, knownLengthNm } = input ?? ({} as ManualCalibrationInput);
  const uPx = input?.uncertaintyPx ?? MANUAL_POINTS_UNCERTAINTY_PX;
  const uNm = input?.knownUncertaintyNm ?? 0;
  if (!(lengthPx > 0) || !Number.isFinite(lengthPx)) throw new RangeError(`lengthPx must be a positive number, got ${lengthPx}`);
  if (!(knownLengthNm > 0) || !Number.isFinite(knownLengthNm)) throw new RangeError(`knownLengthNm must be a positive number, got ${knownLengthNm}`);
  if (!(uPx >= 0) || !Number.isFinite(uPx)) throw new RangeError(`uncertaintyPx must be a non-negative number, got ${uPx}`);
  if (!(uNm >= 0) || !Number.isFinite(uNm)) throw new RangeError(`knownUncertaintyNm must be a non-negative number, got ${uNm}`);
  return makeCalibration(
    knownLengthNm / lengthPx,
    'manual',
    `${input.note ? `${input.note}: ` : ''}${knownLengthNm} nm over ${lengthPx.toPrecision(6)} ± ${uPx.toPrecision(2)} px, two points`,
    [
      { name: 'end points placed by hand', rel: uPx / lengthPx, type: input?.uncertaintyPx === undefined ? 'B' : 'A' },
      { name: "feature's known length", rel: uNm / knownLengthNm, type: 'B' },
    ],
  );
}

/**
 * A pixel size typed in by the user, with the relative uncertainty they state.
 * @param nmPerPx the pixel size, nm per px
 * @param relUncertainty its relative standard uncertainty (k = 1), e.g. 0.02
 * @param note where the number comes from
 * @returns a Calibration with source 'manual'
 */
export function typedCalibration(nmPerPx: number, relUncertainty: number, note = 'typed in'): Calibration {
  if (!(nmPerPx > 0) || !Number.isFinite(nmPerPx)) throw new RangeError(`nmPerPx must be a positive number, got ${nmPerPx}`);
  if (!(relUncertainty >= 0 && relUncertainty < 1)) throw new RangeError(`relUncertainty must be in [0, 1), got ${relUncertainty}`);
  return makeCalibration(nmPerPx, 'manual', `${note}: ${nmPerPx} nm/px ± ${(100 * relUncertainty).toPrecision(2)} %`, [{ name: 'stated by the user', rel: relUncertainty, type: 'B' }]);
}
