/**
 * Two-dimensional power spectrum of an image region, spot finding with a controlled false-alarm
 * probability, spot geometry, and the radial (azimuthal) average with ring detection.
 */
import type { GreyImage, PixelArray } from '../image/grey-image';
import type { Workspace, WorkspacePurpose } from '../image/workspace';
import { realDft2d } from '../image/fft';
import { kernelRatioOffset, magnitudeRatioOffset } from './interpolate';
import { frequencyCrbStd } from './period-profile';
import { normalUpperQuantile } from './stats';
import type { Periodicity } from './measurement';
import { type WindowKind, windowSamples, windowVarianceFactor } from './window';

/** A rectangle in pixel coordinates (x right, y = row index). */
export interface RectPx {
  /** Left column. */
  x: number;
  /** Top row. */
  y: number;
  /** Width in pixels. */
  width: number;
  /** Height in pixels. */
  height: number;
}

/** Options of {@link powerSpectrum}. */
export interface PowerSpectrumOptions {
  /** Window applied before the transform (default 'hann'). */
  window?: WindowKind;
  /** Tapered fraction of a Tukey window (0 < α ≤ 1, default 0.5). */
  tukeyAlpha?: number;
  /** What is subtracted before windowing: the mean (default) or the least-squares plane. */
  detrend?: 'mean' | 'plane';
  /**
   * Reuse this workspace's buffer for the power array (see createWorkspace): the spectrum is then
   * valid only until the next spectrum taken with the same workspace. Default: a fresh array.
   */
  workspace?: Workspace;
  /**
   * The workspace purpose the power array is borrowed for (default 'spectrum-power'); a spectrum
   * taken while another is still in use needs a purpose of its own (e.g. 'block-power').
   */
  workspacePurpose?: WorkspacePurpose;
}

/** A power spectrum and what is needed to interpret it. */
export interface PowerSpectrum {
  /** Transform width = columns of the area actually transformed. */
  width: number;
  /** Transform height = rows of the area actually transformed. */
  height: number;
  /** The area transformed, in image pixels (the requested region trimmed to a fast transform size, centred). */
  area: RectPx;
  /** Window used. */
  window: WindowKind;
  /** Tukey taper fraction used (meaningful for 'tukey' only). */
  tukeyAlpha: number;
  /** |X(u, v)|², in DFT order: index v · width + u, u, v from 0 (DC); frequencies above N/2 are negative. */
  power: Float32Array;
  /** Window along x and along y. */
  windowX: Float64Array;
  windowY: Float64Array;
}

/** The largest n' ≤ n whose only prime factors are 2, 3 and 5 (fast transform sizes). */
export function fastSizeAtMost(n: number): number {
  for (let m = n; m > 1; m--) {
    let k = m;
    for (const p of [2, 3, 5]) while (k % p === 0) k /= p;
    if (k === 1) return m;
  }
  return 1;
}

/** Validates a region against an image; null means the whole image. */
export function checkRegion(image: GreyImage, region: RectPx | null): RectPx {
  if (!region) return { x: 0, y: 0, width: image.width, height: image.height };
  const { x, y, width, height } = region;
  for (const [k, v] of Object.entries({ x, y, width, height })) {
    if (!Number.isInteger(v)) throw new RangeError(`region.${k} must be an integer, got ${v}`);
  }
  if (width < 1 || height < 1) throw new RangeError(`region ${width} × ${height} must have a positive size`);
  if (x < 0 || y < 0 || x + width > image.width || y + height > image.height) {
    throw new RangeError(
      `region x ${x}, y ${y}, ${width} × ${height} lies outside the ${image.width} × ${image.height} image`,
    );
  }
  return { x, y, width, height };
}

/**
 * Power spectrum of a rectangular image region.
 *
 * Parameters: image; region (null: the whole image), any size ≥ 16 × 16; options (window, detrend).
 * Returns: the power |X|² in DFT order with the transformed area and windows.
 * Notes: the region is trimmed, centred, to the largest size with prime factors 2, 3, 5 only (at most
 * a few per cent), so no zero padding changes the bin spacing the interpolators rely on; bins are
 * u/width and v/height cycles per pixel. The mean (or a fitted plane) is removed, then a separable
 * 2D window is applied; the DFT is realDft2d (PFFFT in WebAssembly).
 * Reference: periodogram with data window, Harris, Proc. IEEE 66(1), 51–83 (1978).
 */
