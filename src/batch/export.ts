/**
 * Exports of a batch: a CSV table with one row per measured period, a per-file summary table,
 * the full results as JSON, statistics pooled over the batch, and everything as one zip archive.
 */
import { strToU8, zipSync } from 'fflate';
import { budgetCsvCells, budgetCsvHeader, DEFAULT_COVERAGE_FACTOR, expressPeriod, type UncertaintyBudget } from '../measure/measurement';
import { CALIBRATION_COLUMNS, csvTable, periodCells, PERIOD_COLUMNS, RECORD_COLUMNS, recordCells, type CsvCell } from '../measure/export';
import { poolPeriods } from '../measure/pool';
import { summarize, type Summary } from '../measure/stats';
import type { Recipe } from './recipe';
import type { FileResult } from './run';

/** Columns of the results table, in order; units are in the names (the common columns of the one CSV writer, src/measure/export.ts). */
export const RESULT_COLUMNS = ['file', 'status', 'reason', ...CALIBRATION_COLUMNS, ...RECORD_COLUMNS, ...PERIOD_COLUMNS] as const;

/** Columns of the per-file summary table. */
export const SUMMARY_COLUMNS = [
  'file',
  'status',
  'reason',
  'calibrationSource',
  'nmPerPx',
  'calibrationRelUncertainty',
  'widthPx',
  'heightPx',
  ...budgetCsvHeader('topPeriod', 'nm'),
  'topAngleDeg',
  'periodCount',
  'sheetCount',
  'meanThicknessNm',
  'sdThicknessNm',
] as const;

type Cell = CsvCell;

/**
 * The results table: one row per accepted period of every measurement; a measurement without
 * any period gets one row with empty period columns, a failed file one row with its reason.
 *
 * @param results the batch's file results
 * @returns CSV text, CRLF line ends as RFC 4180 asks, header first
 * Notes: the calibration source and relative uncertainty are on every row, so a row taken out of
 * the table still says what its nm are worth.
 */
export function resultsCsv(results: FileResult[], k: number = DEFAULT_COVERAGE_FACTOR): string {
  const rows: Cell[][] = [];
  for (const r of results) {
    const cal = r.calibration;
    const base: Cell[] = [r.file, r.status, r.reason ?? '', cal?.source, cal?.nmPerPx, cal?.relUncertainty, cal?.detail];
    if (r.status === 'failed' || r.measurements.length === 0) {
      rows.push([...base, ...new Array(RESULT_COLUMNS.length - base.length).fill(null)]);
      continue;
    }
    for (const m of r.measurements) {
      const mcells = recordCells(m);
      if (m.periodicities.length === 0) {
        rows.push([...base, ...mcells, ...new Array(RESULT_COLUMNS.length - base.length - mcells.length).fill(null)]);
        continue;
      }
      m.periodicities.forEach((p, i) => rows.push([...base, ...mcells, ...periodCells(p, i + 1, cal, k)]));
    }
  }
  return csvTable(RESULT_COLUMNS, rows);
}

/** The per-file summary table: one row per file (RFC 4180, as `resultsCsv`). */
export function summaryCsv(results: FileResult[], k: number = DEFAULT_COVERAGE_FACTOR): string {
  return csvTable(SUMMARY_COLUMNS, results.map((r) => {
    const cal = r.calibration;
    const top = r.summary.topPeriods[0];
    return [
      r.file,
      r.status,
      r.reason ?? '',
      cal?.source,
      cal?.nmPerPx,
      cal?.relUncertainty,
      r.image?.widthPx,
      r.image?.heightPx,
      ...(top && cal ? budgetCsvCells(expressPeriod(top, cal, k)) : new Array(budgetCsvHeader('topPeriod', 'nm').length).fill(null)),
      top?.angleDeg,
      r.summary.topPeriods.length,
      r.summary.sheetCount,
      r.summary.meanThicknessNm,
      r.summary.sdThicknessNm,
    ];
  }));
}

