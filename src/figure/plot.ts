/**
 * A plot as data (what the app's plot element shows and what exports and reports draw): an x
 * axis, traces, an optional error band, point marks and labelled vertical rules with uncertainty
 * bands. `plotSvg` draws it as a stand-alone SVG document (the exported figure, the report's plot),
 * `plotTable` gives its data as a table (the text alternative and the CSV of a plot).
 */
import { escapeXml } from './xml';
import { placeLabels, ruleLabelCandidates, textWidthEstimate } from './labels';
import { niceTicks, tickText } from './ticks';
import type { CsvCell } from '../measure/tools';

/** How a trace is drawn. */
export type TraceStyle = 'data' | 'fit' | 'background';

/** One trace over the plot's x samples. */
export interface PlotTrace {
  /** Name with unit where it has one, e.g. "mean grey value". */
  label: string;
  /** Values at the x samples (NaN: no value). */
  y: ArrayLike<number>;
  style: TraceStyle;
}

/** A mark on a trace (a fringe maximum or minimum, a chosen point). */
export interface PlotMark {
  x: number;
  y: number;
  kind: 'max' | 'min' | 'pick';
}

/** A labelled vertical line, with an optional band [lo, hi] (a period and its ±). */
export interface PlotRule {
  x: number;
  label: string;
  lo?: number;
  hi?: number;
}

/** A plot as data. */
export interface PlotData {
  /** File-name stem for exports, e.g. "line-profile". */
  id: string;
  /** Title in the user's words. */
  title: string;
  /** Axis titles with their units, e.g. "distance along the line (nm)". */
  xLabel: string;
  yLabel: string;
  /** The x samples, ascending. */
  x: ArrayLike<number>;
  traces: PlotTrace[];
  /** Lower and upper edge of an error band around the first trace, with what it is. */
  band?: { lo: ArrayLike<number>; hi: ArrayLike<number>; label: string } | null;
  marks?: PlotMark[];
  rules?: PlotRule[];
  /** One sentence for a screen reader: what the plot shows and what to look at. */
  description: string;
}

/** Options of {@link plotSvg}. */
export interface PlotSvgOptions {
  /** Size in SVG units (CSS px at 100 %); default 640 × 360. */
  width?: number;
  height?: number;
  /** The x range shown (default: all samples). */
  xRange?: [number, number];
  /** The y range shown (default: the data's, padded by 6 %). */
  yRange?: [number, number];
  /** Font size of tick labels (default 12, at least 11). */
  fontPx?: number;
}

const STROKE: Record<TraceStyle, string> = { data: '#1f5f8b', fit: '#b07d00', background: '#7a7a7a' };

/**
 * The data range of a plot: x over all samples, y over the traces and the band (finite values).
 * @param p the plot
 * @returns [x0, x1, y0, y1]; y padded by 6 % of its span (1 when flat); NaN when there is no finite sample
 */
export function plotExtent(p: PlotData): [number, number, number, number] {
  let x0 = Infinity, x1 = -Infinity, y0 = Infinity, y1 = -Infinity;
  const n = p.x.length;
  for (let i = 0; i < n; i++) {
    const xv = p.x[i];
    if (!Number.isFinite(xv)) continue;
    let any = false;
    for (const t of p.traces) {
      const v = t.y[i];
      if (Number.isFinite(v)) { y0 = Math.min(y0, v); y1 = Math.max(y1, v); any = true; }
    }
    for (const v of p.band ? [p.band.lo[i], p.band.hi[i]] : []) if (Number.isFinite(v)) { y0 = Math.min(y0, v); y1 = Math.max(y1, v); }
    if (any) { x0 = Math.min(x0, xv); x1 = Math.max(x1, xv); }
  }
  if (!(x1 >= x0)) return [NaN, NaN, NaN, NaN];
  if (!(y1 > y0)) { y0 -= 1; y1 += 1; }
  const pad = (y1 - y0) * 0.06;
  return [x0, x1, y0 - pad, y1 + pad];
}

/**
 * A plot as a stand-alone SVG document, light background, for exports, slides and reports.
 *
 * @param p the plot
 * @param options size, the x and y ranges shown, tick font size
 * @returns SVG text with a <title> and <desc> (the plot's title and description); rule labels
 *   placed so that they never overlap (a label with no room is left out: the rule stays)
 * @throws RangeError naming a size below 200 × 120 or a font below 11 px
 * Reference: 1–2–5 axis ticks (common practice); label placement as placeLabels.
 */
