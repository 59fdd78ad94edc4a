/**
 * Finding a burned-in scale bar: a long, thin, solid horizontal rectangle of uniform grey value,
 * bright on dark or dark on bright, in an information strip along an edge or overlaid on the
 * image, with or without a border or end ticks. Pure: typed arrays only.
 */
import type { GreyImage } from '../image/grey-image';

/** [x, y, width, height] in pixels. */
export type Box = [number, number, number, number];

export interface ScaleBarOptions {
  /** Shortest bar considered, in px; max(20, 4 % of the image width) when absent. */
  minLengthPx?: number;
  /** Thickest bar considered, in px; max(40, 8 % of the image height) when absent. */
  maxThicknessPx?: number;
  /**
   * Largest departure of a pixel from its run's running mean, as a fraction of the image's value
   * range; 0.02 when absent (then a lenient 0.08 pass follows if the strict one finds nothing).
   */
  valueTolerance?: number;
  /** Smallest bar-to-surroundings difference, as a fraction of the value range; 0.25 when absent. */
  minContrast?: number;
}

/** A scale bar found in an image. */
export interface ScaleBar {
  /** Left end (sub-pixel) of the bar along its centre line, px. */
  x0: number;
  /** Centre line of the bar, px (y down). */
  y0: number;
  /** Right end (sub-pixel), px. */
  x1: number;
  /** Same as y0 (the bar is horizontal). */
  y1: number;
  /** Length end to end, px. */
  lengthPx: number;
  /** Standard uncertainty (k = 1) of lengthPx from the two end points. */
  uncertaintyPx: number;
  /** Rows of solid bar value. */
  thicknessPx: number;
  /** 'bright' for a light bar on a darker ground, 'dark' for the reverse. */
  polarity: 'bright' | 'dark';
  /** Grey value of the bar. */
  barValue: number;
  /** Grey value of the ground the bar sits on (strip or overlay panel). */
  groundValue: number;
  /** Box around the bar's label text, or null when no label was found near it. */
  labelBox: Box | null;
  /** The uniform panel (strip or overlay box) holding the bar, or null when it sits on the image. */
  panelBox: Box | null;
  /** The panel when it spans an edge of the image (an information strip), else null. */
  stripBox: Box | null;
}

interface Run {
  y: number;
  x0: number;
  x1: number; // inclusive
  v: number;
}

function find(parent: Int32Array, i: number): number {
  while (parent[i] !== i) {
    parent[i] = parent[parent[i]];
    i = parent[i];
  }
  return i;
}

function median(values: number[]): number {
  if (values.length === 0) return NaN;
  const s = [...values].sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 ? s[m] : (s[m - 1] + s[m]) / 2;
}

/** Horizontal runs of near-constant value, at least minLen long. */
function uniformRuns(img: GreyImage, tol: number, minLen: number): Run[] {
  const { width, height, data } = img;
  const runs: Run[] = [];
  for (let y = 0; y < height; y++) {
    const row = y * width;
    let s = 0;
    while (s < width) {
      let sum = data[row + s];
      let e = s + 1;
      while (e < width && Math.abs(data[row + e] - sum / (e - s)) <= tol) sum += data[row + e++];
      if (e - s >= minLen) runs.push({ y, x0: s, x1: e - 1, v: sum / (e - s) });
      s = e;
    }
  }
  return runs;
}

/**
 * Finds the most likely burned-in scale bar and measures its length to sub-pixel precision.
 * @param image the micrograph with its burned-in annotation
 * @param options run and contrast limits (see ScaleBarOptions)
 * @returns the bar, its label's box and the panel/strip it sits in, or null when there is none
 * Notes: candidates are connected stacks of uniform horizontal runs, one run per row, with
 * straight ends, not touching the image border, contrasting with the rows above and below. Each
 * end is located in every row by the area (coverage) of the anti-aliased end pixel,
 * x = x_solid − (p − b)/(v − b), the edge-spread integral that reduces to the 50 % crossing of a
 * box-filtered edge (ISO 12233 edge analysis, common practice); rows are averaged. The end
 * uncertainty is the spread over rows, at least 0.05 px when the edge is resolved by grey levels
 * and 1/√12 px when the edge falls on a pixel boundary (no grey level to interpolate). End ticks
 * flush with the ends are part of the bar; a border outside the bar is not. Only horizontal bars
 * are searched. When the strict search (runs within valueTolerance of their running mean, ends
 * straight to 1 px) finds nothing and no tolerance was given, a lenient pass (8 % of the range,
 * ends straight to 2 px) finds bars blurred by lossy compression such as JPEG.
 */
