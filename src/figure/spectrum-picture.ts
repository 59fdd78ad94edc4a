/**
 * The power spectrum's display picture at a zoom, shared by the compute worker (which makes it)
 * and the Periods panel (which makes it itself only when the worker could not).
 */
import { displayPicture, type Picture } from '../image/display';

/**
 * Grey picture of a centred log power, black and white at the 2nd and 99.8th percentiles of the
 * part shown at this zoom (the central 1/zoom), so spots near zero frequency stay visible.
 *
 * @param p the spectrum's picture: its size and centred log power (row-major)
 * @param zoom magnification about zero frequency (1, 2, 4 or 8)
 * @returns the RGBA picture, p.width × p.height
 * @throws RangeError naming a zoom that is not a positive finite number
 * Notes: percentile display stretch (common practice for power spectra: log scale, clipped extremes).
 */
export function spectrumPicture(p: { width: number; height: number; logPower: Float32Array }, zoom: number): Picture {
  if (!(zoom > 0 && Number.isFinite(zoom))) throw new RangeError(`zoom must be a positive number, got ${zoom}`);
  const { width: w, height: h } = p;
  const hw = Math.max(1, Math.floor(w / (2 * zoom)));
  const hh = Math.max(1, Math.floor(h / (2 * zoom)));
  return displayPicture(p.logPower, w, h, { lowPercent: 2, highPercent: 99.8, limitsFrom: { x: (w >> 1) - hw, y: (h >> 1) - hh, width: 2 * hw, height: 2 * hh } });
}
