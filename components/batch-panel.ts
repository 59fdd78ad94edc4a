// The batch side panel: a folder (or many dropped files, or the demo images) through a recipe in
// a pool of Web Workers. Each file's result is committed to the library as soon as it is ready,
// so a batch interrupted by a reload resumes where it stopped. A per-file table, pooled
// statistics, histograms and one zip of every export.
import { budgetContents, expressPeriod, formatBudget, formatPlusMinus } from '../src/measure/measurement';
import { LitElement, css, html, nothing } from 'lit';
import { unsafeSVG } from 'lit/directives/unsafe-svg.js';
import { batchJson, pooledStats, resultsCsv, summaryCsv, zipExports } from '../src/batch/export';
import { histogramSvg, MIN_VALUES_FOR_STATISTICS } from '../src/figure/batch-figure';
import { batchReportHtml } from '../src/figure/report';
import { PROGRAM_VERSION } from '../src/cli/version';
import { compareBatchWithDiffraction, comparisonCsv, diffractionOverlaySvg, type BatchComparison } from '../src/diffraction/cross-check';
import { diffractionSideOfSet } from '../src/diffraction/stored-set';
import { svgToPng } from './svg-png';
import { figureNames } from '../src/batch/names';
import { defaultRecipe, parseRecipe, RecipeError, type Recipe } from '../src/batch/recipe';
import type { FileResult } from '../src/batch/run';
import {
  commitFileResult, createBatch, deleteBatch, getBatch, listBatchFiles, listBatches, setBatchState,
  type BatchFileRecord, type BatchRun,
} from '../src/store/batches';
import { listCalibrationProfiles, listDiffractionSets, listRecipes, putRecipe, type LibraryDb } from '../src/store/library';
import type { CalibrationProfile, DiffractionSet, RecipeRecord } from '../src/store/records';
import { BatchPool, poolSize, type PoolFile } from './batch-pool';
import { controlStyles, panelStyles } from './styles';
import { download } from './download';

export const panelLabel = 'Batch';

/** The file types the decoder reads (by name). */
const IMAGE_NAME = /\.(tiff?|png|jpe?g|mrc)$/i;

/** A file chosen for the next batch. */
interface ChosenFile {
  name: string;
  /** The file (read when the batch is made, then stored as it is). */
  bytes: Blob;
}

/** A row of the per-file table. */
interface Row {
  id: string;
  name: string;
  status: 'queued' | 'running' | 'ok' | 'failed';
  result: FileResult | null;
  figurePng: Uint8Array | null;
}

/** Recipe fields with their own message line. */
type Field = 'calibration' | 'area' | 'measurements' | 'acceptance' | 'outputs' | 'import';

const f = (v: number | null | undefined, d = 3) => (v === null || v === undefined || !Number.isFinite(v) ? '—' : v.toFixed(d));