export function findScaleBar(image: GreyImage, options: ScaleBarOptions = {}): ScaleBar | null {
  if (!image || !(image.data instanceof Float32Array) || image.data.length !== image.width * image.height) {
    throw new TypeError('image must be a GreyImage with width × height values');
  }
  const { width, height, data } = image;
  const minLen = options.minLengthPx ?? Math.max(20, Math.round(0.04 * width));
  const maxThick = options.maxThicknessPx ?? Math.max(40, Math.round(0.08 * height));
  const tolFrac = options.valueTolerance ?? 0.02;
  const contrastFrac = options.minContrast ?? 0.25;
  if (!(minLen >= 3) || !Number.isFinite(minLen)) throw new RangeError(`minLengthPx must be at least 3, got ${minLen}`);
  if (!(maxThick >= 1) || !Number.isFinite(maxThick)) throw new RangeError(`maxThicknessPx must be at least 1, got ${maxThick}`);
  if (!(tolFrac >= 0 && tolFrac < 0.5)) throw new RangeError(`valueTolerance must be in [0, 0.5), got ${tolFrac}`);
  if (!(contrastFrac > 0 && contrastFrac <= 1)) throw new RangeError(`minContrast must be in (0, 1], got ${contrastFrac}`);
  const range = image.max - image.min;
  if (!(range > 0)) return null;
  const minContrast = contrastFrac * range;

  const at = (x: number, y: number) => data[y * width + x];
  // a strict pass for clean, drawn bars; then, unless the tolerance was given, a lenient one for
  // bars blurred by lossy compression (JPEG ringing)
  let tol = tolFrac * range;
  let best = searchBar(image, tol, 1, minLen, maxThick, minContrast);
  if (!best && options.valueTolerance === undefined) {
    tol = LENIENT_TOLERANCE * range;
    best = searchBar(image, tol, 2, minLen, maxThick, minContrast);
  }
  if (!best) return null;

  // 3. sub-pixel ends, row by row
  const { rows, v } = best;
  const lefts: number[] = [];
  const rights: number[] = [];
  let resolved = false;
  for (const r of rows) {
    const bl = at(r.x0 - 2, r.y);
    const pl = at(r.x0 - 1, r.y);
    if (Math.abs(v - bl) >= minContrast) {
      const c = Math.min(1, Math.max(0, (pl - bl) / (v - bl)));
      if (c > 0.002 && c < 0.998) resolved = true;
      lefts.push(r.x0 - c);
    }
    const br = at(r.x1 + 2, r.y);
    const pr = at(r.x1 + 1, r.y);
    if (Math.abs(v - br) >= minContrast) {
      const c = Math.min(1, Math.max(0, (pr - br) / (v - br)));
      if (c > 0.002 && c < 0.998) resolved = true;
      rights.push(r.x1 + 1 + c);
    }
  }
  if (lefts.length === 0 || rights.length === 0) return null;
  const mean = (a: number[]) => a.reduce((s, x) => s + x, 0) / a.length;
  const sd = (a: number[]) => {
    if (a.length < 2) return 0;
    const m = mean(a);
    return Math.sqrt(a.reduce((s, x) => s + (x - m) ** 2, 0) / (a.length - 1));
  };
  const floor = resolved ? 0.05 : 1 / Math.sqrt(12);
  const xLeft = mean(lefts);
  const xRight = mean(rights);
  const uL = Math.max(floor, sd(lefts));
  const uR = Math.max(floor, sd(rights));
  const top = rows[0].y;
  const bottom = rows[rows.length - 1].y;
  const thickness = rows.length;
  const yc = (top + bottom + 1) / 2;

  // 4. the ground: median of a ring 4–8 px around the bar
  const ring: number[] = [];
  const xa = Math.floor(xLeft);
  const xb = Math.ceil(xRight) - 1;
  for (let d = 4; d <= 8; d++) {
    for (let x = xa; x <= xb; x += 2) {
      if (top - d >= 0) ring.push(at(x, top - d));
      if (bottom + d < height) ring.push(at(x, bottom + d));
    }
    for (let y = top; y <= bottom; y++) {
      if (xa - d >= 0) ring.push(at(xa - d, y));
      if (xb + d < width) ring.push(at(xb + d, y));
    }
  }
  const ground = median(ring);
  const polarity = v > ground ? 'bright' : 'dark';

  // 5. the panel (uniform ground connected to the ring) and the label inside it
  // the panel is flat ground: a lenient bar tolerance would let the flood leak into the picture
  const groundTol = Math.min(tol, PANEL_TOLERANCE * range);
  const panel = findPanel(image, ground, groundTol, xa, xb, top, bottom);
  let labelBox: Box | null = null;
  let stripBox: Box | null = null;
  if (panel) {
    labelBox = findLabel(image, panel.mask, panel.box, ground, groundTol, { xa, xb, top, bottom }, Math.round((xa + xb) / 2), Math.floor(yc));
    const [px, py, pw, ph] = panel.box;
    const spansX = pw >= 0.9 * width && (py === 0 || py + ph === height);
    const spansY = ph >= 0.9 * height && (px === 0 || px + pw === width);
    if (spansX || spansY) stripBox = panel.box;
  }
  return {
    x0: xLeft,
    y0: yc,
    x1: xRight,
    y1: yc,
    lengthPx: xRight - xLeft,
    uncertaintyPx: Math.hypot(uL, uR),
    thicknessPx: thickness,
    polarity,
    barValue: v,
    groundValue: ground,
    labelBox,
    panelBox: panel ? panel.box : null,
    stripBox,
  };
}