export function plotSvg(p: PlotData, options: PlotSvgOptions = {}): string {
  const W = options.width ?? 640;
  const H = options.height ?? 360;
  const font = options.fontPx ?? 12;
  if (!(W >= 200 && H >= 120)) throw new RangeError(`a plot needs at least 200 × 120 units, got ${W} × ${H}`);
  if (!(font >= 11)) throw new RangeError(`tick labels must be at least 11 px, got ${font}`);
  const left = 12 + font * 4.5;
  const right = 14;
  const top = 28;
  const bottom = font * 3.4;
  const pw = W - left - right;
  const ph = H - top - bottom;
  const [ex0, ex1, ey0, ey1] = plotExtent(p);
  const [x0, x1] = options.xRange ?? [ex0, ex1];
  const [y0, y1] = options.yRange ?? [ey0, ey1];
  const parts: string[] = [
    `<svg xmlns="http://www.w3.org/2000/svg" width="${W}" height="${H}" viewBox="0 0 ${W} ${H}" font-family="sans-serif" font-size="${font}" role="img">`,
    `<title>${escapeXml(p.title)}</title><desc>${escapeXml(p.description)}</desc>`,
    `<rect width="${W}" height="${H}" fill="white"/>`,
    `<text x="${left}" y="18" font-size="${font + 1}" font-weight="600">${escapeXml(p.title)}</text>`,
  ];
  if (!(x1 > x0) || !(y1 > y0)) {
    parts.push(`<rect x="${left}" y="${top}" width="${pw}" height="${ph}" fill="none" stroke="#444"/><text x="${left + 8}" y="${top + 20}">no data</text></svg>`);
    return parts.join('');
  }
  const sx = (v: number) => left + ((v - x0) / (x1 - x0)) * pw;
  const sy = (v: number) => top + ph - ((v - y0) / (y1 - y0)) * ph;
  const f = (v: number) => v.toFixed(1);
  parts.push(`<defs><clipPath id="plot-area"><rect x="${left}" y="${top}" width="${pw}" height="${ph}"/></clipPath></defs>`);
  const xt = niceTicks(x0, x1, Math.max(3, Math.floor(pw / (font * 6))));
  const yt = niceTicks(y0, y1, Math.max(3, Math.floor(ph / (font * 3))));
  const xs = xt.length > 1 ? xt[1] - xt[0] : 1;
  const ys = yt.length > 1 ? yt[1] - yt[0] : 1;
  for (const t of yt) parts.push(`<line x1="${left}" x2="${left + pw}" y1="${f(sy(t))}" y2="${f(sy(t))}" stroke="#e3e3e3"/><text x="${left - 5}" y="${f(sy(t) + font / 3)}" text-anchor="end" fill="#222">${tickText(t, ys)}</text>`);
  for (const t of xt) parts.push(`<line x1="${f(sx(t))}" x2="${f(sx(t))}" y1="${top}" y2="${top + ph}" stroke="#e3e3e3"/><text x="${f(sx(t))}" y="${f(top + ph + font + 3)}" text-anchor="middle" fill="#222">${tickText(t, xs)}</text>`);
  parts.push('<g clip-path="url(#plot-area)">');
  const rules = p.rules ?? [];
  for (const r of rules) {
    if (r.lo !== undefined && r.hi !== undefined && Number.isFinite(r.lo) && Number.isFinite(r.hi)) {
      const a = sx(Math.min(r.lo, r.hi));
      const b = sx(Math.max(r.lo, r.hi));
      parts.push(`<rect x="${f(a)}" y="${top}" width="${f(Math.max(1, b - a))}" height="${ph}" fill="#3c9a4c" fill-opacity="0.15"/>`);
    }
  }
  if (p.band) {
    const up: string[] = [];
    const lo: string[] = [];
    for (let i = 0; i < p.x.length; i++) {
      if (!Number.isFinite(p.band.lo[i]) || !Number.isFinite(p.band.hi[i]) || !Number.isFinite(p.x[i])) continue;
      up.push(`${f(sx(p.x[i]))},${f(sy(p.band.hi[i]))}`);
      lo.push(`${f(sx(p.x[i]))},${f(sy(p.band.lo[i]))}`);
    }
    if (up.length > 1) parts.push(`<polygon points="${[...up, ...lo.reverse()].join(' ')}" fill="#1f5f8b" fill-opacity="0.18"/>`);
  }
  for (const t of p.traces) {
    const d: string[] = [];
    let pen = false;
    for (let i = 0; i < p.x.length; i++) {
      const v = t.y[i];
      if (!Number.isFinite(v) || !Number.isFinite(p.x[i])) { pen = false; continue; }
      d.push(`${pen ? 'L' : 'M'}${f(sx(p.x[i]))},${f(sy(v))}`);
      pen = true;
    }
    const dash = t.style === 'background' ? ' stroke-dasharray="5 3"' : '';
    parts.push(`<path d="${d.join('')}" fill="none" stroke="${STROKE[t.style]}" stroke-width="${t.style === 'fit' ? 2 : 1.3}"${dash}/>`);
  }
  for (const m of p.marks ?? []) {
    if (m.x < x0 || m.x > x1) continue;
    const fill = m.kind === 'min' ? 'white' : m.kind === 'pick' ? '#c0561b' : '#b07d00';
    parts.push(`<circle cx="${f(sx(m.x))}" cy="${f(sy(m.y))}" r="3.2" fill="${fill}" stroke="#b07d00" stroke-width="1.2"/>`);
  }
  for (const r of rules) if (r.x >= x0 && r.x <= x1) parts.push(`<line x1="${f(sx(r.x))}" x2="${f(sx(r.x))}" y1="${top}" y2="${top + ph}" stroke="#2f7d3c" stroke-width="1.2" stroke-dasharray="4 2"/>`);
  parts.push('</g>');
  // rule labels: never overlapping, left out where there is no room
  const shown = rules.filter((r) => r.x >= x0 && r.x <= x1 && r.label);
  const labelFont = font;
  const placed = placeLabels(shown.map((r) => {
    const w = textWidthEstimate(r.label, labelFont);
    return { x: sx(r.x), y: top, width: w, height: labelFont + 2, candidates: ruleLabelCandidates(sx(r.x), top, w, labelFont + 2) };
  }), { bounds: { x: left, y: top, width: pw, height: ph } });
  shown.forEach((r, i) => {
    const b = placed[i];
    if (!b.placed) return;
    parts.push(`<rect x="${f(b.box.x)}" y="${f(b.box.y)}" width="${f(b.box.width)}" height="${f(b.box.height)}" fill="white" fill-opacity="0.8"/><text x="${f(b.box.x + 1)}" y="${f(b.box.y + labelFont - 1)}" fill="#2f7d3c">${escapeXml(r.label)}</text>`);
  });
  parts.push(`<rect x="${left}" y="${top}" width="${pw}" height="${ph}" fill="none" stroke="#444"/>`);
  parts.push(`<text x="${left + pw / 2}" y="${H - 6}" text-anchor="middle" fill="#222">${escapeXml(p.xLabel)}</text>`);
  parts.push(`<text x="${font + 2}" y="${top + ph / 2}" text-anchor="middle" fill="#222" transform="rotate(-90 ${font + 2} ${top + ph / 2})">${escapeXml(p.yLabel)}</text>`);
  parts.push('</svg>');
  return parts.join('');
}

/**
 * A plot's data as a table: one row per x sample with every trace and the band; the text
 * alternative of the plot and the CSV of its data.
 * @param p the plot
 * @returns header (axis titles and trace labels, units in the names) and rows (null for no value)
 */
export function plotTable(p: PlotData): { header: string[]; rows: CsvCell[][] } {
  const header = [p.xLabel, ...p.traces.map((t) => t.label), ...(p.band ? [`${p.band.label} lower`, `${p.band.label} upper`] : [])];
  const num = (v: number | undefined) => (v !== undefined && Number.isFinite(v) ? Number(v.toPrecision(7)) : null);
  const rows: CsvCell[][] = [];
  for (let i = 0; i < p.x.length; i++) {
    rows.push([num(p.x[i]), ...p.traces.map((t) => num(t.y[i])), ...(p.band ? [num(p.band.lo[i]), num(p.band.hi[i])] : [])]);
  }
  return { header, rows };
}
