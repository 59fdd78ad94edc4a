/**
 * The report of one image (and of a batch) as ONE self-contained HTML file that prints well to
 * A4: the image with its scale bar and the measurements drawn over it, the results with what each
 * ± contains, the plots, the calibration and its source, the uncertainty statement, the program
 * version and the recipe, and the caution that results inform research. Pictures are embedded as
 * data: URLs, plots as inline SVG; nothing is fetched when the file is opened.
 */
import { encode } from 'fast-png';
import { CALIBRATION_SOURCE_WORDS, type Calibration, type GreyImage } from '../image/grey-image';
import { displayLimits, reduceForDisplay, stretchToGrey } from '../image/display';
import { calibrationPartsText } from '../calibration/calibration';
import { budgetContents, checkCoverageFactor, expressPeriod, formatPlusMinus, UNCERTAINTY_PARTS, UNCERTAINTY_PART_WORDS, type Measurement } from '../measure/measurement';
import { toolOf } from '../measure/tools';
import { histogramSvg, MIN_VALUES_FOR_STATISTICS, roundScaleBar } from './batch-figure';
import { escapeXml } from './xml';
import { pooledStats } from '../batch/export';
import type { FileResult } from '../batch/run';
import { plotSvg, type PlotData } from './plot';
import type { FigureShape } from './shapes';
import { withBudgetLabels } from './budget-labels';

/** The caution every report carries. */
export const REPORT_CAUTION =
  'These results inform research. They do not replace a calibration by an accredited laboratory: the pixel size, and with it every length in nm, is only as good as the calibration stated above.';

/** What an image report is made of. */
export interface ImageReportInput {
  /** The image (its pixels are shown reduced to at most `pictureMaxPx`). */
  image: GreyImage;
  /** The image's file name. */
  fileName: string;
  /** The results to report (any tools), with the calibration in force applied late. */
  records: readonly Measurement[];
  /** The plots to include (e.g. from profilePlot, radialPlot). */
  plots?: readonly PlotData[];
  /** Coverage factor of every ± (default 2). */
  k?: number;
  /** Program name and version, e.g. "Stratameter 0.1.0". */
  software: string;
  /** Time of the report, ISO 8601 (default now). */
  createdIso?: string;
  /** Longest side of the embedded picture, px (default 900). */
  pictureMaxPx?: number;
}

/** Standard base64 with padding (RFC 4648 §4). */
function base64(bytes: Uint8Array): string {
  const A = 'ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/';
  let out = '';
  let i = 0;
  for (; i + 2 < bytes.length; i += 3) {
    const n = (bytes[i] << 16) | (bytes[i + 1] << 8) | bytes[i + 2];
    out += A[n >> 18] + A[(n >> 12) & 63] + A[(n >> 6) & 63] + A[n & 63];
  }
  if (i < bytes.length) {
    const n = (bytes[i] << 16) | ((bytes[i + 1] ?? 0) << 8);
    out += A[n >> 18] + A[(n >> 12) & 63] + (i + 1 < bytes.length ? A[(n >> 6) & 63] : '=') + '=';
  }
  return out;
}

/**
 * The image as an 8-bit grey PNG through the app's one display stretch, reduced by a whole factor
 * (block mean) so its longest side is at most `maxPx`.
 * @param image the image
 * @param maxPx longest side (≥ 64)
 * @returns PNG bytes and the factor the image was reduced by
 * @throws RangeError naming a maxPx below 64
 */
export function reportPicturePng(image: GreyImage, maxPx = 900): { png: Uint8Array; factor: number; width: number; height: number } {
  if (!(maxPx >= 64)) throw new RangeError(`the report picture needs at least 64 px on its longest side, got ${maxPx}`);
  const factor = Math.max(1, Math.ceil(Math.max(image.width, image.height) / maxPx));
  const r = reduceForDisplay(image.data, image.width, image.height, factor, 'mean');
  const grey = stretchToGrey(r.data, displayLimits(r.data), new Uint8Array(r.data.length));
  return { png: encode({ width: r.width, height: r.height, data: grey, channels: 1, depth: 8 }), factor, width: r.width, height: r.height };
}

/**
 * The figures of records over their image (each tool's figure from the registry); a record of a
 * kind with no figure adds nothing.
 * @param records the records
 * @param k coverage factor: when given, every period in a label carries its ± at this k
 *   ("d 1.250 ± 0.063 nm (k = 2)", withBudgetLabels); without it the labels give the value only
 * @returns the shapes, in image pixels
 * @throws RangeError naming a bad k
 */
