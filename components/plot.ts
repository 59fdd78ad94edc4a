/**
 * `<strata-plot>`: an interactive plot of a PlotData (src/figure/plot.ts) drawn by uPlot.
 *
 * Zoom: drag across the plot (x), the mouse wheel, or + and − when focused; pan: Shift-drag, or
 * Shift + ←/→; reset: double-click, 0 or the Reset button; Enlarge shows it large in a modal
 * dialog (Escape closes it). The readout under the plot gives the
 * values at the cursor in the axes' units (←/→ move the cursor sample by sample when focused).
 * Export: SVG and PNG of the view (the core's plotSvg, the same figure the report and the command
 * line draw) and CSV of the data; the data table below is the plot's text alternative. Where the
 * panel's export menu exports the plot as its figure (`panel-exports`), the SVG and PNG buttons are
 * the menu's (through `svgText()`) and the plot keeps only its data's CSV.
 * Sizes are set through the CSSOM only (the page's policy allows no style attributes).
 *
 * Properties: `data` (PlotData | null), `heightPx` (default 300), `fileStem` (export names),
 * `panelExports` (the panel's export menu exports the figure).
 */
import { LitElement, css, html, nothing, type PropertyValues } from 'lit';
import uPlot from 'uplot';
import { plotSvg, plotTable, type PlotData } from '../src/figure/plot';
import { placeLabels, ruleLabelCandidates, textWidthEstimate } from '../src/figure/labels';
import { csvTable } from '../src/measure/export';
import { controlStyles } from './styles';
import { download } from './download';
import { svgToPng } from './svg-png';

const TRACE_COLOURS: Record<string, string> = { data: '#9fd3e6', fit: '#f0c05a', background: '#7c8a97' };
const FONT = '12px system-ui, sans-serif';

/** The unit in an axis title "distance along the line (nm)" → "nm". */
function unitOf(label: string): string {
  return /\(([^()]*)\)\s*$/.exec(label)?.[1] ?? '';
}

function fmt(v: number | null | undefined): string {
  if (v === null || v === undefined || !Number.isFinite(v)) return '–';
  const a = Math.abs(v);
  return a !== 0 && (a >= 1e5 || a < 1e-3) ? v.toExponential(3) : String(Number(v.toPrecision(5)));
}

export class StrataPlot extends LitElement {
  static override properties = {
    data: { attribute: false },
    heightPx: { type: Number, attribute: 'height-px' },
    fileStem: { type: String, attribute: 'file-stem' },
    readout: { state: true },
    tableOpen: { state: true },
    enlarged: { state: true },
    panelExports: { type: Boolean, attribute: 'panel-exports' },
  };

  data: PlotData | null = null;
  heightPx = 300;
  fileStem = 'plot';
  readout = '';
  tableOpen = false;
  /** Shown large in a modal dialog over the page (any panel's plot, at a readable size). */
  enlarged = false;
  /**
   * True where the panel's export menu exports this plot as its figure (SVG and PNG, through
   * `svgText()`, as shown): the plot then shows no SVG and PNG buttons of its own, so each figure
   * has one way out. Its data stay exported by its CSV button.
   */
  panelExports = false;

  private chart: uPlot | null = null;
  private resizer: ResizeObserver | null = null;
  /** The element's width as the resize observer last reported it (CSS px; 0 before the first report). */
  private observedWidthPx = 0;
  /** A build waiting for its own task (the chart is not made inside the render that placed it). */
  private buildTimer: ReturnType<typeof setTimeout> | null = null;
  private cursorIdx = -1;

