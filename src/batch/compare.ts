/**
 * A batch set against a diffraction set: the strongest periods of all images grouped into
 * distinct periods, each with its combined uncertainty, reconciled with the diffraction lines;
 * the comparison as CSV and as an SVG overlay on a q axis.
 */
import { reconcile, type DiffractionSide, type MicrographSide, type Reconciliation } from '../diffraction/reconcile';
import { dToQ } from '../diffraction/bragg';
import { quantile, summarize } from '../measure/stats';
import { csvField } from './export';
import { escapeXml } from './figure';
import type { FileResult } from './run';

/** One distinct period of a batch: the accepted periods of its images that lie together. */
export interface BatchPeriodGroup {
  /** Mean of the members' periods, nm. */
  periodNm: number;
  /** Combined standard uncertainty of the mean: statistical part and the pixel size's part, nm. */
  uncertaintyNm: number;
  /** Statistical part: sd/√n of the members (their own uncertainty for one member), nm. */
  statisticalNm: number;
  /** The pixel size's part: the median relative uncertainty of the members' calibrations × mean, nm. It does not average down over images of one calibration. */
  calibrationNm: number;
  /** Sample standard deviation of the members (0 for one), nm. */
  sdNm: number;
  /** Number of periods in the group. */
  n: number;
  /** The images they come from, in order. */
  files: string[];
}

/** Options of `batchPeriodGroups`. */
export interface BatchPeriodGroupOptions {
  /** Neighbouring periods (sorted) more than this fraction apart start a new group (default 0.04). */
  relGap?: number;
}

/**
 * Groups the accepted periods of a batch's images into distinct periods.
 *
 * Single-linkage grouping on the sorted periods (common practice); combined standard
 * uncertainty of a mean with a fully correlated calibration part (GUM, JCGM 100:2008, §5.2).
 *
 * @param results the batch's file results (failed files are skipped)
 * @param options the relative gap that separates two groups
 * @returns groups by increasing period
 * Notes: every accepted period of every image counts (the file summary's top periods). The
 * statistical part of a group of n ≥ 2 is the larger of sd/√n and the members' own statistical
 * uncertainties combined (rms/√n), so a group of nearly equal values is not claimed more precise
 * than each value is. The calibration part is the same for all images of one calibration and
 * is added in quadrature once.
 */
export function batchPeriodGroups(results: FileResult[], options: BatchPeriodGroupOptions = {}): BatchPeriodGroup[] {
  const relGap = options.relGap ?? 0.04;
  if (!(relGap > 0 && relGap < 1)) throw new RangeError(`relGap must be in (0, 1), got ${relGap}`);
  const items: { p: number; u: number; rel: number; file: string }[] = [];
  for (const r of results) {
    if (r.status !== 'ok') continue;
    const rel = r.calibration?.relUncertainty ?? 0;
    for (const t of r.summary.topPeriods) {
      if (t.periodNm > 0 && t.uncertaintyNm >= 0) items.push({ p: t.periodNm, u: t.uncertaintyNm, rel, file: r.file });
    }
  }
  items.sort((a, b) => a.p - b.p);
  const groups: (typeof items)[] = [];
  for (const it of items) {
    const last = groups[groups.length - 1];
    if (last && it.p - last[last.length - 1].p <= relGap * it.p) last.push(it);
    else groups.push([it]);
  }
  return groups.map((g) => {
    const n = g.length;
    const mean = g.reduce((s, x) => s + x.p, 0) / n;
    const sd = n > 1 ? Math.sqrt(g.reduce((s, x) => s + (x.p - mean) ** 2, 0) / (n - 1)) : 0;
    const rel = quantile(g.map((x) => x.rel), 0.5);
    // each member's own statistical part: its combined u without the calibration share
    const own = g.map((x) => Math.sqrt(Math.max(0, x.u * x.u - (x.rel * x.p) ** 2)));
    const ownMean = Math.sqrt(own.reduce((s, v) => s + v * v, 0) / n) / Math.sqrt(n);
    const statisticalNm = n > 1 ? Math.max(sd / Math.sqrt(n), ownMean) : own[0];
    const calibrationNm = rel * mean;
    const files: string[] = [];
    for (const x of g) if (!files.includes(x.file)) files.push(x.file);
    return { periodNm: mean, uncertaintyNm: Math.hypot(statisticalNm, calibrationNm), statisticalNm, calibrationNm, sdNm: sd, n, files };
  });
}

