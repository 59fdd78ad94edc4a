/**
 * The one CSV writer and the one JSON form of measurements, for every export: the Periods panel,
 * the batch tables, the library and the command line. A row per period, the common columns
 * first (record, region, the period in px with its uncertainty parts, its budget in nm, its
 * direction and strength), then the tool's own columns from the registry (tools.ts).
 */
import type { Calibration } from '../image/grey-image';
import {
  budgetCsvCells,
  budgetCsvHeader,
  budgetJson,
  DEFAULT_COVERAGE_FACTOR,
  expressPeriod,
  RECORD_VERSION,
  type Measurement,
  type Periodicity,
} from './measurement';
import { TOOLS, toolOf, type CsvCell } from './tools';

export type { CsvCell };

/**
 * One CSV field, quoted when it has to be.
 *
 * RFC 4180, "Common Format and MIME Type for CSV Files" (2005), section 2.
 *
 * @param value text, number, or null/undefined for an empty field
 * @returns the field: enclosed in double quotes, inner quotes doubled, when it contains a comma,
 *   a double quote, CR or LF (or leading/trailing spaces); numbers in shortest round-trip form
 * Notes: a text starting with =, +, - or @ is prefixed with an apostrophe so a spreadsheet does
 * not run it as a formula (common practice); numbers are never changed.
 */
