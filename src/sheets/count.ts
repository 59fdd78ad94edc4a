/**
 * Counting the layers of a stack on a profile across it: splitting a band at a gap, choosing
 * the period its fringes support, refining the period on its own fringes, the edge-to-edge
 * width, and the tests that tell a stack from a lattice or a plain band.
 */
import type { GreyImage } from '../image/grey-image';
import { periodCandidates, profilePeriodogram } from './profile';
import { fitSinusoidTrend } from './signal';
import { acrossProfile, fitLayerComb, smoothProfile, type AcrossProfile, type AxisFrame, type CombFit, type ProfileBand } from './stack-profile';

/** Index of the axis point nearest arc length s. */
export function indexAt(frame: AxisFrame, s: number): number {
  let lo = 0;
  let hi = frame.cumPx.length - 1;
  while (hi - lo > 1) {
    const m = (lo + hi) >> 1;
    if (frame.cumPx[m] < s) lo = m;
    else hi = m;
  }
  return Math.abs(frame.cumPx[lo] - s) <= Math.abs(frame.cumPx[hi] - s) ? lo : hi;
}

function median(v: number[]): number {
  const s = [...v].sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 ? s[m] : 0.5 * (s[m - 1] + s[m]);
}

/**
 * Whether a fitted stack of three or more layers shows its layers: the comb explains the band
 * better than a plain step of the same extent by at least `minGain` noise variances (film
 * texture makes bands without layers).
 */
export function layersResolved(p: AcrossProfile, fit: CombFit, polarity: 'dark' | 'bright', limit: [number, number] | undefined, minGain = 12): boolean {
  const d = fit.periodPx;
  const stepOnly = fitLayerComb(p, d, { fromPx: fit.firstPx - d / 2, toPx: fit.firstPx + (fit.layers - 0.5) * d }, { polarity, limitPx: limit, layers: fit.layers, lineSigmasPx: [3 * d], centreReachPx: 0.25 * d });
  return !stepOnly || (stepOnly.rss - fit.rss) / fit.noiseVar >= minGain;
}

/** Splits a band at stretches of background inside it (two stacks a short gap apart). */
export function splitBand(p: AcrossProfile, band: ProfileBand, periodPx: number, polarity: 'dark' | 'bright'): ProfileBand[] {
  const sm = smoothProfile(p.values, p.weights, (0.5 * periodPx) / p.binPx);
  const sign = polarity === 'dark' ? -1 : 1;
  const toBin = (u: number) => Math.round((u - p.startPx) / p.binPx);
  const a = Math.max(0, toBin(band.fromPx));
  const b = Math.min(p.values.length - 1, toBin(band.toPx));
  // background level: median of the bins outside the band within 3 periods
  const outside: number[] = [];
  const reach = Math.round((3 * periodPx + 4) / p.binPx);
  for (let i = Math.max(0, a - reach); i < a; i++) if (Number.isFinite(sm[i])) outside.push(sign * sm[i]);
  for (let i = b + 1; i <= Math.min(p.values.length - 1, b + reach); i++) if (Number.isFinite(sm[i])) outside.push(sign * sm[i]);
  if (outside.length < 4) return [band];
  outside.sort((x, y) => x - y);
  const bg = outside[outside.length >> 1];
  const inside: number[] = [];
  for (let i = a; i <= b; i++) if (Number.isFinite(sm[i])) inside.push(bg - sign * sm[i]);
  inside.sort((x, y) => x - y);
  const level = inside[Math.floor(0.75 * inside.length)] ?? 0;
  if (!(level > 0)) return [band];
  const gapBins = Math.max(2, Math.round(Math.max(1.5 * periodPx, 3) / p.binPx));
  const parts: ProfileBand[] = [];
  let start = a;
  let run = 0;
  for (let i = a; i <= b + 1; i++) {
    const low = i <= b && Number.isFinite(sm[i]) && bg - sign * sm[i] < 0.3 * level;
    if (low) run++;
    if (!low || i > b) {
      if (run >= gapBins) {
        const gapStart = i - run;
        if (gapStart - start > 1) parts.push({ ...band, fromPx: p.startPx + start * p.binPx, toPx: p.startPx + gapStart * p.binPx });
        start = i;
      }
      run = 0;
    }
  }
  if (parts.length === 0) return [band];
  if (b - start > 1) parts.push({ ...band, fromPx: p.startPx + start * p.binPx, toPx: p.startPx + b * p.binPx });
  return parts;
}


