// The sheets side panel: layer counts and thickness of nanosheets along the drawn line (profile
// with layer marks and sheet brackets) or found automatically over the image; a list to accept
// or reject each sheet, histograms and statistics of the kept ones, and a CSV export.
import { LitElement, css, html, nothing, svg } from 'lit';
import type { GreyImage } from '../src/image/grey-image';
import { sheetsAlongLine, type LineSheetsResult } from '../src/sheets/line';
import { sheetStatistics, type SheetStatus } from '../src/sheets/detect';
import type { ComputeClient } from './compute-client';
import { sheetSummary, type SheetSummary } from '../src/sheets/record';
import { histogram, type Summary } from '../src/measure/stats';
import { controlStyles, panelStyles } from './styles';
import { linePlot, plotStyles } from './plot-line';

export const panelLabel = 'Sheets';

interface LineDetail {
  x0: number;
  y0: number;
  x1: number;
  y1: number;
  widthPx: number;
}

/** A sheet in the panel's list (from a line or from the automatic search). */
interface ListedSheet extends SheetSummary {
  id: string;
  source: 'line' | 'auto';
  status: SheetStatus;
  /** A segment across the sheet for the overlay (edge to edge on one of its lines). */
  across: [[number, number], [number, number]];
}

const f = (v: number | null, d = 2) => (v === null || !Number.isFinite(v) ? '—' : v.toFixed(d));

/**
 * `<strata-sheets-panel>`. Properties: `image` (GreyImage | null, its calibration gives nm),
 * `line` (the last line drawn in the viewer, image px, or null). Events: `overlay-shapes`
 * {shapes}, `status-message` {text, kind}.
 */
export class StrataSheetsPanel extends LitElement {
  static override properties = {
    image: { attribute: false },
    compute: { attribute: false },
    line: { attribute: false },
    lineResult: { state: true },
    sheets: { state: true },
    busy: { state: true },
    acceptedOnly: { state: true },
    bright: { state: true },
  };

  static override styles = [
    controlStyles,
    panelStyles,
    plotStyles,
    css`
      table { border-collapse: collapse; width: 100%; font-variant-numeric: tabular-nums; }
      th, td { padding: 2px 4px; text-align: right; border-bottom: 1px solid var(--line); }
      th:first-child, td:first-child { text-align: left; }
      table.stats th[scope='row'] { font-weight: normal; }
      tr.rejected td { opacity: 0.45; text-decoration: line-through; }
      tr.accepted td:first-child { color: #7fd18b; }
      .muted { opacity: 0.7; }
      svg.hist rect.bar { fill: #5aa0f0; }
      svg.hist text { fill: currentColor; font-size: 10px; }
      svg.hist line { stroke: #5d6b78; }
      .hists { display: flex; flex-wrap: wrap; gap: 8px; }
      p { margin: 4px 0; }
    `,
  ];

  image: GreyImage | null = null;
  /** The compute worker client the shell gives every panel. */
  compute: ComputeClient | null = null;
  line: LineDetail | null = null;
  lineResult: LineSheetsResult | null = null;
  sheets: ListedSheet[] = [];
  busy = false;
  acceptedOnly = false;
  bright = false;
  private shownImage: GreyImage | null = null;
  private nextId = 1;

  protected override willUpdate(changed: Map<string, unknown>): void {
    if (changed.has('image') && this.image !== this.shownImage) {
      // a new image clears the list; a new calibration of the same image rescales it
      if (!this.image || !this.shownImage || this.image.data !== this.shownImage.data) {
        this.sheets = [];
        this.lineResult = null;
      } else {
        // same pixels, new calibration: lengths in nm follow the new pixel size
        const nm = this.image.calibration?.nmPerPx ?? null;
        this.sheets = this.sheets.map((s) => ({
          ...s,
          thicknessNm: nm === null ? null : s.thicknessPx * nm,
          periodNm: nm === null ? null : s.periodPx * nm,
          edgeToEdgeNm: nm === null || s.edgeToEdgeNm === null || s.thicknessNm === null ? null : (s.edgeToEdgeNm / s.thicknessNm) * s.thicknessPx * nm,
        }));
        this.lineResult = null;
      }
      this.shownImage = this.image;
    }
  }

