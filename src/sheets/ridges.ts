/**
 * Candidate stack axes: dark (or bright) elongated bands of any width, found as ridges of the
 * scale-normalised Hessian over scale space, thinned to centre lines and linked into curves
 * that follow a bent stack and bridge the gap where another stack crosses it.
 */
import type { GreyImage, PixelArray } from '../image/grey-image';
import { recursiveGaussian } from './structure-tensor';

/** Options for {@link ridgeAxes}. */
export interface RidgeAxesOptions {
  /** Layers are 'dark' (bright-field, default) or 'bright'; the band of a stack has the same sign. */
  polarity?: 'dark' | 'bright';
  /** Smallest Gaussian scale searched, px (default 1.2: a single layer a pixel or two wide). */
  minScalePx?: number;
  /** Largest Gaussian scale searched, px (default: an eighth of the shorter side, at most 60). */
  maxScalePx?: number;
  /** A centre line is kept when its strongest point exceeds this many noise standard deviations (default 4) ... */
  highThreshold?: number;
  /** ... and extends while its points exceed this many (default 2). */
  lowThreshold?: number;
  /** Shortest axis kept, px (default 24). */
  minLengthPx?: number;
  /** Pixels excluded from the search (row-major mask, 1 = skip), or null. */
  mask?: Uint8Array | null;
}

/** A candidate axis: a centre line in image pixels, with the scale it was found at. */
export interface RidgeAxis {
  /** Points along the axis, image px [x, y] (y = row), about 2 px apart. */
  points: [number, number][];
  /** Gaussian scale of the ridge, px; a band of width w peaks at σ ≈ w/√6. */
  scalePx: number;
  /** Mean ridge strength along the axis in noise standard deviations. */
  strength: number;
  /** Length along the points, px. */
  lengthPx: number;
}

/** One level of the scale pyramid: the image shrunk by `factor`. */
interface Level {
  factor: number;
  width: number;
  height: number;
  data: PixelArray;
}

function halve(l: Level): Level {
  const w = Math.ceil(l.width / 2);
  const h = Math.ceil(l.height / 2);
  const out = new Float32Array(w * h);
  for (let y = 0; y < h; y++) {
    const y0 = 2 * y;
    const y1 = Math.min(l.height - 1, y0 + 1);
    for (let x = 0; x < w; x++) {
      const x0 = 2 * x;
      const x1 = Math.min(l.width - 1, x0 + 1);
      out[y * w + x] = 0.25 * (l.data[y0 * l.width + x0] + l.data[y0 * l.width + x1] + l.data[y1 * l.width + x0] + l.data[y1 * l.width + x1]);
    }
  }
  return { factor: l.factor * 2, width: w, height: h, data: out };
}

/**
 * Robust standard deviation of a zero-mean background from the lower decile of |v|
 * (q10 of |X| = 0.1257 σ for a normal X), so that stacks and their fringes covering most of the
 * image do not inflate it.
 */
function robustSd(v: Float32Array, step: number): number {
  const n = Math.floor((v.length - 1) / step) + 1;
  const s = new Float64Array(n);
  for (let i = 0, k = 0; k < n; i += step, k++) s[k] = Math.abs(v[i]);
  s.sort();
  return s[Math.floor(0.1 * n)] / 0.1257 || 1e-12;
}

const LINK_DX = [1, -1, 0, 1];
const LINK_DY = [0, 1, 1, 1];

class UnionFind {
  parent: Int32Array;
  constructor(n: number) {
    this.parent = new Int32Array(n);
    for (let i = 0; i < n; i++) this.parent[i] = i;
  }
  find(i: number): number {
    const p = this.parent;
    while (p[i] !== i) {
      p[i] = p[p[i]];
      i = p[i];
    }
    return i;
  }
  union(a: number, b: number): void {
    const ra = this.find(a);
    const rb = this.find(b);
    if (ra !== rb) this.parent[ra] = rb;
  }
}

function axialDiffRad(a: number, b: number): number {
  let d = Math.abs(a - b) % Math.PI;
  if (d > Math.PI / 2) d = Math.PI - d;
  return d;
}

