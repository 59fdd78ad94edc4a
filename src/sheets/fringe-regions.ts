/**
 * Candidate stack axes from fringe energy: the regions of an image where fringes of one period
 * run in one direction, each traced along its length. They find stacks that show their layers
 * but hardly darken the film (phase-contrast fringes), whose scale-space ridges break into short
 * pieces on a textured film.
 */
import type { GreyImage, PixelArray } from '../image/grey-image';
import { solve3 } from './count';
import { MIN_COUNTABLE_PERIOD_PX } from './limits';
import { resamplePolyline, type RidgeAxis } from './ridges';
import { recursiveGaussian } from './structure-tensor';

/** Options for {@link fringeRegionAxes}. */
export interface FringeRegionOptions {
  /** Pixels excluded from the search (row-major mask, 1 = skip), or null. */
  mask?: Uint8Array | null;
  /** Shortest region kept, px along its fringes (default 24). */
  minLengthPx?: number;
  /** A region holds at least one cell whose oriented fringe energy exceeds the image's median by this many robust standard deviations (default 4) ... */
  highThreshold?: number;
  /** ... and extends over cells that exceed it by this many (default 2). */
  lowThreshold?: number;
  /** Largest difference between a cell's fringe direction and its region's mean, degrees (default 15). */
  maxTurnDeg?: number;
}

/**
 * The regions of coherent fringes of one period, as candidate axes along them.
 *
 * Oriented energy λ1 − λ2 of the structure tensor (Bigün & Granlund 1987) of the image band-passed
 * at the period (a difference of Gaussians); regions grown (8-connected) from the strongest cells
 * above a robust high threshold over those above a low one (hysteresis, as in Canny 1986), a cell
 * joining when its fringe direction agrees with the region's mean; each region's axis a weighted
 * least-squares parabola along its mean fringe direction.
 *
 * @param image the image
 * @param periodPx the layer period searched, px (at least the countable limit, 2.5 px)
 * @param options mask, shortest region, thresholds and turning tolerance
 * @returns candidate axes, strongest first; `scalePx` is set so that a survey's first width guess
 *   (2.45 scales) is the region's width across its fringes
 * Notes: the image is binned so that the period spans 3–6 bins, and the gradient products are
 * summed over cells of about half a period (at least 2 bins) before the tensor is averaged, so
 * the averaging and the labelling cost about (2/p)² of the image; a margin of two integration
 * scales (1.5 p, at least 3 px) at the border is not searched. The threshold's median and MAD are
 * those of the whole image: where stacks cover more than half of it, regions are fewer, not false. A region is a candidate only; every test of a stack
 * (comb evidence, resolved layers, persistence, the lattice tests) is made on it afterwards.
 */
