/**
 * Summary statistics for distributions of measured values (sheet thickness, layer counts,
 * periods), pooled over any number of images.
 *
 * Pure functions on plain number arrays; non-finite values are rejected, not skipped, so a
 * caller always knows what went into a number.
 */

/** The summary of one sample. */
export interface Summary {
  /** Number of values. */
  n: number;
  /** Arithmetic mean. */
  mean: number;
  /** Sample standard deviation (n − 1 in the denominator); 0 for a single value. */
  sd: number;
  /** Median (the 0.5 quantile, Hyndman & Fan type 7). */
  median: number;
  /** First quartile (type 7). */
  q1: number;
  /** Third quartile (type 7). */
  q3: number;
  /** Smallest value. */
  min: number;
  /** Largest value. */
  max: number;
  /** 95 % confidence interval of the mean, [low, high], Student t with n − 1 degrees of freedom; null for n < 2. */
  ci95: [number, number] | null;
}

function checkValues(values: ArrayLike<number>, what: string): void {
  for (let i = 0; i < values.length; i++) {
    if (!Number.isFinite(values[i])) throw new RangeError(`${what}[${i}] must be finite, got ${values[i]}`);
  }
}

/**
 * Sample quantile by linear interpolation between order statistics.
 *
 * Hyndman & Fan, "Sample quantiles in statistical packages", Am. Stat. 50, 361 (1996), definition 7.
 *
 * @param sorted values sorted ascending (not checked for order; use `quantile` for unsorted data)
 * @param p probability in [0, 1]
 * @returns Q(p) = x[j] + g (x[j+1] − x[j]) with h = (n − 1) p, j = floor(h), g = h − j (0-based)
 * Notes: type 7 is the default of many statistics environments; Q(0) = min and Q(1) = max.
 */
export function quantileSorted(sorted: ArrayLike<number>, p: number): number {
  if (sorted.length === 0) throw new RangeError('quantile of an empty sample is undefined (length 0)');
  if (!(p >= 0 && p <= 1)) throw new RangeError(`p must be in [0, 1], got ${p}`);
  const h = (sorted.length - 1) * p;
  const j = Math.floor(h);
  const g = h - j;
  if (j + 1 >= sorted.length) return sorted[sorted.length - 1];
  return sorted[j] + g * (sorted[j + 1] - sorted[j]);
}

/** Quantile (Hyndman & Fan type 7) of unsorted values; see `quantileSorted`. */
export function quantile(values: ArrayLike<number>, p: number): number {
  checkValues(values, 'values');
  const sorted = Float64Array.from(values as ArrayLike<number>).sort();
  return quantileSorted(sorted, p);
}

/** Natural log of the gamma function, x > 0 (Lanczos approximation, g = 7, 9 terms). */
function lnGamma(x: number): number {
  // Lanczos, SIAM J. Numer. Anal. B 1, 86 (1964); coefficients for g = 7, n = 9 (common practice).
  const c = [
    0.99999999999980993, 676.5203681218851, -1259.1392167224028, 771.32342877765313, -176.61502916214059,
    12.507343278686905, -0.13857109526572012, 9.9843695780195716e-6, 1.5056327351493116e-7,
  ];
  if (x < 0.5) return Math.log(Math.PI / Math.abs(Math.sin(Math.PI * x))) - lnGamma(1 - x);
  x -= 1;
  let a = c[0];
  const t = x + 7.5;
  for (let i = 1; i < 9; i++) a += c[i] / (x + i);
  return 0.5 * Math.log(2 * Math.PI) + (x + 0.5) * Math.log(t) - t + Math.log(a);
}

/** Continued fraction for the incomplete beta function (modified Lentz). */
function betaContinuedFraction(a: number, b: number, x: number): number {
  const tiny = 1e-300;
  let c = 1;
  let d = 1 - ((a + b) * x) / (a + 1);
  if (Math.abs(d) < tiny) d = tiny;
  d = 1 / d;
  let h = d;
  for (let m = 1; m <= 300; m++) {
    const m2 = 2 * m;
    let aa = (m * (b - m) * x) / ((a + m2 - 1) * (a + m2));
    d = 1 + aa * d;
    if (Math.abs(d) < tiny) d = tiny;
    c = 1 + aa / c;
    if (Math.abs(c) < tiny) c = tiny;
    d = 1 / d;
    h *= d * c;
    aa = (-(a + m) * (a + b + m) * x) / ((a + m2) * (a + m2 + 1));
    d = 1 + aa * d;
    if (Math.abs(d) < tiny) d = tiny;
    c = 1 + aa / c;
    if (Math.abs(c) < tiny) c = tiny;
    d = 1 / d;
    const del = d * c;
    h *= del;
    if (Math.abs(del - 1) < 1e-15) break;
  }
  return h;
}