  private emit(type: string, detail: unknown): void {
    this.dispatchEvent(new CustomEvent(type, { detail, bubbles: true, composed: true }));
  }

  private say(text: string, kind: 'info' | 'error' = 'info'): void {
    this.emit('status-message', { text, kind });
  }

  private pushOverlay(): void {
    const tone = (s: ListedSheet) => (s.status === 'rejected' ? 'warn' : s.status === 'accepted' ? 'accent' : 'info');
    const shapes = this.sheets.map((s) => ({
      kind: 'line',
      x0: s.across[0][0],
      y0: s.across[0][1],
      x1: s.across[1][0],
      y1: s.across[1][1],
      widthPx: 1,
      label: `${s.layers} L`,
      tone: tone(s),
    }));
    this.emit('overlay-shapes', { shapes });
  }

  private measureLine(): void {
    const img = this.image;
    const l = this.line;
    if (!img || !l) return;
    try {
      this.lineResult = sheetsAlongLine(img, l.x0, l.y0, l.x1, l.y1, { widthPx: Math.max(1, l.widthPx || 9), polarity: this.bright ? 'bright' : 'dark' });
      const n = this.lineResult.sheets.length;
      this.say(n ? `${n} sheet${n > 1 ? 's' : ''} along the line` : 'no sheet along the line: draw it across a stack, from background to background');
    } catch (e) {
      this.lineResult = null;
      this.say((e as Error).message, 'error');
    }
  }

  private addLineSheets(): void {
    const r = this.lineResult;
    if (!r) return;
    for (const s of r.sheets) {
      this.sheets = [...this.sheets, {
        id: `line-${this.nextId++}`,
        source: 'line',
        status: 'manual',
        ...sheetSummary(s, s.centerXY),
        across: s.edgesXY,
      }];
    }
    this.pushOverlay();
  }

  private async runAutomatic(): Promise<void> {
    const img = this.image;
    if (!img || this.busy) return;
    this.busy = true;
    this.say('finding sheets…');
    try {
      if (!this.compute) throw new Error('the compute worker is not available');
      // Runs in the compute worker on a copy of the image: the page stays responsive.
      const { sheets: r, excludedBox: exclude } = await this.compute.call('autoSheets', { image: img, polarity: this.bright ? 'bright' : 'dark' });
      const kept = this.sheets.filter((s) => s.source !== 'auto');
      const found: ListedSheet[] = r.sheets.map((s) => {
        const mid = s.crossings[Math.floor(s.crossings.length / 2)];
        const half = s.thicknessPx / 2;
        const th = (mid.angleDeg * Math.PI) / 180;
        const ux = Math.cos(th);
        const uy = -Math.sin(th);
        return {
          id: `auto-${this.nextId++}`,
          source: 'auto',
          status: 'auto',
          ...sheetSummary(s, s.centerPx),
          across: [[mid.centerPx[0] - ux * half, mid.centerPx[1] - uy * half], [mid.centerPx[0] + ux * half, mid.centerPx[1] + uy * half]],
        };
      });
      this.sheets = [...kept, ...found];
      this.say(`${found.length} sheet${found.length === 1 ? '' : 's'} found${exclude ? ' (scale-bar panel skipped)' : ''}: accept or reject each`);
      this.pushOverlay();
    } catch (e) {
      this.say((e as Error).message, 'error');
    } finally {
      this.busy = false;
    }
  }

  private setStatus(id: string, status: SheetStatus): void {
    this.sheets = this.sheets.map((s) => (s.id === id ? { ...s, status: s.status === status ? (s.source === 'auto' ? 'auto' : 'manual') : status } : s));
    this.pushOverlay();
  }

