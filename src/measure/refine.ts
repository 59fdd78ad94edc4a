/**
 * Final refinement of a spectrum spot by maximising a lightly tapered periodogram, which wastes
 * fewer samples than the Hann window used for detection and so comes closer to the Cramér–Rao bound.
 */
import type { GreyImage, PixelArray } from '../image/grey-image';
import { frequencyCrbStd, solve } from './period-profile';
import { frequencyAngleDeg, type RectPx, type Spot } from './spectrum';
import { windowSamples, windowVarianceFactor } from './window';

/** Options of {@link refineSpot}. */
export interface RefineSpotOptions {
  /** Tukey taper fraction of the refinement window (0 < α ≤ 1, default 0.3). */
  tukeyAlpha?: number;
  /** Most Newton iterations (default 4; it stops earlier once a step is below 1e-5 bin). */
  iterations?: number;
  /**
   * Weights per pixel of the area (row-major, width · height), multiplying the window: the
   * fit then uses only where the weights are (e.g. the spot's support from spotSupport).
   * The weighted mean is removed first. Default: none (the window alone).
   */
  weights?: Float32Array;
  /** Farthest the maximum may lie from the starting frequency, in bins (default 0.5; a small support widens the peak). */
  maxShiftBins?: number;
}

/**
 * An area of an image with its mean and a separable Tukey window, ready for refineSpot. The
 * pixels are read from the image itself (no copy): the image must not change while it is used.
 */
export interface RefineData {
  /** The area (image pixels). */
  area: RectPx;
  /** The image's pixels, row-major (the image's own array). */
  pixels: PixelArray;
  /** Row length of `pixels` (the image width). */
  strideX: number;
  /** Mean of the area's pixels, removed before windowing. */
  mean: number;
  /** Slopes of the least-squares plane through the area's pixels (grey values per px along x and y), removed with the mean. */
  slopeX: number;
  slopeY: number;
  /** The windows along x and y. */
  windowX: Float64Array;
  windowY: Float64Array;
}

/**
 * Prepares the data of an area for {@link refineSpot} (done once per region).
 *
 * Parameters: image; area (inside the image); tukeyAlpha (default 0.3; 1 is the Hann window).
 * Returns: the area with its mean and least-squares plane (removed before windowing, so an uneven
 * illumination does not leak into the spot) and the separable Tukey window.
 * Reference: Tukey (tapered cosine) window, Harris, Proc. IEEE 66(1), 51 (1978).
 */
export function refineData(image: GreyImage, area: RectPx, tukeyAlpha = 0.3): RefineData {
  const { x, y, width: w, height: h } = area;
  if (x < 0 || y < 0 || x + w > image.width || y + h > image.height) {
    throw new RangeError(`area x ${x}, y ${y}, ${w} × ${h} lies outside the ${image.width} × ${image.height} image`);
  }
  const wx = windowSamples('tukey', w, tukeyAlpha);
  const wy = windowSamples('tukey', h, tukeyAlpha);
  const d = image.data;
  const cx = (w - 1) / 2;
  const cy = (h - 1) / 2;
  let sum = 0;
  let sx = 0;
  let sy = 0;
  for (let j = 0; j < h; j++) {
    const o = (y + j) * image.width + x;
    let row = 0;
    for (let i = 0; i < w; i++) {
      const v = d[o + i];
      row += v;
      sx += (i - cx) * v;
    }
    sum += row;
    sy += (j - cy) * row;
  }
  // least-squares plane on centred coordinates: slopes decouple from the mean
  const slopeX = w > 1 ? sx / ((h * w * (w * w - 1)) / 12) : 0;
  const slopeY = h > 1 ? sy / ((w * h * (h * h - 1)) / 12) : 0;
  return { area, pixels: d, strideX: image.width, mean: sum / (w * h), slopeX, slopeY, windowX: wx, windowY: wy };
}