/**
 * Regularized incomplete beta function I_x(a, b).
 *
 * Press, Teukolsky, Vetterling & Flannery, Numerical Recipes, 3rd ed. (2007), §6.4 (continued fraction).
 *
 * @param x in [0, 1]
 * @param a > 0
 * @param b > 0
 * @returns I_x(a, b) in [0, 1]
 */
export function incompleteBeta(x: number, a: number, b: number): number {
  if (!(x >= 0 && x <= 1)) throw new RangeError(`x must be in [0, 1], got ${x}`);
  if (!(a > 0)) throw new RangeError(`a must be > 0, got ${a}`);
  if (!(b > 0)) throw new RangeError(`b must be > 0, got ${b}`);
  if (x === 0 || x === 1) return x;
  const lnFront = lnGamma(a + b) - lnGamma(a) - lnGamma(b) + a * Math.log(x) + b * Math.log(1 - x);
  const front = Math.exp(lnFront);
  if (x < (a + 1) / (a + b + 2)) return (front * betaContinuedFraction(a, b, x)) / a;
  return 1 - (front * betaContinuedFraction(b, a, 1 - x)) / b;
}

/**
 * Cumulative distribution function of Student's t distribution.
 *
 * Student, "The probable error of a mean", Biometrika 6, 1 (1908); F via I_x(ν/2, 1/2), x = ν/(ν + t²).
 *
 * @param t the statistic
 * @param df degrees of freedom ν > 0 (need not be an integer)
 * @returns P(T ≤ t)
 */
export function studentTCdf(t: number, df: number): number {
  if (!(df > 0)) throw new RangeError(`df must be > 0, got ${df}`);
  if (Number.isNaN(t)) throw new RangeError(`t must be a number, got ${t}`);
  if (t === Infinity) return 1;
  if (t === -Infinity) return 0;
  const tail = 0.5 * incompleteBeta(df / (df + t * t), df / 2, 0.5);
  return t >= 0 ? 1 - tail : tail;
}

/**
 * Quantile (inverse CDF) of Student's t distribution.
 *
 * Student (1908), inverted numerically: bisection to bracket, then Newton on the CDF (common practice).
 *
 * @param p probability in (0, 1), e.g. 0.975 for a two-sided 95 % interval
 * @param df degrees of freedom ν > 0
 * @returns t with P(T ≤ t) = p, to about 1e-12 relative
 * Notes: t(0.975, 9) = 2.262 in printed tables; t → the normal quantile as ν → ∞.
 */
export function studentTQuantile(p: number, df: number): number {
  if (!(p > 0 && p < 1)) throw new RangeError(`p must be in (0, 1), got ${p}`);
  if (!(df > 0)) throw new RangeError(`df must be > 0, got ${df}`);
  if (p === 0.5) return 0;
  if (p < 0.5) return -studentTQuantile(1 - p, df);
  let lo = 0;
  let hi = 1;
  while (studentTCdf(hi, df) < p) {
    lo = hi;
    hi *= 2;
    if (hi > 1e12) return Infinity;
  }
  for (let i = 0; i < 200 && hi - lo > 1e-13 * hi; i++) {
    const mid = 0.5 * (lo + hi);
    if (studentTCdf(mid, df) < p) lo = mid;
    else hi = mid;
  }
  return 0.5 * (lo + hi);
}