export function csvField(value: CsvCell): string {
  if (value === null || value === undefined) return '';
  if (typeof value === 'number') {
    if (!Number.isFinite(value)) throw new RangeError(`a CSV number must be finite, got ${value}`);
    return String(value);
  }
  let s = String(value);
  if (/^[=+\-@]/.test(s)) s = `'${s}`;
  if (/[",\r\n]/.test(s) || /^\s|\s$/.test(s)) return `"${s.replace(/"/g, '""')}"`;
  return s;
}

/**
 * A CSV table: the header and the rows, each row as long as the header.
 * @param header column names (units in the names)
 * @param rows the rows' cells
 * @returns CSV text with CRLF line ends, as RFC 4180 asks, header first
 * @throws RangeError naming the row whose length differs from the header's
 * Reference: RFC 4180 (2005), section 2.
 */
export function csvTable(header: readonly string[], rows: readonly (readonly CsvCell[])[]): string {
  const lines = [header.map(csvField).join(',')];
  rows.forEach((r, i) => {
    if (r.length !== header.length) throw new RangeError(`CSV row ${i + 1} has ${r.length} cells for ${header.length} columns`);
    lines.push(r.map(csvField).join(','));
  });
  return `${lines.join('\r\n')}\r\n`;
}

/** Columns of a record in every period row. */
export const RECORD_COLUMNS = ['measurementId', 'tool', 'regionXPx', 'regionYPx', 'regionWidthPx', 'regionHeightPx'] as const;

/** Columns of a period: rank, the length in px with its parts, its budget in nm, direction, strength, doubts. */
export const PERIOD_COLUMNS = [
  'rank',
  'periodPx',
  'uStatisticalPx',
  'uLocalVariationPx',
  'uMethodPx',
  ...budgetCsvHeader('period', 'nm'),
  'angleDeg',
  'uAngleDeg',
  'strength',
  'flags',
] as const;

/** Columns of the calibration, on every row so a row taken out of a table still says what its nm are worth. */
export const CALIBRATION_COLUMNS = ['calibrationSource', 'nmPerPx', 'calibrationRelUncertainty', 'calibrationDetail'] as const;

/** The record's cells of a row (id, tool, the rectangle of a rect region). */
export function recordCells(m: Measurement): CsvCell[] {
  const reg = m.region?.kind === 'rect' ? m.region : null;
  return [m.id, m.tool, reg?.x, reg?.y, reg?.width, reg?.height];
}

/**
 * The cells of one period (in the order of PERIOD_COLUMNS): px values to 7 significant digits,
 * the nm budget as budgetCsvCells (empty when uncalibrated), the angle to 0.001°.
 * @param p the period
 * @param rank its rank in its record (1 = strongest)
 * @param calibration the pixel size, or null
 * @param k coverage factor
 */
export function periodCells(p: Periodicity, rank: number, calibration: Calibration | null, k: number = DEFAULT_COVERAGE_FACTOR): CsvCell[] {
  const nm = calibration ? budgetCsvCells(expressPeriod(p, calibration, k)) : new Array<CsvCell>(budgetCsvHeader('period', 'nm').length).fill(null);
  const px = [p.periodPx, p.u.statisticalPx, p.u.localVariationPx, p.u.methodPx].map((v) => Number(v.toPrecision(7)));
  return [rank, ...px, ...nm, Number(p.angleDeg.toFixed(3)), Number(p.uAngleDeg.toPrecision(3)), Number(p.strength.toPrecision(4)), p.flags.join(' ')];
}

/** Options of {@link measurementsCsv}. */
export interface MeasurementsCsvOptions {
  /** Coverage factor of the expanded uncertainty (default 2). */
  k?: number;
  /** Add each tool's own columns from the registry (default true). */
  toolColumns?: boolean;
}

/**
 * Measurements as one CSV table, a row per period (a record without any period gets one row with
 * empty period columns).
 * @param records the measurements (any tools, any images)
 * @param options coverage factor, tool columns
 * @returns CSV text (RFC 4180): file, the calibration, the record, the period columns, then the
 *   own columns of the tools present (in registry order, each name once; empty where a row's
 *   tool has no such column)
 * Reference: RFC 4180 (2005); budget columns as budgetCsvHeader (GUM).
 */
export function measurementsCsv(records: readonly Measurement[], options: MeasurementsCsvOptions = {}): string {
  const k = options.k ?? DEFAULT_COVERAGE_FACTOR;
  const present = options.toolColumns === false ? [] : TOOLS.filter((t) => t.columns.length && records.some((m) => m.tool === t.kind));
  // the tools' own columns, each name once (tools measuring the same thing share a column)
  const extra = [...new Set(present.flatMap((t) => t.columns))];
  const header = ['file', ...CALIBRATION_COLUMNS, ...RECORD_COLUMNS, ...PERIOD_COLUMNS, ...extra];
  const rows: CsvCell[][] = [];
  for (const m of records) {
    const cal = m.calibration;
    const base: CsvCell[] = [m.fileName, cal?.source, cal?.nmPerPx, cal?.relUncertainty, cal?.detail, ...recordCells(m)];
    const tool = present.find((t) => t.kind === m.tool);
    const own = (i: number): CsvCell[] => {
      const cells = new Array<CsvCell>(extra.length).fill(null);
      if (tool) tool.cells(m, i).forEach((v, j) => (cells[extra.indexOf(tool.columns[j])] = v));
      return cells;
    };
    if (m.periodicities.length === 0) {
      rows.push([...base, ...new Array<CsvCell>(PERIOD_COLUMNS.length).fill(null), ...new Array<CsvCell>(extra.length).fill(null)]);
      continue;
    }
    m.periodicities.forEach((p, i) => rows.push([...base, ...periodCells(p, i + 1, cal, k), ...own(i)]));
  }
  return csvTable(header, rows);
}

/** The one JSON form of measurements. */
export interface MeasurementsJson {
  /** What this file is. */
  format: 'stratameter-measurements';
  /** Layout of the records ({@link RECORD_VERSION}). */
  recordVersion: number;
  /** Coverage factor of every `budget`. */
  coverageFactorK: number;
  /** ISO 8601 time of the export. */
  createdIso: string;
  /** The records as stored (px with uncertainty parts, calibration), each period with its budget in nm (or px when uncalibrated). */
  measurements: (Measurement & { label: string; budgets: Record<string, number | string>[] })[];
}

/**
 * Measurements in the one JSON form: the records as they are kept, plus, for reading by eye, each
 * period's budget at coverage factor k and the tool's name.
 * @param records the measurements
 * @param k coverage factor (default 2)
 * @param createdIso time of the export (default now)
 * @returns the JSON object (JSON.stringify it to write)
 */
export function measurementsJson(records: readonly Measurement[], k: number = DEFAULT_COVERAGE_FACTOR, createdIso: string = new Date().toISOString()): MeasurementsJson {
  return {
    format: 'stratameter-measurements',
    recordVersion: RECORD_VERSION,
    coverageFactorK: k,
    createdIso,
    measurements: records.map((m) => ({
      ...m,
      label: TOOLS.some((t) => t.kind === m.tool) ? toolOf(m.tool).label : m.tool,
      budgets: m.periodicities.map((p) => budgetJson(expressPeriod(p, m.calibration, k), 'period')),
    })),
  };
}
