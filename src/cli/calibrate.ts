/**
 * `stratameter calibrate IMAGE [--json]`: the pixel size of an image from its metadata, its
 * burned-in scale bar (found and read automatically, offline) or an internal lattice standard,
 * with a warning when two of them disagree.
 */
import type { CliCommand, CliIo } from './command';
import { parseArgs, UsageError } from './command';
import { openImageFile } from './open-image';
import type { Calibration } from '../image/grey-image';
import { findScaleBar, type Box, type ScaleBar } from '../calibration/scale-bar';
import { LABEL_CHARACTERS, parseScaleLabel, scaleBarCalibration } from '../calibration/label';
import { readScaleBar } from '../calibration/label-read';
import { calibrateTwoAxis, fitPixelMetric, latticeSpotsOf, PROJECTED_LATTICES, userLattice, type AffineCalibration, type ProjectedLattice } from '../calibration/affine';
import { compareCalibrations } from '../calibration/compare';
import { calibrateFromStandard, type CustomSpacing, LATTICE_STANDARDS, latticeStandard, standardPeriodFromSpots, type StandardPeriod } from '../calibration/standards';

const usage = `Usage: stratameter calibrate IMAGE [options]

Finds the pixel size of IMAGE: from the file's metadata, from a burned-in scale bar (its length
measured to a fraction of a pixel and its label read by OCR, offline), or from a lattice
standard measured in a region. When two sources disagree by more than their combined
uncertainty (k = 2) a warning shows both. The label is read by two independent readers (the
OCR engine over several crops and scales, and a glyph reader) that must agree on a round value
(1, 2, 2.5, 3 or 5 × 10ⁿ); otherwise it is never guessed: what was read and why it was not
taken are shown, and you give it with --label.

A zone-axis standard (si-110, si-001, au-001, au-110, al-001, graphite-001) measured in a region
gives a two-axis calibration: nm per px along x and along y and the shear of the pixel grid (scan
distortion), from two or more non-parallel spots of the lattice.

Options:
  --json                 one JSON object on standard output instead of text
  --label TEXT           the scale bar's label as you read it, e.g. "200 nm" (skips OCR)
  --no-ocr               find the bar but do not read its label
  --bar-box X,Y,W,H      look for the bar only in this rectangle (px), with the contrast checks
                         relaxed there: for a bar drawn on a busy picture
  --standard ID          calibrate from a lattice standard (see --list-standards; a zone-axis
                         id gives two axes and shear) ...
  --spacing D±U          ... or from a spacing of your own, nm, with its standard uncertainty
                         (e.g. 1.25±0.01; also written 1.25+-0.01); with --region and three or
                         more non-parallel spots of that spacing, two axes and shear
  --cell D1±U1,D2±U2,ANGLE  ... or from a zone-axis cell of your own (two spacings in nm with
                         their standard uncertainties, and the angle in degrees between their
                         plane normals): two axes and shear, with --region
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
    /** What was read when the label was not taken (null when it was read or not tried). */
    unreadText: string | null;
    /** Why the label was not taken and what to do (null when it was read or not tried). */
    question: string | null;
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
  /** The two-axis calibration from a zone-axis standard or a spacing with three or more spot directions, or null. */
  twoAxis: {
    nmPerPxX: number;
    uNmPerPxX: number;
    nmPerPxY: number;
    uNmPerPxY: number;
    stretchPct: number;
    uStretchPct: number;
    shearDeg: number;
    uShearDeg: number;
    birgeRatio: number;
    spots: { label: string; periodPx: number; angleDeg: number; dNm: number; correctedNm: number; uCorrectedNm: number }[];
  } | null;
}

function parseBox(text: string, name = 'region'): { x: number; y: number; width: number; height: number } {
  const v = text.split(',').map((s) => Number(s.trim()));
  if (v.length !== 4 || !v.every((n) => Number.isInteger(n)) || v[2] < 1 || v[3] < 1 || v[0] < 0 || v[1] < 0) {
    throw new UsageError(`--${name} must be four non-negative integers X,Y,W,H with W, H ≥ 1, got '${text}'`);
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
    else if (b.question !== null) lines.push(`label          not taken: ${b.question} (--label)`);
    else if (b.unreadText !== null) lines.push(`label          not readable (read "${b.unreadText}"); give it with --label`);
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
  const t = r.twoAxis;
  if (t) {
    lines.push(`two axes       x ${sig(t.nmPerPxX)} ± ${sig(2 * t.uNmPerPxX)} nm/px, y ${sig(t.nmPerPxY)} ± ${sig(2 * t.uNmPerPxY)} nm/px (k = 2, the spots' periods and directions)`);
    lines.push(`distortion     stretch (y/x − 1) ${t.stretchPct.toFixed(3)} ± ${(2 * t.uStretchPct).toFixed(3)} %, shear ${t.shearDeg.toFixed(3)} ± ${(2 * t.uShearDeg).toFixed(3)}° (k = 2); Birge ratio ${t.birgeRatio.toFixed(2)}`);
    for (const q of t.spots) lines.push(`  spot ${q.label.padEnd(8)} ${q.periodPx.toFixed(3)} px at ${q.angleDeg.toFixed(2)}°: ${q.correctedNm.toFixed(5)} ± ${(2 * q.uCorrectedNm).toFixed(5)} nm after correction (lattice ${q.dNm.toFixed(5)} nm)`);
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
      values: ['label', 'standard', 'spacing', 'cell', 'region', 'period-px', 'period-uncertainty-px', 'bar-box'],
      booleans: ['json', 'no-ocr', 'list-standards'],
    });
    if (flags.has('list-standards')) {
      io.out(listStandards());
      return 0;
    }
    if (positional.length !== 1) throw new UsageError(`expected one IMAGE file, got ${positional.length} arguments\n${usage}`);
    const file = positional[0];
    const given = ['standard', 'spacing', 'cell'].filter((o) => options.has(o));
    if (given.length > 1) throw new UsageError(`give one of --standard ID, --spacing D±U or --cell D1±U1,D2±U2,ANGLE, not ${given.map((o) => `--${o}`).join(' and ')}`);
    const spacing = options.has('spacing') ? parseSpacing(options.get('spacing')!) : undefined;
    const cell = options.has('cell') ? parseCell(options.get('cell')!) : undefined;
    if (cell && !options.has('region')) throw new UsageError('--cell needs --region X,Y,W,H with two or more spots of the cell');
    const standardId = options.get('standard') ?? (spacing ? 'custom' : cell ? 'cell' : undefined);
    if (options.has('standard')) {
      try {
        if (!PROJECTED_LATTICES.some((l) => l.id === standardId)) latticeStandard(standardId!); // unknown ids fail before any work
      } catch (e) {
        throw new UsageError(`${(e as Error).message}; zone-axis standards for two axes: ${PROJECTED_LATTICES.map((l) => l.id).join(', ')}`);
      }
      if (PROJECTED_LATTICES.some((l) => l.id === standardId) && !options.has('region')) throw new UsageError(`--standard ${standardId} (a zone-axis lattice) needs --region X,Y,W,H with two or more of its spots`);
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

    const image = openImageFile(file);
    const candidates: Calibration[] = [];
    if (image.calibration) candidates.push(image.calibration);

    // the scale bar: its label read by two readers that must agree, or given with --label
    let barOptions = {};
    if (options.has('bar-box')) {
      const b = parseBox(options.get('bar-box')!, 'bar-box');
      if (b.x + b.width > image.width || b.y + b.height > image.height) throw new UsageError(`--bar-box ${options.get('bar-box')} reaches outside the ${image.width} × ${image.height} image`);
      barOptions = { searchBox: [b.x, b.y, b.width, b.height] };
    }
    let bar: ScaleBar | null = null;
    let label: NonNullable<CalibrateReport['scaleBar']>['label'] = null;
    let unreadText: string | null = null;
    let question: string | null = null;
    if (typedLabel === undefined && !flags.has('no-ocr')) {
      const { createTextReader } = await import('../calibration/ocr');
      const reader = await createTextReader({ whitelist: LABEL_CHARACTERS });
      try {
        const r = await readScaleBar(image, reader, barOptions);
        bar = r.bar;
        if (r.label && r.calibration) {
          label = { value: r.label.value, unit: r.label.unit, text: r.label.text, confidence: r.label.ocrConfidence };
          candidates.push(r.calibration);
        } else if (bar) {
          unreadText = r.ocrText;
          question = r.question;
        }
      } finally {
        await reader.close();
      }
    } else {
      bar = findScaleBar(image, barOptions);
      if (bar && typedLabel !== undefined) {
        const p = parseScaleLabel(typedLabel)!;
        label = { value: p.value, unit: p.unit, text: typedLabel, confidence: 1 };
        candidates.push(scaleBarCalibration(bar, p.nm));
      }
    }

    // a lattice standard
    let twoAxis: AffineCalibration | null = null;
    if (standardId !== undefined) {
      let measured: StandardPeriod | undefined;
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
        const spots = latticeSpotsOf(m.periodicities);
        const zone = cell ?? PROJECTED_LATTICES.find((l) => l.id === standardId);
        if (zone) {
          try {
            twoAxis = calibrateTwoAxis(spots, zone);
          } catch (e) {
            if (e instanceof RangeError) throw new UsageError(`${cell ? '--cell' : `--standard ${zone.id}`} in region ${options.get('region')}: ${e.message}`);
            throw e;
          }
        } else if (spacing) {
          // three or more non-parallel spots of the one spacing: two axes as well
          const family = spots.filter((q) => Math.abs(q.periodPx / spots[0].periodPx - 1) < 0.06);
          const dirs = family.filter((q, i) => family.findIndex((o) => Math.min(Math.abs(o.angleDeg - q.angleDeg), 180 - Math.abs(o.angleDeg - q.angleDeg)) < 10) === i);
          if (dirs.length >= 3) twoAxis = fitPixelMetric({ spots: dirs, dNm: spacing.dNm }, { relUncertainty: spacing.uncertaintyNm / spacing.dNm, name: spacing.name ?? `spacing ${spacing.dNm} nm` });
        }
        if (!twoAxis) {
          const family = standardPeriodFromSpots(m.periodicities.filter((p) => p.flags.length === 0));
          if (!family) throw new Error(`no significant periodicity in region ${options.get('region')}: choose a region with clear fringes of the standard`);
          measured = family;
        }
      }
      if (twoAxis) candidates.push(twoAxis.calibration);
      else candidates.push(calibrateFromStandard(measured!, spacing ?? standardId));
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
            question,
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
      twoAxis: twoAxis
        ? { nmPerPxX: twoAxis.nmPerPxX, uNmPerPxX: twoAxis.uNmPerPxX, nmPerPxY: twoAxis.nmPerPxY, uNmPerPxY: twoAxis.uNmPerPxY, stretchPct: twoAxis.stretchPct, uStretchPct: twoAxis.uStretchPct, shearDeg: twoAxis.shearDeg, uShearDeg: twoAxis.uShearDeg, birgeRatio: twoAxis.birgeRatio, spots: twoAxis.residuals }
        : null,
    };
    io.out(flags.has('json') ? JSON.stringify(report, null, 2) + '\n' : formatReport(report));
    return 0;
  },
};

/**
 * A zone-axis cell as typed: "D1±U1,D2±U2,ANGLE" (nm, nm, degrees between the plane normals).
 * @throws UsageError naming the text when it does not parse or the cell is not valid
 */
export function parseCell(text: string): ProjectedLattice {
  const n = '([0-9]*\\.?[0-9]+(?:[eE][-+]?\\d+)?)';
  const pm = '\\s*(?:±|\\+-|\\+\\/-)\\s*';
  const m = new RegExp(`^\\s*${n}${pm}${n}\\s*,\\s*${n}${pm}${n}\\s*,\\s*${n}\\s*$`).exec(text);
  if (!m) throw new UsageError(`--cell must be D1±U1,D2±U2,ANGLE (nm, nm, degrees), e.g. 0.3136±0.0003,0.3136±0.0003,70.53, got '${text}'`);
  try {
    return userLattice(Number(m[1]), Number(m[2]), Number(m[3]), Number(m[4]), Number(m[5]));
  } catch (e) {
    throw new UsageError(`--cell ${text}: ${(e as Error).message}`);
  }
}

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
