/**
 * `stratameter calibrate IMAGE [--json]`: the pixel size of an image from its metadata, its
 * burned-in scale bar (found and read automatically, offline) or an internal lattice standard,
 * with a warning when two of them disagree.
 */
import { readFile } from 'node:fs/promises';
import type { CliCommand, CliIo } from './command';
import { parseArgs, UsageError } from './command';
import { decodeImage, ImageReadError } from '../image/decode';
import type { Calibration } from '../image/grey-image';
import { findScaleBar, type Box, type ScaleBar } from '../calibration/scale-bar';
import { checkMicroPrefix, LABEL_CHARACTERS, parseScaleLabel, prepareLabelForOcr, scaleBarCalibration } from '../calibration/label';
import { compareCalibrations } from '../calibration/compare';
import { calibrateFromStandard, type CustomSpacing, LATTICE_STANDARDS, latticeStandard, standardPeriodFromSpots, type StandardPeriod } from '../calibration/standards';

const usage = `Usage: stratameter calibrate IMAGE [options]

Finds the pixel size of IMAGE: from the file's metadata, from a burned-in scale bar (its length
measured to a fraction of a pixel and its label read by OCR, offline), or from a lattice
standard measured in a region. When two sources disagree by more than their combined
uncertainty (k = 2) a warning shows both. A label that cannot be read is never guessed: give
it with --label.

Options:
  --json                 one JSON object on standard output instead of text
  --label TEXT           the scale bar's label as you read it, e.g. "200 nm" (skips OCR)
  --no-ocr               find the bar but do not read its label
  --standard ID          calibrate from a lattice standard (see --list-standards) ...
  --spacing D±U          ... or from a spacing of your own, nm, with its standard uncertainty
                         (e.g. 1.25±0.01; also written 1.25+-0.01)
  --region X,Y,W,H       ... measured in this rectangle (px) of the image's power spectrum:
                         every spot of the strongest spot's family is used
  --period-px P          ... or with the period you measured yourself, px
  --period-uncertainty-px U   standard uncertainty of --period-px (default 1 % of P)
  --list-standards       print the built-in lattice standards and exit
`;

/** The JSON shape printed by `calibrate --json`. */
export interface CalibrateReport {
  file: string;
  scaleBar: {
    lengthPx: number;
    uncertaintyPx: number;
    x0: number;
    y0: number;
    x1: number;
    y1: number;
    polarity: 'bright' | 'dark';
    label: { value: number; unit: string; text: string; confidence: number } | null;
    /** What OCR read when it could not be parsed (null when OCR was not run or succeeded). */
    unreadText: string | null;
    labelBox: Box | null;
    stripBox: Box | null;
  } | null;
  nmPerPx: number | null;
  source: string | null;
  relUncertainty: number | null;
  detail: string | null;
  /** Every calibration found, by source. */
  candidates: { source: string; nmPerPx: number; relUncertainty: number; detail: string }[];
  /** Disagreement between the sources, or null. */
  warning: string | null;
}

function parseBox(text: string): { x: number; y: number; width: number; height: number } {
  const v = text.split(',').map((s) => Number(s.trim()));
  if (v.length !== 4 || !v.every((n) => Number.isInteger(n)) || v[2] < 1 || v[3] < 1 || v[0] < 0 || v[1] < 0) {
    throw new UsageError(`--region must be four non-negative integers X,Y,W,H with W, H ≥ 1, got '${text}'`);
  }
  return { x: v[0], y: v[1], width: v[2], height: v[3] };
}

function positive(name: string, text: string | undefined): number {
  const v = Number(text);
  if (!(v > 0) || !Number.isFinite(v)) throw new UsageError(`--${name} must be a positive number, got '${text}'`);
  return v;
}

function sig(v: number): string {
  return Number(v.toPrecision(6)).toString();
}