/** Comb fit of a band for each candidate period; the best by residual, with its period. */
export function bestPeriod(p: AcrossProfile, band: ProfileBand, periods: number[], polarity: 'dark' | 'bright', limit: [number, number] | undefined): { fit: CombFit; periodPx: number } | null {
  const allowed = periodsWithFringes(p, band, periods);
  let best: { fit: CombFit; periodPx: number } | null = null;
  for (const d of allowed) {
    const fit = fitLayerComb(p, d, band, { polarity, limitPx: limit, countReach: 3 });
    if (!fit) continue;
    if (!best || fit.rss < best.fit.rss) best = { fit, periodPx: d };
  }
  return best;
}


/** Options for {@link combNearPeriod}. */
export interface CombNearPeriodOptions {
  /** Layers are dark lines (default) or bright ones. */
  polarity?: 'dark' | 'bright';
  /** Bins outside [from, to] (profile coordinates) are not used (other stacks). */
  limitPx?: [number, number];
  /** Evidence (Δχ² over the bare background) the comb must reach (default 60). */
  minEvidence?: number;
  /** Periods below this are not tried, px (default 2.5). */
  minPeriodPx?: number;
  /** Relative steps tried either side of the period (default 1 %, 2 %, 3 % and 4 %). */
  stepsRel?: number[];
  /** Line widths (Gaussian σ, px) tried (default: those {@link fitLayerComb} tries at each period). */
  lineSigmasPx?: number[];
}

/**
 * The comb of a band at a period a few per cent from an estimated one: an image's period is
 * found from its periodograms, which read a few per cent high near the sampling limit, and over
 * n layers an error δ puts the comb's last line n·δ periods out of phase, so a thick stack fits
 * no comb at the estimate. Combs at the period × (1 ± each step) are fitted; the best by residual
 * among those with the evidence asked for is returned.
 * Grid search of a nonlinear parameter with linear least squares inside (common practice; as {@link fitLayerComb}).
 *
 * @param p the profile across the band
 * @param band the band
 * @param periodPx the estimated period, px
 * @param options polarity, limits, evidence, smallest period, steps
 * @returns the best comb with its period, or null when none reaches the evidence
 */
export function combNearPeriod(p: AcrossProfile, band: { fromPx: number; toPx: number }, periodPx: number, options: CombNearPeriodOptions = {}): { fit: CombFit; periodPx: number } | null {
  if (!(periodPx >= 1 && Number.isFinite(periodPx))) throw new RangeError(`periodPx must be a number ≥ 1, got ${periodPx}`);
  const minEvidence = options.minEvidence ?? 60;
  const minPeriodPx = options.minPeriodPx ?? 2.5;
  const steps = options.stepsRel ?? [0.01, 0.02, 0.03, 0.04];
  if (!steps.every((s) => s > 0 && s < 0.5)) throw new RangeError(`stepsRel must lie in (0, 0.5), got ${JSON.stringify(steps)}`);
  let best: { fit: CombFit; periodPx: number } | null = null;
  for (const s of steps) {
    for (const sign of [-1, 1]) {
      const d = periodPx * (1 + sign * s);
      if (d < minPeriodPx) continue;
      const f = fitLayerComb(p, d, band, { polarity: options.polarity, limitPx: options.limitPx, countReach: 3, lineSigmasPx: options.lineSigmasPx });
      if (f && f.evidence >= minEvidence && (!best || f.rss < best.fit.rss)) best = { fit: f, periodPx: d };
    }
  }
  return best;
}

/**
 * Power of a band's fringes at a period: the band's bins, a straight line removed, Hann
 * windowed, transformed at frequency 1/period (a single-frequency discrete Fourier transform,
 * as in Goertzel's algorithm; common practice).
 */
export function fringePowerAt(p: AcrossProfile, band: { fromPx: number; toPx: number }, periodPx: number): number {
  const xs: number[] = [];
  const ys: number[] = [];
  for (let i = 0; i < p.values.length; i++) {
    const u = p.startPx + i * p.binPx;
    if (u < band.fromPx || u > band.toPx || !Number.isFinite(p.values[i])) continue;
    xs.push(u);
    ys.push(p.values[i]);
  }
  const n = xs.length;
  if (n < 4) return 0;
  const mx = xs.reduce((a, b) => a + b, 0) / n;
  const my = ys.reduce((a, b) => a + b, 0) / n;
  let sxy = 0;
  let sxx = 0;
  for (let i = 0; i < n; i++) {
    sxy += (xs[i] - mx) * (ys[i] - my);
    sxx += (xs[i] - mx) ** 2;
  }
  const slope = sxx > 0 ? sxy / sxx : 0;
  let re = 0;
  let im = 0;
  let ww = 0;
  for (let i = 0; i < n; i++) {
    const w = 0.5 - 0.5 * Math.cos((2 * Math.PI * (i + 0.5)) / n);
    const v = (ys[i] - my - slope * (xs[i] - mx)) * w;
    const ph = (2 * Math.PI * xs[i]) / periodPx;
    re += v * Math.cos(ph);
    im -= v * Math.sin(ph);
    ww += w * w;
  }
  return (re * re + im * im) / Math.max(1e-12, ww);
}


