/**
 * `stratameter sheets IMAGE`: stack thickness and layer counts, along a drawn line or found
 * automatically over the whole image (or a region), with their statistics and, given a powder
 * pattern, the comparison with the basal reflection's Scherrer size.
 */
import type { CliCommand, CliIo } from './command';
import { coverageFactorOption, parseArgs, UsageError } from './command';
import { openImageFile } from './open-image';
import { makeGreyImage, type Calibration, type GreyImage } from '../image/grey-image';
import { findScaleBar, type Box } from '../calibration/scale-bar';
import { detectSheets, type AutoSheetsResult } from '../sheets/detect';
import { MIN_COUNTABLE_PERIOD_PX } from '../sheets/limits';
import { sheetsAlongLine } from '../sheets/line';
import { budgetJson, formatPlusMinus, nmPerPxAlong } from '../measure/measurement';
import type { Summary } from '../measure/stats';
import { expressSheet, sheetFromAuto, sheetFromLine, sheetStatistics, THICKNESS_CONVENTION, type SheetReport } from '../sheets/record';
import { basalLine, compareWithScherrer, sizedLines, type ScherrerComparison } from '../sheets/xrd-compare';
import { INDICATED_MAGNIFICATION_REL, makeCalibration } from '../calibration/calibration';

const usage = `Usage: stratameter sheets IMAGE [--nm-per-px X | --scale-bar auto] [--line x0,y0,x1,y1[,width]]
                          [--region x,y,width,height] [--period-px P | --period-nm P] [--bright]
                          [--xrd PATTERN [--wavelength W] [--columns X,Y[,S]] [--instrument FILE | --standard FILE]]
                          [--coverage-factor K] [--json]

Counts the layers of edge-on stacks (tactoids, few-layer crystals) and measures their thickness.
With --line, along that line (draw it across the stacks, along the layer normal, starting and
ending on background); without it, every stack found automatically in the image or the region
(an information strip under a scale bar is skipped).

Options:
  --nm-per-px X        pixel size in nm (replaces the file's calibration; 5 % uncertainty)
  --scale-bar auto     find the scale bar, read its label and calibrate from it
  --line x0,y0,x1,y1[,width]  line in pixels (y = row, downwards); width in px, default 9
  --region x,y,w,h     search only this rectangle (pixels)
  --period-px P        the layer period in px, when known (e.g. from X-ray diffraction)
  --period-nm P        the layer period in nm (needs a calibration)
  --bright             layers are bright lines (default: dark, as in bright-field TEM)
  --xrd PATTERN        a powder pattern: compare the stacks' thickness with the Scherrer size
                       of its basal reflection (the peak at the stacks' period)
  --wavelength W       the pattern's wavelength when its header has none (e.g. CuKa1)
  --columns X,Y[,S]    the pattern's columns of position, intensity and its uncertainty (from 1)
  --instrument FILE    an instrument profile saved by 'xrd --save-instrument', removed from the sizes
  --standard FILE      a line-profile standard measured on the same instrument (as for xrd)
  --coverage-factor K  k of the expanded uncertainty U = k·u (default 2)
  --json               one JSON object on standard output instead of a table

Thickness = layers × the stack's layer period (n·d); the edge-to-edge width of the band (where
its darkening falls to half) is given beside it, with no ± stated. Every ± is an expanded uncertainty (k = 2
unless --coverage-factor) and the line under the table says what it contains. Angles: the
direction of the layer normal, 0 to 180°, counter-clockwise from +x as the image is shown.
Results inform research; they do not replace an accredited calibration.
`;

type StatBlock = Pick<Summary, 'n' | 'mean' | 'sd' | 'median' | 'q1' | 'q3' | 'min' | 'max' | 'ci95'>;

/** One sheet in the JSON report: its px fields and its lengths with their budgets. */
export interface SheetsReportSheet extends SheetReport {
  thickness: Record<string, number | string>;
  edgeToEdge: Record<string, number | string>;
  period: Record<string, number | string>;
  length: Record<string, number | string> | null;
  /** The same values as plain numbers in nm (null without a calibration), as \`match\` reads them. */
  thicknessNm: number | null;
  edgeToEdgeNm: number | null;
  periodNm: number | null;
}

