import { expressPeriod, formatPlusMinus } from '../src/measure/measurement';
import { TOOLS } from '../src/measure/tools';
import { LitElement, css, html, nothing, type PropertyValues } from 'lit';
import type { LibraryDb } from '../src/store/schema';
import { deleteImage, listImages, listMeasurements } from '../src/store/library';
import type { ImageRecord, Measurement } from '../src/store/records';
import { controlStyles, listPanelStyles } from './styles';
import { download } from './download';

// The library's export and import (and the decoders and checks they bring) load when first used,
// not with the shell at start-up.
const exchange = () => import('../src/store/exchange');

interface Row {
  record: ImageRecord;
  results: Measurement[];
}

function formatBytes(n: number): string {
  if (n < 1024) return `${n} B`;
  if (n < 1048576) return `${(n / 1024).toFixed(0)} kB`;
  return `${(n / 1048576).toFixed(1)} MB`;
}

/** One line for the newest result of an image: the strongest period with its expanded uncertainty (k = 2). */
export function describeResult(m: Measurement): string {
  const p = m.periodicities[0];
  const what = TOOLS.find((t) => t.kind === m.tool)?.label ?? m.tool;
  if (!p) return `${what}: no significant period`;
  const b = expressPeriod(p, m.calibration);
  return `${what}: d = ${formatPlusMinus(b.value, b.expanded)} ${b.unit} (k = 2)`;
}

/**
 * `<strata-library>`: the images kept in this browser with their thumbnails and results;
 * open, delete (with confirmation), export everything to one JSON file and import it back.
 *
 * Properties: `db` (the open library), `currentId` (the image on screen), `revision` (bump it to
 * reload the list). Events: `open-image` {id}, `library-changed`, `status-message` {text, kind}.
 */
export class StrataLibrary extends LitElement {
  static override properties = {
    db: { attribute: false },
    currentId: { attribute: false },
    revision: { type: Number },
    rows: { state: true },
    confirming: { state: true },
    busy: { state: true },
  };

  db: LibraryDb | null = null;
  currentId: string | null = null;
  revision = 0;
  rows: Row[] = [];
  confirming: string | null = null;
  busy = false;

  static override styles = [
    controlStyles,
    listPanelStyles,
    css`
      ul { list-style: none; margin: 0; padding: 0; overflow-y: auto; flex: 1; }
      li { display: grid; grid-template-columns: 64px 1fr; gap: 4px 10px; padding: 8px; border-bottom: 1px solid var(--line); }
      li.current { background: #1f2a34; box-shadow: inset 3px 0 0 var(--accent); }
      canvas { width: 64px; height: 64px; object-fit: contain; background: #0b0e11; grid-row: span 2; }
      .name { font-weight: 600; overflow-wrap: anywhere; font-size: 13px; }
      .meta, .result { font-size: 12px; color: var(--muted); }
      .result { color: var(--accent-2); }
      .buttons { grid-column: 2; display: flex; gap: 6px; flex-wrap: wrap; align-items: center; }
      .confirm { color: var(--warn); font-size: 12px; }
      .empty { padding: 16px 12px; color: var(--muted); font-size: 13px; line-height: 1.5; }
      input[type='file'] { display: none; }
    `,
  ];

  protected override willUpdate(changed: PropertyValues<this>): void {
    if (changed.has('db') || changed.has('revision')) void this.reload();
  }

  protected override updated(): void {
    for (const canvas of this.renderRoot.querySelectorAll<HTMLCanvasElement>('canvas[data-id]')) {
      const row = this.rows.find((r) => r.record.id === canvas.dataset.id);
      if (!row || canvas.dataset.drawn === row.record.id) continue;
      const t = row.record.thumbnail;
      canvas.width = t.width;
      canvas.height = t.height;
      const ctx = canvas.getContext('2d');
      if (!ctx) continue;
      const img = ctx.createImageData(t.width, t.height);
      for (let i = 0; i < t.grey.length; i++) {
        img.data[4 * i] = img.data[4 * i + 1] = img.data[4 * i + 2] = t.grey[i];
        img.data[4 * i + 3] = 255;
      }
      ctx.putImageData(img, 0, 0);
      canvas.dataset.drawn = row.record.id;
    }
  }

  /** Reads the list again from the database. */
  async reload(): Promise<void> {
    if (!this.db) {
      this.rows = [];
      return;
    }
    const [images, measurements] = await Promise.all([listImages(this.db), listMeasurements(this.db)]);
    const byImage = new Map<string, Measurement[]>();
    for (const m of measurements) {
      if (!m.imageId) continue;
      const list = byImage.get(m.imageId) ?? [];
      list.push(m);
      byImage.set(m.imageId, list);
    }
    this.rows = images.reverse().map((record) => ({ record, results: byImage.get(record.id) ?? [] }));
  }

  private say(text: string, kind: 'info' | 'error' = 'info'): void {
    this.dispatchEvent(new CustomEvent('status-message', { detail: { text, kind }, bubbles: true, composed: true }));
  }

  private changed(): void {
    this.dispatchEvent(new CustomEvent('library-changed', { bubbles: true, composed: true }));
  }