/** Largest departure from the ground value inside a panel, as a fraction of the value range. */
const PANEL_TOLERANCE = 0.03;

/** Value tolerance of the second, lenient search pass, as a fraction of the value range. */
const LENIENT_TOLERANCE = 0.08;

/** The best bar candidate: a stack of uniform runs forming a solid, thin, contrasting rectangle. */
function searchBar(
  image: GreyImage,
  tol: number,
  raggedPx: number,
  minLen: number,
  maxThick: number,
  minContrast: number,
): { rows: Run[]; score: number; v: number } | null {
  const { width, height, data } = image;
  const at = (x: number, y: number) => data[y * width + x];
  // 1. uniform runs, linked into components across rows
  const runs = uniformRuns(image, tol, minLen);
  const parent = new Int32Array(runs.length).map((_, i) => i);
  let prevStart = 0;
  let prevEnd = 0;
  for (let i = 0; i < runs.length; ) {
    const y = runs[i].y;
    let j = i;
    while (j < runs.length && runs[j].y === y) j++;
    if (prevEnd > prevStart && runs[prevStart].y === y - 1) {
      for (let a = i; a < j; a++) {
        for (let b = prevStart; b < prevEnd; b++) {
          const ra = runs[a];
          const rb = runs[b];
          if (ra.x0 <= rb.x1 && rb.x0 <= ra.x1 && Math.abs(ra.v - rb.v) <= tol) {
            const pa = find(parent, a);
            const pb = find(parent, b);
            if (pa !== pb) parent[pa] = pb;
          }
        }
      }
    }
    prevStart = i;
    prevEnd = j;
    i = j;
  }
  const groups = new Map<number, Run[]>();
  runs.forEach((r, i) => {
    const root = find(parent, i);
    const g = groups.get(root);
    if (g) g.push(r);
    else groups.set(root, [r]);
  });

  // 2. candidates: solid thin rectangles with contrast above and below
  let best: { rows: Run[]; score: number; v: number } | null = null;
  for (const rows of groups.values()) {
    const n = rows.length;
    if (n < 2 || n > maxThick) continue;
    const ys = new Set(rows.map((r) => r.y));
    if (ys.size !== n) continue; // more than one run in a row: not a solid rectangle
    const top = rows[0].y;
    const bottom = rows[n - 1].y;
    if (bottom - top + 1 !== n || top < 1 || bottom > height - 2) continue;
    const x0s = rows.map((r) => r.x0);
    const x1s = rows.map((r) => r.x1);
    const xa = Math.min(...x0s);
    const xb = Math.max(...x1s);
    if (Math.max(...x0s) - xa > raggedPx || xb - Math.min(...x1s) > raggedPx) continue; // ragged ends
    if (xa < 2 || xb > width - 3) continue;
    const len = xb - xa + 1;
    if (len < 4 * n) continue;
    const v = median(rows.map((r) => r.v));
    let contrastCols = 0;
    for (let x = xa; x <= xb; x++) {
      if (Math.abs(at(x, top - 1) - v) >= minContrast && Math.abs(at(x, bottom + 1) - v) >= minContrast) contrastCols++;
    }
    if (contrastCols < 0.7 * len) continue;
    // a bar sits on one ground: the rows above and below it look alike (a panel's margin does not)
    const above: number[] = [];
    const below: number[] = [];
    for (let x = xa; x <= xb; x++) {
      above.push(at(x, top - 1));
      below.push(at(x, bottom + 1));
    }
    const ma = median(above);
    const mb = median(below);
    if (Math.abs(ma - mb) > 0.5 * Math.min(Math.abs(v - ma), Math.abs(v - mb))) continue;
    // and the pixels beyond both ends differ from it
    const mid = rows[n >> 1];
    if (Math.abs(at(mid.x0 - 2, mid.y) - v) < minContrast || Math.abs(at(mid.x1 + 2, mid.y) - v) < minContrast) continue;
    const score = len * (contrastCols / len);
    if (!best || score > best.score || (score === best.score && top > best.rows[0].y)) best = { rows, score, v };
  }
  return best;
}

