/**
 * Background estimation for diffraction patterns.
 */

/** Options of snipBackground. */
export interface SnipOptions {
  /** Largest clipping half-window in points: about the full base width of the widest peak (default 40). */
  iterations?: number;
  /** Apply the LLS (log–log–square-root) operator before clipping (default true); needs y ≥ 0. */
  lls?: boolean;
}

/**
 * SNIP background: iterative clipping v(i) ← min(v(i), (v(i−p) + v(i+p))/2) for p = 1 … m, on
 * the LLS-transformed data v = ln(ln(√(y+1)+1)+1), then transformed back.
 *
 * @param y intensities (values below 0 are clipped to 0 for the LLS transform)
 * @param options clipping window and transform
 * @returns the background, same length as y, never above y
 *
 * Notes: the window must exceed the peaks' half base width or peaks leak into the background,
 * and broad features (amorphous humps) wider than the window stay in the background by design.
 * Points within p of either end are clipped with the window shortened to fit.
 * Reference: Ryan, Clayton, Griffin, Sie & Cousens, Nucl. Instrum. Methods B 34, 396 (1988).
 */
export function snipBackground(y: ArrayLike<number>, options: SnipOptions = {}): Float64Array {
  const n = y.length;
  const m = options.iterations ?? 40;
  if (!Number.isInteger(m) || m < 1) throw new RangeError(`iterations must be a positive integer, got ${m}`);
  if (n < 3) throw new RangeError(`snipBackground needs at least 3 points, got ${n}`);
  const lls = options.lls ?? true;
  const fwd = (v: number) => (lls ? Math.log(Math.log(Math.sqrt(Math.max(0, v) + 1) + 1) + 1) : v);
  const inv = (v: number) => {
    if (!lls) return v;
    const s = Math.exp(Math.exp(v) - 1) - 1;
    return s * s - 1;
  };
  let v = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    if (!Number.isFinite(y[i])) throw new RangeError(`y[${i}] = ${y[i]} is not finite`);
    v[i] = fwd(y[i]);
  }
  let next = new Float64Array(n);
  for (let p = 1; p <= m; p++) {
    for (let i = 0; i < n; i++) {
      const q = Math.min(p, i, n - 1 - i);
      if (q < 1) {
        next[i] = v[i];
        continue;
      }
      const mean = 0.5 * (v[i - q] + v[i + q]);
      next[i] = mean < v[i] ? mean : v[i];
    }
    [v, next] = [next, v];
  }
  const out = new Float64Array(n);
  for (let i = 0; i < n; i++) out[i] = Math.min(inv(v[i]), y[i]);
  return out;
}

/** Options of localBackground. */
export interface LocalBackgroundOptions {
  /** Half width of the local fit window, in axis units: larger than every peak's base, smaller than a halo. */
  halfWidth: number;
  /** Points to leave out of the fit (1: under a peak), interpolated by the fits on either side. */
  mask?: Uint8Array;
  /** Fit ln(y) (default: true when every y > 0): exponential air scatter and halos are near-quadratic there. */
  log?: boolean;
  /** Asymmetric robustness iterations (default 4). */
  iterations?: number;
  /**
   * Half window in points over which residuals are averaged before the robustness weights are
   * taken from them (default 0: each point alone). A broad weak peak, well below one standard
   * deviation per point, stands clear once averaged over its width.
   */
  robustHalfWindow?: number;
}

/**
 * Background as a locally weighted quadratic regression (LOESS) of the pattern, with asymmetric
 * robustness weights: points standing more than one standard deviation above the current
 * background are weighted down (to zero beyond three), so peaks do not lift it; masked points
 * (known peaks) are left out and bridged by the fits around them. Smooth features broader than
 * the window — air scatter, amorphous halos — stay in the background.
 *
 * @param x abscissae (increasing)
 * @param y intensities
 * @param variance variance of each y (> 0)
 * @param options window half width, mask, log fit, iterations
 * @returns the background at every point
 * Notes: the fit is evaluated on a grid of about sixteen points per window and interpolated in
 * between; a window with fewer than three usable points on either side of its centre is widened
 * (up to the whole pattern), so a mask wider than the window is bridged.
 * Reference: Cleveland, J. Am. Stat. Assoc. 74, 829 (1979) (LOWESS with robustness iterations);
 * asymmetric weights for baselines as in Eilers & Boelens (2005), asymmetric least squares (from memory).
 */