/**
 * The candidate periods a band's fringes support: those whose fringe power in the band is at
 * least a quarter of the best candidate's. A stack of period d has no power at 2d, so the image's
 * coarser phase cannot take it as a comb of every other layer.
 */
export function periodsWithFringes(p: AcrossProfile, band: { fromPx: number; toPx: number }, periods: number[]): number[] {
  if (periods.length < 2) return periods;
  const pw = periods.map((d) => fringePowerAt(p, band, d));
  const top = Math.max(...pw);
  return top > 0 ? periods.filter((_, i) => pw[i] >= 0.25 * top) : periods;
}


/**
 * Refines the period on a stack's own fringes, its count fixed: the comb's residual over
 * periods ±6 % in 1 % steps, then ±1 % around the best in 0.25 % steps, and a parabola through
 * the fine minimum. The standard uncertainty is where the residual rises by one noise variance
 * (Δχ² = 1, the curvature of the parabola).
 *
 * @param p the profile
 * @param fit the comb found at the image's period
 * @param polarity the layers' polarity
 * @param limit bins outside are not used
 * @returns the refined period, its standard uncertainty (at most 5 %) and the comb at it
 */
export function refinePeriod(p: AcrossProfile, fit: CombFit, polarity: 'dark' | 'bright', limit: [number, number] | undefined): { periodPx: number; uPx: number; fit: CombFit } {
  const d0 = fit.periodPx;
  const at = (d: number) => fitLayerComb(p, d, { fromPx: fit.centerPx - (fit.layers * d) / 2, toPx: fit.centerPx + (fit.layers * d) / 2 }, { polarity, limitPx: limit, layers: fit.layers, lineSigmasPx: [fit.lineSigmaPx], centreReachPx: 0.5 * d });
  const scan = (centre: number, step: number, half: number, atCentre?: CombFit): { d: number; f: CombFit }[] => {
    const rows: { d: number; f: CombFit }[] = [];
    for (let k = -half; k <= half; k++) {
      const d = centre * (1 + step * k);
      // the centre's comb is known when the scan is about the coarse scan's best
      const f = k === 0 && atCentre ? atCentre : at(d);
      if (f) rows.push({ d, f });
    }
    return rows;
  };
  const argmin = (rows: { f: CombFit }[]) => rows.reduce((m, r, i) => (r.f.rss < rows[m].f.rss ? i : m), 0);
  const coarse = scan(d0, 0.01, 6);
  if (coarse.length < 3) return { periodPx: d0, uPx: 0, fit };
  const c = coarse[argmin(coarse)];
  const rows = scan(c.d, 0.0025, 4, c.f);
  if (rows.length < 3) return { periodPx: c.d, uPx: 0.03 * c.d, fit: c.f };
  const m = argmin(rows);
  if (m === 0 || m === rows.length - 1) return { periodPx: rows[m].d, uPx: 0.01 * rows[m].d, fit: rows[m].f };
  const [ra, rb, rc] = [rows[m - 1], rows[m], rows[m + 1]];
  const h = rb.d - ra.d;
  const den = ra.f.rss - 2 * rb.f.rss + rc.f.rss;
  const shift = den > 0 ? (0.5 * h * (ra.f.rss - rc.f.rss)) / den : 0;
  const d = rb.d + Math.max(-h, Math.min(h, shift));
  // curvature of rss(d) is den / h²; the residual rises by one noise variance at ±u
  const curv = den / (h * h);
  const u = curv > 0 ? Math.sqrt(rb.f.noiseVar / curv) : 0.03 * d;
  return { periodPx: d, uPx: Math.min(u, 0.05 * d), fit: rb.f };
}

/**
 * Whether the band is periodic along its axis too (a two-dimensional lattice of crossed
 * fringes): the periodogram of the profile along the band's middle has a peak at a period
 * within 0.5–3 layer periods that stands out from its neighbourhood (peak over the median of
 * its two octaves at least 12) and carries at least a fifth of the across-fringe power.
 */