function fieldOf(e: unknown): Field {
  const path = e instanceof RecipeError ? e.path : '';
  const head = path.split(/[.[]/)[0];
  return (['calibration', 'area', 'measurements', 'acceptance', 'outputs'] as string[]).includes(head) ? (head as Field) : 'import';
}

/**
 * `<strata-batch-panel>`. Properties: `db` (LibraryDb | null). Events: `status-message`
 * {text, kind}.
 */
export class StrataBatchPanel extends LitElement {
  static override properties = {
    db: { attribute: false },
    chosen: { state: true },
    skipped: { state: true },
    recipe: { state: true },
    draft: { state: true },
    errors: { state: true },
    stored: { state: true },
    profiles: { state: true },
    batch: { state: true },
    rows: { state: true },
    running: { state: true },
    starting: { state: true },
    earlier: { state: true },
    rateText: { state: true },
    diffractionSets: { state: true },
    compareSetId: { state: true },
  };

  static override styles = [
    controlStyles,
    panelStyles,
    css`
      .drop { border: 1px dashed var(--line); border-radius: 4px; padding: 8px; text-align: center; color: var(--muted); }
      .drop.on { border-color: var(--accent-2); color: var(--text); }
      .err { color: #ff9b8f; font-size: 12px; margin: 2px 0 4px; }
      table { border-collapse: collapse; width: 100%; font-variant-numeric: tabular-nums; font-size: 12px; }
      th, td { padding: 2px 4px; text-align: right; border-bottom: 1px solid var(--line); vertical-align: top; }
      th:first-child, td:first-child { text-align: left; overflow-wrap: anywhere; }
      table.summary td:first-child { min-width: 8em; }
      td.status-ok { color: #7fd18b; }
      td.status-failed { color: #ff9b8f; }
      td.status-running { color: #f0c060; }
      td.reason { text-align: left; color: #ff9b8f; }
      progress { width: 100%; height: 14px; }
      .hists svg { width: 100%; height: auto; background: #fff; color: #000; margin-top: 4px; }
      select { max-width: 100%; }
      p { margin: 4px 0; }
    `,
  ];

  db: LibraryDb | null = null;
  /** Files chosen for the next batch. */
  chosen: ChosenFile[] = [];
  /** Files left out of the choice because their type is not read. */
  skipped: string[] = [];
  /** The recipe in use (valid). */
  recipe: Recipe = defaultRecipe();
  /** The recipe as being edited (may be invalid). */
  draft: Record<string, unknown> = JSON.parse(JSON.stringify(defaultRecipe()));
  /** Validation messages by field. */
  errors: Partial<Record<Field, string>> = {};
  /** Recipes stored in the library. */
  stored: RecipeRecord[] = [];
  /** Instrument calibration profiles of the library. */
  profiles: CalibrationProfile[] = [];
  /** The batch shown. */
  batch: BatchRun | null = null;
  rows: Row[] = [];
  running = false;
  /** A batch is being made (files hashed and stored). */
  starting = false;
  /** Batches of the library, newest first. */
  earlier: BatchRun[] = [];
  rateText = '';
  /** Diffraction sets of the library, for the comparison in the summary. */
  diffractionSets: DiffractionSet[] = [];
  /** The set the summary compares the batch with ('' for none). */
  compareSetId = '';

  private pool: BatchPool | null = null;
  /** Pause or cancel pressed during the current run. */
  private stopRequest: 'pause' | 'cancel' | null = null;
  private startedMs = 0;
  private doneSinceStart = 0;
  private loadedFor: LibraryDb | null = null;
  private dragging = false;

  override disconnectedCallback(): void {
    super.disconnectedCallback();
    this.pool?.dispose();
    this.pool = null;
  }

  protected override updated(changed: Map<string, unknown>): void {
    if (changed.has('db') && this.db && this.loadedFor !== this.db) {
      this.loadedFor = this.db;
      void this.refreshLibrary();
    }
  }

  private say(text: string, kind: 'info' | 'error' = 'info'): void {
    this.dispatchEvent(new CustomEvent('status-message', { detail: { text, kind }, bubbles: true, composed: true }));
  }

  private async refreshLibrary(): Promise<void> {
    if (!this.db) return;
    this.stored = await listRecipes(this.db).catch(() => []);
    this.profiles = await listCalibrationProfiles(this.db).catch(() => []);
    this.earlier = await listBatches(this.db).catch(() => []);
    await this.refreshDiffractionSets();
    // After a reload or a crash: offer the batch that stopped before its end.
    const open = this.earlier.find((b) => b.state === 'running' || b.state === 'paused');
    if (!this.batch && !this.running && open) {
      await this.show(open.id);
      this.say(`The batch ${open.name} stopped at ${open.ok + open.failed} of ${open.total} files: Resume it in the Batch tab.`);
    }
  }

  private async refreshDiffractionSets(): Promise<void> {
    if (!this.db) return;
    this.diffractionSets = await listDiffractionSets(this.db).catch(() => []);
  }

  /** The batch against the chosen diffraction set, or null when none is chosen. */
  private comparison(results: FileResult[]): { set: DiffractionSet; c: BatchComparison; svg: string } | null {
    const set = this.diffractionSets.find((d) => d.id === this.compareSetId);
    if (!set) return null;
    const side = diffractionSideOfSet(set);
    const c = compareBatchWithDiffraction(results, side);
    return { set, c, svg: diffractionOverlaySvg(c, side, `${set.name} against the batch`) };
  }

  // ---- choosing files -------------------------------------------------------------------

  private async addFiles(files: { name: string; file: Blob }[]): Promise<void> {
    const images = files.filter((x) => IMAGE_NAME.test(x.name));
    const skipped = files.filter((x) => !IMAGE_NAME.test(x.name)).map((x) => x.name);
    const read = images.map((x) => ({ name: x.name, bytes: x.file }));
    this.chosen = [...this.chosen, ...read].sort((a, b) => a.name.localeCompare(b.name, undefined, { numeric: true }));
    this.skipped = [...this.skipped, ...skipped];
  }

  private async pickFolder(): Promise<void> {
    const w = window as unknown as { showDirectoryPicker?: () => Promise<FileSystemDirectoryHandle> };
    if (!w.showDirectoryPicker) {
      this.renderRoot.querySelector<HTMLInputElement>('input.folder')?.click();
      return;
    }
    let dir: FileSystemDirectoryHandle;
    try {
      dir = await w.showDirectoryPicker();
    } catch {
      return; // the user closed the picker
    }
    const found: { name: string; file: Blob }[] = [];
    const walk = async (d: FileSystemDirectoryHandle, prefix: string): Promise<void> => {
      for await (const entry of (d as unknown as { values(): AsyncIterable<FileSystemHandle> }).values()) {
        if (entry.kind === 'file') found.push({ name: prefix + entry.name, file: await (entry as FileSystemFileHandle).getFile() });
        else await walk(entry as FileSystemDirectoryHandle, `${prefix}${entry.name}/`);
      }
    };
    await walk(dir, '');
    await this.addFiles(found);
  }

  private async useDemos(): Promise<void> {
    try {
      const list = (await (await fetch('demo/index.json')).json()) as { file: string; kind: string }[];
      const micrographs = list.filter((d) => d.kind === 'micrograph');
      const files = await Promise.all(micrographs.map(async (d) => ({ name: d.file, file: await (await fetch(`demo/${d.file}`)).blob() })));
      await this.addFiles(files);
    } catch (e) {
      this.say(`The demo images could not be loaded: ${(e as Error).message}`, 'error');
    }
  }

  private onInput(e: Event): void {
    const input = e.target as HTMLInputElement;
    const files = [...(input.files ?? [])].map((file) => ({ name: file.webkitRelativePath || file.name, file }));
    input.value = '';
    void this.addFiles(files);
  }

  private onDrop(e: DragEvent): void {
    e.preventDefault();
    e.stopPropagation();
    this.dragging = false;
    const files = [...(e.dataTransfer?.files ?? [])].map((file) => ({ name: file.name, file }));
    void this.addFiles(files);
  }

  // ---- the recipe -----------------------------------------------------------------------

  /** Changes one key of the draft and validates it. */
  private edit(mutate: (d: Record<string, any>) => void): void {
    const d = JSON.parse(JSON.stringify(this.draft)) as Record<string, any>;
    mutate(d);
    this.draft = d;
    this.validate();
  }

  private validate(): void {
    try {
      this.recipe = parseRecipe(this.draft);
      this.errors = {};
    } catch (e) {
      this.errors = { [fieldOf(e)]: (e as Error).message };
    }
  }

  private useRecipe(r: Recipe): void {
    this.recipe = r;
    this.draft = JSON.parse(JSON.stringify(r));
    this.errors = {};
  }

  private chooseStored(id: string): void {
    if (id === 'default') return this.useRecipe(defaultRecipe());
    const rec = this.stored.find((r) => r.id === id);
    if (!rec) return;
    try {
      this.useRecipe(parseRecipe(rec.json));
    } catch (e) {
      this.errors = { import: `stored recipe ${rec.name}: ${(e as Error).message}` };
    }
  }

  private async importRecipe(e: Event): Promise<void> {
    const input = e.target as HTMLInputElement;
    const file = input.files?.[0];
    input.value = '';
    if (!file) return;
    const text = await file.text();
    try {
      this.useRecipe(parseRecipe(text));
      this.say(`Recipe ${this.recipe.name} read from ${file.name}.`);
    } catch (err) {
      this.errors = { [fieldOf(err)]: `${file.name}: ${(err as Error).message}` };
    }
  }

  private async saveRecipe(): Promise<void> {
    if (!this.db || Object.keys(this.errors).length) return;
    const r = this.recipe;
    const existing = this.stored.find((s) => s.name === r.name);
    try {
      await putRecipe(this.db, { id: existing?.id ?? crypto.randomUUID(), name: r.name, version: r.version, json: JSON.stringify(r, null, 2) });
      await this.refreshLibrary();
      this.say(`Recipe ${r.name} saved in the library.`);
    } catch (e) {
      this.say((e as Error).message, 'error');
    }
  }

  // ---- running --------------------------------------------------------------------------

  private async start(): Promise<void> {
    if (!this.db || !this.chosen.length || Object.keys(this.errors).length || this.running || this.starting) return;
    this.starting = true;
    this.stopRequest = null;
    try {
      const { batch, duplicates } = await createBatch(this.db, { recipe: this.recipe, files: this.chosen });
      if (duplicates.length) this.say(`${duplicates.length} duplicate file${duplicates.length === 1 ? '' : 's'} left out: ${duplicates.join(', ')}`);
      this.chosen = [];
      this.skipped = [];
      await this.show(batch.id);
      this.starting = false;
      await this.run();
    } catch (e) {
      this.say((e as Error).message, 'error');
    } finally {
      this.starting = false;
    }
  }

  /** Shows a stored batch with its files. */
  private async show(id: string): Promise<void> {
    // one batch at a time: another is shown only when none runs
    if (!this.db || this.running) return;
    const batch = await getBatch(this.db, id);
    if (!batch) return;
    const files = await listBatchFiles(this.db, id);
    this.batch = batch;
    this.rows = files.map((r: BatchFileRecord) => ({ id: r.id, name: r.name, status: r.status, result: r.result, figurePng: r.figurePng }));
    this.rateText = '';
  }

  /** Runs (or resumes) the shown batch on its queued files. */
  private async run(): Promise<void> {
    const db = this.db;
    const batch = this.batch;
    if (!db || !batch || this.running) return;
    this.running = true;
    try {
      await this.runQueued(db, batch);
    } catch (e) {
      this.say(`The batch stopped: ${(e as Error).message}`, 'error');
    } finally {
      this.running = false;
      this.rows = this.rows.map((row) => (row.status === 'running' ? { ...row, status: 'queued' } : row));
      if (this.batch) this.batch = (await getBatch(db, this.batch.id)) ?? this.batch;
      await this.refreshLibrary();
    }
    if (this.batch?.state === 'finished') this.say(`Batch finished: ${this.batch.ok} files measured, ${this.batch.failed} failed.`);
  }

  private async runQueued(db: LibraryDb, batch: BatchRun): Promise<void> {
    const files = await listBatchFiles(db, batch.id);
    const queued = files.filter((r) => r.status === 'queued');
    if (!queued.length || this.stopRequest) return;
    this.batch = await setBatchState(db, batch.id, 'running');
    // pause or cancel pressed while starting: nothing is handed to the workers
    if (this.stopRequest) return;
    this.pool ??= new BatchPool(poolSize());
    this.startedMs = performance.now();
    this.doneSinceStart = 0;
    const poolFiles: PoolFile[] = queued.map((r) => ({ id: r.id, name: r.name, bytes: async () => new Uint8Array(await r.file.arrayBuffer()) }));
    const setRow = (id: string, patch: Partial<Row>) => {
      this.rows = this.rows.map((row) => (row.id === id ? { ...row, ...patch } : row));
    };
    await this.pool.run(poolFiles, {
      recipeJson: batch.recipeJson,
      figures: batch.figures,
      onStart: (file) => setRow(file.id, { status: 'running' }),
      onAnswer: async ({ file, result, figurePng }) => {
        const { batch: next } = await commitFileResult(db, file.id, result, figurePng);
        if (this.batch?.id === next.id) this.batch = next;
        setRow(file.id, { status: result.status, result, figurePng });
        this.doneSinceStart++;
        this.updateRate();
      },
    });
  }

  /** Resume (after a pause or a reload). */
  private resume(): Promise<void> {
    this.stopRequest = null;
    return this.run();
  }

  private updateRate(): void {
    const b = this.batch;
    if (!b) return;
    const seconds = (performance.now() - this.startedMs) / 1000;
    const rate = this.doneSinceStart / seconds;
    const left = b.total - b.ok - b.failed;
    const eta = rate > 0 ? left / rate : NaN;
    this.rateText = `${(rate * 60).toFixed(1)} files/min · ${Number.isFinite(eta) ? `${Math.ceil(eta)} s left` : '—'}`;
  }

  private async pause(): Promise<void> {
    if (!this.db || !this.batch) return;
    this.stopRequest = 'pause';
    this.pool?.pause();
    this.batch = await setBatchState(this.db, this.batch.id, 'paused');
  }

  private async cancel(): Promise<void> {
    if (!this.db || !this.batch) return;
    this.stopRequest = 'cancel';
    this.pool?.cancel();
    this.batch = await setBatchState(this.db, this.batch.id, 'cancelled');
    await this.refreshLibrary();
  }

  private async removeBatch(id: string): Promise<void> {
    if (!this.db) return;
    if (this.batch?.id === id) {
      this.pool?.cancel();
      this.batch = null;
      this.rows = [];
    }
    await deleteBatch(this.db, id);
    await this.refreshLibrary();
  }

  // ---- exports --------------------------------------------------------------------------

  private results(): FileResult[] {
    return this.rows.map((r) => r.result).filter((r): r is FileResult => r !== null);
  }

  /** Every export of the shown batch, by archive path. */
  exportFiles(): Record<string, string | Uint8Array> {
    const b = this.batch;
    if (!b) return {};
    const recipe = parseRecipe(b.recipeJson);
    // figure names unique within the batch (names differing only in replaced characters never share one), named in each result
    const figureOf = figureNames(this.rows.map((r) => r.name));
    const withFigure = new Set(this.rows.filter((r) => r.figurePng).map((r) => r.name));
    const results = this.results().map((r) => (withFigure.has(r.file) ? { ...r, figureFile: figureOf.get(r.file) } : r));
    const out: Record<string, string | Uint8Array> = {
      'results.csv': resultsCsv(results, recipe.outputs.coverageFactor),
      'summary.csv': summaryCsv(results, recipe.outputs.coverageFactor),
      'batch.json': batchJson(recipe, results),
      'recipe.json': `${JSON.stringify(recipe, null, 2)}\n`,
      // the batch's report: one self-contained HTML file that prints to A4 (src/figure/report.ts)
      'report.html': batchReportHtml({ results, recipe, software: `Stratameter ${PROGRAM_VERSION}`, createdIso: b.createdIso, title: recipe.name }),
    };
    for (const r of this.rows) if (r.figurePng) out[`figures/${figureOf.get(r.name)}`] = r.figurePng;
    for (const [name, svgText] of Object.entries(this.histograms(results))) out[`histograms/${name}.svg`] = svgText;
    const cmp = this.comparison(results);
    if (cmp) {
      out['diffraction/comparison.csv'] = comparisonCsv(cmp.c, cmp.set.name);
      out['diffraction/overlay.svg'] = cmp.svg;
    }
    return out;
  }

  /** The values too few for statistics (fewer than 3), as a table instead of a mean or a histogram. */
  private fewValues(results: FileResult[], k: number) {
    const ok = results.filter((r) => r.status === 'ok');
    const rows: { what: string; file: string; value: string; contains?: string }[] = [];
    const tops = ok.filter((r) => r.summary.topPeriods[0] && r.calibration);
    if (tops.length > 0 && tops.length < MIN_VALUES_FOR_STATISTICS) {
      for (const r of tops) {
        const b = expressPeriod(r.summary.topPeriods[0], r.calibration!, k);
        rows.push({ what: `strongest period ± U (nm, k = ${k})`, file: r.file, value: formatPlusMinus(b.value, b.expanded), contains: `contains: ${budgetContents(b)}` });
      }
    }
    const sheets = ok.flatMap((r) => r.summary.sheetThicknessNm.map((v) => ({ file: r.file, v })));
    if (sheets.length > 0 && sheets.length < MIN_VALUES_FOR_STATISTICS) for (const s of sheets) rows.push({ what: 'sheet thickness (nm)', file: s.file, value: f(s.v, 2) });
    if (!rows.length) return nothing;
    return html`<table class="few-values" aria-label="Values too few for statistics">
      <caption>Fewer than ${MIN_VALUES_FOR_STATISTICS} values: listed, with no mean, standard deviation or histogram</caption>
      <thead><tr><th>quantity</th><th>file</th><th>value</th></tr></thead>
      <tbody>${rows.map((r) => html`<tr><td>${r.what}</td><td>${r.file}</td><td class="num" title=${r.contains ?? ''}>${r.value}</td></tr>`)}</tbody>
    </table>`;
  }

  private histograms(results: FileResult[]): Record<string, string> {
    const ok = results.filter((r) => r.status === 'ok');
    const tops = ok.flatMap((r) => (r.summary.topPeriods[0] && r.calibration ? [expressPeriod(r.summary.topPeriods[0], r.calibration).value] : []));
    const sheets = ok.flatMap((r) => r.summary.sheetThicknessNm);
    const out: Record<string, string> = {};
    // no histogram of fewer than 3 values: the summary lists them
    if (tops.length >= MIN_VALUES_FOR_STATISTICS) out['top-period'] = histogramSvg(tops, { xLabel: 'strongest period (nm)', title: 'Strongest period per image' });
    if (sheets.length >= MIN_VALUES_FOR_STATISTICS) out['sheet-thickness'] = histogramSvg(sheets, { xLabel: 'sheet thickness (nm)', title: 'Sheet thickness, all images' });
    return out;
  }

  /** Downloads every export as one zip; each SVG figure also as PNG (twice its size). */
  private async exportZip(): Promise<void> {
    const b = this.batch;
    if (!b) return;
    const stamp = b.createdIso.slice(0, 19).replace(/[:T]/g, '-');
    const files = this.exportFiles();
    for (const [name, content] of Object.entries(files)) {
      if (!name.endsWith('.svg') || typeof content !== 'string') continue;
      try {
        files[name.replace(/\.svg$/, '.png')] = await svgToPng(content);
      } catch (e) {
        this.say(`${name}: no PNG (${(e as Error).message}); the SVG is in the archive`, 'error');
      }
    }
    download(`batch-${stamp}.zip`, zipExports(files), 'application/zip');
  }

  // ---- views ----------------------------------------------------------------------------

  private renderFiles() {
    return html`<section aria-label="Files">
      <h3>1 · Files</h3>
      <div class="row">
        <button class="pick-folder" @click=${() => void this.pickFolder()}>Choose folder…</button>
        <button @click=${() => this.renderRoot.querySelector<HTMLInputElement>('input.files')?.click()}>Choose files…</button>
        <button class="use-demos" @click=${() => void this.useDemos()}>Use the demo images</button>
        <input class="folder" type="file" webkitdirectory multiple hidden @change=${this.onInput}>
        <input class="files" type="file" multiple hidden accept=".tif,.tiff,.png,.jpg,.jpeg,.mrc" @change=${this.onInput}>
      </div>
      <div class=${this.dragging ? 'drop on' : 'drop'}
        @dragover=${(e: DragEvent) => { e.preventDefault(); e.stopPropagation(); this.dragging = true; this.requestUpdate(); }}
        @dragleave=${() => { this.dragging = false; this.requestUpdate(); }}
        @drop=${this.onDrop}>or drop many image files here</div>
      <p class="chosen muted">${this.chosen.length
        ? html`${this.chosen.length} file${this.chosen.length === 1 ? '' : 's'} chosen, ${(this.chosen.reduce((s, c) => s + c.bytes.size, 0) / 1048576).toFixed(1)} MB
            <button @click=${() => { this.chosen = []; this.skipped = []; }}>Clear</button>`
        : 'No file chosen.'}</p>
      ${this.skipped.length
        ? html`<p class="skipped err">Left out, not a type read here (TIFF, PNG, JPEG, MRC): ${this.skipped.slice(0, 20).join(', ')}${this.skipped.length > 20 ? ` and ${this.skipped.length - 20} more` : ''}</p>`
        : nothing}
    </section>`;
  }

  private renderRecipe() {
    const d = this.draft as Record<string, any>;
    const cal = d.calibration ?? {};
    const area = d.area ?? {};
    const steps: { tool: string; topK?: number }[] = Array.isArray(d.measurements) ? d.measurements : [];
    const has = (tool: string) => steps.some((s) => s.tool === tool);
    const toggle = (tool: string, on: boolean) => this.edit((x) => {
      const list = (x.measurements as { tool: string; topK?: number }[]).filter((s) => s.tool !== tool);
      if (on) list.push(tool === 'spectrum' ? { tool, topK: 3 } : { tool });
      x.measurements = list;
    });
    const acc = d.acceptance ?? {};
    const num = (e: Event) => {
      const v = (e.target as HTMLInputElement).value;
      return v === '' ? null : Number(v);
    };
    const err = (k: Field) => (this.errors[k] ? html`<p class="err" role="alert" data-field=${k}>${this.errors[k]}</p>` : nothing);
    return html`<section aria-label="Recipe">
      <h3>2 · Recipe</h3>
      <div class="row">
        <select class="recipe-source" aria-label="Recipe" @change=${(e: Event) => this.chooseStored((e.target as HTMLSelectElement).value)}>
          <option value="default">default recipe</option>
          ${this.stored.map((r) => html`<option value=${r.id}>${r.name} (v${r.version})</option>`)}
        </select>
        <label>name <input type="text" .value=${String(d.name ?? '')} @change=${(e: Event) => this.edit((x) => (x.name = (e.target as HTMLInputElement).value))}></label>
      </div>
      <div class="row">
        <label>calibration
          <select class="cal-route" .value=${cal.route === 'profile' ? `profile:${cal.profileId}` : String(cal.route ?? 'metadata')} @change=${(e: Event) => this.edit((x) => {
            const route = (e.target as HTMLSelectElement).value;
            const profile = this.profiles.find((p) => `profile:${p.id}` === route);
            x.calibration = profile
              ? { route: 'profile', profileId: profile.id, nmPerPx: profile.nmPerPx, relUncertainty: profile.relUncertainty }
              : route === 'fixed' ? { route, nmPerPx: 0.1, relUncertainty: 0.02 } : { route };
          })}>
            <option value="metadata">from the file's metadata</option>
            <option value="scale-bar">from the scale bar</option>
            <option value="fixed">one pixel size for all</option>
            ${this.profiles.map((p) => html`<option value=${`profile:${p.id}`}>profile: ${p.name} (${p.nmPerPx} nm/px)</option>`)}
            ${cal.route === 'profile' && !this.profiles.some((p) => p.id === cal.profileId)
              ? html`<option value=${`profile:${cal.profileId}`}>profile in the recipe (${cal.nmPerPx} nm/px)</option>` : nothing}
          </select></label>
        ${cal.route === 'fixed'
          ? html`<label>nm/px <input type="number" step="any" .value=${String(cal.nmPerPx ?? '')} @change=${(e: Event) => this.edit((x) => (x.calibration.nmPerPx = num(e)))}></label>
              <label>rel. u <input type="number" step="any" .value=${String(cal.relUncertainty ?? '')} @change=${(e: Event) => this.edit((x) => (x.calibration.relUncertainty = num(e)))}></label>`
          : nothing}
      </div>
      ${err('calibration')}
      <div class="row">
        <label>area
          <select class="area-kind" .value=${String(area.kind ?? 'whole')} @change=${(e: Event) => this.edit((x) => {
            const kind = (e.target as HTMLSelectElement).value;
            x.area = kind === 'centre' ? { kind, infoStripPx: 'auto', fraction: 0.5 } : kind === 'tiles' ? { kind, infoStripPx: 'auto', rows: 2, columns: 2 } : { kind, infoStripPx: 'auto' };
          })}>
            <option value="whole">whole image</option>
            <option value="centre">centred crop</option>
            <option value="tiles">tiles</option>
          </select></label>
        ${area.kind === 'centre' ? html`<label>fraction <input type="number" step="0.05" .value=${String(area.fraction ?? 0.5)} @change=${(e: Event) => this.edit((x) => (x.area.fraction = num(e)))}></label>` : nothing}
        ${area.kind === 'tiles'
          ? html`<label>rows <input type="number" .value=${String(area.rows)} @change=${(e: Event) => this.edit((x) => (x.area.rows = num(e)))}></label>
              <label>columns <input type="number" .value=${String(area.columns)} @change=${(e: Event) => this.edit((x) => (x.area.columns = num(e)))}></label>`
          : nothing}
      </div>
      ${err('area')}
      <div class="row">
        <label><input type="checkbox" class="m-spectrum" .checked=${has('spectrum')} @change=${(e: Event) => toggle('spectrum', (e.target as HTMLInputElement).checked)}> spectrum periods</label>
        ${has('spectrum') ? html`<label>top <input type="number" .value=${String(steps.find((s) => s.tool === 'spectrum')?.topK ?? 3)}
          @change=${(e: Event) => this.edit((x) => ((x.measurements as { tool: string; topK?: number | null }[]).find((s) => s.tool === 'spectrum')!.topK = num(e)))}></label>` : nothing}
        <label><input type="checkbox" class="m-rings" .checked=${has('rings')} @change=${(e: Event) => toggle('rings', (e.target as HTMLInputElement).checked)}> rings</label>
        <label><input type="checkbox" class="m-sheets" .checked=${has('sheets')} @change=${(e: Event) => toggle('sheets', (e.target as HTMLInputElement).checked)}> sheets</label>
      </div>
      ${err('measurements')}
      <div class="row">
        <label>min strength <input type="number" step="any" .value=${String(acc.minStrength ?? 0)} @change=${(e: Event) => this.edit((x) => (x.acceptance.minStrength = num(e)))}></label>
        <label>max rel. u <input type="number" step="any" placeholder="any" .value=${acc.maxRelUncertainty === null || acc.maxRelUncertainty === undefined ? '' : String(acc.maxRelUncertainty)}
          @change=${(e: Event) => this.edit((x) => (x.acceptance.maxRelUncertainty = num(e)))}></label>
      </div>
      ${err('acceptance')}
      <div class="row">
        <label><input type="checkbox" class="o-figures" .checked=${!!d.outputs?.figures} @change=${(e: Event) => this.edit((x) => (x.outputs = { ...(x.outputs ?? {}), figures: (e.target as HTMLInputElement).checked }))}> annotated figures</label>
      </div>
      ${err('outputs')}
      <div class="row">
        <button @click=${() => this.renderRoot.querySelector<HTMLInputElement>('input.recipe-file')?.click()}>Import recipe…</button>
        <input class="recipe-file" type="file" hidden accept=".json,application/json" @change=${this.importRecipe}>
        <button ?disabled=${!!Object.keys(this.errors).length} @click=${() => download(`${this.recipe.name.replace(/[^A-Za-z0-9._-]+/g, '_')}.recipe.json`, `${JSON.stringify(this.recipe, null, 2)}\n`, 'application/json')}>Export recipe</button>
        <button ?disabled=${!this.db || !!Object.keys(this.errors).length} @click=${() => void this.saveRecipe()}>Save in library</button>
      </div>
      ${err('import')}
    </section>`;
  }

  private renderRun() {
    const b = this.batch;
    const done = b ? b.ok + b.failed : 0;
    const canStart = !!this.db && this.chosen.length > 0 && !Object.keys(this.errors).length && !this.running && !this.starting;
    return html`<section aria-label="Run">
      <h3>3 · Run</h3>
      <div class="row">
        <button class="start" ?disabled=${!canStart} @click=${() => void this.start()}>Start batch</button>
        ${this.starting ? html`<span class="muted">storing the files…</span>` : nothing}
        ${b && !this.starting && !this.running && b.state !== 'finished' && b.state !== 'cancelled'
          ? html`<button class="resume" @click=${() => void this.resume()}>Resume</button>` : nothing}
        ${!this.starting && this.running && b?.state === 'running' ? html`<button class="pause" @click=${() => void this.pause()}>Pause</button>` : nothing}
        ${b && !this.starting && (this.running || b.state === 'paused' || b.state === 'running') ? html`<button class="cancel danger" @click=${() => void this.cancel()}>Cancel</button>` : nothing}
        <span class="muted">${poolSize()} worker${poolSize() === 1 ? '' : 's'}</span>
      </div>
      ${b
        ? html`<p><b>${b.name}</b> · <span class="state">${b.state}${this.running && b.state === 'paused' ? ' (finishing the files in work)' : ''}</span></p>
            <progress max=${b.total} .value=${done}></progress>
            <p class="num progress-text"><span class="done">${done}</span> / <span class="total">${b.total}</span> done
              (${b.ok} measured, ${b.failed} failed)${this.rateText ? html` · ${this.rateText}` : nothing}</p>
            <table class="files">
              <thead><tr><th>file</th><th>status</th></tr></thead>
              <tbody>${this.rows.map((r) => html`<tr data-file=${r.name}><td>${r.name}</td><td class="status-${r.status}">${r.status === 'queued' && b.state === 'cancelled' ? 'not run' : r.status}</td></tr>
                ${r.status === 'failed' ? html`<tr class="reason-row"><td class="reason" colspan="2">${r.result?.reason ?? ''}</td></tr>` : nothing}`)}</tbody>
            </table>`
        : html`<p class="muted">Choose files and start a batch; each file's results are kept in this browser as soon as they are ready.</p>`}
    </section>`;
  }

  private renderSummary() {
    const results = this.results();
    if (!this.batch || !results.length) return nothing;
    const k = parseRecipe(this.batch.recipeJson).outputs.coverageFactor;
    const pooled = pooledStats(results, k);
    const hists = this.histograms(results);
    const calText = (r: FileResult) => (r.calibration ? `${f(r.calibration.nmPerPx, 4)} (${r.calibration.source})` : '—');
    return html`<section aria-label="Summary">
      <h3>4 · Summary</h3>
      <table class="summary">
        <thead><tr><th>file</th><th>nm/px (source)</th><th>top periods ± U (nm, k = ${k})</th><th>sheets</th><th>thickness ± sd (nm)</th></tr></thead>
        <tbody>${results.map((r) => html`<tr>
          <td>${r.file}</td>
          ${r.status === 'failed'
            ? html`<td class="reason" colspan="4">${r.reason}</td>`
            : html`<td>${calText(r)}</td>
              <td>${r.summary.topPeriods.length && r.calibration ? r.summary.topPeriods.map((p) => { const b = expressPeriod(p, r.calibration, k); return html`<div title=${`contains: ${budgetContents(b)}`}>${formatPlusMinus(b.value, b.expanded)}</div>`; }) : '—'}</td>
              <td>${r.summary.sheetCount ?? '—'}</td>
              <td>${r.summary.sheetThicknessNm.length < MIN_VALUES_FOR_STATISTICS || r.summary.meanThicknessNm === null
                ? (r.summary.sheetThicknessNm.length ? r.summary.sheetThicknessNm.map((v) => f(v, 2)).join(', ') : '—')
                : `${f(r.summary.meanThicknessNm, 2)} ± ${f(r.summary.sdThicknessNm, 2)}`}</td>`}
        </tr>`)}</tbody>
      </table>
      <p class="pooled num">${pooled.files.ok} measured, ${pooled.files.failed} failed.
        ${pooled.topPeriodNm && pooled.topPeriodNm.n >= MIN_VALUES_FOR_STATISTICS ? html`Strongest period: mean ${f(pooled.topPeriodNm.mean)} nm, sd ${f(pooled.topPeriodNm.sd)} nm (n = ${pooled.topPeriodNm.n}).` : nothing}
        ${pooled.pooledTopPeriod ? html`Pooled: <span class="pooled-period">${formatBudget(pooled.pooledTopPeriod.budget)}</span>${Number.isFinite(pooled.pooledTopPeriod.birgeRatio) ? `, Birge ratio ${f(pooled.pooledTopPeriod.birgeRatio, 2)}` : ''}.` : nothing}
        ${pooled.sheetThicknessNm && pooled.sheetThicknessNm.n >= MIN_VALUES_FOR_STATISTICS ? html`Sheets: ${pooled.sheetCount}, thickness ${f(pooled.sheetThicknessNm.mean, 2)} ± ${f(pooled.sheetThicknessNm.sd, 2)} nm (sd).` : nothing}</p>
      ${this.fewValues(results, k)}
      <div class="hists">${Object.values(hists).map((s) => unsafeSVG(s))}</div>
      ${this.renderComparison(results)}
      <div class="row">
        <button class="export-zip" @click=${() => void this.exportZip()}>Download all exports (zip)</button>
        <span class="muted">report (HTML), CSV, JSON, recipe${this.rows.some((r) => r.figurePng) ? ', figures' : ''}${Object.keys(hists).length ? ', histograms (SVG and PNG)' : ''}${this.compareSetId ? ', diffraction comparison' : ''}</span>
      </div>
    </section>`;
  }

  private renderComparison(results: FileResult[]) {
    const cmp = this.comparison(results);
    const r = cmp?.c.reconciliation;
    return html`<div class="compare">
      <div class="row">
        <label>Compare with a diffraction set
          <select class="compare-set" @focus=${() => void this.refreshDiffractionSets()} @change=${(e: Event) => { this.compareSetId = (e.target as HTMLSelectElement).value; }}>
            <option value="" ?selected=${!this.compareSetId}>none</option>
            ${this.diffractionSets.map((d) => html`<option value=${d.id} ?selected=${d.id === this.compareSetId}>${d.name}</option>`)}
          </select>
        </label>
        ${this.diffractionSets.length ? nothing : html`<span class="muted">Save a set in the Diffraction tab first.</span>`}
      </div>
      ${cmp && r
        ? html`<table class="comparison">
            <thead><tr><th>period ± U (nm)</th><th>periods / images</th><th>line</th><th>d ± u (nm)</th><th>z</th></tr></thead>
            <tbody>${cmp.c.groups.map((g, i) => {
              const b = r.best[i];
              return html`<tr><td title=${`k = ${g.budget.k}; contains: ${budgetContents(g.budget)}`}>${formatPlusMinus(g.budget.value, g.budget.expanded)}</td><td>${g.n} / ${g.sources.length}</td>
                <td>${b?.label ?? 'no match'}</td><td>${b ? `${f(b.dNm, 4)} ± ${f(b.dUncNm, 4)}` : '—'}</td><td>${b ? f(b.z, 2) : '—'}</td></tr>`;
            })}</tbody>
          </table>
          ${r.thickness ? html`<p class="muted">${r.thickness.note}</p>` : nothing}
          ${r.calibration ? html`<p class="muted">Proposed, not applied: multiply nm/px by ${f(r.calibration.factor, 4)} ± ${f(r.calibration.factorUnc, 4)} (${r.calibration.reason}).</p>` : nothing}
          ${r.notes.map((n) => html`<p class="muted">${n}</p>`)}
          <div class="hists">${unsafeSVG(cmp.svg)}</div>`
        : nothing}
    </div>`;
  }

  private renderEarlier() {
    if (!this.earlier.length) return nothing;
    return html`<section aria-label="Batches in the library">
      <h3>Batches in the library</h3>
      <table class="earlier">
        <tbody>${this.earlier.map((b) => html`<tr data-batch=${b.id}>
          <td>${b.name}<div class="muted">${b.createdIso.slice(0, 16).replace('T', ' ')}</div></td>
          <td>${b.ok + b.failed} / ${b.total}</td>
          <td>${b.state}</td>
          <td>
            ${(b.state === 'running' || b.state === 'paused') && !this.running && !this.starting
              ? html`<button class="resume-earlier" @click=${async () => { await this.show(b.id); await this.resume(); }}>Resume</button>` : nothing}
            ${this.batch?.id !== b.id && !this.running && !this.starting ? html`<button @click=${() => void this.show(b.id)}>Show</button>` : nothing}
            <button class="danger" title="Delete the batch and its stored files" @click=${() => void this.removeBatch(b.id)}>Delete</button>
          </td>
        </tr>`)}</tbody>
      </table>
    </section>`;
  }

  override render() {
    return html`
      ${this.db ? nothing : html`<p class="err">The local library is not open: batches need it to keep their results.</p>`}
      ${this.renderFiles()}
      ${this.renderRecipe()}
      ${this.renderRun()}
      ${this.renderSummary()}
      ${this.renderEarlier()}
    `;
  }
}

customElements.define('strata-batch-panel', StrataBatchPanel);
