/**
 * Figures of a batch: an annotated PNG per image at full resolution (grey values stretched to
 * 8 bits, a scale bar of a round length, the analysed regions outlined, the accepted periods
 * written out) and small hand-written SVG histograms of the pooled values, also as PNG.
 */
import { expressPeriod } from '../measure/measurement';
import { encode } from 'fast-png';
import { DRAWABLE_CHARACTERS, drawText, fillRect, measureText, strokeRectOutside, type Raster } from './draw-text';
import type { GreyImage } from '../image/grey-image';
import type { Region } from '../measure/measurement';
import { histogram } from '../measure/stats';
import { displayLimits, stretchToGrey } from '../image/display';
import { lengthLabel } from './ticks';
import { escapeXml } from './xml';
import type { FileResult } from '../batch/run';

/** Options for `roundScaleBar`. */
export interface ScaleBarOptions {
  /** Wanted bar length as a fraction of the image width; default 0.2. */
  targetFraction?: number;
}

/** A scale bar of a round length. */
export interface RoundScaleBar {
  /** Bar length in nm, a 1–2–5 series value. */
  lengthNm: number;
  /** Bar length in px (lengthNm / nmPerPx; may be fractional, drawn with exact edge coverage). */
  lengthPx: number;
  /** The label, e.g. "20 nm", "0.5 nm", "2 µm". */
  label: string;
}

/**
 * The scale bar of a round length for an image.
 *
 * Round values of the 1–2–5 series per decade (common practice for scale bars and instrument ranges).
 *
 * @param widthPx image width in px (positive integer)
 * @param nmPerPx pixel size (positive)
 * @param options wanted fraction of the width
 * @returns the 1–2–5 length nearest the wanted length on a log scale, its length in px and label
 * Notes: with the default 20 % target the bar lands between 12.6 % and 31.6 % of the width (the
 * series steps by 2 and 2.5); it is 15–25 % for most pixel sizes (common practice for figures).
 */
export function roundScaleBar(widthPx: number, nmPerPx: number, options: ScaleBarOptions = {}): RoundScaleBar {
  if (!(Number.isInteger(widthPx) && widthPx > 0)) throw new RangeError(`widthPx must be a positive integer, got ${widthPx}`);
  if (!(nmPerPx > 0 && Number.isFinite(nmPerPx))) throw new RangeError(`nmPerPx must be a positive number, got ${nmPerPx}`);
  const f = options.targetFraction ?? 0.2;
  if (!(f > 0 && f <= 1)) throw new RangeError(`targetFraction must be in (0, 1], got ${f}`);
  const targetNm = f * widthPx * nmPerPx;
  const decade = Math.floor(Math.log10(targetNm));
  let best = 0;
  let bestDist = Infinity;
  for (let k = decade - 1; k <= decade + 1; k++) {
    for (const m of [1, 2, 5]) {
      // build from integers so that e.g. 0.2 is exactly the double nearest 0.2
      const v = k >= 0 ? m * 10 ** k : m / 10 ** -k;
      const d = Math.abs(Math.log(v / targetNm));
      if (d < bestDist) {
        bestDist = d;
        best = v;
      }
    }
  }
  return { lengthNm: best, lengthPx: best / nmPerPx, label: lengthLabel(best) };
}

/** Options for `annotatedFigure`. */
export interface FigureOptions {
  /** Draw the outline of each analysed region; default true when there is more than one region or it is not the whole image. */
  outlineRegions?: boolean;
}

/**
 * The annotated figure of one image as an 8-bit grey raster (values 0–255).
 *
 * @param image the image (calibrated: the bar needs its pixel size)
 * @param result its result record (periods to write)
 * @param regions the analysed regions
 * @param options outlines
 * @returns a Raster the size of the image, 0–255
 * Notes: the bar is white with a black border, placed in the lower left of the analysed area,
 * 4 % of the width from the edges; the label above it. The periods are listed in the upper left.
 */
