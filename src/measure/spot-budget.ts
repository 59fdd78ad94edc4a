/**
 * The final value and uncertainty budget of a spectrum spot: refined on the part of the region
 * where its fringes are, with the scatter of its local periods over sub-regions.
 */
import type { GreyImage } from '../image/grey-image';
import { localSpread } from './pool';
import { refineData, type RefineData, refineSpot } from './refine';
import type { RectPx, Spot } from './spectrum';
import { frequencyAngleDeg } from './spectrum';
import { type ComplexSpectrum, type FrequencyStd, pixelWeights, type SpotField, spotField, spotSupport, weightedFrequencyStd } from './spot-field';

/** Below this many periods across the region the final fit uses the Hann window (see budgetSpot). */
const HANN_BELOW_PERIODS = 40;

/** Options of {@link budgetSpot}. */
export interface SpotBudgetOptions {
  /** Below this covered fraction the spot is refitted on its support alone (default 0.8). */
  supportCoverage?: number;
  /** Significance level of the local-variation test over sub-regions (default 0.01). */
  spreadLevel?: number;
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
export function budgetSpot(image: GreyImage, data: RefineData, spec: ComplexSpectrum, spot: Spot, options: SpotBudgetOptions = {}): BudgetedSpot {
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
  if (support.coverage > 0 && support.coverage < coverMax) {
    const w = pixelWeights(support.weights, field.gridSize, area.width, area.height);
    const r1 = refineSpot(data, r0, { weights: w, maxShiftBins: 4 });
    if (r1) {
      best = r1;
      onSupport = true;
      weightsGrid = support.weights;
      field = spotField(spec, r1.fx, r1.fy);
    } else {
      notes.push(`the spot at ${r0.periodPx.toFixed(2)} px could not be refitted on its ${(100 * support.coverage).toFixed(0)} % of the region`);
    }
  }
  const std = weightedFrequencyStd(field, weightsGrid, data.windowX, data.windowY);
  const stat = Number.isFinite(std.fxStd) ? periodAndAngleStd(best.fx, best.fy, std) : { periodPx: best.u.statisticalPx, angleDeg: best.uAngleDeg };

  // Local periods over sub-regions.
  const n = field.gridSize;
  const side = (len: number) => Math.max(1, Math.min(4, Math.floor(len / Math.max(48, 5 * best.periodPx))));
  const kx = side(area.width);
  const ky = side(area.height);
  const local: { value: number; u: number }[] = [];
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
        if (blockCover < 0.3) continue; // the spot's fringes are not (or barely) here
        const block: RectPx = { x, y, width, height };
        const bData = refineData(image, block, 1); // Hann: a block holds few periods
        const bw = onSupport ? blockWeights(support.weights, n, i0, i1, j0, j1, width, height) : undefined;
        const rb = refineSpot(bData, best, { weights: bw, maxShiftBins: 1, iterations: 4 });
        if (!rb) continue;
        const sb = weightedFrequencyStd(field, onSupport ? support.weights : null, bData.windowX, bData.windowY, { i0, i1, j0, j1 });
        const pb = periodAndAngleStd(rb.fx, rb.fy, sb).periodPx;
        if (Number.isFinite(pb) && pb > 0) local.push({ value: rb.periodPx, u: pb });
      }
    }
  }
  const spread = localSpread(local, options.spreadLevel ?? 0.01);
  if (spread.significant) notes.push(`the period of the spot at ${best.periodPx.toFixed(2)} px varies over the region: local periods ${local.map((l) => l.value.toFixed(2)).join(', ')} px`);
  const fx = best.fx;
  const fy = best.fy;
  const out: Spot = {
    ...best,
    angleDeg: frequencyAngleDeg(fx, fy),
    u: { statisticalPx: stat.periodPx, localVariationPx: spread.spread, methodPx: 0 },
    uAngleDeg: stat.angleDeg,
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
