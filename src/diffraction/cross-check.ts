/**
 * A batch set against a diffraction set: the strongest periods of all images grouped into
 * distinct periods, each with its combined uncertainty, reconciled with the diffraction lines;
 * the comparison as CSV and as an SVG overlay on a q axis.
 */
import { reconcile, type DiffractionSide, type MicrographSide, type Reconciliation } from './reconcile';
import { dToQ } from './bragg';
import { budgetCsvCells, budgetCsvHeader, formatBudget } from '../measure/measurement';
import { groupAndPoolPeriods, type PeriodGroup, type SourcedPeriod } from '../measure/pool';
import { quantile, summarize } from '../measure/stats';
import { csvTable } from '../measure/export';
import { escapeXml } from '../figure/xml';
import type { Calibration } from '../image/grey-image';
import type { Periodicity } from '../measure/measurement';

/**
 * What the cross-check needs of one image's result (a batch's FileResult has it): its name, whether
 * it was measured, its pixel size, its strongest periods and its sheets' thicknesses.
 */
export interface ImageResult {
  file: string;
  status: string;
  calibration: Calibration | null;
  summary: { topPeriods: Periodicity[]; sheetThicknessNm: number[] };
}

/** Options of `batchPeriodGroups`. */
export interface BatchPeriodGroupOptions {
  /** Neighbouring periods (sorted) more than this fraction apart start a new group (default 0.04). */
  relGap?: number;
  /** Coverage factor of the pooled budgets (default 2). */
  k?: number;
}

/**
 * Groups the accepted periods of a batch's images into distinct periods, each pooled by the one
 * pooling rule (groupAndPoolPeriods: single linkage, then poolPeriods).
 *
 * @param results the batch's file results (failed and uncalibrated files are skipped)
 * @param options the relative gap that separates two groups, the coverage factor
 * @returns groups by increasing period (nm); `sources` are the files
 */
export function batchPeriodGroups(results: ImageResult[], options: BatchPeriodGroupOptions = {}): PeriodGroup[] {
  const items: SourcedPeriod[] = [];
  for (const r of results) {
    if (r.status !== 'ok' || !r.calibration) continue;
    for (const t of r.summary.topPeriods) items.push({ periodicity: t, calibration: r.calibration, source: r.file });
  }
  return groupAndPoolPeriods(items, options);
}

/** The micrograph side of a reconciliation from a batch: its period groups and pooled sheets. */
export function batchMicrographSide(results: ImageResult[], groups: PeriodGroup[] = batchPeriodGroups(results)): MicrographSide {
  const ok = results.filter((r) => r.status === 'ok');
  const thickness = summarize(ok.flatMap((r) => r.summary.sheetThicknessNm));
  const rels = ok.flatMap((r) => (r.calibration ? [r.calibration.relUncertainty] : []));
  return {
    periods: groups.map((g) => ({ periodNm: g.budget.value, uncertaintyNm: g.budget.combined, label: `${g.n} period${g.n === 1 ? '' : 's'} from ${g.sources.length} image${g.sources.length === 1 ? '' : 's'}` })),
    sheets: thickness ? { n: thickness.n, meanNm: thickness.mean, sdNm: thickness.sd, medianNm: thickness.median } : undefined,
    calibrationRelUncertainty: rels.length ? quantile(rels, 0.5) : undefined,
  };
}

/** A batch against a diffraction set. */
export interface BatchComparison {
  groups: PeriodGroup[];
  reconciliation: Reconciliation;
}

/**
 * Reconciles a batch with a diffraction set.
 * @param results the batch's file results
 * @param diffraction the set's lines and series (`diffractionSideOfSet`)
 * @returns the period groups and the reconciliation (`reconcile`: pairs with z, thickness against crystallite size, a calibration proposal never applied)
 */
export function compareBatchWithDiffraction(results: ImageResult[], diffraction: DiffractionSide): BatchComparison {
  const groups = batchPeriodGroups(results);
  return { groups, reconciliation: reconcile(batchMicrographSide(results, groups), diffraction) };
}

/**
 * The comparison as CSV: one row per period group with its best diffraction match.
 * @returns CSV text (RFC 4180) with a header row; units in the column names
 */