/** The JSON shape printed by `sheets --json`. */
export interface SheetsReport {
  file: string;
  calibration: { nmPerPx: number | null; nmPerPxY: number | null; source: string | null; relUncertainty: number | null };
  thicknessConvention: string;
  coverageFactorK: number;
  /** 'auto' over the image or region, or 'line'. */
  mode: 'auto' | 'line';
  region: [number, number, number, number] | null;
  sheets: SheetsReportSheet[];
  /** thickness in `unit`; thicknessNm the same block when that unit is nm (as \`match\` reads it), else null. */
  stats: { n: number; unit: 'nm' | 'px'; thickness: StatBlock | null; thicknessNm: StatBlock | null; layers: StatBlock | null; layerCounts: [number, number][] };
  /** The layer periods used, px: where the search looked for layers (no ±: each sheet's own period carries its ±). */
  periodsPx: number[];
  /** 'given' by the user (--period) or 'found' in the image. */
  periodSource: 'given' | 'found';
  /** Bands examined and not reported, by reason (automatic search); a reason's numbers are written '#'. */
  rejected: Record<string, number>;
  /** The same, one readable line per reason: its count and the range of each of its numbers ("2 × too faint: evidence 4.1–9.8 below 12"). */
  rejectedSummary: string[];
  /** 'no stacks found' (or why) when there are none, else null. */
  message: string | null;
  xrd: ScherrerComparison | null;
}

/**
 * Groups reasons that differ only in their numbers and writes each group once with its count and
 * the range of each number: "2 × too faint: evidence 4.1–9.8 below 12".
 *
 * @param reasons - the reasons of the bands not reported, in the search's order
 * @returns one line per group, in the order each group first appears
 */
export function summariseReasons(reasons: readonly string[]): string[] {
  const groups = new Map<string, string[][]>();
  for (const r of reasons) {
    const key = r.replace(/[0-9.]+/g, '#');
    const numbers = r.match(/[0-9.]+/g) ?? [];
    const g = groups.get(key);
    if (g) g.push(numbers);
    else groups.set(key, [numbers]);
  }
  return [...groups].map(([key, members]) => {
    let slot = 0;
    const text = key.replace(/#/g, () => {
      const values = members.map((m) => m[slot]!);
      slot++;
      const byValue = [...values].sort((a, b) => Number(a) - Number(b));
      const lo = byValue[0]!;
      const hi = byValue[byValue.length - 1]!;
      return Number(lo) === Number(hi) || Number.isNaN(Number(lo)) || Number.isNaN(Number(hi)) ? lo : `${lo}–${hi}`;
    });
    return `${members.length} × ${text}`;
  });
}

function statBlock(s: Summary | null): StatBlock | null {
  if (!s) return null;
  return { n: s.n, mean: s.mean, sd: s.sd, median: s.median, q1: s.q1, q3: s.q3, min: s.min, max: s.max, ci95: s.ci95 };
}

/** Parses "x0,y0,x1,y1[,width]". */
export function parseLine(text: string): { x0: number; y0: number; x1: number; y1: number; widthPx: number } {
  const parts = text.split(',').map((s) => s.trim());
  const nums = parts.map(Number);
  if ((parts.length !== 4 && parts.length !== 5) || nums.some((v, i) => !Number.isFinite(v) || parts[i] === '')) {
    throw new UsageError(`--line must be x0,y0,x1,y1 or x0,y0,x1,y1,width (numbers in px), got '${text}'`);
  }
  if (parts.length === 5 && !(nums[4] >= 1)) throw new UsageError(`--line width must be ≥ 1 px, got '${parts[4]}'`);
  return { x0: nums[0], y0: nums[1], x1: nums[2], y1: nums[3], widthPx: parts.length === 5 ? nums[4] : 9 };
}

/** Parses "x,y,width,height" (whole pixels inside the image). */
export function parseRegion(text: string, image: { width: number; height: number }): [number, number, number, number] {
  const parts = text.split(',').map((s) => s.trim());
  const nums = parts.map(Number);
  if (parts.length !== 4 || nums.some((v, i) => !Number.isInteger(v) || parts[i] === '')) throw new UsageError(`--region must be x,y,width,height in whole pixels, got '${text}'`);
  const [x, y, w, h] = nums;
  if (x < 0 || y < 0 || w < 32 || h < 32 || x + w > image.width || y + h > image.height) {
    throw new UsageError(`--region ${text} must lie inside the ${image.width} × ${image.height} image and be at least 32 × 32 px`);
  }
  return [x, y, w, h];
}

