/**
 * Scale-bar labels: parsing the text, preparing the label's pixels for OCR, and turning a bar
 * plus its label into a Calibration. Pure: the OCR engine is passed in (see ./ocr).
 */
import { makeCalibration, rectangularU, SCALE_BAR_REPRESENTATION_REL } from './calibration';
import type { Calibration, GreyImage } from '../image/grey-image';
import { otsuThreshold } from '../image/otsu';
import { boxRange } from '../image/crop';
import { connectedComponents, holeCount, type Component } from '../image/components';
import type { Box, ScaleBar } from './scale-bar';

/** Length units a scale-bar label may carry. */
export type LabelUnit = 'pm' | 'Å' | 'nm' | 'µm' | 'mm';

/** A parsed scale-bar label. */
export interface ScaleLabel {
  /** The number as written. */
  value: number;
  /** The unit as written (normalised spelling). */
  unit: LabelUnit;
  /** The length in nm. */
  nm: number;
  /** 1 when the whole text is exactly a number and a unit; 0.7 when they were found among other characters. */
  confidence: number;
}

const NM_PER_UNIT: Record<LabelUnit, number> = { pm: 0.001, Å: 0.1, nm: 1, µm: 1000, mm: 1e6 };

/**
 * Parses a scale-bar label such as "200 nm", "0,5 µm", "5 um", "20 Å", "500pm" or "1 mm".
 * @param text the label text (typed or read by OCR)
 * @returns the value, unit, length in nm and a parse confidence, or null when no single
 *   number-and-unit can be read (the caller then asks the user; nothing is guessed)
 * Notes: accepts `u`, `µ` (U+00B5) and `μ` (U+03BC) for micro, `A`, `Å` and the ångström sign
 * for ångström, a decimal comma, and spaces anywhere between number and unit. Units of the SI
 * brochure (BIPM, 9th ed., 2019) plus the ångström (0.1 nm).
 */
export function parseScaleLabel(text: string): ScaleLabel | null {
  if (typeof text !== 'string') throw new TypeError(`text must be a string, got ${typeof text}`);
  const t = text.normalize('NFC').replace(/\u212b/g, 'Å').replace(/\u03bc/g, 'µ').trim();
  if (!t) return null;
  const re = /(\d+(?:[.,]\d+)?|[.,]\d+)\s*(pm|nm|µm|um|mm|Å|A)(?![A-Za-z])/g;
  const matches = [...t.matchAll(re)];
  if (matches.length !== 1) return null;
  const m = matches[0];
  const value = Number(m[1].replace(',', '.'));
  if (!Number.isFinite(value) || value <= 0) return null;
  const raw = m[2];
  const unit: LabelUnit = raw === 'um' || raw === 'µm' ? 'µm' : raw === 'A' || raw === 'Å' ? 'Å' : (raw as LabelUnit);
  const exact = m[0].length === t.length;
  // other digits outside the match make the reading doubtful
  const rest = t.slice(0, m.index) + t.slice((m.index ?? 0) + m[0].length);
  if (/\d/.test(rest)) return null;
  return { value, unit, nm: value * NM_PER_UNIT[unit], confidence: exact ? 1 : 0.7 };
}

export interface LabelPrepOptions {
  /** Target height of the label box after up-scaling, px; 64 when absent. */
  targetHeightPx?: number;
  /** White margin added on every side, px; 16 when absent. */
  marginPx?: number;
}

/**
 * Crops the label, scales it up (bilinear), binarises it by Otsu's threshold and makes the text
 * black on white, the form OCR engines read best.
 * @param image the micrograph
 * @param box the label's box [x, y, w, h]
 * @param options target height and margin
 * @returns an 8-bit raster, values 0 (text) and 255 (ground)
 * Notes: threshold by Otsu (1979); the text's polarity is taken as the minority class.
 */
