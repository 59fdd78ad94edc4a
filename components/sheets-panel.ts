// The sheets side panel: every stack found in the image (outlines with their counts drawn on it),
// sheets along a drawn line, the review of each sheet (accept, reject, correct its count), the
// layer-count and thickness distributions, the comparison with the basal X-ray reflection's
// Scherrer size, and the review kept in the library as a measurement record.
import { LitElement, css, html, nothing, svg } from 'lit';
import type { GreyImage } from '../src/image/grey-image';
import type { ImageRecord } from '../src/store/records';
import type { LibraryDb } from '../src/store/schema';
import { listDiffractionSets, listMeasurements, putMeasurement } from '../src/store/library';
import type { DiffractionSet, StoredSetResults } from '../src/diffraction/stored-set';
import { MIN_COUNTABLE_PERIOD_PX } from '../src/sheets/limits';
import type { LineSheetsResult } from '../src/sheets/line';
import type { ImagePeriod } from '../src/sheets/detect';
import {
  correctSheet,
  expressSheet,
  sheetFromAuto,
  sheetFromLine,
  sheetsMeasurement,
  sheetsOfMeasurement,
  sheetStatistics,
  THICKNESS_CONVENTION,
  type SheetReport,
  type SheetsDetail,
} from '../src/sheets/record';
import { basalLine, compareWithScherrer, sizedLines, type ScherrerComparison, type XrdLine } from '../src/sheets/xrd-compare';
import { budgetContents, formatPlusMinus, nmPerPxAlong, type UncertaintyBudget } from '../src/measure/measurement';
import { histogram, type Summary } from '../src/measure/stats';
import type { ComputeClient } from './compute-client';
import type { LineDrawnDetail, OverlayShape, ShapeClickDetail, StrataViewer } from './viewer';
import { controlStyles, panelStyles, wideStyles } from './styles';
import type { PlotData } from '../src/figure/plot';
import './plot';
import './export-menu';
import type { ExportFigure, ExportTable } from './export-menu';
import { histogramSvg, MIN_VALUES_FOR_STATISTICS } from '../src/figure/batch-figure';

export const panelLabel = 'Sheets';
/** The line profile and the distributions get the main area beside the image; controls and the sheet table the side column. */
export const panelWide = true;

/** Below this many sheets the distributions are shown as a table, not as histograms. */
const MIN_FOR_HISTOGRAM = 5;

/** The Sheets panel's state in the image's undo history. */
interface SheetsState {
  sheets: SheetReport[];
  periods: ImagePeriod[];
  nextLineId: number;
}

const fmt = (b: UncertaintyBudget) => `${formatPlusMinus(b.value, b.expanded)}`;

/**
 * `<strata-sheets-panel>`. Properties (given by the app shell): `image`, `record`, `db`,
 * `compute`, `viewer`, `line`. Events: `overlay-shapes` {shapes}, `status-message` {text, kind},
 * `library-changed`. The search and the line run in the compute worker on the image its session
 * holds (`session`): the requests carry the session id, never pixels.
 */
/** Resolves in a later task of the event loop (after the browser has drawn what changed). */
const nextTask = (): Promise<void> => new Promise((done) => setTimeout(done, 0));

export class StrataSheetsPanel extends LitElement {
  static override properties = {
    image: { attribute: false },
    wide: { type: Boolean, reflect: true },
    record: { attribute: false },
    db: { attribute: false },
    compute: { attribute: false },
    session: { attribute: false },
    viewer: { attribute: false },
    line: { attribute: false },
    sheets: { state: true },
    periods: { state: true },
    lineResult: { state: true },
    busy: { state: true },
    acceptedOnly: { state: true },
    bright: { state: true },
    periodText: { state: true },
    selectedId: { state: true },
    savedAt: { state: true },
    message: { state: true },
    xrdSets: { state: true },
    xrdSetId: { state: true },
    comparison: { state: true },
    comparisonNote: { state: true },
  };

  static override styles = [
    controlStyles,
    panelStyles,
    wideStyles,
    css`
      table { border-collapse: collapse; width: 100%; font-variant-numeric: tabular-nums; }
      th, td { padding: 2px 4px; text-align: right; border-bottom: 1px solid var(--line); }
      th:first-child, td:first-child { text-align: left; }
      table.stats th[scope='row'] { font-weight: normal; }
      tr.rejected td { opacity: 0.45; text-decoration: line-through; }
      tr.accepted td:first-child, tr.corrected td:first-child { color: #7fd18b; }
      tr.selected td { background: #1f2a34; }
      tr { cursor: pointer; }
      .muted { opacity: 0.75; }
      svg.hist rect.bar { fill: #5aa0f0; }
      svg.hist text { fill: currentColor; font-size: 10px; }
      svg.hist line { stroke: #5d6b78; }
      .hists { display: flex; flex-wrap: wrap; gap: 8px; }
      .detail { background: #18212a; border: 1px solid var(--line); border-radius: 3px; padding: 6px 8px; margin: 6px 0; }
      .detail dl { display: grid; grid-template-columns: auto 1fr; gap: 2px 10px; margin: 4px 0; }
      .detail dt { color: var(--muted); }
      .detail dd { margin: 0; font-variant-numeric: tabular-nums; }
      p { margin: 4px 0; }
      input.period { width: 6em; }
      input.count { width: 4em; }
    `,
  ];