/** Statistics of a whole batch. */
export interface PooledStats {
  /** Files in the batch, finished with status ok, and failed. */
  files: { total: number; ok: number; failed: number };
  /** The strongest accepted period of each ok file that has one, as a distribution (nm). */
  topPeriodNm: Summary | null;
  /**
   * The same periods pooled into one value (poolPeriods: random-effects mean of the images'
   * independent parts, method and calibration parts added once), with the Birge ratio of the
   * images' agreement; null with no period.
   */
  pooledTopPeriod: { budget: UncertaintyBudget; n: number; birgeRatio: number } | null;
  /** Every sheet of every file, pooled (nm). */
  sheetThicknessNm: Summary | null;
  /** Total number of sheets found (null when no file ran the sheets step). */
  sheetCount: number | null;
}

/**
 * Statistics pooled over the batch.
 *
 * @param results the batch's file results
 * @param k coverage factor of the pooled period (default 2)
 * @returns file counts, the distribution of each file's strongest period, their pooled value,
 *   and the pooled sheet thickness
 * Notes: pooling sheets is concatenating the sheets of all files (`summarize`); each file's
 * strongest period counts once. The pooled period follows the one pooling rule (poolPeriods,
 * DerSimonian–Laird random effects; GUM §5.2 for the shared calibration part).
 */
export function pooledStats(results: FileResult[], k: number = DEFAULT_COVERAGE_FACTOR): PooledStats {
  const ok = results.filter((r) => r.status === 'ok' && r.calibration !== null);
  const tops = ok.flatMap((r) => (r.summary.topPeriods[0] ? [{ periodicity: r.summary.topPeriods[0], calibration: r.calibration }] : []));
  const pooled = tops.length ? poolPeriods(tops, k) : null;
  const sheets = ok.flatMap((r) => r.summary.sheetThicknessNm);
  const ran = ok.filter((r) => r.summary.sheetCount !== null);
  const done = results.filter((r) => r.status === 'ok').length;
  return {
    files: { total: results.length, ok: done, failed: results.length - done },
    topPeriodNm: summarize(tops.map((t) => expressPeriod(t.periodicity, t.calibration).value)),
    pooledTopPeriod: pooled ? { budget: pooled.budget, n: pooled.n, birgeRatio: pooled.birgeRatio } : null,
    sheetThicknessNm: summarize(sheets),
    sheetCount: ran.length ? ran.reduce((s, r) => s + (r.summary.sheetCount ?? 0), 0) : null,
  };
}

/** The JSON export of a batch. */
export interface BatchJson {
  /** Format version of this export. */
  schemaVersion: 1;
  /** The recipe every file was processed with. */
  recipe: Recipe;
  /** ISO 8601 time the export was made. */
  createdIso: string;
  pooled: PooledStats;
  results: FileResult[];
}

/** The full results of a batch as JSON text (two-space indented). */
export function batchJson(recipe: Recipe, results: FileResult[], createdIso: string = new Date().toISOString()): string {
  const doc: BatchJson = { schemaVersion: 1, recipe, createdIso, pooled: pooledStats(results, recipe.outputs.coverageFactor ?? DEFAULT_COVERAGE_FACTOR), results };
  return `${JSON.stringify(doc, null, 2)}\n`;
}

/**
 * All export files of a batch in one zip archive.
 *
 * @param files archive paths (forward slashes, relative, no "..") to text or bytes
 * @returns the zip archive's bytes (fflate `zipSync`; text stored as UTF-8; PNG stored without
 *   recompression)
 */
export function zipExports(files: Record<string, string | Uint8Array>): Uint8Array {
  const entries: Record<string, Uint8Array | [Uint8Array, { level: 0 }]> = {};
  for (const [name, content] of Object.entries(files)) {
    if (!name || name.startsWith('/') || name.includes('\\') || name.split('/').includes('..')) {
      throw new RangeError(`archive path must be relative with forward slashes and no "..", got ${JSON.stringify(name)}`);
    }
    const bytes = typeof content === 'string' ? strToU8(content) : content;
    entries[name] = /\.png$/i.test(name) ? [bytes, { level: 0 }] : bytes;
  }
  return zipSync(entries, { level: 6 });
}
