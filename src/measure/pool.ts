/**
 * Pooling periods from several images into one value with an honest uncertainty: the one rule
 * used by the batch summary, the library's comparisons and the diffraction cross-check.
 */
import type { Calibration } from '../image/grey-image';
import {
  checkCoverageFactor,
  DEFAULT_COVERAGE_FACTOR,
  nmPerPxAlong,
  type Periodicity,
  type UncertaintyBudget,
  UNCERTAINTY_PARTS,
} from './measurement';
import { chiSquareUpperQuantile } from './stats';

/** One value to pool: independent standard uncertainty (k = 1) in the value's unit. */
export interface PoolItem {
  value: number;
  /** Standard uncertainty that is independent between items (statistical, local variation). */
  u: number;
}

/** Result of {@link randomEffectsMean}. */
export interface RandomEffectsMean {
  /** Number of items. */
  n: number;
  /** Random-effects weighted mean. */
  mean: number;
  /** Standard uncertainty of the fixed-effect (inverse-variance) mean, 1/√Σw: what the items' own uncertainties allow. */
  uWithin: number;
  /** The extra standard uncertainty from disagreement between items: √(u_RE² − u_within²), 0 when they agree. */
  uBetween: number;
  /** Standard uncertainty of the random-effects mean, √(uWithin² + uBetween²). */
  u: number;
  /** Between-item standard deviation τ (DerSimonian–Laird). */
  tau: number;
  /** Birge ratio √(χ²/(n − 1)) about the fixed-effect mean (1 when the items agree as their uncertainties say; NaN for n = 1). */
  birgeRatio: number;
}

/**
 * Weighted mean of values from different images with a between-image term.
 *
 * @param items values with their independent standard uncertainties (all > 0), or with u = 0
 *   only when every u is 0 (then an unweighted mean with the standard error of the mean)
 * @returns mean, within- and between-item uncertainty, τ and the Birge ratio
 * Notes: w = 1/u²; Q = Σw(x − x̄_FE)²; τ² = max(0, (Q − (n − 1)) / (Σw − Σw²/Σw)); the mean is
 * Σw*x/Σw* with w* = 1/(u² + τ²) and its uncertainty 1/√Σw*. When the items agree (Q ≤ n − 1)
 * τ = 0 and this is the inverse-variance mean; when they disagree beyond their uncertainties the
 * between-image term widens the result instead of the scatter being averaged away.
 * Reference: DerSimonian & Laird, Control. Clin. Trials 7, 177 (1986); Birge ratio, Birge, Phys. Rev. 40, 207 (1932).
 */
export function randomEffectsMean(items: readonly PoolItem[]): RandomEffectsMean {
  if (!Array.isArray(items) || items.length === 0) throw new RangeError('randomEffectsMean needs at least one item');
  items.forEach((it, i) => {
    if (typeof it?.value !== 'number' || !Number.isFinite(it.value)) throw new RangeError(`items[${i}].value must be a finite number, got ${String(it?.value)}`);
    if (typeof it.u !== 'number' || !Number.isFinite(it.u) || it.u < 0) throw new RangeError(`items[${i}].u must be a non-negative number, got ${String(it.u)}`);
  });
  const n = items.length;
  if (items.every((it) => it.u === 0)) {
    const mean = items.reduce((s, it) => s + it.value, 0) / n;
    const sd = n > 1 ? Math.sqrt(items.reduce((s, it) => s + (it.value - mean) ** 2, 0) / (n - 1)) : 0;
    const se = sd / Math.sqrt(n);
    return { n, mean, uWithin: 0, uBetween: se, u: se, tau: sd, birgeRatio: NaN };
  }
  if (items.some((it) => it.u === 0)) {
    const i = items.findIndex((it) => it.u === 0);
    throw new RangeError(`items[${i}].u is 0 while others are not: a value without uncertainty cannot be weighted`);
  }
  let sw = 0;
  let sw2 = 0;
  let swx = 0;
  for (const it of items) {
    const w = 1 / (it.u * it.u);
    sw += w;
    sw2 += w * w;
    swx += w * it.value;
  }
  const meanFe = swx / sw;
  let q = 0;
  for (const it of items) q += ((it.value - meanFe) / it.u) ** 2;
  const denom = sw - sw2 / sw;
  const tau2 = n > 1 && denom > 0 ? Math.max(0, (q - (n - 1)) / denom) : 0;
  let swr = 0;
  let swrx = 0;
  for (const it of items) {
    const w = 1 / (it.u * it.u + tau2);
    swr += w;
    swrx += w * it.value;
  }
  const uWithin = 1 / Math.sqrt(sw);
  const u = 1 / Math.sqrt(swr);
  return {
    n,
    mean: swrx / swr,
    uWithin,
    uBetween: Math.sqrt(Math.max(0, u * u - uWithin * uWithin)),
    u,
    tau: Math.sqrt(tau2),
    birgeRatio: n > 1 ? Math.sqrt(q / (n - 1)) : NaN,
  };
}

