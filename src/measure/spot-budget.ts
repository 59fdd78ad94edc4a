/**
 * The final value and uncertainty budget of a spectrum spot: refined on the part of the region
 * where its fringes are, with the scatter of its local periods over sub-regions.
 */
import type { GreyImage } from '../image/grey-image';
import type { Workspace } from '../image/workspace';
import { localSpread } from './pool';
import { refineData, type RefineData, refineSpot } from './refine';
import type { RectPx, Spot } from './spectrum';
import { frequencyAngleDeg, powerSpectrum } from './spectrum';
import { type ComplexSpectrum, fieldGeometry, type FrequencyStd, pixelWeights, type SpotField, spotField, spotSupport, weightedFrequencyStd } from './spot-field';

/** Below this many periods across a crystal's support, the few-periods allowance applies (see budgetSpot). */
const FEW_PERIODS = 40;

/** The support is used only when its plateau amplitude exceeds the noise amplitude by this factor. */
const SUPPORT_MIN_SNR = 8;

/** Below this many periods across the region the final fit uses the Hann window (see budgetSpot). */
const HANN_BELOW_PERIODS = 40;

/** Options of {@link budgetSpot}. */
export interface SpotBudgetOptions {
  /** Below this covered fraction the spot is refitted on its support alone (default 0.8). */
  supportCoverage?: number;
  /** Significance level of the local-variation test over sub-regions (default 0.01). */
  spreadLevel?: number;
  /**
   * Borrow the per-pixel support weights from this workspace's 'spot-weights' buffer instead of
   * allocating them per spot (see createWorkspace); the results do not depend on it. Default: fresh arrays.
   */
  workspace?: Workspace;
}

/** A spot with its budget and where it lives. */
export interface BudgetedSpot {
  spot: Spot;
  /** Fraction of the region its fringes cover (0–1). */
  coverage: number;
  /** Whether it was refitted on its support only. */
  onSupport: boolean;
  /** The local periods of the sub-regions that hold it (px). */
  localPeriodsPx: number[];
  /** The support weights on the field grid (for merging duplicates). */
  supportWeights: Float64Array;
  /** Notes for the user. */
  notes: string[];
}

/** Radial (along f) and tangential standard deviations of a frequency vector, as period and angle. */
function periodAndAngleStd(fx: number, fy: number, std: FrequencyStd): { periodPx: number; angleDeg: number } {
  const f = Math.hypot(fx, fy);
  const sx = std.fxStd;
  const sy = std.fyStd;
  const sRad = Math.sqrt((fx * fx * sx * sx + fy * fy * sy * sy) / (f * f));
  const sTan = Math.sqrt((fy * fy * sx * sx + fx * fx * sy * sy) / (f * f));
  return { periodPx: sRad / (f * f), angleDeg: ((sTan / f) * 180) / Math.PI };
}

/**
 * Refines one spot where its fringes are and states its uncertainty by parts.
 *
 * Parameters: image; data (refineData of the transformed area); spec (complexSpectrum of the same
 * area); spot (from findSpots); options.
 * Returns: the spot with refined frequency, period, angle and uncertainty parts, and where it lives.
 * Notes:
 * 1. The spot's band-pass field (geometric phase analysis) shows where its fringes are. When they
 *    cover less than `supportCoverage` of the region (a small crystal, a tactoid in a film), the
 *    periodogram maximum is searched again with the data weighted by that support: the window
 *    and the crystal's edges no longer pull the estimate (a finite crystal off the window's
 *    centre biases an unweighted fit by up to a per cent).
 * 2. Statistical part: the Cramér–Rao-type bound of the weighted fit for the measured local
 *    amplitude and the background power near the spot (weightedFrequencyStd).
 * 3. Local variation: the region is cut into 2–4 × 2–4 sub-regions of at least five periods; the
 *    spot is refitted in each that holds its fringes. When their periods differ more than their
 *    own bounds allow (Cochran's Q at 1 %), the spread τ of the local periods is the local-variation
 *    part: curved or strained fringes are stated with the spread of their local periods, not the
 *    precision of one peak fit.
 * Reference: Hÿtch, Snoeck & Kilaas, Ultramicroscopy 74, 131 (1998) (support); Rife & Boorstyn,
 * IEEE Trans. Inf. Theory 20(5), 591 (1974) (bound); Cochran, Biometrics 10, 101 (1954); DerSimonian & Laird (1986).
 */
