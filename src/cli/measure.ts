/**
 * `stratameter measure IMAGE`: the periodicities (lattice-fringe and lamellar periods) of an image
 * or a rectangular region of it, strongest first, each as d ± u.
 */
import { readFile } from 'node:fs/promises';
import type { CliCommand, CliIo } from './command';
import { parseArgs, UsageError } from './command';
import { decodeImage, ImageReadError } from '../image/decode';
import type { Calibration, GreyImage } from '../image/grey-image';
import { measureRegion } from '../measure/measure-region';
import type { Measurement } from '../measure/measurement';
import type { WindowKind } from '../measure/window';

/**
 * Relative standard uncertainty given to a pixel size typed by hand when --rel-uncertainty is not
 * set: 5 %, the reproducibility of an indicated TEM magnification (EMSA abstract "Magnification
 * determination for high resolution electron microscopy", reference-values §5).
 */
export const MANUAL_REL_UNCERTAINTY = 0.05;

const usage = `Usage: stratameter measure IMAGE [--nm-per-px X] [--rel-uncertainty U] [--region x,y,w,h]
                           [--alpha A] [--window hann|tukey|none] [--json]

Finds the periodicities of IMAGE (or of a rectangle of it) in its power spectrum: lattice-fringe
and lamellar periods (d-spacings) with their directions, strongest first. A region with no
significant periodicity (amorphous) reports none.

Options:
  --nm-per-px X         pixel size in nm (replaces the file's own calibration; source 'manual')
  --rel-uncertainty U   relative standard uncertainty of that pixel size (default 0.05 = 5 %,
                        the usual reproducibility of an indicated TEM magnification)
  --region x,y,w,h      rectangle in pixels: left, top, width, height (default: the whole image)
  --alpha A             false-alarm probability for the whole spectrum (default 0.001)
  --window W            hann (default), tukey or none
  --json                one JSON object on standard output instead of a table

Angles: direction of the fringe normal in degrees, 0 to 180, counter-clockwise from +x as the
image is shown (x right, y up). Uncertainties are standard uncertainties (k = 1); in nm they
include the pixel size's uncertainty.
`;

