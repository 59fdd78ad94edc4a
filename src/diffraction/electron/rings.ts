/**
 * Rings of a polycrystalline electron-diffraction pattern: found in the azimuthal average, each
 * followed around the pattern sector by sector, fitted jointly as concentric ellipses of one
 * shape (the projector lenses' distortion), and measured in the elliptically corrected azimuthal
 * average. Pure: typed arrays only.
 */
import type { GreyImage } from '../../image/grey-image';
import { levenbergMarquardt } from '../lm';
import { correction, correctedVector, ellipticity, findPatternCentre, imagePoint, patternMask, roundGeometry, type PatternGeometry } from './geometry';

/** An azimuthal average: mean intensity per bin of corrected radius. */
export interface RadialProfile {
  /** Bin width, px. */
  binPx: number;
  /** Mean intensity of each bin (NaN where no pixel fell). */
  mean: Float64Array;
  /** Pixels averaged in each bin. */
  count: Float64Array;
  /** Standard error of each bin's mean (NaN where fewer than 2 pixels). */
  sem: Float64Array;
}

/**
 * The elliptically corrected azimuthal average of a pattern.
 * @param image the pattern
 * @param geometry centre and distortion
 * @param mask pixels to leave out (1), or null
 * @param binPx bin width in px of corrected radius (default 0.25)
 * @returns mean, count and standard error per bin; bin i covers [i·binPx, (i + 1)·binPx)
 * Notes: each pixel's corrected radius |T(p − c)|; azimuthal integration (common practice).
 */
export function radialProfile(image: GreyImage, geometry: PatternGeometry, mask: Uint8Array | null, binPx = 0.25): RadialProfile {
  if (!(binPx > 0.01 && binPx <= 10)) throw new RangeError(`binPx must be in (0.01, 10], got ${binPx}`);
  const { width, height, data } = image;
  const t = correction(geometry);
  const corners = [[0, 0], [width, 0], [0, height], [width, height]].map(([x, y]) => Math.hypot(...correctedVector(geometry, x, y, t)));
  const n = Math.ceil(Math.max(...corners) / binPx) + 2;
  const sum = new Float64Array(n);
  const sum2 = new Float64Array(n);
  const count = new Float64Array(n);
  for (let y = 0; y < height; y++) {
    const dy = y - geometry.cy;
    for (let x = 0; x < width; x++) {
      const i = y * width + x;
      if (mask && mask[i]) continue;
      const dx = x - geometry.cx;
      const vx = t[0] * dx + t[1] * dy;
      const vy = t[1] * dx + t[2] * dy;
      const b = Math.floor(Math.hypot(vx, vy) / binPx);
      const v = data[i];
      sum[b] += v;
      sum2[b] += v * v;
      count[b]++;
    }
  }
  const mean = new Float64Array(n);
  const sem = new Float64Array(n);
  for (let b = 0; b < n; b++) {
    mean[b] = count[b] ? sum[b] / count[b] : NaN;
    sem[b] = count[b] > 1 ? Math.sqrt(Math.max(0, sum2[b] / count[b] - mean[b] ** 2) / (count[b] - 1)) : NaN;
  }
  return { binPx, mean, count, sem };
}

/**
 * Ring candidates in a radial profile: maxima standing above the profile's lower envelope.
 * @param p the profile
 * @param options innermost radius to consider (px, default 8) and significance (default 8 standard errors)
 * @returns radii in px, strongest first
 * Notes: the envelope is a running minimum over ±6 px smoothed by a running mean (a rolling-ball
 * background, common practice); a ring's height is the smaller of its rise above the envelope and
 * its prominence (above the higher of the lowest points within ±6 px on either side), and must
 * reach the significance times the bin's standard error and 5 % of the strongest ring's.
 */