export async function budgetSpot(image: GreyImage, data: RefineData, spec: ComplexSpectrum, spot: Spot, options: SpotBudgetOptions = {}): Promise<BudgetedSpot> {
  // eslint-disable-next-line no-param-reassign
  const coverMax = options.supportCoverage ?? 0.8;
  const notes: string[] = [];
  const area = data.area;
  // With few periods across the region the Friedel mate (at −f) lies close and leaks through a
  // light taper's side lobes, pulling the maximum: then the Hann window (side lobes falling as
  // 1/k³) is used, at some cost in variance that the bound below accounts for.
  const fAbs = Math.hypot(spot.fx, spot.fy);
  const across = Math.abs(spot.fx) * area.width + Math.abs(spot.fy) * area.height;
  if (fAbs > 0 && across < HANN_BELOW_PERIODS) {
    data = refineData(image, area, 1);
  }
  const r0 = refineSpot(data, spot) ?? spot;
  let field: SpotField = spotField(spec, r0.fx, r0.fy);
  const support = spotSupport(field);
  let best = r0;
  let onSupport = false;
  let weightsGrid: Float64Array | null = null;
  // the per-pixel support weights of the first refit; the second refit (below) writes its own into the same array
  let weightsPx: Float32Array | null = null;
  let unsettledPx = 0;
  // A support is only known where the fringes stand well above the noise cell by cell; faint
  // fringes (low dose) are fitted over the whole region, as a noisy mask would cost more than it saves.
  const supportKnown = support.peakAmplitude > SUPPORT_MIN_SNR * field.noiseAmplitude;
  if (supportKnown && support.coverage > 0 && support.coverage < coverMax) {
    const w = pixelWeights(support.weights, field.gridSize, area.width, area.height, options.workspace?.float32('spot-weights', area.width * area.height));
    weightsPx = w;
    const r1 = refineSpot(data, r0, { weights: w, maxShiftBins: 4 });
    if (r1) {
      best = r1;
      onSupport = true;
      weightsGrid = support.weights;
      field = spotField(spec, r1.fx, r1.fy);
    } else {
      // no maximum on the support near the whole-region one: the fringes there do not make one
      // clear spot (bent, or a side lobe); the value stays the whole-region fit, and a bin's worth
      // of frequency on the support's scale is its method part
      const extent = Math.sqrt(support.coverage * area.width * area.height);
      unsettledPx = r0.periodPx * r0.periodPx / extent;
      notes.push(`the spot at ${r0.periodPx.toFixed(2)} px has no clear maximum on its ${(100 * support.coverage).toFixed(0)} % of the region: a method uncertainty of ${unsettledPx.toPrecision(2)} px is added`);
    }
  }
  const std = weightedFrequencyStd(field, weightsGrid, data.windowX, data.windowY);
  const stat = Number.isFinite(std.fxStd) ? periodAndAngleStd(best.fx, best.fy, std) : { periodPx: best.u.statisticalPx, angleDeg: best.uAngleDeg };
  // Method, for a crystal that fills part of the region: how much the result depends on how its
  // edges are weighted. A second fit with the support squared (edges weighted down further)
  // differs from the first by noise (the part of its larger variance not shared) and by the
  // finite crystal's bias; the difference beyond that noise is the method part.
  let finiteCrystalPx = 0;
  let fewPeriodsPx = 0;
  if (onSupport && weightsGrid) {
    // A crystal of few periods along its normal: its mean contrast step and edges put side lobes
    // 1/(N·d) apart around the spot with relative amplitude ~1/(πN), which pull the maximum by an
    // amount falling as 1/N² (transform of a finite lattice). Our stated allowance: d/(2N²), N the
    // number of periods across the support (from its second moment along the normal).
    const periods = supportExtentAlongPx(weightsGrid, field, best.fx, best.fy) / best.periodPx;
    if (periods > 0 && periods < FEW_PERIODS) fewPeriodsPx = best.periodPx / (2 * periods * periods);
    const w2grid = weightsGrid.map((v) => v * v);
    // the first weights are no longer used: the second take their array (pixelWeights writes every element)
    const w2 = pixelWeights(w2grid, field.gridSize, area.width, area.height, weightsPx ?? undefined);
    const r2 = refineSpot(data, best, { weights: w2, maxShiftBins: 2 });
    if (r2) {
      const s2 = weightedFrequencyStd(field, w2grid, data.windowX, data.windowY);
      const p2 = Number.isFinite(s2.fxStd) ? periodAndAngleStd(r2.fx, r2.fy, s2).periodPx : 0;
      const noise2 = Math.max(0, p2 * p2 - stat.periodPx * stat.periodPx);
      finiteCrystalPx = Math.sqrt(Math.max(0, (r2.periodPx - best.periodPx) ** 2 - noise2));
    }
  }

  // Local periods over sub-regions.
  const n = field.gridSize;
  const side = (len: number) => Math.max(1, Math.min(6, Math.floor(len / Math.max(32, 5 * best.periodPx))));
  const kx = side(area.width);
  const ky = side(area.height);
  const local: { value: number; u: number; angleDeg: number; uAngleDeg: number }[] = [];
  if (kx * ky >= 2) {
    for (let by = 0; by < ky; by++) {
      for (let bx = 0; bx < kx; bx++) {
        const i0 = Math.round((bx * n) / kx);
        const i1 = Math.round(((bx + 1) * n) / kx);
        const j0 = Math.round((by * n) / ky);
        const j1 = Math.round(((by + 1) * n) / ky);
        // the block in pixels: whole cells
        const x = area.x + Math.round(i0 * field.cellWidthPx);
        const y = area.y + Math.round(j0 * field.cellHeightPx);
        const width = Math.round(i1 * field.cellWidthPx) - Math.round(i0 * field.cellWidthPx);
        const height = Math.round(j1 * field.cellHeightPx) - Math.round(j0 * field.cellHeightPx);
        if (width < 16 || height < 16) continue;
        let wsum = 0;
        for (let j = j0; j < j1; j++) for (let i = i0; i < i1; i++) wsum += support.weights[j * n + i];
        const blockCover = wsum / ((i1 - i0) * (j1 - j0));
        if (blockCover < 0.6) continue; // the spot's fringes do not fill this block: its local fit would see their edges
        const block: RectPx = { x, y, width, height };
        const bData = refineData(image, block, 1); // Hann: a block holds few periods
        const bw = onSupport ? blockWeights(support.weights, n, i0, i1, j0, j1, width, height) : undefined;
        // Bent fringes change direction from block to block: start from the block's own maximum
        // near the spot (within ±45° and ±15 % of its frequency).
        const start = await blockPeak(image, block, best, options.workspace);
        if (!start) continue;
        const rb = refineSpot(bData, start, { weights: bw, maxShiftBins: 1, iterations: 4 });
        if (!rb) continue;
        const sb = weightedFrequencyStd(field, onSupport ? support.weights : null, bData.windowX, bData.windowY, { i0, i1, j0, j1 });
        const pb = periodAndAngleStd(rb.fx, rb.fy, sb).periodPx;
        const ab = periodAndAngleStd(rb.fx, rb.fy, sb).angleDeg;
        if (Number.isFinite(pb) && pb > 0) local.push({ value: rb.periodPx, u: pb, angleDeg: rb.angleDeg, uAngleDeg: ab });
      }
    }
  }
  const spread = localSpread(local, options.spreadLevel ?? 0.01);
  // Bent or curved fringes: the local directions differ beyond their own uncertainty. Their spot
  // is an arc whose maximum lies off the ring, so the whole-region fit is biased; the value is then
  // the mean of the local periods, stated with their spread (not the precision of one peak fit).
  const turning = directionSpread(local);
  let value = best.periodPx;
  let statisticalPx = stat.periodPx;
  let localVariationPx = spread.spread;
  let curved = false;
  if (turning.significant && local.length >= 3) {
    curved = true;
    const m = local.reduce((a, l) => a + l.value, 0) / local.length;
    const sd = Math.sqrt(local.reduce((a, l) => a + (l.value - m) ** 2, 0) / (local.length - 1));
    let sw = 0;
    let swx = 0;
    for (const l of local) {
      sw += 1 / (l.u * l.u);
      swx += l.value / (l.u * l.u);
    }
    value = swx / sw;
    statisticalPx = 1 / Math.sqrt(sw);
    localVariationPx = sd;
    notes.push(`the fringes of the spot at ${best.periodPx.toFixed(2)} px bend (local directions spread ${turning.sdDeg.toFixed(1)}°): the period is the mean of ${local.length} local periods, with their spread`);
  } else if (spread.significant) {
    notes.push(`the period of the spot at ${best.periodPx.toFixed(2)} px varies over the region: local periods ${local.map((l) => l.value.toFixed(2)).join(', ')} px`);
  }
  // Bent fringes on a support too small for sub-regions (a grain): the phase of the spot's field
  // shows their directions turning; the local frequency magnitude is then a second estimate, and
  // its disagreement with the fit is the method part.
  let bentPx = 0;
  if (!curved && onSupport && weightsGrid) {
    const g = fieldGeometry(field, weightsGrid);
    if (g.cells >= 9 && g.directionSdDeg > MIN_TURN_DEG && Number.isFinite(g.meanMagnitudePerPx)) {
      // averaging local frequency vectors that turn by a spread θ shortens them by cos θ ≈ 1 − θ²/2:
      // the period can be off by about d·θ²/2, whichever estimate is nearer
      const theta = (g.directionSdDeg * Math.PI) / 180;
      bentPx = Math.max(Math.abs(best.periodPx - 1 / g.meanMagnitudePerPx), (best.periodPx * theta * theta) / 2);
      if (bentPx > 0) notes.push(`the fringes of the spot at ${best.periodPx.toFixed(2)} px turn by ${g.directionSdDeg.toFixed(1)}° over their grain: their local period ${(1 / g.meanMagnitudePerPx).toFixed(3)} px sets a method uncertainty`);
    }
  }
  const fx = best.fx;
  const fy = best.fy;
  const scale = best.periodPx / value; // keep the direction, set |f| = 1/value
  const out: Spot = {
    ...best,
    fx: fx * scale,
    fy: fy * scale,
    periodPx: value,
    angleDeg: frequencyAngleDeg(fx, fy),
    u: { statisticalPx, localVariationPx, methodPx: curved ? 0 : Math.hypot(finiteCrystalPx, fewPeriodsPx, bentPx, unsettledPx) },
    uAngleDeg: curved ? Math.max(stat.angleDeg, turning.sdDeg) : stat.angleDeg,
  };
  return { spot: out, coverage: support.coverage, onSupport, localPeriodsPx: local.map((l) => l.value), supportWeights: support.weights, notes };
}

