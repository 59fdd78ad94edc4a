/**
 * Reading a scale-bar label so that a wrong pixel size is never returned silently: the OCR engine
 * reads several crops and scales of the label, the glyph reader (./glyph-reader) reads it
 * independently, and the value must be a round scale-bar number. Any disagreement, a low
 * confidence or an unusual value ends in a question (app) or a refusal naming what was read
 * (command line), never in a guess. Pure apart from the OCR engine, which is passed in.
 */
import type { Calibration, GreyImage } from '../image/grey-image';
import { readGlyphs } from './glyph-reader';
import { cropLabel, ocrRaster, widenedBox, type GreyRaster, type LabelCrop } from './label-raster';
import { checkMicroPrefix, parseScaleLabel, scaleBarCalibration, type ScaleBarCalibrationOptions, type ScaleLabel } from './label';
import { findScaleBar, type Box, type ScaleBar, type ScaleBarOptions } from './scale-bar';

/** Reads one line of text: the shape of the OCR adapter's reader (see ./ocr). */
export interface LineReader {
  read(raster: GreyRaster): Promise<{
    text: string;
    confidence: number;
    symbols?: { text: string; x0: number; y0: number; x1: number; y1: number }[];
  }>;
}

/** One reading of the label by one reader from one crop. */
export interface LabelAttempt {
  reader: 'ocr' | 'glyphs';
  /** Which crop: 'tight' or 'widened', the binarisation ('split' by Otsu or 'ink' by the ink's value), and the OCR scale. */
  variant: string;
  /** What the reader returned (null: nothing in the label's grammar). */
  text: string | null;
  /** The reader's own confidence, 0–1. */
  confidence: number;
  /** The parsed length in nm, or null when the text did not parse. */
  nm: number | null;
}

/** What reading a label gave. */
export interface LabelReading {
  /** 'read': every reader agreed on a round value with good confidence; 'ask': the user must say. */
  status: 'read' | 'ask';
  /** The agreed label (status 'read'), else null. */
  label: (ScaleLabel & { text: string }) | null;
  /** The most frequent reading, offered to the user when asking (never applied without them), or null. */
  suggestion: string | null;
  /** Why the user is asked (empty when read). */
  reasons: string[];
  /** Every attempt, for the record and the report. */
  attempts: LabelAttempt[];
}

export interface LabelReadOptions {
  /** Smallest OCR confidence the agreeing OCR readings must reach on average; 0.7 when absent. */
  minOcrConfidence?: number;
  /** Smallest glyph-reader confidence the best agreeing glyph reading must reach; 0.35 when absent. */
  minGlyphConfidence?: number;
}

/** Mantissas of the values scale bars are drawn at (1, 2, 2.5, 3 or 5 × 10ⁿ): common practice, no source. */
export const ROUND_MANTISSAS: readonly number[] = Object.freeze([1, 2, 2.5, 3, 5]);

/**
 * True when a label value is a round scale-bar number, 1, 2, 2.5, 3 or 5 × 10ⁿ (common practice,
 * no source: instruments and figure tools choose bar lengths from such a series).
 * @param value the number as written on the label (in its own unit)
 */
export function isRoundScaleValue(value: number): boolean {
  if (!(value > 0) || !Number.isFinite(value)) return false;
  const e = Math.floor(Math.log10(value) + 1e-9);
  const m = value / 10 ** e;
  return ROUND_MANTISSAS.some((r) => Math.abs(m - r) < 1e-6 * r);
}

/** The bar's box [x, y, w, h] from its ends and thickness. */
function barRect(bar: ScaleBar): Box {
  const half = bar.thicknessPx / 2;
  if (bar.orientation === 'vertical') return [Math.round(bar.x0 - half), Math.floor(bar.y0), Math.round(bar.thicknessPx), Math.ceil(bar.y1) - Math.floor(bar.y0)];
  return [Math.floor(bar.x0), Math.round(bar.y0 - half), Math.ceil(bar.x1) - Math.floor(bar.x0), Math.round(bar.thicknessPx)];
}

