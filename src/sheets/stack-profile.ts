/**
 * Profiles across a stack along its own (possibly bent) axis, and the layer count of a stack on
 * such a profile by fitting a comb of layer lines.
 */
import type { GreyImage } from '../image/grey-image';

/** An axis with its tangents and normals (image axes, y down). */
export interface AxisFrame {
  points: [number, number][];
  /** Unit tangents. */
  tangents: [number, number][];
  /** Unit normals: the tangent turned by +90° as shown (counter-clockwise with y up). */
  normals: [number, number][];
  /** Arc length at each point, px. */
  cumPx: number[];
  /** Total length, px. */
  lengthPx: number;
}

/**
 * Tangents and normals of a polyline axis.
 * @param points the axis, at least 2 points
 * @returns the frame; tangents from the points ±2 apart (central differences)
 */
export function axisFrame(points: [number, number][]): AxisFrame {
  if (!(points.length >= 2)) throw new RangeError(`an axis needs at least 2 points, got ${points.length}`);
  const n = points.length;
  const tangents: [number, number][] = [];
  const normals: [number, number][] = [];
  const cumPx = [0];
  for (let i = 1; i < n; i++) cumPx.push(cumPx[i - 1] + Math.hypot(points[i][0] - points[i - 1][0], points[i][1] - points[i - 1][1]));
  for (let i = 0; i < n; i++) {
    const a = points[Math.max(0, i - 2)];
    const b = points[Math.min(n - 1, i + 2)];
    const dx = b[0] - a[0];
    const dy = b[1] - a[1];
    const d = Math.hypot(dx, dy) || 1;
    const tx = dx / d;
    const ty = dy / d;
    tangents.push([tx, ty]);
    // +90° as shown (y up) is (ty, −tx) in image axes (y down)
    normals.push([ty, -tx]);
  }
  return { points, tangents, normals, cumPx, lengthPx: cumPx[n - 1] };
}

/** A profile across an axis: values in bins of `binPx` along the normal. */
export interface AcrossProfile {
  /** Offset along the normal of the first bin's centre, px (0 on the axis). */
  startPx: number;
  /** Bin width, px. */
  binPx: number;
  /** Mean grey value in each bin (NaN where empty). */
  values: Float64Array;
  /** Weight of each bin (pixels, linearly shared between neighbouring bins). */
  weights: Float64Array;
  /** Length along the axis that was averaged, px. */
  lengthPx: number;
}

/** Options for {@link acrossProfile}. */
export interface AcrossProfileOptions {
  /** Part of the axis averaged over, arc length from … to, px (default the whole axis). */
  fromPx?: number;
  toPx?: number;
  /** Half-width of the profile across the axis, px. */
  halfWidthPx: number;
  /** Bin width, px (default 0.5). */
  binPx?: number;
  /** Centre of the profile, offset along the normals from the axis, px (default 0). */
  offsetPx?: number;
}

/**
 * The width-averaged profile across a curved axis: every pixel of the band along the axis
 * between fromPx and toPx is put in the bin of its distance from the axis (along the local
 * normal), shared linearly between the two nearest bins.
 *
 * Projection of the pixels onto the local normal of a curved axis (as in a curvilinear
 * coordinate system along the axis; common practice for bent lamellae).
 *
 * @param image the image
 * @param frame the axis frame
 * @param options averaged stretch, half-width, bin width, offset
 * @returns the profile; pixel centres at integer coordinates
 * Notes: each axis point owns the strip between the midpoints to its neighbours; a pixel whose
 * centre falls in the strip is binned by its normal distance from that point. Rows are scanned
 * between the strip's edges, so the cost is the band's area.
 */
export function acrossProfile(image: GreyImage, frame: AxisFrame, options: AcrossProfileOptions): AcrossProfile {
  const { U, bin, nb } = profileBins(options);
  const from = options.fromPx ?? 0;
  const to = options.toPx ?? frame.lengthPx;
  if (!(to >= from)) throw new RangeError(`toPx (${to}) must not be below fromPx (${from})`);
  const startPx = -((nb - 1) * bin) / 2;
  const sum = new Float64Array(nb);
  const weights = new Float64Array(nb);
  binAcross(image, frame, from, to, U, bin, options.offsetPx ?? 0, sum, weights);
  const values = new Float64Array(nb);
  for (let j = 0; j < nb; j++) values[j] = weights[j] > 0 ? sum[j] / weights[j] : NaN;
  return { startPx, binPx: bin, values, weights, lengthPx: Math.max(0, to - from) };
}

/** A profile's half-width U and bin width (checked), and its number of bins ⌊2U/bin⌋ + 1. */
function profileBins(options: AcrossProfileOptions): { U: number; bin: number; nb: number } {
  const U = options.halfWidthPx;
  const bin = options.binPx ?? 0.5;
  if (!(U > 0 && Number.isFinite(U))) throw new RangeError(`halfWidthPx must be a positive number, got ${U}`);
  if (!(bin > 0 && bin <= 2)) throw new RangeError(`binPx must be in (0, 2], got ${bin}`);
  return { U, bin, nb: Math.floor((2 * U) / bin) + 1 };
}