  image: GreyImage | null = null;
  record: ImageRecord | null = null;
  db: LibraryDb | null = null;
  compute: ComputeClient | null = null;
  /** The id of the open image's session in the compute worker (null until it is open there). */
  session: string | null = null;
  viewer: StrataViewer | null = null;
  line: LineDrawnDetail | null = null;
  /** The sheets under review (automatic and from lines), lengths in px. */
  sheets: SheetReport[] = [];
  /** The image's layer periods from the last search (px). */
  periods: ImagePeriod[] = [];
  lineResult: LineSheetsResult | null = null;
  busy = false;
  /** Set by the shell: the figures in the main area beside the image, the controls in a side column. */
  wide = false;
  acceptedOnly = false;
  bright = false;
  /** The period typed by the user (nm when the image is calibrated, else px), or ''. */
  periodText = '';
  selectedId: string | null = null;
  savedAt: string | null = null;
  message: string | null = null;
  xrdSets: DiffractionSet[] = [];
  xrdSetId = '';
  comparison: ScherrerComparison | null = null;
  comparisonNote: string | null = null;
  private shownImage: GreyImage | null = null;
  private recordId: string | null = null;
  private nextLineId = 1;
  /** Restores from the undo history in progress (they record no step). */
  private restoring = 0;
  /** True once this image's review is in the undo history (a step recorded or a state restored). */
  private inHistory = false;
  private listenedViewer: StrataViewer | null = null;
  private readonly onShapeClick = (e: Event) => {
    const d = (e as CustomEvent<ShapeClickDetail>).detail;
    if (this.sheets.some((s) => s.id === d.id)) this.select(d.id);
  };

  override disconnectedCallback(): void {
    super.disconnectedCallback();
    this.listenedViewer?.removeEventListener('shape-click', this.onShapeClick);
    this.listenedViewer = null;
  }

  protected override willUpdate(changed: Map<string, unknown>): void {
    if (changed.has('viewer') && this.viewer !== this.listenedViewer) {
      this.listenedViewer?.removeEventListener('shape-click', this.onShapeClick);
      this.viewer?.addEventListener('shape-click', this.onShapeClick);
      this.listenedViewer = this.viewer;
    }
    if (changed.has('image') && this.image !== this.shownImage) {
      const samePixels = !!this.image && !!this.shownImage && this.image.data === this.shownImage.data;
      this.shownImage = this.image;
      if (!samePixels) {
        // a new image: its own review, from the library when it was kept there
        this.sheets = [];
        this.periods = [];
        this.lineResult = null;
        this.selectedId = null;
        this.recordId = null;
        this.savedAt = null;
        this.message = null;
        this.comparison = null;
        this.inHistory = false;
        void this.restore();
      } else if (this.sheets.length) {
        // same pixels, new calibration: the px values stand; they are expressed anew and kept with it
        void this.save();
      }
    }
    if (changed.has('db')) void this.loadXrdSets();
  }

  protected override updated(changed: Map<string, unknown>): void {
    if (changed.has('sheets') || changed.has('selectedId') || changed.has('lineResult')) this.pushOverlay();
  }

  private emit(type: string, detail: unknown): void {
    this.dispatchEvent(new CustomEvent(type, { detail, bubbles: true, composed: true }));
  }

  private say(text: string, kind: 'info' | 'error' = 'info'): void {
    this.emit('status-message', { text, kind });
  }

  /** The period the user typed, in px; null when empty. Throws with a plain message when unusable. */
  private typedPeriodPx(): number | null {
    const t = this.periodText.trim();
    if (!t) return null;
    const v = Number(t);
    if (!(v > 0 && Number.isFinite(v))) throw new Error(`the period must be a positive number, got '${t}'`);
    const cal = this.image?.calibration ?? null;
    const px = cal ? v / nmPerPxAlong(cal, 'ring', 0) : v;
    if (px < 2) throw new Error(`a period of ${t} ${cal ? 'nm' : 'px'} is ${px.toFixed(2)} px: below the sampling limit of 2 px (Nyquist), no layer of it can be seen in this image`);
    if (px < MIN_COUNTABLE_PERIOD_PX) throw new Error(`a period of ${t} ${cal ? 'nm' : 'px'} is ${px.toFixed(2)} px: below ${MIN_COUNTABLE_PERIOD_PX} px, where layers can no longer be counted reliably`);
    return px;
  }