  private async removeRow(row: Row): Promise<void> {
    if (!this.db) return;
    this.confirming = null;
    try {
      const n = await deleteImage(this.db, row.record.id);
      this.say(`Deleted ${row.record.fileName}${n ? ` and its ${n} result${n === 1 ? '' : 's'}` : ''} from the library.`);
      this.changed();
      await this.reload();
    } catch (e) {
      this.say(`Could not delete ${row.record.fileName}: ${(e as Error).message}`, 'error');
    }
  }

  private async exportAll(): Promise<void> {
    if (!this.db) return;
    this.busy = true;
    try {
      const json = await (await exchange()).exportLibrary(this.db);
      download(`stratameter-library-${new Date().toISOString().slice(0, 10)}.json`, json, 'application/json');
      this.say(`Exported ${this.rows.length} image${this.rows.length === 1 ? '' : 's'} with their results (${formatBytes(json.length)}).`);
    } catch (e) {
      this.say(`Export failed: ${(e as Error).message}`, 'error');
    } finally {
      this.busy = false;
    }
  }

  private async importFile(e: Event): Promise<void> {
    const input = e.target as HTMLInputElement;
    const file = input.files?.[0];
    input.value = '';
    if (!file || !this.db) return;
    this.busy = true;
    try {
      const s = await (await exchange()).importLibrary(this.db, await file.text(), { fileName: file.name });
      const n = (k: number, one: string, many = `${one}s`) => `${k} ${k === 1 ? one : many}`;
      const took = `Imported ${file.name}: ${n(s.images, 'image')}, ${n(s.measurements, 'result')}, ${n(s.calibrations, 'calibration profile')}, ${n(s.diffraction, 'diffraction set')}, ${n(s.recipes, 'recipe')}, ${n(s.batches, 'batch', 'batches')}.`;
      if (s.skipped.length === 0) this.say(took);
      else {
        const first = s.skipped.slice(0, 3).map((k) => `${k.kind}[${k.index}]${k.name ? ` (${k.name})` : ''}: ${k.reason}`).join('; ');
        this.say(`${took} Skipped ${n(s.skipped.length, 'unusable record')}: ${first}${s.skipped.length > 3 ? '; …' : ''}`, 'error');
      }
      this.changed();
      await this.reload();
    } catch (err) {
      this.say((err as Error).message, 'error');
    } finally {
      this.busy = false;
    }
  }

  private renderRow(row: Row) {
    const r = row.record;
    const latest = row.results[row.results.length - 1];
    const cal = r.calibration;
    return html`<li class=${r.id === this.currentId ? 'current' : ''}>
      <canvas data-id=${r.id} aria-hidden="true"></canvas>
      <div>
        <div class="name">${r.fileName}</div>
        <div class="meta num">${r.width} × ${r.height} px · ${r.bitDepth}-bit · ${formatBytes(r.byteSize)} · ${cal ? `${cal.nmPerPx.toPrecision(4)} nm/px` : 'uncalibrated'}</div>
        <div class="meta">added ${r.addedIso.slice(0, 16).replace('T', ' ')} · ${row.results.length} result${row.results.length === 1 ? '' : 's'}</div>
        ${latest ? html`<div class="result num">latest ${describeResult(latest)}</div>` : nothing}
      </div>
      <div class="buttons">
        ${this.confirming === r.id
          ? html`<span class="confirm" role="alert">Delete this image${row.results.length ? ` and its ${row.results.length === 1 ? 'result' : `${row.results.length} results`}` : ''}?</span>
              <button class="danger" @click=${() => this.removeRow(row)}>Delete</button>
              <button @click=${() => (this.confirming = null)}>Keep</button>`
          : html`<button @click=${() => this.dispatchEvent(new CustomEvent('open-image', { detail: { id: r.id }, bubbles: true, composed: true }))}
                aria-label=${`Open ${r.fileName}`}>Open</button>
              <button class="danger" aria-label=${`Delete ${r.fileName}`} @click=${() => (this.confirming = r.id)}>Delete…</button>`}
      </div>
    </li>`;
  }

  override render() {
    return html`
      <div class="actions">
        <button ?disabled=${!this.db || this.busy || this.rows.length === 0} @click=${this.exportAll}
          title="All images (original files), results, calibration profiles and diffraction sets in one JSON file">Export all…</button>
        <button ?disabled=${!this.db || this.busy} @click=${() => this.renderRoot.querySelector<HTMLInputElement>('input.import')?.click()}
          title="Read a library file exported before; records with the same id are replaced">Import…</button>
        <input class="import" type="file" accept=".json,application/json" @change=${this.importFile}>
        <span class="count">${this.rows.length} image${this.rows.length === 1 ? '' : 's'}</span>
      </div>
      ${this.rows.length === 0
        ? html`<p class="empty">Images you open are kept here, in this browser, with their results. Nothing leaves this computer.</p>`
        : html`<ul aria-label="Stored images">${this.rows.map((row) => this.renderRow(row))}</ul>`}
    `;
  }
}

customElements.define('strata-library', StrataLibrary);

declare global {
  interface HTMLElementTagNameMap {
    'strata-library': StrataLibrary;
  }
}