export function annotatedFigure(image: GreyImage, result: FileResult, regions: Region[], options: FigureOptions = {}): Raster {
  const { width, height } = image;
  const out: Raster = { width, height, data: new Float32Array(width * height) };
  // the app's one display stretch: black and white at the 0.5 % and 99.5 % percentiles
  stretchToGrey(image.data, displayLimits(image.data), out.data);
  const unit = Math.max(1, Math.round(Math.min(width, height) / 256));
  const rects = regions.filter((r): r is Extract<Region, { kind: 'rect' }> => r.kind === 'rect');
  const whole = rects.length === 1 && rects[0].x === 0 && rects[0].y === 0 && rects[0].width === width && rects[0].height === height;
  if (options.outlineRegions ?? !whole) {
    for (const r of rects) {
      const lw = unit;
      strokeRectOutside(out, r.x + lw, r.y + lw, Math.max(1, r.width - 2 * lw), Math.max(1, r.height - 2 * lw), lw, 255);
    }
  }
  const areaBottom = rects.length ? Math.max(...rects.map((r) => r.y + r.height)) : height;
  const cal = result.calibration ?? image.calibration;
  const margin = Math.round(0.04 * width);
  const textPx = Math.max(10, 7 * unit);
  if (cal) {
    const bar = roundScaleBar(width, cal.nmPerPx);
    const barH = Math.max(3, 2 * unit);
    const x = margin;
    const y = areaBottom - margin - barH;
    if (y > textPx * 2 && x + bar.lengthPx < width) {
      strokeRectOutside(out, x, y, bar.lengthPx, barH, unit, 0);
      fillRect(out, x, y, bar.lengthPx, barH, 255);
      const t = measureText(bar.label, { sizePx: textPx, value: 255 });
      const tx = x + Math.max(0, (bar.lengthPx - t.widthPx) / 2);
      const ty = y - unit * 3;
      labelWithHalo(out, bar.label, tx, ty, textPx);
    }
  }
  // the stroke fonts have digits, a few letters and signs: periods as "1: 1.400 nm", sheets as "n = 8, 2.00 nm"
  const lines = result.summary.topPeriods.map((p, i) => `${i + 1}: ${result.calibration ? `${expressPeriod(p, result.calibration).value.toFixed(3)} nm` : `${p.periodPx.toFixed(2)} px`}`);
  if (result.summary.sheetCount !== null) {
    lines.push(`n = ${result.summary.sheetCount}` + (result.summary.meanThicknessNm !== null ? `, ${result.summary.meanThicknessNm.toFixed(2)} nm` : ''));
  }
  lines.forEach((line, i) => labelWithHalo(out, line, margin / 2, margin / 2 + (i + 1) * textPx * 1.6, textPx));
  return out;
}

/** White text on a black halo so it reads on any background. */
function labelWithHalo(r: Raster, text: string, x: number, baselineY: number, sizePx: number): void {
  const safe = [...text].filter((c) => DRAWABLE.has(c)).join('');
  if (!safe) return;
  drawText(r, safe, x, baselineY, { sizePx, value: 0, weight: 0.3 });
  drawText(r, safe, x, baselineY, { sizePx, value: 255 });
}

const DRAWABLE = new Set([...DRAWABLE_CHARACTERS, ' ']);

/**
 * The annotated figure as PNG bytes (8-bit grey, fast-png).
 * @returns PNG file bytes
 */
export function annotatedFigurePng(image: GreyImage, result: FileResult, regions: Region[], options: FigureOptions = {}): Uint8Array {
  const r = annotatedFigure(image, result, regions, options);
  const bytes = new Uint8Array(r.data.length);
  for (let i = 0; i < bytes.length; i++) bytes[i] = Math.round(r.data[i]);
  return encode({ width: r.width, height: r.height, data: bytes, channels: 1, depth: 8 });
}

function tick(v: number): string {
  return String(Number(v.toPrecision(4)));
}

/**
 * Fewest values a mean, a standard deviation or a histogram is given for; fewer are listed one by
 * one (common practice: a spread needs at least three values to say anything).
 */
export const MIN_VALUES_FOR_STATISTICS = 3;

/** Options for `histogramSvg`. */
export interface HistogramSvgOptions {
  /** Axis label under the bars, with the unit, e.g. "period (nm)". */
  xLabel: string;
  /** Title above the plot. */
  title?: string;
  /** Bin width in the values' unit; default Freedman–Diaconis (`histogram`). */
  binWidth?: number;
  /** Integer values (layer counts): bins centred on integers. */
  integer?: boolean;
}