/**
 * The pixels of the band between arc lengths from and to, each added to the two bins nearest its
 * distance from the axis (`sum` and `weights` of length nb = ⌊2U/bin⌋ + 1, bins centred on 0).
 */
function binAcross(image: GreyImage, frame: AxisFrame, from: number, to: number, U: number, bin: number, off: number, sum: Float64Array, weights: Float64Array): void {
  const nb = sum.length;
  const startPx = -((nb - 1) * bin) / 2;
  const { width, height, data } = image;
  const { points, tangents, normals, cumPx } = frame;
  const n = points.length;
  // the strip's corners, x and y (counter-clockwise from the back left)
  const cxs = new Float64Array(4);
  const cys = new Float64Array(4);
  for (let i = 0; i < n; i++) {
    if (cumPx[i] < from - 1e-9 || cumPx[i] > to + 1e-9) continue;
    const before = i > 0 ? 0.5 * (cumPx[i] - cumPx[i - 1]) : 0.5 * (n > 1 ? cumPx[1] - cumPx[0] : 1);
    const after = i < n - 1 ? 0.5 * (cumPx[i + 1] - cumPx[i]) : before;
    const [px, py] = points[i];
    const [tx, ty] = tangents[i];
    const [nx, ny] = normals[i];
    const cx = px + off * nx;
    const cy = py + off * ny;
    cxs[0] = cx - before * tx - U * nx; cys[0] = cy - before * ty - U * ny;
    cxs[1] = cx + after * tx - U * nx; cys[1] = cy + after * ty - U * ny;
    cxs[2] = cx + after * tx + U * nx; cys[2] = cy + after * ty + U * ny;
    cxs[3] = cx - before * tx + U * nx; cys[3] = cy - before * ty + U * ny;
    let y0 = Infinity;
    let y1 = -Infinity;
    for (let k = 0; k < 4; k++) {
      y0 = Math.min(y0, cys[k]);
      y1 = Math.max(y1, cys[k]);
    }
    const ya = Math.max(0, Math.ceil(y0));
    const yb = Math.min(height - 1, Math.floor(y1));
    for (let y = ya; y <= yb; y++) {
      let xl = Infinity;
      let xr = -Infinity;
      for (let k = 0; k < 4; k++) {
        const ax = cxs[k];
        const ay = cys[k];
        const bx = cxs[(k + 1) % 4];
        const by = cys[(k + 1) % 4];
        if ((ay <= y && by >= y) || (by <= y && ay >= y)) {
          const x = ay === by ? Math.min(ax, bx) : ax + ((y - ay) / (by - ay)) * (bx - ax);
          const x2 = ay === by ? Math.max(ax, bx) : x;
          xl = Math.min(xl, x);
          xr = Math.max(xr, x2);
        }
      }
      const xa = Math.max(0, Math.ceil(xl));
      const xbb = Math.min(width - 1, Math.floor(xr));
      const row = y * width;
      for (let x = xa; x <= xbb; x++) {
        const vx = x - cx;
        const vy = y - cy;
        const s = vx * tx + vy * ty;
        if (s < -before || s >= after) continue;
        const u = vx * nx + vy * ny;
        const f = (u - startPx) / bin;
        if (f < 0 || f > nb - 1) continue;
        const j = Math.floor(f);
        const r = f - j;
        const v = data[row + x];
        sum[j] += (1 - r) * v;
        weights[j] += 1 - r;
        if (j + 1 < nb) {
          sum[j + 1] += r * v;
          weights[j + 1] += r;
        }
      }
    }
  }
}

/** Gaussian smoothing of a profile with weights (NaN bins ignored), σ in bins. */
export function smoothProfile(values: Float64Array, weights: Float64Array, sigmaBins: number): Float64Array {
  const n = values.length;
  const out = new Float64Array(n);
  if (!(sigmaBins > 0)) {
    out.set(values);
    return out;
  }
  const r = Math.ceil(3 * sigmaBins);
  const g = new Float64Array(2 * r + 1);
  for (let k = -r; k <= r; k++) g[k + r] = Math.exp(-0.5 * (k / sigmaBins) ** 2);
  for (let i = 0; i < n; i++) {
    let s = 0;
    let w = 0;
    for (let k = Math.max(0, i - r); k <= Math.min(n - 1, i + r); k++) {
      if (!(weights[k] > 0)) continue;
      const gw = g[k - i + r] * weights[k];
      s += gw * values[k];
      w += gw;
    }
    out[i] = w > 0 ? s / w : NaN;
  }
  return out;
}

/** A band of a profile where a stack lies: its extent along the normal. */
export interface ProfileBand {
  /** Edges along the normal, px (profile coordinates: 0 on the axis). */
  fromPx: number;
  toPx: number;
  /** Mean darkening inside the band relative to the background beside it (grey units; positive: darker for dark polarity). */
  contrast: number;
  /** Contrast over its standard error. */
  significance: number;
}

