/**
 * Reading the measurement reports that `measure --json` and `sheets --json` print, as input for
 * the reconciliation with a diffraction pattern. Every value is checked before it is used.
 */
import type { MicrographPeriod, SheetStats } from './reconcile';

/** A report that cannot be used; the message is `"<fileName>: <reason>"`. */
export class ReportError extends Error {
  override name = 'ReportError';
  /** The file name as given. */
  readonly fileName: string;
  /** The reason alone. */
  readonly reason: string;
  constructor(fileName: string, reason: string) {
    super(`${fileName}: ${reason}`);
    this.fileName = fileName;
    this.reason = reason;
  }
}

/** What a report gives the reconciliation. */
export interface ReportInput {
  /** Calibrated periods with their uncertainties. */
  periods: MicrographPeriod[];
  /** Sheet-thickness statistics (sheets reports), or null. */
  sheets: SheetStats | null;
  /** The calibration's relative standard uncertainty, or null when the report has none. */
  relUncertainty: number | null;
  /** What was left out and why. */
  notes: string[];
}

/** Most periods or sheets read from one report (far more than any measurement gives). */
export const MAX_REPORT_ENTRIES = 1_000_000;

type Obj = Record<string, unknown>;
const isObj = (v: unknown): v is Obj => typeof v === 'object' && v !== null && !Array.isArray(v);

/** A value for a message: numbers and short texts as written, lists and objects by kind. */
function shown(v: unknown): string {
  if (Array.isArray(v)) return 'a list';
  if (isObj(v)) return 'an object';
  if (typeof v === 'number' && !Number.isFinite(v)) return 'a number too large to hold';
  const t = typeof v === 'string' ? JSON.stringify(v) : String(v);
  return t.length > 40 ? `${t.slice(0, 37)}...` : t;
}

/**
 * Where JSON.parse stopped, as line and column of the text (from the character position it
 * reports), or null when it did not say.
 */
function jsonPlace(text: string, message: string): string | null {
  const m = /position (\d+)/.exec(message);
  if (!m) return /end of (JSON )?input/i.test(message) ? 'the text ends in the middle of a value' : null;
  const pos = Math.min(Number(m[1]), text.length);
  const before = text.slice(0, pos);
  const line = before.split('\n').length;
  const column = pos - before.lastIndexOf('\n');
  return `line ${line}, column ${column}`;
}

/**
 * Reads one measurement report (JSON) into periods and sheet statistics.
 *
 * @param text - the file's text.
 * @param fileName - its name, put at the start of every error message.
 * @returns the calibrated periods (labelled with the file and the periodicity's number), sheet
 *   statistics, the calibration's relative uncertainty and notes on what was left out.
 * @throws ReportError naming the file and the value: not JSON, not one of the two report
 *   layouts, a periodicity that is null or not an object, a period or uncertainty that is not a
 *   finite positive (or, for uncertainties, non-negative) number, a relative uncertainty outside
 *   [0, 1), statistics that are not numbers, more than a million entries.
 * Notes: the period in nm and its standard uncertainty are read from `periodNm` and
 * `uncertaintyNm`, or (record version 2) from the periodicity's `budget` (`periodNm`,
 * `uCombinedNm`); a periodicity without a calibrated period is left out with a note, as is a
 * sheet without one.
 */
