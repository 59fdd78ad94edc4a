/**
 * `stratameter sheets IMAGE`: nanosheet thickness and layer counts, along a drawn line or found
 * automatically over the whole image, with their statistics.
 */
import { readFile } from 'node:fs/promises';
import type { CliCommand, CliIo } from './command';
import { parseArgs, UsageError } from './command';
import { decodeImage, ImageReadError } from '../image/decode';
import type { Calibration, GreyImage } from '../image/grey-image';
import { findScaleBar, type Box } from '../calibration/scale-bar';
import { detectSheets, sheetStatistics } from '../sheets/detect';
import { sheetsAlongLine } from '../sheets/line';
import type { Summary } from '../measure/stats';
import { sheetSummary, type SheetSummary } from '../sheets/record';
import { INDICATED_MAGNIFICATION_REL, makeCalibration } from '../calibration/calibration';


const usage = `Usage: stratameter sheets IMAGE [--nm-per-px X | --scale-bar auto] [--line x0,y0,x1,y1[,width]]
                          [--period-px P] [--bright] [--json]

Counts the layers of nanosheets and measures their thickness. With --line, along that line
(draw it across the stack, along the layer normal, starting and ending on background); without
it, every sheet found automatically in the image (an information strip under a scale bar is
skipped).

Options:
  --nm-per-px X        pixel size in nm (replaces the file's calibration; 5 % uncertainty)
  --scale-bar auto     find the scale bar, read its label and calibrate from it
  --line x0,y0,x1,y1[,width]  line in pixels (y = row, downwards); width in px, default 9
  --period-px P        expected layer period in px (default: estimated)
  --bright             layers are bright fringes (default: dark, as in bright-field TEM)
  --json               one JSON object on standard output instead of a table

Thickness = (last − first layer centre) + the sheet's mean period, i.e. layers × period.
Edge-to-edge = distance between the half-maximum crossings of the fringe envelope.
Angles: direction of the layer normal in degrees, 0 to 180, counter-clockwise from +x as the
image is shown (x right, y up).
`;

/** One sheet in the JSON report. */
export type SheetsReportSheet = SheetSummary;

type StatBlock = Pick<Summary, 'mean' | 'sd' | 'median' | 'q1' | 'q3' | 'min' | 'max' | 'ci95'>;

/** The JSON shape printed by `sheets --json`. */
export interface SheetsReport {
  file: string;
  calibration: { nmPerPx: number | null; source: string | null; relUncertainty: number | null };
  sheets: SheetsReportSheet[];
  stats: { n: number; thicknessNm: StatBlock | null; layers: StatBlock | null };
}