export function periodicAlongAxis(image: GreyImage, frame: AxisFrame, centre: number, halfWidth: number, periodPx: number, acrossPower: number): boolean {
  const { width, height, data } = image;
  const vals: number[] = [];
  const steps = Math.max(1, Math.round(halfWidth));
  // samples every 0.5 px along the axis, averaged across ±halfWidth
  for (let s = 0.05 * frame.lengthPx; s <= 0.95 * frame.lengthPx; s += 0.5) {
    const i = indexAt(frame, s);
    const [px, py] = frame.points[i];
    const [tx, ty] = frame.tangents[i];
    const [nx, ny] = frame.normals[i];
    const ds = s - frame.cumPx[i];
    let sum = 0;
    let cnt = 0;
    for (let k = -steps; k <= steps; k++) {
      const u = centre + (k / steps) * halfWidth;
      const x = px + ds * tx + u * nx;
      const y = py + ds * ty + u * ny;
      const xi = Math.round(x);
      const yi = Math.round(y);
      if (xi < 0 || yi < 0 || xi >= width || yi >= height) continue;
      sum += data[yi * width + xi];
      cnt++;
    }
    vals.push(cnt ? sum / cnt : NaN);
  }
  const clean = vals.filter(Number.isFinite);
  if (clean.length < 32) return false;
  let size = 1;
  while (size < 2 * clean.length) size <<= 1;
  const pw = profilePeriodogram(clean, size, Math.max(2 * periodPx, 6));
  // period in samples (0.5 px): 2 × px
  const c = periodCandidates(pw, size, Math.max(2.2, 2 * 0.5 * periodPx), Math.min(clean.length / 3, 2 * 3 * periodPx), 1)[0];
  if (!c || c.peakToMedian < 12) return false;
  const k = Math.round(size / c.periodPx);
  let along = 0;
  for (let j = Math.max(1, k - 2); j <= Math.min(pw.length - 1, k + 2); j++) along += pw[j];
  along /= clean.length;
  return along > 0.2 * acrossPower;
}


/** Least angle, in degrees, between a second fringe set's normal and the stack's normal searched by {@link secondFringeSetFills}. */
export const SECOND_SET_MIN_CROSSING_DEG = 30;
/** Peak over the median of its two octaves that a slanted average's period must reach ({@link secondFringeSetFills}); the slants are many trials: with an exponential periodogram a bin of noise passes 20 × median (13.9 × mean) with probability 1e-6 (common practice). */
export const SECOND_SET_PEAK_TO_MEDIAN = 20;
/** Shortest along-axis period of a second set searched, px (well above the sampling limit of 2 px; the set's own period is then at least about 0.75 of the layer period, as the periods along the slants are d / sin φ ≥ d; {@link secondFringeSetFills}). */
export const SECOND_SET_MIN_PERIOD_PX = 3;
/** Share of the whole band's amplitude of the second set that each third of the band must hold ({@link secondFringeSetFills}). */
export const SECOND_SET_THIRD_SHARE = 0.4;

/**
 * Whether a second fringe set fills a stack's band along its whole length: the mark of a
 * two-dimensional lattice (crossed fringes) rather than a stack, which a stack crossed by
 * another only shows where they cross. The band's middle is averaged across its width along
 * slanted lines s − u·cot φ in the axis frame, for crossing angles φ between the stack's normal
 * and a second set's normal from {@link SECOND_SET_MIN_CROSSING_DEG} to 180° minus it (oblique
 * fringes wash out in a straight average over a wide band and stay whole along their own lines;
 * the step in φ keeps the smear across the width below a fifth of a period). A slanted average
 * whose periodogram has a peak at 0.75–3 layer periods (and {@link SECOND_SET_MIN_PERIOD_PX} or more) standing out from its neighbourhood
 * ({@link SECOND_SET_PEAK_TO_MEDIAN}) with at least a fifth of the across-fringe power is a
 * second set; it fills the band when each third of the length holds at least
 * {@link SECOND_SET_THIRD_SHARE} of the whole's amplitude at that period, at four standard errors
 * or more. A slant projection of a periodic pattern (projection-slice theorem, Bracewell 1956).
 *
 * @param image the image
 * @param frame the stack's axis
 * @param centre offset of the band's middle across the axis, px
 * @param halfWidth half of the width averaged, px
 * @param periodPx the layer period, px
 * @param acrossPower the across-fringe power of the comb ({@link acrossFringePower})
 * @returns the second set that fills the band: its crossing angle φ in degrees (0–180, from the
 *   frame's normal towards its tangent) and its period along the axis in px (its own period is
 *   that × sin φ); or null
 */