/** The best ridge response of one level over its scales, pixel by pixel. */
interface BestRidge {
  /**
   * Per pixel, side by side: the strength in noise standard deviations (0: no ridge), and the cos
   * and sin of twice the normal's direction (from the Hessian, without trigonometry); the line
   * integral reads all three at each neighbour (one cache line, not three).
   */
  packed: Float32Array;
  /** Direction of the band's normal, image axes, radians. */
  normal: Float32Array;
  /** Scale of the strongest response, image px. */
  scalePx: Float32Array;
}

/**
 * Ridge strength of one level at one scale: σ^1.5·(λ₁ − |λ₂|) where λ₁ ≥ λ₂ are the Hessian
 * eigenvalues of the smoothed (polarity-corrected) image, in noise standard deviations (of the
 * normalised Laplacian on the background); where it beats the level's best so far, the best
 * takes it with the direction of λ₁'s eigenvector (the band's normal) and the scale.
 */
function ridgeAtScale(l: Level, sigma: number, sign: number, best: BestRidge, scalePx: number): void {
  const { width: w, height: h } = l;
  const L = recursiveGaussian(l.data, w, h, sigma);
  const norm = sign * sigma ** 1.5;
  // the background's response: the normalised Laplacian at about 20 000 places
  const step = Math.max(1, Math.floor((w * h) / 20000));
  const lap = new Float32Array(Math.ceil((w * h) / step));
  let nl = 0;
  for (let i = w + 1; i < w * h - w - 1; i += step) lap[nl++] = norm * (L[i + 1] + L[i - 1] + L[i + w] + L[i - w] - 4 * L[i]);
  const inv = 1 / robustSd(lap.subarray(0, nl), 1);
  const { packed, normal, scalePx: scale } = best;
  for (let y = 1; y < h - 1; y++) {
    const row = y * w;
    for (let x = 1; x < w - 1; x++) {
      const i = row + x;
      const c = L[i];
      // Hessian of sign·L: a dark band (sign +1) has its positive curvature across it
      const a = norm * (L[i + 1] - 2 * c + L[i - 1]);
      const d = norm * (L[i + w] - 2 * c + L[i - w]);
      const b = 0.25 * norm * (L[i + w + 1] - L[i + w - 1] - L[i - w + 1] + L[i - w - 1]);
      const m = 0.5 * (a + d);
      const r = Math.sqrt(0.25 * (a - d) * (a - d) + b * b);
      const l1 = m + r;
      if (l1 <= 0) continue;
      const l2 = m - r;
      const v = Math.fround(l1 - Math.abs(l2)) * inv;
      if (v <= 0 || !(v > packed[3 * i])) continue;
      packed[3 * i] = v;
      normal[i] = 0.5 * Math.atan2(2 * b, a - d);
      scale[i] = scalePx;
      // twice the normal's angle has cosine (a − d)/2r and sine b/r (r > 0 here: λ₁ − |λ₂| > 0)
      packed[3 * i + 1] = (0.5 * (a - d)) / r;
      packed[3 * i + 2] = b / r;
    }
  }
}

/** The longest path through a connected set of grid pixels (two breadth-first searches). */
function longestPath(pixels: number[], w: number): number[] {
  const set = new Map<number, number>();
  pixels.forEach((p, k) => set.set(p, k));
  const neighbours = (p: number): number[] => {
    const out: number[] = [];
    const x = p % w;
    for (const dy of [-1, 0, 1]) {
      for (const dx of [-1, 0, 1]) {
        if (!dx && !dy) continue;
        if ((x === 0 && dx < 0) || (x === w - 1 && dx > 0)) continue;
        const q = p + dy * w + dx;
        if (set.has(q)) out.push(q);
      }
    }
    return out;
  };
  const bfs = (start: number): { far: number; prev: Map<number, number> } => {
    const prev = new Map<number, number>([[start, -1]]);
    const dist = new Map<number, number>([[start, 0]]);
    const queue = [start];
    let far = start;
    for (let qi = 0; qi < queue.length; qi++) {
      const p = queue[qi];
      for (const q of neighbours(p)) {
        if (prev.has(q)) continue;
        const dq = dist.get(p)! + (q - p === 1 || q - p === -1 || q - p === w || q - p === -w ? 1 : Math.SQRT2);
        prev.set(q, p);
        dist.set(q, dq);
        queue.push(q);
        if (dq > dist.get(far)!) far = q;
      }
    }
    return { far, prev };
  };
  const a = bfs(pixels[0]).far;
  const { far: b, prev } = bfs(a);
  const path: number[] = [];
  for (let p = b; p !== -1; p = prev.get(p)!) path.push(p);
  return path;
}