export async function powerSpectrum(
  image: GreyImage,
  region: RectPx | null = null,
  options: PowerSpectrumOptions = {},
): Promise<PowerSpectrum> {
  const r = checkRegion(image, region);
  const window = options.window ?? 'hann';
  const tukeyAlpha = options.tukeyAlpha ?? 0.5;
  const detrend = options.detrend ?? 'mean';
  if (detrend !== 'mean' && detrend !== 'plane') throw new RangeError(`detrend must be 'mean' or 'plane', got '${String(detrend)}'`);
  if (r.width < 16 || r.height < 16) throw new RangeError(`region ${r.width} × ${r.height} is too small for a spectrum (at least 16 × 16)`);
  const w = fastSizeAtMost(r.width);
  const h = fastSizeAtMost(r.height);
  const area = { x: r.x + ((r.width - w) >> 1), y: r.y + ((r.height - h) >> 1), width: w, height: h };
  const wx = windowSamples(window, w, tukeyAlpha);
  const wy = windowSamples(window, h, tukeyAlpha);
  const d = image.data;
  const iw = image.width;
  const sum = areaSum(d, iw, area.x, area.y, w, h);
  if (!Number.isFinite(sum)) {
    for (let j = 0; j < h; j++) for (let i = 0; i < w; i++) {
      const v = d[(area.y + j) * iw + area.x + i];
      if (!Number.isFinite(v)) throw new RangeError(`pixel (${area.x + i}, ${area.y + j}) is not finite (${v})`);
    }
  }
  const mean = sum / (w * h);
  const cx = (w - 1) / 2;
  const cy = (h - 1) / 2;
  let gx = 0;
  let gy = 0;
  if (detrend === 'plane') {
    // Least-squares plane on centred coordinates: the slopes decouple from the mean.
    const moments = new Float64Array(2);
    centredMoments(d, iw, area.x, area.y, w, h, mean, moments);
    gx = moments[0] / ((h * w * (w * w - 1)) / 12);
    gy = moments[1] / ((w * h * (h * h - 1)) / 12);
  }
  const n = w * h;
  const power = options.workspace ? options.workspace.float32(options.workspacePurpose ?? 'spectrum-power', n) : new Float32Array(n);
  const wxg = new Float64Array(w);
  for (let i = 0; i < w; i++) wxg[i] = gx * (i - cx);
  await realDft2d(
    w,
    h,
    (m, j) => {
      // the detrended, windowed region, written straight into the transform's input a row at a time
      const rowBase = mean + gy * (j - cy);
      const o = (area.y + j) * iw + area.x;
      const wj = wy[j];
      for (let i = 0; i < w; i++) m[i] = (d[o + i] - rowBase - wxg[i]) * wx[i] * wj;
    },
    { kind: 'power', out: power },
  );
  return { width: w, height: h, area, window, tukeyAlpha, power, windowX: wx, windowY: wy };
}

/**
 * The bins of the half-plane (v > 0, or v = 0 and u > 0) within the frequency range whose power
 * exceeds `screen` times the radial background and is a strict local maximum of its 3 × 3
 * neighbourhood (ties go to the later bin): findSpots' candidate loop, kept in a function of
 * typed arrays and numbers only so that the engine compiles it once.
 * @returns the candidates' bin indices v · w + u, in scan order.
 */
function screenedMaxima(
  power: Float32Array, w: number, h: number, fx2: Float64Array, fy2: Float64Array, fMin2: number, fMax2: number,
  B: Float64Array, nMax: number, screen: number,
): number[] {
  const out: number[] = [];
  for (let v = 0; v <= h >> 1; v++) {
    if (signedIndex(v, h) < 0) continue;
    const o = v * w;
    for (let u = 0; u < w; u++) {
      if (v === 0 && signedIndex(u, w) <= 0) continue;
      const f2 = fx2[u] + fy2[v];
      if (f2 < fMin2 || f2 > fMax2) continue;
      const k = o + u;
      const p = power[k];
      const b = B[(Math.sqrt(f2) * nMax + 0.5) | 0];
      if (!(b > 0) || p <= screen * b) continue;
      let isMax = true;
      for (let dv = -1; dv <= 1 && isMax; dv++) {
        const vv = (v + dv + h) % h;
        for (let du = -1; du <= 1; du++) {
          if (du === 0 && dv === 0) continue;
          const q = power[vv * w + ((u + du + w) % w)];
          if (q > p || (q === p && (dv < 0 || (dv === 0 && du < 0)))) {
            isMax = false;
            break;
          }
        }
      }
      if (isMax) out.push(k);
    }
  }
  return out;
}

/**
 * The sum of an area's pixels (a loop of its own, so the engine compiles it once for every caller).
 * @param d - the image's pixels; iw its width.
 * @param x0 - the area's left column; y0 its top row; w, h its size.
 * @returns Σ d over the area, row by row.
 */
function areaSum(d: PixelArray, iw: number, x0: number, y0: number, w: number, h: number): number {
  let sum = 0;
  for (let j = 0; j < h; j++) {
    const o = (y0 + j) * iw + x0;
    for (let i = 0; i < w; i++) sum += d[o + i];
  }
  return sum;
}

/**
 * The first moments of an area's pixels about its centre, Σ (i − cx)(d − mean) and
 * Σ (j − cy)(d − mean), for the least-squares plane (a loop of its own, as areaSum).
 * @param d - the image's pixels; iw its width.
 * @param x0 - the area's left column; y0 its top row; w, h its size.
 * @param mean - the area's mean.
 * @param out - receives the two sums.
 */
function centredMoments(d: PixelArray, iw: number, x0: number, y0: number, w: number, h: number, mean: number, out: Float64Array): void {
  const cx = (w - 1) / 2;
  const cy = (h - 1) / 2;
  let sxv = 0;
  let syv = 0;
  for (let j = 0; j < h; j++) {
    const o = (y0 + j) * iw + x0;
    for (let i = 0; i < w; i++) {
      const v = d[o + i] - mean;
      sxv += (i - cx) * v;
      syv += (j - cy) * v;
    }
  }
  out[0] = sxv;
  out[1] = syv;
}

/**
 * The median power the display pictures are normalised by, from about 20 000 bins spread evenly
 * over the spectrum (the DC bin left out); 1 when that median is 0.
 * @param power - the power spectrum's bins.
 * @returns the sampled median.
 * Reference: sample median (common practice).
 */
