/**
 * Sheet and domain results as the shared `Measurement` record (version 2: lengths in px with
 * their uncertainty parts; nanometres only through `expressLength` / `expressPeriod`), for the
 * store, the batch runner, the command line and the exports. Plain JSON only in `detail`.
 */
import { simplifyPolyline } from './polyline';
import type { Calibration } from '../image/grey-image';
import {
  combinedPx,
  DEFAULT_COVERAGE_FACTOR,
  expressLength,
  expressPeriod,
  noUncertainty,
  RECORD_VERSION,
  type Measurement,
  type Periodicity,
  type UncertaintyBudget,
  type UncertaintyPx,
} from '../measure/measurement';
import { summarize, type Summary } from '../measure/stats';
import type { AutoSheet, AutoSheetsResult, ImagePeriod, SheetStatus } from './detect';
import type { LineSheet, LineSheetsResult } from './line';
import type { DomainMapResult } from './domains';

/** The thickness convention every sheet follows. */
export const THICKNESS_CONVENTION = 'n·d: layers × the stack\'s layer period (edge-to-edge width of the band reported beside it)';

/** A user's correction of a sheet's layer count: the automatic value is kept beside it. */
export interface SheetCorrection {
  /** Who changed it: always the user (the tool never changes a count on its own). */
  by: 'user';
  /** The count before the correction (the automatic one). */
  originalLayers: number;
  /** When, ISO 8601. */
  atIso: string;
}

/** One sheet as reported everywhere (the sheets panel, the command line, exports, the library). Lengths in px. */
export interface SheetReport {
  /** Identifier unique within its record. */
  id: string;
  /** Found by the automatic search, or on a line drawn by the user. */
  source: 'auto' | 'line';
  status: SheetStatus;
  /** Number of layers (the user's when corrected). */
  layers: number;
  /** The correction, or null when the count is the tool's. */
  correction: SheetCorrection | null;
  /** Thickness by the n·d convention, px, with its standard uncertainties (k = 1). */
  thicknessPx: number;
  uThicknessPx: UncertaintyPx;
  /** Edge-to-edge width of the band (where its darkening falls to half), px. */
  edgeToEdgePx: number;
  /** The layer period used, px, its standard uncertainties and its origin. */
  periodPx: number;
  uPeriodPx: UncertaintyPx;
  periodSource: 'given' | 'stack' | 'image' | 'line';
  /** Direction of the layer normal, degrees in [0, 180), counter-clockwise from +x as shown (x right, y up). */
  angleDeg: number;
  /** Centre, image px [x, y] (y = row). */
  centerPx: [number, number];
  /** Length along the layers, px (null for a sheet on a drawn line). */
  lengthPx: number | null;
  /** Outline polygon, image px (for a line: the segment across the sheet, two points). */
  outlinePx: [number, number][];
  /** Share of the positions along the stack that agree with the count (null for a line). */
  confidence: number | null;
  /** Evidence for the sheet (Δχ² of its comb over the bare background). */
  evidence: number;
  /** Notes on this sheet. */
  notes: string[];
}

/** How far, px, a report's outline may stray from the search's pixel-by-pixel outline (a quarter pixel: below what any view shows). */
export const OUTLINE_TOLERANCE_PX = 0.25;

/**
 * The report of an automatic sheet.
 * @param s the sheet from `detectSheets`
 * @returns its SheetReport (status and id kept); its outline keeps the vertices its shape needs
 *   (within OUTLINE_TOLERANCE_PX of the search's outline, which has a point per pixel of length)
 */
export function sheetFromAuto(s: AutoSheet): SheetReport {
  return {
    id: s.id,
    source: 'auto',
    status: s.status,
    layers: s.layers,
    correction: null,
    thicknessPx: s.thicknessPx,
    uThicknessPx: { ...s.uThicknessPx },
    edgeToEdgePx: s.edgeToEdgePx,
    periodPx: s.periodPx,
    uPeriodPx: { ...s.uPeriodPx },
    periodSource: s.periodSource,
    angleDeg: s.angleDeg,
    centerPx: [s.centerPx[0], s.centerPx[1]],
    lengthPx: s.lengthPx,
    outlinePx: simplifyPolyline(s.outlinePx, OUTLINE_TOLERANCE_PX),
    confidence: s.confidence,
    evidence: s.evidence,
    notes: [...s.notes],
  };
}