  static override styles = [
    controlStyles,
    css`
      :host { display: block; min-width: 0; }
      .bar { display: flex; align-items: center; gap: 6px; flex-wrap: wrap; margin: 0 0 4px; }
      .bar h3 { font-size: 13px; font-weight: 600; margin: 0 auto 0 0; }
      .bar button { min-height: 24px; padding: 1px 8px; font-size: 12px; }
      .chart { position: relative; outline: none; border: 1px solid var(--line); border-radius: 3px; background: #0d1115; }
      .chart:focus-visible { box-shadow: 0 0 0 2px var(--focus); }
      .readout { font-size: 12px; color: var(--muted); min-height: 18px; margin: 3px 0 0; font-variant-numeric: tabular-nums; white-space: nowrap; overflow: hidden; text-overflow: ellipsis; }
      .hint { font-size: 11px; color: var(--muted); }
      dialog.big { width: min(1400px, 94vw); max-width: none; max-height: 94vh; box-sizing: border-box; padding: 12px 16px;
        background: var(--panel, #161d24); color: var(--text); border: 1px solid var(--line); border-radius: 4px; }
      dialog.big::backdrop { background: rgba(0, 0, 0, 0.65); }
      .elsewhere { font-size: 12px; color: var(--muted); border: 1px dashed var(--line); border-radius: 3px; padding: 16px; text-align: center; }
      details { font-size: 12px; margin-top: 2px; }
      details .scroll { max-height: 220px; overflow: auto; }
      table { border-collapse: collapse; font-variant-numeric: tabular-nums; }
      th, td { padding: 1px 6px; text-align: right; border-bottom: 1px solid var(--line); }
      th { color: var(--muted); font-weight: normal; position: sticky; top: 0; background: var(--panel); }
      /* uPlot's own layout rules, inside this shadow root */
      .uplot, .uplot * { box-sizing: border-box; }
      .uplot { font: 12px system-ui, sans-serif; line-height: 1.5; width: min-content; }
      .u-wrap { position: relative; user-select: none; }
      .u-over, .u-under { position: absolute; }
      .u-under { overflow: hidden; }
      .uplot canvas { display: block; position: relative; width: 100%; height: 100%; }
      .u-axis { position: absolute; }
      .u-legend { display: none; }
      .u-select { background: rgba(159, 211, 230, 0.15); position: absolute; pointer-events: none; }
      .u-cursor-x, .u-cursor-y { position: absolute; left: 0; top: 0; pointer-events: none; will-change: transform; }
      .u-hz .u-cursor-x { height: 100%; border-right: 1px dashed #8fa3b3; }
      .u-hz .u-cursor-y { width: 100%; border-bottom: 1px dashed #8fa3b3; }
      .u-cursor-pt { position: absolute; top: 0; left: 0; border-radius: 50%; border: 0 solid; pointer-events: none; will-change: transform; background-clip: padding-box !important; }
      .u-axis.u-off, .u-select.u-off, .u-cursor-x.u-off, .u-cursor-y.u-off, .u-cursor-pt.u-off { display: none; }
    `,
  ];

  override connectedCallback(): void {
    super.connectedCallback();
    // The observer reports the width after the browser's own layout, so sizing the chart never
    // forces a layout of the page in the middle of a render.
    this.resizer = new ResizeObserver((entries) => {
      const w = entries[entries.length - 1]?.contentRect.width ?? 0;
      if (w > 0) this.observedWidthPx = w;
      if (this.chart) this.fit();
      else if (this.data && !this.enlarged) this.scheduleBuild();
    });
    this.resizer.observe(this);
  }

  override disconnectedCallback(): void {
    super.disconnectedCallback();
    this.resizer?.disconnect();
    if (this.buildTimer !== null) clearTimeout(this.buildTimer);
    this.buildTimer = null;
    this.chart?.destroy();
    this.chart = null;
  }

  protected override updated(changed: PropertyValues<this>): void {
    if (changed.has('enlarged') && changed.get('enlarged') !== undefined) {
      // a real toggle (not the first render): into or out of the dialog, the chart keeps the focus
      const d = this.renderRoot.querySelector<HTMLDialogElement>('dialog.big');
      if (d && !d.open) d.showModal();
      this.build();
      this.renderRoot.querySelector<HTMLElement>('.chart')?.focus();
    } else if (changed.has('data') || changed.has('heightPx')) this.scheduleBuild();
  }

  /**
   * Builds the chart in a task of its own once the element's width is known: the render that
   * placed the plot ends first, and the plot library's first chart is not part of it.
   */
  private scheduleBuild(): void {
    if (this.buildTimer !== null) return;
    this.buildTimer = setTimeout(() => {
      this.buildTimer = null;
      if (this.observedWidthPx > 0 || this.enlarged) this.build();
      // else: the resize observer's first report builds it
    }, 0);
  }

  private plotHeightPx(): number {
    return this.enlarged ? Math.max(300, Math.min(820, Math.floor(globalThis.innerHeight * 0.94) - 150)) : this.heightPx;
  }

  private host(): HTMLElement | null {
    return this.renderRoot.querySelector('.chart');
  }

  private widthPx(): number {
    if (this.enlarged) return Math.max(300, Math.floor(Math.min(1400, globalThis.innerWidth * 0.94)) - 36);
    return Math.max(200, Math.floor(this.observedWidthPx) - 2);
  }

  private fit(): void {
    if (this.chart) this.chart.setSize({ width: this.widthPx(), height: this.plotHeightPx() });
  }