/**
 * Thickest band {@link profileBands} considers, in periods: a stack of more layers is a continuous
 * lamellar phase (the domain map's job), and the bound keeps a line across a whole wide image fast.
 */
export const MAX_BAND_PERIODS = 128;

/**
 * Bands of a profile: stretches darker than the background beside them (for dark polarity),
 * with the fringes smoothed away, or (with `signal`) stretches where another signal (e.g. the
 * fringe energy) stands above its background.
 *
 * Step-model segmentation: the background a straight line through the bins outside the band,
 * the band a constant level, the edges searched exhaustively with prefix sums for the least
 * residual sum of squares (least-squares change-point location, common practice); further bands
 * in what remains.
 *
 * @param p the profile
 * @param periodPx the layer period (the smoothing is half of it; samples closer than a period are correlated)
 * @param options polarity, most bands, least significance, smallest band width, the signal to segment
 * @returns bands, most significant first
 * Notes: the significance is the band's contrast over its standard error, from the residual
 * spread and one independent sample per period (the smoothed bins are correlated over about
 * that); a band needs a fifth of the bins outside it.
 */
export function profileBands(
  p: AcrossProfile,
  periodPx: number,
  options: { polarity?: 'dark' | 'bright'; maxBands?: number; minSignificance?: number; minWidthPx?: number; signal?: Float64Array } = {},
): ProfileBand[] {
  const sign = (options.polarity ?? 'dark') === 'dark' ? -1 : 1;
  const maxBands = options.maxBands ?? 4;
  const minSig = options.minSignificance ?? 5;
  const minW = options.minWidthPx ?? Math.max(1, 0.5 * periodPx);
  const n = p.values.length;
  const y = options.signal ?? smoothProfile(p.values, p.weights, (0.5 * periodPx) / p.binPx);
  // darkness: a stack is a positive excursion (−y for dark layers)
  const v = new Float64Array(n);
  const ok = new Uint8Array(n);
  for (let i = 0; i < n; i++) {
    if (Number.isFinite(y[i]) && p.weights[i] > 0) {
      v[i] = sign < 0 ? -y[i] : y[i];
      ok[i] = 1;
    }
  }
  const taken = new Uint8Array(n);
  const bands: ProfileBand[] = [];
  const minBins = Math.max(1, Math.round(minW / p.binPx));
  // a band spans at most MAX_BAND_PERIODS layers: the search over its ends stays linear in the profile's length
  const maxBins = Math.max(minBins, Math.round((MAX_BAND_PERIODS * periodPx) / p.binPx));
  const corrBins = Math.max(2, periodPx / p.binPx);
  const x = (i: number) => (i - n / 2) / n;
  // prefix sums over the usable, untaken bins: count, x, x², v, x·v, v²; one buffer for every
  // round (each round rewrites them from index 1; index 0 stays 0)
  const sums = new Float64Array(6 * (n + 1));
  const C0 = sums.subarray(0, n + 1), C1 = sums.subarray(n + 1, 2 * (n + 1)), C2 = sums.subarray(2 * (n + 1), 3 * (n + 1));
  const Cv = sums.subarray(3 * (n + 1), 4 * (n + 1)), Cxv = sums.subarray(4 * (n + 1), 5 * (n + 1)), Cvv = sums.subarray(5 * (n + 1), 6 * (n + 1));
  for (let round = 0; round < maxBands; round++) {
    for (let i = 0; i < n; i++) {
      const use = ok[i] && !taken[i] ? 1 : 0;
      const xi = x(i);
      C0[i + 1] = C0[i] + use;
      C1[i + 1] = C1[i] + use * xi;
      C2[i + 1] = C2[i] + use * xi * xi;
      Cv[i + 1] = Cv[i] + use * v[i];
      Cxv[i + 1] = Cxv[i] + use * xi * v[i];
      Cvv[i + 1] = Cvv[i] + use * v[i] * v[i];
    }
    const T0 = C0[n], T1 = C1[n], T2 = C2[n], Tv = Cv[n], Txv = Cxv[n], Tvv = Cvv[n];
    if (T0 < 8) break;
    const lineRss = (s0: number, s1: number, s2: number, sv: number, sxv: number, svv: number): { rss: number; a: number; b: number } => {
      const det = s0 * s2 - s1 * s1;
      if (!(det > 1e-12)) return { rss: svv - (s0 > 0 ? (sv * sv) / s0 : 0), a: s0 > 0 ? sv / s0 : 0, b: 0 };
      const b = (s0 * sxv - s1 * sv) / det;
      const a = (sv - b * s1) / s0;
      return { rss: svv - a * sv - b * sxv, a, b };
    };
    let best = -Infinity;
    let ba = -1;
    let bb = -1;
    for (let a = 0; a < n; a++) {
      if (taken[a]) continue;
      const bEnd = Math.min(n, a + maxBins);
      // the sums up to a, once for every band from a
      const C0a = C0[a], C1a = C1[a], C2a = C2[a], Cva = Cv[a], Cxva = Cxv[a], Cvva = Cvv[a];
      const outFloor = Math.max(0.2 * T0, 4);
      for (let b = a + minBins; b <= bEnd; b++) {
        if (taken[b - 1]) break;
        const i0 = C0[b] - C0a;
        const o0 = T0 - i0;
        // too little left outside: the more so for every longer band from a
        if (o0 < outFloor) break;
        if (!(i0 > 0)) continue;
        const iv = Cv[b] - Cva;
        const ivv = Cvv[b] - Cvva;
        // the background line outside (lineRss, written out: this loop is the function's cost)
        const s1 = T1 - (C1[b] - C1a);
        const sv = Tv - iv;
        const sxv = Txv - (Cxv[b] - Cxva);
        const det = o0 * (T2 - (C2[b] - C2a)) - s1 * s1;
        let lineA: number;
        let lineB = 0;
        if (det > 1e-12) {
          lineB = (o0 * sxv - s1 * sv) / det;
          lineA = (sv - lineB * s1) / o0;
        } else lineA = sv / o0;
        const mean = iv / i0;
        // the band must stand above the background line at its middle
        const xm = x(0.5 * (a + b - 1));
        if (!(mean > lineA + lineB * xm)) continue;
        const lineRssOut = det > 1e-12 ? Tvv - ivv - lineA * sv - lineB * sxv : Tvv - ivv - (sv * sv) / o0;
        const rss = lineRssOut + (ivv - (iv * iv) / i0);
        const score = -rss;
        if (score > best) {
          best = score;
          ba = a;
          bb = b;
        }
      }
    }
    if (ba < 0) break;
    const i0 = C0[bb] - C0[ba];
    const o0 = T0 - i0;
    const iv = Cv[bb] - Cv[ba];
    const ivv = Cvv[bb] - Cvv[ba];
    const out = lineRss(o0, T1 - (C1[bb] - C1[ba]), T2 - (C2[bb] - C2[ba]), Tv - iv, Txv - (Cxv[bb] - Cxv[ba]), Tvv - ivv);
    const rss = Math.max(0, out.rss + (ivv - (iv * iv) / i0));
    const sd = Math.sqrt(rss / Math.max(1, T0 - 3));
    const contrast = iv / i0 - (out.a + out.b * x(0.5 * (ba + bb - 1)));
    const se = sd * Math.sqrt(corrBins / i0 + corrBins / o0);
    const significance = se > 0 ? contrast / se : Infinity;
    if (significance < minSig) break;
    bands.push({ fromPx: p.startPx + (ba - 0.5) * p.binPx, toPx: p.startPx + (bb - 0.5) * p.binPx, contrast, significance });
    // take the band and half a period either side
    const pad = Math.round((0.5 * periodPx) / p.binPx);
    for (let i = Math.max(0, ba - pad); i < Math.min(n, bb + pad); i++) taken[i] = 1;
    void Tvv;
  }
  return bands;
}