export function secondFringeSetFills(image: GreyImage, frame: AxisFrame, centre: number, halfWidth: number, periodPx: number, acrossPower: number): { crossingDeg: number; alongPeriodPx: number } | null {
  if (!(halfWidth > 0 && Number.isFinite(halfWidth))) throw new RangeError(`halfWidth must be positive and finite, got ${halfWidth}`);
  if (!(periodPx > 0 && Number.isFinite(periodPx))) throw new RangeError(`periodPx must be positive and finite, got ${periodPx}`);
  if (!Number.isFinite(centre)) throw new RangeError(`centre must be finite, got ${centre}`);
  if (!(acrossPower >= 0 && Number.isFinite(acrossPower))) throw new RangeError(`acrossPower must be non-negative and finite, got ${acrossPower}`);
  const { width, height, data } = image;
  const steps = Math.max(1, Math.round(halfWidth));
  const s0 = 0.05 * frame.lengthPx;
  const s1 = 0.95 * frame.lengthPx;
  const minRad = (SECOND_SET_MIN_CROSSING_DEG * Math.PI) / 180;
  const minAlongPx = Math.max(SECOND_SET_MIN_PERIOD_PX, 0.75 * periodPx);
  // φ step: the smear across the width, 2·halfWidth·Δφ / sin²φ, below a fifth of the shortest
  // along period searched; a first look every four steps (a smear of up to 0.4 period keeps
  // over half the power), then the steps about each angle that shows enough power
  const stepRad = Math.min((4 * Math.PI) / 180, (0.2 * minAlongPx) / (2 * halfWidth));
  const coarseRad = Math.min((8 * Math.PI) / 180, 4 * stepRad);
  // the band rectified once: rows at offsets v across (±halfWidth), columns every 0.5 px along
  // the whole axis, bilinear (rounding to the nearest pixel along a slant beats with fine layers
  // into a moiré near the sampling limit); NaN off the image
  const cols = Math.floor(frame.lengthPx / 0.5) + 1;
  const rows = 2 * steps + 1;
  const grid = new Float64Array(rows * cols).fill(NaN);
  for (let j = 0; j < cols; j++) {
    const ss = 0.5 * j;
    const i = indexAt(frame, ss);
    const [px, py] = frame.points[i];
    const [tx, ty] = frame.tangents[i];
    const [nx, ny] = frame.normals[i];
    const ds = ss - frame.cumPx[i];
    for (let k = 0; k < rows; k++) {
      const u = centre + ((k - steps) / steps) * halfWidth;
      const x = px + ds * tx + u * nx;
      const y = py + ds * ty + u * ny;
      const x0 = Math.floor(x);
      const y0 = Math.floor(y);
      if (x0 < 0 || y0 < 0 || x0 + 1 >= width || y0 + 1 >= height) continue;
      const fx = x - x0;
      const fy = y - y0;
      const o = y0 * width + x0;
      grid[k * cols + j] = (1 - fy) * ((1 - fx) * data[o] + fx * data[o + 1]) + fy * ((1 - fx) * data[o + width] + fx * data[o + width + 1]);
    }
  }
  // the slanted average at φ, its periodogram, and the most power any five bins of the period
  // range hold (per sample, as the across-fringe power is)
  const rowShift = new Float64Array(rows);
  const slant = (phi: number) => {
    const shear = Math.abs(phi - Math.PI / 2) < 1e-9 ? 0 : Math.cos(phi) / Math.sin(phi);
    const vals: number[] = [];
    // each row's shift along the slant, v·cot φ
    for (let k = 0; k < rows; k++) rowShift[k] = ((k - steps) / steps) * halfWidth * shear;
    // samples every px along the axis (the periods searched are 3 px or more), averaged across
    // ±halfWidth along the slant s − v·cot φ
    for (let s = s0; s <= s1; s += 1) {
      let sum = 0;
      let cnt = 0;
      for (let k = 0; k < rows; k++) {
        const g = (s - rowShift[k]) * 2;
        const j = Math.floor(g);
        if (j < 0 || j + 1 >= cols) continue;
        const t = g - j;
        const a = grid[k * cols + j];
        const b = grid[k * cols + j + 1];
        if (Number.isNaN(a) || Number.isNaN(b)) continue;
        sum += a + t * (b - a);
        cnt++;
      }
      // an average over less than half the width (the slant leaves the band's ends) is not used
      if (cnt > steps) vals.push(sum / cnt);
    }
    // periods in samples = px
    const minP = minAlongPx;
    const maxP = Math.min(vals.length / 3, 3 * periodPx);
    if (vals.length < 24 || !(maxP > minP)) return null;
    let size = 1;
    while (size < 2 * vals.length) size <<= 1;
    const pw = profilePeriodogram(vals, size, Math.max(periodPx, 3));
    let most = 0;
    for (let k = Math.max(1, Math.floor(size / maxP) - 2); k <= Math.min(pw.length - 5, Math.ceil(size / minP) + 2); k++) most = Math.max(most, pw[k] + pw[k + 1] + pw[k + 2] + pw[k + 3] + pw[k + 4]);
    // power per sample scaled to samples 0.5 px apart, as the straight test's ({@link periodicAlongAxis}):
    // a sinusoid's peak power per sample grows with the number of samples over the same length
    return { vals, pw, size, minP, maxP, most: (2 * most) / vals.length };
  };
  // the full test at one angle: the second set's power and along period there, or power 0 when it
  // has none that fills the band
  const none = { power: 0, alongPeriodPx: NaN };
  const fillsAt = (sl: NonNullable<ReturnType<typeof slant>>): { power: number; alongPeriodPx: number } => {
    const { vals, pw, size, minP, maxP } = sl;
    // no five bins hold a fifth of the across-fringe power: no second set at this angle
    if (sl.most <= 0.2 * acrossPower) return none;
    const c = periodCandidates(pw, size, minP, maxP, 1)[0];
    if (!c || c.peakToMedian < SECOND_SET_PEAK_TO_MEDIAN) return none;
    const k = Math.round(size / c.periodPx);
    let along = 0;
    for (let j = Math.max(1, k - 2); j <= Math.min(pw.length - 1, k + 2); j++) along += pw[j];
    along = (2 * along) / vals.length;
    if (along <= 0.2 * acrossPower) return none;
    // the set must fill the band: its amplitude at that period in each third of the length
    const whole = toneAmplitude(vals, 0, vals.length, c.periodPx);
    const n3 = Math.floor(vals.length / 3);
    for (let t = 0; t < 3; t++) {
      const part = toneAmplitude(vals, t * n3, (t + 1) * n3, c.periodPx);
      if (part.amplitude < SECOND_SET_THIRD_SHARE * whole.amplitude || part.amplitude < 4 * part.uAmplitude) return none;
    }
    // samples are 1 px apart: the period in samples is in px
    return { power: along, alongPeriodPx: c.periodPx };
  };
  const coarse = [Math.PI / 2];
  for (let a = Math.PI / 2 - coarseRad; a >= minRad - 1e-9; a -= coarseRad) coarse.push(a, Math.PI - a);
  // the coarse angles with a fifth of the across power less the smear's loss (half of it at
  // most), most power first; about each, the fine steps, and the angle of most power among those
  // where a set fills the band
  const looks: { phi: number; sl: NonNullable<ReturnType<typeof slant>> }[] = [];
  for (const phi of coarse) {
    const sl = slant(phi);
    if (sl && sl.most > 0.1 * acrossPower) looks.push({ phi, sl });
  }
  looks.sort((x, y) => y.sl.most - x.sl.most);
  for (const { phi: phi0, sl: sl0 } of looks) {
    // the fine steps only about a look whose periodogram peak stands half as far out as a set
    // needs (the smear at a coarse angle keeps half the power or more: it halves the peak at most)
    const c0 = periodCandidates(sl0.pw, sl0.size, sl0.minP, sl0.maxP, 1)[0];
    if (!c0 || c0.peakToMedian < 0.5 * SECOND_SET_PEAK_TO_MEDIAN) continue;
    let best = fillsAt(sl0);
    let bestPhi = phi0;
    if (coarseRad > stepRad) {
      for (let a = phi0 - coarseRad; a <= phi0 + coarseRad + 1e-9; a += stepRad) {
        if (Math.abs(a - phi0) < 1e-9 || a < minRad - 1e-9 || a > Math.PI - minRad + 1e-9) continue;
        const sl = slant(a);
        const at = sl ? fillsAt(sl) : none;
        if (at.power > best.power) {
          best = at;
          bestPhi = a;
        }
      }
    }
    if (best.power > 0) return { crossingDeg: (bestPhi * 180) / Math.PI, alongPeriodPx: best.alongPeriodPx };
  }
  return null;
}

