/**
 * Spots of a single-crystal electron-diffraction pattern: found above the rotationally symmetric
 * part of the pattern (the direct beam, its halo and diffuse rings), refined to sub-pixel
 * positions, paired with their Friedel mates, and measured as d-spacings and the angles between
 * them. Pure: typed arrays only.
 */
import type { GreyImage } from '../../image/grey-image';
import { levenbergMarquardt } from '../lm';
import { correction, correctedVector, findPatternCentre, patternMask, type PatternGeometry } from './geometry';

/** A spot found in a pattern. */
export interface PatternSpot {
  /** Refined position, px (x right, y down), and its standard uncertainties. */
  x: number;
  y: number;
  uX: number;
  uY: number;
  /** Integrated intensity above the symmetric background (counts·px²). */
  intensity: number;
  /** Height of the smoothed peak over the smoothed residual's noise at its radius (a signal-to-noise ratio). */
  snr: number;
  /** Index of its Friedel mate in the list, or null. */
  mate: number | null;
}

/** Options of {@link findSpots}. */
export interface SpotFindOptions {
  /** Peaks of the smoothed residual must stand this many of its noise σ above the symmetric background (default 7). */
  significance?: number;
  /** Innermost corrected radius searched, px (default 6; the direct beam's core lies inside). */
  minRadiusPx?: number;
  /** Most spots returned, strongest first (default 60). */
  maxSpots?: number;
  /** Pixels to leave out (beam stop, clipping); found automatically when absent. */
  mask?: Uint8Array;
}

/**
 * The rotationally symmetric part of a pattern: the median at each corrected radius (bins of
 * 0.5 px), with a robust noise σ per radius.
 */
function symmetricPart(image: GreyImage, geo: PatternGeometry, mask: Uint8Array): { level: (r: number) => number; sigma: (r: number) => number } {
  const { width, height, data } = image;
  const t = correction(geo);
  const bin = 0.5;
  const groups: number[][] = [];
  for (let y = 0; y < height; y++) {
    for (let x = 0; x < width; x++) {
      const i = y * width + x;
      if (mask[i]) continue;
      const v = correctedVector(geo, x, y, t);
      const b = Math.floor(Math.hypot(v[0], v[1]) / bin);
      (groups[b] ??= []).push(data[i]);
    }
  }
  const med = new Float64Array(groups.length).fill(NaN);
  const sig = new Float64Array(groups.length).fill(NaN);
  groups.forEach((g, b) => {
    if (!g || g.length < 3) return;
    g.sort((p, q) => p - q);
    const m = g[g.length >> 1];
    med[b] = m;
    const dev = g.map((v) => Math.abs(v - m)).sort((p, q) => p - q);
    sig[b] = Math.max(1.4826 * dev[dev.length >> 1], Math.sqrt(Math.max(m, 0)) * 0.5, 1e-9);
  });
  for (let b = 1; b < med.length; b++) if (!Number.isFinite(med[b])) { med[b] = med[b - 1]; sig[b] = sig[b - 1]; }
  const at = (arr: Float64Array, r: number) => {
    const f = r / bin - 0.5;
    const i = Math.max(0, Math.min(arr.length - 2, Math.floor(f)));
    const w = Math.max(0, Math.min(1, f - i));
    const a = Number.isFinite(arr[i]) ? arr[i] : arr[i + 1];
    const b = Number.isFinite(arr[i + 1]) ? arr[i + 1] : a;
    return (1 - w) * a + w * b;
  };
  return { level: (r) => at(med, r), sigma: (r) => at(sig, r) };
}

/**
 * Finds and refines the spots of a pattern.
 * @param image the pattern
 * @param geometry its centre and distortion (from findPatternCentre and a camera calibration)
 * @param options significance, innermost radius, count, mask
 * @returns spots, strongest first, with Friedel mates paired
 * Notes: the rotationally symmetric part (median per corrected radius) is subtracted, so a direct
 * beam thousands of times brighter than the spots, with its halo, does not hide them; maxima of
 * the residual smoothed by a Gaussian of σ 1.2 px (a matched filter for spots of about that size)
 * over 5 × 5 px, above `significance` × the smoothed residual's robust noise σ (1.4826 × MAD) at
 * their radius, are candidates; each is refined by a 2D Gaussian on a constant fitted to a 9 × 9 px patch
 * (Levenberg–Marquardt, covariance scaled by the reduced χ²). Friedel mates: spots whose midpoint
 * lies within 1.5 px of the centre and whose intensities are within a factor of 5.
 * Reference: peak finding over a radial-median background, common practice in serial diffraction.
 */