async function scaleBarCalibration(image: GreyImage): Promise<Calibration> {
  const { LABEL_CHARACTERS } = await import('../calibration/label');
  const { readScaleBar } = await import('../calibration/label-read');
  const { createTextReader } = await import('../calibration/ocr');
  const reader = await createTextReader({ whitelist: LABEL_CHARACTERS });
  try {
    const r = await readScaleBar(image, reader);
    if (!r.bar) throw new Error('no scale bar found: give the pixel size with --nm-per-px');
    if (!r.calibration) throw new Error(`the scale bar's label could not be read${r.ocrText ? ` (read '${r.ocrText.trim()}')` : ''}: give the pixel size with --nm-per-px`);
    return r.calibration;
  } finally {
    await reader.close();
  }
}

/** A rectangle of an image as an image of its own (same calibration). */
function crop(image: GreyImage, [x, y, w, h]: [number, number, number, number]): GreyImage {
  const data = new Float32Array(w * h);
  for (let r = 0; r < h; r++) data.set(image.data.subarray((y + r) * image.width + x, (y + r) * image.width + x + w), r * w);
  return makeGreyImage(w, h, data, { bitDepth: image.bitDepth, sampleKind: image.sampleKind, calibration: image.calibration });
}

/** Automatic sheets over an image or a region of it, positions in the image's pixels. */
export function sheetsInRegion(image: GreyImage, region: [number, number, number, number] | null, options: { periodPx?: number; polarity: 'dark' | 'bright' }): { result: AutoSheetsResult; excluded: Box | null } {
  let exclude: Box | null = null;
  if (!region) {
    const bar = findScaleBar(image);
    exclude = bar ? bar.stripBox ?? bar.panelBox : null;
  }
  const target = region ? crop(image, region) : image;
  const r = detectSheets(target, { periodPx: options.periodPx, polarity: options.polarity, exclude });
  if (!region) return { result: r, excluded: exclude };
  const [dx, dy] = region;
  const shift = (p: [number, number]): [number, number] => [p[0] + dx, p[1] + dy];
  return {
    result: {
      ...r,
      sheets: r.sheets.map((s) => ({ ...s, centerPx: shift(s.centerPx), axisPx: s.axisPx.map(shift), outlinePx: s.outlinePx.map(shift), positions: s.positions.map((q) => ({ ...q, centerPx: shift(q.centerPx) })) })),
      rejected: r.rejected.map((q) => ({ ...q, centerPx: shift(q.centerPx) })),
    },
    excluded: null,
  };
}

/** The X-ray comparison from a pattern file. */
async function xrdComparison(path: string, patternOptions: Map<string, string>, sheets: SheetReport[], calibration: Calibration | null): Promise<{ comparison: ScherrerComparison | null; note: string | null }> {
  // the pattern read and analysed as xrd does (wavelength, columns, instrument profile or standard)
  const { loadAndAnalyse } = await import('./xrd');
  const { analysis } = await loadAndAnalyse(path, patternOptions);
  if (!calibration) return { comparison: null, note: 'the X-ray comparison needs a calibrated image (nm): give --nm-per-px or --scale-bar auto' };
  const kept = sheets.filter((s) => s.status !== 'rejected');
  if (kept.length < 2) return { comparison: null, note: 'the X-ray comparison needs at least two stacks' };
  const expressed = kept.map((s) => ({ s, e: expressSheet(s, calibration) }));
  const periodNm = expressed.reduce((a, q) => a + q.e.period.value, 0) / expressed.length;
  const line = basalLine(sizedLines(analysis), periodNm);
  if (!line) return { comparison: null, note: `no reflection with a Scherrer size near the stacks' period (${periodNm.toFixed(3)} nm) in ${path}` };
  const comparison = compareWithScherrer(
    expressed.map(({ s, e }) => ({ thicknessNm: e.thickness.value, layers: s.layers, lengthWeight: e.length?.value ?? 1 })),
    { sizeNm: line.crystalliteNm!, uSizeNm: line.crystalliteUncNm ?? null, dNm: line.dNm, source: `${path}, ${line.label}, d = ${line.dNm.toFixed(4)} nm; ${line.method}` },
  );
  return { comparison, note: null };
}