export function readMeasurementReport(text: string, fileName: string): ReportInput {
  const fail = (reason: string): never => {
    throw new ReportError(fileName, reason);
  };
  if (typeof text !== 'string') throw new TypeError(`text must be a string, got ${typeof text}`);
  let j: unknown;
  try {
    j = JSON.parse(text);
  } catch (e) {
    const place = jsonPlace(text, (e as Error).message);
    return fail(`not a measurement report: the text is not valid JSON${place ? ` (${place})` : ''}`);
  }
  if (!isObj(j)) return fail(`not a measurement report: the file holds ${shown(j)}, not a JSON object`);
  const name = fileName.split(/[\\/]/).pop() ?? fileName;
  const notes: string[] = [];
  let relUncertainty: number | null = null;
  if (j.calibration !== undefined && j.calibration !== null) {
    if (!isObj(j.calibration)) fail(`calibration is ${shown(j.calibration)}, not an object`);
    const rel = (j.calibration as Obj).relUncertainty;
    if (rel !== null && rel !== undefined) {
      if (typeof rel !== 'number' || !(rel >= 0 && rel < 1)) fail(`calibration.relUncertainty is ${shown(rel)}; a relative uncertainty is a number from 0 to below 1`);
      relUncertainty = rel as number;
    }
  }
  const periods: MicrographPeriod[] = [];
  let sheets: SheetStats | null = null;
  const positive = (v: unknown, where: string, what: string): number => {
    if (typeof v !== 'number' || !Number.isFinite(v) || !(v > 0)) fail(`${where} is ${shown(v)}; ${what} must be a positive number of nm`);
    return v as number;
  };
  const nonNegative = (v: unknown, where: string): number => {
    if (typeof v !== 'number' || !Number.isFinite(v) || !(v >= 0)) fail(`${where} is ${shown(v)}; an uncertainty must be a number of nm, 0 or more`);
    return v as number;
  };
  if (Array.isArray(j.periodicities)) {
    if (j.periodicities.length > MAX_REPORT_ENTRIES) fail(`${j.periodicities.length} periodicities; at most ${MAX_REPORT_ENTRIES} are read`);
    j.periodicities.forEach((p: unknown, i: number) => {
      const where = `periodicities[${i}]`;
      if (!isObj(p)) fail(`${where} is ${shown(p)}, not a periodicity`);
      let q = p as Obj;
      // reports of measurement record version 2 give the period in nm in its budget (value and combined standard uncertainty)
      if (q.periodNm === undefined && isObj(q.budget)) {
        const b = q.budget as Obj;
        q = { ...q, periodNm: b.periodNm ?? null, uncertaintyNm: b.uCombinedNm ?? null };
      }
      if (q.periodNm === null || q.periodNm === undefined || q.uncertaintyNm === null || q.uncertaintyNm === undefined) {
        notes.push(`${name}: periodicity ${i + 1} has no calibrated period and is left out`);
        return;
      }
      const periodNm = positive(q.periodNm, `${where}.periodNm`, 'a period');
      const uncertaintyNm = nonNegative(q.uncertaintyNm, `${where}.uncertaintyNm`);
      const angle = typeof q.angleDeg === 'number' && Number.isFinite(q.angleDeg) ? `${q.angleDeg.toFixed(0)}°` : 'no angle';
      const dir: { angleDeg?: number; angleUncDeg?: number } = {};
      if (typeof q.angleDeg === 'number' && Number.isFinite(q.angleDeg)) dir.angleDeg = q.angleDeg;
      if (typeof q.uAngleDeg === 'number' && q.uAngleDeg > 0) dir.angleUncDeg = q.uAngleDeg;
      periods.push({ periodNm, uncertaintyNm, label: `${name} #${i + 1} (${angle})`, ...dir });
    });
  } else if (Array.isArray(j.sheets)) {
    if (j.sheets.length > MAX_REPORT_ENTRIES) fail(`${j.sheets.length} sheets; at most ${MAX_REPORT_ENTRIES} are read`);
    const ps: number[] = [];
    j.sheets.forEach((s: unknown, i: number) => {
      const where = `sheets[${i}]`;
      if (!isObj(s)) fail(`${where} is ${shown(s)}, not a sheet`);
      const v = (s as Obj).periodNm;
      if (v === null || v === undefined) return;
      ps.push(positive(v, `${where}.periodNm`, 'a layer period'));
    });
    if (ps.length > 0) {
      const mean = ps.reduce((a, b) => a + b, 0) / ps.length;
      const sd = ps.length > 1 ? Math.sqrt(ps.reduce((a, b) => a + (b - mean) ** 2, 0) / (ps.length - 1)) : 0;
      const u = Math.hypot(ps.length > 1 ? sd / Math.sqrt(ps.length) : 0, mean * (relUncertainty ?? 0));
      periods.push({ periodNm: mean, uncertaintyNm: u, label: `${name} layer period (mean of ${ps.length} sheets)` });
      if (ps.length === 1) notes.push(`${name}: one sheet only: its layer period's uncertainty is the calibration's alone`);
    } else notes.push(`${name}: no calibrated sheet periods`);
    const stats = j.stats;
    if (stats !== undefined && stats !== null) {
      if (!isObj(stats)) fail(`stats is ${shown(stats)}, not an object`);
      const t = (stats as Obj).thicknessNm;
      if (isObj(t) && t.mean !== null && t.mean !== undefined) {
        const meanNm = positive(t.mean, 'stats.thicknessNm.mean', 'a mean thickness');
        const sdNm = t.sd === null || t.sd === undefined ? 0 : nonNegative(t.sd, 'stats.thicknessNm.sd');
        const n = (stats as Obj).n;
        if (typeof n !== 'number' || !Number.isInteger(n) || n < 0) fail(`stats.n is ${shown(n)}; the number of sheets must be a whole number, 0 or more`);
        const medianNm = typeof t.median === 'number' && Number.isFinite(t.median) ? t.median : undefined;
        sheets = { n: n as number, meanNm, sdNm, medianNm };
      }
    }
  } else {
    fail("neither a 'measure --json' report (periodicities) nor a 'sheets --json' report (sheets)");
  }
  return { periods, sheets, relUncertainty, notes };
}
