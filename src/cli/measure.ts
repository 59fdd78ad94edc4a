/**
 * `stratameter measure IMAGE`: the periodicities (lattice-fringe and lamellar periods) of an image
 * or a rectangular region of it, strongest first, each as d ± u; with --tool, any tool of the
 * measurement-tool registry on a region or a line.
 */
import { writeFile } from 'node:fs/promises';
import { basename } from 'node:path';
import { PROGRAM_VERSION } from './version';
import type { CliCommand, CliIo } from './command';
import { coverageFactorOption, parseArgs, UsageError } from './command';
import { ImageReadError } from '../image/decode';
import { ImageFileError, openImageFile } from './open-image';
import { checkSpectrumRegion, RegionTooLargeError } from '../image/size-limits';
import type { Calibration, GreyImage } from '../image/grey-image';
import { budgetContents, DEFAULT_COVERAGE_FACTOR, expressPeriod, formatPlusMinus, type Measurement, type Periodicity } from '../measure/measurement';
import { measurementsCsv, measurementsJson } from '../measure/export';
import { TOOLS, toolOf, type MeasurementToolEntry } from '../measure/tools';
import { parseLine } from './sheets';
import { calibrationPartsText, INDICATED_MAGNIFICATION_REL, makeCalibration } from '../calibration/calibration';
import type { WindowKind } from '../measure/window';

const usage = `Usage: stratameter measure IMAGE [--nm-per-px X] [--rel-uncertainty U] [--region x,y,w,h]
                           [--alpha A] [--window hann|tukey|none] [--coverage-factor K] [--json | --csv]
                           [--report FILE.html]
       stratameter measure IMAGE --tool TOOL [--region x,y,w,h | --line x0,y0,x1,y1[,width]] ...

Finds the periodicities of IMAGE (or of a rectangle of it) in its power spectrum: lattice-fringe
and lamellar periods (d-spacings) with their directions, strongest first. A region with no
significant periodicity (amorphous) reports none.

Options:
  --nm-per-px X         pixel size in nm (replaces the file's own calibration; source 'manual')
  --rel-uncertainty U   relative standard uncertainty of that pixel size (default 0.05 = 5 %,
                        the usual reproducibility of an indicated TEM magnification)
  --region x,y,w,h      rectangle in pixels: left, top, width, height (default: the whole image)
  --tool TOOL           the measurement tool (default spectrum): ${TOOLS.map((t) => t.kind).join(', ')}
  --line x0,y0,x1,y1[,width]
                        the line for a tool that measures along a line (width in px, default 9)
  --alpha A             false-alarm probability for the whole spectrum (default 0.001)
  --window W            hann (default), tukey or none
  --coverage-factor K   k of the expanded uncertainty U = k·u (default 2, about 95 %)
  --json                one JSON object on standard output instead of a table
  --csv                 a CSV table instead (one row per period, the columns of every export)
  --report FILE.html    also write the report of the image: one self-contained HTML file (the
                        image with the measurement and a scale bar, results, calibration and its
                        source, uncertainty statement, version and recipe) that prints to A4

Angles: direction of the fringe normal in degrees, 0 to 180, counter-clockwise from +x as the
image is shown (x right, y up). Each ± is an expanded uncertainty U = k·u; the line below the
table says what it contains (statistical, local variation, method, calibration). The JSON gives
every part as a standard uncertainty (k = 1) in its own field.
`;

/** The JSON shape printed by `measure --json`. */
export interface MeasureReport {
  file: string;
  widthPx: number;
  heightPx: number;
  /** The pixel size used, with its uncertainty parts, or null. */
  calibration: Calibration | null;
  coverageFactorK: number;
  /** Each periodicity: the record's pixel values and parts, and its budget in nm (or px when uncalibrated). */
  periodicities: (Periodicity & { budget: Record<string, number | string> })[];
  /** The measurement record itself (version 2). */
  measurement: Measurement;
}

function positiveNumber(name: string, text: string): number {
  const v = Number(text);
  if (!Number.isFinite(v) || v <= 0) throw new UsageError(`--${name} must be a positive number, got '${text}'`);
  return v;
}

/** Parses "x,y,w,h" into integers. */
export function parseRegion(text: string): { x: number; y: number; width: number; height: number } {
  const parts = text.split(',').map((s) => s.trim());
  const nums = parts.map(Number);
  if (parts.length !== 4 || nums.some((n, i) => !Number.isInteger(n) || n < 0 || parts[i] === '')) {
    throw new UsageError(`--region must be four non-negative integers x,y,w,h, got '${text}'`);
  }
  const [x, y, width, height] = nums;
  return { x, y, width, height };
}