/** Smooths a polyline (moving average over ±k points) and resamples it every `step` px. */
export function resamplePolyline(points: [number, number][], step: number, smoothK = 2): [number, number][] {
  if (points.length < 2) return points.map((p) => [p[0], p[1]]);
  const sm: [number, number][] = points.map((_, i) => {
    let sx = 0;
    let sy = 0;
    let n = 0;
    for (let k = Math.max(0, i - smoothK); k <= Math.min(points.length - 1, i + smoothK); k++) {
      sx += points[k][0];
      sy += points[k][1];
      n++;
    }
    return [sx / n, sy / n];
  });
  // keep the true ends (smoothing pulls them inwards)
  sm[0] = [points[0][0], points[0][1]];
  sm[sm.length - 1] = [points[points.length - 1][0], points[points.length - 1][1]];
  const cum = [0];
  for (let i = 1; i < sm.length; i++) cum.push(cum[i - 1] + Math.hypot(sm[i][0] - sm[i - 1][0], sm[i][1] - sm[i - 1][1]));
  const total = cum[cum.length - 1];
  const n = Math.max(2, Math.round(total / step) + 1);
  const out: [number, number][] = [];
  let j = 0;
  for (let k = 0; k < n; k++) {
    const s = (total * k) / (n - 1);
    while (j < sm.length - 2 && cum[j + 1] < s) j++;
    const seg = cum[j + 1] - cum[j] || 1;
    const f = Math.min(1, Math.max(0, (s - cum[j]) / seg));
    out.push([sm[j][0] + f * (sm[j + 1][0] - sm[j][0]), sm[j][1] + f * (sm[j + 1][1] - sm[j][1])]);
  }
  return out;
}

/** Length of a polyline, px. */
export function polylineLength(p: [number, number][]): number {
  let s = 0;
  for (let i = 1; i < p.length; i++) s += Math.hypot(p[i][0] - p[i - 1][0], p[i][1] - p[i - 1][1]);
  return s;
}

/** Unit tangent at an end of a polyline, pointing outwards, from the last `reach` px. */
function endTangent(p: [number, number][], atStart: boolean, reach: number): [number, number] {
  const n = p.length;
  const a = atStart ? p[0] : p[n - 1];
  let k = atStart ? 0 : n - 1;
  let len = 0;
  while (len < reach && (atStart ? k < n - 1 : k > 0)) {
    const next = atStart ? k + 1 : k - 1;
    len += Math.hypot(p[next][0] - p[k][0], p[next][1] - p[k][1]);
    k = next;
  }
  const dx = a[0] - p[k][0];
  const dy = a[1] - p[k][1];
  const d = Math.hypot(dx, dy) || 1;
  return [dx / d, dy / d];
}

interface Piece {
  points: [number, number][];
  scalePx: number;
  strengthSum: number;
  count: number;
}

/**
 * Joins pieces whose ends face each other across a gap (a crossing stack, a faint stretch):
 * the gap at most `maxGap(scale)` px, both end tangents within 20° of the line joining the ends
 * and of each other, scales within a factor of two. Closest pairs first.
 */