  private async restore(): Promise<void> {
    const db = this.db;
    const rec = this.record;
    const image = this.image;
    if (!db || !rec || !image) return;
    try {
      const kept = (await listMeasurements(db, rec.id)).filter((m) => m.tool === 'sheets-auto' || m.tool === 'sheets-line');
      const last = kept[kept.length - 1];
      if (!last || this.image !== image) return;
      this.sheets = sheetsOfMeasurement(last);
      this.periods = ((last.detail as Partial<SheetsDetail> | undefined)?.periods ?? []) as ImagePeriod[];
      this.recordId = last.id;
      this.savedAt = last.createdIso;
      this.nextLineId = 1 + this.sheets.filter((s) => s.source === 'line').length;
      if (this.sheets.length) this.say(`${this.sheets.length} sheet${this.sheets.length === 1 ? '' : 's'} restored from the library`);
    } catch (e) {
      this.say(`the sheets kept for this image could not be read: ${(e as Error).message}`, 'error');
    }
  }

  private async loadXrdSets(): Promise<void> {
    if (!this.db) return;
    try {
      this.xrdSets = await listDiffractionSets(this.db);
    } catch {
      this.xrdSets = [];
    }
  }

  /** Keeps the review in the library: one record per image, replaced on every change. */
  private async save(): Promise<void> {
    const db = this.db;
    const rec = this.record;
    const image = this.image;
    if (!image) return;
    if (!db || !rec) {
      this.savedAt = null;
      return;
    }
    const id = this.recordId ?? globalThis.crypto.randomUUID();
    this.recordId = id;
    const tool = this.sheets.some((s) => s.source === 'auto') || this.periods.length ? 'sheets-auto' : 'sheets-line';
    const m = sheetsMeasurement(
      this.sheets,
      { id, imageId: rec.id, fileName: rec.fileName, calibration: image.calibration, settings: { polarity: this.bright ? 'bright' : 'dark', periodTyped: this.periodText || null } },
      { tool, periods: this.periods, message: this.message },
    );
    try {
      await putMeasurement(db, m);
      this.savedAt = m.createdIso;
      this.emit('library-changed', null);
    } catch (e) {
      this.say(`not saved: ${(e as Error).message}`, 'error');
    }
  }

  private pushOverlay(): void {
    const tone = (s: SheetReport): 'accent' | 'info' | 'warn' => (s.status === 'rejected' ? 'warn' : s.status === 'auto' ? 'info' : 'accent');
    const shapes: OverlayShape[] = this.sheets.map((s): OverlayShape => {
      const label = `${s.layers}${s.status === 'corrected' ? '*' : ''}`;
      if (s.outlinePx.length > 2) return { kind: 'polygon', points: s.outlinePx, id: s.id, label, tone: tone(s), selected: s.id === this.selectedId };
      const [a, b] = s.outlinePx;
      return { kind: 'line', x0: a[0], y0: a[1], x1: b[0], y1: b[1], widthPx: 1, label, tone: tone(s) };
    });
    this.emit('overlay-shapes', { shapes });
  }

  private select(id: string | null): void {
    this.selectedId = this.selectedId === id ? null : id;
    if (this.selectedId) {
      void this.updateComplete.then(() => this.renderRoot.querySelector(`tr[data-id="${this.selectedId}"]`)?.scrollIntoView({ block: 'nearest' }));
    }
  }

  /**
   * The typed period (px, or null) and the worker session a search or a line needs; null, with
   * the reason said, when the period is not valid or the worker is not ready.
   */
  private readyToCompute(): { periodPx: number | null; session: string; compute: ComputeClient } | null {
    let periodPx: number | null;
    try {
      periodPx = this.typedPeriodPx();
    } catch (e) {
      this.say((e as Error).message, 'error');
      return null;
    }
    if (!this.compute || !this.session) {
      this.say('the compute worker is not available', 'error');
      return null;
    }
    return { periodPx, session: this.session, compute: this.compute };
  }

  private async findSheets(): Promise<void> {
    const img = this.image;
    if (!img || this.busy) return;
    const ready = this.readyToCompute();
    if (!ready) return;
    const { periodPx, session, compute } = ready;
    this.busy = true;
    this.say('finding stacks…');
    try {
      const { result, excludedBox } = await compute.call('sheetsFind', { sessionId: session, polarity: this.bright ? 'bright' : 'dark', periodPx: periodPx ?? undefined });
      if (this.image !== img) return;
      const kept = this.sheets.filter((s) => s.source !== 'auto');
      this.sheets = [...kept, ...result.sheets.map(sheetFromAuto)];
      this.periods = result.periods;
      this.message = result.message;
      this.selectedId = null;
      const n = result.sheets.length;
      this.say(n ? `${n} stack${n === 1 ? '' : 's'} found${excludedBox ? ' (scale-bar panel skipped)' : ''}: click one to review it` : 'no stacks found in this image');
      // the sheets are drawn first; the undo step and the library's copy (each a clone of every
      // sheet on this thread) follow in tasks of their own
      await this.updateComplete;
      await nextTask();
      if (this.image !== img) return;
      this.step(`${n} stack${n === 1 ? '' : 's'} found`);
      await nextTask();
      await this.save();
    } catch (e) {
      this.say((e as Error).message, 'error');
    } finally {
      this.busy = false;
    }
  }