/** The support weights of a block of grid cells, per pixel of the block. */
function blockWeights(grid: Float64Array, n: number, i0: number, i1: number, j0: number, j1: number, width: number, height: number): Float32Array {
  const bw = i1 - i0;
  const bh = j1 - j0;
  const sub = new Float64Array(bw * bh);
  for (let j = 0; j < bh; j++) for (let i = 0; i < bw; i++) sub[j * bw + i] = grid[(j0 + j) * n + (i0 + i)];
  // pixelWeights expects a square grid: resample the block's cells bilinearly
  const out = new Float32Array(width * height);
  for (let y = 0; y < height; y++) {
    const gy = Math.min(bh - 1.000001, Math.max(0, (y * bh) / height));
    const a0 = Math.floor(gy);
    const fy = gy - a0;
    const a1 = Math.min(bh - 1, a0 + 1);
    for (let x = 0; x < width; x++) {
      const gx = Math.min(bw - 1.000001, Math.max(0, (x * bw) / width));
      const b0 = Math.floor(gx);
      const fx = gx - b0;
      const b1 = Math.min(bw - 1, b0 + 1);
      out[y * width + x] = (sub[a0 * bw + b0] * (1 - fx) + sub[a0 * bw + b1] * fx) * (1 - fy) + (sub[a1 * bw + b0] * (1 - fx) + sub[a1 * bw + b1] * fx) * fy;
    }
  }
  return out;
}

