/**
 * Automatic sheets over an image: where the image is locally periodic (structure-tensor
 * coherence), connected regions of consistent layer orientation are measured perpendicular to
 * their layers at several places along them, following the local normal of bent sheets.
 */
import type { GreyImage } from '../image/grey-image';
import { periodCandidates, profilePeriodogram, sheetsAlongProfile, type SheetProfileOptions } from './profile';
import { sheetsAlongLine, type LineSheet } from './line';
import { lineProfile } from '../measure/profile';
import { axialDifferenceDeg, structureTensor, type OrientationField } from './structure-tensor';
import { summarize, type Summary } from '../measure/stats';

/** Review state of a sheet in the app: automatic, accepted or rejected by the user, or drawn/corrected by hand. */
export type SheetStatus = 'auto' | 'accepted' | 'rejected' | 'manual' | 'corrected';

/** Options for `detectSheets`. */
export interface AutoSheetOptions extends Pick<SheetProfileOptions, 'polarity' | 'relBandwidth' | 'snrThreshold' | 'minLayers' | 'spacingTolerance'> {
  /** Expected layer period, px; default: estimated for each region from its central profile. */
  periodPx?: number;
  /** Shortest period searched, px (default 2.2). */
  minPeriodPx?: number;
  /** Longest period searched, px (default 40). */
  maxPeriodPx?: number;
  /** Integration scale of the structure tensor, px (default 1.5 × periodPx, or 6). */
  integrationSigmaPx?: number;
  /** Coherence above which a pixel counts as locally layered (default 0.45). */
  coherenceThreshold?: number;
  /** Neighbouring layered pixels join one region when their normals differ by less than this (default 12°). */
  angleToleranceDeg?: number;
  /** Regions smaller than this area are ignored, px² (default 400). */
  minAreaPx?: number;
  /** Measurement lines per region along its layers (default 5). */
  linesPerSheet?: number;
  /** Width of each measurement line, px (default: 0.6 × the spacing of the lines, within 7–25). */
  lineWidthPx?: number;
  /** Standard deviation of the structure tensor's derivative filters, px (default 1; fine fringes still orient a region through the edges of their stack). */
  gradientSigmaPx?: number;
  /** A box [x, y, width, height] in px that is skipped (e.g. the information strip under a scale bar). */
  exclude?: [number, number, number, number] | null;
}

/** One measurement line of an automatic sheet. */
export interface SheetCrossing {
  /** Sheet centre on this line, px [x, y]. */
  centerPx: [number, number];
  layers: number;
  thicknessPx: number;
  periodPx: number;
  /** Local layer normal, degrees. */
  angleDeg: number;
}

/** A sheet found automatically (or reviewed by the user). */
export interface AutoSheet {
  /** Identifier unique within one detection run. */
  id: string;
  status: SheetStatus;
  /** Layer count: the most frequent count over the measurement lines. */
  layers: number;
  /** Median thickness (layers × period) over the lines that agree with the layer count, px and nm. */
  thicknessPx: number;
  thicknessNm: number | null;
  /** Median edge-to-edge distance between half-maximum crossings, px and nm. */
  edgeToEdgePx: number;
  edgeToEdgeNm: number | null;
  /** Mean layer period over the lines, px and nm. */
  periodPx: number;
  periodNm: number | null;
  /** Mean direction of the layer normal, degrees in [0, 180), CCW from +x on screen. */
  angleDeg: number;
  /** Mean of the line centres, px [x, y] (y = row). */
  centerPx: [number, number];
  /** Outline polygon in px: the edge points on one side of the lines, then the other side back. */
  outlinePx: [number, number][];
  /** Extent along the layers covered by the measurement lines, px. */
  lengthPx: number;
  /** The individual measurement lines. */
  crossings: SheetCrossing[];
}

/** The result of `detectSheets`. */
export interface AutoSheetsResult {
  sheets: AutoSheet[];
  /** Number of layered regions examined. */
  regions: number;
  /** The settings used (resolved defaults). */
  settings: Record<string, unknown>;
}

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