  private async measureLine(): Promise<void> {
    const img = this.image;
    const l = this.line;
    if (!img || !l || this.busy) return;
    const ready = this.readyToCompute();
    if (!ready) return;
    const { periodPx, session, compute } = ready;
    this.busy = true;
    try {
      const r = await compute.call('sheetsLine', {
        sessionId: session,
        line: { x0: l.x0, y0: l.y0, x1: l.x1, y1: l.y1, widthPx: Math.max(1, l.widthPx || 9) },
        polarity: this.bright ? 'bright' : 'dark',
        periodPx: periodPx ?? undefined,
        periods: periodPx === null ? this.periods.map((p) => p.periodPx) : undefined,
      });
      if (this.image !== img) return;
      this.lineResult = r;
      const n = r.sheets.length;
      this.say(n ? `${n} sheet${n > 1 ? 's' : ''} along the line` : (r.message ?? 'no sheet along the line'));
    } catch (e) {
      this.lineResult = null;
      this.say((e as Error).message, 'error');
    } finally {
      this.busy = false;
    }
  }

  /** The review's state for the undo history (plain JSON: the sheets, the image's periods, the line counter). */
  workState(): SheetsState {
    return JSON.parse(JSON.stringify({ sheets: this.sheets, periods: this.periods, nextLineId: this.nextLineId })) as SheetsState;
  }

  /** Records a step of the image's undo history (the shell keeps it with the image in the library). */
  private step(label: string): void {
    if (this.restoring > 0) return;
    this.inHistory = true;
    this.emit('history-step', { label, state: this.workState() });
  }

  /**
   * Shows a review from the undo history again and keeps it in the library. Null (no sheets step
   * before this point) clears the review once it is in the history; before that, the review
   * restored from the library stands.
   */
  async restoreState(state: unknown): Promise<void> {
    await this.updateComplete;
    const st = state as SheetsState | null;
    if (!st && !this.inHistory) return;
    this.restoring++;
    try {
      this.inHistory = true;
      this.sheets = st?.sheets ?? [];
      this.periods = st?.periods ?? [];
      this.nextLineId = st?.nextLineId ?? 1;
      if (this.selectedId && !this.sheets.some((q) => q.id === this.selectedId)) this.selectedId = null;
      this.lineResult = null;
      this.comparison = null;
      await this.save();
    } finally {
      this.restoring--;
    }
  }

  /** "sheet 3" as the table numbers it. */
  private sheetName(id: string): string {
    return `sheet ${this.sheets.findIndex((q) => q.id === id) + 1}`;
  }

  private addLineSheets(): void {
    const r = this.lineResult;
    if (!r) return;
    this.sheets = [...this.sheets, ...r.sheets.map((s) => sheetFromLine(s, `line-${this.nextLineId++}`))];
    this.lineResult = null;
    this.step(r.sheets.length === 1 ? 'a sheet added along a line' : `${r.sheets.length} sheets added along a line`);
    void this.save();
  }

  private setStatus(id: string, status: 'accepted' | 'rejected'): void {
    const was = this.sheets.find((q) => q.id === id)?.status;
    this.sheets = this.sheets.map((s) => {
      if (s.id !== id) return s;
      const back = s.correction ? 'corrected' : s.source === 'auto' ? 'auto' : 'manual';
      return { ...s, status: s.status === status ? back : status };
    });
    this.step(`${this.sheetName(id)} ${was === status ? `no longer ${status}` : status}`);
    void this.save();
  }

  private correct(id: string, text: string): void {
    const n = Number(text);
    const s = this.sheets.find((q) => q.id === id);
    if (!s) return;
    if (!(Number.isInteger(n) && n >= 1 && n <= 500)) {
      this.say(`a layer count is a whole number from 1 to 500, got '${text}'`, 'error');
      return;
    }
    if (n === s.layers) return;
    this.sheets = this.sheets.map((q) => (q.id === id ? correctSheet(q, n, new Date().toISOString()) : q));
    this.step(`${this.sheetName(id)} count ${s.layers} → ${n}`);
    void this.save();
  }

  private resetCount(id: string): void {
    this.sheets = this.sheets.map((q) => {
      if (q.id !== id || !q.correction) return q;
      const back = correctSheet(q, q.correction.originalLayers, new Date().toISOString());
      return { ...back, status: q.source === 'auto' ? 'auto' : 'manual', correction: null };
    });
    this.step(`${this.sheetName(id)} automatic count back`);
    void this.save();
  }