/** The JSON shape printed by `measure --json`. */
export interface MeasureReport {
  file: string;
  width: number;
  height: number;
  calibration: { nmPerPx: number | null; source: string | null; relUncertainty: number | null };
  periodicities: {
    periodPx: number;
    periodNm: number | null;
    angleDeg: number;
    uncertaintyPx: number;
    uncertaintyNm: number | null;
    strength: number;
  }[];
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
export function measureReport(file: string, image: GreyImage, m: Measurement): MeasureReport {
  const c = m.calibration;
  return {
    file,
    width: image.width,
    height: image.height,
    calibration: { nmPerPx: c?.nmPerPx ?? null, source: c?.source ?? null, relUncertainty: c?.relUncertainty ?? null },
    periodicities: m.periodicities.map((p) => ({
      periodPx: p.periodPx,
      periodNm: p.periodNm,
      angleDeg: p.angleDeg,
      uncertaintyPx: p.uncertaintyPx,
      uncertaintyNm: p.uncertaintyNm,
      strength: p.strength,
    })),
  };
}

/** "d ± u" with u to two significant digits and d to the same decimal place. */
export function formatPlusMinus(value: number, u: number): string {
  if (!Number.isFinite(u) || u <= 0) return `${Number(value.toPrecision(6))}`;
  const decimals = Math.max(0, Math.min(10, 1 - Math.floor(Math.log10(u))));
  return `${value.toFixed(decimals)} ± ${u.toFixed(decimals)}`;
}

/** The report as a readable table. */
export function formatMeasure(r: MeasureReport, notes: string[]): string {
  const c = r.calibration;
  const lines = [`file         ${r.file} (${r.width} × ${r.height} px)`];
  lines.push(
    c.nmPerPx !== null
      ? `calibration  ${Number(c.nmPerPx.toPrecision(6))} nm per pixel, ±${Number(((c.relUncertainty ?? 0) * 100).toPrecision(3))} % (source: ${c.source})`
      : 'calibration  none (periods in px only; set one with --nm-per-px)',
  );
  if (r.periodicities.length === 0) {
    lines.push('', 'no significant periodicity in this region');
  } else {
    const rows = r.periodicities.map((p, i) => [
      String(i + 1),
      formatPlusMinus(p.periodPx, p.uncertaintyPx),
      p.periodNm !== null && p.uncertaintyNm !== null ? formatPlusMinus(p.periodNm, p.uncertaintyNm) : '—',
      p.angleDeg.toFixed(2),
      Number(p.strength.toPrecision(3)).toString(),
    ]);
    const head = ['#', 'd (px)', 'd (nm)', 'angle (°)', 'strength'];
    const widths = head.map((h, j) => Math.max(h.length, ...rows.map((row) => row[j].length)));
    const fmt = (row: string[]) => row.map((cell, j) => (j === 0 ? cell.padStart(widths[j]) : cell.padEnd(widths[j]))).join('  ').trimEnd();
    lines.push('', fmt(head), ...rows.map(fmt));
  }
  for (const n of notes) lines.push(`note: ${n}`);
  return `${lines.join('\n')}\n`;
}

export const command: CliCommand = {
  name: 'measure',
  summary: 'periods (d-spacings) and directions in an image region, from its power spectrum',
  usage,
  async run(args: string[], io: CliIo): Promise<number> {
    const { positional, options, flags } = parseArgs(args, {
      values: ['nm-per-px', 'rel-uncertainty', 'region', 'alpha', 'window'],
      booleans: ['json'],
    });
    if (positional.length !== 1) throw new UsageError(`expected one IMAGE, got ${positional.length}\n\n${usage}`);
    const file = positional[0];
    if (options.has('rel-uncertainty') && !options.has('nm-per-px')) {
      throw new UsageError('--rel-uncertainty needs --nm-per-px');
    }
    let manual: Calibration | null = null;
    if (options.has('nm-per-px')) {
      const nmPerPx = positiveNumber('nm-per-px', options.get('nm-per-px')!);
      const rel = options.has('rel-uncertainty') ? Number(options.get('rel-uncertainty')) : MANUAL_REL_UNCERTAINTY;
      if (!Number.isFinite(rel) || rel < 0 || rel >= 1) {
        throw new UsageError(`--rel-uncertainty must be a number in [0, 1), got '${options.get('rel-uncertainty')}'`);
      }
      manual = { nmPerPx, source: 'manual', relUncertainty: rel, detail: 'given on the command line' };
    }
    const region = options.has('region') ? parseRegion(options.get('region')!) : null;
    const alpha = options.has('alpha') ? Number(options.get('alpha')) : undefined;
    if (alpha !== undefined && !(alpha > 0 && alpha < 1)) throw new UsageError(`--alpha must be in (0, 1), got '${options.get('alpha')}'`);
    const window = options.get('window') as WindowKind | undefined;
    if (window !== undefined && !['hann', 'tukey', 'none'].includes(window)) {
      throw new UsageError(`--window must be hann, tukey or none, got '${window}'`);
    }
    let bytes: Uint8Array;
    try {
      bytes = new Uint8Array(await readFile(file));
    } catch (e) {
      io.err(`stratameter measure: cannot read ${file}: ${(e as NodeJS.ErrnoException).code ?? (e as Error).message}\n`);
      return 1;
    }
    let image: GreyImage;
    try {
      image = decodeImage(bytes, file);
    } catch (e) {
      if (e instanceof ImageReadError) {
        io.err(`stratameter measure: ${e.message}\n`);
        return 1;
      }
      throw e;
    }
    if (manual) image = { ...image, calibration: manual };
    let m: Measurement;
    try {
      m = await measureRegion(image, region, { alpha, window, fileName: file });
    } catch (e) {
      if (e instanceof RangeError) throw new UsageError(e.message);
      throw e;
    }
    const report = measureReport(file, image, m);
    if (flags.has('json')) io.out(`${JSON.stringify(report)}\n`);
    else io.out(formatMeasure(report, m.notes));
    for (const w of image.warnings) io.err(`warning: ${w}\n`);
    return 0;
  },
};