/**
 * Refines a spot's frequency vector to the maximum of the Tukey-windowed periodogram.
 *
 * Parameters: data from {@link refineData}; spot (from findSpots on the same area, which supplies
 * the starting point and the SNR); options.
 * Returns: the spot with refined fx, fy, period, angle and their uncertainties, or null when the
 * iteration does not converge within half a bin of the start (the caller keeps the original).
 * Notes: Newton's method on J(ω) = |Σ wₓ w_y d e^(−i(ωₓx + ω_y y))|², with the gradient and Hessian
 * from first and second moments of the windowed data, evaluated row by row (O(N) per step), at
 * most `iterations` steps, fewer once a step is below 1e-5 bin. The
 * periodogram maximiser is the maximum-likelihood frequency estimate for one tone in white noise;
 * the light taper keeps leakage from the region's edges and other spots small while the variance
 * stays close to the bound: factor √F ≈ 1.27 for α = 0.3 instead of 1.88 for Hann
 * ({@link windowVarianceFactor}).
 * Reference: Rife & Boorstyn, IEEE Trans. Inf. Theory 20(5), 591–598 (1974) (periodogram maximum as ML estimator).
 */
export function refineSpot(data: RefineData, spot: Spot, options: RefineSpotOptions = {}): Spot | null {
  const iterations = options.iterations ?? (options.weights ? 12 : 4);
  if (!(Number.isInteger(iterations) && iterations >= 1)) throw new RangeError(`iterations must be a positive integer, got ${iterations}`);
  const { x: x0, y: y0, width: w, height: h } = data.area;
  const { pixels, strideX, windowX: wx, windowY: wy } = data;
  const weights = options.weights;
  const maxShift = options.maxShiftBins ?? 0.5;
  if (!(maxShift > 0)) throw new RangeError(`maxShiftBins must be positive, got ${maxShift}`);
  if (weights && weights.length !== w * h) throw new RangeError(`weights must have ${w} × ${h} = ${w * h} values, got ${weights.length}`);
  const cxp = (w - 1) / 2;
  const slopeX = data.slopeX;
  const slopeY = data.slopeY;
  const planeX = new Float64Array(w);
  for (let i = 0; i < w; i++) planeX[i] = slopeX * (i - cxp);
  let mean = data.mean;
  // each row's span of non-zero weights [spans[2j], spans[2j + 1]): the sums skip the zeros
  // outside a crystal's support, whose terms are exactly 0 (the pixels are finite)
  let spans: Int32Array | null = null;
  if (weights) {
    spans = new Int32Array(2 * h);
    const sums = new Float64Array(2);
    weightedPlaneResidual(pixels, strideX, x0, y0, w, h, data.mean, slopeY, planeX, weights, wx, wy, spans, sums);
    const [sw, swd] = sums;
    if (!(sw > 0)) return null;
    mean = data.mean + swd / sw;
  }
  const cx = (w - 1) / 2;
  let ox = 2 * Math.PI * spot.fx;
  let oy = 2 * Math.PI * spot.fy;
  const ox0 = ox;
  const oy0 = oy;
  const er = new Float64Array(w);
  const ei = new Float64Array(w);
  const moments = new Float64Array(12);
  for (let it = 0; it < iterations; it++) {
    // the x window is folded into the row kernel, the y window into each row's sums
    for (let i = 0; i < w; i++) {
      er[i] = wx[i] * Math.cos(ox * (i - cx));
      ei[i] = -wx[i] * Math.sin(ox * (i - cx));
    }
    // Y = Σ_y e_y R0, Y_x = −i Σ e_y R1, Y_xx = −Σ e_y R2, Y_y = −i Σ y e_y R0, Y_yy = −Σ y² e_y R0, Y_xy = −Σ y e_y R1.
    periodogramMoments(pixels, strideX, x0, y0, w, h, mean, slopeY, planeX, weights ?? null, spans, er, ei, wy, oy, moments);
    const yr = moments[0], yi = moments[1], xr = moments[2], xi = moments[3], xxr = moments[4], xxi = moments[5];
    const gyr = moments[6], gyi = moments[7], yyr = moments[8], yyi = moments[9], xyr = moments[10], xyi = moments[11];
    // J = |Y|²; ∂J = 2 Re(Y* ∂Y); ∂²J = 2 Re(∂aY* ∂bY + Y* ∂a∂bY).
    const re = (ar: number, ai: number, br: number, bi: number) => ar * br + ai * bi; // Re(a* b)
    const gx = 2 * re(yr, yi, xr, xi);
    const gy = 2 * re(yr, yi, gyr, gyi);
    const hxx = 2 * (re(xr, xi, xr, xi) + re(yr, yi, xxr, xxi));
    const hyy = 2 * (re(gyr, gyi, gyr, gyi) + re(yr, yi, yyr, yyi));
    const hxy = 2 * (re(xr, xi, gyr, gyi) + re(yr, yi, xyr, xyi));
    const det = hxx * hyy - hxy * hxy;
    if (!(hxx < 0 && det > 0)) return null; // not at a maximum
    const step = solve(Float64Array.from([hxx, hxy, hxy, hyy]), Float64Array.from([-gx, -gy]), 2);
    ox += step[0];
    oy += step[1];
    if (Math.abs(ox - ox0) > (2 * Math.PI * maxShift) / w || Math.abs(oy - oy0) > (2 * Math.PI * maxShift) / h) return null;
    // Newton converges quadratically: after a step below 1e-5 bin the error left is ~1e-10 bin
    if (Math.abs(step[0]) < (2e-5 * Math.PI) / w && Math.abs(step[1]) < (2e-5 * Math.PI) / h) break;
  }
  const fx = ox / (2 * Math.PI);
  const fy = oy / (2 * Math.PI);
  const f = Math.hypot(fx, fy);
  const sx = frequencyCrbStd(spot.snr, w, h) * Math.sqrt(windowVarianceFactor(data.windowX, data.windowY));
  const sy = frequencyCrbStd(spot.snr, h, w) * Math.sqrt(windowVarianceFactor(data.windowY, data.windowX));
  const sRad = Math.sqrt((fx * fx * sx * sx + fy * fy * sy * sy) / (f * f));
  const sTan = Math.sqrt((fy * fy * sx * sx + fx * fx * sy * sy) / (f * f));
  return {
    ...spot,
    fx,
    fy,
    periodPx: 1 / f,
    u: { ...spot.u, statisticalPx: sRad / (f * f) },
    angleDeg: frequencyAngleDeg(fx, fy),
    uAngleDeg: ((sTan / f) * 180) / Math.PI,
  };
}