function displayMedianPower(power: Float32Array): number {
  const sample: number[] = [];
  const step = Math.max(1, Math.floor(power.length / 20000));
  for (let k = 1; k < power.length; k += step) sample.push(power[k]);
  sample.sort((a, b) => a - b);
  return sample[sample.length >> 1] || 1;
}

/**
 * Centred log-power image for display (DC in the middle, row index increasing downwards as in the image).
 *
 * Parameters: a power spectrum.
 * Returns: Float32Array of width · height values log10(1 + P / median P).
 * Notes: normalising by the median makes the grey scale independent of the image's intensity units.
 * Reference: FFT shift of a periodogram for display (common practice).
 */
export function centredLogPower(spectrum: PowerSpectrum): Float32Array {
  const { width: w, height: h, power } = spectrum;
  const med = displayMedianPower(power);
  const out = new Float32Array(w * h);
  const hx = w >> 1;
  const hy = h >> 1;
  for (let v = 0; v < h; v++) {
    const tv = (v + hy) % h;
    for (let u = 0; u < w; u++) out[tv * w + ((u + hx) % w)] = Math.log10(1 + power[v * w + u] / med);
  }
  return out;
}

/**
 * The centred log-power image reduced by a whole factor for display, keeping each block's maximum:
 * the values of `reduceForDisplay(centredLogPower(spectrum), width, height, factor, 'max')`,
 * without the full-size picture in between.
 *
 * Parameters: a power spectrum; factor, a whole number ≥ 1.
 * Returns: floor(width / factor) × floor(height / factor) values of log10(1 + P / median P), each
 * the largest of its block (blocks cut by the border are dropped), with its width and height.
 * Notes: each bin's value is rounded to float32 before the blocks' maxima are taken, as the full
 * picture stores it, so the two routes agree bit for bit.
 * Reference: FFT shift of a periodogram for display and max pooling (common practice).
 */
export function centredLogPowerReduced(spectrum: PowerSpectrum, factor: number): { data: Float32Array; width: number; height: number } {
  if (!Number.isInteger(factor) || factor < 1) throw new RangeError(`factor must be a whole number ≥ 1, got ${factor}`);
  const { width: w, height: h, power } = spectrum;
  const med = displayMedianPower(power);
  const ow = Math.floor(w / factor);
  const oh = Math.floor(h / factor);
  const data = new Float32Array(ow * oh);
  const best = new Float64Array(ow);
  const hx = w >> 1;
  const hy = h >> 1;
  const fround = Math.fround;
  for (let j = 0; j < oh; j++) {
    best.fill(-Infinity);
    for (let b = 0; b < factor; b++) {
      const v = (j * factor + b + h - hy) % h; // the spectrum's row shown at picture row j · factor + b
      const o = v * w;
      for (let i = 0; i < ow; i++) {
        let m = best[i];
        for (let a = 0; a < factor; a++) {
          const u = (i * factor + a + w - hx) % w;
          const x = fround(Math.log10(1 + power[o + u] / med));
          m = x > m ? x : m;
        }
        best[i] = m;
      }
    }
    for (let i = 0; i < ow; i++) data[j * ow + i] = best[i];
  }
  return { data, width: ow, height: oh };
}

/** Signed frequency index of DFT bin k of an n-point transform. */
function signedIndex(k: number, n: number): number {
  return k < n / 2 ? k : k - n;
}

/** Euler–Mascheroni constant: E[ln P] = ln(mean) − γ for exponentially distributed P. */
const EULER_GAMMA = 0.5772156649015329;

/** Radially averaged background of a power spectrum. */
export interface RadialBackground {
  /** Background power per ring (ring r covers radius r / max(width, height) cycles/px ± half a ring). */
  background: Float64Array;
  /** Number of rings. */
  rings: number;
}

/** Squared signed frequency (cycles/px)² of each DFT index of an n-point transform. */
function squaredFrequencies(n: number): Float64Array {
  const f2 = new Float64Array(n);
  for (let k = 0; k < n; k++) {
    const f = signedIndex(k, n) / n;
    f2[k] = f * f;
  }
  return f2;
}

/**
 * Background power as a function of spatial frequency, robust to spots and to rings of spots.
 *
 * Parameters: a power spectrum; smoothRings, rings either side of the running median across
 * rings (default 6); workspace, to borrow the ring-power scratch array from (its contents on
 * arrival do not matter; default a fresh array).
 * Returns: background per ring (ring of a bin: round(|f| · max(width, height))).
 * Notes: for a featureless (Gaussian-noise-like) region every bin's power is exponentially
 * distributed about the local mean B. Within a ring, the mean of ln P over the lowest 70 % of its
 * bins is ln B plus a known constant (the trimmed log-mean of an exponential), so B follows from
 * bins the spots of the ring do not reach, even when grains of one spacing put arcs all around it
 * (a fingerprint pattern). A running median
 * over neighbouring rings then removes what a ring of spots still lifts, since a ring is narrow
 * in radius and the background varies slowly. Rings are 1/max(width, height) cycles/px wide in
 * physical frequency, so non-square regions work. Only the half-plane v ≤ height/2 is read: the
 * power of a real image is point-symmetric.
 * Reference: trimmed means of the exponential distribution (common practice); running median, Tukey, Exploratory Data Analysis (1977).
 */