/** Options for {@link fitLayerComb}. */
export interface CombFitOptions {
  /** Layers are dark lines (default) or bright ones. */
  polarity?: 'dark' | 'bright';
  /** Layer counts tried: around the band's width / period, ± this many (default 2). */
  countReach?: number;
  /** Fixed layer count (overrides the search), e.g. to score a count given by the user. */
  layers?: number;
  /** Standard deviations of the layer line tried, px (default 0.15, 0.2, 0.27, 0.36 and 0.48 periods, at least 0.45 px). */
  lineSigmasPx?: number[];
  /** Background taken either side of the band, px (default max(2.5 periods, 6 px)). */
  marginPx?: number;
  /** Bins outside [fromPx, toPx] (profile coordinates) are not used (other stacks), default none. */
  limitPx?: [number, number];
  /** Search the stack's centre within ± this many px of the band's middle (default 0.75 period). */
  centreReachPx?: number;
}

/** The best comb of layer lines on a profile. */
export interface CombFit {
  /** Number of layers. */
  layers: number;
  /** Position of the first layer (the one at the smallest offset), px along the normal. */
  firstPx: number;
  /** Period of the comb, px. */
  periodPx: number;
  /** Standard deviation of the layer line, px. */
  lineSigmaPx: number;
  /** Depth of one layer line (grey units, positive: darker for dark polarity). */
  depth: number;
  /** Residual sum of squares (weighted) of the best comb. */
  rss: number;
  /** Residual sum of squares of the background alone (no stack) over the same bins. */
  rssNull: number;
  /** Best residual sum of squares with one layer fewer and one more (Infinity when not tried). */
  rssFewer: number;
  rssMore: number;
  /** Noise variance per unit weight, inflated for the correlation of neighbouring bins. */
  noiseVar: number;
  /** (rssNull − rss) / noiseVar: the evidence for a stack. */
  evidence: number;
  /** (min(rssFewer, rssMore, rssNull) − rss) / noiseVar: the evidence for this count over its neighbours (or over no stack, when no neighbour was fitted). */
  countMargin: number;
  /** Centre of the stack (midway between first and last layer), px. */
  centerPx: number;
  /** Thickness by the n·d convention, px. */
  thicknessPx: number;
}