/** Least-squares amplitude of a sinusoid of `periodSamples` (with a straight background) on samples [from, to), and its standard error from the residual. */
function toneAmplitude(v: readonly number[], from: number, to: number, periodSamples: number): { amplitude: number; uAmplitude: number } {
  const fit = fitSinusoidTrend(v, periodSamples, from, to);
  if (!fit) return { amplitude: 0, uAmplitude: Infinity };
  const n = to - from;
  const sigma = Math.sqrt(fit.rss / Math.max(1, n - 4));
  // neighbouring samples of a blurred, interpolated image are correlated: twice the white-noise error
  return { amplitude: Math.hypot(fit.coef[2], fit.coef[3]), uAmplitude: 2 * sigma * Math.sqrt(2 / n) };
}


/** Share of a comb's depth below which the lines beyond its outer layers count as background ({@link combContinues}). */
export const CONTINUATION_MAX_SHARE = 0.5;
/** Standard errors by which the further lines' depth must exceed zero ({@link combContinues}); the bins of a profile are correlated, so more than the usual 3. */
export const CONTINUATION_MIN_SIGNIFICANCE = 5;

/**
 * Whether a comb's layer lines go on beyond both of its outer layers, in phase: the fringes of a
 * lattice fill the region around any band cut from it, while a stack's layers stop at its outer
 * ones (beyond lies film, or a touching stack whose lines do not keep the comb's phase). On the
 * width-averaged profile along the axis, the depth of two further lines each side (the comb's
 * period, phase and line width) is fitted over a straight background; at least
 * {@link CONTINUATION_MAX_SHARE} of the comb's own depth on both sides, each at
 * {@link CONTINUATION_MIN_SIGNIFICANCE} standard errors or more, means a lattice.
 * Linear least squares of a fixed template (common practice).
 *
 * @param image the image
 * @param frame the candidate axis
 * @param fit the comb, in the frame's offsets across the axis
 * @param polarity the layers' polarity
 * @returns true when the comb goes on, in phase, on both sides (a lattice, not a stack)
 * Notes: on the synthetic overviews no stack found reached a share of 0.2 on both sides; the
 * lattice combs that did reached 0.9, mostly at 5–25 standard errors; noise beside a low-dose
 * stack gave a share of 1.3 at 0.1 standard errors.
 */