function axialMeanDeg(angles: number[], weights: number[]): number {
  let c = 0;
  let s = 0;
  angles.forEach((a, i) => {
    c += weights[i] * Math.cos((2 * a * Math.PI) / 180);
    s += weights[i] * Math.sin((2 * a * Math.PI) / 180);
  });
  const deg = ((Math.atan2(s, c) * 180) / Math.PI) / 2;
  return ((deg % 180) + 180) % 180;
}

function median(v: number[]): number {
  const s = [...v].sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 ? s[m] : 0.5 * (s[m - 1] + s[m]);
}

/** Most frequent value; ties go to the largest tied value (a dropped edge layer, below the half-maximum, is the commoner error). */
function modeCount(v: number[]): number {
  const counts = new Map<number, number>();
  for (const x of v) counts.set(x, (counts.get(x) ?? 0) + 1);
  const top = Math.max(...counts.values());
  const tied = [...counts].filter(([, c]) => c === top).map(([x]) => x).sort((a, b) => a - b);
  return tied[tied.length - 1];
}

function inBox(x: number, y: number, box: [number, number, number, number] | null | undefined): boolean {
  return !!box && x >= box[0] && x < box[0] + box[2] && y >= box[1] && y < box[1] + box[3];
}

/**
 * Finds and measures sheets automatically over a whole image.
 *
 * Structure-tensor coherence (Bigün & Granlund 1987) for where the image is layered; each region measured by analytic-signal line profiles along its local normal.
 *
 * @param image the image (its calibration gives the nm fields)
 * @param options period, tensor scale, thresholds, lines per sheet, exclusion box
 * @returns the sheets, each with status 'auto', an outline, the measurement lines and medians
 * Notes: unless periodPx is given, one layer period is estimated for the image: of the three
 * best peaks of the summed periodograms of the regions' profiles, the one that finds the most
 * layers on those profiles; regions are connected pixels (on a 2-px grid) of coherence above the threshold whose
 * normals agree within the tolerance; each region gets `linesPerSheet` lines along its layers,
 * spread over the central 70 % of its length, each through the region's local centre along the
 * local normal; sheets on the lines are matched by their offset along the normal, a sheet must be
 * seen on at least half the lines, and its layer count is the most frequent count.
 */
