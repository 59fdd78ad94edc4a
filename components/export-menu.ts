/**
 * `<strata-export-menu>`: the one way every panel exports its results. CSV through the one CSV
 * writer (units in the header, ± with the coverage factor chosen), JSON of the records (the one
 * JSON form), the image's figure (the image, the measurements over it, the scale bar) as SVG, and
 * the report of the image as one self-contained HTML file that prints to A4. The figure and the
 * report are made in the compute worker, which holds the image.
 *
 * Properties: `records` (Measurement[], the calibration in force applied), `plots` (PlotData[]
 * for the report), `k` (coverage factor), `fileName` (the image's), `compute`, `session`;
 * `table` (a panel's own results, e.g. sheets or diffraction lines, exported instead of the
 * records: CSV through the one writer `csvTable`, JSON), `figure` (a panel's own figure as SVG,
 * exported as SVG and PNG instead of the image's figure) and `report` (false where no image
 * report applies).
 * Events: `status-message` {text, kind}.
 */
import { LitElement, css, html } from 'lit';
import type { Measurement } from '../src/measure/measurement';
import { csvTable, measurementsCsv, measurementsJson, type CsvCell } from '../src/measure/export';
import type { PlotData } from '../src/figure/plot';
import { PROGRAM_VERSION } from '../src/cli/version';
import type { ComputeClient } from './compute-client';
import { download } from './download';
import { svgToPng } from './svg-png';
import { controlStyles } from './styles';

/** The program as reports name it. */
export const SOFTWARE = `Stratameter ${PROGRAM_VERSION}`;

/** A panel's own results for the export menu (instead of measurement records). */
export interface ExportTable {
  /** What a row is, for the status line, e.g. 'sheet' (plural with an s). */
  noun: string;
  /** File name part, e.g. 'sheets' → <image>-sheets.csv. */
  name: string;
  /** Column names, each with its unit where it has one (and k where a column is an expanded uncertainty). */
  header: string[];
  /** The rows' cells, each as long as the header. */
  rows: CsvCell[][];
  /** Lines written above the header as '# ' comments (conventions, what the ± contains); none by default. */
  notes?: string[];
  /** The JSON document of the same results (with units and what each ± contains). */
  json: unknown;
}

/** A panel's own figure for the export menu. */
export interface ExportFigure {
  /** File name part, e.g. 'pattern' → <name>-pattern.svg. */
  name: string;
  /** The figure as a stand-alone SVG document. */
  svg: () => string;
}

export class StrataExportMenu extends LitElement {
  static override properties = {
    records: { attribute: false },
    plots: { attribute: false },
    k: { type: Number },
    fileName: { type: String, attribute: 'file-name' },
    compute: { attribute: false },
    session: { attribute: false },
    table: { attribute: false },
    figure: { attribute: false },
    report: { type: Boolean },
    busy: { state: true },
  };

  records: Measurement[] = [];
  plots: PlotData[] = [];
  k = 2;
  fileName = '';
  compute: ComputeClient | null = null;
  session: string | null = null;
  /** A panel's own results, exported instead of `records` (null: the records). */
  table: ExportTable | null = null;
  /** A panel's own figure, exported instead of the image's figure (null: the image's). */
  figure: ExportFigure | null = null;
  /** Whether the image report applies (it needs an open image). */
  report = true;
  busy = '';

  static override styles = [controlStyles, css`
    :host { display: block; }
    .row { display: flex; flex-wrap: wrap; gap: 6px; align-items: center; }
    .busy { color: var(--accent-2); font-size: 12px; }
  `];

  private stem(): string {
    return (this.fileName || 'results').replace(/\.[^.]+$/, '').replace(/[^A-Za-z0-9._-]+/g, '_');
  }

  private say(text: string, kind: 'info' | 'error' = 'info'): void {
    this.dispatchEvent(new CustomEvent('status-message', { detail: { text, kind }, bubbles: true, composed: true }));
  }