/** Flood fill of ground-valued pixels from the ring around the bar; null when it is too small to be a panel. */
function findPanel(
  img: GreyImage,
  ground: number,
  tol: number,
  xa: number,
  xb: number,
  top: number,
  bottom: number,
): { mask: Uint8Array; box: Box } | null {
  const { width, height, data } = img;
  const mask = new Uint8Array(width * height);
  const stack: number[] = [];
  const seed = (x: number, y: number) => {
    if (x < 0 || y < 0 || x >= width || y >= height) return;
    const i = y * width + x;
    if (!mask[i] && Math.abs(data[i] - ground) <= tol) {
      mask[i] = 1;
      stack.push(i);
    }
  };
  for (let d = 4; d <= 8; d++) {
    for (let x = xa; x <= xb; x++) {
      seed(x, top - d);
      seed(x, bottom + d);
    }
  }
  let minX = width;
  let minY = height;
  let maxX = -1;
  let maxY = -1;
  let area = 0;
  while (stack.length) {
    const i = stack.pop()!;
    const x = i % width;
    const y = (i - x) / width;
    area++;
    if (x < minX) minX = x;
    if (x > maxX) maxX = x;
    if (y < minY) minY = y;
    if (y > maxY) maxY = y;
    seed(x - 1, y);
    seed(x + 1, y);
    seed(x, y - 1);
    seed(x, y + 1);
  }
  const barArea = (xb - xa + 1) * (bottom - top + 1);
  if (area < 2 * barArea) return null;
  const box: Box = [minX, minY, maxX - minX + 1, maxY - minY + 1];
  // a panel is mostly ground (bar and text cover little of it): a flood that leaked into the picture is not one
  if (area < 0.7 * box[2] * box[3]) return null;
  return { mask, box };
}