export function detectSheets(image: GreyImage, options: AutoSheetOptions = {}): AutoSheetsResult {
  const minPeriodPx = options.minPeriodPx ?? 2.2;
  const maxPeriodPx = options.maxPeriodPx ?? 40;
  if (options.periodPx !== undefined && !(options.periodPx >= 2)) throw new RangeError(`periodPx must be ≥ 2, got ${options.periodPx}`);
  if (!(minPeriodPx >= 2)) throw new RangeError(`minPeriodPx must be ≥ 2, got ${minPeriodPx}`);
  if (!(maxPeriodPx > minPeriodPx)) throw new RangeError(`maxPeriodPx must exceed minPeriodPx, got ${maxPeriodPx}`);
  const integrationSigmaPx = options.integrationSigmaPx ?? (options.periodPx ? 1.5 * options.periodPx : 6);
  const coherenceThreshold = options.coherenceThreshold ?? 0.45;
  const angleToleranceDeg = options.angleToleranceDeg ?? 12;
  const minAreaPx = options.minAreaPx ?? 400;
  const linesPerSheet = options.linesPerSheet ?? 5;
  const fixedWidthPx = options.lineWidthPx;
  const lineWidthPx = fixedWidthPx ?? 7;
  const gradientSigmaPx = options.gradientSigmaPx ?? 1;
  if (!(gradientSigmaPx > 0)) throw new RangeError(`gradientSigmaPx must be > 0, got ${gradientSigmaPx}`);
  const exclude = options.exclude ?? null;
  if (!(coherenceThreshold > 0 && coherenceThreshold < 1)) throw new RangeError(`coherenceThreshold must be in (0, 1), got ${coherenceThreshold}`);
  if (!(angleToleranceDeg > 0 && angleToleranceDeg <= 90)) throw new RangeError(`angleToleranceDeg must be in (0, 90], got ${angleToleranceDeg}`);
  if (!(Number.isInteger(linesPerSheet) && linesPerSheet >= 1)) throw new RangeError(`linesPerSheet must be an integer ≥ 1, got ${linesPerSheet}`);
  if (!(lineWidthPx >= 1)) throw new RangeError(`lineWidthPx must be ≥ 1, got ${lineWidthPx}`);
  if (exclude && !(exclude.length === 4 && exclude.every(Number.isFinite) && exclude[2] > 0 && exclude[3] > 0)) {
    throw new RangeError(`exclude must be [x, y, width, height] with positive size, got ${JSON.stringify(exclude)}`);
  }
  const settings = { minPeriodPx, maxPeriodPx, gradientSigmaPx, integrationSigmaPx, coherenceThreshold, angleToleranceDeg, minAreaPx, linesPerSheet, lineWidthPx: fixedWidthPx ?? 'auto', exclude, periodPx: options.periodPx ?? null };
  const field = structureTensor(image, { gradientSigmaPx, integrationSigmaPx });
  const regions = layeredRegions(field, { coherenceThreshold, angleToleranceDeg, minAreaPx, exclude, marginPx: Math.ceil(2 * integrationSigmaPx) });
  const sheets: AutoSheet[] = [];
  const { width, height } = image;
  // one layer period for the image unless given: the periodograms of every region's central
  // profile (over the region's extent) summed, each normalised and weighted by its area
  let imagePeriodPx = options.periodPx;
  const geometry = regions.map((reg) => regionLines(reg, linesPerSheet, lineWidthPx, fixedWidthPx, exclude));
  if (imagePeriodPx === undefined && regions.length > 0) {
    const size = 4096;
    const sum = new Float64Array(size / 2 + 1);
    const profiles: Float64Array[] = [];
    for (const g of geometry) {
      const regionHw = (Math.max(1, Math.round(g.widthPx)) - 1) / 2;
      for (const l of g.lines) {
        const seg = clipLine(l.px, l.py, l.ux, l.uy, Math.max(16, g.extentB / 2 + 4), width, height, regionHw);
        if (!seg) continue;
        const prof = lineProfile(image, seg[0], seg[1], seg[2], seg[3], { widthPx: g.widthPx });
        if (prof.mean.length < 16 || prof.mean.length > size) continue;
        profiles.push(prof.mean);
        const p = profilePeriodogram(prof.mean, size, Math.max(maxPeriodPx / 2, 2 * minPeriodPx));
        let tot = 0;
        for (let k = 1; k < p.length; k++) tot += p[k];
        if (!(tot > 0)) continue;
        const w = g.area / g.lines.length / tot;
        for (let k = 0; k < p.length; k++) sum[k] += w * p[k];
      }
    }
    // of the three best spectral candidates, the one that finds the most layers on these
    // profiles (the body of a stack makes spectral side lobes that find few)
    const candidates = periodCandidates(sum, size, minPeriodPx, maxPeriodPx, 3);
    let bestLayers = -1;
    for (const c of candidates) {
      let layers = 0;
      for (const v of profiles) {
        if (c.periodPx > v.length / 1.6) continue;
        for (const sh of sheetsAlongProfile(v, { periodPx: c.periodPx, polarity: options.polarity, relBandwidth: options.relBandwidth, snrThreshold: options.snrThreshold }).sheets) layers += sh.layers;
      }
      if (layers > bestLayers) {
        bestLayers = layers;
        imagePeriodPx = c.periodPx;
      }
    }
  }
  for (const g of geometry) {
    const { widthPx, extentB, lines, k } = g;
    const regionHw = (Math.max(1, Math.round(widthPx)) - 1) / 2;
    const periodPx = imagePeriodPx as number;
    const obs: { line: number; offset: number; s: LineSheet; ux: number; uy: number }[] = [];
    for (const { j, px, py, ux, uy } of lines) {
      const half = extentB / 2 + 4 * periodPx;
      const seg = clipLine(px, py, ux, uy, half, width, height, regionHw);
      if (!seg) continue;
      const r = sheetsAlongLine(image, seg[0], seg[1], seg[2], seg[3], {
        widthPx,
        periodPx: Math.min(periodPx, Math.hypot(seg[2] - seg[0], seg[3] - seg[1]) / 1.6),
        polarity: options.polarity,
        relBandwidth: options.relBandwidth,
        snrThreshold: options.snrThreshold,
        minLayers: options.minLayers,
        spacingTolerance: options.spacingTolerance,
        // the line crosses a region found coherent (layered): a quiet stretch on it is a gap
        minBackgroundSamples: 1,
      });
      // offset of each sheet from the region's local centre, along the normal
      const startOffset = (seg[0] - px) * ux + (seg[1] - py) * uy;
      for (const s of r.sheets) {
        if (s.truncated) continue;
        if (inBox(s.centerXY[0], s.centerXY[1], exclude)) continue;
        obs.push({ line: j, offset: startOffset + s.centerPx, s, ux, uy });
      }
    }
    // group the sheets seen on different lines by their offset along the normal
    obs.sort((p, q) => p.offset - q.offset);
    const clusters: (typeof obs)[] = [];
    for (const o of obs) {
      const last = clusters[clusters.length - 1];
      if (last) {
        const mean = last.reduce((acc, q) => acc + q.offset, 0) / last.length;
        const thick = median(last.map((q) => q.s.thicknessPx));
        if (Math.abs(o.offset - mean) < Math.max(2 * periodPx, 0.35 * thick)) {
          const dup = last.findIndex((q) => q.line === o.line);
          if (dup < 0) last.push(o);
          else if (Math.abs(o.offset - mean) < Math.abs(last[dup].offset - mean)) last[dup] = o;
          continue;
        }
      }
      clusters.push([o]);
    }
    const need = Math.max(1, Math.ceil(k / 2));
    for (const c of clusters) {
      if (c.length < need) continue;
      c.sort((p, q) => p.line - q.line);
      const cal = c[0].s;
      const layers = modeCount(c.map((q) => q.s.layers));
      const agree = c.filter((q) => q.s.layers === layers);
      const thicknessPx = median(agree.map((q) => q.s.thicknessPx));
      const edgeToEdgePx = median(agree.map((q) => q.s.edgeToEdgePx));
      const periodMean = agree.reduce((acc, q) => acc + q.s.periodPx, 0) / agree.length;
      const nmPerPx = cal.thicknessNm !== null ? cal.thicknessNm / cal.thicknessPx : null;
      const cx = c.reduce((acc, q) => acc + q.s.centerXY[0], 0) / c.length;
      const cy = c.reduce((acc, q) => acc + q.s.centerXY[1], 0) / c.length;
      const angleDeg = axialMeanDeg(c.map((q) => q.s.angleDeg), c.map(() => 1));
      const outlinePx: [number, number][] = [
        ...c.map((q) => q.s.edgesXY[0]),
        ...c.map((q) => q.s.edgesXY[1]).reverse(),
      ];
      const first = c[0].s.centerXY;
      const last = c[c.length - 1].s.centerXY;
      sheets.push({
        id: `auto-${sheets.length + 1}`,
        status: 'auto',
        layers,
        thicknessPx,
        thicknessNm: nmPerPx === null ? null : thicknessPx * nmPerPx,
        edgeToEdgePx,
        edgeToEdgeNm: nmPerPx === null ? null : edgeToEdgePx * nmPerPx,
        periodPx: periodMean,
        periodNm: nmPerPx === null ? null : periodMean * nmPerPx,
        angleDeg,
        centerPx: [cx, cy],
        outlinePx,
        lengthPx: Math.hypot(last[0] - first[0], last[1] - first[1]) + (0.7 * g.length) / k,
        crossings: c.map((q) => ({
          centerPx: q.s.centerXY,
          layers: q.s.layers,
          thicknessPx: q.s.thicknessPx,
          periodPx: q.s.periodPx,
          angleDeg: q.s.angleDeg,
        })),
      });
    }
  }
  return { sheets, regions: regions.length, settings };
}