export function ringCandidates(p: RadialProfile, options: { minRadiusPx?: number; significance?: number } = {}): { radiusPx: number; height: number }[] {
  const minR = options.minRadiusPx ?? 8;
  const k = options.significance ?? 8;
  const n = p.mean.length;
  const m = Float64Array.from(p.mean, (v) => (Number.isFinite(v) ? v : NaN));
  // fill gaps by the nearest value so the envelope stays defined
  for (let i = 1; i < n; i++) if (!Number.isFinite(m[i])) m[i] = m[i - 1];
  for (let i = n - 2; i >= 0; i--) if (!Number.isFinite(m[i])) m[i] = m[i + 1];
  const w = Math.max(2, Math.round(6 / p.binPx));
  const lowest = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    let v = Infinity;
    for (let j = Math.max(0, i - w); j <= Math.min(n - 1, i + w); j++) v = Math.min(v, m[j]);
    lowest[i] = v;
  }
  const env = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    let s = 0;
    let c = 0;
    for (let j = Math.max(0, i - w); j <= Math.min(n - 1, i + w); j++) {
      s += lowest[j];
      c++;
    }
    env[i] = s / c;
  }
  const smooth = new Float64Array(n);
  const sw = Math.max(1, Math.round(0.5 / p.binPx));
  for (let i = 0; i < n; i++) {
    let s = 0;
    let c = 0;
    for (let j = Math.max(0, i - sw); j <= Math.min(n - 1, i + sw); j++) {
      s += m[j];
      c++;
    }
    smooth[i] = s / c;
  }
  const found: { radiusPx: number; height: number }[] = [];
  const start = Math.ceil(minR / p.binPx);
  for (let i = Math.max(start, 1); i < n - 1; i++) {
    if (!(smooth[i] >= smooth[i - 1] && smooth[i] > smooth[i + 1])) continue;
    // prominence: above the higher of the lowest points within ±w on either side (a bump on the
    // direct beam's falling halo has almost none), and above the envelope
    let leftMin = Infinity;
    let rightMin = Infinity;
    for (let j = Math.max(0, i - w); j < i; j++) leftMin = Math.min(leftMin, smooth[j]);
    for (let j = i + 1; j <= Math.min(n - 1, i + w); j++) rightMin = Math.min(rightMin, smooth[j]);
    const h = Math.min(smooth[i] - env[i], smooth[i] - Math.max(leftMin, rightMin));
    const se = Number.isFinite(p.sem[i]) ? p.sem[i] : Infinity;
    if (!(h > k * se)) continue;
    found.push({ radiusPx: (i + 0.5) * p.binPx, height: h });
  }
  const top = Math.max(0, ...found.map((f) => f.height));
  // merge maxima closer than 2 px (noise on one ring), keep the higher
  const kept: { radiusPx: number; height: number }[] = [];
  for (const f of found.filter((q) => q.height >= 0.05 * top).sort((a, b) => b.height - a.height)) {
    if (!kept.some((q) => Math.abs(q.radiusPx - f.radiusPx) < 2)) kept.push(f);
  }
  return kept;
}

/** A ring measured in the corrected azimuthal average. */
export interface MeasuredRing {
  /** Corrected radius (the radius of the equal-area circle), px. */
  radiusPx: number;
  /** Its standard uncertainty, px. */
  uRadiusPx: number;
  /** Gaussian σ of the ring's profile, px. */
  widthPx: number;
  /** Peak height above the local background (counts of the pattern). */
  height: number;
}

/**
 * Fits Gaussians on a linear background to a group of neighbouring rings in a radial profile.
 * @param p the profile
 * @param radiiPx start radii of the group's rings (close enough that their tails overlap)
 * @param widthPx start width (Gaussian σ), px
 * @returns one ring per start radius (null where that ring's fit failed)
 * Notes: Levenberg–Marquardt (src/diffraction/lm.ts) weighted by the bins' standard errors, the
 * covariance scaled by the reduced χ²; one window from 4σ (at least 4 px) inside the first ring to
 * as far outside the last; the rings share the background, each has its own height, radius and width.
 */