/**
 * The report of a sheet on a drawn line.
 * @param s the sheet from `sheetsAlongLine`
 * @param id its identifier
 * @returns its SheetReport with status 'manual'
 */
export function sheetFromLine(s: LineSheet, id: string): SheetReport {
  const notes: string[] = [];
  if (s.truncated) notes.push('reaches an end of the line: extend the line onto background');
  return {
    id,
    source: 'line',
    status: 'manual',
    layers: s.layers,
    correction: null,
    thicknessPx: s.thicknessPx,
    uThicknessPx: { ...s.uThicknessPx },
    edgeToEdgePx: s.edgeToEdgePx,
    periodPx: s.periodPx,
    uPeriodPx: { ...s.uPeriodPx },
    periodSource: s.periodSource,
    angleDeg: s.angleDeg,
    centerPx: [s.centerXY[0], s.centerXY[1]],
    lengthPx: null,
    outlinePx: [s.edgesXY[0], s.edgesXY[1]],
    confidence: null,
    evidence: s.evidence,
    notes,
  };
}

/**
 * A sheet with its layer count corrected by the user: the automatic count is kept in the
 * correction, the thickness becomes the new count × the sheet's period (its period's
 * uncertainty scaled), and the status 'corrected'.
 * @param s the sheet
 * @param layers the user's count (an integer ≥ 1)
 * @param atIso when (ISO 8601)
 * @returns a new report; correcting back to the original count keeps the correction record
 */
export function correctSheet(s: SheetReport, layers: number, atIso: string): SheetReport {
  if (!(Number.isInteger(layers) && layers >= 1)) throw new RangeError(`a layer count must be a whole number ≥ 1, got ${layers}`);
  const original = s.correction?.originalLayers ?? s.layers;
  return {
    ...s,
    status: 'corrected',
    layers,
    correction: { by: 'user', originalLayers: original, atIso },
    thicknessPx: layers * s.periodPx,
    uThicknessPx: { statisticalPx: layers * s.uPeriodPx.statisticalPx, localVariationPx: layers * s.uPeriodPx.localVariationPx, methodPx: layers * s.uPeriodPx.methodPx },
  };
}

/** A sheet's lengths with their uncertainty budgets, in nm when calibrated. */
export interface SheetExpressed {
  thickness: UncertaintyBudget;
  edgeToEdge: UncertaintyBudget;
  period: UncertaintyBudget;
  /** Length along the layers (null for a sheet on a line). */
  length: UncertaintyBudget | null;
}

/**
 * A sheet's lengths expressed with the calibration, late and in one place.
 * @param s the sheet
 * @param calibration the pixel size, or null (px)
 * @param k coverage factor (default 2)
 * @returns thickness and edge-to-edge width along the layer normal, the period as a spacing
 *   along it, the length along the layers; each with its budget
 * Notes: thickness and width are distances along the normal (`expressLength` with geometry
 * 'line' at the normal's angle); the period is a plane spacing (geometry 'normal'); the length
 * runs along the layers (geometry 'line', 90° from the normal). So unequal pixel axes and shear
 * are applied in the right direction.
 */
export function expressSheet(s: Pick<SheetReport, 'thicknessPx' | 'uThicknessPx' | 'edgeToEdgePx' | 'periodPx' | 'uPeriodPx' | 'angleDeg' | 'lengthPx'>, calibration: Calibration | null, k: number = DEFAULT_COVERAGE_FACTOR): SheetExpressed {
  const along = { geometry: 'line' as const, angleDeg: s.angleDeg, k };
  return {
    thickness: expressLength(s.thicknessPx, s.uThicknessPx, calibration, along),
    edgeToEdge: expressLength(s.edgeToEdgePx, noUncertainty(), calibration, along),
    period: expressLength(s.periodPx, s.uPeriodPx, calibration, { geometry: 'normal', angleDeg: s.angleDeg, k }),
    length: s.lengthPx === null ? null : expressLength(s.lengthPx, noUncertainty(), calibration, { geometry: 'line', angleDeg: (s.angleDeg + 90) % 180, k }),
  };
}

