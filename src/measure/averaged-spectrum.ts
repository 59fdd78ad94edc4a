/**
 * The power spectrum of a region too large to transform whole: the average of the periodograms of
 * overlapping tiles (Welch's method), so its memory is that of one tile, whatever the region's size.
 */
import type { GreyImage } from '../image/grey-image';
import { createWorkspace } from '../image/workspace';
import { fastSizeAtMost, powerSpectrum, type PowerSpectrum, type PowerSpectrumOptions, type RectPx } from './spectrum';

/** Regions with a side above this many px are averaged over tiles (a 4096² region is transformed whole). */
export const LARGEST_WHOLE_TRANSFORM_PX = 4096;

/** Options of {@link averagedPowerSpectrum}. */
export interface AveragedSpectrumOptions extends PowerSpectrumOptions {
  /** Side of the square tiles in px (default 2048; trimmed to a fast transform size). */
  tileSidePx?: number;
  /** Fraction by which neighbouring tiles overlap, 0 ≤ overlap < 1 (default 0.5, Welch's choice for a Hann window). */
  overlap?: number;
}

/** A power spectrum averaged over tiles: the tiles' transform size, the region's area. */
export interface AveragedPowerSpectrum extends PowerSpectrum {
  /** How many tiles were averaged and their size (px). */
  tiles: { count: number; widthPx: number; heightPx: number };
}

/**
 * Power spectrum of a large region as the mean of its tiles' periodograms.
 *
 * Parameters: image; region (null: the whole image), at least 16 × 16; options (window, detrend,
 * tile side, overlap). A side shorter than the tile gets tiles of its own length.
 * Returns: the averaged power in DFT order at the tile's size (frequency u / tileSide cycles/px),
 * with `area` the region covered and `tiles` the count and side; with `options.workspace`, the power
 * lies in its spectrum buffer (valid until the next spectrum taken with it, as for powerSpectrum).
 * Notes: tiles are spread evenly over the region with at least the requested overlap, each
 * detrended and windowed on its own; only one tile's transform and one sum are held at a time, so
 * the memory does not grow with the region. The frequency resolution is that of a tile
 * (1/tileSide); averaging M independent tiles divides the noise's scatter about its mean by √M, so
 * a spot stands out more clearly against the background than in one tile. The detection threshold
 * of findSpots, set for a single periodogram, is then conservative.
 * Reference: Welch, IEEE Trans. Audio Electroacoust. 15(2), 70–73 (1967).
 */
export async function averagedPowerSpectrum(
  image: GreyImage,
  region: RectPx | null = null,
  options: AveragedSpectrumOptions = {},
): Promise<AveragedPowerSpectrum> {
  const r = region ?? { x: 0, y: 0, width: image.width, height: image.height };
  const requested = options.tileSidePx ?? 2048;
  if (!(Number.isInteger(requested) && requested >= 16)) throw new RangeError(`tileSidePx must be an integer ≥ 16, got ${requested}`);
  const overlap = options.overlap ?? 0.5;
  if (!(overlap >= 0 && overlap < 1)) throw new RangeError(`overlap must be in [0, 1), got ${overlap}`);
  if (!(r.width >= 16 && r.height >= 16)) throw new RangeError(`region ${r.width} × ${r.height} is too small for a spectrum (at least 16 × 16)`);
  if (r.x < 0 || r.y < 0 || r.x + r.width > image.width || r.y + r.height > image.height) {
    throw new RangeError(`region x ${r.x}, y ${r.y}, ${r.width} × ${r.height} lies outside the ${image.width} × ${image.height} image`);
  }
  // a side shorter than the tile is covered by one tile row or column of that side
  const sideX = fastSizeAtMost(Math.min(requested, r.width));
  const sideY = fastSizeAtMost(Math.min(requested, r.height));
  const starts = (from: number, length: number, side: number): number[] => {
    const count = Math.max(1, Math.ceil((length - side) / (side * (1 - overlap))) + 1);
    if (count === 1) return [from + ((length - side) >> 1)];
    return Array.from({ length: count }, (_, i) => from + Math.round((i * (length - side)) / (count - 1)));
  };
  const xs = starts(r.x, r.width, sideX);
  const ys = starts(r.y, r.height, sideY);
  const n = sideX * sideY;
  const sum = new Float64Array(n);
  const workspace = options.workspace ?? createWorkspace();
  let last: PowerSpectrum | null = null;
  for (const y of ys) {
    for (const x of xs) {
      last = await powerSpectrum(image, { x, y, width: sideX, height: sideY }, { ...options, workspace });
      const p = last.power;
      for (let k = 0; k < n; k++) sum[k] += p[k];
    }
  }
  const count = xs.length * ys.length;
  const t = last!;
  // the mean goes into the last tile's power array (no longer needed; with the caller's workspace
  // it is that workspace's spectrum buffer, valid until its next spectrum, as for powerSpectrum)
  const power = t.power;
  for (let k = 0; k < n; k++) power[k] = sum[k] / count;
  const area = { x: xs[0], y: ys[0], width: xs[xs.length - 1] + sideX - xs[0], height: ys[ys.length - 1] + sideY - ys[0] };
  return { width: sideX, height: sideY, area, window: t.window, tukeyAlpha: t.tukeyAlpha, power, windowX: t.windowX, windowY: t.windowY, tiles: { count, widthPx: sideX, heightPx: sideY } };
}

/**
 * The spectrum the app and the command line take of a region: whole up to
 * {@link LARGEST_WHOLE_TRANSFORM_PX} a side, averaged over tiles beyond.
 *
 * Parameters and returns: as {@link powerSpectrum}; a larger region gets {@link averagedPowerSpectrum}.
 * Reference: as those two (Harris 1978; Welch 1967).
 */
export async function regionPowerSpectrum(
  image: GreyImage,
  region: RectPx | null,
  options: PowerSpectrumOptions = {},
): Promise<PowerSpectrum | AveragedPowerSpectrum> {
  const w = region ? region.width : image.width;
  const h = region ? region.height : image.height;
  if (w <= LARGEST_WHOLE_TRANSFORM_PX && h <= LARGEST_WHOLE_TRANSFORM_PX) return powerSpectrum(image, region, options);
  return averagedPowerSpectrum(image, region, options);
}