export function findSpots(image: GreyImage, geometry: PatternGeometry, options: SpotFindOptions = {}): PatternSpot[] {
  const { width, height, data } = image;
  const k = options.significance ?? 7;
  const minR = options.minRadiusPx ?? 6;
  const maxSpots = options.maxSpots ?? 60;
  if (!(k > 0)) throw new RangeError(`significance must be positive, got ${k}`);
  if (!Number.isInteger(maxSpots) || maxSpots < 1) throw new RangeError(`maxSpots must be a positive integer, got ${maxSpots}`);
  const mask = options.mask ?? patternMask(image, geometry);
  const sym = symmetricPart(image, geometry, mask);
  const t = correction(geometry);
  const resid = new Float32Array(width * height);
  const radius = new Float32Array(width * height);
  for (let y = 0; y < height; y++) {
    for (let x = 0; x < width; x++) {
      const i = y * width + x;
      const v = correctedVector(geometry, x, y, t);
      const r = Math.hypot(v[0], v[1]);
      radius[i] = r;
      resid[i] = mask[i] ? 0 : data[i] - sym.level(r);
    }
  }
  // matched filter: the residual smoothed by a Gaussian of about a spot's size, its noise σ per
  // radius measured on the smoothed residual itself (1.4826 × MAD in 1 px rings)
  const sm = gaussianSmooth(resid, mask, width, height, 1.2);
  const bins: number[][] = [];
  for (let i = 0; i < sm.length; i++) if (!mask[i]) (bins[Math.floor(radius[i])] ??= []).push(sm[i]);
  const sigS = new Float64Array(bins.length).fill(NaN);
  bins.forEach((b, r) => {
    if (!b || b.length < 8) return;
    b.sort((p, q) => p - q);
    const m = b[b.length >> 1];
    const dev = b.map((v) => Math.abs(v - m)).sort((p, q) => p - q);
    sigS[r] = Math.max(1.4826 * dev[dev.length >> 1], 1e-9);
  });
  for (let r = 1; r < sigS.length; r++) if (!Number.isFinite(sigS[r])) sigS[r] = sigS[r - 1];
  for (let r = sigS.length - 2; r >= 0; r--) if (!Number.isFinite(sigS[r])) sigS[r] = sigS[r + 1];
  const cands: { x: number; y: number; h: number; snr: number }[] = [];
  for (let y = 2; y < height - 2; y++) {
    for (let x = 2; x < width - 2; x++) {
      const i = y * width + x;
      if (mask[i] || radius[i] < minR) continue;
      const v = sm[i];
      const s = sigS[Math.floor(radius[i])];
      if (!(v > k * s)) continue;
      let isMax = true;
      for (let dy = -2; dy <= 2 && isMax; dy++) for (let dx = -2; dx <= 2; dx++) {
        if ((dx || dy) && sm[i + dy * width + dx] > v) {
          isMax = false;
          break;
        }
      }
      if (isMax) cands.push({ x, y, h: resid[i], snr: v / s });
    }
  }
  cands.sort((a, b) => b.h - a.h);
  const spots: PatternSpot[] = [];
  const half = 4;
  for (const c of cands) {
    if (spots.length >= maxSpots) break;
    if (c.x < half || c.y < half || c.x >= width - half || c.y >= height - half) continue;
    if (spots.some((s) => Math.hypot(s.x - c.x, s.y - c.y) < 3)) continue;
    const xs: number[] = [];
    const ys: number[] = [];
    const vs: number[] = [];
    let masked = false;
    for (let dy = -half; dy <= half; dy++) for (let dx = -half; dx <= half; dx++) {
      const i = (c.y + dy) * width + c.x + dx;
      if (mask[i]) masked = true;
      xs.push(c.x + dx);
      ys.push(c.y + dy);
      vs.push(resid[i]);
    }
    if (masked) continue;
    const res = levenbergMarquardt(
      (q, out) => {
        for (let j = 0; j < xs.length; j++) out[j] = q[0] * Math.exp(-((xs[j] - q[1]) ** 2 + (ys[j] - q[2]) ** 2) / (2 * q[3] * q[3])) + q[4];
      },
      vs,
      [c.h, c.x, c.y, 1.5, 0],
      { lower: [0, c.x - 2, c.y - 2, 0.4, -Infinity], upper: [Infinity, c.x + 2, c.y + 2, 4, Infinity] },
    );
    const [a, x, y, sgm] = res.params;
    if (!(a > 0) || !Number.isFinite(res.sigmas[1]) || !Number.isFinite(res.sigmas[2])) continue;
    spots.push({ x, y, uX: res.sigmas[1], uY: res.sigmas[2], intensity: 2 * Math.PI * a * sgm * sgm, snr: c.snr, mate: null });
  }
  spots.sort((p, q) => q.intensity - p.intensity);
  // Friedel mates
  for (let i = 0; i < spots.length; i++) {
    if (spots[i].mate !== null) continue;
    let best = -1;
    let bestD = 1.5;
    for (let j = i + 1; j < spots.length; j++) {
      if (spots[j].mate !== null) continue;
      const d = Math.hypot((spots[i].x + spots[j].x) / 2 - geometry.cx, (spots[i].y + spots[j].y) / 2 - geometry.cy);
      const ratio = spots[i].intensity / spots[j].intensity;
      if (d < bestD && ratio < 5 && ratio > 0.2) {
        bestD = d;
        best = j;
      }
    }
    if (best >= 0) {
      spots[i].mate = best;
      spots[best].mate = i;
    }
  }
  return spots;
}