export function radialBackground(spectrum: PowerSpectrum, smoothRings = 6, workspace?: Workspace): RadialBackground {
  const { width: w, height: h, power } = spectrum;
  if (!(Number.isInteger(smoothRings) && smoothRings >= 0)) throw new RangeError(`smoothRings must be a non-negative integer, got ${smoothRings}`);
  const nMax = Math.max(w, h);
  const rings = Math.ceil(Math.SQRT1_2 * nMax) + 2;
  const count = new Int32Array(rings);
  const fx2 = squaredFrequencies(w);
  const fy2 = squaredFrequencies(h);
  const ringAt = (u: number, v: number) => (Math.sqrt(fx2[u] + fy2[v]) * nMax + 0.5) | 0;
  for (let v = 0; v <= h >> 1; v++) {
    for (let u = 0; u < w; u++) if (power[v * w + u] > 0) count[ringAt(u, v)]++;
  }
  // The rings' powers are gathered a group of rings at a time (one pass over the half-plane each, in
  // the same order), into one scratch array of at most RADIAL_GROUP_VALUES values (or the largest
  // ring): the memory of a few rings instead of the whole half-plane's, and the same numbers.
  let largest = 0;
  let total = 0;
  for (let r = 1; r < rings; r++) {
    largest = Math.max(largest, count[r]);
    total += count[r];
  }
  const cap = Math.max(largest, Math.min(total, RADIAL_GROUP_VALUES), 1);
  // The powers themselves are gathered (float32, as stored) and the lower KEEP of each ring chosen
  // among them; ln is increasing, so the same bins are chosen, in the same order, as among their
  // logs, and only those are taken the log of. Every element is written before it is read, so a
  // borrowed array serves alike.
  const gathered = workspace ? workspace.float32('radial-powers', cap) : new Float32Array(cap);
  const start = new Int32Array(rings + 1);
  const fill = new Int32Array(rings);
  // the mean of ln P over the ring's lower KEEP fraction, less its expectation for Exp(1) data
  const raw = new Float64Array(rings).fill(NaN);
  for (let r0 = 1; r0 < rings;) {
    let r1 = r0;
    let n = 0;
    while (r1 < rings && n + count[r1] <= cap) n += count[r1++];
    start[r0] = 0;
    for (let r = r0; r < r1; r++) {
      start[r + 1] = start[r] + count[r];
      fill[r] = start[r];
    }
    for (let v = 0; v <= h >> 1; v++) {
      for (let u = 0; u < w; u++) {
        const p = power[v * w + u];
        if (!(p > 0)) continue;
        const r = ringAt(u, v);
        if (r >= r0 && r < r1) gathered[fill[r]++] = p;
      }
    }
    for (let r = r0; r < r1; r++) {
      const nr = count[r];
      if (nr === 0) continue;
      const m = Math.max(1, Math.floor(KEEP * nr));
      quickSelect(gathered, start[r], start[r] + nr - 1, start[r] + m - 1);
      let sum = 0;
      for (let i = start[r]; i < start[r] + m; i++) sum += Math.log(gathered[i]);
      raw[r] = sum / m - TRIMMED_LOG_MEAN;
    }
    r0 = r1;
  }
  const background = new Float64Array(rings);
  const win: number[] = [];
  for (let r = 0; r < rings; r++) {
    win.length = 0;
    for (let j = Math.max(1, r - smoothRings); j <= Math.min(rings - 1, r + smoothRings); j++) if (Number.isFinite(raw[j])) win.push(raw[j]);
    if (!win.length) continue;
    win.sort((a, b) => a - b);
    background[r] = Math.exp(win[win.length >> 1]);
  }
  return { background, rings };
}

/** Most powers radialBackground gathers at once (16 MiB of float32: a 2048² region's half-plane in one pass). */
const RADIAL_GROUP_VALUES = 1 << 22;

/** Fraction of a ring's bins (the lowest) whose log-mean gives the background. */
const KEEP = 0.7;

/**
 * E[ln X | X below its KEEP quantile] for X ~ Exp(1): ∫₀^q ln x e^(−x) dx / KEEP with q = −ln(1 − KEEP),
 * by the midpoint rule on a log-spaced grid (computed once).
 */
const TRIMMED_LOG_MEAN = (() => {
  const q = -Math.log(1 - KEEP);
  let s = 0;
  const steps = 20000;
  const lo = Math.log(1e-12);
  const hi = Math.log(q);
  const dt = (hi - lo) / steps;
  for (let i = 0; i < steps; i++) {
    const t = lo + (i + 0.5) * dt;
    const x = Math.exp(t);
    s += t * Math.exp(-x) * x * dt;
  }
  return s / KEEP;
})();

/** The k-th smallest of a[lo..hi] (inclusive), rearranging that part in place (Hoare's selection). */
function quickSelect(a: Float32Array, lo: number, hi: number, k: number): number {
  while (hi > lo) {
    const pivot = a[(lo + hi) >> 1];
    let i = lo;
    let j = hi;
    while (i <= j) {
      while (a[i] < pivot) i++;
      while (a[j] > pivot) j--;
      if (i <= j) {
        const t = a[i];
        a[i] = a[j];
        a[j] = t;
        i++;
        j--;
      }
    }
    if (k <= j) hi = j;
    else if (k >= i) lo = i;
    else return a[k];
  }
  return a[k];
}