/** Where a region is measured: k points along its layers (central 70 %), each with the local normal. */
function regionLines(
  reg: LayeredRegion,
  linesPerSheet: number,
  lineWidthPx: number,
  fixedWidthPx: number | undefined,
  exclude: [number, number, number, number] | null,
): { k: number; widthPx: number; extentB: number; length: number; area: number; lines: { j: number; px: number; py: number; ux: number; uy: number }[] } {
  const th = (reg.angleDeg * Math.PI) / 180;
  const n = [Math.cos(th), -Math.sin(th)];
  const t = [-n[1], n[0]];
  const a: number[] = [];
  const b: number[] = [];
  let aMin = Infinity;
  let aMax = -Infinity;
  let bMin = Infinity;
  let bMax = -Infinity;
  for (const [x, y] of reg.points) {
    const aa = (x - reg.cx) * t[0] + (y - reg.cy) * t[1];
    const bb = (x - reg.cx) * n[0] + (y - reg.cy) * n[1];
    a.push(aa);
    b.push(bb);
    aMin = Math.min(aMin, aa);
    aMax = Math.max(aMax, aa);
    bMin = Math.min(bMin, bb);
    bMax = Math.max(bMax, bb);
  }
  const length = aMax - aMin;
  const k = Math.max(1, Math.min(linesPerSheet, Math.floor(length / Math.max(lineWidthPx, 4))));
  const widthPx = fixedWidthPx ?? Math.max(7, Math.min(25, Math.round((0.6 * 0.7 * length) / k)));
  const slab = Math.max(2, (0.7 * length) / (2 * k));
  const lines: { j: number; px: number; py: number; ux: number; uy: number }[] = [];
  for (let j = 0; j < k; j++) {
    // lines spread over the central 70 % of the region (its ends are where layers fade out)
    const ak = aMin + length * (0.15 + (0.7 * (j + 0.5)) / k);
    const angles: number[] = [];
    const weights: number[] = [];
    let bSum = 0;
    let cnt = 0;
    reg.points.forEach((_, i) => {
      if (Math.abs(a[i] - ak) > slab) return;
      angles.push(reg.angles[i]);
      weights.push(reg.weights[i]);
      bSum += b[i];
      cnt++;
    });
    if (cnt === 0) continue;
    const bc = bSum / cnt;
    const px = reg.cx + ak * t[0] + bc * n[0];
    const py = reg.cy + ak * t[1] + bc * n[1];
    if (inBox(px, py, exclude)) continue;
    const thk = (axialMeanDeg(angles, weights) * Math.PI) / 180;
    lines.push({ j, px, py, ux: Math.cos(thk), uy: -Math.sin(thk) });
  }
  return { k, widthPx, extentB: bMax - bMin, length, area: reg.points.length, lines };
}