/** Cholesky solve of the m × m normal equations A x = b (row-major A); null when not positive definite. */
function solveNormal(A: Float64Array, b: Float64Array, m: number, x: Float64Array, L: Float64Array, z: Float64Array): boolean {
  for (let r = 0; r < m; r++) {
    for (let c = 0; c <= r; c++) {
      let s = A[r * 4 + c];
      for (let k = 0; k < c; k++) s -= L[r * 4 + k] * L[c * 4 + k];
      if (r === c) {
        if (!(s > 1e-12 * (Math.abs(A[r * 4 + r]) + 1e-300))) return false;
        L[r * 4 + r] = Math.sqrt(s);
      } else L[r * 4 + c] = s / L[c * 4 + c];
    }
  }
  for (let r = 0; r < m; r++) {
    let s = b[r];
    for (let k = 0; k < r; k++) s -= L[r * 4 + k] * z[k];
    z[r] = s / L[r * 4 + r];
  }
  for (let r = m - 1; r >= 0; r--) {
    let s = z[r];
    for (let k = r + 1; k < m; k++) s -= L[k * 4 + r] * x[k];
    x[r] = s / L[r * 4 + r];
  }
  return true;
}

/** erf by Abramowitz & Stegun 7.1.26 (|error| < 1.5·10⁻⁷). */
function erf(x: number): number {
  const t = 1 / (1 + 0.3275911 * Math.abs(x));
  const y = 1 - (((((1.061405429 * t - 1.453152027) * t) + 1.421413741) * t - 0.284496736) * t + 0.254829592) * t * Math.exp(-x * x);
  return x >= 0 ? y : -y;
}

/** The data of one comb search: the fitted bins with their fixed sums. */
interface CombData {
  lo: number;
  hi: number;
  u: Float64Array;
  y: Float64Array;
  w: Float64Array;
  lin: Float64Array;
  /** Σw, Σw·lin, Σw·lin², Σw·y, Σw·lin·y, Σw·y². */
  s11: number;
  s1l: number;
  sll: number;
  s1y: number;
  sly: number;
  syy: number;
  comb: Float64Array;
  box: Float64Array;
  /** Profile bin, px (u[i + 1] − u[i]). */
  binPx: number;
  /** Scratch: each bin's nearest line index. */
  nearest: Int32Array;
  /** Scratch for the normal equations (A, b, x, Cholesky factor, forward solution). */
  A: Float64Array;
  b: Float64Array;
  x: Float64Array;
  L: Float64Array;
  z: Float64Array;
}

/**
 * Residual sum of squares of one comb (layers, first layer, line σ) with the background line
 * and, for three or more layers, the stack's mean level (a step over its n·d extent); the
 * layer depth (positive: the polarity's sign), or null when it comes out of the wrong sign.
 */