export function localBackground(x: ArrayLike<number>, y: ArrayLike<number>, variance: ArrayLike<number>, options: LocalBackgroundOptions): Float64Array {
  const n = x.length;
  if (n < 5) throw new RangeError(`localBackground needs at least 5 points, got ${n}`);
  if (y.length !== n || variance.length !== n) throw new RangeError(`x, y and variance must have one length, got ${n}, ${y.length}, ${variance.length}`);
  const h0 = options.halfWidth;
  if (!(h0 > 0) || !Number.isFinite(h0)) throw new RangeError(`halfWidth must be positive, got ${h0}`);
  const iterations = options.iterations ?? 4;
  let positive = true;
  for (let i = 0; i < n; i++) if (!(y[i] > 0) && !(options.mask && options.mask[i])) positive = false;
  const useLog = (options.log ?? positive) && positive;
  const v = new Float64Array(n);
  const w0 = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const s2 = Math.max(variance[i], 1e-300);
    if (useLog) {
      v[i] = Math.log(Math.max(y[i], 1e-300));
      w0[i] = (y[i] * y[i]) / s2; // var(ln y) = σ²/y²
    } else {
      v[i] = y[i];
      w0[i] = 1 / s2;
    }
    if (options.mask && options.mask[i]) w0[i] = 0;
  }
  const robust = new Float64Array(n).fill(1);
  const span = x[n - 1] - x[0];
  const stepX = span / (n - 1);
  const gridStride = Math.max(1, Math.floor(h0 / stepX / 8));
  const grid: number[] = [];
  for (let i = 0; i < n; i += gridStride) grid.push(i);
  if (grid[grid.length - 1] !== n - 1) grid.push(n - 1);
  const out = new Float64Array(n);
  const gv = new Float64Array(grid.length);
  const firstAtLeast = (v0: number) => {
    let a = 0;
    let b = n;
    while (a < b) {
      const mid = (a + b) >>> 1;
      if (x[mid] < v0) a = mid + 1;
      else b = mid;
    }
    return a;
  };
  for (let it = 0; it <= iterations; it++) {
    grid.forEach((c, gi) => {
      const xc = x[c];
      let h = h0;
      let value = NaN;
      for (let widen = 0; widen < 8 && Number.isNaN(value); widen++, h *= 1.6) {
        let left = 0;
        let right = 0;
        // weighted sums for a quadratic in t = (x − xc)/h with tricube weights
        let s0 = 0, s1 = 0, s2 = 0, s3 = 0, s4 = 0, b0 = 0, b1 = 0, b2 = 0;
        for (let j = firstAtLeast(xc - h); j < n && x[j] <= xc + h; j++) {
          const wj = w0[j] * robust[j];
          if (!(wj > 0)) continue;
          const t = (x[j] - xc) / h;
          const a = 1 - Math.abs(t) ** 3;
          const ww = wj * a * a * a;
          if (!(ww > 0)) continue;
          if (t < 0) left++;
          else right++;
          const t2 = t * t;
          s0 += ww;
          s1 += ww * t;
          s2 += ww * t2;
          s3 += ww * t2 * t;
          s4 += ww * t2 * t2;
          b0 += ww * v[j];
          b1 += ww * t * v[j];
          b2 += ww * t2 * v[j];
        }
        // near an end only one side can have points; elsewhere both sides must, or the window widens
        const nearStart = xc - x[0] < h;
        const nearEnd = x[n - 1] - xc < h;
        if ((left < 3 && !nearStart) || (right < 3 && !nearEnd) || left + right < 6) continue;
        const det = s0 * (s2 * s4 - s3 * s3) - s1 * (s1 * s4 - s3 * s2) + s2 * (s1 * s3 - s2 * s2);
        value = Math.abs(det) > 1e-12 * s0 * s2 * s4 ? (b0 * (s2 * s4 - s3 * s3) - s1 * (b1 * s4 - s3 * b2) + s2 * (b1 * s3 - s2 * b2)) / det : b0 / s0;
      }
      gv[gi] = value;
    });
    // interpolate the grid, fill any point the fits could not reach with its nearest neighbour's value
    for (let g = 0; g < grid.length; g++) if (!Number.isFinite(gv[g])) gv[g] = g > 0 ? gv[g - 1] : NaN;
    for (let g = grid.length - 1; g >= 0; g--) if (!Number.isFinite(gv[g])) gv[g] = g < grid.length - 1 ? gv[g + 1] : 0;
    for (let g = 0; g < grid.length - 1; g++) {
      const a = grid[g];
      const b = grid[g + 1];
      for (let i = a; i <= b; i++) {
        const f = b === a ? 0 : (x[i] - x[a]) / (x[b] - x[a]);
        const val = gv[g] + f * (gv[g + 1] - gv[g]);
        out[i] = useLog ? Math.exp(val) : val;
      }
    }
    if (it === iterations) break;
    // asymmetric robustness: weight down points above the background by more than 1σ (of the
    // residual averaged over ±robustHalfWindow points, with the variance of that average)
    const hw = Math.max(0, Math.min(Math.floor((n - 1) / 2), Math.round(options.robustHalfWindow ?? 0)));
    let sumR = 0;
    let sumV = 0;
    const res = new Float64Array(n);
    for (let i = 0; i < n; i++) res[i] = y[i] - out[i];
    for (let i = 0; i < Math.min(n, hw); i++) {
      sumR += res[i];
      sumV += variance[i];
    }
    for (let i = 0; i < n; i++) {
      const add = i + hw;
      if (add < n) {
        sumR += res[add];
        sumV += variance[add];
      }
      const drop = i - hw - 1;
      if (drop >= 0) {
        sumR -= res[drop];
        sumV -= variance[drop];
      }
      const r = sumR / Math.sqrt(Math.max(sumV, 1e-300));
      robust[i] = r <= 1 ? 1 : r >= 3 ? 0 : (1 - ((r - 1) / 2) ** 2) ** 2;
    }
  }
  return out;
}