/** End points of a line through P along unit vector u, half-length `half`, clipped so a line of half-width hw stays inside; null if under 16 px. */
function clipLine(
  px: number,
  py: number,
  ux: number,
  uy: number,
  half: number,
  width: number,
  height: number,
  hw: number,
): [number, number, number, number] | null {
  let lo = -half;
  let hi = half;
  for (const [p, u, max] of [[px, ux, width - 1 - hw], [py, uy, height - 1 - hw]] as const) {
    if (Math.abs(u) < 1e-9) {
      if (p < hw || p > max) return null;
      continue;
    }
    const s1 = (hw - p) / u;
    const s2 = (max - p) / u;
    lo = Math.max(lo, Math.min(s1, s2));
    hi = Math.min(hi, Math.max(s1, s2));
  }
  if (hi - lo < 16) return null;
  return [px + ux * lo, py + uy * lo, px + ux * hi, py + uy * hi];
}

/** A connected region of consistently oriented, layered pixels (grid points). */
interface LayeredRegion {
  points: [number, number][];
  angles: number[];
  weights: number[];
  cx: number;
  cy: number;
  angleDeg: number;
}

function layeredRegions(
  field: OrientationField,
  o: { coherenceThreshold: number; angleToleranceDeg: number; minAreaPx: number; exclude: [number, number, number, number] | null; marginPx: number },
): LayeredRegion[] {
  const step = 2;
  const { width, height } = field;
  const gw = Math.ceil(width / step);
  const gh = Math.ceil(height / step);
  const on = new Uint8Array(gw * gh);
  const ang = new Float32Array(gw * gh);
  const coh = new Float32Array(gw * gh);
  const margin = Math.min(o.marginPx, Math.floor(Math.min(width, height) / 4));
  for (let gy = 0; gy < gh; gy++) {
    for (let gx = 0; gx < gw; gx++) {
      const x = gx * step;
      const y = gy * step;
      if (x < margin || y < margin || x >= width - margin || y >= height - margin) continue;
      if (inBox(x, y, o.exclude)) continue;
      const i = y * width + x;
      const g = gy * gw + gx;
      ang[g] = field.angleDeg[i];
      coh[g] = field.coherence[i];
      if (field.coherence[i] > o.coherenceThreshold) on[g] = 1;
    }
  }
  const uf = new UnionFind(gw * gh);
  for (let gy = 0; gy < gh; gy++) {
    for (let gx = 0; gx < gw; gx++) {
      const g = gy * gw + gx;
      if (!on[g]) continue;
      if (gx + 1 < gw && on[g + 1] && axialDifferenceDeg(ang[g], ang[g + 1]) < o.angleToleranceDeg) uf.union(g, g + 1);
      if (gy + 1 < gh && on[g + gw] && axialDifferenceDeg(ang[g], ang[g + gw]) < o.angleToleranceDeg) uf.union(g, g + gw);
    }
  }
  const groups = new Map<number, number[]>();
  for (let g = 0; g < gw * gh; g++) {
    if (!on[g]) continue;
    const r = uf.find(g);
    let list = groups.get(r);
    if (!list) groups.set(r, (list = []));
    list.push(g);
  }
  const out: LayeredRegion[] = [];
  for (const list of groups.values()) {
    if (list.length * step * step < o.minAreaPx) continue;
    const points: [number, number][] = [];
    const angles: number[] = [];
    const weights: number[] = [];
    let sx = 0;
    let sy = 0;
    for (const g of list) {
      const x = (g % gw) * step;
      const y = Math.floor(g / gw) * step;
      points.push([x, y]);
      angles.push(ang[g]);
      weights.push(coh[g]);
      sx += x;
      sy += y;
    }
    out.push({ points, angles, weights, cx: sx / list.length, cy: sy / list.length, angleDeg: axialMeanDeg(angles, weights) });
  }
  return out;
}