export function recordShapes(records: readonly Measurement[], k?: number): FigureShape[] {
  if (k !== undefined) checkCoverageFactor(k);
  return records.flatMap((m) => {
    let shapes: FigureShape[];
    try {
      shapes = toolOf(m.tool).figure(m);
    } catch {
      return [];
    }
    return k === undefined ? shapes : withBudgetLabels(m, shapes, k);
  });
}

const TONE: Record<string, string> = { accent: '#ffcc33', info: '#4fc3f7', warn: '#ff7043' };

/**
 * The image with the measurements drawn over it and a scale bar, as an SVG element (image pixels
 * as user units).
 * @param image the image
 * @param shapes what to draw over it (image pixels)
 * @param calibration the pixel size in force (no bar without one)
 * @param maxPx longest side of the embedded picture
 * @returns SVG text
 */
export function imageFigureSvg(image: GreyImage, shapes: readonly FigureShape[], calibration: Calibration | null, maxPx = 900): string {
  const pic = reportPicturePng(image, maxPx);
  const W = image.width;
  const H = image.height;
  const u = Math.max(W, H) / 400; // one "screen pixel" of a 400 px wide figure, in image px
  const f = (v: number) => Number(v.toFixed(2));
  const parts = [`<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 ${W} ${H}" role="img" class="micrograph" font-family="sans-serif">`,
    `<title>${escapeXml(`The image with the measurements drawn over it${calibration ? ' and a scale bar' : ''}`)}</title>`,
    `<image href="data:image/png;base64,${base64(pic.png)}" x="0" y="0" width="${pic.width * pic.factor}" height="${pic.height * pic.factor}" preserveAspectRatio="none" image-rendering="optimizeQuality"/>`];
  const label = (x: number, y: number, text: string, colour: string) =>
    `<text x="${f(x)}" y="${f(y)}" font-size="${f(11 * u)}" fill="${colour}" stroke="black" stroke-width="${f(2.5 * u)}" paint-order="stroke">${escapeXml(text)}</text>`;
  for (const s of shapes) {
    const c = TONE[s.tone ?? 'accent'] ?? TONE.accent;
    if (s.kind === 'rect') {
      parts.push(`<rect x="${f(s.x)}" y="${f(s.y)}" width="${f(s.width)}" height="${f(s.height)}" fill="none" stroke="${c}" stroke-width="${f(1.5 * u)}"/>`);
      if (s.label) parts.push(label(s.x, Math.max(12 * u, s.y - 4 * u), s.label, c));
    } else if (s.kind === 'line') {
      parts.push(`<line x1="${f(s.x0)}" y1="${f(s.y0)}" x2="${f(s.x1)}" y2="${f(s.y1)}" stroke="${c}" stroke-width="${f(Math.max(1.5 * u, s.widthPx))}" stroke-opacity="${s.widthPx > 3 * u ? 0.35 : 1}"/>`);
      parts.push(`<line x1="${f(s.x0)}" y1="${f(s.y0)}" x2="${f(s.x1)}" y2="${f(s.y1)}" stroke="${c}" stroke-width="${f(1.2 * u)}"/>`);
      if (s.label) parts.push(label(s.x1 + 5 * u, s.y1, s.label, c));
    } else {
      parts.push(`<circle cx="${f(s.x)}" cy="${f(s.y)}" r="${f(4 * u)}" fill="none" stroke="${c}" stroke-width="${f(1.5 * u)}"/>`);
      if (s.label) parts.push(label(s.x + 6 * u, s.y - 4 * u, s.label, c));
    }
  }
  if (calibration) {
    const bar = roundScaleBar(W, calibration.nmPerPx);
    const x = 0.04 * W;
    const y = H - 0.04 * H - 4 * u;
    parts.push(`<rect x="${f(x - 4 * u)}" y="${f(y - 18 * u)}" width="${f(bar.lengthPx + 8 * u)}" height="${f(26 * u)}" fill="black" fill-opacity="0.6"/>`,
      `<rect x="${f(x)}" y="${f(y)}" width="${f(bar.lengthPx)}" height="${f(3 * u)}" fill="white"/>`,
      `<text x="${f(x + bar.lengthPx / 2)}" y="${f(y - 5 * u)}" font-size="${f(12 * u)}" fill="white" text-anchor="middle">${escapeXml(bar.label)}</text>`);
  }
  parts.push('</svg>');
  return parts.join('');
}