export function fitRingGroup(p: RadialProfile, radiiPx: number[], widthPx = 1.5): (MeasuredRing | null)[] {
  const half = Math.max(4, 4 * widthPx);
  const lo = Math.min(...radiiPx) - half;
  const hi = Math.max(...radiiPx) + half;
  const i0 = Math.max(0, Math.floor(lo / p.binPx));
  const i1 = Math.min(p.mean.length - 1, Math.ceil(hi / p.binPx));
  const xs: number[] = [];
  const ys: number[] = [];
  const ws: number[] = [];
  for (let i = i0; i <= i1; i++) {
    if (!Number.isFinite(p.mean[i]) || !(p.sem[i] > 0)) continue;
    xs.push((i + 0.5) * p.binPx);
    ys.push(p.mean[i]);
    ws.push(1 / (p.sem[i] * p.sem[i]));
  }
  const k = radiiPx.length;
  if (xs.length < 4 + 3 * k) return radiiPx.map(() => null);
  const left = ys[0];
  const right = ys[ys.length - 1];
  const x0 = 0.5 * (lo + hi);
  const bg = (x: number) => left + ((right - left) * (x - xs[0])) / (xs[xs.length - 1] - xs[0]);
  const at = (r: number) => ys[Math.max(0, Math.min(ys.length - 1, Math.round((r - xs[0]) / p.binPx)))];
  const p0: number[] = [0.5 * (left + right), (right - left) / (xs[xs.length - 1] - xs[0])];
  const lower: number[] = [-Infinity, -Infinity];
  const upper: number[] = [Infinity, Infinity];
  for (const r of radiiPx) {
    p0.push(Math.max(1e-6, at(r) - bg(r)), r, widthPx);
    lower.push(0, r - half / 2, 0.3);
    upper.push(Infinity, r + half / 2, half);
  }
  const res = levenbergMarquardt(
    (q, out) => {
      for (let j = 0; j < xs.length; j++) {
        let v = q[0] + q[1] * (xs[j] - x0);
        for (let r = 0; r < k; r++) v += q[2 + 3 * r] * Math.exp(-((xs[j] - q[3 + 3 * r]) ** 2) / (2 * q[4 + 3 * r] ** 2));
        out[j] = v;
      }
    },
    ys,
    p0,
    { weights: ws, lower, upper },
  );
  return radiiPx.map((r, i) => {
    const a = res.params[2 + 3 * i];
    const mu = res.params[3 + 3 * i];
    const sig = res.params[4 + 3 * i];
    const u = res.sigmas[3 + 3 * i];
    if (!(a > 0) || !Number.isFinite(u) || Math.abs(mu - r) >= half / 2 - 1e-6) return null;
    return { radiusPx: mu, uRadiusPx: u, widthPx: sig, height: a };
  });
}

/** Fits one ring alone: {@link fitRingGroup} with one start radius. */
export function fitRingProfile(p: RadialProfile, radiusPx: number, widthPx = 1.5): MeasuredRing | null {
  return fitRingGroup(p, [radiusPx], widthPx)[0];
}

/**
 * Measures rings in a corrected azimuthal average, fitting neighbours whose tails overlap
 * (closer than 5 widths) together.
 * @param p the profile
 * @param radiiPx start radii, increasing
 * @param widthPx start width, px
 */
export function measureRings(p: RadialProfile, radiiPx: number[], widthPx = 1.5): (MeasuredRing | null)[] {
  const out: (MeasuredRing | null)[] = [];
  let group: number[] = [];
  const flush = () => {
    if (group.length) out.push(...fitRingGroup(p, group, widthPx));
    group = [];
  };
  for (const r of radiiPx) {
    if (group.length && r - group[group.length - 1] > 5 * Math.max(widthPx, 1.5)) flush();
    group.push(r);
  }
  flush();
  return out;
}