/** The text line nearest the bar, among the non-ground blobs inside the panel. */
function findLabel(
  img: GreyImage,
  panelMask: Uint8Array,
  box: Box,
  ground: number,
  tol: number,
  bar: { xa: number; xb: number; top: number; bottom: number },
  barCx: number,
  barCy: number,
): Box | null {
  const { width, data } = img;
  const [bx, by, bw, bh] = box;
  const seen = new Uint8Array(bw * bh);
  const blobs: { x0: number; y0: number; x1: number; y1: number; n: number }[] = [];
  const isInk = (x: number, y: number) => {
    const i = y * width + x;
    return !panelMask[i] && Math.abs(data[i] - ground) > tol;
  };
  let barBlob = -1;
  for (let y0 = by; y0 < by + bh; y0++) {
    for (let x0 = bx; x0 < bx + bw; x0++) {
      const li = (y0 - by) * bw + (x0 - bx);
      if (seen[li] || !isInk(x0, y0)) continue;
      const blob = { x0, y0, x1: x0, y1: y0, n: 0 };
      const stack = [li];
      seen[li] = 1;
      let touchesEdge = false;
      let hasBar = false;
      while (stack.length) {
        const k = stack.pop()!;
        const x = (k % bw) + bx;
        const y = Math.floor(k / bw) + by;
        blob.n++;
        if (x === barCx && y === barCy) hasBar = true;
        if (x === bx || y === by || x === bx + bw - 1 || y === by + bh - 1) touchesEdge = true;
        if (x < blob.x0) blob.x0 = x;
        if (x > blob.x1) blob.x1 = x;
        if (y < blob.y0) blob.y0 = y;
        if (y > blob.y1) blob.y1 = y;
        for (let dy = -1; dy <= 1; dy++) {
          for (let dx = -1; dx <= 1; dx++) {
            const nx = x + dx;
            const ny = y + dy;
            if (nx < bx || ny < by || nx >= bx + bw || ny >= by + bh) continue;
            const nk = (ny - by) * bw + (nx - bx);
            if (!seen[nk] && isInk(nx, ny)) {
              seen[nk] = 1;
              stack.push(nk);
            }
          }
        }
      }
      if (hasBar) {
        barBlob = blobs.length;
        blobs.push(blob);
      } else if (!touchesEdge && blob.n >= 3) blobs.push(blob);
    }
  }
  const text = blobs.filter((_, i) => i !== barBlob);
  if (text.length === 0) return null;
  // group blobs into text lines: vertical overlap and a gap under about one character height
  const lines = text.map((b) => ({ ...b }));
  let merged = true;
  while (merged) {
    merged = false;
    outer: for (let i = 0; i < lines.length; i++) {
      for (let j = i + 1; j < lines.length; j++) {
        const a = lines[i];
        const b = lines[j];
        const h = Math.max(a.y1 - a.y0, b.y1 - b.y0) + 1;
        const overlapY = Math.min(a.y1, b.y1) - Math.max(a.y0, b.y0);
        const gapX = Math.max(a.x0, b.x0) - Math.min(a.x1, b.x1);
        if (overlapY >= -0.2 * h && gapX <= 1.2 * h) {
          lines[i] = { x0: Math.min(a.x0, b.x0), y0: Math.min(a.y0, b.y0), x1: Math.max(a.x1, b.x1), y1: Math.max(a.y1, b.y1), n: a.n + b.n };
          lines.splice(j, 1);
          merged = true;
          break outer;
        }
      }
    }
  }
  // a text line has some ink and some height; specks of compression noise do not
  const textLines = lines.filter((l) => l.n >= 30 && l.y1 - l.y0 + 1 >= 6);
  if (textLines.length === 0) return null;
  let bestLine = textLines[0];
  let bestD = Infinity;
  for (const l of textLines) {
    const dx = Math.max(0, bar.xa - l.x1, l.x0 - bar.xb);
    const dy = Math.max(0, bar.top - l.y1, l.y0 - bar.bottom);
    const d = Math.hypot(dx, dy);
    if (d < bestD) {
      bestD = d;
      bestLine = l;
    }
  }
  const pad = 2;
  const x0 = Math.max(bx, bestLine.x0 - pad);
  const y0 = Math.max(by, bestLine.y0 - pad);
  const x1 = Math.min(bx + bw - 1, bestLine.x1 + pad);
  const y1 = Math.min(by + bh - 1, bestLine.y1 + pad);
  return [x0, y0, x1 - x0 + 1, y1 - y0 + 1];
}