function combRss(D: CombData, layers: number, first: number, d: number, sg: number, sign: number, coef?: Float64Array): { rss: number; depth: number } | null {
  const { lo, hi, u, y, w, lin, comb, box } = D;
  const inv = 1 / (2 * sg * sg);
  const withBox = layers >= 3;
  const edgeA = first - d / 2;
  const edgeB = first + (layers - 0.5) * d;
  const es = 1 / (Math.SQRT2 * sg);
  let scc = 0, sc1 = 0, scl = 0, scy = 0, sbb = 0, sb1 = 0, sbl = 0, sby = 0, scb = 0;
  const reachK = Math.ceil((5 * sg) / d);
  // each bin takes the lines within reachK of its nearest one; each line's Gaussian is built
  // outwards from its peak bin by the exact product recurrence exp(−(t+h)²a) = exp(−t²a)·exp(−(2th+h²)a)
  // (two exponentials a line instead of one a bin and line; rounding ~1e-14 relative)
  const { nearest, binPx: h } = D;
  const invD = 1 / d;
  for (let i = lo; i < hi; i++) {
    nearest[i] = Math.round((u[i] - first) * invD);
    comb[i] = 0;
  }
  const stepRatio = Math.exp(-2 * h * h * inv);
  let iFrom = lo;
  let iTo = lo;
  for (let q = 0; q < layers; q++) {
    while (iFrom < hi && nearest[iFrom] < q - reachK) iFrom++;
    if (iTo < iFrom) iTo = iFrom;
    while (iTo < hi && nearest[iTo] <= q + reachK) iTo++;
    if (iFrom >= iTo) continue;
    const cq = first + q * d;
    const ip = Math.min(iTo - 1, Math.max(iFrom, Math.round((cq - u[0]) / h)));
    const t = u[ip] - cq;
    const e0 = Math.exp(-t * t * inv);
    comb[ip] += e0;
    let e = e0;
    let r = Math.exp(-(2 * t * h + h * h) * inv);
    for (let i = ip + 1; i < iTo; i++) {
      e *= r;
      comb[i] += e;
      r *= stepRatio;
    }
    e = e0;
    r = Math.exp(-(-2 * t * h + h * h) * inv);
    for (let i = ip - 1; i >= iFrom; i--) {
      e *= r;
      comb[i] += e;
      r *= stepRatio;
    }
  }
  for (let i = lo; i < hi; i++) {
    const wi = w[i];
    if (!(wi > 0)) {
      comb[i] = 0;
      box[i] = 0;
      continue;
    }
    const ui = u[i];
    const v = comb[i];
    const c = -sign * v;
    comb[i] = c;
    const wc = wi * c;
    scc += wc * c;
    sc1 += wc;
    scl += wc * lin[i];
    scy += wc * y[i];
    if (withBox) {
      // the step's edges are Gaussian-blurred like the lines; far from both edges it is 0 or 1
      let bx: number;
      // (beyond 5σ from an edge its erf is ±1 to 6·10⁻⁷, as the step is taken to be 0 or 1 there)
      const nearA = ui < edgeA + 5 * sg;
      const nearB = ui > edgeB - 5 * sg;
      if (ui < edgeA - 5 * sg || ui > edgeB + 5 * sg) bx = 0;
      else if (!nearA && !nearB) bx = 1;
      else if (!nearB) bx = 0.5 * (erf((ui - edgeA) * es) + 1);
      else if (!nearA) bx = 0.5 * (1 - erf((ui - edgeB) * es));
      else bx = 0.5 * (erf((ui - edgeA) * es) - erf((ui - edgeB) * es));
      box[i] = bx;
      const wb = wi * bx;
      sbb += wb * bx;
      sb1 += wb;
      sbl += wb * lin[i];
      sby += wb * y[i];
      scb += wc * bx;
    }
  }
  const m = withBox ? 4 : 3;
  const { A, b } = D;
  A[0] = D.s11; A[1] = D.s1l; A[2] = sc1; A[3] = sb1;
  A[4] = D.s1l; A[5] = D.sll; A[6] = scl; A[7] = sbl;
  A[8] = sc1; A[9] = scl; A[10] = scc; A[11] = scb;
  A[12] = sb1; A[13] = sbl; A[14] = scb; A[15] = sbb;
  b[0] = D.s1y; b[1] = D.sly; b[2] = scy; b[3] = sby;
  const x = coef ?? D.x;
  if (!solveNormal(A, b, m, x, D.L, D.z)) return null;
  if (!(x[2] > 0)) return null;
  // the residual sum taken directly (Σw·y² − fitted cancels to ~1e-9 when the comb fits well)
  let rss = 0;
  const x0 = x[0], x1 = x[1], x2 = x[2], x3 = withBox ? x[3] : 0;
  for (let i = lo; i < hi; i++) {
    const wi = w[i];
    if (!(wi > 0)) continue;
    const r = y[i] - x0 - x1 * lin[i] - x2 * comb[i] - x3 * box[i];
    rss += wi * r * r;
  }
  return { rss, depth: x[2] };
}

/**
 * The layer count of a stack on a profile: the comb of n equally spaced Gaussian layer lines
 * (plus the stack's mean level, a step over its n·d extent, for n ≥ 3, and a linear background)
 * that fits the profile best in the least-squares sense.
 *
 * Model fitting of a periodic line comb by linear least squares over a grid of the nonlinear
 * parameters (count, position, line width) (common practice; variable projection, Golub & Pereyra, SIAM J. Numer. Anal. 10, 413 (1973)).
 *
 * @param p the profile across the stack
 * @param periodPx the layer period, px
 * @param band the band where the stack lies (from {@link profileBands})
 * @param options polarity, count range or a fixed count, line widths, margins, limits
 * @returns the best comb with the evidence for a stack and for its count, or null when no comb fits
 * Notes: the fit uses the band ± the margin; the line σ is chosen at the band's own count
 * (round(width/period)), then counts from that ± countReach are tried with it; the layer lines
 * must have the polarity's sign. The noise variance comes from the best fit's residuals,
 * inflated by (1 + ρ)/(1 − ρ) for their lag-one correlation ρ (an AR(1) model of the
 * correlated bins).
 */
