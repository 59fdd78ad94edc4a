/**
 * Savitzky–Golay smoothing.
 */
import { solveLinear } from './lm';

/** Options of savitzkyGolay. */
export interface SavitzkyGolayOptions {
  /** Half window in points: the window is 2·halfWindow + 1 (default 5). */
  halfWindow?: number;
  /** Polynomial order, below the window length (default 2). */
  order?: number;
}

/** Weights that give the fitted polynomial's value at offset `at` within window [−left, right]. */
function sgWeights(left: number, right: number, order: number, at: number): Float64Array {
  const k = order + 1;
  const len = left + right + 1;
  const ata = new Float64Array(k * k);
  for (let i = 0; i < len; i++) {
    const t = i - left;
    for (let a = 0; a < k; a++) for (let b = 0; b < k; b++) ata[a * k + b] += t ** (a + b);
  }
  const e = new Float64Array(k);
  for (let a = 0; a < k; a++) e[a] = at ** a;
  const c = solveLinear(ata, e, k);
  if (!c) throw new RangeError(`Savitzky–Golay window ${len} too short for order ${order}`);
  const w = new Float64Array(len);
  for (let i = 0; i < len; i++) {
    const t = i - left;
    let s = 0;
    for (let a = 0; a < k; a++) s += c[a] * t ** a;
    w[i] = s;
  }
  return w;
}

/**
 * Savitzky–Golay smoothing: each point is replaced by the value of a least-squares polynomial
 * fitted over the window around it (the points are assumed evenly spaced).
 *
 * @param y samples
 * @param options half window and polynomial order
 * @returns smoothed samples; near the ends the window is kept full length and the polynomial is
 *   evaluated off-centre, so no point is dropped
 * Reference: Savitzky & Golay, Anal. Chem. 36, 1627 (1964).
 */
export function savitzkyGolay(y: ArrayLike<number>, options: SavitzkyGolayOptions = {}): Float64Array {
  const h = options.halfWindow ?? 5;
  const order = options.order ?? 2;
  if (!Number.isInteger(h) || h < 1) throw new RangeError(`halfWindow must be a positive integer, got ${h}`);
  if (!Number.isInteger(order) || order < 0 || order >= 2 * h + 1) throw new RangeError(`order must be an integer in [0, ${2 * h}], got ${order}`);
  const n = y.length;
  if (n < 2 * h + 1) throw new RangeError(`savitzkyGolay needs at least ${2 * h + 1} points, got ${n}`);
  const out = new Float64Array(n);
  const centre = sgWeights(h, h, order, 0);
  for (let i = h; i < n - h; i++) {
    let s = 0;
    for (let j = -h; j <= h; j++) s += centre[j + h] * y[i + j];
    out[i] = s;
  }
  for (let i = 0; i < h; i++) {
    const wl = sgWeights(0, 2 * h, order, i);
    const wr = sgWeights(2 * h, 0, order, -i);
    let sl = 0;
    let sr = 0;
    for (let j = 0; j <= 2 * h; j++) {
      sl += wl[j] * y[j];
      sr += wr[j] * y[n - 1 - 2 * h + j];
    }
    out[i] = sl;
    out[n - 1 - i] = sr;
  }
  return out;
}
