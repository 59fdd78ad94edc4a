/**
 * Domain maps: local layer period and orientation over an image on overlapping tiles, and the
 * segmentation into domains of consistent period and orientation (fingerprint-like lamellar
 * mesophases, polycrystalline layered films).
 */
import type { GreyImage } from '../image/grey-image';
import { profilePeriod } from './profile';
import { fitSinusoidTrend } from './signal';
import { axialDifferenceDeg, structureTensor } from './structure-tensor';

/** R² of a least-squares sinusoid (plus constant and linear trend) of the given period fitted to a profile. */
function sinusoidR2(v: number[], periodPx: number): number {
  const n = v.length;
  if (n < 4) return 0;
  const fit = fitSinusoidTrend(v, periodPx);
  if (!fit) return 0;
  const [c0, c1] = fit.coef;
  let mean = 0;
  for (const x of v) mean += x;
  mean /= n;
  // variance explained by the sinusoid beyond the constant and trend
  let ssTot = 0;
  let ssTrend = 0;
  for (let i = 0; i < n; i++) {
    ssTot += (v[i] - mean) ** 2;
    ssTrend += (v[i] - c0 - c1 * (i / n - 0.5)) ** 2;
  }
  const ssRes = fit.rss;
  return ssTot > 0 && ssTrend > 0 ? 1 - ssRes / ssTrend : 0;
}

/** Options for `domainMap`. */
export interface DomainMapOptions {
  /** Side of the square tiles, px (default 64). */
  tileSizePx?: number;
  /** Step between tile origins, px (default tileSizePx / 2: half-overlapping tiles). */
  stepPx?: number;
  /** Shortest period searched, px (default 3). */
  minPeriodPx?: number;
  /** Longest period searched, px (default tileSizePx / 4). */
  maxPeriodPx?: number;
  /** A tile is periodic when its tensor coherence exceeds this (default 0.3) ... */
  coherenceThreshold?: number;
  /** ... and a sinusoid at its period explains more than this fraction of the projected profile's variance (default 0.3). */
  strengthThreshold?: number;
  /** A neighbouring tile joins a domain when its normal differs from the domain's mean by less than this (default 10°) ... */
  angleToleranceDeg?: number;
  /** ... and its period from the domain's mean period by less than this fraction (default 0.06). */
  periodTolerance?: number;
}

/** One domain. */
export interface Domain {
  /** Label in `labels` (0, 1, 2 …). */
  id: number;
  /** Number of tiles. */
  tiles: number;
  /** Area covered, px² (tiles × step², the tiling's own cell). */
  areaPx: number;
  /** Area in nm² (null without calibration). */
  areaNm2: number | null;
  /** Mean period of its tiles, px and nm. */
  periodPx: number;
  periodNm: number | null;
  /** Standard deviation of the tile periods, px. */
  periodSdPx: number;
  /** Mean direction of the layer normal, degrees in [0, 180), CCW from +x on screen. */
  angleDeg: number;
  /** Centroid of its tile centres, px [x, y]. */
  centerPx: [number, number];
}

/** The maps and domains. Maps are on the tile grid, row-major, columns × rows. */
export interface DomainMapResult {
  columns: number;
  rows: number;
  tileSizePx: number;
  stepPx: number;
  /** Local period, px (NaN where the tile is not periodic). */
  periodPx: Float32Array;
  /** Local normal direction, degrees (NaN where not periodic). */
  angleDeg: Float32Array;
  /** Tensor coherence of each tile. */
  coherence: Float32Array;
  /** Fraction of each tile's projected-profile variance explained by a sinusoid at its period (R²). */
  strength: Float32Array;
  /** Domain label of each tile, −1 where not periodic. */
  labels: Int32Array;
  /** Domains, largest first (ids are renumbered in that order). */
  domains: Domain[];
}

