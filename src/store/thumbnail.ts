/**
 * Small previews of images for the library list.
 */
import type { GreyImage } from '../image/grey-image';
import { downsample } from '../image/downsample';
import { displayLimits, stretchToGrey } from '../image/display';
import type { Thumbnail } from './records';

/** Longer side of a library thumbnail, in pixels. */
export const THUMBNAIL_SIDE_PX = 96;

/** Options for makeThumbnail. */
export interface ThumbnailOptions {
  /** Longer side of the thumbnail in pixels (default THUMBNAIL_SIDE_PX). */
  maxSidePx?: number;
  /** Lower percentile mapped to black, percent (default 0.5). */
  lowPercent?: number;
  /** Upper percentile mapped to white, percent (default 99.5). */
  highPercent?: number;
}

/**
 * Makes an 8-bit grey preview by box-averaging blocks of pixels and stretching the grey range
 * between two percentiles.
 *
 * @param image the image to preview
 * @param options size and contrast
 * @returns a Thumbnail no larger than maxSidePx on its longer side (never enlarged)
 * Notes: the block size is the smallest whole factor that brings the longer side within
 * maxSidePx; the percentiles are those of the averaged preview.
 * Reference: box-mean reduction (src/image/downsample) and the display stretch of src/image/display (Hyndman & Fan 1996, definition 7).
 */
export function makeThumbnail(image: GreyImage, options: ThumbnailOptions = {}): Thumbnail {
  const maxSidePx = options.maxSidePx ?? THUMBNAIL_SIDE_PX;
  const lowPercent = options.lowPercent ?? 0.5;
  const highPercent = options.highPercent ?? 99.5;
  if (!Number.isInteger(maxSidePx) || maxSidePx < 1) throw new RangeError(`maxSidePx must be a positive integer, got ${maxSidePx}`);
  if (!(lowPercent >= 0 && lowPercent < highPercent && highPercent <= 100)) {
    throw new RangeError(`percentiles must satisfy 0 ≤ low < high ≤ 100, got ${lowPercent} and ${highPercent}`);
  }
  const factor = Math.max(1, Math.ceil(Math.max(image.width, image.height) / maxSidePx));
  const small = factor > 1 ? downsample(image, factor) : image;
  // the app's one display stretch (src/image/display.ts), on the averaged preview
  const grey = stretchToGrey(small.data, displayLimits(small.data, { lowPercent, highPercent, step: 1 }), new Uint8Array(small.width * small.height));
  return { width: small.width, height: small.height, grey };
}
