/**
 * Small previews of images for the library list.
 */
import type { GreyImage } from '../image/grey-image';
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
 * Notes: percentiles come from the averaged preview itself (a 256-bin histogram), so the cost is
 * one pass over the image.
 * Reference: image shrinking by area averaging, Gonzalez & Woods, Digital Image Processing (image interpolation and resampling).
 */
export function makeThumbnail(image: GreyImage, options: ThumbnailOptions = {}): Thumbnail {
  const maxSidePx = options.maxSidePx ?? THUMBNAIL_SIDE_PX;
  const lowPercent = options.lowPercent ?? 0.5;
  const highPercent = options.highPercent ?? 99.5;
  if (!Number.isInteger(maxSidePx) || maxSidePx < 1) throw new RangeError(`maxSidePx must be a positive integer, got ${maxSidePx}`);
  if (!(lowPercent >= 0 && lowPercent < highPercent && highPercent <= 100)) {
    throw new RangeError(`percentiles must satisfy 0 ≤ low < high ≤ 100, got ${lowPercent} and ${highPercent}`);
  }
  const { width, height, data } = image;
  const scale = Math.max(width, height) / maxSidePx;
  const tw = scale > 1 ? Math.max(1, Math.round(width / scale)) : width;
  const th = scale > 1 ? Math.max(1, Math.round(height / scale)) : height;
  const sum = new Float64Array(tw * th);
  const count = new Uint32Array(tw * th);
  for (let y = 0; y < height; y++) {
    const ty = Math.min(th - 1, Math.floor((y * th) / height));
    const row = y * width;
    const trow = ty * tw;
    for (let x = 0; x < width; x++) {
      const v = data[row + x];
      if (!Number.isFinite(v)) continue;
      const t = trow + Math.min(tw - 1, Math.floor((x * tw) / width));
      sum[t] += v;
      count[t]++;
    }
  }
  const mean = new Float64Array(tw * th);
  let lo = Infinity;
  let hi = -Infinity;
  for (let i = 0; i < mean.length; i++) {
    mean[i] = count[i] ? sum[i] / count[i] : NaN;
    if (count[i]) {
      if (mean[i] < lo) lo = mean[i];
      if (mean[i] > hi) hi = mean[i];
    }
  }
  const grey = new Uint8Array(tw * th);
  if (!(hi > lo)) return { width: tw, height: th, grey };
  const bins = new Uint32Array(256);
  let n = 0;
  for (let i = 0; i < mean.length; i++) {
    if (Number.isNaN(mean[i])) continue;
    bins[Math.min(255, Math.floor(((mean[i] - lo) / (hi - lo)) * 256))]++;
    n++;
  }
  const at = (percent: number): number => {
    const target = (percent / 100) * n;
    let acc = 0;
    for (let b = 0; b < 256; b++) {
      acc += bins[b];
      if (acc >= target) return lo + ((b + (percent >= 50 ? 1 : 0)) / 256) * (hi - lo);
    }
    return hi;
  };
  const black = at(lowPercent);
  let white = at(highPercent);
  if (!(white > black)) white = black + (hi - lo) / 256;
  for (let i = 0; i < mean.length; i++) {
    const v = mean[i];
    grey[i] = Number.isNaN(v) ? 0 : Math.max(0, Math.min(255, Math.round(((v - black) / (white - black)) * 255)));
  }
  return { width: tw, height: th, grey };
}