const TOOL_WORDS: Record<string, string> = {
  profile: 'line profile', spectrum: 'power spectrum of a region', rings: 'rings', 'sheets-line': 'sheets along a line',
  'sheets-auto': 'sheets found automatically', domains: 'domains', calibration: 'calibration',
};

const esc = escapeXml;

/** Results: one row per period of every record, d with its ± in nm (when calibrated) and in px. */
function resultsTable(records: readonly Measurement[], k: number): string {
  const rows: string[] = [];
  records.forEach((m, ri) => {
    m.periodicities.forEach((p, i) => {
      const b = expressPeriod(p, m.calibration, k);
      const px = expressPeriod(p, null, k);
      rows.push(`<tr><td>${ri + 1}</td><td>${esc(TOOL_WORDS[m.tool] ?? m.tool)}</td><td>${i + 1}</td>
        <td class="n">${b.unit === 'nm' ? `${formatPlusMinus(b.value, b.expanded)}` : '–'}</td><td class="n">${formatPlusMinus(px.value, px.expanded)}</td>
        <td class="n">${Number.isFinite(p.angleDeg) ? `${p.angleDeg.toFixed(1)}°` : '–'}</td><td>${esc(p.geometry)}</td><td>${esc(budgetContents(b))}</td><td>${esc(p.flags.join(', '))}</td></tr>`);
    });
    if (!m.periodicities.length) rows.push(`<tr><td>${ri + 1}</td><td>${esc(TOOL_WORDS[m.tool] ?? m.tool)}</td><td colspan="7">no significant period</td></tr>`);
  });
  return `<table class="results"><thead><tr><th>record</th><th>tool</th><th>#</th><th>d (nm) ± U</th><th>d (px) ± U</th><th>direction</th><th>geometry</th><th>± contains</th><th>flags</th></tr></thead>
    <tbody>${rows.join('')}</tbody></table>`;
}

/** The budget of every period, part by part (standard uncertainties, k = 1). */
function budgetTable(records: readonly Measurement[], k: number): string {
  const rows: string[] = [];
  records.forEach((m, ri) => m.periodicities.forEach((p, i) => {
    const b = expressPeriod(p, m.calibration, k);
    const u2 = (v: number) => (v > 0 ? String(Number(v.toPrecision(2))) : '–');
    rows.push(`<tr><td>${ri + 1}.${i + 1}</td><td class="n">${formatPlusMinus(b.value, b.expanded).split(' ± ')[0]}</td>${UNCERTAINTY_PARTS.map((q) => `<td class="n">${u2(b.parts[q])}</td>`).join('')}
      <td class="n">${u2(b.combined)}</td><td class="n">${u2(b.expanded)}</td><td>${b.unit}</td></tr>`);
  }));
  if (!rows.length) return '';
  return `<table class="budget"><thead><tr><th>period</th><th>value</th>${UNCERTAINTY_PARTS.map((q) => `<th>u ${esc(UNCERTAINTY_PART_WORDS[q])}</th>`).join('')}<th>u combined</th><th>U (k = ${k})</th><th>unit</th></tr></thead>
    <tbody>${rows.join('')}</tbody></table>`;
}

function calibrationSection(cal: Calibration | null): string {
  if (!cal) return '<p><b>Uncalibrated.</b> No pixel size was given: every length is in pixels.</p>';
  const axes = cal.nmPerPxY ? ` along x, ${cal.nmPerPxY.toPrecision(5)} nm/px along y` : '';
  const shear = cal.shearDeg ? `, shear ${cal.shearDeg.toFixed(2)}°` : '';
  return `<p>Pixel size <b>${cal.nmPerPx.toPrecision(5)} nm/px</b>${axes}${shear}, from ${esc(CALIBRATION_SOURCE_WORDS[cal.source] ?? cal.source)}: ${esc(cal.detail)}.</p>
    <p>Relative standard uncertainty ${(cal.relUncertainty * 100).toPrecision(2)} % (k = 1): ${esc(calibrationPartsText(cal))}. It is part of every ± in nm.</p>`;
}