/**
 * The centre of a spot pattern refined from its Friedel pairs.
 * @param spots spots with their mates paired
 * @returns the weighted mean of the pairs' midpoints with its standard uncertainty (scaled by the
 *   Birge ratio of the midpoints when above 1) and that ratio, or null without pairs
 * Notes: weighted mean; Birge, Phys. Rev. 40, 207 (1932).
 */
export function centreFromPairs(spots: readonly PatternSpot[]): { cx: number; cy: number; uCx: number; uCy: number; pairs: number; birgeRatio: number } | null {
  let sw = 0;
  let sx = 0;
  let sy = 0;
  let n = 0;
  spots.forEach((s, i) => {
    if (s.mate === null || s.mate < i) return;
    const m = spots[s.mate];
    const u2 = (s.uX ** 2 + m.uX ** 2 + s.uY ** 2 + m.uY ** 2) / 8 + 1e-12;
    const w = 1 / u2;
    sw += w;
    sx += w * (s.x + m.x) / 2;
    sy += w * (s.y + m.y) / 2;
    n++;
  });
  if (n === 0) return null;
  const cx = sx / sw;
  const cy = sy / sw;
  // Birge ratio of the midpoints about their mean: each pair is an independent estimate of the
  // centre, so their scatter shows whether the spots' fitted uncertainties are realistic
  let chi2 = 0;
  spots.forEach((s, i) => {
    if (s.mate === null || s.mate < i) return;
    const m = spots[s.mate];
    const u2 = (s.uX ** 2 + m.uX ** 2 + s.uY ** 2 + m.uY ** 2) / 8 + 1e-12;
    chi2 += (((s.x + m.x) / 2 - cx) ** 2 + ((s.y + m.y) / 2 - cy) ** 2) / u2;
  });
  const birge = n > 1 ? Math.sqrt(chi2 / (2 * (n - 1))) : 1;
  const scale = Math.max(1, birge);
  return { cx, cy, uCx: scale * Math.sqrt(1 / sw), uCy: scale * Math.sqrt(1 / sw), pairs: n, birgeRatio: birge };
}

/** Finds the centre of a spot pattern: Friedel symmetry first, then the pairs' midpoints. */
export function spotPatternCentre(image: GreyImage, distortion: { e1: number; e2: number }, options: SpotFindOptions = {}): { geometry: PatternGeometry; spots: PatternSpot[]; uCx: number; uCy: number; pairs: number; birgeRatio: number } {
  const c0 = findPatternCentre(image, options.mask ? { mask: options.mask } : {});
  const mask = options.mask ?? patternMask(image, c0);
  let geo: PatternGeometry = { cx: c0.cx, cy: c0.cy, ...distortion };
  let spots = findSpots(image, geo, { ...options, mask });
  let refined = centreFromPairs(spots);
  if (refined) {
    geo = { ...geo, cx: refined.cx, cy: refined.cy };
    spots = findSpots(image, geo, { ...options, mask });
    refined = centreFromPairs(spots) ?? refined;
    geo = { ...geo, cx: refined.cx, cy: refined.cy };
  }
  return { geometry: geo, spots, uCx: refined?.uCx ?? 1, uCy: refined?.uCy ?? 1, pairs: refined?.pairs ?? 0, birgeRatio: refined?.birgeRatio ?? 1 };
}

/** Separable Gaussian smoothing of an image, masked pixels counted as 0 and left out of the weights. */
function gaussianSmooth(v: Float32Array, mask: Uint8Array, width: number, height: number, sigma: number): Float32Array {
  const r = Math.ceil(3 * sigma);
  const ker = Float64Array.from({ length: 2 * r + 1 }, (_, j) => Math.exp(-((j - r) ** 2) / (2 * sigma * sigma)));
  const tmp = new Float32Array(width * height);
  const tw = new Float32Array(width * height);
  for (let y = 0; y < height; y++) {
    for (let x = 0; x < width; x++) {
      let s = 0;
      let w = 0;
      for (let j = -r; j <= r; j++) {
        const xx = x + j;
        if (xx < 0 || xx >= width) continue;
        const i = y * width + xx;
        if (mask[i]) continue;
        s += ker[j + r] * v[i];
        w += ker[j + r];
      }
      tmp[y * width + x] = s;
      tw[y * width + x] = w;
    }
  }
  const out = new Float32Array(width * height);
  for (let y = 0; y < height; y++) {
    for (let x = 0; x < width; x++) {
      let s = 0;
      let w = 0;
      for (let j = -r; j <= r; j++) {
        const yy = y + j;
        if (yy < 0 || yy >= height) continue;
        s += ker[j + r] * tmp[yy * width + x];
        w += ker[j + r] * tw[yy * width + x];
      }
      out[y * width + x] = w > 0 ? s / w : 0;
    }
  }
  return out;
}