function bridge(pieces: Piece[], maxGap: (scalePx: number) => number): Piece[] {
  let list = pieces.slice();
  for (let round = 0; round < 8; round++) {
    type End = { piece: number; atStart: boolean; at: [number, number]; t: [number, number] };
    const ends: End[] = [];
    list.forEach((p, i) => {
      const reach = Math.max(8, 3 * p.scalePx);
      ends.push({ piece: i, atStart: true, at: p.points[0], t: endTangent(p.points, true, reach) });
      ends.push({ piece: i, atStart: false, at: p.points[p.points.length - 1], t: endTangent(p.points, false, reach) });
    });
    const cos20 = Math.cos((20 * Math.PI) / 180);
    const pairs: { a: End; b: End; cost: number }[] = [];
    // ends in a grid of cells as large as the longest gap: only neighbouring cells are compared
    let reachMax = 1;
    for (const p of list) reachMax = Math.max(reachMax, maxGap(p.scalePx));
    const cellOf = (e: End) => [Math.floor(e.at[0] / reachMax), Math.floor(e.at[1] / reachMax)];
    const grid = new Map<string, number[]>();
    ends.forEach((e, i) => {
      const [cx, cy] = cellOf(e);
      const key = `${cx},${cy}`;
      const g = grid.get(key);
      if (g) g.push(i);
      else grid.set(key, [i]);
    });
    for (let i = 0; i < ends.length; i++) {
      const [cx, cy] = cellOf(ends[i]);
      const near: number[] = [];
      for (let dy = -1; dy <= 1; dy++) for (let dx = -1; dx <= 1; dx++) for (const j of grid.get(`${cx + dx},${cy + dy}`) ?? []) if (j > i) near.push(j);
      for (const j of near) {
        const a = ends[i];
        const b = ends[j];
        if (a.piece === b.piece) continue;
        const pa = list[a.piece];
        const pb = list[b.piece];
        const ratio = pa.scalePx / pb.scalePx;
        if (ratio > 2 || ratio < 0.5) continue;
        const dx = b.at[0] - a.at[0];
        const dy = b.at[1] - a.at[1];
        const gap = Math.hypot(dx, dy);
        if (gap > maxGap(Math.max(pa.scalePx, pb.scalePx))) continue;
        // a's outward tangent points at b, b's at a, and the two are antiparallel
        const tt = -(a.t[0] * b.t[0] + a.t[1] * b.t[1]);
        if (tt < cos20) continue;
        if (gap > 1) {
          const ca = (a.t[0] * dx + a.t[1] * dy) / gap;
          const cb = -(b.t[0] * dx + b.t[1] * dy) / gap;
          if (ca < cos20 || cb < cos20) continue;
        }
        // lateral offset of b from a's extended line
        const lateral = Math.abs(a.t[0] * dy - a.t[1] * dx);
        if (lateral > Math.max(2, 0.6 * Math.max(pa.scalePx, pb.scalePx)) + 0.08 * gap) continue;
        pairs.push({ a, b, cost: gap + 4 * lateral });
      }
    }
    if (pairs.length === 0) break;
    pairs.sort((p, q) => p.cost - q.cost);
    const used = new Set<number>();
    const merged: Piece[] = [];
    for (const { a, b } of pairs) {
      if (used.has(a.piece) || used.has(b.piece)) continue;
      used.add(a.piece);
      used.add(b.piece);
      const pa = list[a.piece];
      const pb = list[b.piece];
      const first = a.atStart ? pa.points.slice().reverse() : pa.points;
      const second = b.atStart ? pb.points : pb.points.slice().reverse();
      merged.push({
        points: [...first, ...second],
        scalePx: (pa.scalePx * pa.count + pb.scalePx * pb.count) / (pa.count + pb.count),
        strengthSum: pa.strengthSum + pb.strengthSum,
        count: pa.count + pb.count,
      });
    }
    list = [...merged, ...list.filter((_, i) => !used.has(i))];
  }
  return list;
}

/**
 * Candidate stack axes over scale space.
 *
 * Ridges of the γ-normalised Hessian (Lindeberg, Int. J. Comput. Vis. 30, 117 (1998), γ = 3/4), thinned by non-maximum suppression across the ridge and linked with hysteresis (Canny, IEEE PAMI 8, 679 (1986)).
 *
 * @param image the image
 * @param options polarity, scale range, thresholds, shortest axis, excluded pixels
 * @returns candidate axes (centre lines with their scale and strength), strongest first
 * Notes: scales step by √2 from minScalePx; two scales per octave are computed on a pyramid
 * level shrunk by 2ᵏ (2 × 2 means), so the cost of the coarse scales is small. The strength is
 * σ^1.5·(λ₁ − |λ₂|) (elongated bands only: a blob has λ₂ ≈ λ₁), in units of the robust standard
 * deviation of the normalised Laplacian at that scale (the background's response). Centre-line
 * pixels whose normals agree within 30° are linked; each linked set becomes its longest path,
 * smoothed and resampled every 2 px; pieces whose ends face each other across a gap of up to
 * 6 scales + 12 px (a crossing stack) are joined.
 */
