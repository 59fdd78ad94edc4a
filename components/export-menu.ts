/**
 * `<strata-export-menu>`: the one way every panel exports its results. CSV through the one CSV
 * writer (units in the header, ± with the coverage factor chosen), JSON of the records (the one
 * JSON form), the image's figure (the image, the measurements over it, the scale bar) as SVG, and
 * the report of the image as one self-contained HTML file that prints to A4. The figure and the
 * report are made in the compute worker, which holds the image.
 *
 * Properties: `records` (Measurement[], the calibration in force applied), `plots` (PlotData[]
 * for the report), `k` (coverage factor), `fileName` (the image's), `compute`, `session`.
 * Events: `status-message` {text, kind}.
 */
import { LitElement, css, html } from 'lit';
import type { Measurement } from '../src/measure/measurement';
import { measurementsCsv, measurementsJson } from '../src/measure/export';
import type { PlotData } from '../src/figure/plot';
import { PROGRAM_VERSION } from '../src/cli/version';
import type { ComputeClient } from './compute-client';
import { download } from './download';
import { controlStyles } from './styles';

/** The program as reports name it. */
export const SOFTWARE = `Stratameter ${PROGRAM_VERSION}`;

export class StrataExportMenu extends LitElement {
  static override properties = {
    records: { attribute: false },
    plots: { attribute: false },
    k: { type: Number },
    fileName: { type: String, attribute: 'file-name' },
    compute: { attribute: false },
    session: { attribute: false },
    busy: { state: true },
  };

  records: Measurement[] = [];
  plots: PlotData[] = [];
  k = 2;
  fileName = '';
  compute: ComputeClient | null = null;
  session: string | null = null;
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

  override render() {
    const none = !this.records.length;
    const noImage = !this.compute || !this.session;
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