  private async compareXrd(): Promise<void> {
    const set = this.xrdSets.find((s) => s.id === this.xrdSetId);
    const image = this.image;
    if (!set || !image) return;
    this.comparison = null;
    this.comparisonNote = null;
    const cal = image.calibration;
    if (!cal) {
      this.comparisonNote = 'the comparison needs a calibrated image (nm): calibrate it in the Calibration tab';
      return;
    }
    const kept = this.kept();
    if (kept.length < 2) {
      this.comparisonNote = 'the comparison needs at least two sheets';
      return;
    }
    const ex = kept.map((s) => ({ s, e: expressSheet(s, cal) }));
    const periodNm = ex.reduce((a, q) => a + q.e.period.value, 0) / ex.length;
    let lines: XrdLine[] = [];
    let source = set.name;
    try {
      if (set.patternText && this.compute) {
        // the pattern again, for the sizes' uncertainties (the stored lines keep the sizes only)
        const { analysis } = await this.compute.call('analysePattern', { text: set.patternText, wavelength: `${set.wavelengthNm}nm`, fileName: set.name });
        lines = sizedLines(analysis);
        source = set.name;
      } else {
        const res = set.results as unknown as StoredSetResults | null;
        lines = (res?.lines ?? []).map((l) => ({ dNm: l.dNm, crystalliteNm: l.crystalliteNm ?? null, crystalliteUncNm: null, label: l.label }));
      }
    } catch (e) {
      this.comparisonNote = `the pattern could not be read: ${(e as Error).message}`;
      return;
    }
    const line = basalLine(lines, periodNm);
    if (!line) {
      this.comparisonNote = `no reflection with a Scherrer size near the sheets' period (${periodNm.toFixed(3)} nm) in '${set.name}'`;
      return;
    }
    this.comparison = compareWithScherrer(
      ex.map(({ s, e }) => ({ thicknessNm: e.thickness.value, layers: s.layers, lengthWeight: e.length?.value ?? 1 })),
      { sizeNm: line.crystalliteNm!, uSizeNm: line.crystalliteUncNm ?? null, dNm: line.dNm, source: `${source}, ${line.label ?? 'a stored line'}, d = ${line.dNm.toFixed(4)} nm${line.method ? `; ${line.method}` : ''}` },
    );
  }

  private kept(): SheetReport[] {
    return this.sheets.filter((s) => s.status !== 'rejected' && (!this.acceptedOnly || s.status !== 'auto'));
  }

  /** The sheets for the export menu: one row each, units in the header (nm when calibrated, else px). */
  private sheetsTable(): ExportTable {
    const cal = this.image?.calibration ?? null;
    const u = cal ? 'Nm' : 'Px';
    const header = ['id', 'source', 'status', 'layers', 'automaticLayers', 'correctedBy', `thickness${u}`, `thicknessExpanded${u}`, 'thicknessContains',
      `edgeToEdge${u}`, `period${u}`, `periodExpanded${u}`, 'periodSource', `length${u}`, 'agreement', 'angleDeg', 'centreXPx', 'centreYPx', 'coverageFactorK'];
    const expressed = this.sheets.map((s) => ({ s, e: expressSheet(s, cal) }));
    const rows = expressed.map(({ s, e }) => [
      s.id, s.source, s.status, s.layers, s.correction?.originalLayers ?? null, s.correction?.by ?? null,
      e.thickness.value, e.thickness.expanded, budgetContents(e.thickness), e.edgeToEdge.value,
      e.period.value, e.period.expanded, s.periodSource, e.length ? e.length.value : null,
      s.confidence, s.angleDeg, s.centerPx[0], s.centerPx[1], e.thickness.k,
    ]);
    return {
      noun: 'sheet', name: 'sheets', header, rows,
      notes: [`thickness: ${THICKNESS_CONVENTION}`, "edgeToEdge: where the band's darkening falls to half; edgeToEdge, length and angleDeg: no uncertainty stated", `lengths in ${cal ? 'nm' : 'px (no calibration)'}; expanded uncertainties with the coverage factor k of each row`],
      json: { thicknessConvention: THICKNESS_CONVENTION, unit: cal ? 'nm' : 'px', calibration: cal, sheets: expressed.map(({ s, e }) => ({ ...s, expressed: e })) },
    };
  }

  /** The thickness histogram as an SVG figure for the export menu; null below 3 kept sheets. */
  private sheetsFigure(): ExportFigure | null {
    const cal = this.image?.calibration ?? null;
    const thick = this.kept().map((s) => expressSheet(s, cal).thickness.value);
    if (thick.length < MIN_VALUES_FOR_STATISTICS) return null;
    return { name: 'sheet-thickness', svg: () => histogramSvg(thick, { xLabel: `sheet thickness n·d (${cal ? 'nm' : 'px'})`, title: `Sheet thickness, ${thick.length} sheets` }) };
  }