export function ridgeAxes(image: GreyImage, options: RidgeAxesOptions = {}): RidgeAxis[] {
  const sign = (options.polarity ?? 'dark') === 'dark' ? 1 : -1;
  const minScale = options.minScalePx ?? 1.2;
  const maxScale = options.maxScalePx ?? Math.min(60, Math.min(image.width, image.height) / 8);
  const high = options.highThreshold ?? 6;
  const low = options.lowThreshold ?? 3;
  const minLength = options.minLengthPx ?? 24;
  if (!(minScale >= 0.8)) throw new RangeError(`minScalePx must be ≥ 0.8, got ${minScale}`);
  if (!(maxScale >= minScale)) throw new RangeError(`maxScalePx must be ≥ minScalePx (${minScale}), got ${maxScale}`);
  if (!(high > 0 && low > 0 && low <= high)) throw new RangeError(`thresholds must satisfy 0 < lowThreshold ≤ highThreshold, got ${low}, ${high}`);
  const mask = options.mask ?? null;
  if (mask && mask.length !== image.width * image.height) throw new RangeError(`mask length ${mask.length} ≠ ${image.width} × ${image.height}`);
  let level: Level = { factor: 1, width: image.width, height: image.height, data: image.data };
  const out: RidgeAxis[] = [];
  // scales: minScale·√2^k; level k/2 holds scales k and k+1 (σ on the level = σ / factor ∈ [minScale, 2·minScale))
  for (let octave = 0; ; octave++) {
    const scales = [minScale * 2 ** octave, minScale * 2 ** octave * Math.SQRT2].filter((s) => s <= maxScale * 1.001);
    if (scales.length === 0 || level.width < 24 || level.height < 24) break;
    const { width: w, height: h, factor } = level;
    const ridge: BestRidge = { packed: new Float32Array(3 * w * h), normal: new Float32Array(w * h), scalePx: new Float32Array(w * h) };
    for (const s of scales) ridgeAtScale(level, s / factor, sign, ridge, s);
    const { packed, normal: bestNormal, scalePx: bestScale } = ridge;
    if (mask) {
      for (let y = 0; y < h; y++) {
        for (let x = 0; x < w; x++) {
          const fx = Math.min(image.width - 1, Math.floor((x + 0.5) * factor));
          const fy = Math.min(image.height - 1, Math.floor((y + 0.5) * factor));
          if (mask[fy * image.width + fx]) packed[3 * (y * w + x)] = 0;
        }
      }
    }
    // the strength averaged along the ridge (0 where there is none)
    const best = new Float32Array(w * h);
    // average the strength along the ridge (±reach level px in the local direction, counting only
    // samples whose normal agrees within 30°): a line integral that lifts faint but straight
    // lines above the pixel noise, as an oriented filter would (line integral convolution,
    // Cabral & Leedom, SIGGRAPH 1993)
    {
      const reach = Math.max(3, Math.round(2.5 * (scales[0] / factor) + 2));
      const cosTol = Math.cos((30 * Math.PI) / 180);
      const minCos2 = 2 * cosTol * cosTol - 1;
      // in noise units of the average: noise strength is about independent from sample to
      // sample along a random direction, so its mean over the line shrinks by √(2·reach + 1)
      const gain = Math.sqrt(2 * reach + 1);
      for (let y = 0; y < h; y++) {
        for (let x = 0; x < w; x++) {
          const i = y * w + x;
          if (packed[3 * i] <= 0) continue;
          const c2 = packed[3 * i + 1];
          const s2 = packed[3 * i + 2];
          // the direction along the ridge, (−sin a, cos a) for the normal's angle a ∈ [−90°, 90°],
          // by the half-angle formulas (cos a ≥ 0; the sign of sin a is that of sin 2a)
          const uy = Math.sqrt(Math.max(0, 0.5 * (1 + c2)));
          const ux = (s2 < 0 ? 1 : -1) * Math.sqrt(Math.max(0, 0.5 * (1 - c2)));
          let sum = packed[3 * i];
          // inside, no sample can leave the image (the steps are at most `reach` pixels)
          const inside = x >= reach && y >= reach && x < w - reach && y < h - reach;
          for (let t = 1; t <= reach; t++) {
            // both directions along the ridge
            for (let sg = -1; sg <= 1; sg += 2) {
              const dx = Math.round(sg * t * ux);
              const dy = Math.round(sg * t * uy);
              if (!inside) {
                const xx = x + dx;
                const yy = y + dy;
                if (xx < 0 || yy < 0 || xx >= w || yy >= h) continue;
              }
              const j = 3 * (i + dy * w + dx);
              const bj = packed[j];
              // cos of twice the angle difference ≥ cos 60° ⇔ the normals agree within 30°
              if (bj > 0 && packed[j + 1] * c2 + packed[j + 2] * s2 >= minCos2) sum += bj;
            }
          }
          best[i] = Math.fround(sum / (2 * reach + 1)) * gain;
        }
      }
    }
    // non-maximum suppression across the ridge (normal quantised to 8 neighbours)
    const centre = new Uint8Array(w * h);
    const border = 2;
    for (let y = border; y < h - border; y++) {
      for (let x = border; x < w - border; x++) {
        const i = y * w + x;
        const v = best[i];
        if (v < low) continue;
        const a = bestNormal[i];
        const dx = Math.round(Math.cos(a));
        const dy = Math.round(Math.sin(a));
        const j = i + dy * w + dx;
        const k = i - dy * w - dx;
        if (v >= best[j] && v > best[k]) centre[i] = 1;
      }
    }
    const uf = new UnionFind(w * h);
    const maxTurn = (30 * Math.PI) / 180;
    for (let y = border; y < h - border; y++) {
      for (let x = border; x < w - border; x++) {
        const i = y * w + x;
        if (!centre[i]) continue;
        // link along the ridge only: the step must not run along the normal (that would join
        // neighbouring parallel lines, e.g. the layers of one stack, through a noise pixel)
        const ci = Math.cos(bestNormal[i]);
        const si = Math.sin(bestNormal[i]);
        for (let q = 0; q < 4; q++) {
          const dx = LINK_DX[q];
          const dy = LINK_DY[q];
          const j = i + dy * w + dx;
          if (!centre[j] || axialDiffRad(bestNormal[i], bestNormal[j]) >= maxTurn) continue;
          if (Math.abs(dx * ci + dy * si) / Math.hypot(dx, dy) > 0.6) continue;
          uf.union(i, j);
        }
      }
    }
    const groups = new Map<number, number[]>();
    for (let i = 0; i < w * h; i++) {
      if (!centre[i]) continue;
      const root = uf.find(i);
      let g = groups.get(root);
      if (!g) groups.set(root, (g = []));
      g.push(i);
    }
    const pieces: Piece[] = [];
    for (const g of groups.values()) {
      if (g.length * factor < Math.min(minLength / 2, 10)) continue;
      let peak = 0;
      for (const i of g) peak = Math.max(peak, best[i]);
      if (peak < low) continue;
      const path = longestPath(g, w);
      if (path.length < 3) continue;
      let sum = 0;
      let sc = 0;
      for (const i of path) {
        sum += best[i];
        sc += bestScale[i];
      }
      const pts = path.map((i) => [((i % w) + 0.5) * factor - 0.5, (Math.floor(i / w) + 0.5) * factor - 0.5] as [number, number]);
      pieces.push({ points: pts, scalePx: sc / path.length, strengthSum: sum, count: path.length });
    }
    const joined = bridge(pieces, (s) => 6 * s + 12);
    for (const p of joined) {
      // a smooth axis: the pixel path zig-zags by half a pixel, which would smear fine fringes
      const pts = resamplePolyline(resamplePolyline(p.points, 2, Math.max(1, Math.round(factor))), 2, 4);
      const len = polylineLength(pts);
      const strength = p.strengthSum / p.count;
      if (len < Math.max(minLength, 3 * p.scalePx)) continue;
      // the strongest part must clear the high threshold: the mean over its best third
      if (strength < high * 0.5 && p.strengthSum / p.count < high) {
        // weak on average: keep only when long (a faint but persistent band)
        if (len < 4 * minLength) continue;
      }
      out.push({ points: pts, scalePx: p.scalePx, strength, lengthPx: len });
    }
    level = halve(level);
  }
  out.sort((a, b) => b.strength * Math.sqrt(b.lengthPx) - a.strength * Math.sqrt(a.lengthPx));
  return out;
}