  /** The data in uPlot's form: x and each trace as plain arrays, NaN as a gap. */
  private columns(p: PlotData): uPlot.AlignedData {
    const gap = (v: number) => (Number.isFinite(v) ? v : null);
    return [Array.from(p.x), ...p.traces.map((t) => Array.from(t.y, gap))] as uPlot.AlignedData;
  }

  private build(): void {
    this.chart?.destroy();
    this.chart = null;
    this.cursorIdx = -1;
    const el = this.host();
    const p = this.data;
    if (!el || !p || p.x.length < 2) return;
    const axis = (label: string): uPlot.Axis => ({
      label, stroke: '#b9c5cf', font: FONT, labelFont: FONT, labelSize: 20, size: 48,
      grid: { stroke: '#27313b', width: 1 }, ticks: { stroke: '#3a4854', width: 1, size: 4 },
    });
    const opts: uPlot.Options = {
      width: this.widthPx(),
      height: this.plotHeightPx(),
      legend: { show: false },
      cursor: { drag: { x: true, y: false, setScale: true }, points: { size: 6 } },
      scales: { x: { time: false } },
      axes: [axis(p.xLabel), axis(p.yLabel)],
      series: [{ label: p.xLabel }, ...p.traces.map((t) => ({
        label: t.label, stroke: TRACE_COLOURS[t.style] ?? '#9fd3e6', width: t.style === 'fit' ? 2 : 1.3,
        dash: t.style === 'background' ? [5, 3] : undefined, points: { show: false }, spanGaps: false,
      }))],
      hooks: {
        draw: [(u) => this.drawExtras(u)],
        setCursor: [(u) => this.showReadout(u.cursor.idx ?? null)],
      },
    };
    this.chart = new uPlot(opts, this.columns(p), el);
    this.addPanAndWheel(this.chart);
  }

  /** The band, the rules with their uncertainty bands and labels (never overlapping), the marks. */
  private drawExtras(u: uPlot): void {
    const p = this.data;
    if (!p) return;
    const ctx = u.ctx;
    const dpr = globalThis.devicePixelRatio || 1;
    const { left, top, width, height } = u.bbox;
    ctx.save();
    ctx.beginPath();
    ctx.rect(left, top, width, height);
    ctx.clip();
    const X = (v: number) => u.valToPos(v, 'x', true);
    const Y = (v: number) => u.valToPos(v, 'y', true);
    if (p.band) {
      ctx.fillStyle = 'rgba(159, 211, 230, 0.2)';
      ctx.beginPath();
      let started = false;
      for (let i = 0; i < p.x.length; i++) if (Number.isFinite(p.band.hi[i])) { if (started) ctx.lineTo(X(p.x[i]), Y(p.band.hi[i])); else { ctx.moveTo(X(p.x[i]), Y(p.band.hi[i])); started = true; } }
      for (let i = p.x.length - 1; i >= 0; i--) if (Number.isFinite(p.band.lo[i])) ctx.lineTo(X(p.x[i]), Y(p.band.lo[i]));
      ctx.closePath();
      ctx.fill();
    }
    const rules = p.rules ?? [];
    for (const r of rules) {
      if (r.lo !== undefined && r.hi !== undefined && Number.isFinite(r.lo) && Number.isFinite(r.hi)) {
        ctx.fillStyle = 'rgba(127, 209, 139, 0.18)';
        const a = X(Math.min(r.lo, r.hi));
        const b = X(Math.max(r.lo, r.hi));
        ctx.fillRect(a, top, Math.max(dpr, b - a), height);
      }
      ctx.strokeStyle = '#7fd18b';
      ctx.lineWidth = 1.2 * dpr;
      ctx.setLineDash([4 * dpr, 2 * dpr]);
      ctx.beginPath();
      ctx.moveTo(X(r.x), top);
      ctx.lineTo(X(r.x), top + height);
      ctx.stroke();
    }
    ctx.setLineDash([]);
    for (const m of p.marks ?? []) {
      ctx.beginPath();
      ctx.arc(X(m.x), Y(m.y), 3.2 * dpr, 0, 2 * Math.PI);
      ctx.lineWidth = 1.2 * dpr;
      ctx.strokeStyle = '#e8c872';
      ctx.fillStyle = m.kind === 'min' ? '#0d1115' : m.kind === 'pick' ? '#f0a35e' : '#e8c872';
      ctx.fill();
      ctx.stroke();
    }
    ctx.restore();
    // rule labels in CSS px, placed apart; a label with no room is left out (the rule stays)
    const xMin = u.scales.x.min ?? -Infinity;
    const xMax = u.scales.x.max ?? Infinity;
    const shown = rules.filter((r) => r.label && r.x >= xMin && r.x <= xMax);
    const css = (v: number) => v / dpr;
    // the plot library leaves its own text settings on the context (its y ticks are drawn
    // right-aligned): set them, and measure the labels in the font they are drawn with
    ctx.font = `${12 * dpr}px system-ui, sans-serif`;
    ctx.textAlign = 'left';
    ctx.textBaseline = 'alphabetic';
    const placed = placeLabels(shown.map((r) => {
      const w = Math.max(textWidthEstimate(r.label, 12), Math.ceil(ctx.measureText(r.label).width / dpr) + 2);
      const x = css(X(r.x));
      return { x, y: css(top), width: w, height: 15, candidates: ruleLabelCandidates(x, css(top), w, 15) };
    }), { bounds: { x: css(left), y: css(top), width: css(width), height: css(height) } });
    shown.forEach((r, i) => {
      const b = placed[i];
      if (!b.placed) return;
      ctx.fillStyle = 'rgba(13, 17, 21, 0.85)';
      ctx.fillRect(b.box.x * dpr, b.box.y * dpr, b.box.width * dpr, b.box.height * dpr);
      ctx.fillStyle = '#7fd18b';
      ctx.fillText(r.label, (b.box.x + 1) * dpr, (b.box.y + 12) * dpr);
    });
  }

