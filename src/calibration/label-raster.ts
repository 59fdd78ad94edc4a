/**
 * The label's pixels made ready for reading: cropped, binarised with the text as ink, slant
 * removed, and scaled up for the OCR engine (whole-number nearest-neighbour for pixel fonts,
 * bilinear for anti-aliased text). Pure: typed arrays only.
 */
import type { GreyImage } from '../image/grey-image';
import { otsuThreshold } from '../image/otsu';
import { boxRange } from '../image/crop';
import type { Box } from './scale-bar';

/** A binary raster: 1 = ink (text), 0 = ground. */
export interface InkMask {
  width: number;
  height: number;
  data: Uint8Array;
}

/** An 8-bit grey raster for the OCR engine: text 0 on 255. */
export interface GreyRaster {
  width: number;
  height: number;
  data: Uint8Array;
}

/** A crop of the label as both readers see it. */
export interface LabelCrop {
  /** The box cropped, image px. */
  box: Box;
  /** Grey values of the crop scaled to 0–255 with the text dark. */
  grey: GreyRaster;
  /** The text as ink, at the image's own resolution. */
  ink: InkMask;
  /** True when the crop has two grey levels only (a pixel font drawn without anti-aliasing). */
  twoLevel: boolean;
}

function checkBox(image: GreyImage, box: Box): void {
  const [bx, by, bw, bh] = box;
  if (![bx, by, bw, bh].every(Number.isInteger) || bw < 1 || bh < 1 || bx < 0 || by < 0 || bx + bw > image.width || by + bh > image.height) {
    throw new RangeError(`label box [${box.join(', ')}] is not an integer box inside the ${image.width} × ${image.height} image`);
  }
}

/**
 * Crops a label box and binarises it with the text as ink.
 * @param image the micrograph
 * @param box the label box [x, y, w, h] (whole px, inside the image)
 * @param inkBright true when the text is lighter than its ground (the bar's polarity)
 * @param exactInk for text drawn on the picture: the ink's value and tolerance; only such pixels
 *   are text (the grey raster is then two-level too). Otsu's split of the crop when absent.
 * @returns the crop: grey (text dark), ink mask, and whether it has only two grey levels
 * Notes: Otsu's threshold (1979) splits text from ground; the ink is the class on the text's
 * side. A crop whose values take two levels (±2 % of its range) for 98 % of its pixels is a
 * pixel font without anti-aliasing.
 */
export function cropLabel(image: GreyImage, box: Box, inkBright: boolean, exactInk?: { value: number; tolerance: number }): LabelCrop {
  checkBox(image, box);
  if (exactInk && !(Number.isFinite(exactInk.value) && exactInk.tolerance >= 0)) throw new RangeError(`exactInk must have a finite value and a non-negative tolerance, got ${JSON.stringify(exactInk)}`);
  const [bx, by, bw, bh] = box;
  const [lo, hi] = boxRange(image, box);
  const span = hi > lo ? hi - lo : 1;
  const grey = new Uint8Array(bw * bh);
  let nearEnds = 0;
  for (let y = 0; y < bh; y++) {
    for (let x = 0; x < bw; x++) {
      const f = (image.data[(y + by) * image.width + x + bx] - lo) / span;
      if (f <= 0.02 || f >= 0.98) nearEnds++;
      grey[y * bw + x] = Math.round(255 * (inkBright ? 1 - f : f));
    }
  }
  const ink = new Uint8Array(bw * bh);
  if (exactInk) {
    // text on the picture: only pixels at the ink's own value are text (the picture rarely is)
    for (let y = 0; y < bh; y++) {
      for (let x = 0; x < bw; x++) {
        const i = y * bw + x;
        const on = Math.abs(image.data[(y + by) * image.width + x + bx] - exactInk.value) <= exactInk.tolerance;
        ink[i] = on ? 1 : 0;
        grey[i] = on ? 0 : 255;
      }
    }
  } else {
    const t = otsuThreshold(grey);
    for (let i = 0; i < grey.length; i++) ink[i] = grey[i] <= t ? 1 : 0;
  }
  return { box: [bx, by, bw, bh], grey: { width: bw, height: bh, data: grey }, ink: { width: bw, height: bh, data: ink }, twoLevel: !!exactInk || nearEnds >= 0.98 * grey.length };
}