/** The layout of a histogram figure in SVG user units, shared by the SVG and the PNG. */
function histogramLayout(values: ArrayLike<number>, options: HistogramSvgOptions) {
  const h = histogram(values, { binWidth: options.binWidth, integer: options.integer, maxBins: 60 });
  const W = 480;
  const H = 300;
  const left = 50;
  const right = 15;
  const top = options.title ? 35 : 15;
  const bottom = 50;
  const pw = W - left - right;
  const ph = H - top - bottom;
  const x0 = h.edges[0];
  const x1 = h.edges[h.edges.length - 1];
  const maxCount = Math.max(...h.counts);
  const sx = (x: number) => left + ((x - x0) / (x1 - x0)) * pw;
  const sy = (c: number) => top + ph - (c / maxCount) * ph;
  return { h, W, H, left, top, pw, ph, x0, x1, maxCount, sx, sy };
}

/**
 * A histogram as a small stand-alone SVG document.
 *
 * @param values the sample (finite, at least one)
 * @param options labels and binning (Freedman & Diaconis 1981 by default, via `histogram`)
 * @returns SVG text, 480 × 300 user units, one rect per non-empty bin
 */
export function histogramSvg(values: ArrayLike<number>, options: HistogramSvgOptions): string {
  const { h, W, H, left, top, pw, ph, x0, x1, maxCount, sx, sy } = histogramLayout(values, options);
  const parts: string[] = [
    `<svg xmlns="http://www.w3.org/2000/svg" width="${W}" height="${H}" viewBox="0 0 ${W} ${H}" font-family="sans-serif" font-size="12">`,
    `<rect width="${W}" height="${H}" fill="white"/>`,
  ];
  if (options.title) parts.push(`<text x="${W / 2}" y="20" text-anchor="middle" font-size="14">${escapeXml(options.title)}</text>`);
  for (let i = 0; i < h.counts.length; i++) {
    if (h.counts[i] === 0) continue;
    const xa = sx(h.edges[i]);
    const xb = sx(h.edges[i + 1]);
    const y = sy(h.counts[i]);
    parts.push(`<rect class="bar" x="${xa.toFixed(2)}" y="${y.toFixed(2)}" width="${(xb - xa).toFixed(2)}" height="${(top + ph - y).toFixed(2)}" fill="#4a78b0" stroke="white" stroke-width="0.5" data-count="${h.counts[i]}"/>`);
  }
  parts.push(`<line x1="${left}" y1="${top + ph}" x2="${left + pw}" y2="${top + ph}" stroke="black"/>`);
  parts.push(`<line x1="${left}" y1="${top}" x2="${left}" y2="${top + ph}" stroke="black"/>`);
  for (const x of [x0, (x0 + x1) / 2, x1]) {
    parts.push(`<text x="${sx(x).toFixed(2)}" y="${top + ph + 16}" text-anchor="middle">${tick(x)}</text>`);
  }
  parts.push(`<text x="${left - 6}" y="${top + 4}" text-anchor="end">${maxCount}</text>`);
  parts.push(`<text x="${left - 6}" y="${top + ph}" text-anchor="end">0</text>`);
  parts.push(`<text x="${left + pw / 2}" y="${H - 12}" text-anchor="middle">${escapeXml(options.xLabel)}</text>`);
  parts.push(`<text transform="translate(14 ${top + ph / 2}) rotate(-90)" text-anchor="middle">count</text>`);
  parts.push('</svg>');
  return `${parts.join('\n')}\n`;
}

/** Options for `histogramPng`: those of `histogramSvg` and the raster scale. */
export interface HistogramPngOptions extends HistogramSvgOptions {
  /** Pixels per SVG user unit: the PNG is 480·scale × 300·scale px; default 2 (960 × 600), at most 16. */
  scale?: number;
}

/** Grey of the bars: the luma of the SVG's bar colour #4a78b0 (ITU-R BT.709 luma weights). */
const BAR_GREY = 0.2126 * 0x4a + 0.7152 * 0x78 + 0.0722 * 0xb0;
/** Cap height of sans-serif text as a fraction of the font size (about 0.72 em, common practice). */
const CAP_PER_EM = 0.72;

/** The characters of `text` the stroke fonts can draw (others are left out). */
function drawable(text: string): string {
  return [...text].filter((c) => DRAWABLE.has(c)).join('');
}

/**
 * Draws one line of dark text at SVG coordinates: `anchor` as SVG's text-anchor, `baselineY` the
 * baseline; `rotate` turns it 90° counter-clockwise about (x, baselineY) like SVG's rotate(-90).
 */