  private showReadout(idx: number | null): void {
    const p = this.data;
    if (!p || idx === null || idx < 0 || idx >= p.x.length) return;
    this.cursorIdx = idx;
    const xu = unitOf(p.xLabel);
    const parts = [`${p.xLabel.replace(/\s*\([^()]*\)\s*$/, '')} ${fmt(p.x[idx])}${xu ? ` ${xu}` : ''}`];
    for (const t of p.traces) parts.push(`${t.label} ${fmt(t.y[idx])}`);
    this.readout = parts.join(' · ');
  }

  /** Wheel: zoom about the cursor; Shift-drag: pan. */
  private addPanAndWheel(u: uPlot): void {
    const over = u.over;
    over.addEventListener('wheel', (e) => {
      e.preventDefault();
      const rect = over.getBoundingClientRect();
      const at = u.posToVal(e.clientX - rect.left, 'x');
      this.zoomAbout(at, e.deltaY < 0 ? 0.8 : 1.25);
    }, { passive: false });
    over.addEventListener('mousedown', (e) => {
      if (!e.shiftKey) return;
      e.stopPropagation();
      e.preventDefault();
      const x0 = u.scales.x.min as number;
      const x1 = u.scales.x.max as number;
      const start = e.clientX;
      const perPx = (x1 - x0) / u.bbox.width * (globalThis.devicePixelRatio || 1);
      const move = (m: MouseEvent) => {
        const d = (m.clientX - start) * perPx;
        u.setScale('x', { min: x0 - d, max: x1 - d });
      };
      const up = () => { document.removeEventListener('mousemove', move); document.removeEventListener('mouseup', up); };
      document.addEventListener('mousemove', move);
      document.addEventListener('mouseup', up);
    }, true);
  }

  private zoomAbout(at: number, factor: number): void {
    const u = this.chart;
    if (!u) return;
    const x0 = u.scales.x.min as number;
    const x1 = u.scales.x.max as number;
    u.setScale('x', { min: at - (at - x0) * factor, max: at + (x1 - at) * factor });
  }

  private pan(fraction: number): void {
    const u = this.chart;
    if (!u) return;
    const x0 = u.scales.x.min as number;
    const x1 = u.scales.x.max as number;
    const d = (x1 - x0) * fraction;
    u.setScale('x', { min: x0 + d, max: x1 + d });
  }

  /** Back to the whole x range. */
  resetView(): void {
    const u = this.chart;
    const p = this.data;
    if (!u || !p) return;
    u.setScale('x', { min: p.x[0], max: p.x[p.x.length - 1] });
  }

  private onKey(e: KeyboardEvent): void {
    const u = this.chart;
    const p = this.data;
    if (!u || !p) return;
    const n = p.x.length;
    const mid = ((u.scales.x.min as number) + (u.scales.x.max as number)) / 2;
    switch (e.key) {
      case '+': case '=': this.zoomAbout(this.cursorIdx >= 0 ? p.x[this.cursorIdx] : mid, 0.8); break;
      case '-': case '_': this.zoomAbout(this.cursorIdx >= 0 ? p.x[this.cursorIdx] : mid, 1.25); break;
      case '0': this.resetView(); break;
      case 'Escape': if (this.enlarged) return; this.resetView(); break;
      case 'ArrowLeft': case 'ArrowRight': {
        if (e.shiftKey) { this.pan(e.key === 'ArrowLeft' ? -0.1 : 0.1); break; }
        let i = this.cursorIdx < 0 ? Math.floor(n / 2) : this.cursorIdx + (e.key === 'ArrowLeft' ? -1 : 1);
        i = Math.max(0, Math.min(n - 1, i));
        const y = p.traces[0]?.y[i];
        u.setCursor({ left: u.valToPos(p.x[i], 'x'), top: Number.isFinite(y) ? u.valToPos(y as number, 'y') : u.bbox.height / 2 });
        this.showReadout(i);
        break;
      }
      default: return;
    }
    e.preventDefault();
  }