/** Points on one ring: where its profile peaks in each angular sector, in image px. */
function sectorPoints(image: GreyImage, mask: Uint8Array | null, geo: PatternGeometry, radius: number, halfWindow: number, sectors: number): [number, number][] {
  const t = correction(geo);
  const { width, height, data } = image;
  const pts: [number, number][] = [];
  const step = 0.25;
  const nR = Math.floor((2 * halfWindow) / step) + 1;
  const arcSamples = 5;
  for (let s = 0; s < sectors; s++) {
    const prof = new Float64Array(nR);
    const cnt = new Float64Array(nR);
    for (let a = 0; a < arcSamples; a++) {
      const psi = ((s + (a + 0.5) / arcSamples) * 2 * Math.PI) / sectors;
      const ux = Math.cos(psi);
      const uy = Math.sin(psi);
      for (let k = 0; k < nR; k++) {
        const r = radius - halfWindow + k * step;
        const [x, y] = imagePoint(geo, [r * ux, r * uy], t);
        const x0 = Math.floor(x);
        const y0 = Math.floor(y);
        if (x0 < 0 || y0 < 0 || x0 + 1 >= width || y0 + 1 >= height) continue;
        const i = y0 * width + x0;
        if (mask && (mask[i] || mask[i + 1] || mask[i + width] || mask[i + width + 1])) continue;
        const fx = x - x0;
        const fy = y - y0;
        prof[k] += (1 - fy) * ((1 - fx) * data[i] + fx * data[i + 1]) + fy * ((1 - fx) * data[i + width] + fx * data[i + width + 1]);
        cnt[k]++;
      }
    }
    if (cnt.some((c) => c < arcSamples)) continue; // masked or off the image: skip the sector
    for (let k = 0; k < nR; k++) prof[k] /= cnt[k];
    // linear background from the window's ends, then the peak by a parabola on the log around the maximum
    const b0 = prof[0];
    const b1 = prof[nR - 1];
    let best = -1;
    let bestV = -Infinity;
    for (let k = 1; k < nR - 1; k++) {
      const v = prof[k] - (b0 + ((b1 - b0) * k) / (nR - 1));
      if (v > bestV) {
        bestV = v;
        best = k;
      }
    }
    if (best < 2 || best > nR - 3 || !(bestV > 0)) continue;
    // centroid over ±3 samples of the background-subtracted peak
    let sw = 0;
    let sk = 0;
    for (let k = best - 4; k <= best + 4; k++) {
      const v = prof[k] - (b0 + ((b1 - b0) * k) / (nR - 1));
      if (v <= 0) continue;
      sw += v;
      sk += v * k;
    }
    if (!(sw > 0)) continue;
    const kk = sk / sw;
    const r = radius - halfWindow + kk * step;
    const psi = ((s + 0.5) * 2 * Math.PI) / sectors;
    pts.push(imagePoint(geo, [r * Math.cos(psi), r * Math.sin(psi)], t));
  }
  return pts;
}

/** What the ring analysis of a pattern gives. */
export interface RingAnalysis {
  /** Centre and distortion fitted to every ring at once. */
  geometry: PatternGeometry;
  /** Standard uncertainties of the centre, px. */
  uCx: number;
  uCy: number;
  /** Ellipticity ε = a/b − 1 with its standard uncertainty, and the major axis (degrees from +x, y up). */
  ellipticity: number;
  uEllipticity: number;
  majorAxisDeg: number;
  /** Rings by increasing radius, measured in the corrected azimuthal average. */
  rings: MeasuredRing[];
  /** Sector points used per ring (after outliers were dropped). */
  pointsPerRing: number[];
  /** Pixels left out (beam stop, clipping). */
  maskedPx: number;
  notes: string[];
}

/** Options of {@link analyseRings}. */
export interface RingAnalysisOptions {
  /** A known centre to start from (found from the pattern's symmetry when absent). */
  centre?: { cx: number; cy: number };
  /** A known distortion (e.g. from the camera-constant calibration): kept fixed when given. */
  distortion?: { e1: number; e2: number };
  /** Pixels to leave out; found automatically (beam stop, clipping) when absent. */
  mask?: Uint8Array;
  /** Largest number of rings to follow (default 12). */
  maxRings?: number;
  /** Angular sectors per ring (default 72). */
  sectors?: number;
  /** Innermost ring radius considered, px (default 10). */
  minRadiusPx?: number;
}