/**
 * The strongest bin of a block's Hann power spectrum near a spot (within ±45° of its direction and
 * ±15 % of its frequency), as a starting spot for the block's refit; null when the block holds no
 * peak there that is significant at 1 % against the sector's own background and at least
 * BLOCK_MIN_PEAK times it. The block's spectrum is borrowed from the workspace ('block-power') when one is given.
 */
async function blockPeak(image: GreyImage, block: RectPx, spot: Spot, workspace?: Workspace): Promise<Spot | null> {
  // the region's own spectrum may still be held in the workspace's 'spectrum-power': a purpose of its own
  const ps = await powerSpectrum(image, block, { window: 'hann', detrend: 'plane', workspace, workspacePurpose: 'block-power' });
  const { width: w, height: h, power } = ps;
  const f0 = Math.hypot(spot.fx, spot.fy);
  const a0 = Math.atan2(spot.fy, spot.fx);
  const ringIn2 = (0.85 * f0) ** 2 * (1 - 1e-9);
  const ringOut2 = (1.15 * f0) ** 2 * (1 + 1e-9);
  let best = -1;
  let bu = 0;
  let bv = 0;
  const sector: number[] = [];
  for (let v = 0; v < h; v++) {
    const fy = (v < h / 2 ? v : v - h) / h;
    for (let u = 0; u < w; u++) {
      const fx = (u < w / 2 ? u : u - w) / w;
      // a cheap test on |f|² first (with a margin far above rounding), so that only bins near the
      // ring pay for the exact test below, which decides as before
      const f2 = fx * fx + fy * fy;
      if (f2 < ringIn2 || f2 > ringOut2) continue;
      const f = Math.hypot(fx, fy);
      if (f < 0.85 * f0 || f > 1.15 * f0) continue;
      let da = Math.atan2(fy, fx) - a0;
      while (da > Math.PI) da -= 2 * Math.PI;
      while (da < -Math.PI) da += 2 * Math.PI;
      if (Math.abs(da) > Math.PI / 4) continue;
      const p = power[v * w + u];
      sector.push(p);
      if (p > best) {
        best = p;
        bu = fx;
        bv = fy;
      }
    }
  }
  if (!(best > 0) || sector.length < 4) return null;
  // the block's own peak must stand out of its sector (exponential background: median/ln 2 is the
  // mean; the largest of K bins exceeds ln(K/α) times the mean with probability α), else the
  // block is too noisy to say anything about the local period
  sector.sort((a, b) => a - b);
  const meanBg = sector[sector.length >> 1] / Math.LN2;
  if (!(best > Math.max(BLOCK_MIN_PEAK, Math.log(sector.length / BLOCK_ALPHA)) * meanBg)) return null;
  return { ...spot, fx: bu, fy: bv, periodPx: 1 / Math.hypot(bu, bv), angleDeg: frequencyAngleDeg(bu, bv) };
}

