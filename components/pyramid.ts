/**
 * Display helpers for the viewer: an image pyramid of box-averaged levels, an intensity
 * histogram and percentile limits. Pure TypeScript on typed arrays (runs in the compute worker).
 */
import { makeGreyImage, type GreyImage } from '../src/image/grey-image';

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
 * the pixels they have)
 * Reference: image pyramid by repeated 2 × 2 averaging, Burt & Adelson, IEEE Trans. Commun. 31, 532 (1983).
 */
export function buildPyramid(image: GreyImage, options: PyramidOptions = {}): GreyImage[] {
  const smallest = options.smallestSidePx ?? 512;
  if (!(smallest >= 1)) throw new RangeError(`smallestSidePx must be ≥ 1, got ${smallest}`);
  const levels: GreyImage[] = [];
  let src = image;
  while (Math.max(src.width, src.height) > smallest) {
    const w = Math.ceil(src.width / 2);
    const h = Math.ceil(src.height / 2);
    const out = new Float32Array(w * h);
    const sw = src.width;
    const sh = src.height;
    const d = src.data;
    for (let y = 0; y < h; y++) {
      const y0 = 2 * y;
      const y1 = Math.min(y0 + 1, sh - 1);
      for (let x = 0; x < w; x++) {
        const x0 = 2 * x;
        const x1 = Math.min(x0 + 1, sw - 1);
        out[y * w + x] = (d[y0 * sw + x0] + d[y0 * sw + x1] + d[y1 * sw + x0] + d[y1 * sw + x1]) / 4;
      }
    }
    src = makeGreyImage(w, h, out, { bitDepth: image.bitDepth, sampleKind: image.sampleKind, calibration: image.calibration });
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
 * @returns the histogram; non-finite values are skipped. Integer images whose range is narrower
 * than `bins` get one bin per value (the last bin's upper edge is max + 1).
 */
export function histogram(image: GreyImage, bins = 1024): Histogram {
  if (!Number.isInteger(bins) || bins < 2) throw new RangeError(`bins must be an integer ≥ 2, got ${bins}`);
  const { min, data } = image;
  let max = image.max;
  // Whole-number samples: one bin per value when they fit, so no bin is empty by construction.
  if (image.sampleKind !== 'float' && Number.isInteger(min) && Number.isInteger(max) && max - min + 1 <= bins) {
    bins = max - min + 1;
    max += 1;
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

/**
 * The grey value below which `percent` % of the counted values lie (linear within a bin).
 *
 * @param h the histogram
 * @param percent 0–100
 */
export function histogramPercentile(h: Histogram, percent: number): number {
  if (!(percent >= 0 && percent <= 100)) throw new RangeError(`percent must be in [0, 100], got ${percent}`);
  let total = 0;
  for (let i = 0; i < h.counts.length; i++) total += h.counts[i];
  if (total === 0 || !(h.max > h.min)) return h.min;
  const target = (percent / 100) * total;
  const width = (h.max - h.min) / h.counts.length;
  let acc = 0;
  for (let i = 0; i < h.counts.length; i++) {
    const c = h.counts[i];
    if (acc + c >= target && c > 0) return h.min + (i + (target - acc) / c) * width;
    acc += c;
  }
  return h.max;
}