/** Options of {@link findSpots}. */
export interface SpotOptions {
  /** Family-wise false-alarm probability over all searched bins (default 0.001). */
  alpha?: number;
  /** Shortest period searched in px (default 0: up to the corners of the spectrum). */
  minPeriodPx?: number;
  /** Longest period searched in px (default a quarter of the smaller region side). */
  maxPeriodPx?: number;
  /** At most this many spots, strongest first (default 12). */
  maxSpots?: number;
  /**
   * Borrow the radial background's scratch arrays from this workspace (see createWorkspace)
   * instead of allocating them per search; the results do not depend on it. Default: fresh arrays.
   */
  workspace?: Workspace;
}

/**
 * One spot of a power spectrum (one of a Friedel pair; its mate is at −(fx, fy)): a periodicity
 * with geometry 'normal' and the frequency vector it came from.
 */
export interface Spot extends Periodicity {
  /** Frequency along x in cycles/px (refined). */
  fx: number;
  /** Frequency along the row index (downwards) in cycles/px (refined). */
  fy: number;
  /** Peak power over the local background (normalised power) at the brightest bin; also `strength`. */
  normalisedPower: number;
  /** SNR η = A²/(2σ²) of the plane wave, from the spot's energy over the background. */
  snr: number;
  /** Power of the spot's brightest bin, in the spectrum's own units (for comparing spots of one spectrum). */
  peakPower: number;
}

/** Result of {@link findSpots}: spots and the detection statistics. */
export interface SpotSearch {
  /** Spots, strongest first. */
  spots: Spot[];
  /** Threshold on normalised power: ln(N / α), raised slightly for the noise of the local background. */
  threshold: number;
  /** Number of bins searched (one half-plane). */
  searchedBins: number;
  /** The family-wise false-alarm probability used. */
  alpha: number;
}

/** Equivalent noise bandwidth of a window in bins, N Σw² / (Σw)² (1.5 for Hann). */
function noiseBandwidthBins(w: Float64Array): number {
  let s = 0;
  let s2 = 0;
  for (const v of w) {
    s += v;
    s2 += v * v;
  }
  return (w.length * s2) / (s * s);
}

/** Peak-power envelope of a window's sidelobes at Chebyshev distance d bins, relative to the peak, ×10 margin. */
function sidelobeEnvelope(window: WindowKind, d: number): number {
  if (window === 'hann') {
    const a = 1 / (Math.PI * d * (d * d - 1));
    return 10 * a * a;
  }
  return 10 / (Math.PI * d) ** 2;
}

/** Angle of a frequency vector as shown, degrees in [0, 180). */
export function frequencyAngleDeg(fx: number, fy: number): number {
  let a = (Math.atan2(-fy, fx) * 180) / Math.PI;
  a = ((a % 180) + 180) % 180;
  return a >= 180 - 1e-12 ? 0 : a;
}

/**
 * Significant spots of a power spectrum, Friedel pairs merged, refined below one bin.
 *
 * Parameters: a power spectrum; options (false-alarm probability, period range, spot count).
 * Returns: spots strongest first (by normalised power), with the threshold and the number of bins searched.
 * Notes: each bin's power is divided by the radial background ({@link radialBackground}). For a
 * featureless region this normalised power z is exponential with mean 1, P(z > t) = e^(−t), so the
 * largest of N searched bins grows like ln N: a fixed threshold finds false spots in every large
 * amorphous region. With t = ln(N/α) the chance that any of the N bins crosses it is at most α
 * (Bonferroni; the window correlates neighbouring bins, which only makes it conservative). Real
 * backgrounds are not isotropic (scan lines, drift, astigmatism, detector rows give streaks along
 * the axes), so a candidate is confirmed against a local background too: the log-mean of the
 * normalised power in a square annulus 4–12 bins around it, with the threshold raised for that
 * estimate's own noise. normalisedPower is the power over this local background. Only one
 * half-plane is searched, because the power of a real image is point-symmetric (Friedel mates).
 * Candidates are 3 × 3 local maxima; one inside another's main lobe or below its window sidelobe
 * envelope is dropped. Each spot is refined along u and v from the background-subtracted
 * magnitudes: Grandke's exact ratio forms for Hann and rectangular windows, and the inversion of
 * the window's own kernel ratio for Tukey (kernelRatioOffset). Uncertainty: the 2D Cramér–Rao bound with the SNR from the
 * spot's energy, times the window's variance factor.
 * Reference: Bonferroni threshold on an exponential periodogram, Fisher, Proc. R. Soc. A 125, 54 (1929) (from memory); interpolation: Grandke, IEEE Trans. Instrum. Meas. 32(2), 350 (1983).
 */