export function prepareLabelForOcr(
  image: GreyImage,
  box: Box,
  options: LabelPrepOptions = {},
): { width: number; height: number; data: Uint8Array } {
  const [bx, by, bw, bh] = box;
  if (![bx, by, bw, bh].every(Number.isInteger) || bw < 1 || bh < 1 || bx < 0 || by < 0 || bx + bw > image.width || by + bh > image.height) {
    throw new RangeError(`label box [${box.join(', ')}] is not an integer box inside the ${image.width} × ${image.height} image`);
  }
  const target = options.targetHeightPx ?? 64;
  const margin = options.marginPx ?? 16;
  if (!(target >= 8)) throw new RangeError(`targetHeightPx must be at least 8, got ${target}`);
  if (!(margin >= 0) || !Number.isInteger(margin)) throw new RangeError(`marginPx must be a non-negative integer, got ${margin}`);
  const scale = Math.max(1, Math.min(12, target / bh));
  const w = Math.max(1, Math.round(bw * scale));
  const h = Math.max(1, Math.round(bh * scale));
  const [lo, hi] = boxRange(image, box);
  const span = hi > lo ? hi - lo : 1;
  const grey = new Uint8Array(w * h);
  const px = (x: number, y: number) => image.data[(by + Math.min(bh - 1, Math.max(0, y))) * image.width + bx + Math.min(bw - 1, Math.max(0, x))];
  for (let j = 0; j < h; j++) {
    const sy = (j + 0.5) / scale - 0.5;
    const y0 = Math.floor(sy);
    const fy = sy - y0;
    for (let i = 0; i < w; i++) {
      const sx = (i + 0.5) / scale - 0.5;
      const x0 = Math.floor(sx);
      const fx = sx - x0;
      const v =
        (1 - fy) * ((1 - fx) * px(x0, y0) + fx * px(x0 + 1, y0)) + fy * ((1 - fx) * px(x0, y0 + 1) + fx * px(x0 + 1, y0 + 1));
      grey[j * w + i] = Math.round((255 * (v - lo)) / span);
    }
  }
  const t = otsuThreshold(grey);
  let bright = 0;
  for (let i = 0; i < grey.length; i++) if (grey[i] > t) bright++;
  const textIsBright = bright < grey.length / 2;
  const W = w + 2 * margin;
  const H = h + 2 * margin;
  const out = new Uint8Array(W * H).fill(255);
  for (let j = 0; j < h; j++) {
    for (let i = 0; i < w; i++) {
      const isText = grey[j * w + i] > t === textIsBright;
      out[(j + margin) * W + i + margin] = isText ? 0 : 255;
    }
  }
  return { width: W, height: H, data: out };
}

/** One 8-connected blob of text pixels in a binarised label. */
type Blob = Component;

/** The text's blobs (8-connected dark pixels, value 0), at least 4 px, left to right. */
function textBlobs(r: { width: number; height: number; data: Uint8Array }): Blob[] {
  return connectedComponents(r.width, r.height, r.data, 0)
    .filter((b) => b.pixels.length >= 4)
    .sort((a, c) => a.x0 - c.x0);
}

/** Number of enclosed background regions (holes) of a blob, by flood fill from its box's rim. */
function blobHoles(b: Blob, width: number): number {
  const w = b.x1 - b.x0 + 1;
  const data = new Uint8Array(w * (b.y1 - b.y0 + 1));
  for (const k of b.pixels) {
    const x = k % width;
    data[((k - x) / width - b.y0) * w + (x - b.x0)] = 1;
  }
  return holeCount({ width: w, height: b.y1 - b.y0 + 1, data }, Math.max(2, Math.round(0.002 * b.pixels.length)));
}

/** Background regions inside the box that do not reach its rim (4-connected). */
function holesInBox(r: { width: number; height: number; data: Uint8Array }, bx0: number, by0: number, bx1: number, by1: number): number {
  const x0 = Math.max(0, Math.floor(bx0));
  const y0 = Math.max(0, Math.floor(by0));
  const x1 = Math.min(r.width - 1, Math.ceil(bx1));
  const y1 = Math.min(r.height - 1, Math.ceil(by1));
  const w = x1 - x0 + 1;
  const h = y1 - y0 + 1;
  if (w < 3 || h < 3) return 0;
  const seen = new Uint8Array(w * h);
  let ink = 0;
  for (let y = 0; y < h; y++) for (let x = 0; x < w; x++) if (r.data[(y + y0) * r.width + x + x0] === 0) ink++;
  const minHole = Math.max(2, Math.round(0.01 * ink));
  let holes = 0;
  for (let i = 0; i < w * h; i++) {
    if (seen[i] || r.data[(Math.floor(i / w) + y0) * r.width + (i % w) + x0] === 0) continue;
    const stack = [i];
    seen[i] = 1;
    let size = 0;
    let rim = false;
    while (stack.length) {
      const k = stack.pop()!;
      const x = k % w;
      const y = (k - x) / w;
      size++;
      if (x === 0 || y === 0 || x === w - 1 || y === h - 1) rim = true;
      for (const [nx, ny] of [[x - 1, y], [x + 1, y], [x, y - 1], [x, y + 1]]) {
        if (nx < 0 || ny < 0 || nx >= w || ny >= h) continue;
        const nk = ny * w + nx;
        if (!seen[nk] && r.data[(ny + y0) * r.width + nx + x0] !== 0) {
          seen[nk] = 1;
          stack.push(nk);
        }
      }
    }
    if (!rim && size >= minHole) holes++;
  }
  return holes;
}

/**
 * Settles p versus µ (or u) in an OCR reading of a "p m" / "µ m" unit from the glyph's shape: a p
 * encloses a bowl, a µ (and its stand-in u) does not.
 * @param raster the binarised label (text 0, ground 255), as prepareLabelForOcr makes it
 * @param text the OCR engine's reading
 * @param symbols the engine's character boxes, when it gives them (used in preference to blobs)
 * @returns the text with the prefix letter corrected; unchanged when the unit is not p/µ/u + m;
 *   with '?' in place of the prefix when the glyphs touch and cannot be matched to the characters
 * Notes: the English OCR models confuse the micro sign with p, a factor of 10⁶ in the length;
 * the hole count (topology of the binary glyph, flood fill of its background, common practice)
 * does not.
 */
