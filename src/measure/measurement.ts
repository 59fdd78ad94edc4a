/**
 * The one representation of a measurement result, shared by the app, the CLI, the store and
 * the exports. Every result carries the calibration it was computed with.
 */
import type { Calibration } from '../image/grey-image';

/** One periodicity: a lattice-fringe or lamellar period with its direction. */
export interface Periodicity {
  /** Period (d-spacing) in pixels. */
  periodPx: number;
  /** Period in nm, or null when the image is not calibrated. */
  periodNm: number | null;
  /**
   * Direction of the fringe normal (the spectrum spot's direction) in degrees, in [0, 180),
   * counter-clockwise from +x as the image is shown (x right, y up on the screen).
   */
  angleDeg: number;
  /** Standard uncertainty (k = 1) of periodPx from the data alone. */
  uncertaintyPx: number;
  /** Standard uncertainty of periodNm: statistics and calibration combined; null if uncalibrated. */
  uncertaintyNm: number | null;
  /** Estimator-specific strength (e.g. spot power over background); larger is stronger. */
  strength: number;
}

/** The part of the image a measurement looked at, in pixel coordinates. */
export type Region =
  | { kind: 'rect'; x: number; y: number; width: number; height: number }
  | { kind: 'line'; x0: number; y0: number; x1: number; y1: number; widthPx: number };

/** What produced a measurement. */
export type MeasurementTool =
  | 'profile'
  | 'spectrum'
  | 'rings'
  | 'sheets-line'
  | 'sheets-auto'
  | 'domains'
  | 'calibration';

export interface Measurement {
  /** Unique id (e.g. crypto.randomUUID()). */
  id: string;
  /** Id of the stored image it belongs to, or null for a CLI run on a file. */
  imageId: string | null;
  /** The image's file name as the user knows it. */
  fileName: string;
  /** ISO 8601 time of the measurement. */
  createdIso: string;
  tool: MeasurementTool;
  region: Region | null;
  calibration: Calibration | null;
  /** The settings that produced the result (window, estimator, thresholds...). */
  settings: Record<string, unknown>;
  /** Periods found, strongest first (may be empty: no significant periodicity). */
  periodicities: Periodicity[];
  /** Tool-specific detail (sheets, rings, profile samples...), plain JSON. */
  detail?: Record<string, unknown>;
  /** Notes and warnings for the user. */
  notes: string[];
}

/** Period in nm and its combined uncertainty from a pixel result and a calibration (or nulls). */
export function toNm(
  periodPx: number,
  uncertaintyPx: number,
  calibration: Calibration | null,
): { periodNm: number | null; uncertaintyNm: number | null } {
  if (!calibration) return { periodNm: null, uncertaintyNm: null };
  const periodNm = periodPx * calibration.nmPerPx;
  const uncertaintyNm = Math.hypot(uncertaintyPx * calibration.nmPerPx, periodNm * calibration.relUncertainty);
  return { periodNm, uncertaintyNm };
}