  private exportCsv(): void {
    const head = ['id', 'source', 'status', 'layers', 'thickness_px', 'thickness_nm', 'edge_to_edge_nm', 'period_px', 'period_nm', 'angle_deg', 'center_x_px', 'center_y_px'];
    const rows = this.sheets.map((s) => [
      s.id, s.source, s.status, s.layers, s.thicknessPx.toFixed(3), s.thicknessNm?.toFixed(4) ?? '', s.edgeToEdgeNm?.toFixed(4) ?? '',
      s.periodPx.toFixed(4), s.periodNm?.toFixed(5) ?? '', s.angleDeg.toFixed(2), s.centerPx[0].toFixed(1), s.centerPx[1].toFixed(1),
    ].join(','));
    const blob = new Blob([`${head.join(',')}\n${rows.join('\n')}\n`], { type: 'text/csv' });
    const a = document.createElement('a');
    a.href = URL.createObjectURL(blob);
    a.download = 'sheets.csv';
    a.click();
    setTimeout(() => URL.revokeObjectURL(a.href), 1000);
  }

  private renderProfile() {
    const r = this.lineResult;
    if (!r) return nothing;
    const step = r.nmPerSample ?? 1;
    const unit = r.nmPerSample ? 'nm' : 'px';
    const x = Array.from(r.profile, (_, i) => i * step);
    const points = r.sheets.flatMap((s) => s.layerPositionsPx.map((p) => ({ x: p * step, y: r.profile[Math.round(p)], kind: (this.bright ? 'max' : 'min') as 'max' | 'min' })));
    const rules = r.sheets.flatMap((s, i) => [
      { x: s.edgesPx[0] * step, label: `${i + 1}: ${s.layers} L` },
      { x: s.edgesPx[1] * step, label: '' },
    ]);
    return html`
      ${linePlot({ width: 300, height: 150, x, y: r.profile, xLabel: `distance (${unit})`, yLabel: 'grey value', description: 'Line profile with layer marks and sheet edges', points, rules })}
      ${r.sheets.length
        ? html`<table>
            <tr><th>#</th><th>layers</th><th>thickness (${unit})</th><th>edge-to-edge (${unit})</th><th>period (${unit})</th></tr>
            ${r.sheets.map((s, i) => html`<tr><td>${i + 1}${s.truncated ? ' (at end)' : ''}</td><td>${s.layers}</td>
              <td>${f(s.thicknessNm ?? s.thicknessPx)}</td><td>${f(s.edgeToEdgeNm ?? s.edgeToEdgePx)}</td><td>${f(s.periodNm ?? s.periodPx, 3)}</td></tr>`)}
          </table>
          <div class="row"><button @click=${() => this.addLineSheets()}>Add to the list</button></div>`
        : html`<p class="muted">no sheet on this line</p>`}
    `;
  }

  private renderHistogram(values: number[], title: string, integer: boolean) {
    if (values.length === 0) return nothing;
    const h = histogram(values, integer ? { integer: true, binWidth: 1 } : {});
    const w = 140;
    const ht = 70;
    const maxC = Math.max(...h.counts);
    const bw = w / h.counts.length;
    const lo = h.edges[0];
    const hi = h.edges[h.edges.length - 1];
    return html`<figure>
      <svg class="hist" width=${w} height=${ht + 24} role="img" aria-label=${`${title} histogram`}>
        ${Array.from(h.counts, (c, i) => svg`<rect class="bar" x=${i * bw + 0.5} y=${ht - (ht * c) / maxC} width=${Math.max(1, bw - 1)} height=${(ht * c) / maxC}></rect>`)}
        <line x1="0" x2=${w} y1=${ht} y2=${ht}></line>
        <text x="0" y=${ht + 11}>${integer ? lo + 0.5 : lo.toFixed(2)}</text>
        <text x=${w} y=${ht + 11} text-anchor="end">${integer ? hi - 0.5 : hi.toFixed(2)}</text>
        <text x=${w / 2} y=${ht + 22} text-anchor="middle">${title}</text>
      </svg>
    </figure>`;
  }