function formatReport(r: CalibrateReport): string {
  const lines = [`file           ${r.file}`];
  const b = r.scaleBar;
  if (b) {
    lines.push(`scale bar      ${sig(b.lengthPx)} ± ${sig(b.uncertaintyPx)} px, ${b.polarity}, from (${sig(b.x0)}, ${sig(b.y0)}) to (${sig(b.x1)}, ${sig(b.y1)})`);
    if (b.label) lines.push(`label          "${b.label.text}" = ${b.label.value} ${b.label.unit} (confidence ${b.label.confidence.toFixed(2)})`);
    else if (b.unreadText !== null) lines.push(`label          not readable (OCR gave "${b.unreadText}"); give it with --label`);
    else lines.push('label          not read; give it with --label');
    if (b.stripBox) lines.push(`info strip     [${b.stripBox.join(', ')}] (x, y, w, h)`);
  } else {
    lines.push('scale bar      none found');
  }
  if (r.nmPerPx !== null) {
    lines.push(`pixel size     ${sig(r.nmPerPx)} nm per pixel, ±${sig(100 * r.relUncertainty!)} % (source: ${r.source})`);
    lines.push(`               ${r.detail}`);
  } else {
    lines.push('pixel size     unknown: no metadata, no readable scale bar (try --label, --standard or a manual calibration)');
  }
  for (const c of r.candidates) {
    if (c.source !== r.source) lines.push(`also           ${sig(c.nmPerPx)} nm per pixel, ±${sig(100 * c.relUncertainty)} % (source: ${c.source})`);
  }
  if (r.warning) lines.push(`WARNING        ${r.warning}`);
  return lines.join('\n') + '\n';
}

function listStandards(): string {
  const w = Math.max(...LATTICE_STANDARDS.map((s) => s.id.length));
  return (
    LATTICE_STANDARDS.map(
      (s) => `${s.id.padEnd(w)}  ${sig(s.dNm).padStart(9)} nm  ${s.uncertaintyNm === null ? '(no u)   ' : `± ${sig(s.uncertaintyNm)}`.padEnd(9)}  ${s.name}; ${s.source}`,
    ).join('\n') + '\n'
  );
}