/**
 * The slant of text: the horizontal shear that makes its strokes most upright.
 * @param ink the text as ink
 * @returns s in x' = x − s·(y − yc) that removes the slant, in [−0.4, 0.4]
 * Notes: the shear maximising the sum of squared column ink counts (vertical strokes stack into
 * few columns), the classic projection-profile deslanting of handwriting and print recognition
 * (common practice).
 */
export function textSlant(ink: InkMask): number {
  let best = 0;
  let bestScore = -1;
  const yc = ink.height / 2;
  const scores: [number, number][] = [];
  for (let k = -8; k <= 8; k++) {
    const s = k * 0.05;
    const cols = new Float64Array(ink.width + ink.height);
    const off = Math.ceil(0.4 * ink.height);
    for (let y = 0; y < ink.height; y++) {
      for (let x = 0; x < ink.width; x++) {
        if (ink.data[y * ink.width + x]) cols[Math.round(x - s * (yc - y)) + off]++;
      }
    }
    let score = 0;
    for (const c of cols) score += c * c;
    scores.push([s, score]);
  }
  // upright text stays as drawn unless a shear stacks the strokes clearly better (6 %)
  const upright = scores.find(([s]) => s === 0)![1];
  for (const [s, score] of scores) {
    if (score > bestScore) {
      bestScore = score;
      best = s;
    }
  }
  return bestScore > 1.06 * upright ? best : 0;
}

/**
 * Removes a slant from an ink mask.
 * @param ink the mask
 * @param s the shear found by textSlant
 * @returns a wider mask with x' = x − s·(yc − y) (nearest pixel)
 */
export function unslant(ink: InkMask, s: number): InkMask {
  if (s === 0) return ink;
  const off = Math.ceil(Math.abs(s) * ink.height / 2) + 1;
  const w = ink.width + 2 * off;
  const out = new Uint8Array(w * ink.height);
  const yc = ink.height / 2;
  for (let y = 0; y < ink.height; y++) {
    for (let x = 0; x < ink.width; x++) {
      if (!ink.data[y * ink.width + x]) continue;
      const nx = Math.round(x - s * (yc - y)) + off;
      if (nx >= 0 && nx < w) out[y * w + nx] = 1;
    }
  }
  return { width: w, height: ink.height, data: out };
}

/** Options of {@link ocrRaster}. */
export interface OcrRasterOptions {
  /** Height the text's ink rows are scaled to, px; 48 when absent. */
  targetTextPx?: number;
  /** White margin on every side, px; 16 when absent. */
  marginPx?: number;
  /**
   * How the crop is enlarged: 'bilinear' (default), then thresholded by Otsu; or 'nearest', a
   * whole factor keeping a pixel font's square pixels. Measured on the label set (bench:labels),
   * the OCR engine reads bilinear enlargements better, pixel fonts included.
   */
  upscale?: 'bilinear' | 'nearest';
}

/**
 * The crop as the OCR engine reads best: dark text on white, scaled up, with a margin.
 * @param crop a label crop
 * @param options target text height and margin
 * @returns an 8-bit raster, text 0 on 255
 * Notes: scaled bilinearly and thresholded by Otsu (1979), or by a whole factor with
 * nearest-neighbour sampling (square pixels kept crisp). The scale follows the ink's height, not
 * the box's.
 */