/**
 * The weighted sums of what the plane leaves, Σ q and Σ q·(d − plane) with q = weight · wx · wy,
 * and each row's span of non-zero weights: the weighted mean's loop of refineSpot, kept in a
 * function of typed arrays and numbers only (as periodogramMoments), so the engine compiles it once
 * and its running sums never become heap objects.
 *
 * Parameters: the area's pixels (row length strideX, top-left x0, y0, size w × h), the plane's
 * mean, y slope and x plane per column, the weights (w · h), the windows wx and wy; spans gets
 * [first, last + 1) of each row's non-zero weights (first = w when there are none), sums gets
 * [Σ q, Σ q·(d − plane)].
 * Reference: weighted mean (common practice).
 */
function weightedPlaneResidual(
  pixels: PixelArray, strideX: number, x0: number, y0: number, w: number, h: number, mean: number, slopeY: number,
  planeX: Float64Array, weights: Float32Array, wx: Float64Array, wy: Float64Array, spans: Int32Array, sums: Float64Array,
): void {
  const cyp = (h - 1) / 2;
  let sw = 0;
  let swd = 0;
  for (let j = 0; j < h; j++) {
    const o = (y0 + j) * strideX + x0;
    const py = mean + slopeY * (j - cyp);
    let first = w;
    let last = -1;
    for (let i = 0; i < w; i++) {
      const wi = weights[j * w + i];
      if (wi !== 0) {
        if (first === w) first = i;
        last = i;
      }
      const q = wi * wx[i] * wy[j];
      sw += q;
      swd += q * (pixels[o + i] - py - planeX[i]);
    }
    spans[2 * j] = first;
    spans[2 * j + 1] = last + 1;
  }
  sums[0] = sw;
  sums[1] = swd;
}