  /** The view as an SVG figure (the x range shown now). */
  svgText(): string {
    const p = this.data as PlotData;
    const u = this.chart;
    const xRange: [number, number] | undefined = u && u.scales.x.min !== undefined ? [u.scales.x.min as number, u.scales.x.max as number] : undefined;
    return plotSvg(p, { width: 800, height: 450, xRange });
  }

  private async export(kind: 'svg' | 'png' | 'csv'): Promise<void> {
    const p = this.data;
    if (!p) return;
    const name = `${this.fileStem}-${p.id}`;
    if (kind === 'csv') {
      const t = plotTable(p);
      download(`${name}.csv`, csvTable(t.header, t.rows), 'text/csv');
    } else if (kind === 'svg') {
      download(`${name}.svg`, this.svgText(), 'image/svg+xml');
    } else {
      download(`${name}.png`, await svgToPng(this.svgText(), 2), 'image/png');
    }
  }

  private renderTable(p: PlotData) {
    if (!this.tableOpen) return nothing;
    const t = plotTable(p);
    return html`<div class="scroll"><table>
      <caption class="hint">${p.description}</caption>
      <thead><tr>${t.header.map((h) => html`<th scope="col">${h}</th>`)}</tr></thead>
      <tbody>${t.rows.map((r) => html`<tr>${r.map((c) => html`<td>${c ?? '–'}</td>`)}</tr>`)}</tbody></table></div>`;
  }

  override render() {
    const p = this.data;
    if (!p) return nothing;
    const bar = html`<div class="bar">
        <h3>${p.title}</h3>
        <button @click=${() => this.resetView()} title="Show the whole x range (0, Escape, or a double-click on the plot)">Reset view</button>
        ${this.panelExports ? nothing : html`<button class="plot-svg" @click=${() => void this.export('svg')} title="The plot as shown, as an SVG figure">SVG</button>
        <button class="plot-png" @click=${() => void this.export('png')} title="The plot as shown, as a PNG picture (2× for print)">PNG</button>`}
        <button class="plot-csv" @click=${() => void this.export('csv')} title="The plotted data as CSV, units in the header">${this.panelExports ? 'Data (CSV)' : 'CSV'}</button>
        ${this.enlarged
          ? html`<button class="shrink" @click=${() => this.renderRoot.querySelector<HTMLDialogElement>('dialog.big')?.close()} title="Back to the panel (Escape)">Close</button>`
          : html`<button class="enlarge" @click=${() => (this.enlarged = true)} title="Show the plot large, over the page">Enlarge</button>`}
      </div>`;
    const chart = html`
      <div class="chart" tabindex="0" role="img" aria-roledescription="plot"
        aria-label=${`${p.title}. ${p.description} Keys: left and right arrows read the values sample by sample, plus and minus zoom, Shift with an arrow pans, 0 resets. The data table follows the plot.`}
        @keydown=${this.onKey}></div>
      <p class="readout" aria-live="polite">${this.readout || html`<span class="hint">Drag to zoom · wheel zooms · Shift-drag pans · double-click resets</span>`}</p>`;
    const table = html`<details @toggle=${(e: Event) => (this.tableOpen = (e.target as HTMLDetailsElement).open)}>
        <summary>Data table (${p.x.length} rows)</summary>${this.renderTable(p)}</details>`;
    if (this.enlarged) {
      return html`<div class="bar"><h3>${p.title}</h3></div><p class="elsewhere">Shown enlarged.</p>
        <dialog class="big" aria-label=${p.title} @close=${() => (this.enlarged = false)}>${bar}${chart}${table}</dialog>`;
    }
    return html`${bar}${chart}${table}`;
  }

  protected override firstUpdated(): void {
    this.scheduleBuild();
  }
}

customElements.define('strata-plot', StrataPlot);

declare global {
  interface HTMLElementTagNameMap {
    'strata-plot': StrataPlot;
  }
}