/** True when the label box lies inside the bar's panel (a strip or box of flat ground). */
function insidePanel(bar: ScaleBar, box: Box): boolean {
  const p = bar.panelBox;
  if (!p) return false;
  return box[0] >= p[0] && box[1] >= p[1] && box[0] + box[2] <= p[0] + p[2] && box[1] + box[3] <= p[1] + p[3];
}

/** Whether a crop's ink reaches its left or right edge: a box that may have cut the text short. */
function inkAtSides(crop: LabelCrop): boolean {
  const { width, height, data } = crop.ink;
  for (let y = 0; y < height; y++) if (data[y * width] || data[y * width + width - 1]) return true;
  return false;
}

/**
 * Reads the label of a scale bar.
 * @param image the micrograph
 * @param bar the bar found by findScaleBar, with its labelBox
 * @param ocr an OCR line reader (createTextReader from ./ocr, whitelist LABEL_CHARACTERS)
 * @param options confidence floors
 * @returns 'read' with the label only when all of these hold, else 'ask' with the reasons:
 *   at least two OCR readings (crops and scales) and one glyph reading give the same length; no
 *   glyph reading gives another (one under 0.6 of the best agreeing one's confidence excepted); OCR
 *   readings giving another are a weak minority (at most half as many, each less confident than
 *   the best agreeing one); the best agreeing OCR reading reaches minOcrConfidence and the best
 *   glyph reading minGlyphConfidence (or the OCR engine agrees in three crops or scales at a mean
 *   confidence of 0.85); the value is a round scale-bar number; a crop whose text touches its
 *   sides is confirmed by the widened crop.
 * Notes: crops: the label box, and the box widened by 1.3 text heights on both sides (a second
 * crop that must agree, so a box cut short cannot give a wrong number unnoticed). Binarisation:
 * Otsu's split (1979) and, for a label on the picture rather than on a panel, the pixels at the
 * ink's own value. OCR scales: the text's height enlarged bilinearly to 32, 40 and 52 px (the
 * widened and ink crops at 40 px). Two independent readers must
 * agree (the principle of double reading, common practice in data entry).
 */
export async function readLabel(image: GreyImage, bar: ScaleBar, ocr: LineReader, options: LabelReadOptions = {}): Promise<LabelReading> {
  if (!ocr || typeof ocr.read !== 'function') throw new TypeError('ocr must have a read(raster) method');
  if (!bar?.labelBox) throw new RangeError('the bar has no label box: find the label first, or let the user type it');
  const minOcr = options.minOcrConfidence ?? 0.7;
  const minGlyph = options.minGlyphConfidence ?? 0.35;
  if (!(minOcr >= 0 && minOcr <= 1)) throw new RangeError(`minOcrConfidence must be in [0, 1], got ${minOcr}`);
  if (!(minGlyph >= 0 && minGlyph <= 1)) throw new RangeError(`minGlyphConfidence must be in [0, 1], got ${minGlyph}`);
  const inkBright = bar.polarity === 'bright';
  const tightBox = bar.labelBox;
  const wideBox = widenedBox(image, tightBox, barRect(bar));
  const onPicture = !insidePanel(bar, tightBox);
  const exact = onPicture ? { value: bar.barValue, tolerance: 0.1 * Math.abs(bar.barValue - bar.groundValue) } : undefined;
  const crops: { name: string; crop: LabelCrop; scales: number[] }[] = [
    { name: 'tight/split', crop: cropLabel(image, tightBox, inkBright), scales: [32, 40, 52] },
    { name: 'widened/split', crop: cropLabel(image, wideBox, inkBright), scales: [40] },
  ];
  if (exact) {
    crops.push({ name: 'tight/ink', crop: cropLabel(image, tightBox, inkBright, exact), scales: [40] });
    crops.push({ name: 'widened/ink', crop: cropLabel(image, wideBox, inkBright, exact), scales: [40] });
  }
  const attempts: LabelAttempt[] = [];
  for (const { name, crop, scales } of crops) {
    for (const target of scales) {
      const raster = ocrRaster(crop, { targetTextPx: target });
      const r = await ocr.read(raster);
      const text = checkMicroPrefix(raster, r.text, r.symbols);
      const p = parseScaleLabel(text);
      attempts.push({ reader: 'ocr', variant: `${name}@${target}px`, text: text || null, confidence: r.confidence, nm: p ? p.nm : null });
    }
    const g = readGlyphs(crop.ink);
    const p = g.text ? parseScaleLabel(g.text) : null;
    attempts.push({ reader: 'glyphs', variant: name, text: g.text, confidence: g.confidence, nm: p ? p.nm : null });
  }
  return decide(attempts, { minOcr, minGlyph, cutShort: inkAtSides(crops[0].crop) });
}