function svgText(r: Raster, text: string, x: number, baselineY: number, emPx: number, anchor: 'start' | 'middle' | 'end', rotate = false): void {
  const t = drawable(text);
  if (!t.trim()) return;
  const o = { sizePx: emPx * CAP_PER_EM, value: 0 };
  const m = measureText(t, o);
  const shift = anchor === 'middle' ? m.widthPx / 2 : anchor === 'end' ? m.widthPx : 0;
  if (!rotate) {
    drawText(r, t, x - shift, baselineY, o);
    return;
  }
  // draw the coverage upright into a scratch raster, then turn it: along the text is up, down is right
  const tw = Math.ceil(m.widthPx) + 2;
  const base = Math.ceil(m.ascentPx) + 1;
  const th = base + Math.ceil(m.descentPx) + 1;
  const cov: Raster = { width: tw, height: th, data: new Float32Array(tw * th) };
  drawText(cov, t, 1, base, { ...o, value: 1 });
  const x0 = Math.round(x) - base;
  const y0 = Math.round(baselineY + shift) + 1;
  for (let j = 0; j < th; j++) {
    for (let i = 0; i < tw; i++) {
      const c = cov.data[j * tw + i];
      const px = x0 + j;
      const py = y0 - i - 1;
      if (c <= 0 || px < 0 || py < 0 || px >= r.width || py >= r.height) continue;
      const k = py * r.width + px;
      r.data[k] *= 1 - c;
    }
  }
}

/**
 * The histogram of `histogramSvg` as an 8-bit grey PNG, drawn by the core's raster font.
 *
 * @param values the sample (finite, at least one)
 * @param options labels and binning as for `histogramSvg` (Freedman & Diaconis 1981 by default,
 *   via `histogram`), and `scale`
 * @returns PNG file bytes (fast-png), 480·scale × 300·scale px, 8-bit grey
 * Notes: the same bins and layout as the SVG (title, bars, axes, three x ticks, count 0 and max,
 * x label, the rotated "count"), white background, black ink, bars in the grey of the SVG's bar
 * colour with a half-unit white edge; text at a cap height of 0.72 of the SVG font size. Label
 * characters the stroke fonts lack are left out (DRAWABLE_CHARACTERS).
 */
export function histogramPng(values: ArrayLike<number>, options: HistogramPngOptions): Uint8Array {
  const s = options?.scale ?? 2;
  if (!(Number.isFinite(s) && s > 0 && s <= 16)) throw new RangeError(`scale must be a number in (0, 16], got ${options?.scale}`);
  // layout in SVG user units, exactly as histogramSvg
  const { h, W, H, left, top, pw, ph, x0, x1, maxCount, sx, sy } = histogramLayout(values, options);
  const width = Math.max(1, Math.round(W * s));
  const height = Math.max(1, Math.round(H * s));
  const r: Raster = { width, height, data: new Float32Array(width * height).fill(255) };
  if (options.title) svgText(r, options.title, (W / 2) * s, 20 * s, 14 * s, 'middle');
  const edge = 0.25; // half of the SVG's 0.5-unit white bar stroke lies inside the bar
  for (let i = 0; i < h.counts.length; i++) {
    if (h.counts[i] === 0) continue;
    const xa = sx(h.edges[i]) + edge;
    const xb = sx(h.edges[i + 1]) - edge;
    const y = sy(h.counts[i]) + edge;
    const yb = top + ph - edge;
    if (xb > xa && yb > y) fillRect(r, xa * s, y * s, (xb - xa) * s, (yb - y) * s, BAR_GREY);
  }
  // one-unit black axis lines centred on their SVG coordinates
  fillRect(r, left * s, (top + ph - 0.5) * s, pw * s, s, 0);
  fillRect(r, (left - 0.5) * s, top * s, s, ph * s, 0);
  for (const x of [x0, (x0 + x1) / 2, x1]) svgText(r, tick(x), sx(x) * s, (top + ph + 16) * s, 12 * s, 'middle');
  svgText(r, String(maxCount), (left - 6) * s, (top + 4) * s, 12 * s, 'end');
  svgText(r, '0', (left - 6) * s, (top + ph) * s, 12 * s, 'end');
  svgText(r, options.xLabel, (left + pw / 2) * s, (H - 12) * s, 12 * s, 'middle');
  svgText(r, 'count', 14 * s, (top + ph / 2) * s, 12 * s, 'middle', true);
  const bytes = new Uint8Array(r.data.length);
  for (let i = 0; i < bytes.length; i++) bytes[i] = Math.round(r.data[i]);
  return encode({ width, height, data: bytes, channels: 1, depth: 8 });
}