/** Statistics of a set of sheets. */
export interface SheetStatistics {
  /** Number of sheets counted. */
  n: number;
  /** Thickness summary (n·d), in `unit`. */
  thickness: Summary | null;
  /** 'nm' when every sheet was expressed with a calibration, else 'px'. */
  unit: 'nm' | 'px';
  /** Layer-count summary. */
  layers: Summary | null;
  /** Sheets per layer count, ascending. */
  layerCounts: [number, number][];
}

/**
 * Statistics of sheets, leaving out rejected ones (and, with `acceptedOnly`, unreviewed automatic ones).
 *
 * Summaries by `summarize` (Hyndman & Fan 1996 type 7 quartiles, Student t CI of the mean).
 *
 * @param sheets sheets, each with its calibration (null: px)
 * @param options acceptedOnly: count only 'accepted', 'manual' and 'corrected' sheets
 * @returns n, the thickness summary (nm when every sheet is calibrated), layer counts
 */
export function sheetStatistics(sheets: { sheet: SheetReport; calibration: Calibration | null }[], options: { acceptedOnly?: boolean } = {}): SheetStatistics {
  const keep = sheets.filter(({ sheet: s }) => s.status !== 'rejected' && (!options.acceptedOnly || s.status !== 'auto'));
  const calibrated = keep.length > 0 && keep.every((q) => q.calibration !== null);
  const thick = keep.map(({ sheet, calibration }) => expressSheet(sheet, calibrated ? calibration : null).thickness.value);
  const counts = new Map<number, number>();
  for (const { sheet } of keep) counts.set(sheet.layers, (counts.get(sheet.layers) ?? 0) + 1);
  return {
    n: keep.length,
    thickness: summarize(thick),
    unit: calibrated ? 'nm' : 'px',
    layers: summarize(keep.map((q) => q.sheet.layers)),
    layerCounts: [...counts].sort((a, b) => a[0] - b[0]),
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
  /** The calibration the result is expressed with (null: px only). */
  calibration: Calibration | null;
  /** Settings that produced the result. */
  settings?: Record<string, unknown>;
}

function checkContext(ctx: MeasurementContext): void {
  if (!ctx || typeof ctx.id !== 'string' || ctx.id === '') throw new TypeError(`ctx.id must be a non-empty string, got ${String(ctx?.id)}`);
  if (typeof ctx.fileName !== 'string') throw new TypeError(`ctx.fileName must be a string, got ${String(ctx.fileName)}`);
}

/** The fields every sheets record takes from its context. */
function recordHead(ctx: MeasurementContext, tool: Measurement['tool']): Pick<Measurement, 'recordVersion' | 'id' | 'imageId' | 'fileName' | 'createdIso' | 'tool' | 'calibration'> {
  return { recordVersion: RECORD_VERSION, id: ctx.id, imageId: ctx.imageId, fileName: ctx.fileName, createdIso: ctx.createdIso ?? new Date().toISOString(), tool, calibration: ctx.calibration };
}

/** A sheet's layer period as a periodicity of the record (a plane spacing along its normal). */
function sheetPeriodicity(s: SheetReport): Periodicity {
  return { periodPx: s.periodPx, angleDeg: s.angleDeg, geometry: 'normal', u: { ...s.uPeriodPx }, uAngleDeg: 0, strength: s.evidence, flags: [] };
}

/** The sheets of a record, as plain JSON (px). */
export interface SheetsDetail {
  /** The thickness convention. */
  thickness: string;
  sheets: SheetReport[];
  /** The image's layer periods (automatic search). */
  periods?: ImagePeriod[];
  /** Bands examined and not reported, by reason (automatic search). */
  rejectedByReason?: Record<string, number>;
  /** The statement when nothing was found. */
  message?: string | null;
}

/**
 * The record of sheets (automatic, along a line, or reviewed in the app).
 *
 * One periodicity per sheet that is not rejected: its layer period (the statistical part from the fit of its comb, common practice).
 *
 * @param sheets the sheets, with their statuses and corrections
 * @param ctx id, image, file name, calibration, settings
 * @param extra tool ('sheets-auto' or 'sheets-line'), region, periods, rejected bands and message
 * @returns a version-2 Measurement; detail holds every sheet (px) as `SheetsDetail`
 */
export function sheetsMeasurement(
  sheets: SheetReport[],
  ctx: MeasurementContext,
  extra: { tool: 'sheets-auto' | 'sheets-line'; region?: Measurement['region']; periods?: ImagePeriod[]; rejected?: { reason: string }[]; message?: string | null } = { tool: 'sheets-auto' },
): Measurement {
  checkContext(ctx);
  const kept = sheets.filter((s) => s.status !== 'rejected');
  const rejectedByReason: Record<string, number> = {};
  for (const r of extra.rejected ?? []) {
    const key = r.reason.replace(/[0-9.]+/g, '#');
    rejectedByReason[key] = (rejectedByReason[key] ?? 0) + 1;
  }
  const detail: SheetsDetail = { thickness: THICKNESS_CONVENTION, sheets: sheets.map((s) => JSON.parse(JSON.stringify(s)) as SheetReport), periods: extra.periods, rejectedByReason, message: extra.message ?? null };
  const notes: string[] = [];
  if (sheets.length === 0) notes.push(extra.message ?? 'no sheets found');
  if (sheets.some((s) => s.correction)) notes.push('some counts were corrected by the user; the automatic counts are kept beside them');
  return {
    ...recordHead(ctx, extra.tool),
    region: extra.region ?? null,
    settings: { ...(ctx.settings ?? {}) },
    periodicities: kept.map(sheetPeriodicity),
    detail: detail as unknown as Record<string, unknown>,
    notes,
  };
}

/**
 * The automatic search's record.
 * @param r the result of `detectSheets`
 * @param ctx id, image, file name, calibration, settings
 * @returns the record of {@link sheetsMeasurement} with tool 'sheets-auto'
 */
export function autoSheetsMeasurement(r: AutoSheetsResult, ctx: MeasurementContext): Measurement {
  return sheetsMeasurement(r.sheets.map(sheetFromAuto), { ...ctx, settings: { ...r.settings, ...(ctx.settings ?? {}) } }, { tool: 'sheets-auto', periods: r.periods, rejected: r.rejected, message: r.message });
}

/**
 * A drawn line's record.
 * @param r the result of `sheetsAlongLine`
 * @param line the line as drawn (px) and its width
 * @param ctx id, image, file name, calibration, settings
 * @returns the record of {@link sheetsMeasurement} with tool 'sheets-line' and the line as its region
 */
export function lineSheetsMeasurement(r: LineSheetsResult, line: { x0: number; y0: number; x1: number; y1: number; widthPx: number }, ctx: MeasurementContext): Measurement {
  return sheetsMeasurement(
    r.sheets.map((s, i) => sheetFromLine(s, `line-${i + 1}`)),
    { ...ctx, settings: { ...(ctx.settings ?? {}), periodPx: r.periodPx, periodSource: r.periodSource } },
    { tool: 'sheets-line', region: { kind: 'line', ...line }, message: r.message },
  );
}

/**
 * The sheets kept in a record (for the library and reports), or [] when it holds none.
 * @param m a sheets record
 * @returns its sheets (px)
 */
export function sheetsOfMeasurement(m: Measurement): SheetReport[] {
  const d = m.detail as Partial<SheetsDetail> | undefined;
  return Array.isArray(d?.sheets) ? (d!.sheets as SheetReport[]) : [];
}

/** The combined standard uncertainty of a sheet's thickness in px (calibration excluded). */
export function thicknessUncertaintyPx(s: Pick<SheetReport, 'uThicknessPx'>): number {
  return combinedPx(s.uThicknessPx);
}

/** A layer period along a layer normal, with its local-variation uncertainty. */
function domainPeriodicity(periodPx: number, localVariationPx: number, angleDeg: number, strength: number): Periodicity {
  return { periodPx, angleDeg, geometry: 'normal', u: { ...noUncertainty(), localVariationPx }, uAngleDeg: 0, strength, flags: [] };
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
  return {
    ...recordHead(ctx, 'domains'),
    region: null,
    settings: { ...(ctx.settings ?? {}), tileSizePx: r.tileSizePx, stepPx: r.stepPx },
    periodicities: r.domains.map((d) => domainPeriodicity(d.periodPx, d.periodSdPx / Math.sqrt(d.tiles), d.angleDeg, d.tiles)),
    detail: { domains: r.domains.map((d) => ({ ...d })), columns: r.columns, rows: r.rows, labels: Array.from(r.labels) },
    notes: r.domains.length === 0 ? ['no periodic domains'] : [],
  };
}

/** The expressed period of a record's periodicity (re-exported for the panels). */
export { expressPeriod };