/** A period of one image to pool: the periodicity and the calibration it is expressed with. */
export interface PeriodToPool {
  periodicity: Periodicity;
  calibration: Calibration | null;
}

/** A pooled period: its budget and how the images agreed. */
export interface PooledPeriod {
  /** The budget: statistical (within images), between images, method and calibration parts; nm when every item is calibrated, else px. */
  budget: UncertaintyBudget;
  /** Number of periods pooled. */
  n: number;
  /** Birge ratio of the images' values (NaN for one). */
  birgeRatio: number;
  /** Between-image standard deviation τ, in the budget's unit. */
  tau: number;
}

/**
 * Pools the periods of several images into one value.
 *
 * @param items periods with their calibrations (all calibrated, or all uncalibrated and then pooled in px)
 * @param k coverage factor of the result (default 2)
 * @returns the pooled budget and the agreement statistics
 * Notes: each value is expressed without its calibration part (x_i = d_px · nm-per-px along its
 * direction) and pooled with its independent parts (statistical and local variation) by
 * {@link randomEffectsMean}. The method part (window and finite-crystal bias, estimator
 * disagreement) is systematic and does not average down: the weighted mean of the items' method
 * parts is carried. The calibration part is common to the images (a shared nominal calibration),
 * so it is added once: the pooled value × the weighted mean of the items' relative calibration
 * uncertainties. Every part is combined in quadrature (GUM §5.1.2).
 * Reference: GUM, JCGM 100:2008 §5.2 (correlated input quantities); DerSimonian & Laird (1986).
 */
export function poolPeriods(items: readonly PeriodToPool[], k: number = DEFAULT_COVERAGE_FACTOR): PooledPeriod {
  checkCoverageFactor(k);
  if (!Array.isArray(items) || items.length === 0) throw new RangeError('poolPeriods needs at least one period');
  const calibrated = items.filter((it) => it.calibration !== null).length;
  if (calibrated !== 0 && calibrated !== items.length) {
    throw new RangeError(`${items.length - calibrated} of ${items.length} periods have no calibration: pool calibrated and uncalibrated periods separately`);
  }
  const rows = items.map(({ periodicity: p, calibration: c }, i) => {
    if (!(p?.periodPx > 0)) throw new RangeError(`items[${i}].periodicity.periodPx must be positive, got ${String(p?.periodPx)}`);
    const scale = c ? nmPerPxAlong(c, p.geometry, p.angleDeg) : 1;
    return {
      value: p.periodPx * scale,
      u: Math.hypot(p.u.statisticalPx, p.u.localVariationPx) * scale,
      method: p.u.methodPx * scale,
      rel: c ? c.relUncertainty : 0,
    };
  });
  // All-zero independent parts cannot be weighted: fall back to equal weights in that case only.
  const re = randomEffectsMean(rows.map((r) => ({ value: r.value, u: r.u })));
  const weights = rows.map((r) => (r.u > 0 ? 1 / (r.u * r.u + re.tau * re.tau) : 1));
  const sw = weights.reduce((a, b) => a + b, 0);
  const method = rows.reduce((s, r, i) => s + weights[i] * r.method, 0) / sw;
  const rel = rows.reduce((s, r, i) => s + weights[i] * r.rel, 0) / sw;
  const parts = {
    statistical: re.uWithin,
    localVariation: 0,
    betweenImages: re.uBetween,
    method,
    calibration: Math.abs(re.mean) * rel,
  };
  const combined = Math.sqrt(UNCERTAINTY_PARTS.reduce((s, p) => s + parts[p] ** 2, 0));
  return {
    budget: { value: re.mean, unit: calibrated ? 'nm' : 'px', parts, combined, k, expanded: k * combined },
    n: items.length,
    birgeRatio: re.birgeRatio,
    tau: re.tau,
  };
}

/** A period to group and pool, with where it comes from. */
export interface SourcedPeriod extends PeriodToPool {
  /** Where it came from (the file or record name), for the group's list of sources. */
  source: string;
}

/** One distinct period among many: the periods that lie together, pooled. */
export interface PeriodGroup {
  /** The pooled value and its budget (see poolPeriods). */
  budget: UncertaintyBudget;
  /** Birge ratio of the members (NaN for one). */
  birgeRatio: number;
  /** Sample standard deviation of the members' values (0 for one), in the budget's unit. */
  sd: number;
  /** Number of periods in the group. */
  n: number;
  /** Their sources, each once, in order. */
  sources: string[];
}