/** Runs the measurement and builds the report. */
export async function sheetsReport(
  file: string,
  image: GreyImage,
  opts: { line?: ReturnType<typeof parseLine>; region?: [number, number, number, number] | null; periodPx?: number; bright?: boolean; k?: number; xrd?: string; xrdOptions?: Map<string, string> },
): Promise<{ report: SheetsReport; notes: string[] }> {
  const notes: string[] = [];
  const cal = image.calibration;
  const k = opts.k ?? 2;
  const polarity = opts.bright ? ('bright' as const) : ('dark' as const);
  let sheets: SheetReport[];
  let periodsPx: number[] = [];
  let rejected: Record<string, number> = {};
  const rejectedReasons: string[] = [];
  let message: string | null = null;
  if (opts.line) {
    const { x0, y0, x1, y1, widthPx } = opts.line;
    let periods: number[] | undefined;
    if (opts.periodPx === undefined) {
      // the image's periods from its stacks, unless the line's own fringes must do
      const auto = detectSheets(image, { polarity });
      periods = auto.periods.map((p) => p.periodPx);
      if (periods.length) notes.push(`period from the image's stacks: ${periods.map((d) => d.toFixed(3)).join(', ')} px`);
    }
    const r = sheetsAlongLine(image, x0, y0, x1, y1, { widthPx, periodPx: opts.periodPx, periods, polarity });
    sheets = r.sheets.map((s, i) => sheetFromLine(s, `line-${i + 1}`));
    if (r.periodPx !== null) periodsPx = [r.periodPx];
    message = r.message;
  } else {
    const { result, excluded } = sheetsInRegion(image, opts.region ?? null, { periodPx: opts.periodPx, polarity });
    if (excluded) notes.push(`skipped the scale-bar panel at x ${excluded[0]}, y ${excluded[1]}, ${excluded[2]} × ${excluded[3]} px`);
    sheets = result.sheets.map(sheetFromAuto);
    periodsPx = result.periods.map((p) => p.periodPx);
    for (const q of result.rejected) {
      const key = q.reason.replace(/[0-9.]+/g, '#');
      rejected[key] = (rejected[key] ?? 0) + 1;
      rejectedReasons.push(q.reason);
    }
    message = result.message;
  }
  if (!cal) notes.push('no calibration: lengths in px only (set one with --nm-per-px or --scale-bar auto)');
  const stats = sheetStatistics(sheets.map((sheet) => ({ sheet, calibration: cal })));
  let xrd: ScherrerComparison | null = null;
  if (opts.xrd) {
    const x = await xrdComparison(opts.xrd, opts.xrdOptions ?? new Map(), sheets, cal);
    xrd = x.comparison;
    if (x.note) notes.push(x.note);
  }
  const out: SheetsReportSheet[] = sheets.map((s) => {
    const e = expressSheet(s, cal, k);
    const nm = e.thickness.unit === 'nm';
    return {
      ...s,
      thickness: budgetJson(e.thickness, 'thickness'), edgeToEdge: budgetJson(e.edgeToEdge, 'edgeToEdge'), period: budgetJson(e.period, 'period'), length: e.length ? budgetJson(e.length, 'length') : null,
      thicknessNm: nm ? e.thickness.value : null, edgeToEdgeNm: nm ? e.edgeToEdge.value : null, periodNm: nm ? e.period.value : null,
    };
  });
  return {
    report: {
      file,
      calibration: { nmPerPx: cal?.nmPerPx ?? null, nmPerPxY: cal?.nmPerPxY ?? null, source: cal?.source ?? null, relUncertainty: cal?.relUncertainty ?? null },
      thicknessConvention: THICKNESS_CONVENTION,
      coverageFactorK: k,
      mode: opts.line ? 'line' : 'auto',
      region: opts.region ?? null,
      sheets: out,
      stats: { n: stats.n, unit: stats.unit, thickness: statBlock(stats.thickness), thicknessNm: stats.unit === 'nm' ? statBlock(stats.thickness) : null, layers: statBlock(stats.layers), layerCounts: stats.layerCounts },
      periodsPx,
      periodSource: opts.periodPx !== undefined ? 'given' : 'found',
      rejected,
      rejectedSummary: summariseReasons(rejectedReasons),
      message,
      xrd,
    },
    notes,
  };
}