  private renderProfile() {
    const r = this.lineResult;
    if (!r) return nothing;
    const x = Array.from(r.profile.values, (_, i) => r.profile.startPx + i * r.profile.binPx);
    const y = Array.from(r.profile.values, (v) => (Number.isFinite(v) ? v : 0));
    const at = (p: number) => y[Math.max(0, Math.min(y.length - 1, Math.round((p - r.profile.startPx) / r.profile.binPx)))];
    const points = r.sheets.flatMap((s) => s.layerPositionsPx.map((p) => ({ x: p, y: at(p), kind: (this.bright ? 'max' : 'min') as 'max' | 'min' })));
    const rules = r.sheets.flatMap((s, i) => [
      { x: s.centerPx - s.thicknessPx / 2, label: `${i + 1}: ${s.layers}` },
      { x: s.centerPx + s.thicknessPx / 2, label: '' },
    ]);
    const cal = this.image?.calibration ?? null;
    return html`
      <strata-plot height-px="220" file-stem="sheets-line" .data=${{
        id: 'sheets-line-profile', title: 'Profile across the sheets', xLabel: 'distance along the line (px)', yLabel: 'grey value', x,
        traces: [{ label: 'grey value', y, style: 'data' }], marks: points, rules,
        description: 'Profile along the line with the layers found and the n·d extent of each sheet.',
      } satisfies PlotData}></strata-plot>
      <p class="muted">Period ${r.periodPx === null ? '—' : `${r.periodPx.toFixed(3)} px`} (${r.periodSource === null ? 'none' : r.periodSource === 'given' ? 'given' : `from the ${r.periodSource}, no ±: each sheet's own period and its ± are in the table`}).</p>
      ${r.sheets.length
        ? html`<table>
            <tr><th>#</th><th>layers</th><th>n·d (${cal ? 'nm' : 'px'})</th><th>period</th></tr>
            ${r.sheets.map((s, i) => {
              const e = expressSheet({ ...s, lengthPx: null }, cal);
              return html`<tr><td>${i + 1}${s.truncated ? ' (at end)' : ''}</td><td>${s.layers}</td><td>${fmt(e.thickness)}</td><td>${fmt(e.period)}</td></tr>`;
            })}
          </table>
          <div class="row"><button @click=${() => this.addLineSheets()}>Add to the sheets</button></div>`
        : html`<p class="muted">${r.message ?? 'no sheet on this line'}</p>`}
    `;
  }

  private renderHistogram(values: number[], title: string, integer: boolean) {
    if (values.length === 0) return nothing;
    const h = histogram(values, integer ? { integer: true, binWidth: 1 } : {});
    const w = this.wide ? 280 : 150;
    const ht = this.wide ? 120 : 70;
    const maxC = Math.max(...h.counts);
    const bw = w / h.counts.length;
    const lo = h.edges[0];
    const hi = h.edges[h.edges.length - 1];
    return html`<figure>
      <svg class="hist" width=${w} height=${ht + 26} role="img" aria-label=${`${title} histogram of ${values.length} sheets`}>
        ${Array.from(h.counts, (c, i) => svg`<rect class="bar" x=${i * bw + 0.5} y=${ht - (ht * c) / maxC} width=${Math.max(1, bw - 1)} height=${(ht * c) / maxC}></rect>`)}
        <line x1="0" x2=${w} y1=${ht} y2=${ht}></line>
        <text x="0" y=${ht + 11}>${integer ? lo + 0.5 : lo.toFixed(2)}</text>
        <text x=${w} y=${ht + 11} text-anchor="end">${integer ? hi - 0.5 : hi.toFixed(2)}</text>
        <text x=${w / 2} y=${ht + 24} text-anchor="middle">${title}, n = ${values.length}</text>
      </svg>
    </figure>`;
  }

  private renderStats(columns: { label: string; s: Summary | null; d: number }[]) {
    const cols = columns.filter((c) => c.s) as { label: string; s: Summary; d: number }[];
    const f = (v: number, d: number) => (Number.isFinite(v) ? v.toFixed(d) : '—');
    const row = (name: string, cell: (s: Summary, d: number) => string) => html`<tr><th scope="row">${name}</th>${cols.map((c) => html`<td>${cell(c.s, c.d)}</td>`)}</tr>`;
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

  private renderDetail(s: SheetReport) {
    const e = expressSheet(s, this.image?.calibration ?? null);
    const unit = e.thickness.unit;
    return html`<div class="detail" aria-label="Selected sheet">
      <div class="row">
        <strong>${s.id}</strong>
        <label>layers <input class="count" type="number" min="1" step="1" .value=${String(s.layers)} @change=${(ev: Event) => this.correct(s.id, (ev.target as HTMLInputElement).value)} aria-label="Layer count"></label>
        <button aria-pressed=${s.status === 'accepted'} @click=${() => this.setStatus(s.id, 'accepted')}>Accept</button>
        <button aria-pressed=${s.status === 'rejected'} @click=${() => this.setStatus(s.id, 'rejected')}>Reject</button>
        ${s.correction ? html`<button @click=${() => this.resetCount(s.id)}>Back to ${s.correction.originalLayers}</button>` : nothing}
      </div>
      <dl>
        <dt>thickness n·d</dt><dd>${fmt(e.thickness)} ${unit} (k = ${e.thickness.k}; ${budgetContents(e.thickness)})</dd>
        <dt>edge to edge</dt><dd>${e.edgeToEdge.value.toPrecision(4)} ${unit} (where the band's darkening falls to half; no ± stated)</dd>
        <dt>period</dt><dd>${fmt(e.period)} ${unit} (${s.periodSource}; ${budgetContents(e.period)})</dd>
        ${e.length ? html`<dt>length</dt><dd>${e.length.value.toFixed(1)} ${unit} (along its axis; no ± stated)</dd>` : nothing}
        ${s.confidence !== null ? html`<dt>agreement</dt><dd>${Math.round(100 * s.confidence)} % of the positions along it gave ${s.layers}${s.correction ? ` (before the correction: ${s.correction.originalLayers})` : ''}</dd>` : nothing}
        <dt>normal</dt><dd>${s.angleDeg.toFixed(1)}°, centre ${s.centerPx[0].toFixed(0)}, ${s.centerPx[1].toFixed(0)} px (no ± stated)</dd>
        ${s.correction ? html`<dt>count</dt><dd>corrected by the user from ${s.correction.originalLayers} (automatic)</dd>` : nothing}
      </dl>
      ${s.notes.map((n) => html`<p class="muted">${n}</p>`)}
    </div>`;
  }

  private renderComparison() {
    if (!this.db) return nothing;
    return html`<section class="o7">
      <h3>Against the basal X-ray reflection (Scherrer)</h3>
      ${this.xrdSets.length
        ? html`<div class="row">
            <label>diffraction set <select .value=${this.xrdSetId} @change=${(e: Event) => (this.xrdSetId = (e.target as HTMLSelectElement).value)}>
              <option value="">choose…</option>
              ${this.xrdSets.map((s) => html`<option value=${s.id} ?selected=${s.id === this.xrdSetId}>${s.name}</option>`)}
            </select></label>
            <button ?disabled=${!this.xrdSetId} @click=${() => void this.compareXrd()}>Compare</button>
          </div>`
        : html`<p class="muted">Keep a powder pattern in the library (Diffraction tab, Save set) to compare the stacks' thickness with its basal reflection's Scherrer size.</p>`}
      ${this.comparison ? html`<p>${this.comparison.statement}</p>
        <p class="muted">Scherrer sizes are volume-weighted column lengths and ignore strain; the micrographs' thicknesses are weighted alike (t² × length). Results inform research; they do not replace an accredited calibration.</p>` : nothing}
      ${this.comparisonNote ? html`<p class="muted">${this.comparisonNote}</p>` : nothing}
    </section>`;
  }

  override render() {
    if (!this.image) return html`<p class="muted">Open an image to count layers.</p>`;
    const cal = this.image.calibration;
    const kept = this.kept();
    const stats = sheetStatistics(kept.map((sheet) => ({ sheet, calibration: cal })));
    const unit = stats.unit;
    const selected = this.sheets.find((s) => s.id === this.selectedId) ?? null;
    const thick = kept.map((s) => expressSheet(s, cal).thickness.value);
    return html`<div class="side">
      <section class="o1">
        <h3>Layer period</h3>
        <div class="row">
          <label>period <input class="period" type="number" min="0" step="any" placeholder="found" .value=${this.periodText}
            @change=${(e: Event) => (this.periodText = (e.target as HTMLInputElement).value)} aria-label=${`Layer period in ${cal ? 'nm' : 'px'}`}> ${cal ? 'nm' : 'px'}</label>
          <label><input type="checkbox" .checked=${this.bright} @change=${(e: Event) => (this.bright = (e.target as HTMLInputElement).checked)}> bright layers</label>
        </div>
        <p class="muted">Leave empty to find the period in the image; type it when known (e.g. from the basal X-ray reflection).
          ${this.periods.length ? html`Found: ${this.periods.map((p) => `${(cal ? p.periodPx * nmPerPxAlong(cal, 'ring', 0) : p.periodPx).toFixed(3)} ${cal ? 'nm' : 'px'}`).join(', ')} (where the search found layers, no ±; each sheet's own period carries its ±).` : nothing}</p>
      </section>
      <section class="o2">
        <h3>Stacks in the image</h3>
        <div class="row"><button ?disabled=${this.busy} @click=${() => void this.findSheets()}>${this.busy ? 'Working…' : 'Find sheets in the image'}</button></div>
        <p class="muted">Outlines are drawn on the image with their layer counts; click one (pan tool) to review it.</p>
      </section>
      <section class="o3">
        <h3>Along a drawn line</h3>
        <p class="muted">Draw a line across a stack, along the layer normal, from background to background, to add a sheet the search missed.</p>
        <div class="row"><button ?disabled=${!this.line || this.busy} @click=${() => void this.measureLine()}>Measure the line</button></div>
      </section>
      <section class="o5">
        <h3>Sheets (${this.sheets.length})</h3>
        ${this.sheets.length
          ? html`${selected ? this.renderDetail(selected) : nothing}
            <table>
              <tr><th>#</th><th>layers</th><th>n·d (${unit})</th><th>agree</th><th></th></tr>
              ${this.sheets.map((s, i) => {
                const e = expressSheet(s, cal);
                return html`<tr class="${s.status}${s.id === this.selectedId ? ' selected' : ''}" data-id=${s.id} @click=${() => this.select(s.id)}>
                  <td>${i + 1} ${s.source}</td><td>${s.layers}${s.correction ? html`<span title=${`automatic: ${s.correction.originalLayers}`}>*</span>` : nothing}</td>
                  <td>${fmt(e.thickness)}</td><td>${s.confidence === null ? '—' : `${Math.round(100 * s.confidence)} %`}</td>
                  <td><button title="Accept" aria-label=${`Accept sheet ${i + 1}`} aria-pressed=${s.status === 'accepted'} @click=${(ev: Event) => { ev.stopPropagation(); this.setStatus(s.id, 'accepted'); }}>✓</button>
                      <button title="Reject" aria-label=${`Reject sheet ${i + 1}`} aria-pressed=${s.status === 'rejected'} @click=${(ev: Event) => { ev.stopPropagation(); this.setStatus(s.id, 'rejected'); }}>✗</button></td>
                </tr>`;
              })}
            </table>
            <p class="muted">± is the expanded uncertainty (k = 2) of the thickness n·d (layers × period): the period's uncertainty (its fit on the stack, its phase's spread, or the image's reading, 3 %), the spread along the stack, and the calibration. * a count corrected by you (the automatic one is kept).</p>
            <div class="row">
              <label><input type="checkbox" .checked=${this.acceptedOnly} @change=${(e: Event) => (this.acceptedOnly = (e.target as HTMLInputElement).checked)}> count accepted only</label>
            </div>
            <strata-export-menu .table=${this.sheetsTable()} .figure=${this.sheetsFigure()} .report=${false}
              .fileName=${this.record?.fileName ?? ''}></strata-export-menu>
            <p class="muted">${this.db && this.record ? (this.savedAt ? `Kept in the library (${new Date(this.savedAt).toLocaleTimeString()}).` : 'Not yet kept in the library.') : 'Not kept: the image is not in the library.'}</p>`
          : html`<p class="muted">${this.message ?? 'none yet'}</p>`}
      </section>
      ${this.renderComparison()}
      </div>
      <div class="stage">
      ${!this.lineResult && !stats.n ? html`<p class="muted placeholder">The profile across a measured line and the distributions of the sheets found appear here.</p>` : nothing}
      ${this.lineResult ? html`<section class="o4">${this.renderProfile()}</section>` : nothing}
      ${stats.n
        ? html`<section class="o6">
            <h3>Distribution (n = ${stats.n})</h3>
            ${stats.n < MIN_FOR_HISTOGRAM
              ? html`<table>
                  <tr><th>#</th><th>layers</th><th>n·d (${unit})</th></tr>
                  ${kept.map((s, i) => html`<tr><td>${i + 1}</td><td>${s.layers}</td><td>${thick[i].toFixed(2)}</td></tr>`)}
                </table>
                <p class="muted">Fewer than ${MIN_FOR_HISTOGRAM} sheets: listed rather than binned.</p>`
              : html`${this.renderStats([
                  { label: `n·d (${unit})`, s: stats.thickness, d: 2 },
                  { label: 'layers', s: stats.layers, d: 1 },
                ])}
                <div class="hists">
                  ${this.renderHistogram(stats.layerCounts.flatMap(([n, m]) => Array(m).fill(n) as number[]), 'layers', true)}
                  ${this.renderHistogram(thick, `n·d (${unit})`, false)}
                </div>
                <p class="muted">Quartiles: Hyndman & Fan type 7. CI: Student t. Thickness bins: Freedman–Diaconis.</p>`}
          </section>`
        : nothing}
      </div>
    `;
  }
}

customElements.define('strata-sheets-panel', StrataSheetsPanel);
