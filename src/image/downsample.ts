/**
 * Fast routines for display: box-mean downsampling for thumbnails and overviews, and
 * percentile display ranges from a histogram (no sort of the pixels).
 */
import type { GreyImage } from './grey-image';
import { makeGreyImage } from './grey-image';

/**
 * Shrinks an image by an integer factor, each output pixel the mean of a factor × factor block.
 *
 * @param image - the image to shrink.
 * @param factor - integer ≥ 1; 1 returns a copy.
 * @returns an image of ceil(width / factor) × ceil(height / factor) pixels. Blocks at the right
 *   and bottom edges that are cut off by the image border average only the pixels they cover.
 *   The calibration (if any) is scaled by the factor, with its uncertainty and source kept and
 *   the detail noting the downsampling; warnings are carried over.
 *
 * Notes: one pass over the pixels, sums in float64. Box (area-mean) filtering before decimation
 * is the plain anti-aliasing choice for display; it is not meant as an input to measurement.
 * Reference: box filter / area averaging (Gonzalez & Woods, Digital Image Processing, spatial averaging; from memory).
 */
export function downsample(image: GreyImage, factor: number): GreyImage {
  if (!image || !(image.data instanceof Float32Array)) throw new TypeError('image must be a GreyImage');
  if (!Number.isInteger(factor) || factor < 1) throw new RangeError(`factor must be an integer ≥ 1, got ${factor}`);
  const { width, height, data } = image;
  const outW = Math.ceil(width / factor);
  const outH = Math.ceil(height / factor);
  const out = new Float32Array(outW * outH);
  if (factor === 1) out.set(data);
  else {
    const sums = new Float64Array(outW);
    const column = new Int32Array(width); // output column of each input column
    for (let x = 0; x < width; x++) column[x] = (x / factor) | 0;
    for (let oy = 0; oy < outH; oy++) {
      sums.fill(0);
      const y0 = oy * factor;
      const y1 = Math.min(height, y0 + factor);
      for (let y = y0; y < y1; y++) {
        const row = y * width;
        for (let x = 0; x < width; x++) sums[column[x]] += data[row + x];
      }
      const rows = y1 - y0;
      const o = oy * outW;
      for (let ox = 0; ox < outW; ox++) {
        const cols = Math.min(width, (ox + 1) * factor) - ox * factor;
        out[o + ox] = sums[ox] / (rows * cols);
      }
    }
  }
  const c = image.calibration;
  const calibration = c
    ? {
        ...c,
        nmPerPx: c.nmPerPx * factor,
        ...(c.nmPerPxY !== undefined ? { nmPerPxY: c.nmPerPxY * factor } : {}),
        detail: factor === 1 ? c.detail : `${c.detail} (downsampled ×${factor})`,
      }
    : null;
  return makeGreyImage(outW, outH, out, {
    bitDepth: image.bitDepth,
    sampleKind: image.sampleKind,
    calibration,
    warnings: [...image.warnings],
  });
}

export interface PercentileRangeOptions {
  /** Number of histogram bins over [min, max] of the finite values; default 65536. */
  bins?: number;
  /** Use every step-th value only (a quicker estimate on very large images); default 1. */
  step?: number;
}

/**
 * Low and high percentiles of the finite values, for a display window (e.g. 0.5 % and 99.5 %).
 *
 * @param data - the values (NaN and infinities are skipped).
 * @param lowPercent - lower percentile in [0, 100].
 * @param highPercent - upper percentile in [lowPercent, 100].
 * @param options - histogram size and subsampling, see {@link PercentileRangeOptions}.
 * @returns `{ low, high }`; both NaN when there are no finite values.
 *
 * Notes: percentile p is the order statistic at rank h = (n − 1)·p/100, interpolated linearly
 * between ranks floor(h) and floor(h) + 1. Two passes (range, histogram) and a cumulative walk:
 * O(n + bins), no sort. Integer data whose range fits in the bins (all 8- and 16-bit images with
 * the default) get unit-wide bins and exact results; otherwise a value is placed inside its bin
 * assuming the bin's values are spread evenly, so the error is below one bin width
 * ((max − min) / bins).
 * Reference: Hyndman & Fan, "Sample quantiles in statistical packages", Am. Stat. 50, 361 (1996), definition 7.
 */
export function percentileRange(
  data: Float32Array,
  lowPercent: number,
  highPercent: number,
  options: PercentileRangeOptions = {},
): { low: number; high: number } {
  if (!(data instanceof Float32Array)) throw new TypeError('data must be a Float32Array');
  if (!(lowPercent >= 0 && lowPercent <= 100)) throw new RangeError(`lowPercent must be in [0, 100], got ${lowPercent}`);
  if (!(highPercent >= lowPercent && highPercent <= 100)) throw new RangeError(`highPercent must be in [lowPercent, 100], got ${highPercent}`);
  const bins = options.bins ?? 65536;
  if (!Number.isInteger(bins) || bins < 1 || bins > 1 << 24) throw new RangeError(`bins must be an integer in [1, 16777216], got ${bins}`);
  const step = options.step ?? 1;
  if (!Number.isInteger(step) || step < 1) throw new RangeError(`step must be a positive integer, got ${step}`);

  let min = Infinity;
  let max = -Infinity;
  let n = 0;
  let fractions = 0;
  for (let i = 0; i < data.length; i += step) {
    const v = data[i];
    if (v - v !== 0) continue; // NaN or ±Infinity
    n++;
    if (v < min) min = v;
    if (v > max) max = v;
    if (Math.floor(v) !== v) fractions++;
  }
  if (n === 0) return { low: NaN, high: NaN };
  if (min === max) return { low: min, high: max };
  const integers = fractions === 0 && max - min + 1 <= bins;

  // Unit bins for integer data when they fit: bin k holds exactly the value min + k.
  const exact = integers;
  const nb = exact ? max - min + 1 : bins;
  const width = exact ? 1 : (max - min) / nb;
  const hist = new Uint32Array(nb);
  const last = nb - 1;
  if (exact) {
    for (let i = 0; i < data.length; i += step) {
      const v = data[i];
      if (v - v === 0) hist[(v - min) | 0]++;
    }
  } else {
    const scale = nb / (max - min);
    for (let i = 0; i < data.length; i += step) {
      const v = data[i];
      if (v - v !== 0) continue;
      const k = Math.floor((v - min) * scale);
      hist[k > last ? last : k]++;
    }
  }

  /** Value of the order statistic of 0-based rank r. */
  const orderStat = (r: number): number => {
    let before = 0;
    for (let k = 0; k < nb; k++) {
      const c = hist[k];
      if (r < before + c) {
        if (exact) return min + k;
        return Math.min(max, min + (k + (r - before + 0.5) / c) * width);
      }
      before += c;
    }
    return max;
  };
  const quantile = (p: number): number => {
    if (p <= 0) return min;
    if (p >= 100) return max;
    const h = ((n - 1) * p) / 100;
    const lo = Math.floor(h);
    const a = orderStat(lo);
    const frac = h - lo;
    if (frac === 0) return a;
    const b = orderStat(lo + 1);
    return a + frac * (b - a);
  };
  return { low: quantile(lowPercent), high: quantile(highPercent) };
}
