/**
 * Sheet and domain results as the shared `Measurement` record (for the store, the batch runner
 * and the exports). Plain JSON only in `detail`.
 */
import type { Calibration } from '../image/grey-image';
import { expressLength, noUncertainty, RECORD_VERSION, type Measurement, type Periodicity } from '../measure/measurement';
import type { AutoSheetsResult } from './detect';
import type { LineSheetsResult } from './line';
import type { DomainMapResult } from './domains';

/** One sheet as reported everywhere (CLI JSON, the sheets panel, exports). */
export interface SheetSummary {
  /** Number of layers. */
  layers: number;
  /** (last − first layer centre) + mean period, px. */
  thicknessPx: number;
  thicknessNm: number | null;
  /** Between the envelope's half-maximum crossings, nm. */
  edgeToEdgeNm: number | null;
  /** Mean layer period, px. */
  periodPx: number;
  periodNm: number | null;
  /** Direction of the layer normal, degrees in [0, 180), counter-clockwise from +x as shown. */
  angleDeg: number;
  /** Centre of the sheet in image pixels [x, y]. */
  centerPx: [number, number];
}

/**
 * The reported fields of a measured sheet (from a line or from the automatic search).
 * @param sheet a sheet with layers, thicknesses, period and angle
 * @param centerPx its centre in image pixels [x, y]
 * @returns the SheetSummary, nothing else copied
 */
export function sheetSummary(
  sheet: Omit<SheetSummary, 'centerPx'>,
  centerPx: [number, number],
): SheetSummary {
  return {
    layers: sheet.layers,
    thicknessPx: sheet.thicknessPx,
    thicknessNm: sheet.thicknessNm,
    edgeToEdgeNm: sheet.edgeToEdgeNm,
    periodPx: sheet.periodPx,
    periodNm: sheet.periodNm,
    angleDeg: sheet.angleDeg,
    centerPx,
  };
}

/** What every measurement record needs besides the result. */
export interface MeasurementContext {
  /** Unique id of the record. */
  id: string;
  /** Stored image id, or null for a file outside the library. */
  imageId: string | null;
  /** The image's file name. */
  fileName: string;
  /** ISO 8601 time; default now. */
  createdIso?: string;
  /** The calibration the result was computed with (null: px only). */
  calibration: Calibration | null;
  /** Settings that produced the result. */
  settings?: Record<string, unknown>;
}

function checkContext(ctx: MeasurementContext): void {
  if (!ctx || typeof ctx.id !== 'string' || ctx.id === '') throw new TypeError(`ctx.id must be a non-empty string, got ${String(ctx?.id)}`);
  if (typeof ctx.fileName !== 'string') throw new TypeError(`ctx.fileName must be a string, got ${String(ctx.fileName)}`);
}

/** A layer period along a layer normal, with its local-variation uncertainty (the spread of spacings or lines over √n). */
function periodicity(periodPx: number, localVariationPx: number, angleDeg: number, strength: number, geometry: Periodicity['geometry'] = 'normal'): Periodicity {
  return { periodPx, angleDeg, geometry, u: { ...noUncertainty(), localVariationPx }, uAngleDeg: 0, strength, flags: [] };
}

/** The fields every sheets record takes from its context. */
function recordHead(ctx: MeasurementContext, tool: Measurement['tool']): Pick<Measurement, 'recordVersion' | 'id' | 'imageId' | 'fileName' | 'createdIso' | 'tool'> {
  return { recordVersion: RECORD_VERSION, id: ctx.id, imageId: ctx.imageId, fileName: ctx.fileName, createdIso: ctx.createdIso ?? new Date().toISOString(), tool };
}

/**
 * The record of sheets measured along a drawn line.
 *
 * One periodicity per sheet: its mean layer period, with the spread of its spacings over √(spacings) as the uncertainty (common practice).
 *
 * @param r the result of `sheetsAlongLine`
 * @param line the line as drawn (px) and its width
 * @param ctx id, image, file name, calibration, settings
 * @returns a Measurement with tool 'sheets-line'; detail.sheets holds every sheet as plain JSON
 */