/** Builds the JSON report from a measurement. */
export function measureReport(file: string, image: GreyImage, m: Measurement, k: number = DEFAULT_COVERAGE_FACTOR): MeasureReport {
  // each period's budget as in the one JSON form of measurements (src/measure/export.ts)
  const budgets = measurementsJson([m], k).measurements[0].budgets;
  return {
    file,
    widthPx: image.width,
    heightPx: image.height,
    calibration: m.calibration,
    coverageFactorK: k,
    periodicities: m.periodicities.map((p, i) => ({ ...p, budget: budgets[i] })),
    measurement: m,
  };
}

/** The report as a readable table. */
export function formatMeasure(r: MeasureReport, notes: string[]): string {
  const c = r.calibration;
  const k = r.coverageFactorK;
  const lines = [`file         ${r.file} (${r.widthPx} × ${r.heightPx} px)`];
  lines.push(
    c
      ? `calibration  ${Number(c.nmPerPx.toPrecision(6))} nm per pixel, u = ${Number((c.relUncertainty * 100).toPrecision(2))} % (source: ${c.source}; ${calibrationPartsText(c)})`
      : 'calibration  none (periods in px only; set one with --nm-per-px)',
  );
  if (r.periodicities.length === 0) {
    lines.push('', 'no significant periodicity in this region');
  } else {
    const budgets = r.periodicities.map((p) => expressPeriod(p, c, k));
    const pxBudgets = r.periodicities.map((p) => expressPeriod(p, null, k));
    const rows = r.periodicities.map((p, i) => [
      String(i + 1),
      formatPlusMinus(p.periodPx, pxBudgets[i].expanded),
      c ? formatPlusMinus(budgets[i].value, budgets[i].expanded) : '—',
      p.angleDeg.toFixed(2),
      Number(p.strength.toPrecision(3)).toString(),
      p.flags.join(', '),
    ]);
    const head = ['#', 'd (px)', 'd (nm)', 'angle (°)', 'strength', 'doubts'];
    const widths = head.map((h, j) => Math.max(h.length, ...rows.map((row) => row[j].length)));
    const fmt = (row: string[]) => row.map((cell, j) => (j === 0 ? cell.padStart(widths[j]) : cell.padEnd(widths[j]))).join('  ').trimEnd();
    lines.push('', fmt(head), ...rows.map(fmt));
    const contains = [...new Set(budgets.map((b) => budgetContents(b)))].join(' / ');
    lines.push('', `± is the expanded uncertainty U = k·u with k = ${k}; it contains: ${contains}.`);
    if (r.periodicities.some((p) => p.flags.length)) lines.push('doubts: a period with a doubt is never ranked first; see the notes.');
  }
  for (const n of notes) lines.push(`note: ${n}`);
  lines.push('Results inform research; they do not replace an accredited calibration.');
  return `${lines.join('\n')}\n`;
}