/**
 * The windowed periodogram's value and its first and second derivatives at (ωx, ωy) as complex
 * moments, summed row by row: the inner loop of refineSpot, kept in a function of typed arrays and
 * numbers only, so that the engine compiles it once for every call (the options and spots around
 * it vary in shape) and its running sums never become heap objects.
 *
 * Parameters: the area's pixels (row length strideX, top-left x0, y0, size w × h), the mean and
 * y slope removed per row and the x plane per column, optional per-pixel weights (w · h) with each row's span of non-zero weights (spans[2j] to spans[2j + 1], end excluded), the
 * row kernel er + i·ei (x window and phase folded in), the y window wy and frequency oy; out gets
 * Y, Y_x, Y_xx, Y_y, Y_yy, Y_xy as (re, im) pairs, 12 numbers.
 * Reference: Rife & Boorstyn (1974), as refineSpot.
 */
function periodogramMoments(
  pixels: PixelArray, strideX: number, x0: number, y0: number, w: number, h: number, mean: number, slopeY: number,
  planeX: Float64Array, weights: Float32Array | null, spans: Int32Array | null, er: Float64Array, ei: Float64Array, wy: Float64Array, oy: number, out: Float64Array,
): void {
  const cx = (w - 1) / 2;
  const cy = (h - 1) / 2;
  const cyp = cy;
  let yr = 0, yi = 0, xr = 0, xi = 0, xxr = 0, xxi = 0, gyr = 0, gyi = 0, yyr = 0, yyi = 0, xyr = 0, xyi = 0;
  for (let j = 0; j < h; j++) {
    const wj = wy[j];
    if (wj === 0) continue;
    let r0r = 0, r0i = 0, r1r = 0, r1i = 0, r2r = 0, r2i = 0;
    const o = (y0 + j) * strideX + x0;
    const wo = j * w;
    const base = mean + slopeY * (j - cyp);
    // two copies of the row loop on purpose: the unweighted fit (most spots) does no weight load per pixel
    if (weights && spans) {
      const iEnd = spans[2 * j + 1];
      for (let i = spans[2 * j]; i < iEnd; i++) {
        const d = (pixels[o + i] - base - planeX[i]) * weights[wo + i];
        const ar = d * er[i];
        const ai = d * ei[i];
        const t = i - cx;
        r0r += ar;
        r0i += ai;
        r1r += t * ar;
        r1i += t * ai;
        r2r += t * t * ar;
        r2i += t * t * ai;
      }
    } else {
      for (let i = 0; i < w; i++) {
        const d = pixels[o + i] - base - planeX[i];
        const ar = d * er[i];
        const ai = d * ei[i];
        const t = i - cx;
        r0r += ar;
        r0i += ai;
        r1r += t * ar;
        r1i += t * ai;
        r2r += t * t * ar;
        r2i += t * t * ai;
      }
    }
    const s = j - cy;
    // the row's phase e^(−i ω_y s) times its window weight
    const c = wj * Math.cos(oy * s);
    const sn = -wj * Math.sin(oy * s);
    const a0r = r0r * c - r0i * sn;
    const a0i = r0r * sn + r0i * c;
    const a1r = r1r * c - r1i * sn;
    const a1i = r1r * sn + r1i * c;
    const a2r = r2r * c - r2i * sn;
    const a2i = r2r * sn + r2i * c;
    yr += a0r;
    yi += a0i;
    xr += a1i; // −i·(a + ib) = b − ia
    xi += -a1r;
    xxr += -a2r;
    xxi += -a2i;
    gyr += s * a0i;
    gyi += -s * a0r;
    yyr += -s * s * a0r;
    yyi += -s * s * a0i;
    xyr += -s * a1r;
    xyi += -s * a1i;
  }
  out[0] = yr; out[1] = yi; out[2] = xr; out[3] = xi; out[4] = xxr; out[5] = xxi;
  out[6] = gyr; out[7] = gyi; out[8] = yyr; out[9] = yyi; out[10] = xyr; out[11] = xyi;
}