/** The micrograph side of a reconciliation from a batch: its period groups and pooled sheets. */
export function batchMicrographSide(results: FileResult[], groups: BatchPeriodGroup[] = batchPeriodGroups(results)): MicrographSide {
  const ok = results.filter((r) => r.status === 'ok');
  const thickness = summarize(ok.flatMap((r) => r.summary.sheetThicknessNm));
  const rels = ok.flatMap((r) => (r.calibration ? [r.calibration.relUncertainty] : []));
  return {
    periods: groups.map((g) => ({ periodNm: g.periodNm, uncertaintyNm: g.uncertaintyNm, label: `${g.n} period${g.n === 1 ? '' : 's'} from ${g.files.length} image${g.files.length === 1 ? '' : 's'}` })),
    sheets: thickness ? { n: thickness.n, meanNm: thickness.mean, sdNm: thickness.sd, medianNm: thickness.median } : undefined,
    calibrationRelUncertainty: rels.length ? quantile(rels, 0.5) : undefined,
  };
}

/** A batch against a diffraction set. */
export interface BatchComparison {
  groups: BatchPeriodGroup[];
  reconciliation: Reconciliation;
}

/**
 * Reconciles a batch with a diffraction set.
 * @param results the batch's file results
 * @param diffraction the set's lines and series (`diffractionSideOfSet`)
 * @returns the period groups and the reconciliation (`reconcile`: pairs with z, thickness against crystallite size, a calibration proposal never applied)
 */
export function compareBatchWithDiffraction(results: FileResult[], diffraction: DiffractionSide): BatchComparison {
  const groups = batchPeriodGroups(results);
  return { groups, reconciliation: reconcile(batchMicrographSide(results, groups), diffraction) };
}

/**
 * The comparison as CSV: one row per period group with its best diffraction match.
 * @returns CSV text (RFC 4180) with a header row; units in the column names
 */
export function comparisonCsv(c: BatchComparison, setName: string): string {
  const head = ['diffraction_set', 'period_nm', 'u_period_nm', 'u_statistical_nm', 'u_calibration_nm', 'periods', 'images', 'd_nm', 'u_d_nm', 'line', 'relative_difference', 'z'];
  const rows = c.groups.map((g, i) => {
    const b = c.reconciliation.best[i];
    return [setName, g.periodNm, g.uncertaintyNm, g.statisticalNm, g.calibrationNm, g.n, g.files.length, b?.dNm ?? null, b?.dUncNm ?? null, b?.label ?? null, b?.relDiff ?? null, b?.z ?? null];
  });
  return `${[head, ...rows].map((r) => r.map(csvField).join(',')).join('\r\n')}\r\n`; // RFC 4180 line breaks, as the other tables
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
  const qs = [...diffraction.lines.map((l) => dToQ(l.dNm)), ...c.groups.map((g) => dToQ(g.periodNm))];
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
    const q = dToQ(g.periodNm);
    const qLo = dToQ(g.periodNm + g.uncertaintyNm);
    const qHi = dToQ(Math.max(1e-9, g.periodNm - g.uncertaintyNm));
    const x = sx(q);
    const y = top + ph + 14;
    const b = c.reconciliation.best[i];
    parts.push(`<line x1="${sx(qLo).toFixed(2)}" y1="${y}" x2="${Math.min(left + pw, sx(qHi)).toFixed(2)}" y2="${y}" stroke="#c0392b"/>`);
    parts.push(`<path class="period" d="M ${x.toFixed(2)} ${y - 6} l -5 9 h 10 z" fill="#c0392b"><title>${escapeXml(`${g.periodNm.toFixed(4)} ± ${g.uncertaintyNm.toFixed(4)} nm from ${g.files.length} images${b ? `; ${b.label}, z = ${b.z.toFixed(2)}` : '; no match'}`)}</title></path>`);
  });
  for (const q of [0, qMax / 2, qMax]) parts.push(`<text x="${sx(q).toFixed(2)}" y="${top + ph + 34}" text-anchor="middle">${Number(q.toPrecision(3))}</text>`);
  parts.push(`<text x="${left + pw / 2}" y="${H - 4}" text-anchor="middle">q = 2π/d (nm⁻¹); black: diffraction lines, red: micrograph periods ± u</text>`);
  parts.push('</svg>');
  return `${parts.join('\n')}\n`;
}
