/**
 * Sheets along a line drawn on an image: the width-averaged line profile through `sheetsAlongProfile`.
 */
import { nmPerPxAlong } from '../measure/measurement';
import type { GreyImage } from '../image/grey-image';
import { lineProfile } from '../measure/profile';
import { sheetsAlongProfile, type ProfileSheet, type ProfileSheetsResult, type SheetProfileOptions } from './profile';

/** Options for `sheetsAlongLine`. */
export interface SheetLineOptions extends Omit<SheetProfileOptions, 'nmPerSample'> {
  /** Width of the line in px; values are averaged across it (default 9). */
  widthPx?: number;
}

/** A sheet along an image line, with image positions. */
export interface LineSheet extends ProfileSheet {
  /** Centre of the sheet in image pixels [x, y] (y = row index). */
  centerXY: [number, number];
  /** The two half-maximum edges in image pixels. */
  edgesXY: [[number, number], [number, number]];
  /** Direction of the layer normal = the line's direction, degrees in [0, 180), CCW from +x on screen. */
  angleDeg: number;
}

/** The result of `sheetsAlongLine`. */
export interface LineSheetsResult extends Omit<ProfileSheetsResult, 'sheets'> {
  sheets: LineSheet[];
  /** The profile the sheets were found in. */
  profile: Float64Array;
  /** Line direction, degrees (the angle convention above). */
  angleDeg: number;
  /** nm per profile sample along the line, or null when uncalibrated. */
  nmPerSample: number | null;
}

/**
 * Finds the sheets crossed by a line drawn across a stack of layers.
 *
 * Line profile (bilinear, width-averaged) followed by the analytic-signal layer finder (Gabor 1946).
 *
 * @param image the image (its calibration, if any, gives the nm fields)
 * @param x0 start x, px
 * @param y0 start y (row), px
 * @param x1 end x, px
 * @param y1 end y, px
 * @param options line width and the options of `sheetsAlongProfile`
 * @returns the profile, the sheets with image positions, gaps and the band-pass details
 * Notes: draw the line along the layer normal, starting and ending on background; a line
 * oblique to the normal by θ stretches every length by 1/cos θ.
 */
export function sheetsAlongLine(
  image: GreyImage,
  x0: number,
  y0: number,
  x1: number,
  y1: number,
  options: SheetLineOptions = {},
): LineSheetsResult {
  const widthPx = options.widthPx ?? 9;
  const prof = lineProfile(image, x0, y0, x1, y1, { widthPx });
  if (prof.mean.length < 8) throw new RangeError(`the line must be at least 8 px long, got ${prof.lengthPx.toFixed(1)} px`);
  const nmPerSample = image.calibration ? nmPerPxAlong(image.calibration, 'line', prof.angleDeg) : null;
  const r = sheetsAlongProfile(prof.mean, { ...options, nmPerSample });
  const ux = (x1 - x0) / prof.lengthPx;
  const uy = (y1 - y0) / prof.lengthPx;
  const at = (d: number): [number, number] => [x0 + ux * d, y0 + uy * d];
  return {
    ...r,
    profile: prof.mean,
    angleDeg: prof.angleDeg,
    nmPerSample,
    sheets: r.sheets.map((s) => ({
      ...s,
      centerXY: at(s.centerPx),
      edgesXY: [at(s.edgesPx[0]), at(s.edgesPx[1])],
      angleDeg: prof.angleDeg,
    })),
  };
}