export function checkMicroPrefix(
  raster: { width: number; height: number; data: Uint8Array },
  text: string,
  symbols?: readonly { text: string; x0: number; y0: number; x1: number; y1: number }[],
): string {
  const m = /([pµu])m\s*$/.exec(text);
  if (!m) return text;
  const letters0 = text.replace(/\s/g, '');
  if (symbols && symbols.length === letters0.length && symbols.map((c) => c.text).join('') === letters0) {
    // the engine's own box of the prefix character: count the holes inside it
    const c = symbols[symbols.length - 2];
    const want = holesInBox(raster, c.x0, c.y0, c.x1, c.y1) >= 1 ? 'p' : 'µ';
    return text.slice(0, m.index) + want + text.slice(m.index + 1);
  }
  const blobs = textBlobs(raster);
  // the blobs of the characters that have ink, left to right; a dot or comma is its own blob
  const letters = text.replace(/\s/g, '');
  // glyphs that touch cannot be told apart: the prefix stays unread ('?') and the caller asks the user
  if (blobs.length !== letters.length || blobs.length < 2) return text.slice(0, m.index) + '?' + text.slice(m.index + 1);
  const prefix = blobs[blobs.length - 2];
  const holes = blobHoles(prefix, raster.width);
  const want = holes >= 1 ? 'p' : 'µ';
  return text.slice(0, m.index) + want + text.slice(m.index + 1);
}

/** Characters a scale-bar label can hold, for the OCR engine's whitelist. */
export const LABEL_CHARACTERS = '0123456789.,nmuµpÅA ';

export interface ScaleBarCalibrationOptions {
  /**
   * Relative standard uncertainty allowed for how well a burned-in bar represents the true pixel
   * size; SCALE_BAR_REPRESENTATION_REL (2.9 %) when absent. The bar is drawn from the instrument's
   * nominal calibration, whose indicated magnification is reproducible to ±5 % (EMSA abstract
   * "Magnification determination for high resolution electron microscopy"); taken as a
   * rectangular bound, 5 %/√3 = 2.9 %.
   */
  representationRelUncertainty?: number;
}

/**
 * The pixel size a scale bar and its label imply.
 * @param bar the bar (length and its uncertainty)
 * @param labelNm the label's length in nm
 * @param options the allowance for how well a burned-in bar represents the calibration
 * @returns a Calibration with source 'scale-bar' and its three uncertainty parts
 * Notes: parts, combined as a root-sum-square of independent relative uncertainties (JCGM
 * 100:2008, GUM, §5.1.6): the bar's end location in this image (type A, u_L/L); the bar drawn to
 * whole pixels by the instrument, ±0.5 px over its length as a rectangular bound (type B,
 * 0.5/(√3·L), GUM §4.3.7); and how well the bar represents the true pixel size (type B).
 */
export function scaleBarCalibration(
  bar: Pick<ScaleBar, 'lengthPx' | 'uncertaintyPx'>,
  labelNm: number,
  options: ScaleBarCalibrationOptions = {},
): Calibration {
  if (!(bar?.lengthPx > 0) || !Number.isFinite(bar.lengthPx)) throw new RangeError(`bar lengthPx must be positive, got ${bar?.lengthPx}`);
  if (!(bar.uncertaintyPx >= 0)) throw new RangeError(`bar uncertaintyPx must be non-negative, got ${bar.uncertaintyPx}`);
  if (!(labelNm > 0) || !Number.isFinite(labelNm)) throw new RangeError(`labelNm must be positive, got ${labelNm}`);
  const rep = options.representationRelUncertainty ?? SCALE_BAR_REPRESENTATION_REL;
  if (!(rep >= 0 && rep < 1)) throw new RangeError(`representationRelUncertainty must be in [0, 1), got ${rep}`);
  const endRel = bar.uncertaintyPx / bar.lengthPx;
  const roundRel = rectangularU(0.5) / bar.lengthPx;
  return makeCalibration(
    labelNm / bar.lengthPx,
    'scale-bar',
    `scale bar ${formatNum(labelNm)} nm over ${bar.lengthPx.toFixed(2)} ± ${bar.uncertaintyPx.toFixed(2)} px (end location ${(100 * endRel).toFixed(2)} %, drawn to whole pixels ${(100 * roundRel).toFixed(2)} %, bar representation allowance ${(100 * rep).toFixed(1)} %)`,
    [
      { name: 'bar end location', rel: endRel, type: 'A' },
      { name: 'bar drawn to whole pixels', rel: roundRel, type: 'B' },
      { name: 'bar representation of the true pixel size', rel: rep, type: 'B' },
    ],
  );
}

function formatNum(v: number): string {
  return Number(v.toPrecision(6)).toString();
}