export function lineSheetsMeasurement(
  r: LineSheetsResult,
  line: { x0: number; y0: number; x1: number; y1: number; widthPx: number },
  ctx: MeasurementContext,
): Measurement {
  checkContext(ctx);
  const cal = ctx.calibration;
  const notes: string[] = [];
  if (r.sheets.some((s) => s.truncated)) notes.push('a sheet touches an end of the line and may continue beyond it');
  if (r.sheets.length === 0) notes.push('no sheet along the line');
  return {
    ...recordHead(ctx, 'sheets-line'),
    region: { kind: 'line', ...line },
    calibration: cal,
    settings: { ...(ctx.settings ?? {}), periodPx: r.periodPx, periodSource: r.periodSource },
    periodicities: r.sheets.map((s) =>
      periodicity(s.periodPx, s.layers > 2 ? s.spacingSdPx / Math.sqrt(s.layers - 1) : 0, s.angleDeg, r.noiseRms > 0 ? s.amplitude / r.noiseRms : Infinity, 'line'),
    ),
    detail: {
      sheets: r.sheets.map((s) => ({
        ...sheetSummary(s, s.centerXY),
        edgeToEdgePx: s.edgeToEdgePx,
        edgesPx: s.edgesXY,
        layerPositionsPx: s.layerPositionsPx,
        truncated: s.truncated,
        status: 'manual',
      })),
      gapsPx: r.gapsPx,
      gapsNm: r.gapsNm,
    },
    notes,
  };
}

/**
 * The record of sheets found automatically over an image.
 *
 * One periodicity per sheet (mean period over its lines; uncertainty the spread of the line periods over √lines, common practice).
 *
 * @param r the result of `detectSheets`
 * @param ctx id, image, file name, calibration, settings
 * @returns a Measurement with tool 'sheets-auto'; detail.sheets holds every sheet with its status and outline
 */
export function autoSheetsMeasurement(r: AutoSheetsResult, ctx: MeasurementContext): Measurement {
  checkContext(ctx);
  const cal = ctx.calibration;
  return {
    ...recordHead(ctx, 'sheets-auto'),
    region: null,
    calibration: cal,
    settings: { ...r.settings, ...(ctx.settings ?? {}) },
    periodicities: r.sheets.map((s) => {
      const ps = s.crossings.map((c) => c.periodPx);
      const m = ps.reduce((a, b) => a + b, 0) / ps.length;
      const sd = ps.length > 1 ? Math.sqrt(ps.reduce((a, b) => a + (b - m) ** 2, 0) / (ps.length - 1)) : 0;
      return periodicity(s.periodPx, sd / Math.sqrt(ps.length), s.angleDeg, s.crossings.length);
    }),
    detail: { sheets: r.sheets.map((s) => ({ ...s })), regions: r.regions },
    notes: r.sheets.length === 0 ? ['no sheets found'] : [],
  };
}

/**
 * The record of a domain map: one periodicity per domain, largest first (uncertainty: spread of tile periods over √tiles, common practice).
 *
 * @param r the result of `domainMap`
 * @param ctx id, image, file name, calibration, settings
 * @returns a Measurement with tool 'domains'; detail holds the domains and the label grid as a plain array
 */
export function domainsMeasurement(r: DomainMapResult, ctx: MeasurementContext): Measurement {
  checkContext(ctx);
  const cal = ctx.calibration;
  return {
    ...recordHead(ctx, 'domains'),
    region: null,
    calibration: cal,
    settings: { ...(ctx.settings ?? {}), tileSizePx: r.tileSizePx, stepPx: r.stepPx },
    periodicities: r.domains.map((d) => periodicity(d.periodPx, d.periodSdPx / Math.sqrt(d.tiles), d.angleDeg, d.tiles)),
    detail: { domains: r.domains.map((d) => ({ ...d })), columns: r.columns, rows: r.rows, labels: Array.from(r.labels) },
    notes: r.domains.length === 0 ? ['no periodic domains'] : [],
  };
}
