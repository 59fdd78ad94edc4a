/**
 * Shapes drawn over an image, in image pixels: what a measurement tool's figure is made of, shown
 * by the app's viewer over the micrograph.
 */
import type { Calibration } from '../image/grey-image';
import { nmPerPxAlong, type Periodicity } from '../measure/measurement';

/** How a shape is coloured: the accent, information, or a warning. */
export type ShapeTone = 'accent' | 'info' | 'warn';

/** A shape over an image (image pixels: x to the right, y = row index). */
export type FigureShape =
  | { kind: 'line'; x0: number; y0: number; x1: number; y1: number; widthPx: number; label?: string; tone?: ShapeTone }
  | { kind: 'rect'; x: number; y: number; width: number; height: number; label?: string; tone?: ShapeTone }
  | { kind: 'point'; x: number; y: number; label?: string; tone?: ShapeTone };

/**
 * A period as a short label: "1.245 nm" when calibrated, "24.90 px" otherwise (4 significant
 * digits; no uncertainty, so a label never stands in for a result).
 * @param p the period
 * @param calibration the pixel size, or null
 * @returns the text
 */
export function periodLabel(p: Pick<Periodicity, 'periodPx' | 'angleDeg' | 'geometry'>, calibration: Calibration | null): string {
  if (!calibration) return `${p.periodPx.toPrecision(4)} px`;
  return `${(p.periodPx * nmPerPxAlong(calibration, p.geometry, p.angleDeg)).toPrecision(4)} nm`;
}