export function combContinues(image: GreyImage, frame: AxisFrame, fit: CombFit, polarity: 'dark' | 'bright'): boolean {
  const d = fit.periodPx;
  const n = fit.layers;
  const L = frame.lengthPx;
  const half = Math.max(Math.abs(fit.firstPx), Math.abs(fit.firstPx + (n - 1) * d)) + 3 * d + 2;
  const p = acrossProfile(image, frame, { fromPx: 0.05 * L, toPx: 0.95 * L, halfWidthPx: half });
  const own = fitLayerComb(p, d, { fromPx: fit.firstPx - d / 2, toPx: fit.firstPx + (n - 0.5) * d }, { polarity, layers: n, lineSigmasPx: [fit.lineSigmaPx], centreReachPx: 0.25 * d });
  if (!own || !(own.depth > 0)) return false;
  const sign = polarity === 'dark' ? -1 : 1;
  const sg = own.lineSigmaPx;
  for (const side of [-1, 1]) {
    const at = side < 0 ? [own.firstPx - d, own.firstPx - 2 * d] : [own.firstPx + n * d, own.firstPx + (n + 1) * d];
    const lo = Math.min(...at) - 0.5 * d;
    const hi = Math.max(...at) + 0.5 * d;
    // y = a + b·u + A·g(u), g the two lines: normal equations of three unknowns
    const M = [0, 0, 0, 0, 0, 0, 0, 0, 0];
    const r = [0, 0, 0];
    let m = 0;
    for (let i = 0; i < p.values.length; i++) {
      const u = p.startPx + i * p.binPx;
      if (u < lo || u > hi || !(p.weights[i] > 0) || !Number.isFinite(p.values[i])) continue;
      const x = [1, u - 0.5 * (lo + hi), at.reduce((acc, c) => acc + Math.exp(-0.5 * ((u - c) / sg) ** 2), 0)];
      for (let a = 0; a < 3; a++) {
        r[a] += x[a] * p.values[i];
        for (let b = 0; b < 3; b++) M[3 * a + b] += x[a] * x[b];
      }
      m++;
    }
    if (m < 8) return false;
    const x = solve3(M, r);
    const e = solve3(M, [0, 0, 1]);
    if (!x || !e) return false;
    // the further lines' depth must stand out from the noise too (at low dose a stack's
    // neighbourhood can give half its depth by chance): residual variance × (MᵀM)⁻¹ (common practice)
    let rss = 0;
    for (let i = 0; i < p.values.length; i++) {
      const u = p.startPx + i * p.binPx;
      if (u < lo || u > hi || !(p.weights[i] > 0) || !Number.isFinite(p.values[i])) continue;
      const g = at.reduce((acc, c) => acc + Math.exp(-0.5 * ((u - c) / sg) ** 2), 0);
      rss += (p.values[i] - x[0] - x[1] * (u - 0.5 * (lo + hi)) - x[2] * g) ** 2;
    }
    const se = Math.sqrt((rss / Math.max(1, m - 3)) * Math.max(0, e[2]));
    if (!(sign * x[2] >= CONTINUATION_MAX_SHARE * own.depth && sign * x[2] >= CONTINUATION_MIN_SIGNIFICANCE * se)) return false;
  }
  return true;
}

