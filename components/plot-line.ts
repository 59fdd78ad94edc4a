/**
 * A small SVG line plot for the panels: axes with 1-2-5 ticks, one trace, an optional error band,
 * point markers and labelled vertical lines. Colours come from classes (see plotStyles), so the
 * page's content security policy (no inline styles) holds.
 */
import { css, html, svg, nothing, type TemplateResult } from 'lit';
import { niceTicks, tickText } from '../src/figure/ticks';

/** A point marker on the trace (fringe maximum, minimum or a chosen point). */
export interface PlotPoint {
  x: number;
  y: number;
  kind: 'max' | 'min' | 'pick';
}

/** A vertical line across the plot with a label at the top. */
export interface PlotRule {
  x: number;
  label: string;
}

/** What {@link linePlot} draws. */
export interface LinePlotOptions {
  /** Width and height of the drawing, CSS px. */
  width: number;
  height: number;
  /** Samples of the trace. */
  x: ArrayLike<number>;
  y: ArrayLike<number>;
  /** Lower and upper edge of an error band (same length as y), optional. */
  lo?: ArrayLike<number> | null;
  hi?: ArrayLike<number> | null;
  /** Axis titles with units. */
  xLabel: string;
  yLabel: string;
  /** Accessible description of the plot. */
  description: string;
  points?: PlotPoint[];
  rules?: PlotRule[];
}

/** Styles the plots need; add to the panel's static styles. */
export const plotStyles = css`
  svg.plot { display: block; background: #0d1115; border: 1px solid var(--line); border-radius: 3px; }
  svg.plot .axis { stroke: #5d6b78; stroke-width: 1; fill: none; }
  svg.plot .grid { stroke: #27313b; stroke-width: 1; }
  svg.plot text { fill: #a9b6c2; font-size: 10px; font-family: inherit; }
  svg.plot text.title { fill: #c7d2dc; font-size: 11px; }
  svg.plot .trace { stroke: #9fd3e6; stroke-width: 1.3; fill: none; }
  svg.plot .band { fill: #9fd3e6; fill-opacity: 0.22; stroke: none; }
  svg.plot .max { fill: #e8c872; }
  svg.plot .min { fill: none; stroke: #e8c872; stroke-width: 1.2; }
  svg.plot .pick { fill: #f0a35e; }
  svg.plot .rule { stroke: #f0a35e; stroke-width: 1; stroke-dasharray: 3 2; }
  svg.plot text.rule-label { fill: #f0a35e; }
`;

/**
 * An SVG line plot.
 *
 * Parameters: options (size, samples, band, axis titles, markers, rules).
 * Returns: a lit template of an `<svg role="img">`; an empty frame with a note when there are
 * fewer than two finite samples.
 */
export function linePlot(o: LinePlotOptions): TemplateResult {
  const left = 46;
  const right = 8;
  const top = 16;
  const bottom = 30;
  const pw = Math.max(10, o.width - left - right);
  const ph = Math.max(10, o.height - top - bottom);
  const n = Math.min(o.x.length, o.y.length);
  let x0 = Infinity, x1 = -Infinity, y0 = Infinity, y1 = -Infinity;
  for (let i = 0; i < n; i++) {
    const xv = o.x[i];
    if (!Number.isFinite(xv) || !Number.isFinite(o.y[i])) continue;
    x0 = Math.min(x0, xv);
    x1 = Math.max(x1, xv);
    for (const v of [o.y[i], o.lo?.[i], o.hi?.[i]]) {
      if (v !== undefined && Number.isFinite(v)) {
        y0 = Math.min(y0, v);
        y1 = Math.max(y1, v);
      }
    }
  }
  const frame = svg`<rect class="axis" x=${left} y=${top} width=${pw} height=${ph}></rect>`;
  if (!(x1 > x0)) {
    return html`<svg class="plot" role="img" aria-label=${o.description} width=${o.width} height=${o.height} viewBox="0 0 ${o.width} ${o.height}">
      ${frame}<text x=${left + 8} y=${top + 18}>no data</text></svg>`;
  }
  if (!(y1 > y0)) { y0 -= 1; y1 += 1; }
  const pad = (y1 - y0) * 0.06;
  y0 -= pad;
  y1 += pad;
  const sx = (v: number) => left + ((v - x0) / (x1 - x0)) * pw;
  const sy = (v: number) => top + ph - ((v - y0) / (y1 - y0)) * ph;
  const path: string[] = [];
  for (let i = 0; i < n; i++) {
    if (!Number.isFinite(o.x[i]) || !Number.isFinite(o.y[i])) continue;
    path.push(`${path.length ? 'L' : 'M'}${sx(o.x[i]).toFixed(1)},${sy(o.y[i]).toFixed(1)}`);
  }
  let band: TemplateResult | typeof nothing = nothing;
  if (o.lo && o.hi) {
    const upper: string[] = [];
    const lower: string[] = [];
    for (let i = 0; i < n; i++) {
      if (!Number.isFinite(o.lo[i]) || !Number.isFinite(o.hi[i])) continue;
      upper.push(`${sx(o.x[i]).toFixed(1)},${sy(o.hi[i]).toFixed(1)}`);
      lower.push(`${sx(o.x[i]).toFixed(1)},${sy(o.lo[i]).toFixed(1)}`);
    }
    if (upper.length > 1) band = svg`<polygon class="band" points=${[...upper, ...lower.reverse()].join(' ')}></polygon>`;
  }
  const xt = niceTicks(x0, x1, Math.max(3, Math.floor(pw / 45)));
  const yt = niceTicks(y0, y1, Math.max(3, Math.floor(ph / 28)));
  const xs = xt.length > 1 ? xt[1] - xt[0] : 1;
  const ys = yt.length > 1 ? yt[1] - yt[0] : 1;
  return html`<svg class="plot" role="img" aria-label=${o.description} width=${o.width} height=${o.height} viewBox="0 0 ${o.width} ${o.height}">
    ${yt.map((t) => svg`<line class="grid" x1=${left} x2=${left + pw} y1=${sy(t)} y2=${sy(t)}></line>
      <text x=${left - 4} y=${sy(t) + 3} text-anchor="end">${tickText(t, ys)}</text>`)}
    ${xt.map((t) => svg`<line class="grid" x1=${sx(t)} x2=${sx(t)} y1=${top} y2=${top + ph}></line>
      <text x=${sx(t)} y=${top + ph + 12} text-anchor="middle">${tickText(t, xs)}</text>`)}
    ${band}
    <path class="trace" d=${path.join('')}></path>
    ${(o.rules ?? []).filter((r) => r.x >= x0 && r.x <= x1).map((r, i) => svg`<line class="rule" x1=${sx(r.x)} x2=${sx(r.x)} y1=${top} y2=${top + ph}></line>
      <text class="rule-label" x=${sx(r.x) + 3} y=${top + 10 + 11 * (i % 3)}>${r.label}</text>`)}
    ${(o.points ?? []).filter((p) => p.x >= x0 && p.x <= x1).map((p) => p.kind === 'min'
      ? svg`<circle class="min" cx=${sx(p.x)} cy=${sy(p.y)} r="3"></circle>`
      : svg`<circle class=${p.kind} cx=${sx(p.x)} cy=${sy(p.y)} r="3"></circle>`)}
    ${frame}
    <text class="title" x=${left + pw / 2} y=${o.height - 4} text-anchor="middle">${o.xLabel}</text>
    <text class="title" x="10" y=${top + ph / 2} text-anchor="middle" transform="rotate(-90 10 ${top + ph / 2})">${o.yLabel}</text>
  </svg>`;
}