/**
 * Groups periods from many images or records into distinct periods and pools each group.
 *
 * @param items periods with calibration and source (calibrated and uncalibrated items are grouped apart)
 * @param options relGap: neighbouring values (sorted) more than this fraction apart start a new group (default 0.04); k: coverage factor (default 2)
 * @returns groups by increasing value, calibrated groups (nm) first, then any uncalibrated ones (px)
 * Notes: single-linkage grouping on the sorted values (common practice); each group is pooled by
 * {@link poolPeriods}, the one pooling rule.
 */
export function groupAndPoolPeriods(items: readonly SourcedPeriod[], options: { relGap?: number; k?: number } = {}): PeriodGroup[] {
  const relGap = options.relGap ?? 0.04;
  if (!(relGap > 0 && relGap < 1)) throw new RangeError(`relGap must be in (0, 1), got ${relGap}`);
  const k = checkCoverageFactor(options.k ?? DEFAULT_COVERAGE_FACTOR);
  const out: PeriodGroup[] = [];
  for (const calibrated of [true, false]) {
    const rows = items
      .filter((it) => (it.calibration !== null) === calibrated)
      .map((it) => ({ it, v: it.periodicity.periodPx * (it.calibration ? nmPerPxAlong(it.calibration, it.periodicity.geometry, it.periodicity.angleDeg) : 1) }))
      .filter((r) => r.v > 0 && Number.isFinite(r.v))
      .sort((a, b) => a.v - b.v);
    const groups: (typeof rows)[] = [];
    for (const r of rows) {
      const last = groups[groups.length - 1];
      if (last && r.v - last[last.length - 1].v <= relGap * r.v) last.push(r);
      else groups.push([r]);
    }
    for (const g of groups) {
      const n = g.length;
      const mean = g.reduce((s, r) => s + r.v, 0) / n;
      const sd = n > 1 ? Math.sqrt(g.reduce((s, r) => s + (r.v - mean) ** 2, 0) / (n - 1)) : 0;
      const pooled = poolPeriods(g.map((r) => r.it), k);
      const sources: string[] = [];
      for (const r of g) if (!sources.includes(r.it.source)) sources.push(r.it.source);
      out.push({ budget: pooled.budget, birgeRatio: pooled.birgeRatio, sd, n, sources });
    }
  }
  return out;
}

/** Result of {@link localSpread}. */
export interface LocalSpread {
  /** Number of local values used. */
  n: number;
  /** Cochran's Q of the local values about their weighted mean. */
  q: number;
  /** Whether Q exceeds the χ²(n − 1) quantile at the chosen level: the values differ beyond their own uncertainties. */
  significant: boolean;
  /** The between-value standard deviation τ (DerSimonian–Laird) when significant, else 0. */
  spread: number;
  /** Weighted mean of the local values. */
  mean: number;
}

/**
 * How much local values (periods of sub-regions or segments) vary beyond their own uncertainties.
 *
 * @param items local values with their standard uncertainties (all > 0), at least 2
 * @param level false-alarm level of the heterogeneity test (default 0.01)
 * @returns Q, the test's outcome and the spread τ (0 unless significant)
 * Notes: Q = Σw(x − x̄)² is χ²(n − 1) when the values agree within their uncertainties; τ² =
 * (Q − (n − 1)) / (Σw − Σw²/Σw) is the moment estimate of the extra variance. The test gate keeps
 * white-noise scatter, which the statistical part already states, from being counted twice.
 * Reference: Cochran, Biometrics 10, 101 (1954); DerSimonian & Laird, Control. Clin. Trials 7, 177 (1986).
 */
export function localSpread(items: readonly PoolItem[], level = 0.01): LocalSpread {
  if (!(level > 0 && level < 1)) throw new RangeError(`level must be in (0, 1), got ${level}`);
  const ok = items.filter((it) => Number.isFinite(it.value) && it.u > 0 && Number.isFinite(it.u));
  if (ok.length < 2) return { n: ok.length, q: 0, significant: false, spread: 0, mean: ok[0]?.value ?? NaN };
  const re = randomEffectsMean(ok);
  const q = re.birgeRatio ** 2 * (ok.length - 1);
  const significant = q > chiSquareUpperQuantile(level, ok.length - 1);
  let sw = 0;
  let swx = 0;
  for (const it of ok) {
    sw += 1 / it.u ** 2;
    swx += it.value / it.u ** 2;
  }
  return { n: ok.length, q, significant, spread: significant ? re.tau : 0, mean: swx / sw };
}
