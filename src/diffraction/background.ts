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