export function comparisonCsv(c: BatchComparison, setName: string): string {
  const head = ['diffractionSet', ...budgetCsvHeader('period', 'nm'), 'birgeRatio', 'periods', 'images', 'dNm', 'uDNm', 'line', 'relativeDifference', 'z'];
  const r4 = (v: number | undefined) => (v === undefined || !Number.isFinite(v) ? null : Number(v.toPrecision(4)));
  const rows = c.groups.map((g, i) => {
    const b = c.reconciliation.best[i];
    return [setName, ...budgetCsvCells(g.budget), r4(g.birgeRatio), g.n, g.sources.length, b ? Number(b.dNm.toPrecision(6)) : null, r4(b?.dUncNm), b?.label ?? null, r4(b?.relDiff), r4(b?.z)];
  });
  return csvTable(head, rows);
}

/**
 * The diffraction lines and the batch's periods on one q axis (q = 2π/d, nm⁻¹), as SVG.
 *
 * @param c the comparison
 * @param diffraction the same set's lines
 * @param title a title (the set's name)
 * @returns a stand-alone SVG document, 640 × 300 user units: a stick per line (height by relative
 *   intensity, full when unknown), labelled; each period group a triangle with its ±u bar
 */
export function diffractionOverlaySvg(c: BatchComparison, diffraction: DiffractionSide, title: string): string {
  const W = 640;
  const H = 300;
  const left = 40;
  const right = 15;
  const top = 35;
  const bottom = 50;
  const pw = W - left - right;
  const ph = H - top - bottom;
  const qs = [...diffraction.lines.map((l) => dToQ(l.dNm)), ...c.groups.map((g) => dToQ(g.budget.value))];
  const qMax = qs.length ? Math.max(...qs) * 1.08 : 10;
  const sx = (q: number) => left + (q / qMax) * pw;
  const maxI = Math.max(0, ...diffraction.lines.map((l) => l.intensity ?? 0));
  const parts: string[] = [
    `<svg xmlns="http://www.w3.org/2000/svg" width="${W}" height="${H}" viewBox="0 0 ${W} ${H}" font-family="sans-serif" font-size="11">`,
    `<rect width="${W}" height="${H}" fill="white"/>`,
    `<text x="${W / 2}" y="20" text-anchor="middle" font-size="14">${escapeXml(title)}</text>`,
    `<line x1="${left}" y1="${top + ph}" x2="${left + pw}" y2="${top + ph}" stroke="black"/>`,
  ];
  for (const l of diffraction.lines) {
    const x = sx(dToQ(l.dNm));
    const hFrac = maxI > 0 && l.intensity ? Math.max(0.08, l.intensity / maxI) : 1;
    const y = top + ph - hFrac * ph;
    parts.push(`<line class="line" x1="${x.toFixed(2)}" y1="${(top + ph).toFixed(2)}" x2="${x.toFixed(2)}" y2="${y.toFixed(2)}" stroke="#333" stroke-width="1.5"><title>${escapeXml(`${l.label}: d = ${l.dNm.toFixed(4)} nm`)}</title></line>`);
    parts.push(`<text x="${x.toFixed(2)}" y="${(y - 4).toFixed(2)}" text-anchor="middle" font-size="9">${escapeXml(l.label)}</text>`);
  }
  c.groups.forEach((g, i) => {
    const q = dToQ(g.budget.value);
    const qLo = dToQ(g.budget.value + g.budget.expanded);
    const qHi = dToQ(Math.max(1e-9, g.budget.value - g.budget.expanded));
    const x = sx(q);
    const y = top + ph + 14;
    const b = c.reconciliation.best[i];
    parts.push(`<line x1="${sx(qLo).toFixed(2)}" y1="${y}" x2="${Math.min(left + pw, sx(qHi)).toFixed(2)}" y2="${y}" stroke="#c0392b"/>`);
    parts.push(`<path class="period" d="M ${x.toFixed(2)} ${y - 6} l -5 9 h 10 z" fill="#c0392b"><title>${escapeXml(`${formatBudget(g.budget)} from ${g.sources.length} images${b ? `; ${b.label}, z = ${b.z.toFixed(2)}` : '; no match'}`)}</title></path>`);
  });
  for (const q of [0, qMax / 2, qMax]) parts.push(`<text x="${sx(q).toFixed(2)}" y="${top + ph + 34}" text-anchor="middle">${Number(q.toPrecision(3))}</text>`);
  parts.push(`<text x="${left + pw / 2}" y="${H - 4}" text-anchor="middle">q = 2π/d (nm⁻¹); black: diffraction lines, red: micrograph periods ± expanded uncertainty</text>`);
  parts.push('</svg>');
  return `${parts.join('\n')}\n`;
}
