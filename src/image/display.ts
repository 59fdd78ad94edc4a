/**
 * The one display stretch of the app and the command line's figures: grey values mapped to 0–255
 * between two limits taken at percentiles of the data (black and white points), with the
 * histogram the viewer shows and the reduction of large arrays to a picture. For the eye only:
 * nothing here feeds a measurement.
 */
import { isPixelArray, type GreyImage, type PixelArray } from './grey-image';

/** Default lower percentile mapped to black (0.5 %). */
export const DISPLAY_LOW_PERCENT = 0.5;
/** Default upper percentile mapped to white (99.5 %). */
export const DISPLAY_HIGH_PERCENT = 99.5;

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
  data: PixelArray,
  lowPercent: number,
  highPercent: number,
  options: PercentileRangeOptions = {},
): { low: number; high: number } {
  if (!isPixelArray(data)) throw new TypeError('data must be a Float32Array, Uint16Array, Int16Array or Uint8Array');
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

/** The grey values mapped to black and to white. */
export interface DisplayLimits {
  /** Value shown black (0). */
  black: number;
  /** Value shown white (255); always above black. */
  white: number;
}

/** Options of {@link displayLimits}. */
export interface DisplayLimitsOptions {
  /** Percentile mapped to black (default 0.5). */
  lowPercent?: number;
  /** Percentile mapped to white (default 99.5). */
  highPercent?: number;
  /** Use every step-th value only (default: about a million values at most). */
  step?: number;
}

/**
 * Black and white points of a display stretch at two percentiles of the values.
 *
 * @param data the values (NaN and infinities are skipped)
 * @param options percentiles (default 0.5 % and 99.5 %) and subsampling
 * @returns black and white, white > black: a flat or empty input gives black = its value (or 0)
 *   and white = black + 1, so every value shows as black rather than dividing by zero
 * Reference: percentiles as in {@link percentileRange} (Hyndman & Fan 1996, definition 7); a
 * percentile window of 0.5–99.5 % is common practice for micrographs.
 */
export function displayLimits(data: PixelArray, options: DisplayLimitsOptions = {}): DisplayLimits {
  const low = options.lowPercent ?? DISPLAY_LOW_PERCENT;
  const high = options.highPercent ?? DISPLAY_HIGH_PERCENT;
  const step = options.step ?? Math.max(1, Math.floor(data.length / 1_000_000));
  const r = percentileRange(data, low, high, { step });
  const black = Number.isFinite(r.low) ? r.low : 0;
  return { black, white: r.high > black ? r.high : black + 1 };
}

/** Options of {@link stretchToGrey}. */
export interface StretchOptions {
  /** Show white as black and black as white (default false). */
  invert?: boolean;
}

/**
 * Grey values through the display stretch: 0 at black, 255 at white, linear between, clipped.
 *
 * @param values the values (NaN and infinities show as black, or white when inverted)
 * @param limits black and white points (see {@link displayLimits}); white must exceed black
 * @param out where to write (default a new array of the same length); a Float32Array receives
 *   unrounded levels, integer arrays whole levels
 * @param options inversion
 * @returns `out`
 * Reference: linear window/level mapping (common practice).
 */
export function stretchToGrey<T extends Uint8ClampedArray | Uint8Array | Float32Array = Uint8ClampedArray>(
  values: ArrayLike<number>,
  limits: DisplayLimits,
  out?: T,
  options: StretchOptions = {},
): T {
  const { black, white } = limits;
  if (!Number.isFinite(black) || !Number.isFinite(white) || !(white > black)) {
    throw new RangeError(`display limits must be finite with white above black, got black ${black}, white ${white}`);
  }
  const target = (out ?? new Uint8ClampedArray(values.length)) as T;
  if (target.length < values.length) throw new RangeError(`out holds ${target.length} values, fewer than the ${values.length} given`);
  const k = 255 / (white - black);
  const whole = !(target instanceof Float32Array);
  const inv = options.invert === true;
  for (let i = 0; i < values.length; i++) {
    let g = (values[i] - black) * k;
    g = g > 0 ? (g < 255 ? g : 255) : 0; // NaN → 0
    if (whole) g = Math.round(g);
    target[i] = inv ? 255 - g : g;
  }
  return target;
}

/** An 8-bit RGBA picture for a canvas (grey: R = G = B, opaque). */
export interface Picture {
  width: number;
  height: number;
  rgba: Uint8ClampedArray;
}

/** Options of {@link displayPicture}. */
export interface DisplayPictureOptions extends DisplayLimitsOptions {
  /** Take the limits from this rectangle of the values only (default all of them). */
  limitsFrom?: { x: number; y: number; width: number; height: number };
}

/**
 * Values as a grey picture, stretched between two percentiles.
 *
 * @param values row-major values, width × height of them
 * @param width picture width
 * @param height picture height
 * @param options percentiles and the part of the values they are taken from
 * @returns the picture
 * Reference: as {@link displayLimits} and {@link stretchToGrey}.
 */
export function displayPicture(values: PixelArray, width: number, height: number, options: DisplayPictureOptions = {}): Picture {
  if (!Number.isInteger(width) || !Number.isInteger(height) || width < 1 || height < 1 || values.length !== width * height) {
    throw new RangeError(`a picture of ${width} × ${height} needs ${width * height} values, got ${values.length}`);
  }
  let sample: PixelArray = values;
  const r = options.limitsFrom;
  if (r) {
    const x0 = Math.max(0, Math.floor(r.x));
    const y0 = Math.max(0, Math.floor(r.y));
    const x1 = Math.min(width, Math.ceil(r.x + r.width));
    const y1 = Math.min(height, Math.ceil(r.y + r.height));
    if (x1 > x0 && y1 > y0) {
      sample = new Float32Array((x1 - x0) * (y1 - y0));
      for (let y = y0; y < y1; y++) sample.set(values.subarray(y * width + x0, y * width + x1), (y - y0) * (x1 - x0));
    }
  }
  const grey = stretchToGrey(values, displayLimits(sample, options));
  const rgba = new Uint8ClampedArray(width * height * 4);
  for (let i = 0; i < grey.length; i++) {
    const o = 4 * i;
    rgba[o] = rgba[o + 1] = rgba[o + 2] = grey[i];
    rgba[o + 3] = 255;
  }
  return { width, height, rgba };
}

/**
 * Reduces a row-major array by a whole factor for display, keeping the maximum of each block
 * (spots of a spectrum stay visible) or its mean.
 *
 * @param values the values, width × height
 * @param width columns
 * @param height rows
 * @param factor whole number ≥ 1; 1 returns a copy
 * @param mode 'max' or 'mean'
 * @returns floor(width / factor) × floor(height / factor) values (blocks cut by the border are dropped)
 * Reference: max pooling and box averaging (common practice).
 */
export function reduceForDisplay(values: ArrayLike<number>, width: number, height: number, factor: number, mode: 'max' | 'mean'): { data: Float32Array; width: number; height: number } {
  if (!Number.isInteger(factor) || factor < 1) throw new RangeError(`factor must be a whole number ≥ 1, got ${factor}`);
  if (values.length !== width * height) throw new RangeError(`${width} × ${height} needs ${width * height} values, got ${values.length}`);
  if (factor === 1) return { data: Float32Array.from(values), width, height };
  const w = Math.floor(width / factor);
  const h = Math.floor(height / factor);
  const data = new Float32Array(w * h);
  for (let j = 0; j < h; j++) {
    for (let i = 0; i < w; i++) {
      let m = mode === 'max' ? -Infinity : 0;
      for (let b = 0; b < factor; b++) {
        const o = (j * factor + b) * width + i * factor;
        for (let a = 0; a < factor; a++) {
          const v = values[o + a];
          if (mode === 'max') m = v > m ? v : m;
          else m += v;
        }
      }
      data[j * w + i] = mode === 'max' ? m : m / (factor * factor);
    }
  }
  return { data, width: w, height: h };
}

/** A histogram of grey values over [min, max]. */
export interface GreyHistogram {
  /** Lower edge of the first bin. */
  min: number;
  /** Upper edge of the last bin. */
  max: number;
  /** Counts per bin, equal widths. */
  counts: Uint32Array;
}

/**
 * Counts grey values into equal-width bins between the image's min and max (the viewer's
 * histogram under the black and white points).
 *
 * @param image the image (a pyramid level is enough for display)
 * @param bins number of bins (default 1024)
 * @returns the histogram; non-finite values are skipped. Integer images get bins a whole number
 * of grey values wide (at most `bins` of them; the last bin's upper edge may pass max).
 * Reference: equal-width histogram (common practice).
 */
export function greyHistogram(image: GreyImage, bins = 1024): GreyHistogram {
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