/** The report as a readable table. */
export function formatSheets(r: SheetsReport, notes: string[]): string {
  const c = r.calibration;
  const lines = [`file         ${r.file}${r.region ? ` (region x ${r.region[0]}, y ${r.region[1]}, ${r.region[2]} × ${r.region[3]} px)` : ''}`];
  lines.push(
    c.nmPerPx !== null
      ? `calibration  ${Number(c.nmPerPx.toPrecision(6))} nm per pixel, ±${Number(((c.relUncertainty ?? 0) * 100).toPrecision(3))} % (source: ${c.source})`
      : 'calibration  none',
  );
  if (r.periodsPx.length) {
    const list = r.periodsPx.map((d) => `${d.toFixed(3)} px`).join(', ');
    const plural = r.periodsPx.length > 1 ? 's' : '';
    lines.push(r.periodSource === 'given' ? `period       ${list} (given)` : `period       ${list} (layer period${plural} where the search found layers; no ±: each sheet's own period, with its ±, is in the table)`);
  }
  lines.push('');
  if (r.sheets.length === 0) {
    lines.push(`${r.message ?? 'no stacks found'}`);
  } else {
    const unit = r.sheets[0].thickness.uncertaintyContains !== undefined && c.nmPerPx !== null ? 'nm' : 'px';
    const v = (b: Record<string, number | string>, name: string) => formatPlusMinus(b[`${name}${unit === 'nm' ? 'Nm' : 'Px'}`] as number, b[`expandedUncertainty${unit === 'nm' ? 'Nm' : 'Px'}`] as number);
    const head = ['#', 'layers', `thickness n·d (${unit})`, `edge-to-edge (${unit}, no ±)`, `period (${unit})`, 'agree', `length (${unit}, no ±)`, 'angle (°, no ±)', 'centre (px)'];
    const rows = r.sheets.map((s, i) => [
      String(i + 1),
      String(s.layers) + (s.correction ? ` (was ${s.correction.originalLayers})` : ''),
      v(s.thickness, 'thickness'),
      Number((s.edgeToEdge[`edgeToEdge${unit === 'nm' ? 'Nm' : 'Px'}`] as number).toPrecision(4)).toString(),
      v(s.period, 'period'),
      s.confidence === null ? '—' : `${Math.round(100 * s.confidence)} %`,
      s.length ? (s.length[`length${unit === 'nm' ? 'Nm' : 'Px'}`] as number).toFixed(0) : '—',
      s.angleDeg.toFixed(1),
      `${s.centerPx[0].toFixed(0)}, ${s.centerPx[1].toFixed(0)}`,
    ]);
    const widths = head.map((h, k) => Math.max(h.length, ...rows.map((row) => row[k].length)));
    lines.push(head.map((h, k) => h.padStart(widths[k])).join('  '));
    for (const row of rows) lines.push(row.map((x, k) => x.padStart(widths[k])).join('  '));
    lines.push(`± is k = ${r.coverageFactorK}: ${r.sheets[0].thickness.uncertaintyContains} (thickness); the period's ± (${r.sheets[0].period.uncertaintyContains}); 'agree' is the share of the positions along a stack that gave its count.`);
    lines.push(`thickness    ${r.thicknessConvention}`);
    lines.push('');
    const t = r.stats.thickness;
    const l = r.stats.layers;
    lines.push(`sheets       ${r.stats.n}`);
    if (l) lines.push(`layers       mean ${l.mean.toFixed(2)}, sd ${l.sd.toFixed(2)}, median ${l.median}, range ${l.min}–${l.max}; by count ${r.stats.layerCounts.map(([n, m]) => `${n}: ${m}`).join(', ')}`);
    if (t) {
      const ci = t.ci95 ? `, 95 % CI of the mean ${t.ci95[0].toFixed(2)}–${t.ci95[1].toFixed(2)}` : '';
      lines.push(`thickness    mean ${t.mean.toFixed(2)} ${r.stats.unit}, sd ${t.sd.toFixed(2)}, median ${t.median.toFixed(2)} (quartiles ${t.q1.toFixed(2)}–${t.q3.toFixed(2)})${ci}`);
    }
  }
  if (r.rejectedSummary.length) lines.push(`not reported ${r.rejectedSummary.join('; ')}`);
  if (r.xrd) {
    lines.push('');
    lines.push(`X-ray        ${r.xrd.statement}`);
  }
  for (const n of notes) lines.push(`note: ${n}`);
  return `${lines.join('\n')}\n`;
}