/** The decision rule of {@link readLabel}, on its attempts (exported for tests). */
export function decide(attempts: LabelAttempt[], rule: { minOcr: number; minGlyph: number; cutShort: boolean }): LabelReading {
  const parsed = attempts.filter((a) => a.nm !== null);
  const reasons: string[] = [];
  const key = (nm: number) => Number(nm.toPrecision(9));
  const groups = new Map<number, LabelAttempt[]>();
  for (const a of parsed) groups.set(key(a.nm!), [...(groups.get(key(a.nm!)) ?? []), a]);
  // the candidate: the value read by the most attempts
  const ranked = [...groups.values()].sort((a, b) => b.length - a.length || Math.max(...b.map((x) => x.confidence)) - Math.max(...a.map((x) => x.confidence)));
  const top = ranked[0] ?? [];
  const others = ranked.slice(1).flat();
  const suggestion = top.length ? top.find((a) => a.reader === 'ocr')?.text ?? top[0].text : null;
  if (parsed.length === 0) {
    reasons.push('no reader could read the label as a number and a unit');
    return { status: 'ask', label: null, suggestion, reasons, attempts };
  }
  const ocrFor = top.filter((a) => a.reader === 'ocr');
  const glyphFor = top.filter((a) => a.reader === 'glyphs');
  // an OCR reading the engine itself rates below 0.4 is no vote against (it is still reported)
  const ocrAgainst = others.filter((a) => a.reader === 'ocr' && a.confidence >= 0.4);
  const glyphAgainst = others.filter((a) => a.reader === 'glyphs');
  const shown = (g: LabelAttempt[]) => `"${g[0].text}" (${g.map((a) => `${a.reader === 'ocr' ? 'OCR' : 'glyphs'} ${a.confidence.toFixed(2)}`).join(', ')})`;
  if (ocrFor.length < 2) reasons.push(`the OCR engine read "${top[0].text}" in ${ocrFor.length} of its crops and scales, not at least two`);
  if (glyphFor.length === 0) reasons.push(`the second reader (glyph shapes) did not confirm "${top[0].text}"`);
  const bestOcr = Math.max(0, ...ocrFor.map((a) => a.confidence));
  const bestGlyph = Math.max(0, ...glyphFor.map((a) => a.confidence));
  // a dissenting glyph reading counts unless it is much weaker than an agreeing one
  if (glyphAgainst.some((a) => a.confidence >= 0.6 * bestGlyph)) reasons.push(`the readings disagree: ${ranked.map(shown).join(' vs ')}`);
  // OCR dissent: allowed only as a weak minority (at most half as many, each less sure than the best agreeing one)
  else if (ocrAgainst.length > 0 && (2 * ocrAgainst.length > ocrFor.length || ocrAgainst.some((a) => a.confidence >= bestOcr))) reasons.push(`the readings disagree: ${ranked.map(shown).join(' vs ')}`);
  if (ocrFor.length && bestOcr < rule.minOcr) reasons.push(`OCR confidence ${bestOcr.toFixed(2)} is below ${rule.minOcr}`);
  const meanOcr = ocrFor.length ? ocrFor.reduce((s, a) => s + a.confidence, 0) / ocrFor.length : 0;
  // a weak glyph reading still confirms when the OCR engine is sure in three crops or scales
  if (glyphFor.length && bestGlyph < rule.minGlyph && !(ocrFor.length >= 3 && meanOcr >= 0.85)) reasons.push(`the glyph reader's confidence ${bestGlyph.toFixed(2)} is below ${rule.minGlyph}`);
  if (rule.cutShort && !top.some((a) => a.variant.startsWith('widened'))) reasons.push('the text reaches the edge of its box and the widened crop did not confirm it');
  const p = parseScaleLabel(top[0].text!)!;
  if (!isRoundScaleValue(p.value)) reasons.push(`${formatValue(p.value)} ${p.unit} is not a round scale-bar value (1, 2, 2.5, 3 or 5 × 10ⁿ)`);
  if (reasons.length) return { status: 'ask', label: null, suggestion, reasons, attempts };
  return { status: 'read', label: { ...p, text: `${formatValue(p.value)} ${p.unit}` }, suggestion, reasons, attempts };
}

