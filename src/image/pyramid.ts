/**
 * The view pyramid: box-averaged levels of an image below full resolution, so a zoomed-out view
 * draws from a level of about the screen's size.
 */
import type { GreyImage } from './grey-image';
import { downsample } from './downsample';

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