/** Upper-tail standard normal quantile z with P(Z > z) = p (Acklam's rational approximation, |rel. err.| < 1.2e-9). */
export function normalUpperQuantile(p: number): number {
  if (!(p > 0 && p < 1)) throw new RangeError(`p must be in (0, 1), got ${p}`);
  const q0 = 1 - p;
  const a = [-39.69683028665376, 220.9460984245205, -275.9285104469687, 138.357751867269, -30.66479806614716, 2.506628277459239];
  const b = [-54.47609879822406, 161.5858368580409, -155.6989798598866, 66.80131188771972, -13.28068155288572];
  const c = [-0.007784894002430293, -0.3223964580411365, -2.400758277161838, -2.549732539343734, 4.374664141464968, 2.938163982698783];
  const d = [0.007784695709041462, 0.3224671290700398, 2.445134137142996, 3.754408661907416];
  const pl = 0.02425;
  let x: number;
  if (q0 < pl) {
    const q = Math.sqrt(-2 * Math.log(q0));
    x = (((((c[0] * q + c[1]) * q + c[2]) * q + c[3]) * q + c[4]) * q + c[5]) / ((((d[0] * q + d[1]) * q + d[2]) * q + d[3]) * q + 1);
  } else if (q0 <= 1 - pl) {
    const q = q0 - 0.5;
    const r = q * q;
    x = ((((((a[0] * r + a[1]) * r + a[2]) * r + a[3]) * r + a[4]) * r + a[5]) * q) / (((((b[0] * r + b[1]) * r + b[2]) * r + b[3]) * r + b[4]) * r + 1);
  } else {
    const q = Math.sqrt(-2 * Math.log(1 - q0));
    x = -(((((c[0] * q + c[1]) * q + c[2]) * q + c[3]) * q + c[4]) * q + c[5]) / ((((d[0] * q + d[1]) * q + d[2]) * q + d[3]) * q + 1);
  }
  return x;
}

/**
 * Upper-tail quantile of the chi-square distribution: x with P(χ²_ν > x) = p.
 *
 * Wilson & Hilferty, PNAS 17, 684 (1931): (χ²/ν)^(1/3) is nearly normal with mean 1 − 2/(9ν) and
 * variance 2/(9ν).
 *
 * @param p upper-tail probability in (0, 1), e.g. 0.01
 * @param dof degrees of freedom ν > 0 (need not be an integer)
 * @returns the quantile, within 2.5 % of printed tables for ν ≥ 1; the tail probability at it is
 *   within 3 % of p for p ≥ 0.01 and ν ≥ 2 (15 % at p = 0.001, worse further out)
 * Notes: meant for decision thresholds (is a mean of ν/2 exponential powers significantly above
 * its expectation?), not for printing small p-values.
 */
export function chiSquareUpperQuantile(p: number, dof: number): number {
  if (!(p > 0 && p < 1)) throw new RangeError(`p must be in (0, 1), got ${p}`);
  if (!(dof > 0 && Number.isFinite(dof))) throw new RangeError(`dof must be a positive number, got ${dof}`);
  const v = 2 / (9 * dof);
  const c = 1 - v + normalUpperQuantile(p) * Math.sqrt(v);
  return dof * Math.max(0, c) ** 3;
}

/**
 * Summary of a sample: n, mean, standard deviation, median, quartiles, range and a 95 % CI of the mean.
 *
 * Quartiles: Hyndman & Fan (1996) type 7; CI: mean ± t(0.975, n − 1) s/√n (Student 1908).
 *
 * @param values the sample (finite numbers)
 * @returns the summary, or null for an empty sample
 * Notes: pooling over images is simply concatenating their values (`pooledSummary`).
 */
export function summarize(values: ArrayLike<number>): Summary | null {
  checkValues(values, 'values');
  const n = values.length;
  if (n === 0) return null;
  const sorted = Float64Array.from(values as ArrayLike<number>).sort();
  let sum = 0;
  for (let i = 0; i < n; i++) sum += sorted[i];
  const mean = sum / n;
  let ss = 0;
  for (let i = 0; i < n; i++) ss += (sorted[i] - mean) ** 2;
  const sd = n > 1 ? Math.sqrt(ss / (n - 1)) : 0;
  let ci95: [number, number] | null = null;
  if (n > 1) {
    const half = (studentTQuantile(0.975, n - 1) * sd) / Math.sqrt(n);
    ci95 = [mean - half, mean + half];
  }
  return {
    n,
    mean,
    sd,
    median: quantileSorted(sorted, 0.5),
    q1: quantileSorted(sorted, 0.25),
    q3: quantileSorted(sorted, 0.75),
    min: sorted[0],
    max: sorted[n - 1],
    ci95,
  };
}