/**
 * Finds and measures the rings of a polycrystalline pattern, with the pattern's centre and
 * elliptical distortion.
 * @param image the pattern
 * @param options start centre, fixed distortion, mask, limits
 * @returns the geometry with uncertainties and the rings (radius ± u, width, height)
 * @throws RangeError when no ring stands out of the background
 * Notes: (1) centre from Friedel symmetry; (2) ring candidates in the azimuthal average; (3) each
 * ring's peak radius in 72 sectors (background-subtracted centroid); (4) all points fitted at once
 * to concentric ellipses of one shape, residual |T(p − c)| − R_k, by Levenberg–Marquardt with
 * parameters (cx, cy, e1, e2, R_1…R_n), points beyond 3.5 robust σ dropped and the fit repeated;
 * (5) radii measured by Gaussian fits in the corrected azimuthal average. Ellipse fitting of
 * distorted diffraction rings: common practice in camera-length calibration (e.g. the ellipse
 * correction of Mitchell's DiffTools is described in the literature, Microsc. Res. Tech. 71, 588
 * (2008) (from memory)); least squares: Levenberg (1944), Marquardt (1963).
 */
export function analyseRings(image: GreyImage, options: RingAnalysisOptions = {}): RingAnalysis {
  const { width, height } = image;
  if (width < 32 || height < 32) throw new RangeError(`a ${width} × ${height} px pattern is too small for ring analysis (at least 32 × 32)`);
  const maxRings = options.maxRings ?? 12;
  const sectors = options.sectors ?? 72;
  if (!Number.isInteger(maxRings) || maxRings < 1 || maxRings > 40) throw new RangeError(`maxRings must be an integer from 1 to 40, got ${maxRings}`);
  if (!Number.isInteger(sectors) || sectors < 12 || sectors > 720) throw new RangeError(`sectors must be an integer from 12 to 720, got ${sectors}`);
  const notes: string[] = [];
  const c0 = options.centre ?? findPatternCentre(image, options.mask ? { mask: options.mask } : {});
  const mask = options.mask ?? patternMask(image, c0);
  let maskedPx = 0;
  for (const v of mask) maskedPx += v;
  let geo: PatternGeometry = { ...roundGeometry(c0.cx, c0.cy), ...(options.distortion ?? {}) };
  const fixedDistortion = !!options.distortion;
  let fit: { geo: PatternGeometry; sig: Float64Array; radii: number[]; used: number[] } | null = null;
  let radii: number[] = [];
  for (let pass = 0; pass < 4; pass++) {
    if (pass === 0 || pass === 2) {
      // ring candidates in the azimuthal average, corrected by the geometry found so far (close
      // rings smeared together by the distortion separate once it is known)
      const prof0 = radialProfile(image, geo, mask, 0.5);
      const cands = ringCandidates(prof0, { minRadiusPx: options.minRadiusPx ?? 10 })
        .filter((c) => c.radiusPx < 1.35 * Math.min(geo.cx, geo.cy, width - geo.cx, height - geo.cy))
        .slice(0, maxRings)
        .sort((a, b) => a.radiusPx - b.radiusPx);
      if (cands.length === 0) throw new RangeError('no ring stands out of the background: is this a polycrystalline ring pattern, and is the centre inside the image?');
      radii = cands.map((c) => c.radiusPx);
    }
    // points per ring, in windows that never reach a neighbouring ring
    const pts: { x: number; y: number; ring: number }[] = [];
    radii.forEach((R, k) => {
      const gapIn = k > 0 ? R - radii[k - 1] : R;
      const gapOut = k < radii.length - 1 ? radii[k + 1] - R : 20;
      const half = Math.max(2.5, Math.min(8, 0.45 * Math.min(gapIn, gapOut)));
      for (const [x, y] of sectorPoints(image, mask, geo, R, half, sectors)) pts.push({ x, y, ring: k });
    });
    const keep = radii.map((_, k) => pts.filter((p) => p.ring === k).length >= Math.max(6, 0.2 * sectors));
    if (!keep.some(Boolean)) throw new RangeError('the rings could not be followed around the pattern (too weak, or mostly masked)');
    const ringIx = radii.map((_, k) => k).filter((k) => keep[k]);
    radii = ringIx.map((k) => radii[k]);
    let use = pts.filter((p) => keep[p.ring]).map((p) => ({ ...p, ring: ringIx.indexOf(p.ring) }));
    for (let round = 0; round < 2; round++) {
      const nR = radii.length;
      const base = fixedDistortion ? 2 : 4;
      const p0 = [geo.cx, geo.cy, ...(fixedDistortion ? [] : [geo.e1, geo.e2]), ...radii];
      const res = levenbergMarquardt(
        (q, out) => {
          const g: PatternGeometry = { cx: q[0], cy: q[1], e1: fixedDistortion ? geo.e1 : q[2], e2: fixedDistortion ? geo.e2 : q[3] };
          const t = correction(g);
          for (let j = 0; j < use.length; j++) {
            const v = correctedVector(g, use[j].x, use[j].y, t);
            out[j] = Math.hypot(v[0], v[1]) - q[base + use[j].ring];
          }
        },
        new Float64Array(use.length),
        p0,
        { lower: [-Infinity, -Infinity, ...(fixedDistortion ? [] : [-0.2, -0.2]), ...radii.map(() => 1)], upper: [Infinity, Infinity, ...(fixedDistortion ? [] : [0.2, 0.2]), ...radii.map(() => Infinity)] },
      );
      const q = res.params;
      geo = { cx: q[0], cy: q[1], e1: fixedDistortion ? geo.e1 : q[2], e2: fixedDistortion ? geo.e2 : q[3] };
      radii = Array.from(q.slice(base, base + nR));
      // drop points beyond 3.5 robust σ (spots of large grains, the stop's edge) and fit again
      const t = correction(geo);
      const resid = use.map((p) => Math.hypot(...correctedVector(geo, p.x, p.y, t)) - radii[p.ring]);
      const sorted = resid.map(Math.abs).sort((a, b) => a - b);
      const sigma = 1.4826 * sorted[sorted.length >> 1];
      const kept = use.filter((_, j) => Math.abs(resid[j]) <= Math.max(3.5 * sigma, 0.05));
      const used = radii.map((_, k) => kept.filter((p) => p.ring === k).length);
      fit = { geo, sig: res.sigmas, radii, used };
      if (kept.length === use.length) break;
      use = kept;
    }
  }
  if (!fit) throw new RangeError('the ring fit failed');
  // radii in the corrected azimuthal average
  const prof = radialProfile(image, fit.geo, mask, 0.2);
  const rings: MeasuredRing[] = [];
  const order = [...fit.radii].sort((a, b) => a - b);
  measureRings(prof, order).forEach((m, i) => {
    if (m) rings.push(m);
    else notes.push(`the ring near ${order[i].toFixed(1)} px could not be fitted in the corrected average`);
  });
  const el = ellipticity(fit.geo);
  // uncertainty of ε from those of e1, e2 (first order; ε ≈ 2e)
  const e = Math.hypot(fit.geo.e1, fit.geo.e2);
  const uE = fixedDistortion ? 0 : e > 0 ? Math.hypot((fit.geo.e1 / e) * fit.sig[2], (fit.geo.e2 / e) * fit.sig[3]) : Math.hypot(fit.sig[2], fit.sig[3]);
  return {
    geometry: fit.geo,
    uCx: fit.sig[0],
    uCy: fit.sig[1],
    ellipticity: el.ellipticity,
    uEllipticity: (2 * uE) / (1 - e) ** 2,
    majorAxisDeg: el.majorAxisDeg,
    rings: rings.sort((a, b) => a.radiusPx - b.radiusPx),
    pointsPerRing: fit.used,
    maskedPx,
    notes,
  };
}