export function findSpots(spectrum: PowerSpectrum, options: SpotOptions = {}): SpotSearch {
  const { width: w, height: h, power, window } = spectrum;
  const alpha = options.alpha ?? 0.001;
  if (!(alpha > 0 && alpha < 1)) throw new RangeError(`alpha must be in (0, 1), got ${alpha}`);
  const minP = options.minPeriodPx ?? 0;
  const maxP = options.maxPeriodPx ?? Math.min(w, h) / 4;
  if (!(minP >= 0)) throw new RangeError(`minPeriodPx must be ≥ 0, got ${minP}`);
  if (!(maxP > minP && maxP > 0)) throw new RangeError(`maxPeriodPx (${maxP}) must exceed minPeriodPx (${minP})`);
  const maxSpots = options.maxSpots ?? 12;
  if (!(Number.isInteger(maxSpots) && maxSpots >= 1)) throw new RangeError(`maxSpots must be a positive integer, got ${maxSpots}`);
  const fMin = 1 / maxP;
  const fMax = minP > 0 ? 1 / minP : Infinity;
  const bg = radialBackground(spectrum, 6, options.workspace);
  const B = bg.background;
  const nMax = Math.max(w, h);
  const fx2 = squaredFrequencies(w);
  const fy2 = squaredFrequencies(h);
  const ringOf = (k: number) => {
    const u = k % w;
    return (Math.sqrt(fx2[u] + fy2[(k - u) / w]) * nMax + 0.5) | 0;
  };
  const fMin2 = fMin * fMin;
  const fMax2 = fMax * fMax;
  // Local background (see notes): log-mean of the radially normalised power in a square annulus
  // of Chebyshev radii LOCAL_INNER..LOCAL_OUTER bins around the candidate; its own estimation noise
  // var(ln L) = (π²/6)·κ/K (κ bins per independent sample, K bins) raises the threshold to the t that
  // solves t − t²·var/2 = ln(N/α), since E[exp(−t·e^ε)] ≈ e^(−t + t²var/2) for ε ~ N(0, var).
  const LOCAL_INNER = 4;
  const LOCAL_OUTER = 12;
  const localBins = (2 * LOCAL_OUTER + 1) ** 2 - (2 * LOCAL_INNER - 1) ** 2;
  const kappa = noiseBandwidthBins(spectrum.windowX) * noiseBandwidthBins(spectrum.windowY);
  const varLog = ((Math.PI * Math.PI) / 6) * (kappa / localBins);
  // Bins of the half-plane v > 0, or v = 0 and u > 0, within the frequency range: count them first.
  let searched = 0;
  for (let v = 0; v <= h >> 1; v++) {
    if (signedIndex(v, h) < 0) continue;
    for (let u = 0; u < w; u++) {
      if (v === 0 && signedIndex(u, w) <= 0) continue;
      const f2 = fx2[u] + fy2[v];
      if (f2 >= fMin2 && f2 <= fMax2) searched++;
    }
  }
  const base = Math.log(Math.max(1, searched) / alpha);
  const disc = 1 - 2 * varLog * base;
  const threshold = disc > 0 ? (1 - Math.sqrt(disc)) / varLog : 2 * base;
  const zOf = (k: number) => power[k] / B[ringOf(k)];
  const localLevel = (u: number, v: number) => {
    let s = 0;
    let c = 0;
    for (let dv = -LOCAL_OUTER; dv <= LOCAL_OUTER; dv++) {
      const vv = (v + dv + h) % h;
      for (let du = -LOCAL_OUTER; du <= LOCAL_OUTER; du++) {
        if (Math.max(Math.abs(du), Math.abs(dv)) < LOCAL_INNER) continue;
        const k = vv * w + ((u + du + w) % w);
        const z = zOf(k);
        if (k !== 0 && z > 0 && Number.isFinite(z)) {
          s += Math.log(z);
          c++;
        }
      }
    }
    return c > 0 ? Math.exp(s / c + EULER_GAMMA) : 1;
  };
  const screen = threshold / 2;
  // Screen on the radial background at half the threshold, confirm on the local one below.
  const peaks = screenedMaxima(power, w, h, fx2, fy2, fMin2, fMax2, B, nMax, screen).map((k) => {
    const p = power[k];
    const u = k % w;
    const v = (k - u) / w;
    return { k, p, z: p / B[(Math.sqrt(fx2[u] + fy2[v]) * nMax + 0.5) | 0] };
  });
  peaks.sort((a, b) => b.p - a.p);
  const mainLobe = window === 'none' ? 1.5 : 2.5;
  const accepted: { su: number; sv: number; p: number; z: number; k: number }[] = [];
  for (const c of peaks) {
    if (accepted.length >= maxSpots) break;
    const u = c.k % w;
    const v = (c.k - u) / w;
    const su = signedIndex(u, w);
    const sv = signedIndex(v, h);
    let keep = true;
    for (const a of accepted) {
      for (const s of [1, -1]) {
        const d = Math.max(Math.abs(su - s * a.su), Math.abs(sv - s * a.sv));
        if (d < mainLobe || c.p < a.p * sidelobeEnvelope(window, d)) keep = false;
      }
      if (!keep) break;
    }
    if (!keep) continue;
    // Confirm against the local background only now, for the few candidates left.
    const z = c.z / localLevel(u, v);
    if (z > threshold) accepted.push({ su, sv, p: c.p, z, k: c.k });
  }
  const fxFactor = Math.sqrt(windowVarianceFactor(spectrum.windowX, spectrum.windowY));
  const fyFactor = Math.sqrt(windowVarianceFactor(spectrum.windowY, spectrum.windowX));
  const spots: Spot[] = accepted.map((a) => {
    const u = ((a.su % w) + w) % w;
    const v = ((a.sv % h) + h) % h;
    const b = B[ringOf(a.k)];
    const at = (du: number, dv: number) => power[((v + dv + h) % h) * w + ((u + du + w) % w)];
    const amp = (du: number, dv: number) => Math.sqrt(Math.max(at(du, dv) - b, 1e-30));
    let du: number;
    let dv: number;
    if (window === 'tukey') {
      du = kernelRatioOffset(amp(-1, 0), amp(0, 0), amp(1, 0), spectrum.windowX);
      dv = kernelRatioOffset(amp(0, -1), amp(0, 0), amp(0, 1), spectrum.windowY);
    } else {
      du = magnitudeRatioOffset(amp(-1, 0), amp(0, 0), amp(1, 0), window);
      dv = magnitudeRatioOffset(amp(0, -1), amp(0, 0), amp(0, 1), window);
    }
    // Spot energy over the background in a 5 × 5 neighbourhood gives the plane wave's SNR:
    // E = (A²/4)·W·H·ΣW² and B = σ²·ΣW², so η = A²/(2σ²) = 2E/(B·W·H).
    let energy = 0;
    for (let j = -2; j <= 2; j++) for (let i = -2; i <= 2; i++) energy += at(i, j) - b;
    const snr = Math.max(energy, 0) / b / (w * h) * 2;
    const fx = (a.su + du) / w;
    const fy = (a.sv + dv) / h;
    const f = Math.hypot(fx, fy);
    const sx = frequencyCrbStd(snr, w, h) * fxFactor;
    const sy = frequencyCrbStd(snr, h, w) * fyFactor;
    const sRad = Math.sqrt((fx * fx * sx * sx + fy * fy * sy * sy) / (f * f));
    const sTan = Math.sqrt((fy * fy * sx * sx + fx * fx * sy * sy) / (f * f));
    return {
      fx,
      fy,
      periodPx: 1 / f,
      angleDeg: frequencyAngleDeg(fx, fy),
      geometry: 'normal',
      u: { statisticalPx: sRad / (f * f), localVariationPx: 0, methodPx: 0 },
      uAngleDeg: ((sTan / f) * 180) / Math.PI,
      strength: a.z,
      flags: [],
      normalisedPower: a.z,
      snr,
      peakPower: a.p,
    };
  });
  spots.sort((a, b) => b.normalisedPower - a.normalisedPower);
  return { spots, threshold, searchedBins: searched, alpha };
}