export function fitLayerComb(p: AcrossProfile, periodPx: number, band: { fromPx: number; toPx: number }, options: CombFitOptions = {}): CombFit | null {
  if (!(periodPx >= 1)) throw new RangeError(`periodPx must be ≥ 1, got ${periodPx}`);
  const sign = (options.polarity ?? 'dark') === 'dark' ? 1 : -1;
  const d = periodPx;
  const margin = options.marginPx ?? Math.max(2.5 * d, 6);
  const reach = options.countReach ?? 2;
  const sigmas = options.lineSigmasPx ?? [0.15, 0.2, 0.27, 0.36, 0.48].map((f) => Math.max(0.45, f * d));
  const n = p.values.length;
  const toBin = (x: number) => (x - p.startPx) / p.binPx;
  let lo = Math.max(0, Math.floor(toBin(band.fromPx - margin)));
  let hi = Math.min(n, Math.ceil(toBin(band.toPx + margin)) + 1);
  if (options.limitPx) {
    lo = Math.max(lo, Math.ceil(toBin(options.limitPx[0])));
    hi = Math.min(hi, Math.floor(toBin(options.limitPx[1])) + 1);
  }
  if (hi - lo < 8) return null;
  // one buffer for the bins' arrays (a typed array of its own each costs an allocation outside
  // the heap; this function runs some ten thousand times on an overview)
  const buf = new Float64Array(6 * n + 56);
  const u = buf.subarray(0, n);
  const y = buf.subarray(n, 2 * n);
  const w = buf.subarray(2 * n, 3 * n);
  const lin = buf.subarray(3 * n, 4 * n);
  for (let i = 0; i < n; i++) u[i] = p.startPx + i * p.binPx;
  const mid = 0.5 * (u[lo] + u[hi - 1]);
  const span = Math.max(1, u[hi - 1] - u[lo]);
  // the values about their weighted mean: the model has a constant term, so the fit is the same,
  // and Σw·y² − fitted (the residual sum) no longer cancels the profile's level to ~1e-8
  let sw = 0;
  let swy = 0;
  for (let i = lo; i < hi; i++) {
    if (p.weights[i] > 0 && Number.isFinite(p.values[i])) {
      sw += p.weights[i];
      swy += p.weights[i] * p.values[i];
    }
  }
  const level = sw > 0 ? swy / sw : 0;
  let s11 = 0, s1l = 0, sll = 0, s1y = 0, sly = 0, syy = 0;
  for (let i = lo; i < hi; i++) {
    lin[i] = (u[i] - mid) / span;
    if (p.weights[i] > 0 && Number.isFinite(p.values[i])) {
      y[i] = p.values[i] - level;
      w[i] = p.weights[i];
      s11 += w[i];
      s1l += w[i] * lin[i];
      sll += w[i] * lin[i] * lin[i];
      s1y += w[i] * y[i];
      sly += w[i] * lin[i] * y[i];
      syy += w[i] * y[i] * y[i];
    }
  }
  const D: CombData = { lo, hi, u, y, w, lin, s11, s1l, sll, s1y, sly, syy, comb: buf.subarray(4 * n, 5 * n), box: buf.subarray(5 * n, 6 * n), binPx: p.binPx, nearest: new Int32Array(n), A: buf.subarray(6 * n, 6 * n + 16), b: buf.subarray(6 * n + 16, 6 * n + 20), x: buf.subarray(6 * n + 20, 6 * n + 24), L: buf.subarray(6 * n + 24, 6 * n + 40), z: buf.subarray(6 * n + 40, 6 * n + 44) };
  // the background alone
  const det = s11 * sll - s1l * s1l;
  if (!(det > 0)) return null;
  const b0 = (sll * s1y - s1l * sly) / det;
  const b1 = (s11 * sly - s1l * s1y) / det;
  const rssNull = Math.max(0, syy - (b0 * s1y + b1 * sly));
  const width = band.toPx - band.fromPx;
  const n0 = options.layers ?? Math.max(1, Math.round(width / d));
  const centreReach = options.centreReachPx ?? 0.75 * d;
  const centre0 = 0.5 * (band.fromPx + band.toPx);
  const steps = Math.max(2, Math.ceil((2 * centreReach) / Math.max(0.1, d / 8)));
  const uLo = u[lo];
  const uHi = u[hi - 1];
  type Best = { rss: number; layers: number; first: number; sigma: number; depth: number };
  const search = (layers: number, sgs: number[]): Best | null => {
    let best: Best | null = null;
    for (const sg of sgs) {
      for (let k = 0; k <= steps; k++) {
        const centre = centre0 - centreReach + (2 * centreReach * k) / steps;
        const first = centre - ((layers - 1) * d) / 2;
        const last = first + (layers - 1) * d;
        // the stack must leave background on both sides of the fitted bins
        if (first - d < uLo || last + d > uHi) continue;
        const r = combRss(D, layers, first, d, sg, sign);
        if (r && (!best || r.rss < best.rss)) best = { rss: r.rss, layers, first, sigma: sg, depth: r.depth };
      }
    }
    return best;
  };
  // the line width at the band's own count, then the counts around it with that width
  const atN0 = search(n0, sigmas);
  const sgBest = atN0?.sigma ?? sigmas[Math.floor(sigmas.length / 2)];
  const bestByCount = new Map<number, Best>();
  if (atN0) bestByCount.set(n0, atN0);
  if (options.layers === undefined) {
    for (let c = Math.max(1, n0 - reach); c <= n0 + reach; c++) {
      if (c === n0) continue;
      const b = search(c, [sgBest]);
      if (b) bestByCount.set(c, b);
    }
  }
  if (bestByCount.size === 0) return null;
  let best: Best | null = null;
  for (const b of bestByCount.values()) if (!best || b.rss < best.rss) best = b;
  if (!best) return null;
  // one or two lines in a band read as more: their line width chosen again (the width fitted
  // for the band's count fills the band: a narrow single line in a band read two periods wide
  // took it, and the misfit hid the line; a thin stack has only its lines' contrast)
  if (best.layers < n0 && best.layers <= 2 && sigmas.length > 1) {
    const again = search(best.layers, sigmas);
    if (again && again.rss < best.rss) {
      best = again;
      bestByCount.set(best.layers, again);
    }
  }
  // residuals of the best fit: variance and lag-one correlation
  const coef = new Float64Array(4);
  combRss(D, best.layers, best.first, d, best.sigma, sign, coef);
  const withBox = best.layers >= 3;
  let rsum = 0;
  let num = 0;
  let den = 0;
  let prevR = NaN;
  for (let i = lo; i < hi; i++) {
    if (!(w[i] > 0)) {
      prevR = NaN;
      continue;
    }
    const m = coef[0] + coef[1] * lin[i] + coef[2] * D.comb[i] + (withBox ? coef[3] * D.box[i] : 0);
    const r = y[i] - m;
    rsum += w[i] * r * r;
    if (Number.isFinite(prevR)) {
      num += r * prevR;
      den += r * r;
    }
    prevR = r;
  }
  const rho = den > 0 ? Math.max(0, Math.min(0.95, num / den)) : 0;
  const dof = Math.max(1, hi - lo - (withBox ? 4 : 3) - 2);
  const noiseVar = Math.max(1e-300, (rsum / dof) * ((1 + rho) / (1 - rho)));
  const rssFewer = bestByCount.get(best.layers - 1)?.rss ?? Infinity;
  const rssMore = bestByCount.get(best.layers + 1)?.rss ?? Infinity;
  return {
    layers: best.layers,
    firstPx: best.first,
    periodPx: d,
    lineSigmaPx: best.sigma,
    depth: best.depth,
    rss: best.rss,
    rssNull,
    rssFewer,
    rssMore,
    noiseVar,
    evidence: (rssNull - best.rss) / noiseVar,
    // with no neighbouring count fitted (the profile holds no other), the margin is the evidence over no stack
    countMargin: (Math.min(rssFewer, rssMore, rssNull) - best.rss) / noiseVar,
    centerPx: best.first + ((best.layers - 1) * d) / 2,
    thicknessPx: best.layers * d,
  };
}