/** Summary of the values of several images (or any groups) pooled into one sample. */
export function pooledSummary(groups: ArrayLike<number>[]): Summary | null {
  const all: number[] = [];
  groups.forEach((g, k) => {
    checkValues(g, `groups[${k}]`);
    for (let i = 0; i < g.length; i++) all.push(g[i]);
  });
  return summarize(all);
}

/** Options for `histogram`. */
export interface HistogramOptions {
  /** Bin width; default: the Freedman–Diaconis width 2·IQR·n^(−1/3). */
  binWidth?: number;
  /** Align bin edges to multiples of this value (e.g. 1 for integer layer counts, edges at k − 0.5). */
  integer?: boolean;
  /** Upper limit on the number of bins (default 200); the width grows to respect it. */
  maxBins?: number;
}

/** A histogram with equal-width bins. */
export interface Histogram {
  /** Bin edges, length counts.length + 1, ascending. */
  edges: Float64Array;
  /** Number of values in each bin [edges[i], edges[i+1]); the last bin also holds its upper edge. */
  counts: Uint32Array;
  /** Bin width used. */
  binWidth: number;
  /** How the width was chosen. */
  rule: 'freedman-diaconis' | 'given' | 'integer' | 'single';
}

/**
 * Histogram with a bin width from the Freedman–Diaconis rule.
 *
 * Freedman & Diaconis, "On the histogram as a density estimator: L2 theory", Z. Wahrscheinlichkeitstheorie verw. Geb. 57, 453 (1981).
 *
 * @param values the sample (finite numbers, at least one)
 * @param options bin width, integer alignment, bin limit
 * @returns edges, counts, width and the rule used
 * Notes: h = 2·IQR·n^(−1/3) with the type 7 IQR; when the IQR is 0 (or for integer data) the
 * width falls back to 1 for integers or to (max − min)/√n, and to a single bin when all values
 * are equal.
 */
export function histogram(values: ArrayLike<number>, options: HistogramOptions = {}): Histogram {
  checkValues(values, 'values');
  const n = values.length;
  if (n === 0) throw new RangeError('histogram needs at least one value, got 0');
  if (options.binWidth !== undefined && !(options.binWidth > 0 && Number.isFinite(options.binWidth))) {
    throw new RangeError(`binWidth must be a positive number, got ${options.binWidth}`);
  }
  const maxBins = options.maxBins ?? 200;
  if (!(Number.isInteger(maxBins) && maxBins >= 1)) throw new RangeError(`maxBins must be a positive integer, got ${maxBins}`);
  const sorted = Float64Array.from(values as ArrayLike<number>).sort();
  const min = sorted[0];
  const max = sorted[n - 1];
  let rule: Histogram['rule'];
  let width: number;
  if (options.binWidth !== undefined) {
    width = options.binWidth;
    rule = 'given';
  } else {
    const iqr = quantileSorted(sorted, 0.75) - quantileSorted(sorted, 0.25);
    width = 2 * iqr * Math.cbrt(1 / n);
    rule = 'freedman-diaconis';
    if (options.integer) {
      width = Math.max(1, Math.round(width));
      if (!(iqr > 0)) rule = 'integer';
    } else if (!(width > 0)) {
      width = (max - min) / Math.sqrt(n);
      rule = 'single';
    }
  }
  let start: number;
  if (options.integer) start = Math.floor(min) - 0.5;
  else start = min;
  if (!(width > 0)) {
    // all values equal
    const edges = Float64Array.from([min - 0.5, min + 0.5]);
    return { edges, counts: Uint32Array.from([n]), binWidth: 1, rule: 'single' };
  }
  let bins = Math.max(1, Math.ceil((max - start) / width + 1e-12));
  if ((max - start) / width === Math.floor((max - start) / width) && !options.integer) bins = Math.max(1, bins);
  if (bins > maxBins) {
    width = (max - start) / maxBins;
    if (options.integer) width = Math.ceil(width);
    bins = Math.max(1, Math.ceil((max - start) / width + 1e-12));
  }
  if (options.integer && start + bins * width <= max) bins += 1;
  const edges = new Float64Array(bins + 1);
  for (let i = 0; i <= bins; i++) edges[i] = start + i * width;
  const counts = new Uint32Array(bins);
  for (let i = 0; i < n; i++) {
    let k = Math.floor((sorted[i] - start) / width);
    if (k >= bins) k = bins - 1;
    if (k < 0) k = 0;
    counts[k]++;
  }
  return { edges, counts, binWidth: width, rule };
}