  /**
   * The statistics as rows (one per statistic) and columns (thickness, layers): two narrow
   * columns fit the side panel, where eight statistic columns would not.
   */
  private renderStats(columns: { label: string; s: Summary | null; d: number }[]) {
    const cols = columns.filter((c) => c.s) as { label: string; s: Summary; d: number }[];
    const row = (name: string, cell: (s: Summary, d: number) => string) =>
      html`<tr><th scope="row">${name}</th>${cols.map((c) => html`<td>${cell(c.s, c.d)}</td>`)}</tr>`;
    return html`<table class="stats">
      <tr><th></th>${cols.map((c) => html`<th scope="col">${c.label}</th>`)}</tr>
      ${row('n', (s) => String(s.n))}
      ${row('mean', (s, d) => f(s.mean, d))}
      ${row('sd', (s, d) => f(s.sd, d))}
      ${row('median', (s, d) => f(s.median, d))}
      ${row('quartiles', (s, d) => `${f(s.q1, d)}–${f(s.q3, d)}`)}
      ${row('range', (s, d) => `${f(s.min, d)}–${f(s.max, d)}`)}
      ${row('95 % CI of the mean', (s, d) => (s.ci95 ? `${f(s.ci95[0], d)}–${f(s.ci95[1], d)}` : '—'))}
    </table>`;
  }

  override render() {
    if (!this.image) return html`<p class="muted">Open an image to count layers.</p>`;
    const cal = this.image.calibration;
    const stats = sheetStatistics(this.sheets, { acceptedOnly: this.acceptedOnly });
    const kept = this.sheets.filter((s) => s.status !== 'rejected' && (!this.acceptedOnly || s.status !== 'auto'));
    const thickVals = kept.map((s) => s.thicknessNm ?? s.thicknessPx);
    const unit = cal ? 'nm' : 'px';
    return html`
      <section>
        <h3>Along the drawn line</h3>
        <p class="muted">Draw a line across a stack, along the layer normal, from background to background.</p>
        <div class="row">
          <button ?disabled=${!this.line} @click=${() => this.measureLine()}>Measure the line</button>
          <label><input type="checkbox" .checked=${this.bright} @change=${(e: Event) => (this.bright = (e.target as HTMLInputElement).checked)} /> bright layers</label>
        </div>
        ${this.renderProfile()}
      </section>
      <section>
        <h3>Automatic</h3>
        <div class="row"><button ?disabled=${this.busy} @click=${() => void this.runAutomatic()}>${this.busy ? 'Finding…' : 'Find sheets in the image'}</button></div>
      </section>
      <section>
        <h3>Sheets (${this.sheets.length})</h3>
        ${this.sheets.length
          ? html`<table>
              <tr><th>#</th><th>layers</th><th>thickness (${unit})</th><th>period (${unit})</th><th>angle (°)</th><th></th></tr>
              ${this.sheets.map((s, i) => html`<tr class=${s.status}>
                <td>${i + 1} ${s.source === 'auto' ? 'auto' : 'line'}</td><td>${s.layers}</td>
                <td>${f(s.thicknessNm ?? s.thicknessPx)}</td><td>${f(s.periodNm ?? s.periodPx, 3)}</td><td>${s.angleDeg.toFixed(1)}</td>
                <td><button title="Accept" aria-pressed=${s.status === 'accepted'} @click=${() => this.setStatus(s.id, 'accepted')}>✓</button>
                    <button title="Reject" aria-pressed=${s.status === 'rejected'} @click=${() => this.setStatus(s.id, 'rejected')}>✗</button></td>
              </tr>`)}
            </table>
            <div class="row">
              <label><input type="checkbox" .checked=${this.acceptedOnly} @change=${(e: Event) => (this.acceptedOnly = (e.target as HTMLInputElement).checked)} /> count accepted only</label>
              <button @click=${() => this.exportCsv()}>Export CSV</button>
              <button @click=${() => { this.sheets = []; this.pushOverlay(); }}>Clear</button>
            </div>`
          : html`<p class="muted">none yet</p>`}
      </section>
      ${stats.n
        ? html`<section>
            <h3>Statistics (${stats.n} sheets)</h3>
            ${this.renderStats([
              { label: `thickness (${unit})`, s: cal ? stats.thicknessNm : stats.thicknessPx, d: 2 },
              { label: 'layers', s: stats.layers, d: 1 },
            ])}
            <p class="muted">Quartiles: Hyndman & Fan type 7. CI: Student t. Histogram bins: Freedman–Diaconis.</p>
            <div class="hists">
              ${this.renderHistogram(thickVals, `thickness (${unit})`, false)}
              ${this.renderHistogram(kept.map((s) => s.layers), 'layers', true)}
            </div>
          </section>`
        : nothing}
    `;
  }
}

customElements.define('strata-sheets-panel', StrataSheetsPanel);