function recipeSection(records: readonly Measurement[]): string {
  const items = records.map((m, i) => {
    const r = m.region;
    const n = (v: number) => Number(v.toFixed(1));
    const region = !r ? 'whole image'
      : r.kind === 'rect' ? `rectangle x ${n(r.x)}, y ${n(r.y)}, ${n(r.width)} × ${n(r.height)} px`
        : `line (${n(r.x0)}, ${n(r.y0)}) to (${n(r.x1)}, ${n(r.y1)}) px, ${n(r.widthPx)} px wide`;
    const settings = Object.entries(m.settings ?? {}).map(([key, v]) => `${esc(key)} ${esc(typeof v === 'object' ? JSON.stringify(v) : String(v))}`).join('; ');
    return `<li>Record ${i + 1}, ${esc(TOOL_WORDS[m.tool] ?? m.tool)} (${esc(m.createdIso)}): region ${region}; ${settings || 'default settings'}.</li>`;
  });
  return `<ol class="recipe">${items.join('')}</ol>`;
}

const PRINT_CSS = `
@page { size: A4; margin: 14mm 13mm; }
* { box-sizing: border-box; }
body { font: 10pt/1.4 system-ui, 'Segoe UI', Roboto, sans-serif; color: #111; margin: 0 auto; max-width: 184mm; padding: 8mm 0; }
h1 { font-size: 15pt; margin: 0 0 2mm; }
h2 { font-size: 11.5pt; margin: 5mm 0 2mm; border-bottom: 0.3mm solid #888; padding-bottom: 1mm; break-after: avoid; }
p { margin: 1.5mm 0; }
.meta { color: #444; font-size: 9pt; }
figure { margin: 2mm 0; break-inside: avoid; }
figure svg.micrograph { display: block; width: auto; height: auto; max-width: 100%; max-height: 120mm; margin: 0 auto; }
figure svg.plot { display: block; width: 100%; height: auto; }
figcaption { font-size: 8.5pt; color: #333; margin-top: 1mm; }
table { border-collapse: collapse; width: 100%; font-size: 8.5pt; margin: 1mm 0 2mm; break-inside: auto; }
th, td { border-bottom: 0.2mm solid #bbb; padding: 0.6mm 1.2mm; text-align: left; vertical-align: top; }
th { background: #eee; font-weight: 600; }
td.n { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
tr { break-inside: avoid; }
.plots { display: grid; grid-template-columns: 1fr; gap: 2mm; }
.caution { border: 0.3mm solid #b07d00; background: #fff8e1; padding: 2mm 3mm; margin-top: 4mm; break-inside: avoid; }
ol.recipe, ul.notes { margin: 1mm 0; padding-left: 6mm; font-size: 9pt; }
@media screen { body { padding: 10mm 4mm; } }
`;

/**
 * The report of one image as one self-contained HTML document (inline style, embedded picture,
 * inline SVG plots; no script, nothing fetched) that prints to A4.
 *
 * @param input the image, its records and plots, the coverage factor, the program
 * @returns the HTML text
 * @throws RangeError naming a bad coverage factor or a record of another image's calibration
 * Notes: each record is expressed with its own calibration (the one in force when it was kept);
 *   the calibration section shows the image's. Lengths stay in px in the records (record v2).
 * Reference: uncertainty statement after the GUM (JCGM 100:2008, §7.2.3: U = k·u with k stated).
 */