export const command: CliCommand = {
  name: 'sheets',
  summary: 'stack thickness and layer counts, along a line or found automatically',
  usage,
  async run(args: string[], io: CliIo): Promise<number> {
    const { positional, options, flags } = parseArgs(args, {
      values: ['nm-per-px', 'scale-bar', 'line', 'region', 'period-px', 'period-nm', 'xrd', 'wavelength', 'columns', 'instrument', 'standard', 'coverage-factor'],
      booleans: ['json', 'bright'],
    });
    if (positional.length !== 1) throw new UsageError(`expected one IMAGE, got ${positional.length}: see 'stratameter sheets --help'`);
    if (options.has('nm-per-px') && options.has('scale-bar')) throw new UsageError('give --nm-per-px or --scale-bar auto, not both');
    if (options.has('period-px') && options.has('period-nm')) throw new UsageError('give --period-px or --period-nm, not both');
    if (options.has('line') && options.has('region')) throw new UsageError('give --line or --region, not both');
    const xrdOnly = ['wavelength', 'columns', 'instrument', 'standard'].filter((o) => options.has(o));
    if (xrdOnly.length && !options.has('xrd')) throw new UsageError(`${xrdOnly.map((o) => `--${o}`).join(', ')} belong${xrdOnly.length === 1 ? 's' : ''} to --xrd PATTERN`);
    const xrdOptions = new Map(xrdOnly.map((o) => [o, options.get(o)!] as [string, string]));
    const k = coverageFactorOption(options.get('coverage-factor'));
    const scaleBar = options.get('scale-bar');
    if (scaleBar !== undefined && scaleBar !== 'auto') throw new UsageError(`--scale-bar takes 'auto', got '${scaleBar}'`);
    let nmPerPx: number | undefined;
    if (options.has('nm-per-px')) {
      nmPerPx = Number(options.get('nm-per-px'));
      if (!(nmPerPx > 0 && Number.isFinite(nmPerPx))) throw new UsageError(`--nm-per-px must be a positive number, got '${options.get('nm-per-px')}'`);
    }
    const line = options.has('line') ? parseLine(options.get('line')!) : undefined;
    const file = positional[0];
    const image = openImageFile(file);
    if (nmPerPx !== undefined) {
      image.calibration = makeCalibration(nmPerPx, 'manual', 'typed on the command line', [{ name: 'indicated magnification (no uncertainty given)', rel: INDICATED_MAGNIFICATION_REL, type: 'B' }]);
    } else if (scaleBar === 'auto') {
      image.calibration = await scaleBarCalibration(image);
    }
    const region = options.has('region') ? parseRegion(options.get('region')!, image) : null;
    if (line) {
      for (const [key, v, max] of [['x0', line.x0, image.width], ['x1', line.x1, image.width], ['y0', line.y0, image.height], ['y1', line.y1, image.height]] as const) {
        if (v < 0 || v > max - 1) throw new UsageError(`--line ${key} = ${v} lies outside the ${image.width} × ${image.height} image`);
      }
    }
    const extraNotes: string[] = [];
    let periodPx: number | undefined;
    if (options.has('period-px')) {
      periodPx = Number(options.get('period-px'));
      if (!Number.isFinite(periodPx)) throw new UsageError(`--period-px must be a number, got '${options.get('period-px')}'`);
    } else if (options.has('period-nm')) {
      const nm = Number(options.get('period-nm'));
      if (!(nm > 0 && Number.isFinite(nm))) throw new UsageError(`--period-nm must be a positive number, got '${options.get('period-nm')}'`);
      const cal = image.calibration;
      if (!cal) throw new UsageError('--period-nm needs a calibrated image: give --nm-per-px or --scale-bar auto, or use --period-px');
      const square = (cal.nmPerPxY ?? cal.nmPerPx) === cal.nmPerPx && !cal.shearDeg;
      // with unequal pixel axes a spacing in px depends on its direction: the mean scale of the two axes
      const scale = square ? cal.nmPerPx : nmPerPxAlong(cal, 'ring', 0);
      periodPx = nm / scale;
      if (!square) extraNotes.push(`the pixels are not square: --period-nm converted with the mean scale of the two axes (${scale.toPrecision(5)} nm/px); give --period-px for one direction`);
    }
    if (periodPx !== undefined) {
      if (periodPx < 2) throw new UsageError(`the period is ${periodPx.toFixed(3)} px, below the sampling limit of 2 px (Nyquist): no layer of it can be resolved in this image`);
      if (periodPx < MIN_COUNTABLE_PERIOD_PX) throw new UsageError(`the period is ${periodPx.toFixed(3)} px, below ${MIN_COUNTABLE_PERIOD_PX} px where layers can be counted reliably: use an image of higher magnification`);
    }
    const { report, notes } = await sheetsReport(file, image, { line, region, periodPx, bright: flags.has('bright'), k, xrd: options.get('xrd'), xrdOptions });
    notes.push(...extraNotes);
    if (flags.has('json')) {
      io.out(`${JSON.stringify(report)}\n`);
      for (const n of notes) io.err(`note: ${n}\n`);
    } else io.out(formatSheets(report, notes));
    return 0;
  },
};