export function ocrRaster(crop: LabelCrop, options: OcrRasterOptions = {}): GreyRaster {
  const target = options.targetTextPx ?? 48;
  const margin = options.marginPx ?? 16;
  if (!(target >= 8 && target <= 400)) throw new RangeError(`targetTextPx must be in [8, 400], got ${target}`);
  if (!Number.isInteger(margin) || margin < 0) throw new RangeError(`marginPx must be a non-negative integer, got ${margin}`);
  const { width: w, height: h } = crop.grey;
  let top = h;
  let bottom = -1;
  for (let y = 0; y < h; y++) for (let x = 0; x < w; x++) if (crop.ink.data[y * w + x]) { if (y < top) top = y; if (y > bottom) bottom = y; }
  const inkH = bottom >= top ? bottom - top + 1 : h;
  let W: number;
  let H: number;
  let value: (i: number, j: number) => number;
  const upscale = options.upscale ?? 'bilinear';
  if (upscale !== 'bilinear' && upscale !== 'nearest') throw new RangeError(`upscale must be 'bilinear' or 'nearest', got ${String(upscale)}`);
  if (upscale === 'nearest') {
    const f = Math.max(1, Math.min(16, Math.round(target / inkH)));
    W = w * f;
    H = h * f;
    value = (i, j) => (crop.ink.data[Math.floor(j / f) * w + Math.floor(i / f)] ? 0 : 255);
  } else {
    const f = Math.max(1, Math.min(16, target / inkH));
    W = Math.max(1, Math.round(w * f));
    H = Math.max(1, Math.round(h * f));
    const g = crop.grey.data;
    const px = (x: number, y: number) => g[Math.min(h - 1, Math.max(0, y)) * w + Math.min(w - 1, Math.max(0, x))];
    const up = new Uint8Array(W * H);
    for (let j = 0; j < H; j++) {
      const sy = (j + 0.5) / f - 0.5;
      const y0 = Math.floor(sy);
      const fy = sy - y0;
      for (let i = 0; i < W; i++) {
        const sx = (i + 0.5) / f - 0.5;
        const x0 = Math.floor(sx);
        const fx = sx - x0;
        up[j * W + i] = Math.round((1 - fy) * ((1 - fx) * px(x0, y0) + fx * px(x0 + 1, y0)) + fy * ((1 - fx) * px(x0, y0 + 1) + fx * px(x0 + 1, y0 + 1)));
      }
    }
    const t = otsuThreshold(up);
    value = (i, j) => (up[j * W + i] <= t ? 0 : 255);
  }
  const OW = W + 2 * margin;
  const OH = H + 2 * margin;
  const out = new Uint8Array(OW * OH).fill(255);
  for (let j = 0; j < H; j++) for (let i = 0; i < W; i++) out[(j + margin) * OW + i + margin] = value(i, j);
  return { width: OW, height: OH, data: out };
}

/**
 * The label box widened on both sides: a second crop that must read the same, so that a box cut
 * short (a digit lost at its edge) cannot give a wrong number unnoticed.
 * @param image the micrograph
 * @param box the label box
 * @param bar the bar's box [x, y, w, h], kept out of the widened crop
 * @returns the widened box inside the image
 */
export function widenedBox(image: GreyImage, box: Box, bar: Box | null): Box {
  checkBox(image, box);
  const [bx, by, bw, bh] = box;
  const grow = Math.round(1.3 * bh);
  let x0 = Math.max(0, bx - grow);
  let x1 = Math.min(image.width, bx + bw + grow);
  let y0 = Math.max(0, by - Math.round(0.15 * bh));
  let y1 = Math.min(image.height, by + bh + Math.round(0.15 * bh));
  if (bar) {
    // never reach into the bar: shrink the side that would overlap it
    const [rx, ry, rw, rh] = bar;
    const overlapsRows = ry < y1 && ry + rh > y0;
    if (overlapsRows) {
      if (rx + rw <= bx && rx + rw > x0) x0 = rx + rw + 1;
      if (rx >= bx + bw && rx < x1) x1 = rx - 1;
    }
    const overlapsCols = rx < x1 && rx + rw > x0;
    if (overlapsCols) {
      if (ry + rh <= by && ry + rh > y0) y0 = ry + rh + 1;
      if (ry >= by + bh && ry < y1) y1 = ry - 1;
    }
  }
  x0 = Math.min(x0, bx);
  y0 = Math.min(y0, by);
  x1 = Math.max(x1, bx + bw);
  y1 = Math.max(y1, by + bh);
  return [x0, y0, x1 - x0, y1 - y0];
}
