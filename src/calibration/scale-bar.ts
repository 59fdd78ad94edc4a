/**
 * Finding a burned-in scale bar: a long, thin, solid rectangle of uniform grey value, horizontal
 * or vertical, bright on dark or dark on bright, in an information strip along an edge, in a
 * filled or bordered box or directly on the image, with or without end ticks; and the box of its
 * label. Pure: typed arrays only.
 */
import { isPixelArray, type GreyImage } from '../image/grey-image';

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
  /**
   * Search only inside this box [x, y, w, h] (the user pointed at the bar): contrast and ground
   * checks are relaxed there, so a bar drawn on a busy image is found.
   */
  searchBox?: Box;
  /** Which bars to look for; 'any' (horizontal and vertical) when absent. */
  orientation?: 'horizontal' | 'vertical' | 'any';
}

/** A scale bar found in an image. */
export interface ScaleBar {
  /** Whether the bar runs along x or along y. */
  orientation: 'horizontal' | 'vertical';
  /** First end (sub-pixel) of the bar's centre line, px: the left end, or the top end of a vertical bar. */
  x0: number;
  /** Its y, px (y down). */
  y0: number;
  /** Second end (sub-pixel): the right end, or the bottom end of a vertical bar. */
  x1: number;
  y1: number;
  /** Length end to end, px. */
  lengthPx: number;
  /** Standard uncertainty (k = 1) of lengthPx from the two end points. */
  uncertaintyPx: number;
  /** Thickness across the bar: rows (columns for a vertical bar) of solid bar value. */
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
 * @param options run and contrast limits, the orientation and an optional box to search in (see ScaleBarOptions)
 * @returns the bar, its label's box and the panel/strip it sits in, or null when there is none
 * Notes: candidates are connected stacks of uniform runs, one run per row, with straight ends,
 * not touching the image border, contrasting with the rows on both sides; vertical bars are
 * searched the same way in the transposed image. An edge of a bordered box is not a bar: a
 * candidate whose two ends both turn into long lines of its value (a frame's corners) is
 * rejected. Each end is located in every row by the area (coverage) of the anti-aliased end
 * pixel, x = x_solid − (p − b)/(v − b), the edge-spread integral that reduces to the 50 %
 * crossing of a box-filtered edge (ISO 12233 edge analysis, common practice); rows are averaged.
 * The end uncertainty is the spread over rows, at least 0.05 px when the edge is resolved by grey
 * levels and 1/√12 px when the edge falls on a pixel boundary (no grey level to interpolate). End
 * ticks flush with the ends are part of the bar; a border outside the bar is not. When the strict
 * search (runs within valueTolerance of their running mean, ends straight to 1 px) finds nothing
 * and no tolerance was given, a lenient pass (8 % of the range, ends straight to 2 px) finds bars
 * blurred by lossy compression such as JPEG. Inside a searchBox the contrast is required on 50 %
 * of the bar's length instead of 70 % and the two sides need not look alike (a busy background).
 */
export function findScaleBar(image: GreyImage, options: ScaleBarOptions = {}): ScaleBar | null {
  if (!image || !isPixelArray(image.data) || image.data.length !== image.width * image.height) {
    throw new TypeError('image must be a GreyImage with width × height values');
  }
  const orientation = options.orientation ?? 'any';
  if (!['horizontal', 'vertical', 'any'].includes(orientation)) throw new RangeError(`orientation must be 'horizontal', 'vertical' or 'any', got ${String(orientation)}`);
  if (options.searchBox) return findInBox(image, options.searchBox, options);
  const tolFrac = options.valueTolerance ?? 0.02;
  const contrastFrac = options.minContrast ?? 0.25;
  if (!(tolFrac >= 0 && tolFrac < 0.5)) throw new RangeError(`valueTolerance must be in [0, 0.5), got ${tolFrac}`);
  if (!(contrastFrac > 0 && contrastFrac <= 1)) throw new RangeError(`minContrast must be in (0, 1], got ${contrastFrac}`);
  const range = image.max - image.min;
  if (!(range > 0)) return null;
  const views: OrientedView[] = [];
  if (orientation !== 'vertical') views.push({ img: image, vertical: false });
  if (orientation !== 'horizontal') views.push({ img: transposeImage(image), vertical: true });
  // a strict pass for clean, drawn bars; then, unless the tolerance was given, a lenient one for
  // bars blurred by lossy compression (JPEG ringing); last, the contrast checks relaxed for a bar
  // drawn straight on a busy image (lattice fringes reaching the bar's value)
  let found = bestOver(views, tolFrac * range, 1, options, false);
  if (!found && options.valueTolerance === undefined) found = bestOver(views, LENIENT_TOLERANCE * range, 2, options, false);
  if (!found) found = bestOver(views, tolFrac * range, 1, options, true);
  if (!found) return null;
  return describeBar(image, found, contrastFrac * range);
}

/** An image searched for bars along its rows: the image itself, or its transpose for vertical bars. */
interface OrientedView {
  img: GreyImage;
  vertical: boolean;
}

interface Found {
  view: OrientedView;
  cand: { rows: Run[]; score: number; v: number };
  tol: number;
}

function bestOver(views: OrientedView[], tol: number, ragged: number, options: ScaleBarOptions, relaxed: boolean): Found | null {
  let best: Found | null = null;
  for (const view of views) {
    const { width, height } = view.img;
    const minLen = options.minLengthPx ?? Math.max(20, Math.round(0.04 * Math.min(width, height)));
    const maxThick = options.maxThicknessPx ?? Math.max(40, Math.round(0.08 * Math.max(width, height)));
    if (!(minLen >= 3) || !Number.isFinite(minLen)) throw new RangeError(`minLengthPx must be at least 3, got ${minLen}`);
    if (!(maxThick >= 1) || !Number.isFinite(maxThick)) throw new RangeError(`maxThicknessPx must be at least 1, got ${maxThick}`);
    const range = view.img.max - view.img.min;
    const cand = searchBar(view.img, tol, ragged, minLen, maxThick, (options.minContrast ?? 0.25) * range, relaxed);
    // a horizontal bar wins a tie: it is by far the more common
    if (cand && (!best || cand.score > best.cand.score * (view.vertical ? 1.05 : 1))) best = { view, cand, tol };
  }
  return best;
}

/** The image with rows and columns exchanged. */
function transposeImage(image: GreyImage): GreyImage {
  const { width, height, data } = image;
  const out = new Float32Array(width * height);
  for (let y = 0; y < height; y++) for (let x = 0; x < width; x++) out[x * height + y] = data[y * width + x];
  return { ...image, width: height, height: width, data: out, calibration: null, warnings: [] };
}

/** A bar searched for only inside a box the user drew around it. */
function findInBox(image: GreyImage, box: Box, options: ScaleBarOptions): ScaleBar | null {
  const [bx, by, bw, bh] = box;
  if (![bx, by, bw, bh].every(Number.isInteger) || bw < 8 || bh < 3 || bx < 0 || by < 0 || bx + bw > image.width || by + bh > image.height) {
    throw new RangeError(`searchBox [${box.join(', ')}] must be whole pixels inside the ${image.width} × ${image.height} image, at least 8 × 3 px`);
  }
  // the box with a margin, so that the contrast around the bar and its ends can be seen
  const m = 6;
  const x0 = Math.max(0, bx - m);
  const y0 = Math.max(0, by - m);
  const x1 = Math.min(image.width, bx + bw + m);
  const y1 = Math.min(image.height, by + bh + m);
  const w = x1 - x0;
  const h = y1 - y0;
  const data = new Float32Array(w * h);
  let lo = Infinity;
  let hi = -Infinity;
  for (let y = 0; y < h; y++) {
    for (let x = 0; x < w; x++) {
      const v = image.data[(y + y0) * image.width + x + x0];
      data[y * w + x] = v;
      if (v < lo) lo = v;
      if (v > hi) hi = v;
    }
  }
  const crop: GreyImage = { ...image, width: w, height: h, data, min: lo, max: hi, calibration: null, warnings: [] };
  const range = hi - lo;
  if (!(range > 0)) return null;
  const orientation = options.orientation ?? 'any';
  const views: OrientedView[] = [];
  if (orientation !== 'vertical') views.push({ img: crop, vertical: false });
  if (orientation !== 'horizontal') views.push({ img: transposeImage(crop), vertical: true });
  const inner = { ...options, minLengthPx: options.minLengthPx ?? 8, minContrast: options.minContrast ?? 0.2 };
  let found = bestOver(views, (options.valueTolerance ?? 0.02) * range, 1, inner, true);
  if (!found && options.valueTolerance === undefined) found = bestOver(views, LENIENT_TOLERANCE * range, 2, inner, true);
  if (!found) return null;
  const bar = describeBar(crop, found, inner.minContrast * range);
  if (!bar) return null;
  // back to the whole image: the ends, and the ground, panel and label seen in the whole image
  const shifted = { ...bar, x0: bar.x0 + x0, x1: bar.x1 + x0, y0: bar.y0 + y0, y1: bar.y1 + y0 };
  return withSurroundings(image, shifted, found.tol);
}

/** Measures the chosen candidate's ends and finds its ground, panel and label, in image coordinates. */
function describeBar(image: GreyImage, found: Found, minContrast: number): ScaleBar | null {
  const { view, cand } = found;
  const img = view.img;
  const { rows, v } = cand;
  const at = (x: number, y: number) => img.data[y * img.width + x];
  // 3. sub-pixel ends, row by row
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
  const uLo = Math.max(floor, sd(lefts));
  const uHi = Math.max(floor, sd(rights));
  const a0 = mean(lefts);
  const a1 = mean(rights);
  const top = rows[0].y;
  const bottom = rows[rows.length - 1].y;
  const across = (top + bottom + 1) / 2;
  const bar: ScaleBar = {
    orientation: view.vertical ? 'vertical' : 'horizontal',
    x0: view.vertical ? across : a0,
    y0: view.vertical ? a0 : across,
    x1: view.vertical ? across : a1,
    y1: view.vertical ? a1 : across,
    lengthPx: a1 - a0,
    uncertaintyPx: Math.hypot(uLo, uHi),
    thicknessPx: rows.length,
    polarity: 'bright',
    barValue: v,
    groundValue: v,
    labelBox: null,
    panelBox: null,
    stripBox: null,
  };
  return withSurroundings(image, bar, found.tol);
}

/** The bar's box in image pixels [x0, x1] × [y0, y1] (inclusive) from its ends and thickness. */
function barBox(bar: ScaleBar): { xa: number; xb: number; top: number; bottom: number } {
  const half = bar.thicknessPx / 2;
  if (bar.orientation === 'vertical') {
    return { xa: Math.round(bar.x0 - half), xb: Math.round(bar.x0 + half) - 1, top: Math.floor(bar.y0), bottom: Math.ceil(bar.y1) - 1 };
  }
  return { xa: Math.floor(bar.x0), xb: Math.ceil(bar.x1) - 1, top: Math.round(bar.y0 - half), bottom: Math.round(bar.y0 + half) - 1 };
}

/** Fills in the bar's polarity, ground, panel, strip and label box from the whole image. */
function withSurroundings(image: GreyImage, bar: ScaleBar, tol: number): ScaleBar {
  const { width, height, data } = image;
  const at = (x: number, y: number) => data[y * width + x];
  const range = image.max - image.min;
  const { xa, xb, top, bottom } = barBox(bar);
  // 4. the ground: median of a ring 4–8 px around the bar
  const ring: number[] = [];
  for (let d = 4; d <= 8; d++) {
    for (let x = xa; x <= xb; x += 2) {
      if (top - d >= 0) ring.push(at(x, top - d));
      if (bottom + d < height) ring.push(at(x, bottom + d));
    }
    for (let y = top; y <= bottom; y += bar.orientation === 'vertical' ? 2 : 1) {
      if (xa - d >= 0) ring.push(at(xa - d, y));
      if (xb + d < width) ring.push(at(xb + d, y));
    }
  }
  const ground = median(ring);
  const v = bar.barValue;
  const polarity = v > ground ? 'bright' : 'dark';
  // 5. the panel (uniform ground connected to the ring) and the label inside it or on the image
  // the panel is flat ground: a lenient bar tolerance would let the flood leak into the picture
  const groundTol = Math.min(tol, PANEL_TOLERANCE * range);
  const panel = findPanel(image, ground, groundTol, xa, xb, top, bottom);
  // the label inside the bar's panel when there is one, else anywhere near the bar
  let labelBox: Box | null = (panel ? findLabelByInk(image, { xa, xb, top, bottom }, v, ground, panel.box) : null) ?? findLabelByInk(image, { xa, xb, top, bottom }, v, ground);
  let stripBox: Box | null = null;
  if (panel) {
    labelBox ??= findLabel(image, panel.mask, panel.box, ground, groundTol, { xa, xb, top, bottom }, Math.round((xa + xb) / 2), Math.floor((top + bottom) / 2));
    const [px, py, pw, ph] = panel.box;
    const spansX = pw >= 0.9 * width && (py === 0 || py + ph === height);
    const spansY = ph >= 0.9 * height && (px === 0 || px + pw === width);
    if (spansX || spansY) stripBox = panel.box;
  }
  return { ...bar, polarity, groundValue: ground, labelBox, panelBox: panel ? panel.box : null, stripBox };
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
  relaxed = false,
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
    if (contrastCols < (relaxed ? 0.5 : 0.7) * len) continue;
    // a bar sits on one ground: the rows above and below it look alike (a panel's margin does not);
    // where the user pointed at the bar, a busy background may differ on the two sides
    const above: number[] = [];
    const below: number[] = [];
    for (let x = xa; x <= xb; x++) {
      above.push(at(x, top - 1));
      below.push(at(x, bottom + 1));
    }
    const ma = median(above);
    const mb = median(below);
    if (!relaxed && Math.abs(ma - mb) > 0.5 * Math.min(Math.abs(v - ma), Math.abs(v - mb))) continue;
    // and the pixels beyond both ends differ from it (in the middle row; on a busy background, in
    // a third of the rows at each end)
    const mid = rows[n >> 1];
    if (!relaxed && (Math.abs(at(mid.x0 - 2, mid.y) - v) < minContrast || Math.abs(at(mid.x1 + 2, mid.y) - v) < minContrast)) continue;
    if (relaxed) {
      const lo = rows.filter((r) => Math.abs(at(r.x0 - 2, r.y) - v) >= minContrast).length;
      const hi = rows.filter((r) => Math.abs(at(r.x1 + 2, r.y) - v) >= minContrast).length;
      if (lo < n / 3 || hi < n / 3) continue;
    }
    // an edge of a bordered box, or the ground between a frame and the bar, is not a bar
    if (isPartOfLarger(image, rows, v, Math.max(tol, 0.02 * (image.max - image.min)))) continue;
    const score = len * (contrastCols / len);
    if (!best || score > best.score || (score === best.score && top > best.rows[0].y)) best = { rows, score, v };
  }
  return best;
}

/**
 * True when the candidate is only part of a larger region of its value: a stretch of a box's
 * frame, or the ground left between a frame and the real bar. A bar's region of uniform value is
 * the bar itself (end ticks add a few per cent). Flood fill (4-connected) from the candidate's
 * middle row, stopped as soon as the region exceeds 1.6 times the candidate's area.
 */
function isPartOfLarger(image: GreyImage, rows: Run[], v: number, tol: number): boolean {
  const { width, height, data } = image;
  let area = 0;
  for (const r of rows) area += r.x1 - r.x0 + 1;
  const cap = 1.6 * area;
  const seen = new Set<number>();
  const mid = rows[rows.length >> 1];
  const start = mid.y * width + ((mid.x0 + mid.x1) >> 1);
  const stack = [start];
  seen.add(start);
  let count = 0;
  while (stack.length) {
    const k = stack.pop()!;
    if (++count > cap) return true;
    const x = k % width;
    const y = (k - x) / width;
    for (const [nx, ny] of [[x - 1, y], [x + 1, y], [x, y - 1], [x, y + 1]]) {
      if (nx < 0 || ny < 0 || nx >= width || ny >= height) continue;
      const nk = ny * width + nx;
      if (!seen.has(nk) && Math.abs(data[nk] - v) <= tol) {
        seen.add(nk);
        stack.push(nk);
      }
    }
  }
  return false;
}

/** One text-like blob or line: its box and ink count. */
interface InkBlob {
  x0: number;
  y0: number;
  x1: number;
  y1: number;
  n: number;
}

/**
 * The label's box found by its ink: burned-in text is drawn in the bar's own value. Blobs of
 * pixels near the bar's value around the bar are grouped into text lines; the line nearest the
 * bar (beside, above or below it) that is not part of the image is the label.
 * @returns the line's box with a 2 px margin, or null when no text line lies near the bar
 * @param within the bar's panel, when it has one: the search stays inside it
 * Notes: first with a tight tolerance (the text's cores have the bar's exact value, the image
 * rarely does), then a loose one (thin anti-aliased strokes) that completes the line found.
 * Lines that touch the search window are part of the picture, not text. Connected components and line grouping: common practice.
 */
function findLabelByInk(image: GreyImage, bar: { xa: number; xb: number; top: number; bottom: number }, v: number, ground: number, within?: Box): Box | null {
  const contrast = Math.abs(v - ground);
  if (!(contrast > 0)) return null;
  const len = Math.max(bar.xb - bar.xa + 1, bar.bottom - bar.top + 1);
  const reachX = Math.round(Math.max(170, 1.2 * len));
  const reachY = Math.round(Math.max(80, 0.6 * len));
  const [px, py, pw, ph] = within ?? [0, 0, image.width, image.height];
  const wx0 = Math.max(px, bar.xa - reachX);
  const wx1 = Math.min(px + pw - 1, bar.xb + reachX);
  const wy0 = Math.max(py, bar.top - reachY);
  const wy1 = Math.min(py + ph - 1, bar.bottom + reachY);
  const win = { wx0, wx1, wy0, wy1 };
  let best: InkBlob | null;
  if (within) {
    // on a panel's flat ground any clear departure towards the ink is text
    best = inkLine(image, win, bar, v, 0.75 * contrast);
  } else {
    const tight = inkLine(image, win, bar, v, 0.03 * contrast);
    let loose: InkBlob | null = null;
    if (tight) {
      // the loose pass completes the tight pass's line (thin strokes) in a window around it
      const th = tight.y1 - tight.y0 + 1;
      const near = {
        wx0: Math.max(wx0, tight.x0 - 4 * th - 4),
        wx1: Math.min(wx1, tight.x1 + 4 * th + 4),
        wy0: Math.max(wy0, tight.y0 - th - 3),
        wy1: Math.min(wy1, tight.y1 + th + 3),
      };
      loose = inkLine(image, near, bar, v, 0.25 * contrast, tight);
      // a completion that ran off into the picture (a lattice of the ink's value) is not the label
      const tw = tight.x1 - tight.x0 + 1;
      if (loose && (loose.x1 - loose.x0 + 1 > 2 * tw + 3 * th || loose.y1 - loose.y0 + 1 > 2.2 * th)) loose = null;
    } else {
      loose = inkLine(image, win, bar, v, 0.35 * contrast);
    }
    best = loose ?? tight;
  }
  if (!best) return null;
  const pad = 2;
  const x0 = Math.max(0, best.x0 - pad);
  const y0 = Math.max(0, best.y0 - pad);
  const x1 = Math.min(image.width - 1, best.x1 + pad);
  const y1 = Math.min(image.height - 1, best.y1 + pad);
  return [x0, y0, x1 - x0 + 1, y1 - y0 + 1];
}

function inkLine(
  image: GreyImage,
  win: { wx0: number; wx1: number; wy0: number; wy1: number },
  bar: { xa: number; xb: number; top: number; bottom: number },
  v: number,
  tol: number,
  within: InkBlob | null = null,
): InkBlob | null {
  const { width, data } = image;
  const { wx0, wx1, wy0, wy1 } = win;
  const w = wx1 - wx0 + 1;
  const h = wy1 - wy0 + 1;
  const ink = new Uint8Array(w * h);
  for (let y = 0; y < h; y++) {
    for (let x = 0; x < w; x++) {
      const gx = x + wx0;
      const gy = y + wy0;
      // the bar and a 1 px ring around it are not text
      if (gx >= bar.xa - 1 && gx <= bar.xb + 1 && gy >= bar.top - 1 && gy <= bar.bottom + 1) continue;
      if (Math.abs(data[gy * width + gx] - v) <= tol) ink[y * w + x] = 1;
    }
  }
  const blobs: InkBlob[] = [];
  const seen = new Uint8Array(w * h);
  const stack: number[] = [];
  for (let i = 0; i < w * h; i++) {
    if (!ink[i] || seen[i]) continue;
    const b: InkBlob = { x0: w, y0: h, x1: -1, y1: -1, n: 0 };
    let touches = false;
    seen[i] = 1;
    stack.push(i);
    while (stack.length) {
      const k = stack.pop()!;
      const x = k % w;
      const y = (k - x) / w;
      b.n++;
      if (x < b.x0) b.x0 = x;
      if (x > b.x1) b.x1 = x;
      if (y < b.y0) b.y0 = y;
      if (y > b.y1) b.y1 = y;
      if ((x === 0 && wx0 > 0) || (y === 0 && wy0 > 0) || (x === w - 1 && wx1 < image.width - 1) || (y === h - 1 && wy1 < image.height - 1)) touches = true;
      for (let dy = -1; dy <= 1; dy++) {
        for (let dx = -1; dx <= 1; dx++) {
          const nx = x + dx;
          const ny = y + dy;
          if (nx < 0 || ny < 0 || nx >= w || ny >= h) continue;
          const nk = ny * w + nx;
          if (ink[nk] && !seen[nk]) {
            seen[nk] = 1;
            stack.push(nk);
          }
        }
      }
    }
    // text glyphs: not touching the window, not huge
    if (!touches && b.y1 - b.y0 < 150 && b.x1 - b.x0 < 400) blobs.push({ x0: b.x0 + wx0, y0: b.y0 + wy0, x1: b.x1 + wx0, y1: b.y1 + wy0, n: b.n });
  }
  if (blobs.length === 0 || blobs.length > 4000) return null;
  if (within) return extendLine(within, blobs);
  const lines = groupLines(blobs);
  let best: InkBlob | null = null;
  let bestD = Infinity;
  for (const l of lines) {
    const lh = l.y1 - l.y0 + 1;
    const lw = l.x1 - l.x0 + 1;
    if (lh < 5 || lh > 150 || l.n < 12 || lw < 0.5 * lh) continue;
    // beside the bar: overlapping its extent across, within a few text heights along
    const dx = Math.max(0, bar.xa - l.x1, l.x0 - bar.xb);
    const dy = Math.max(0, bar.top - l.y1, l.y0 - bar.bottom);
    if (dx > 0 && dy > 0) continue;
    const d = Math.hypot(dx, dy);
    if (d > Math.max(3 * lh, 30)) continue;
    // a text line is sparse ink with gaps; a solid patch of the picture is not
    if (l.n > 0.85 * lw * lh) continue;
    if (d < bestD) {
      bestD = d;
      best = l;
    }
  }
  return best;
}

/**
 * A text line grown from its core: blobs within the core's rows (widened upwards by 0.8 of its
 * height, for digits beside a lower-case unit, and downwards by 0.7, for descenders) that lie
 * within 1.2 core heights of the line join it, until none is left to join.
 */
function extendLine(core: InkBlob, blobs: InkBlob[]): InkBlob {
  const line = { ...core };
  const h = core.y1 - core.y0 + 1;
  const used = new Uint8Array(blobs.length);
  let grew = true;
  while (grew) {
    grew = false;
    for (let i = 0; i < blobs.length; i++) {
      if (used[i]) continue;
      const b = blobs[i];
      const inRows = b.y0 >= core.y0 - 0.8 * h && b.y1 <= core.y1 + 0.7 * h;
      const gap = Math.max(b.x0 - line.x1, line.x0 - b.x1);
      if (inRows && gap <= 1.2 * h) {
        used[i] = 1;
        line.x0 = Math.min(line.x0, b.x0);
        line.x1 = Math.max(line.x1, b.x1);
        line.y0 = Math.min(line.y0, b.y0);
        line.y1 = Math.max(line.y1, b.y1);
        line.n += b.n;
        grew = true;
      }
    }
  }
  return line;
}

/**
 * Groups blobs into text lines: two blobs belong together when their rows overlap (or nearly)
 * and the gap between them is under 1.5 character heights (a monospaced font's space after a
 * narrow digit); lines are the connected groups.
 */
function groupLines(blobs: InkBlob[]): InkBlob[] {
  const order = blobs.map((_, i) => i).sort((i, j) => blobs[i].x0 - blobs[j].x0);
  const parent = new Int32Array(blobs.length).map((_, i) => i);
  const maxH = blobs.reduce((m, b) => Math.max(m, b.y1 - b.y0 + 1), 0);
  for (let oi = 0; oi < order.length; oi++) {
    const a = blobs[order[oi]];
    for (let oj = oi + 1; oj < order.length; oj++) {
      const b = blobs[order[oj]];
      if (b.x0 - a.x1 > 1.5 * maxH) break;
      const h = Math.max(a.y1 - a.y0, b.y1 - b.y0) + 1;
      const overlapY = Math.min(a.y1, b.y1) - Math.max(a.y0, b.y0);
      const gapX = Math.max(a.x0, b.x0) - Math.min(a.x1, b.x1);
      if (overlapY >= -0.2 * h && gapX <= 1.5 * h) {
        const ra = find(parent, order[oi]);
        const rb = find(parent, order[oj]);
        if (ra !== rb) parent[ra] = rb;
      }
    }
  }
  const lines = new Map<number, InkBlob>();
  blobs.forEach((b, i) => {
    const r = find(parent, i);
    const l = lines.get(r);
    if (!l) lines.set(r, { ...b });
    else {
      l.x0 = Math.min(l.x0, b.x0);
      l.y0 = Math.min(l.y0, b.y0);
      l.x1 = Math.max(l.x1, b.x1);
      l.y1 = Math.max(l.y1, b.y1);
      l.n += b.n;
    }
  });
  return [...lines.values()];
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
    for (let y = top; y <= bottom; y++) {
      seed(xa - d, y);
      seed(xb + d, y);
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