function statBlock(s: Summary | null): StatBlock | null {
  if (!s) return null;
  return { mean: s.mean, sd: s.sd, median: s.median, q1: s.q1, q3: s.q3, min: s.min, max: s.max, ci95: s.ci95 };
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

async function scaleBarCalibration(image: GreyImage): Promise<Calibration> {
  const { readScaleBar, LABEL_CHARACTERS } = await import('../calibration/label');
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

/** Runs the measurement and builds the report. */
export async function sheetsReport(
  file: string,
  image: GreyImage,
  opts: { line?: ReturnType<typeof parseLine>; periodPx?: number; bright?: boolean },
): Promise<{ report: SheetsReport; notes: string[] }> {
  const notes: string[] = [];
  const cal = image.calibration;
  const polarity = opts.bright ? ('bright' as const) : ('dark' as const);
  let sheets: SheetsReportSheet[];
  let stats: ReturnType<typeof sheetStatistics>;
  if (opts.line) {
    const { x0, y0, x1, y1, widthPx } = opts.line;
    const r = sheetsAlongLine(image, x0, y0, x1, y1, { widthPx, periodPx: opts.periodPx, polarity });
    sheets = r.sheets.map((s) => sheetSummary(s, s.centerXY));
    if (r.sheets.some((s) => s.truncated)) notes.push('a sheet touches an end of the line: extend the line onto background');
    stats = sheetStatistics(r.sheets.map((s) => ({ ...s, status: 'manual' as const })));
  } else {
    const bar = findScaleBar(image);
    const box: Box | null = bar ? bar.stripBox ?? bar.panelBox : null;
    if (box) notes.push(`skipped the scale-bar panel at x ${box[0]}, y ${box[1]}, ${box[2]} × ${box[3]} px`);
    const r = detectSheets(image, { periodPx: opts.periodPx, polarity, exclude: box });
    sheets = r.sheets.map((s) => sheetSummary(s, s.centerPx));
    stats = sheetStatistics(r.sheets);
  }
  if (!cal) notes.push('no calibration: lengths in px only (set one with --nm-per-px or --scale-bar auto)');
  return {
    report: {
      file,
      calibration: { nmPerPx: cal?.nmPerPx ?? null, source: cal?.source ?? null, relUncertainty: cal?.relUncertainty ?? null },
      sheets,
      stats: { n: stats.n, thicknessNm: statBlock(stats.thicknessNm), layers: statBlock(stats.layers) },
    },
    notes,
  };
}

function fmt(v: number | null, digits = 2): string {
  return v === null ? '—' : v.toFixed(digits);
}

/** The report as a readable table. */
export function formatSheets(r: SheetsReport, notes: string[]): string {
  const c = r.calibration;
  const lines = [`file         ${r.file}`];
  lines.push(
    c.nmPerPx !== null
      ? `calibration  ${Number(c.nmPerPx.toPrecision(6))} nm per pixel, ±${Number(((c.relUncertainty ?? 0) * 100).toPrecision(3))} % (source: ${c.source})`
      : 'calibration  none',
  );
  lines.push('');
  if (r.sheets.length === 0) {
    lines.push('no sheets found');
  } else {
    const head = ['#', 'layers', 'thickness (px)', 'thickness (nm)', 'edge-to-edge (nm)', 'period (nm)', 'angle (°)', 'centre (px)'];
    const rows = r.sheets.map((s, i) => [
      String(i + 1),
      String(s.layers),
      s.thicknessPx.toFixed(1),
      fmt(s.thicknessNm),
      fmt(s.edgeToEdgeNm),
      fmt(s.periodNm, 3),
      s.angleDeg.toFixed(1),
      `${s.centerPx[0].toFixed(0)}, ${s.centerPx[1].toFixed(0)}`,
    ]);
    const widths = head.map((h, k) => Math.max(h.length, ...rows.map((row) => row[k].length)));
    lines.push(head.map((h, k) => h.padStart(widths[k])).join('  '));
    for (const row of rows) lines.push(row.map((v, k) => v.padStart(widths[k])).join('  '));
    lines.push('');
    const t = r.stats.thicknessNm;
    const l = r.stats.layers;
    lines.push(`sheets       ${r.stats.n}`);
    if (l) lines.push(`layers       mean ${l.mean.toFixed(2)}, sd ${l.sd.toFixed(2)}, median ${l.median}, range ${l.min}–${l.max}`);
    if (t) {
      const ci = t.ci95 ? `, 95 % CI of the mean ${t.ci95[0].toFixed(2)}–${t.ci95[1].toFixed(2)}` : '';
      lines.push(`thickness    mean ${t.mean.toFixed(2)} nm, sd ${t.sd.toFixed(2)}, median ${t.median.toFixed(2)} (quartiles ${t.q1.toFixed(2)}–${t.q3.toFixed(2)})${ci}`);
    }
  }
  for (const n of notes) lines.push(`note: ${n}`);
  return `${lines.join('\n')}\n`;
}

export const command: CliCommand = {
  name: 'sheets',
  summary: 'nanosheet thickness and layer counts, along a line or found automatically',
  usage,
  async run(args: string[], io: CliIo): Promise<number> {
    const { positional, options, flags } = parseArgs(args, {
      values: ['nm-per-px', 'scale-bar', 'line', 'period-px'],
      booleans: ['json', 'bright'],
    });
    if (positional.length !== 1) throw new UsageError(`expected one IMAGE, got ${positional.length}: see 'stratameter sheets --help'`);
    if (options.has('nm-per-px') && options.has('scale-bar')) throw new UsageError('give --nm-per-px or --scale-bar auto, not both');
    const scaleBar = options.get('scale-bar');
    if (scaleBar !== undefined && scaleBar !== 'auto') throw new UsageError(`--scale-bar takes 'auto', got '${scaleBar}'`);
    let nmPerPx: number | undefined;
    if (options.has('nm-per-px')) {
      nmPerPx = Number(options.get('nm-per-px'));
      if (!(nmPerPx > 0 && Number.isFinite(nmPerPx))) throw new UsageError(`--nm-per-px must be a positive number, got '${options.get('nm-per-px')}'`);
    }
    let periodPx: number | undefined;
    if (options.has('period-px')) {
      periodPx = Number(options.get('period-px'));
      if (!(periodPx >= 2 && Number.isFinite(periodPx))) throw new UsageError(`--period-px must be a number ≥ 2, got '${options.get('period-px')}'`);
    }
    const line = options.has('line') ? parseLine(options.get('line')!) : undefined;
    const file = positional[0];
    let bytes: Uint8Array;
    try {
      bytes = new Uint8Array(await readFile(file));
    } catch (e) {
      const code = (e as NodeJS.ErrnoException).code;
      throw new ImageReadError(file, code === 'ENOENT' ? 'no such file' : code === 'EISDIR' ? 'is a directory' : (e as Error).message);
    }
    const image = decodeImage(bytes, file);
    if (nmPerPx !== undefined) {
      image.calibration = makeCalibration(nmPerPx, 'manual', 'typed on the command line', [{ name: 'indicated magnification (no uncertainty given)', rel: INDICATED_MAGNIFICATION_REL, type: 'B' }]);
    } else if (scaleBar === 'auto') {
      image.calibration = await scaleBarCalibration(image);
    }
    if (line) {
      for (const [k, v, max] of [['x0', line.x0, image.width], ['x1', line.x1, image.width], ['y0', line.y0, image.height], ['y1', line.y1, image.height]] as const) {
        if (v < 0 || v > max - 1) throw new UsageError(`--line ${k} = ${v} lies outside the ${image.width} × ${image.height} image`);
      }
    }
    const { report, notes } = await sheetsReport(file, image, { line, periodPx, bright: flags.has('bright') });
    if (flags.has('json')) io.out(`${JSON.stringify(report)}\n`);
    else io.out(formatSheets(report, notes));
    if (flags.has('json')) for (const n of notes) io.err(`note: ${n}\n`);
    return 0;
  },
};