/**
 * Whether local directions differ beyond their own uncertainties (Cochran's Q at 1 % on the
 * angles, axial), and their weighted standard deviation in degrees.
 * Reference: Cochran, Biometrics 10, 101 (1954).
 */
function directionSpread(local: readonly { angleDeg: number; uAngleDeg: number }[]): { significant: boolean; sdDeg: number } {
  if (local.length < 2) return { significant: false, sdDeg: 0 };
  // unwrap axial angles around the first
  const ref = local[0].angleDeg;
  const a = local.map((l) => {
    let d = l.angleDeg - ref;
    while (d > 90) d -= 180;
    while (d < -90) d += 180;
    return { value: ref + d, u: Math.max(l.uAngleDeg, 0.05) };
  });
  const m = a.reduce((s, x) => s + x.value, 0) / a.length;
  const sd = Math.sqrt(a.reduce((s, x) => s + (x.value - m) ** 2, 0) / (a.length - 1));
  const spread = localSpread(a);
  return { significant: spread.significant && sd > MIN_TURN_DEG, sdDeg: sd };
}

/** False-alarm probability of a sub-region's own peak (see blockPeak). */
const BLOCK_ALPHA = 0.01;
/**
 * Smallest peak-to-background power ratio of a sub-region's peak: below it a frequency estimate
 * leaves the Cramér–Rao regime (the threshold effect) and its scatter would pass for local variation.
 */
const BLOCK_MIN_PEAK = 40;

/** Local directions must spread by more than this (degrees) to count as bent fringes. */
const MIN_TURN_DEG = 3;

/**
 * Extent of a support along a direction: √12 times the weighted standard deviation of the cells'
 * positions along the unit vector of (fx, fy) (a uniform slab of width L has variance L²/12), px.
 */
function supportExtentAlongPx(weights: Float64Array, field: SpotField, fx: number, fy: number): number {
  const n = field.gridSize;
  const f = Math.hypot(fx, fy);
  const ux = fx / f;
  const uy = fy / f;
  let sw = 0;
  let s1 = 0;
  let s2 = 0;
  for (let j = 0; j < n; j++) for (let i = 0; i < n; i++) {
    const w = weights[j * n + i];
    if (!(w > 0)) continue;
    const t = i * field.cellWidthPx * ux + j * field.cellHeightPx * uy;
    sw += w;
    s1 += w * t;
    s2 += w * t * t;
  }
  if (!(sw > 0)) return 0;
  const m = s1 / sw;
  return Math.sqrt(12 * Math.max(0, s2 / sw - m * m));
}