export function fringeRegionAxes(image: GreyImage, periodPx: number, options: FringeRegionOptions = {}): RidgeAxis[] {
  if (!(Number.isFinite(periodPx) && periodPx >= MIN_COUNTABLE_PERIOD_PX)) throw new RangeError(`periodPx must be ≥ ${MIN_COUNTABLE_PERIOD_PX} px, got ${periodPx}`);
  const minLengthPx = options.minLengthPx ?? 24;
  const kHigh = options.highThreshold ?? 4;
  const kLow = options.lowThreshold ?? 2;
  const maxTurnDeg = options.maxTurnDeg ?? 15;
  if (!(minLengthPx > 0)) throw new RangeError(`minLengthPx must be positive, got ${minLengthPx}`);
  if (!(kLow > 0 && kHigh >= kLow)) throw new RangeError(`thresholds must be positive, the high one not below the low one; got low ${kLow}, high ${kHigh}`);
  if (!(maxTurnDeg > 0 && maxTurnDeg < 90)) throw new RangeError(`maxTurnDeg must be in (0, 90), got ${maxTurnDeg}`);
  const { width: W, height: H } = image;
  const mask = options.mask ?? null;
  if (mask && mask.length !== W * H) throw new RangeError(`mask length ${mask.length} ≠ ${W} × ${H}`);

  // the image binned by b so that the period is 3–6 binned px (a fringe of 3 binned px or more
  // keeps at least 0.83 of its contrast along each axis), then band-passed at the period: fine
  // noise and the film's slow variation removed
  const bin = Math.max(1, Math.floor(periodPx / 3));
  const pb = periodPx / bin;
  const bw = Math.floor(W / bin);
  const bh = Math.floor(H / bin);
  let binned: PixelArray = image.data;
  if (bin > 1) {
    binned = new Float32Array(bw * bh);
    for (let y = 0; y < bh * bin; y++) {
      const row = ((y / bin) | 0) * bw;
      for (let x = 0; x < bw * bin; x++) binned[row + ((x / bin) | 0)] += image.data[y * W + x];
    }
  }
  const band = recursiveGaussian(binned, bw, bh, 0.2 * pb);
  const slow = recursiveGaussian(binned, bw, bh, 0.5 * pb);
  for (let i = 0; i < band.length; i++) band[i] -= slow[i];

  // gradient products (central differences of the band-passed image), summed over cells of
  // `step` × `step` binned px: the tensor is then averaged on the cell grid
  const step = Math.max(2, Math.floor(pb / 2));
  const cellPx = step * bin;
  const gw = Math.floor(bw / step);
  const gh = Math.floor(bh / step);
  if (gw < 4 || gh < 4) return [];
  const n = gw * gh;
  const jxx = new Float32Array(n);
  const jxy = new Float32Array(n);
  const jyy = new Float32Array(n);
  const cellOfColumn = new Int32Array(bw);
  for (let x = 0; x < bw; x++) cellOfColumn[x] = Math.min(gw - 1, (x / step) | 0);
  for (let y = 1; y < gh * step && y < bh - 1; y++) {
    const row = ((y / step) | 0) * gw;
    for (let x = 1; x < gw * step && x < bw - 1; x++) {
      const i = y * bw + x;
      const gx = 0.5 * (band[i + 1] - band[i - 1]);
      const gy = 0.5 * (band[i + bw] - band[i - bw]);
      const g = row + cellOfColumn[x];
      jxx[g] += gx * gx;
      jxy[g] += gx * gy;
      jyy[g] += gy * gy;
    }
  }
  const integrationPx = Math.max(3, 1.5 * periodPx);
  const sigmaCells = Math.max(0.5, integrationPx / cellPx);
  const sxx = recursiveGaussian(jxx, gw, gh, sigmaCells);
  const sxy = recursiveGaussian(jxy, gw, gh, sigmaCells);
  const syy = recursiveGaussian(jyy, gw, gh, sigmaCells);
  // the filters' borders are extrapolated: a margin of two integration scales is not searched
  const marginCells = Math.ceil((2 * integrationPx) / cellPx);

  // oriented energy λ1 − λ2 and the doubled angle of the normal (image axes) of every cell
  const aniso = new Float32Array(n);
  const c2 = new Float32Array(n);
  const s2 = new Float32Array(n);
  const usable = new Uint8Array(n);
  const sample: number[] = [];
  for (let cy = marginCells; cy < gh - marginCells; cy++) {
    for (let cx = marginCells; cx < gw - marginCells; cx++) {
      const g = cy * gw + cx;
      if (mask && mask[Math.min(H - 1, cy * cellPx + (cellPx >> 1)) * W + Math.min(W - 1, cx * cellPx + (cellPx >> 1))]) continue;
      const d = Math.sqrt((sxx[g] - syy[g]) ** 2 + 4 * sxy[g] * sxy[g]);
      usable[g] = 1;
      aniso[g] = d;
      c2[g] = d > 0 ? (sxx[g] - syy[g]) / d : 1;
      s2[g] = d > 0 ? (2 * sxy[g]) / d : 0;
      if ((cx + cy) % 4 === 0) sample.push(d);
    }
  }
  if (sample.length < 16) return [];
  const sorted = Float32Array.from(sample).sort();
  const median = sorted[sorted.length >> 1];
  for (let i = 0; i < sorted.length; i++) sorted[i] = Math.abs(sorted[i] - median);
  const sigma = 1.4826 * sorted.sort()[sorted.length >> 1];
  if (!(sigma > 0)) return [];
  const cut = median + kLow * sigma;
  const seedCut = median + kHigh * sigma;
  const on = new Uint8Array(n);
  let top = seedCut;
  for (let g = 0; g < n; g++) {
    if (usable[g] && aniso[g] > cut) {
      on[g] = 1;
      if (aniso[g] > top) top = aniso[g];
    }
  }
  // the seeds, strongest first: a bucket sort on 256 levels between the high threshold and the top
  const levels = 256;
  const bucketOf = (v: number) => Math.min(levels - 1, Math.floor(((v - seedCut) / (top - seedCut || 1)) * levels));
  const counts = new Int32Array(levels + 1);
  for (let g = 0; g < n; g++) if (on[g] && aniso[g] > seedCut) counts[levels - 1 - bucketOf(aniso[g]) + 1]++;
  for (let b = 0; b < levels; b++) counts[b + 1] += counts[b];
  const seeds = new Int32Array(counts[levels]);
  for (let g = 0; g < n; g++) if (on[g] && aniso[g] > seedCut) seeds[counts[levels - 1 - bucketOf(aniso[g])]++] = g;

  // regions grown from the strongest cells (hysteresis: seeds above the high threshold): a
  // neighbour joins when its fringe direction is within the tolerance of the region's mean so
  // far (a chain of small turns cannot link two stacks of different directions); in doubled
  // angles, within 2·maxTurn of the mean direction
  const cosTurn = Math.cos((2 * maxTurnDeg * Math.PI) / 180);
  const label = new Int32Array(n).fill(-1);
  const regions: number[][] = [];
  const queue = new Int32Array(n);
  for (const seed of seeds) {
    if (label[seed] >= 0) continue;
    const id = regions.length;
    const list: number[] = [];
    let mc = 0;
    let ms = 0;
    let head = 0;
    let tail = 0;
    queue[tail++] = seed;
    label[seed] = id;
    while (head < tail) {
      const g = queue[head++];
      list.push(g);
      mc += aniso[g] * c2[g];
      ms += aniso[g] * s2[g];
      const norm = cosTurn * Math.hypot(mc, ms);
      const gx = g % gw;
      const gy = (g - gx) / gw;
      for (let dy = -1; dy <= 1; dy++) {
        const hy = gy + dy;
        if (hy < 0 || hy >= gh) continue;
        for (let dx = -1; dx <= 1; dx++) {
          const hx = gx + dx;
          if (hx < 0 || hx >= gw || (dx === 0 && dy === 0)) continue;
          const h = hy * gw + hx;
          if (!on[h] || label[h] >= 0 || c2[h] * mc + s2[h] * ms < norm) continue;
          label[h] = id;
          queue[tail++] = h;
        }
      }
    }
    regions.push(list);
  }

  // a cell's centre, image px
  const cellX = (g: number) => (g % gw) * cellPx + 0.5 * (cellPx - 1);
  const cellY = (g: number) => Math.floor(g / gw) * cellPx + 0.5 * (cellPx - 1);
  const axes: RidgeAxis[] = [];
  for (const list of regions) {
    // a region shorter than the shortest stack cannot hold one, whatever its shape
    if (list.length * cellPx * cellPx < 0.5 * minLengthPx * Math.max(2, periodPx)) continue;
    let sw = 0;
    let sc = 0;
    let ss = 0;
    let sx = 0;
    let sy = 0;
    for (const g of list) {
      const w = aniso[g];
      sc += w * c2[g];
      ss += w * s2[g];
      sx += w * cellX(g);
      sy += w * cellY(g);
      sw += w;
    }
    // the layer normal in image axes (y down), and the fringes' direction across it
    const normalRad = 0.5 * Math.atan2(ss, sc);
    const nx = Math.cos(normalRad);
    const ny = Math.sin(normalRad);
    const tx = -ny;
    const ty = nx;
    const cx = sx / sw;
    const cy = sy / sw;
    const m = list.length;
    const sAlong = new Float64Array(m);
    const uAcross = new Float64Array(m);
    for (let k = 0; k < m; k++) {
      const x = cellX(list[k]) - cx;
      const y = cellY(list[k]) - cy;
      sAlong[k] = x * tx + y * ty;
      uAcross[k] = x * nx + y * ny;
    }
    const sSorted = sAlong.slice().sort();
    const s0 = sSorted[Math.floor(0.02 * (m - 1))];
    const s1 = sSorted[Math.ceil(0.98 * (m - 1))];
    const lengthPx = s1 - s0 + cellPx;
    if (lengthPx < minLengthPx) continue;
    const us = uAcross.slice().sort();
    const widthPx = us[Math.ceil(0.95 * (m - 1))] - us[Math.floor(0.05 * (m - 1))] + cellPx;
    // the centre line: a weighted least-squares parabola u(s) through the region (a bent stack
    // bends gently; centroids of short stretches would wiggle by the noise and smear the fringes)
    const sc2 = Math.max(1, 0.5 * (s1 - s0));
    let w0 = 0, w1 = 0, w2 = 0, w3 = 0, w4 = 0, r0 = 0, r1 = 0, r2 = 0;
    for (let k = 0; k < m; k++) {
      const w = aniso[list[k]];
      const x = sAlong[k] / sc2;
      const x2 = x * x;
      w0 += w; w1 += w * x; w2 += w * x2; w3 += w * x2 * x; w4 += w * x2 * x2;
      r0 += w * uAcross[k]; r1 += w * x * uAcross[k]; r2 += w * x2 * uAcross[k];
    }
    const A = [w0, w1, w2, w1, w2, w3, w2, w3, w4];
    const rhs = [r0, r1, r2];
    const coef = solve3(A, rhs) ?? [0, 0, 0];
    const line: [number, number][] = [];
    const nPts = Math.max(2, Math.ceil((s1 - s0) / 4) + 1);
    for (let k = 0; k < nPts; k++) {
      const sAt = s0 + ((s1 - s0) * k) / (nPts - 1);
      const x = sAt / sc2;
      line.push([sAt, coef[0] + coef[1] * x + coef[2] * x * x]);
    }
    // the longest run of the line inside the image
    const inside = (q: [number, number]) => q[0] >= 0 && q[1] >= 0 && q[0] <= W - 1 && q[1] <= H - 1;
    let run: [number, number][] = [];
    let cur: [number, number][] = [];
    for (const q of resamplePolyline(line.map(([sAt, u]) => [cx + sAt * tx + u * nx, cy + sAt * ty + u * ny] as [number, number]), 2, 0)) {
      if (inside(q)) cur.push(q);
      else cur = [];
      if (cur.length > run.length) run = cur;
    }
    if (run.length < 2) continue;
    const points = run;
    const runPx = 2 * (points.length - 1);
    if (runPx < minLengthPx) continue;
    axes.push({ points, scalePx: Math.max(1, widthPx / 2.45), strength: (sw / list.length - median) / sigma, lengthPx: runPx });
  }
  return axes.sort((a, b) => b.strength - a.strength);
}