export function imageReportHtml(input: ImageReportInput): string {
  const k = checkCoverageFactor(input.k ?? 2);
  const { image, records } = input;
  const cal = image.calibration;
  const created = input.createdIso ?? new Date().toISOString();
  const shapes = recordShapes(records, k);
  const plots = input.plots ?? [];
  const notes = [...new Set(records.flatMap((m) => m.notes))];
  const contains = [...new Set(records.flatMap((m) => m.periodicities.map((p) => budgetContents(expressPeriod(p, m.calibration, k)))))];
  const title = `Measurement report: ${input.fileName}`;
  return `<!doctype html>
<html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1">
<title>${esc(title)}</title>
<style>${PRINT_CSS}</style></head>
<body>
<h1>${esc(title)}</h1>
<p class="meta">${esc(input.software)} · report made ${esc(created)} · ${image.width} × ${image.height} px, ${image.bitDepth}-bit ${esc(image.sampleKind)}</p>
<figure>${imageFigureSvg(image, shapes, cal, input.pictureMaxPx ?? 900)}
<figcaption>The image (display stretch 0.5–99.5 %) with the measured line and regions and their d-spacings (± at k = ${k})${cal ? '; the scale bar from the pixel size below' : ''}.</figcaption></figure>
<h2>Results</h2>
${records.length ? resultsTable(records, k) : '<p>No measurement was kept for this image.</p>'}
${notes.length ? `<ul class="notes">${notes.map((n) => `<li>${esc(n)}</li>`).join('')}</ul>` : ''}
${plots.length ? `<h2>Plots</h2><div class="plots">${plots.map((p) => `<figure>${plotSvg(p, { width: 680, height: 250 }).replace('<svg ', '<svg class="plot" ')}<figcaption>${esc(p.description)}</figcaption></figure>`).join('')}</div>` : ''}
<h2>Calibration</h2>
${calibrationSection(cal)}
<h2>Uncertainty</h2>
<p>Every ± is the expanded uncertainty U = k·u with coverage factor k = ${k}${k === 2 ? ' (about 95 % coverage for a normal distribution)' : ''}, after the GUM (JCGM 100:2008). ${contains.length === 1 ? `It contains the ${esc(contains[0])} parts.` : contains.length ? `Depending on the result it contains: ${esc(contains.join('; '))} (see the table).` : ''}
Statistical: from the noise of the data; local variation: how the period varies over the line or region; method: the disagreement of independent estimators; calibration: the pixel size's uncertainty (lengths in nm only).</p>
${budgetTable(records, k)}
<h2>Program and recipe</h2>
<p>${esc(input.software)}. Each result was made with:</p>
${recipeSection(records)}
<p class="caution"><b>Caution.</b> ${esc(REPORT_CAUTION)}</p>
</body></html>
`;
}

/** What a batch report is made of. */
export interface BatchReportInput {
  /** The batch's file results, in the order to list them. */
  results: readonly FileResult[];
  /** The recipe the batch ran (shown as it was given). */
  recipe: unknown;
  /** Program name and version, e.g. "Stratameter 0.1.0". */
  software: string;
  /** Coverage factor of every ± (default 2). */
  k?: number;
  /** Time the batch started, ISO 8601. */
  createdIso?: string;
  /** A name for the batch (default "batch"). */
  title?: string;
}

export { MIN_VALUES_FOR_STATISTICS };

/**
 * The report of a batch as one self-contained HTML document that prints to A4: file counts, the
 * pooled strongest period (the one pooling rule) and the distributions, with histograms only
 * from 3 values up (fewer are listed one by one), a row per file with its calibration and
 * periods, the uncertainty statement, the program and the recipe, and the caution.
 *
 * @param input the results, the recipe, the program
 * @returns the HTML text
 * @throws RangeError naming a bad coverage factor
 * Reference: pooling as pooledStats (DerSimonian–Laird random effects); GUM (JCGM 100:2008, §7.2.3).
 */