  private exportTable(kind: 'csv' | 'json'): void {
    const t = this.table;
    if (t) {
      const n = t.rows.length;
      if (kind === 'csv') download(`${this.stem()}-${t.name}.csv`, `${(t.notes ?? []).map((l) => `# ${l}\r\n`).join('')}${csvTable(t.header, t.rows)}`, 'text/csv');
      else download(`${this.stem()}-${t.name}.json`, `${JSON.stringify(t.json, null, 2)}\n`, 'application/json');
      this.say(`${n} ${t.noun}${n === 1 ? '' : 's'} exported as ${kind.toUpperCase()}.`);
      return;
    }
    const n = this.records.length;
    if (!n) return;
    if (kind === 'csv') download(`${this.stem()}-results.csv`, measurementsCsv(this.records, { k: this.k }), 'text/csv');
    else download(`${this.stem()}-results.json`, `${JSON.stringify(measurementsJson(this.records, this.k), null, 2)}\n`, 'application/json');
    this.say(`${n} result${n === 1 ? '' : 's'} exported as ${kind.toUpperCase()} (± with k = ${this.k}).`);
  }

  private async exportMade(form: 'html' | 'svg'): Promise<void> {
    if (!this.compute || !this.session) return;
    this.busy = form === 'html' ? 'Making the report…' : 'Drawing the figure…';
    try {
      const { text } = await this.compute.call('imageReport', {
        sessionId: this.session, form, fileName: this.fileName, records: this.records, plots: this.plots, k: this.k, software: SOFTWARE,
      });
      if (form === 'html') download(`${this.stem()}-report.html`, text, 'text/html');
      else download(`${this.stem()}-figure.svg`, text, 'image/svg+xml');
      this.say(form === 'html'
        ? `Report of ${this.fileName || 'the image'} saved as one HTML file: open it in a browser and print it to PDF.`
        : `Figure of ${this.fileName || 'the image'} saved as SVG (the image, the measurements over it, the scale bar).`);
    } catch (e) {
      this.say(`The ${form === 'html' ? 'report' : 'figure'} could not be made: ${(e as Error).message}`, 'error');
    } finally {
      this.busy = '';
    }
  }

  private async exportFigure(form: 'svg' | 'png'): Promise<void> {
    const f = this.figure;
    if (!f) return;
    try {
      const svgText = f.svg();
      if (form === 'svg') download(`${this.stem()}-${f.name}.svg`, svgText, 'image/svg+xml');
      else download(`${this.stem()}-${f.name}.png`, await svgToPng(svgText), 'image/png');
      this.say(`Figure saved as ${form.toUpperCase()}.`);
    } catch (e) {
      this.say(`The figure could not be saved: ${(e as Error).message}`, 'error');
    }
  }

  override render() {
    const noImage = !this.compute || !this.session;
    if (this.table || this.figure || !this.report) {
      const none = !this.table?.rows.length;
      return html`<div class="row" role="group" aria-label="Export">
        ${this.table ? html`<button class="export-csv" ?disabled=${none} @click=${() => this.exportTable('csv')} title="One row per ${this.table.noun}, units in the header">CSV</button>
          <button class="export-json" ?disabled=${none} @click=${() => this.exportTable('json')} title="The same results as a JSON document">JSON</button>` : ''}
        ${this.figure ? html`<button class="export-figure" @click=${() => void this.exportFigure('svg')} title="The panel's figure as SVG">Figure (SVG)</button>
          <button class="export-png" @click=${() => void this.exportFigure('png')} title="The panel's figure as PNG (twice its size)">Figure (PNG)</button>` : ''}
        ${this.report ? html`<button class="export-report" ?disabled=${noImage || !!this.busy || !this.records.length} @click=${() => void this.exportMade('html')}
          title="One self-contained HTML file: the image with overlays and scale bar, the results, the uncertainty statement, program version; prints to A4">Report (HTML)</button>` : ''}
        ${this.busy ? html`<span class="busy" role="status">${this.busy}</span>` : ''}
      </div>`;
    }
    const none = !this.records.length;
    return html`<div class="row" role="group" aria-label="Export">
      <button class="export-csv" ?disabled=${none} @click=${() => this.exportTable('csv')}
        title="One row per period: px with its uncertainty parts, nm with every part, combined and expanded (k as chosen), direction, strength; units in the header">CSV</button>
      <button class="export-json" ?disabled=${none} @click=${() => this.exportTable('json')}
        title="The records as the library keeps them (px and parts, calibration, settings), with each period's budget in nm">JSON</button>
      <button class="export-figure" ?disabled=${noImage || !!this.busy} @click=${() => void this.exportMade('svg')}
        title="The image with the measurements drawn over it and a scale bar, as an SVG figure">Figure (SVG)</button>
      <button class="export-report" ?disabled=${noImage || !!this.busy} @click=${() => void this.exportMade('html')}
        title="One self-contained HTML file: the image with overlays and scale bar, the results, plots, calibration and its source, the uncertainty statement, program version and recipe; prints to A4">Report (HTML)</button>
      ${this.busy ? html`<span class="busy" role="status">${this.busy}</span>` : ''}
    </div>`;
  }
}

customElements.define('strata-export-menu', StrataExportMenu);

declare global {
  interface HTMLElementTagNameMap {
    'strata-export-menu': StrataExportMenu;
  }
}