/** A broad hump of the background: an amorphous halo (or another feature far broader than any peak). */
export interface Halo {
  /** Position of its maximum (pattern axis). */
  position: number;
  /** FWHM (pattern axis). */
  fwhm: number;
  /** Height above the background beneath it. */
  height: number;
}

/**
 * Finds the broad humps of a background curve: the background less its own SNIP baseline taken
 * with a window of `baselineHalfWidth` (convex trends such as air scatter stay in the baseline,
 * concave humps are removed by the clipping), keeping each local maximum at least `minHeight`
 * high, at least `minRelative` of the baseline beneath it, and `minFwhm` wide.
 *
 * @param x abscissae
 * @param background the background curve (e.g. from localBackground)
 * @param options minimum FWHM and height, and the baseline window (axis units)
 * @returns the halos by position
 * Reference: SNIP clipping (Ryan et al., NIM B 34, 396 (1988)) applied to the background itself.
 */
export function findHalos(x: ArrayLike<number>, background: ArrayLike<number>, options: { minFwhm: number; minHeight: number; minRelative?: number; baselineHalfWidth: number }): Halo[] {
  const n = x.length;
  if (n < 5) return [];
  const step = (x[n - 1] - x[0]) / (n - 1);
  const m = Math.max(1, Math.min(Math.floor((n - 1) / 2), Math.round(options.baselineHalfWidth / step)));
  const base = snipBackground(background, { iterations: m });
  const hump = new Float64Array(n);
  for (let i = 0; i < n; i++) hump[i] = background[i] - base[i];
  const out: Halo[] = [];
  for (let i = 1; i < n - 1; i++) {
    if (!(hump[i] >= hump[i - 1] && hump[i] > hump[i + 1])) continue;
    if (hump[i] < options.minHeight || hump[i] < (options.minRelative ?? 0) * base[i]) continue;
    const half = hump[i] / 2;
    let l = i;
    while (l > 0 && hump[l] > half) l--;
    let r = i;
    while (r < n - 1 && hump[r] > half) r++;
    if (hump[l] > half || hump[r] > half) continue; // a hump cut by the pattern's end is not measured
    const fwhm = x[r] - x[l];
    if (fwhm < options.minFwhm) continue;
    out.push({ position: x[i], fwhm, height: hump[i] });
  }
  return out;
}