export function batchReportHtml(input: BatchReportInput): string {
  const k = checkCoverageFactor(input.k ?? 2);
  const results = input.results;
  const pooled = pooledStats([...results], k);
  const ok = results.filter((r) => r.status === 'ok');
  const tops = ok.flatMap((r) => (r.summary.topPeriods[0] && r.calibration ? [{ file: r.file, b: expressPeriod(r.summary.topPeriods[0], r.calibration, k) }] : []));
  const sheets = ok.flatMap((r) => r.summary.sheetThicknessNm);
  const few = (values: number[], unit: string) => `${values.map((v) => Number(v.toPrecision(4))).join(', ')} ${unit} (n = ${values.length}: too few for a mean, a standard deviation or a histogram)`;
  const stats: string[] = [];
  if (tops.length) {
    const t = pooled.topPeriodNm;
    stats.push(tops.length >= MIN_VALUES_FOR_STATISTICS && t
      ? `<p>Strongest period per image: mean ${Number(t.mean.toPrecision(4))} nm, sd ${Number(t.sd.toPrecision(2))} nm, median ${Number(t.median.toPrecision(4))} nm (n = ${t.n}).</p>`
      : `<p>Strongest period per image: ${esc(few(tops.map((x) => x.b.value), 'nm'))}.</p>`);
    if (pooled.pooledTopPeriod) {
      const p = pooled.pooledTopPeriod;
      stats.push(`<p>Pooled over the images: <b>${formatPlusMinus(p.budget.value, p.budget.expanded)} ${p.budget.unit}</b> (k = ${k}; ${esc(budgetContents(p.budget))}; n = ${p.n}${Number.isFinite(p.birgeRatio) ? `, Birge ratio ${p.birgeRatio.toFixed(2)}` : ''}).</p>`);
    }
  }
  if (sheets.length) {
    const t = pooled.sheetThicknessNm;
    stats.push(sheets.length >= MIN_VALUES_FOR_STATISTICS && t
      ? `<p>Sheets: ${pooled.sheetCount ?? sheets.length}, thickness mean ${t.mean.toFixed(2)} nm, sd ${t.sd.toFixed(2)} nm, median ${t.median.toFixed(2)} nm.</p>`
      : `<p>Sheet thickness: ${esc(few(sheets, 'nm'))}.</p>`);
  }
  const hists: string[] = [];
  if (tops.length >= MIN_VALUES_FOR_STATISTICS) hists.push(histogramSvg(tops.map((x) => x.b.value), { xLabel: 'strongest period (nm)', title: 'Strongest period per image' }));
  if (sheets.length >= MIN_VALUES_FOR_STATISTICS) hists.push(histogramSvg(sheets, { xLabel: 'sheet thickness (nm)', title: 'Sheet thickness, all images' }));
  const rows = results.map((r) => {
    if (r.status === 'failed') return `<tr><td>${esc(r.file)}</td><td colspan="4">not measured: ${esc(r.reason ?? 'failed')}</td></tr>`;
    const c = r.calibration;
    const periods = c ? r.summary.topPeriods.map((p) => { const b = expressPeriod(p, c, k); return `${formatPlusMinus(b.value, b.expanded)} nm`; }).join('<br>') : r.summary.topPeriods.map((p) => `${p.periodPx.toPrecision(4)} px`).join('<br>');
    return `<tr><td>${esc(r.file)}</td><td>${c ? `${c.nmPerPx.toPrecision(4)} (${esc(CALIBRATION_SOURCE_WORDS[c.source] ?? c.source)})` : 'none'}</td><td class="n">${periods || '–'}</td>
      <td class="n">${r.summary.sheetCount ?? '–'}</td><td class="n">${r.summary.sheetThicknessNm.length ? r.summary.sheetThicknessNm.length >= MIN_VALUES_FOR_STATISTICS ? `${r.summary.meanThicknessNm!.toFixed(2)} (sd ${r.summary.sdThicknessNm!.toFixed(2)})` : r.summary.sheetThicknessNm.map((v) => v.toFixed(2)).join(', ') : '–'}</td></tr>`;
  });
  const title = input.title ?? 'batch';
  const contains = [...new Set(tops.map((x) => budgetContents(x.b)))];
  return `<!doctype html>
<html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1">
<title>${esc(`Batch report: ${title}`)}</title>
<style>${PRINT_CSS}
.hists { display: grid; grid-template-columns: 1fr 1fr; gap: 3mm; } .hists svg { width: 100%; height: auto; }
pre { font-size: 8pt; white-space: pre-wrap; background: #f4f4f4; padding: 2mm; }</style></head>
<body>
<h1>${esc(`Batch report: ${title}`)}</h1>
<p class="meta">${esc(input.software)} · ${input.createdIso ? `batch of ${esc(input.createdIso)} · ` : ''}${results.length} files: ${pooled.files.ok} measured, ${pooled.files.failed} not measured</p>
<h2>Summary</h2>
${stats.join('\n') || '<p>No period or sheet was found in any file.</p>'}
${hists.length ? `<div class="hists">${hists.join('')}</div>` : ''}
<h2>Files</h2>
<table class="results"><thead><tr><th>file</th><th>nm/px (source)</th><th>strongest periods ± U (k = ${k})</th><th>sheets</th><th>thickness (nm)</th></tr></thead>
<tbody>${rows.join('')}</tbody></table>
<h2>Uncertainty</h2>
<p>Every ± is the expanded uncertainty U = k·u with coverage factor k = ${k}, after the GUM (JCGM 100:2008)${contains.length ? `; per image it contains the ${esc(contains.join(' / '))} parts` : ''}. The pooled period is a random-effects mean of the images' own parts, with the method and calibration parts added once (they are shared); a Birge ratio well above 1 says the images disagree beyond their stated uncertainties. Each file's calibration and its source are in the table.</p>
<h2>Program and recipe</h2>
<p>${esc(input.software)}. The recipe every file was measured with:</p>
<pre>${esc(JSON.stringify(input.recipe, null, 2))}</pre>
<p class="caution"><b>Caution.</b> ${esc(REPORT_CAUTION)}</p>
</body></html>
`;
}