/**
 * Local period and orientation maps and their domain segmentation.
 *
 * Tile orientation from the summed structure tensor (Bigün & Granlund 1987); tile period from the periodogram of the tile projected onto its normal, strength as the R² of a sinusoid fit; domains by seeded 4-connected region growing against the domain's running mean.
 *
 * @param image the image (its calibration gives the nm fields)
 * @param options tile size and step, period range, thresholds and tolerances
 * @returns maps of period, angle, coherence and strength on the tile grid, domain labels and per-domain statistics
 * Notes: the projection averages every tile pixel into 1-px bins of distance along the normal,
 * so the profile is as wide as the tile; only bins filled by at least a quarter of the tile's
 * side are used.
 */
export function domainMap(image: GreyImage, options: DomainMapOptions = {}): DomainMapResult {
  const tile = options.tileSizePx ?? 64;
  const step = options.stepPx ?? Math.max(1, Math.round(tile / 2));
  const minP = options.minPeriodPx ?? 3;
  const maxP = options.maxPeriodPx ?? tile / 4;
  const cohThr = options.coherenceThreshold ?? 0.3;
  const strThr = options.strengthThreshold ?? 0.3;
  const angTol = options.angleToleranceDeg ?? 10;
  const perTol = options.periodTolerance ?? 0.06;
  if (!(Number.isInteger(tile) && tile >= 16)) throw new RangeError(`tileSizePx must be an integer ≥ 16, got ${tile}`);
  if (!(Number.isInteger(step) && step >= 1)) throw new RangeError(`stepPx must be a positive integer, got ${step}`);
  if (tile > image.width || tile > image.height) throw new RangeError(`tileSizePx ${tile} exceeds the ${image.width} × ${image.height} image`);
  if (!(minP >= 2 && maxP > minP)) throw new RangeError(`period range must satisfy 2 ≤ minPeriodPx < maxPeriodPx, got ${minP}–${maxP}`);
  if (!(perTol > 0 && perTol < 1)) throw new RangeError(`periodTolerance must be in (0, 1), got ${perTol}`);
  const { width, height, data } = image;
  const field = structureTensor(image, { gradientSigmaPx: 1, integrationSigmaPx: 0.5 });
  const columns = Math.floor((width - tile) / step) + 1;
  const rows = Math.floor((height - tile) / step) + 1;
  const nt = columns * rows;
  const periodPx = new Float32Array(nt).fill(NaN);
  const angleDeg = new Float32Array(nt).fill(NaN);
  const coherence = new Float32Array(nt);
  const strength = new Float32Array(nt);
  const nBins = Math.ceil(tile * Math.SQRT2) + 3;
  const sum = new Float64Array(nBins);
  const cnt = new Float64Array(nBins);
  for (let r = 0; r < rows; r++) {
    for (let c = 0; c < columns; c++) {
      const t = r * columns + c;
      const x0 = c * step;
      const y0 = r * step;
      let a = 0;
      let b = 0;
      let d = 0;
      for (let y = y0; y < y0 + tile; y++) {
        for (let x = x0; x < x0 + tile; x++) {
          const i = y * width + x;
          a += field.jxx[i];
          b += field.jxy[i];
          d += field.jyy[i];
        }
      }
      const tr = a + d;
      const coh = tr > 0 ? Math.hypot(a - d, 2 * b) / tr : 0;
      coherence[t] = coh;
      const phi = 0.5 * Math.atan2(2 * b, a - d);
      const deg = ((((-phi * 180) / Math.PI) % 180) + 180) % 180;
      // project onto the normal (image axes: (cos φ, sin φ))
      const nx = Math.cos(phi);
      const ny = Math.sin(phi);
      sum.fill(0);
      cnt.fill(0);
      const cx = x0 + (tile - 1) / 2;
      const cy = y0 + (tile - 1) / 2;
      const off = (nBins - 1) / 2;
      for (let y = y0; y < y0 + tile; y++) {
        for (let x = x0; x < x0 + tile; x++) {
          const k = Math.round((x - cx) * nx + (y - cy) * ny + off);
          sum[k] += data[y * width + x];
          cnt[k]++;
        }
      }
      const prof: number[] = [];
      for (let k = 0; k < nBins; k++) if (cnt[k] >= tile / 4) prof.push(sum[k] / cnt[k]);
      if (prof.length < Math.max(8, 2 * maxP)) continue;
      const est = profilePeriod(prof, minP, Math.min(maxP, prof.length / 2.5));
      const fit = sinusoidR2(prof, est.periodPx);
      strength[t] = fit;
      if (coh > cohThr && fit > strThr) {
        periodPx[t] = est.periodPx;
        angleDeg[t] = deg;
      }
    }
  }
  // region growing on the tile grid: seeds in order of coherence; a neighbour joins when it
  // agrees with the domain's running mean direction and period (not just with its neighbour, so
  // a slow drift cannot chain grains together)
  const owner = new Int32Array(nt).fill(-1);
  const order = Array.from({ length: nt }, (_, i) => i)
    .filter((i) => Number.isFinite(periodPx[i]))
    .sort((i, j) => coherence[j] - coherence[i]);
  const groupsList: number[][] = [];
  for (const seed of order) {
    if (owner[seed] >= 0) continue;
    const id = groupsList.length;
    const members = [seed];
    owner[seed] = id;
    let c2 = Math.cos((2 * angleDeg[seed] * Math.PI) / 180);
    let s2 = Math.sin((2 * angleDeg[seed] * Math.PI) / 180);
    let pSum = periodPx[seed];
    for (let q = 0; q < members.length; q++) {
      const i = members[q];
      const c = i % columns;
      const r = Math.floor(i / columns);
      const meanAngle = ((((Math.atan2(s2, c2) * 90) / Math.PI) % 180) + 180) % 180;
      const meanPeriod = pSum / members.length;
      for (const [dc, dr] of [[1, 0], [-1, 0], [0, 1], [0, -1]]) {
        const cc = c + dc;
        const rr = r + dr;
        if (cc < 0 || rr < 0 || cc >= columns || rr >= rows) continue;
        const j = rr * columns + cc;
        if (owner[j] >= 0 || !Number.isFinite(periodPx[j])) continue;
        if (axialDifferenceDeg(angleDeg[j], meanAngle) >= angTol) continue;
        if (Math.abs(periodPx[j] - meanPeriod) >= perTol * meanPeriod) continue;
        owner[j] = id;
        members.push(j);
        c2 += Math.cos((2 * angleDeg[j] * Math.PI) / 180);
        s2 += Math.sin((2 * angleDeg[j] * Math.PI) / 180);
        pSum += periodPx[j];
      }
    }
    groupsList.push(members);
  }
  const groups = new Map<number, number[]>(groupsList.map((g, k) => [k, g]));
  const sorted = [...groups.values()].sort((p, q) => q.length - p.length);
  const labels = new Int32Array(nt).fill(-1);
  const nm = image.calibration?.nmPerPx ?? null;
  const domains: Domain[] = sorted.map((g, id) => {
    let ps = 0;
    let pss = 0;
    let cs = 0;
    let sn = 0;
    let sx = 0;
    let sy = 0;
    for (const i of g) {
      labels[i] = id;
      ps += periodPx[i];
      pss += periodPx[i] ** 2;
      cs += Math.cos((2 * angleDeg[i] * Math.PI) / 180);
      sn += Math.sin((2 * angleDeg[i] * Math.PI) / 180);
      sx += (i % columns) * step + (tile - 1) / 2;
      sy += Math.floor(i / columns) * step + (tile - 1) / 2;
    }
    const n = g.length;
    const mean = ps / n;
    const sd = n > 1 ? Math.sqrt(Math.max(0, (pss - n * mean * mean) / (n - 1))) : 0;
    const ang = ((((Math.atan2(sn, cs) * 90) / Math.PI) % 180) + 180) % 180;
    return {
      id,
      tiles: n,
      areaPx: n * step * step,
      areaNm2: nm === null ? null : n * step * step * nm * nm,
      periodPx: mean,
      periodNm: nm === null ? null : mean * nm,
      periodSdPx: sd,
      angleDeg: ang,
      centerPx: [sx / n, sy / n],
    };
  });
  return { columns, rows, tileSizePx: tile, stepPx: step, periodPx, angleDeg, coherence, strength, labels, domains };
}