function formatValue(v: number): string {
  return Number(v.toPrecision(6)).toString();
}

/** What reading a scale bar produced. */
export interface ScaleBarReading {
  bar: ScaleBar | null;
  /** The label as agreed by every reader, or null when it was not (see `reading` for why). */
  label: (ScaleLabel & { text: string; ocrConfidence: number }) | null;
  /** The OCR engine's best reading even when it was not taken (so the user sees what was read), or null. */
  ocrText: string | null;
  /** The full reading: 'read' or 'ask', the reasons and every attempt; null when there was no label box. */
  reading: LabelReading | null;
  /** Why the user must give the label (empty when it was read). */
  question: string | null;
  /** The calibration, only when the label was read without doubt. */
  calibration: Calibration | null;
}

/**
 * Finds the scale bar, reads its label (OCR and the glyph reader, which must agree on a round
 * value; see readLabel) and makes the calibration.
 * @param image the micrograph
 * @param reader an OCR line reader (createTextReader from ./ocr, or any other)
 * @param options bar-search options and the calibration allowance
 * @returns the bar, the label when read without doubt, what was read, the question to ask
 *   otherwise, and the calibration (null unless the label was read without doubt)
 */
export async function readScaleBar(
  image: GreyImage,
  reader: LineReader,
  options: ScaleBarOptions & ScaleBarCalibrationOptions & LabelReadOptions = {},
): Promise<ScaleBarReading> {
  if (!reader || typeof reader.read !== 'function') throw new TypeError('reader must have a read(raster) method');
  const bar = findScaleBar(image, options);
  if (!bar || !bar.labelBox) return { bar, label: null, ocrText: null, reading: null, question: bar ? 'no label found beside the bar: give it' : null, calibration: null };
  const reading = await readLabel(image, bar, reader, options);
  const ocrBest = reading.attempts.filter((a) => a.reader === 'ocr' && a.text).sort((a, b) => b.confidence - a.confidence)[0];
  const ocrText = reading.suggestion ?? ocrBest?.text ?? null;
  if (reading.status !== 'read' || !reading.label) {
    return { bar, label: null, ocrText, reading, question: labelQuestion(reading), calibration: null };
  }
  const ocrConf = Math.max(0, ...reading.attempts.filter((a) => a.reader === 'ocr' && a.nm === reading.label!.nm).map((a) => a.confidence));
  const label = { ...reading.label, ocrConfidence: ocrConf, confidence: ocrConf };
  return { bar, label, ocrText, reading, question: null, calibration: scaleBarCalibration(bar, reading.label.nm, options) };
}

/** The question put to the user when a label was not read without doubt: what was read and why it is not taken. */
export function labelQuestion(reading: LabelReading): string {
  const what = reading.suggestion ? `It reads like "${reading.suggestion}", but ` : '';
  return `${what}${reading.reasons.join('; ')}. Give the label as written beside the bar (e.g. 200 nm).`;
}