/**
 * Angle between the fringe normals of two spots (or any two frequency vectors).
 *
 * Parameters: a, b with angleDeg in degrees.
 * Returns: the acute-or-right angle between the two directions, degrees in [0, 90].
 * Notes: a spot and its Friedel mate describe one direction, so directions are axial (modulo 180°).
 * Reference: interplanar angle from reciprocal-lattice vectors (common practice).
 */
export function angleBetweenDeg(a: { angleDeg: number }, b: { angleDeg: number }): number {
  for (const [k, s] of [['a', a], ['b', b]] as const) {
    if (!Number.isFinite(s?.angleDeg)) throw new RangeError(`${k}.angleDeg must be finite, got ${s?.angleDeg}`);
  }
  let d = Math.abs(a.angleDeg - b.angleDeg) % 180;
  if (d > 90) d = 180 - d;
  return d;
}

/** Radial (azimuthal) average of a power spectrum. */
export interface RadialProfile {
  /** Ring centre frequency, cycles/px. */
  frequencyPerPx: Float64Array;
  /** Ring d-spacing 1/f in px (Infinity for ring 0). */
  periodPx: Float64Array;
  /** Mean power per ring. */
  meanPower: Float64Array;
  /** Number of bins per ring. */
  count: Float64Array;
  /** Effective number of bins per independent sample (the window's 2D noise bandwidth). */
  binsPerSample: number;
}

/**
 * Radial (azimuthal) average of a power spectrum, for polycrystalline and fingerprint-like regions.
 *
 * Parameters: a power spectrum.
 * Returns: mean power per ring with ring frequency and d-spacing.
 * Notes: rings are 1/max(width, height) cycles/px wide, measured in physical frequency
 * (u/width, v/height), so a non-square region gives round rings. Only rings fully inside the
 * transform (up to the Nyquist frequency of the longer side) are complete; beyond that the counts
 * drop.
 * Reference: azimuthal integration of a 2D pattern (common practice).
 */
export function radialProfile(spectrum: PowerSpectrum): RadialProfile {
  const { width: w, height: h, power } = spectrum;
  const nMax = Math.max(w, h);
  const rings = Math.ceil(Math.SQRT1_2 * nMax) + 2;
  const sum = new Float64Array(rings);
  const count = new Float64Array(rings);
  for (let v = 0; v < h; v++) {
    const fy = signedIndex(v, h) / h;
    for (let u = 0; u < w; u++) {
      const r = Math.round(Math.hypot(signedIndex(u, w) / w, fy) * nMax);
      sum[r] += power[v * w + u];
      count[r] += 1;
    }
  }
  const meanPower = sum.map((s, r) => (count[r] > 0 ? s / count[r] : 0));
  const frequencyPerPx = new Float64Array(rings).map((_, r) => r / nMax);
  const periodPx = frequencyPerPx.map((f) => (f > 0 ? 1 / f : Infinity));
  const enbw = (x: Float64Array) => {
    let s = 0;
    let s2 = 0;
    for (const v of x) {
      s += v;
      s2 += v * v;
    }
    return (x.length * s2) / (s * s);
  };
  return { frequencyPerPx, periodPx, meanPower, count, binsPerSample: enbw(spectrum.windowX) * enbw(spectrum.windowY) };
}

