/**
 * Display helpers for the viewer: an image pyramid of box-averaged levels and an intensity
 * histogram. Pure TypeScript on typed arrays (runs in the compute worker).
 */
import type { GreyImage } from '../src/image/grey-image';
import { downsample } from '../src/image/downsample';

/** Options for buildPyramid. */
export interface PyramidOptions {
  /** Stop halving once the longer side is at most this many pixels (default 512). */
  smallestSidePx?: number;
}

/**
 * Builds the levels below full resolution: level k (k ≥ 1) is the image box-averaged by 2^k.
 *
 * @param image the full-resolution image (level 0, not copied into the result)
 * @param options where to stop
 * @returns levels 1..n, each half the size of the one before (rounded up; edge blocks average
 * the pixels they have; the calibration is scaled with the level)
 * Reference: image pyramid by repeated 2 × 2 averaging, Burt & Adelson, IEEE Trans. Commun. 31, 532 (1983).
 */
export function buildPyramid(image: GreyImage, options: PyramidOptions = {}): GreyImage[] {
  const smallest = options.smallestSidePx ?? 512;
  if (!(smallest >= 1)) throw new RangeError(`smallestSidePx must be ≥ 1, got ${smallest}`);
  const levels: GreyImage[] = [];
  let src = image;
  while (Math.max(src.width, src.height) > smallest) {
    src = downsample(src, 2);
    levels.push(src);
  }
  return levels;
}

/** A histogram of grey values over [min, max]. */
export interface Histogram {
  /** Lower edge of the first bin. */
  min: number;
  /** Upper edge of the last bin. */
  max: number;
  /** Counts per bin, equal widths. */
  counts: Uint32Array;
}

/**
 * Counts grey values into equal-width bins between the image's min and max.
 *
 * @param image the image (a pyramid level is enough for display)
 * @param bins number of bins (default 1024)
 * @returns the histogram; non-finite values are skipped. Integer images get bins a whole number
 * of grey values wide (at most `bins` of them; the last bin's upper edge may pass max).
 */
export function histogram(image: GreyImage, bins = 1024): Histogram {
  if (!Number.isInteger(bins) || bins < 2) throw new RangeError(`bins must be an integer ≥ 2, got ${bins}`);
  const { min, data } = image;
  let max = image.max;
  // Whole-number samples: bins a whole number of values wide, so no bin is empty by construction.
  if (image.sampleKind !== 'float' && Number.isInteger(min) && Number.isInteger(max)) {
    const perBin = Math.ceil((max - min + 1) / bins);
    bins = Math.ceil((max - min + 1) / perBin);
    max = min + bins * perBin;
  }
  const counts = new Uint32Array(bins);
  const span = max - min;
  if (!(span > 0)) {
    counts[0] = data.length;
    return { min, max, counts };
  }
  const k = bins / span;
  for (let i = 0; i < data.length; i++) {
    const v = data[i];
    if (!Number.isFinite(v)) continue;
    counts[Math.min(bins - 1, Math.floor((v - min) * k))]++;
  }
  return { min, max, counts };
}