/** Statistics of a set of sheets (e.g. pooled over images). */
export interface SheetStatistics {
  /** Number of sheets counted. */
  n: number;
  /** Thickness summary in nm (null when no sheet has a calibrated thickness). */
  thicknessNm: Summary | null;
  /** Thickness summary in px. */
  thicknessPx: Summary | null;
  /** Layer-count summary. */
  layers: Summary | null;
}

/**
 * Statistics of sheets, leaving out rejected ones (and, with `acceptedOnly`, unreviewed automatic ones).
 *
 * Summaries by `summarize` (Hyndman & Fan 1996 type 7 quartiles, Student t CI of the mean).
 *
 * @param sheets sheets from any number of images, each with a status
 * @param options acceptedOnly: count only 'accepted', 'manual' and 'corrected' sheets
 * @returns n and the thickness (nm, px) and layer-count summaries
 */
export function sheetStatistics(
  sheets: Pick<AutoSheet, 'status' | 'layers' | 'thicknessPx' | 'thicknessNm'>[],
  options: { acceptedOnly?: boolean } = {},
): SheetStatistics {
  const keep = sheets.filter((s) => s.status !== 'rejected' && (!options.acceptedOnly || s.status !== 'auto'));
  const nm = keep.map((s) => s.thicknessNm).filter((v): v is number => v !== null);
  return {
    n: keep.length,
    thicknessNm: nm.length === keep.length && nm.length > 0 ? summarize(nm) : null,
    thicknessPx: summarize(keep.map((s) => s.thicknessPx)),
    layers: summarize(keep.map((s) => s.layers)),
  };
}