export const command: CliCommand = {
  name: 'measure',
  summary: 'periods (d-spacings) and directions in an image region, from its power spectrum',
  usage,
  async run(args: string[], io: CliIo): Promise<number> {
    const { positional, options, flags } = parseArgs(args, {
      values: ['nm-per-px', 'rel-uncertainty', 'region', 'alpha', 'window', 'coverage-factor', 'tool', 'line', 'report'],
      booleans: ['json', 'csv'],
    });
    if (positional.length !== 1) throw new UsageError(`expected one IMAGE, got ${positional.length}\n\n${usage}`);
    if (flags.has('json') && flags.has('csv')) throw new UsageError('choose one of --json and --csv');
    const file = positional[0];
    if (options.has('rel-uncertainty') && !options.has('nm-per-px')) {
      throw new UsageError('--rel-uncertainty needs --nm-per-px');
    }
    let manual: Calibration | null = null;
    if (options.has('nm-per-px')) {
      const nmPerPx = positiveNumber('nm-per-px', options.get('nm-per-px')!);
      const rel = options.has('rel-uncertainty') ? Number(options.get('rel-uncertainty')) : INDICATED_MAGNIFICATION_REL;
      if (!Number.isFinite(rel) || rel < 0 || rel >= 1) {
        throw new UsageError(`--rel-uncertainty must be a number in [0, 1), got '${options.get('rel-uncertainty')}'`);
      }
      manual = makeCalibration(nmPerPx, 'manual', 'given on the command line', [
        { name: options.has('rel-uncertainty') ? 'stated by the user' : 'indicated magnification (no uncertainty given)', rel, type: 'B' },
      ]);
    }
    const k = coverageFactorOption(options.get('coverage-factor'));
    let tool: MeasurementToolEntry;
    try {
      tool = toolOf(options.get('tool') ?? 'spectrum');
    } catch (e) {
      throw new UsageError(`--tool: ${(e as Error).message}`);
    }
    if (tool.target === 'line' && !options.has('line')) throw new UsageError(`the ${tool.kind} tool measures along a line: give --line x0,y0,x1,y1[,width]`);
    if (tool.target === 'rect' && options.has('line')) throw new UsageError(`the ${tool.kind} tool measures a region: give --region, not --line`);
    if (tool.target === 'line' && options.has('region')) throw new UsageError(`the ${tool.kind} tool measures along a line: give --line, not --region`);
    const line = options.has('line') ? parseLine(options.get('line')!) : null;
    const region = options.has('region') ? parseRegion(options.get('region')!) : null;
    const alpha = options.has('alpha') ? Number(options.get('alpha')) : undefined;
    if (alpha !== undefined && !(alpha > 0 && alpha < 1)) throw new UsageError(`--alpha must be in (0, 1), got '${options.get('alpha')}'`);
    const window = options.get('window') as WindowKind | undefined;
    if (window !== undefined && !['hann', 'tukey', 'none'].includes(window)) {
      throw new UsageError(`--window must be hann, tukey or none, got '${window}'`);
    }
    let image: GreyImage;
    try {
      image = openImageFile(file);
    } catch (e) {
      if (e instanceof ImageFileError) {
        io.err(`stratameter measure: cannot read ${file}: ${e.code || e.reason}\n`);
        return 1;
      }
      if (e instanceof ImageReadError) {
        io.err(`stratameter measure: ${e.message}\n`);
        return 1;
      }
      throw e;
    }
    if (manual) image = { ...image, calibration: manual };
    const r = region ?? { x: 0, y: 0, width: image.width, height: image.height };
    try {
      if (tool.kind === 'spectrum' || tool.kind === 'rings') checkSpectrumRegion(Math.min(r.width, image.width - r.x), Math.min(r.height, image.height - r.y), r, 'cli');
    } catch (e) {
      if (e instanceof RegionTooLargeError) {
        io.err(`stratameter measure: ${file}: ${e.message}\n`);
        return 1;
      }
    }
    if (line) {
      for (const [name, v, max] of [['x0', line.x0, image.width], ['x1', line.x1, image.width], ['y0', line.y0, image.height], ['y1', line.y1, image.height]] as const) {
        if (v < 0 || v > max - 1) throw new UsageError(`--line ${name} = ${v} lies outside the ${image.width} × ${image.height} image`);
      }
    }
    let m: Measurement;
    try {
      // the tool from the measurement-tool registry (src/measure/tools.ts)
      const target = line ? { kind: 'line' as const, ...line } : region ? { kind: 'rect' as const, ...region } : null;
      const settings = tool.kind === 'spectrum' ? { alpha, window } : tool.kind === 'rings' ? { alpha } : {};
      m = await tool.run(image, target, settings, { fileName: file });
      if (m.fileName !== file) m = { ...m, fileName: file };
    } catch (e) {
      if (e instanceof RangeError) throw new UsageError(e.message);
      throw e;
    }
    const report = measureReport(file, image, m, k);
    const reportFile = options.get('report');
    if (reportFile !== undefined) {
      if (!/\.html?$/i.test(reportFile)) throw new UsageError(`--report names an HTML file (.html), got '${reportFile}'`);
      const { imageReportHtml } = await import('../figure/report');
      const plots = [];
      // a profile record carries its samples: the report shows the profile plot
      const samples = m.detail?.samples as { distancePx?: (number | null)[]; mean?: (number | null)[]; standardError?: (number | null)[] } | undefined;
      if (m.region?.kind === 'line' && samples?.distancePx && samples.mean && samples.mean.length >= 2) {
        const { profilePlot } = await import('../figure/period-plots');
        const num = (a: (number | null)[] | undefined) => Float64Array.from(a ?? [], (v) => (v === null ? NaN : v));
        const r = m.region;
        plots.push(profilePlot({ distancePx: num(samples.distancePx), mean: num(samples.mean), standardError: num(samples.standardError),
          lengthPx: Math.hypot(r.x1 - r.x0, r.y1 - r.y0), angleDeg: Number(m.detail?.lineAngleDeg ?? 0), realSpace: null }, m.calibration, r.widthPx));
      }
      const html = imageReportHtml({ image, fileName: basename(file), records: [m], plots, k, software: `Stratameter ${PROGRAM_VERSION}` });
      try {
        await writeFile(reportFile, html);
      } catch (e) {
        io.err(`stratameter measure: cannot write ${reportFile}: ${(e as NodeJS.ErrnoException).code ?? (e as Error).message}\n`);
        return 1;
      }
      io.err(`report written to ${reportFile}\n`);
    }
    if (flags.has('json')) io.out(`${JSON.stringify(report)}\n`);
    else if (flags.has('csv')) io.out(measurementsCsv([m], { k }));
    else io.out(formatMeasure(report, m.notes));
    for (const w of image.warnings) io.err(`warning: ${w}\n`);
    return 0;
  },
};