/** Solution of a 3 × 3 linear system (row-major), Gaussian elimination with partial pivoting; null when singular. */
export function solve3(A: number[], b: number[]): number[] | null {
  const M = [0, 1, 2].map((i) => [A[3 * i], A[3 * i + 1], A[3 * i + 2], b[i]]);
  for (let c = 0; c < 3; c++) {
    let piv = c;
    for (let i = c + 1; i < 3; i++) if (Math.abs(M[i][c]) > Math.abs(M[piv][c])) piv = i;
    [M[c], M[piv]] = [M[piv], M[c]];
    if (!(Math.abs(M[c][c]) > 1e-12 * (Math.abs(M[0][0]) + 1))) return null;
    for (let i = 0; i < 3; i++) {
      if (i === c) continue;
      const f = M[i][c] / M[c][c];
      for (let k = c; k < 4; k++) M[i][k] -= f * M[c][k];
    }
  }
  return [M[0][3] / M[0][0], M[1][3] / M[1][1], M[2][3] / M[2][2]];
}

/** Power of the fringes across a stack: the periodogram of the band part of its profile at its period, per sample. */
export function acrossFringePower(p: AcrossProfile, fit: CombFit): number {
  const d = fit.periodPx;
  const a = Math.max(0, Math.floor((fit.firstPx - d / 2 - p.startPx) / p.binPx));
  const b = Math.min(p.values.length - 1, Math.ceil((fit.firstPx + (fit.layers - 0.5) * d - p.startPx) / p.binPx));
  const v: number[] = [];
  for (let i = a; i <= b; i++) if (Number.isFinite(p.values[i])) v.push(p.values[i]);
  if (v.length < 8) return 0;
  let size = 1;
  while (size < 2 * v.length) size <<= 1;
  const pw = profilePeriodogram(v, size, Math.max(2 * d, 4));
  const k = Math.round((size * p.binPx) / d);
  let s = 0;
  for (let j = Math.max(1, k - 2); j <= Math.min(pw.length - 1, k + 2); j++) s += pw[j];
  return s / v.length;
}


/** Edge-to-edge width of a fitted stack on its profile: where the darkening (fringes smoothed away) falls to half its level inside, px. */
export function edgeToEdge(p: AcrossProfile, f: CombFit, polarity: 'dark' | 'bright'): number | null {
  const sign = polarity === 'dark' ? -1 : 1;
  const sm = smoothProfile(p.values, p.weights, (0.5 * f.periodPx) / p.binPx);
  const toBin = (u: number) => Math.round((u - p.startPx) / p.binPx);
  const a = toBin(f.firstPx - f.periodPx / 2);
  const b = toBin(f.firstPx + (f.layers - 0.5) * f.periodPx);
  const out: number[] = [];
  const reach = Math.round((2 * f.periodPx + 3) / p.binPx);
  for (let i = Math.max(0, a - reach); i < Math.max(0, a - 1); i++) if (Number.isFinite(sm[i])) out.push(sign * sm[i]);
  for (let i = Math.min(sm.length, b + 2); i < Math.min(sm.length, b + reach); i++) if (Number.isFinite(sm[i])) out.push(sign * sm[i]);
  if (out.length < 3) return null;
  const bg = median(out);
  const c = toBin(f.centerPx);
  if (!(c >= 0 && c < sm.length)) return null;
  const ins: number[] = [];
  for (let i = Math.max(0, a); i <= Math.min(sm.length - 1, b); i++) if (Number.isFinite(sm[i])) ins.push(sign * sm[i]);
  if (ins.length < 2) return null;
  const level = median(ins);
  if (!(bg - level > 0)) return null;
  const halfLevel = bg - 0.5 * (bg - level);
  let l = c;
  while (l > 0 && Number.isFinite(sm[l - 1]) && sign * sm[l - 1] < halfLevel) l--;
  let r = c;
  while (r < sm.length - 1 && Number.isFinite(sm[r + 1]) && sign * sm[r + 1] < halfLevel) r++;
  // linear interpolation of the crossings
  const at = (i: number, j: number) => {
    const vi = sign * sm[i];
    const vj = sign * sm[j];
    return vj === vi ? 0 : (halfLevel - vi) / (vj - vi);
  };
  const left = l > 0 ? l - at(l, l - 1) : l;
  const right = r < sm.length - 1 ? r + at(r, r + 1) : r;
  return (right - left) * p.binPx;
}