/**
 * The profile across an axis, robust to what crosses the stack: the stretch is cut into pieces
 * of about `pieceLengthPx`, each piece's profile is made by {@link acrossProfile}, and each bin
 * takes the interquartile mean of the pieces (the mean of the middle half), so another stack
 * crossing a quarter of the stretch moves it little.
 *
 * Interquartile (25 % trimmed) mean, a robust L-estimator (Tukey 1962; common practice).
 *
 * @param image the image
 * @param frame the axis frame
 * @param options as {@link acrossProfile}, and the piece length (default 12 px)
 * @returns the profile; with fewer than four pieces, the plain mean of the whole stretch
 */
export function robustAcrossProfile(image: GreyImage, frame: AxisFrame, options: AcrossProfileOptions & { pieceLengthPx?: number }): AcrossProfile {
  const from = options.fromPx ?? 0;
  const to = options.toPx ?? frame.lengthPx;
  const piece = options.pieceLengthPx ?? 12;
  if (!(piece > 0)) throw new RangeError(`pieceLengthPx must be positive, got ${piece}`);
  const k = Math.floor((to - from) / piece);
  if (k < 4) return acrossProfile(image, frame, options);
  const step = (to - from) / k;
  // each piece's bins as acrossProfile gives them, in one buffer (piece j at row j)
  const { U, bin, nb } = profileBins(options);
  const partSum = new Float64Array(k * nb);
  const partWeight = new Float64Array(k * nb);
  for (let j = 0; j < k; j++) binAcross(image, frame, from + j * step, from + (j + 1) * step - 1e-6, U, bin, options.offsetPx ?? 0, partSum.subarray(j * nb, (j + 1) * nb), partWeight.subarray(j * nb, (j + 1) * nb));
  const values = new Float64Array(nb);
  const weights = new Float64Array(nb);
  const col = new Float64Array(k);
  for (let i = 0; i < nb; i++) {
    let nc = 0;
    let wsum = 0;
    for (let j = 0; j < k; j++) {
      const w = partWeight[j * nb + i];
      // the piece's value, as acrossProfile gives it (NaN where it has no pixel)
      const v = w > 0 ? partSum[j * nb + i] / w : NaN;
      if (w > 0 && Number.isFinite(v)) {
        col[nc++] = v;
        wsum += w;
      }
    }
    if (nc === 0) {
      values[i] = NaN;
      continue;
    }
    const sorted = col.subarray(0, nc).sort();
    const a = Math.floor(nc / 4);
    const b = Math.max(a + 1, nc - a);
    let s = 0;
    for (let t = a; t < b; t++) s += sorted[t];
    values[i] = s / (b - a);
    // the middle half carries about 0.8 of the information of all pieces (for normal noise)
    weights[i] = 0.8 * wsum;
  }
  return { startPx: -((nb - 1) * bin) / 2, binPx: bin, values, weights, lengthPx: to - from };
}