/** Options of {@link findRings}. */
export interface RingOptions {
  /** Family-wise false-alarm probability over the rings searched (default 0.001). */
  alpha?: number;
  /** Shortest period searched in px (default 2: up to the Nyquist frequency). */
  minPeriodPx?: number;
  /** Longest period searched in px (default a quarter of the longer side). */
  maxPeriodPx?: number;
  /** Rings either side of a ring used for its running-median baseline (default 12). */
  baselineHalfWidth?: number;
}

/** A ring of the radial average. */
export interface Ring {
  /** d-spacing of the ring in px. */
  periodPx: number;
  /** Standard uncertainty of periodPx from the ring-mean noise (parabola vertex propagation). */
  uStatisticalPx: number;
  /** Ring frequency, cycles/px. */
  frequencyPerPx: number;
  /** Significance of the ring's excess over the baseline, in standard deviations. */
  strength: number;
}

/**
 * Rings (peaks) of a radial average, as d-spacings.
 *
 * Parameters: a radial profile; options.
 * Returns: rings, strongest first.
 * Notes: the baseline is a running median of the ring means. A ring mean over M bins of
 * exponential noise has relative standard deviation √(κ/M), κ the window's noise bandwidth in
 * bins (bins are not independent after windowing). A local maximum is a ring when its excess over
 * the baseline exceeds z σ with z the normal quantile of α / (rings searched) (Bonferroni). Its
 * position is the vertex of a parabola through the three excess values, with the ring-mean noise
 * propagated to the vertex for the uncertainty.
 * Reference: azimuthal average with Bonferroni-corrected peak test (common practice).
 */
export function findRings(profile: RadialProfile, options: RingOptions = {}): Ring[] {
  const n = profile.meanPower.length;
  const alpha = options.alpha ?? 0.001;
  if (!(alpha > 0 && alpha < 1)) throw new RangeError(`alpha must be in (0, 1), got ${alpha}`);
  const half = options.baselineHalfWidth ?? 12;
  if (!(Number.isInteger(half) && half >= 2)) throw new RangeError(`baselineHalfWidth must be an integer ≥ 2, got ${half}`);
  const nyquistRing = Math.floor(n / Math.SQRT2) - 1;
  const minP = options.minPeriodPx ?? 2;
  const maxP = options.maxPeriodPx ?? (2 * nyquistRing) / 4;
  if (!(minP >= 2)) throw new RangeError(`minPeriodPx must be ≥ 2, got ${minP}`);
  if (!(maxP > minP)) throw new RangeError(`maxPeriodPx (${maxP}) must exceed minPeriodPx (${minP})`);
  const f = profile.frequencyPerPx;
  const m = profile.meanPower;
  const base = new Float64Array(n);
  for (let r = 0; r < n; r++) {
    const win: number[] = [];
    for (let j = Math.max(1, r - half); j <= Math.min(nyquistRing, r + half); j++) win.push(m[j]);
    win.sort((a, b) => a - b);
    base[r] = win.length ? win[win.length >> 1] : 0;
  }
  const sigma = (r: number) => base[r] * Math.sqrt(profile.binsPerSample / Math.max(1, profile.count[r]));
  const lo = Math.max(2, Math.ceil(f.length && (1 / maxP) / (f[1] || 1)));
  const hi = Math.min(nyquistRing - 1, Math.floor((1 / minP) / (f[1] || 1)));
  const searched = Math.max(1, hi - lo + 1);
  const z = normalUpperQuantile(alpha / searched);
  const rings: Ring[] = [];
  for (let r = lo; r <= hi; r++) {
    if (!(m[r] > m[r - 1] && m[r] >= m[r + 1])) continue;
    const s = sigma(r);
    const strength = s > 0 ? (m[r] - base[r]) / s : 0;
    if (!(strength > z)) continue;
    const ym = m[r - 1] - base[r - 1];
    const y0 = m[r] - base[r];
    const yp = m[r + 1] - base[r + 1];
    const vertex = (a: number, b: number, c: number) => {
      const den = a - 2 * b + c;
      return den < 0 ? Math.max(-0.5, Math.min(0.5, (a - c) / (2 * den))) : 0;
    };
    const delta = vertex(ym, y0, yp);
    // Propagate each ring mean's noise to the vertex by finite differences.
    let varDelta = 0;
    const sig = [sigma(r - 1), s, sigma(r + 1)];
    const ys = [ym, y0, yp];
    for (let i = 0; i < 3; i++) {
      const e = sig[i] * 1e-3;
      const yy = ys.slice();
      yy[i] += e;
      const g = (vertex(yy[0], yy[1], yy[2]) - delta) / e;
      varDelta += (g * sig[i]) ** 2;
    }
    const fr = (r + delta) * f[1];
    const sf = Math.sqrt(varDelta) * f[1];
    rings.push({ periodPx: 1 / fr, uStatisticalPx: sf / (fr * fr), frequencyPerPx: fr, strength });
  }
  rings.sort((a, b) => b.strength - a.strength);
  return rings;
}

/**
 * A ring as the record's Periodicity: geometry 'ring' (no direction, angle 0), strength its significance.
 * @param ring a ring of {@link findRings}
 * @returns the Periodicity with the ring's statistical uncertainty
 */
export function ringPeriodicity(ring: Ring): Periodicity {
  return {
    periodPx: ring.periodPx,
    angleDeg: 0,
    geometry: 'ring',
    u: { statisticalPx: ring.uStatisticalPx, localVariationPx: 0, methodPx: 0 },
    uAngleDeg: 0,
    strength: ring.strength,
    flags: [],
  };
}