export const command: CliCommand = {
  name: 'calibrate',
  summary: 'pixel size from metadata, a burned-in scale bar (read offline) or a lattice standard',
  usage,
  async run(args: string[], io: CliIo): Promise<number> {
    const { positional, options, flags } = parseArgs(args, {
      values: ['label', 'standard', 'spacing', 'region', 'period-px', 'period-uncertainty-px'],
      booleans: ['json', 'no-ocr', 'list-standards'],
    });
    if (flags.has('list-standards')) {
      io.out(listStandards());
      return 0;
    }
    if (positional.length !== 1) throw new UsageError(`expected one IMAGE file, got ${positional.length} arguments\n${usage}`);
    const file = positional[0];
    if (options.has('standard') && options.has('spacing')) throw new UsageError('give --standard ID or --spacing D±U, not both');
    const spacing = options.has('spacing') ? parseSpacing(options.get('spacing')!) : undefined;
    const standardId = options.get('standard') ?? (spacing ? 'custom' : undefined);
    if (options.has('standard')) {
      try {
        latticeStandard(standardId!); // unknown ids fail before any work
      } catch (e) {
        throw new UsageError((e as Error).message);
      }
    }
    if (standardId === undefined && (options.has('region') || options.has('period-px'))) {
      throw new UsageError('--region and --period-px need --standard ID or --spacing D±U');
    }
    if (standardId !== undefined && !options.has('region') && !options.has('period-px')) {
      throw new UsageError(`--${spacing ? 'spacing' : 'standard'} needs --region X,Y,W,H or --period-px P`);
    }
    const typedLabel = options.get('label');
    if (typedLabel !== undefined && !parseScaleLabel(typedLabel)) {
      throw new UsageError(`--label '${typedLabel}' is not a number with a unit (pm, Å, nm or µm), e.g. "200 nm"`);
    }

    let bytes: Uint8Array;
    try {
      bytes = new Uint8Array(await readFile(file));
    } catch (e) {
      const code = (e as NodeJS.ErrnoException).code;
      const reason = code === 'ENOENT' ? 'no such file' : code === 'EISDIR' ? 'is a directory' : (e as Error).message;
      throw new ImageReadError(file, reason);
    }
    const image = decodeImage(bytes, file);
    const candidates: Calibration[] = [];
    if (image.calibration) candidates.push(image.calibration);

    // the scale bar
    const bar: ScaleBar | null = findScaleBar(image);
    let label: NonNullable<CalibrateReport['scaleBar']>['label'] = null;
    let unreadText: string | null = null;
    if (bar) {
      if (typedLabel !== undefined) {
        const p = parseScaleLabel(typedLabel)!;
        label = { value: p.value, unit: p.unit, text: typedLabel, confidence: 1 };
      } else if (!flags.has('no-ocr') && bar.labelBox) {
        const { createTextReader } = await import('../calibration/ocr');
        const reader = await createTextReader({ whitelist: LABEL_CHARACTERS });
        try {
          const raster = prepareLabelForOcr(image, bar.labelBox);
          const ocr = await reader.read(raster);
          const text = checkMicroPrefix(raster, ocr.text, ocr.symbols);
          const p = parseScaleLabel(text);
          if (p) label = { value: p.value, unit: p.unit, text, confidence: Math.min(p.confidence, ocr.confidence) };
          else unreadText = ocr.text;
        } finally {
          await reader.close();
        }
      }
      if (label) candidates.push(scaleBarCalibration(bar, parseScaleLabel(`${label.value} ${label.unit}`)!.nm));
    }

    // a lattice standard
    if (standardId !== undefined) {
      let measured: StandardPeriod;
      if (options.has('period-px')) {
        const periodPx = positive('period-px', options.get('period-px'));
        const uPx = options.has('period-uncertainty-px') ? positive('period-uncertainty-px', options.get('period-uncertainty-px')) : 0.01 * periodPx;
        measured = { periodPx, statisticalPx: uPx, spreadPx: 0, spots: 1 };
      } else {
        const region = parseBox(options.get('region')!);
        if (region.x + region.width > image.width || region.y + region.height > image.height) {
          throw new UsageError(`--region ${options.get('region')} reaches outside the ${image.width} × ${image.height} image`);
        }
        const { measureRegion } = await import('../measure/measure-region');
        const m = await measureRegion(image, region, { fileName: file });
        const family = standardPeriodFromSpots(m.periodicities.filter((p) => p.flags.length === 0));
        if (!family) throw new Error(`no significant periodicity in region ${options.get('region')}: choose a region with clear fringes of the standard`);
        measured = family;
      }
      candidates.push(calibrateFromStandard(measured, spacing ?? standardId));
    }

    // the choice: a standard measured in the image, else the file's metadata, else the bar
    const order = ['standard', 'metadata', 'scale-bar'];
    const chosen = [...candidates].sort((a, b) => order.indexOf(a.source) - order.indexOf(b.source))[0] ?? null;
    const warnings: string[] = [];
    for (const c of candidates) {
      if (chosen && c !== chosen) {
        const w = compareCalibrations(chosen, c).warning;
        if (w) warnings.push(w);
      }
    }
    const report: CalibrateReport = {
      file,
      scaleBar: bar
        ? {
            lengthPx: bar.lengthPx,
            uncertaintyPx: bar.uncertaintyPx,
            x0: bar.x0,
            y0: bar.y0,
            x1: bar.x1,
            y1: bar.y1,
            polarity: bar.polarity,
            label,
            unreadText,
            labelBox: bar.labelBox,
            stripBox: bar.stripBox,
          }
        : null,
      nmPerPx: chosen?.nmPerPx ?? null,
      source: chosen?.source ?? null,
      relUncertainty: chosen?.relUncertainty ?? null,
      detail: chosen?.detail ?? null,
      candidates: candidates.map((c) => ({ source: c.source, nmPerPx: c.nmPerPx, relUncertainty: c.relUncertainty, detail: c.detail })),
      warning: warnings.length ? warnings.join('; ') : null,
    };
    io.out(flags.has('json') ? JSON.stringify(report, null, 2) + '\n' : formatReport(report));
    return 0;
  },
};

/**
 * A spacing with its standard uncertainty as typed: "1.25±0.01" or "1.25+-0.01" (nm).
 * @throws UsageError naming the option when the text is not a positive number with a non-negative ±
 */
export function parseSpacing(text: string): CustomSpacing {
  const m = /^\s*([0-9]*\.?[0-9]+(?:[eE][-+]?\d+)?)\s*(?:±|\+-|\+\/-)\s*([0-9]*\.?[0-9]+(?:[eE][-+]?\d+)?)\s*(?:nm)?\s*$/.exec(text);
  if (!m) throw new UsageError(`--spacing must be a spacing in nm with its standard uncertainty, e.g. 1.25±0.01, got '${text}'`);
  const dNm = Number(m[1]);
  const uncertaintyNm = Number(m[2]);
  if (!(dNm > 0)) throw new UsageError(`--spacing must be positive, got '${text}'`);
  return { dNm, uncertaintyNm, name: `spacing ${m[1]} ± ${m[2]} nm` };
}
