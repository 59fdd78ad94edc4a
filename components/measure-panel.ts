import { LitElement, css, html, nothing, svg, type PropertyValues } from 'lit';
import { classMap } from 'lit/directives/class-map.js';
import { CALIBRATION_SOURCE_WORDS, type GreyImage } from '../src/image/grey-image';
import type { Picture } from '../src/image/display';
import { spectrumPicture } from '../src/figure/spectrum-picture';
import { budgetContents, expressPeriod, formatPlusMinus, nmPerPxAlong, withIdentity, type Measurement, type Periodicity, type UncertaintyBudget } from '../src/measure/measurement';
import { calibrationPartsText } from '../src/calibration/calibration';
import { angleBetweenDeg, ringPeriodicity, type Spot } from '../src/measure/spectrum';
import { spotPeriodicity } from '../src/measure/spot-near';
import { withTableSpots } from '../src/measure/session';
import { toolOf } from '../src/measure/tools';
import { periodBudgetLabel, withBudgetLabels } from '../src/figure/budget-labels';
import type { WindowKind } from '../src/measure/window';
import { putMeasurement } from '../src/store/library';
import type { ImageRecord } from '../src/store/records';
import type { LibraryDb } from '../src/store/schema';
import type { ComputeClient } from './compute-client';
import type { FilterView, ProfileEstimator, ProfileView, SpectrumSettings, SpectrumView } from './compute-protocol';
import { profilePlot, radialPlot } from '../src/figure/period-plots';
import { placeLabels, textWidthEstimate, type Box } from '../src/figure/labels';
import './plot';
import './export-menu';
import type { PlotData } from '../src/figure/plot';
import { controlStyles } from './styles';
import type { LineDrawnDetail, OverlayShape, RectDrawnDetail, StrataViewer } from './viewer';

/** The tab's label. */
export const panelLabel = 'Periods';
/** The panel lays its figures out in the main area beside the image (the shell gives it the room). */
export const panelWide = true;

/** Side of the spectrum picture on screen when the panel is narrow, CSS px. */
const SPECTRUM_CSS_PX = 320;
/** Longest side of pictures computed in the worker, px. */
const PICTURE_PX = 1024;

/** A spot in the table: found by the search or added by a click. */
interface TableSpot extends Spot {
  /** Number shown in the table and on the spectrum (stable while the spot exists). */
  n: number;
  added: boolean;
  /** True while its full budget is being computed (its ± holds the statistical part only). */
  budgeting?: boolean;
}

/** What the panel keeps in the image's undo history: the line, the region, the spot table and the settings. */
interface PeriodsState {
  line: LineDrawnDetail | null;
  rect: RectDrawnDetail | null;
  spots: TableSpot[];
  selected: number[];
  windowKind: WindowKind;
  alpha: number;
  estimator: ProfileEstimator;
  coverageK: number;
}

const WINDOW_HELP: Record<WindowKind, string> = {
  hann: 'Hann window: strong taper, low leakage from the region edges; the default for finding spots.',
  tukey: 'Tukey window (half the region tapered): narrower spots than Hann, a little more edge leakage.',
  none: 'No window: sharpest spots, but the region edges leak as streaks through the centre of the power spectrum.',
};

const ESTIMATORS: [ProfileEstimator, string][] = [
  ['hann', 'Hann · Grandke'],
  ['candan', 'no window · Candan'],
  ['jacobsen', 'no window · Jacobsen'],
  ['quinn', 'no window · Quinn'],
  ['macleod', 'no window · Macleod'],
];

const ALPHAS = [0.05, 0.01, 0.001, 1e-4, 1e-6];

/**
 * `<strata-measure-panel>`: periods of lattice fringes and lamellae, from a line profile and from
 * the 2D power spectrum of a region.
 *
 * Properties (given by the app shell): `image`, `record`, `db`, `compute`, `session` (the id of
 * the image's session in the compute worker), `viewer`, `line`, `rect`.
 * Events: `status-message` {text, kind}, `overlay-shapes` {shapes}, `library-changed`.
 * Heavy work (profile periods, spectrum, spot refinement, Fourier filter) runs in the compute
 * worker on the image it holds: requests carry the session id and the line or region, never
 * pixels. A region's spectrum stays cached there, so clicking a spot runs no transform; a new
 * calibration re-expresses the numbers shown and measures nothing again.
 */
export class StrataMeasurePanel extends LitElement {
  static override properties = {
    image: { attribute: false },
    record: { attribute: false },
    db: { attribute: false },
    compute: { attribute: false },
    session: { attribute: false },
    viewer: { attribute: false },
    line: { attribute: false },
    rect: { attribute: false },
    windowKind: { state: true },
    alpha: { state: true },
    estimator: { state: true },
    widthPx: { state: true },
    profile: { state: true },
    profileLine: { state: true },
    profileBusy: { state: true },
    profileError: { state: true },
    spectrum: { state: true },
    spectrumRect: { state: true },
    spots: { state: true },
    selected: { state: true },
    spectrumBusy: { state: true },
    spectrumError: { state: true },
    filtered: { state: true },
    showFiltered: { state: true },
    filterOverImage: { state: true },
    filterBusy: { state: true },
    crosshair: { state: true },
    savedProfile: { state: true },
    savedSpectrum: { state: true },
    activeTool: { state: true },
    zoom: { state: true },
    coverageK: { state: true },
    wide: { type: Boolean, reflect: true },
    stageWidthPx: { state: true },
    stageHeightPx: { state: true },
    lastDrawn: { state: true },
    typedOpen: { state: true },
  };

  image: GreyImage | null = null;
  record: ImageRecord | null = null;
  db: LibraryDb | null = null;
  compute: ComputeClient | null = null;
  /** The id of the image's session in the compute worker (null until the image is open there). */
  session: string | null = null;
  viewer: StrataViewer | null = null;
  line: LineDrawnDetail | null = null;
  rect: RectDrawnDetail | null = null;

  windowKind: WindowKind = 'hann';
  alpha = 0.001;
  estimator: ProfileEstimator = 'hann';
  widthPx = 5;
  profile: ProfileView | null = null;
  profileLine: LineDrawnDetail | null = null;
  profileBusy = false;
  profileError = '';
  spectrum: (SpectrumView & { pictureId?: number }) | null = null;
  /** The spectrum's display picture at a zoom, made in the compute worker (drawn in one step). */
  private spectrumBitmap: { pictureId: number; zoom: number; bitmap: ImageBitmap } | null = null;
  /** False once the worker could not make a spectrum picture: the panel then makes it itself. */
  private workerSpectrumPictures = true;
  spectrumRect: RectDrawnDetail | null = null;
  spots: TableSpot[] = [];
  selected: number[] = [];
  spectrumBusy = false;
  spectrumError = '';
  filtered: FilterView | null = null;
  showFiltered = true;
  /** Whether the Fourier-filtered region is laid over the micrograph in the viewer. */
  filterOverImage = false;
  filterBusy = false;
  crosshair: { u: number; v: number } | null = null;
  savedProfile = '';
  savedSpectrum = '';
  activeTool: 'pan' | 'line' | 'rect' = 'pan';
  /** Magnification of the spectrum picture about zero frequency. */
  zoom = 1;
  /** Coverage factor k of every ± shown (U = k·u). */
  coverageK = 2;
  /** Set by the shell when the panel has the main area beside the image: figures left, controls right. */
  wide = false;
  /** Inner size of the figures column, CSS px (measured). */
  stageWidthPx = 330;
  stageHeightPx = 400;
  private stageObserver: ResizeObserver | null = null;
  /** Whether the fields for a typed region or line are shown (only then are they in the page). */
  typedOpen = false;
  /** The tool used last: its results and figure come first. */
  lastDrawn: 'profile' | 'spectrum' = 'spectrum';
  /**
   * The spectrum whose radial-average plot and export row are in the page. A new spectrum's
   * numbers and picture are drawn first; these follow one frame later, in a task of their own, so
   * that no single task builds them all.
   */
  private secondaryFor: SpectrumView | null = null;
  private secondaryPending = false;

  private profileRun = 0;
  private spectrumRun = 0;
  private nextSpot = 1;
  private lastData: GreyImage['data'] | null = null;
  /**
   * Set at a click on the spectrum: the next render that shows the new spot (then its full budget)
   * marks the time since the click on the performance timeline ([mark, measure] names).
   */
  private timelineMark: [string, string] | null = null;

  static override styles = [
    controlStyles,
    css`
      :host { display: block; padding: 8px 12px 24px; font-size: 13px; overflow-x: hidden; }
      /* wide: figures in the main area (left), controls and key numbers in the side column (right) */
      :host([wide]) { display: grid; grid-template-columns: minmax(0, 1fr) 340px; grid-template-rows: minmax(0, 1fr); grid-template-areas: 'stage side';
        padding: 0; flex: 1 1 auto; min-height: 0; overflow: hidden; }
      :host([wide]) .side { grid-area: side; overflow-y: auto; padding: 4px 8px 24px 10px; min-height: 0; border-left: 1px solid var(--line); }
      :host([wide]) .stage { grid-area: stage; overflow-y: auto; min-height: 0; padding: 8px 8px 16px; background: var(--bg, #0f1419); }
      /* each column's size comes from the grid, never from its content: a change inside one lays out only that column */
      :host([wide]) .side, :host([wide]) .stage { contain: strict; }
      .stage { display: flex; flex-direction: column; gap: 14px; }
      /* the last tool's figure and numbers come first: no scroll anchoring, and both columns start at the top */
      .stage, .side { overflow-anchor: none; }
      .stage h3 { margin: 0 0 4px; color: var(--text); font-size: 13px; }
      .stage-empty { color: var(--muted); max-width: 36em; padding: 24px 8px; line-height: 1.5; }
      .stage-empty p { margin: 0 0 10px; }
      .figure-block { min-width: 0; }
      h2 { font-size: 13px; font-weight: 600; margin: 16px 0 6px; letter-spacing: 0.02em; }
      h3 { font-size: 12px; font-weight: 600; margin: 12px 0 4px; color: var(--muted); }
      p { margin: 6px 0; line-height: 1.45; }
      .row { display: flex; flex-wrap: wrap; align-items: center; gap: 6px; margin: 6px 0; }
      .cal { padding: 6px 8px; border: 1px solid var(--line); border-radius: 3px; background: #161d24; }
      .cal.none { border-color: #6b5a34; background: #221d12; color: #f0d9a0; }
      .cal b { font-weight: 600; }
      select { max-width: 100%; }
      input.width { width: 4.5em; }
      .results { display: grid; grid-template-columns: 1fr 1fr; gap: 6px; margin: 6px 0; }
      .card { border: 1px solid var(--line); border-radius: 3px; padding: 6px; background: #161d24; min-width: 0; }
      .card .what { color: var(--muted); font-size: 11px; text-transform: uppercase; letter-spacing: 0.05em; }
      .card .d { font-size: 14px; font-weight: 600; margin: 2px 0; }
      .card .px { font-size: 12px; }
      .card .how { color: var(--muted); font-size: 11px; line-height: 1.35; margin-top: 3px; }
      .note { color: var(--muted); font-size: 12px; }
      .error { color: #ffb4b4; }
      .busy { color: var(--accent-2); }
      .figure { position: relative; margin: 6px 0; outline: none; border-radius: 3px; }
      .figure:focus-visible { box-shadow: 0 0 0 2px var(--focus); }
      .figure canvas { display: block; image-rendering: pixelated; border: 1px solid var(--line); }
      .figure .clip { position: relative; overflow: hidden; border: 1px solid var(--line); }
      .figure .clip canvas { position: absolute; border: 0; }
      .figure svg.marks { position: absolute; left: 0; top: 0; cursor: crosshair; }
      svg.marks .spot { fill: none; stroke: #e8c872; stroke-width: 1.5; }
      svg.marks .spot.sel { stroke: #ffd84d; stroke-width: 2.5; }
      svg.marks .spot.added { stroke: #f0a35e; }
      svg.marks .mate { fill: none; stroke: #ffd84d; stroke-width: 1.5; stroke-dasharray: 3 2; }
      svg.marks .halo { fill: none; stroke: #000; stroke-width: 3; stroke-opacity: 0.6; }
      svg.marks .cross { stroke: #9fd3e6; stroke-width: 1; }
      svg.marks text { fill: #ffe9a8; font-size: 12px; paint-order: stroke; stroke: #000; stroke-width: 2.5px; }
      .table-wrap { overflow-x: auto; max-width: 100%; }
      table { border-collapse: collapse; width: 100%; font-size: 11.5px; margin: 4px 0; }
      th, td { padding: 2px 2px; text-align: right; border-bottom: 1px solid var(--line); white-space: nowrap; }
      th { color: var(--muted); font-weight: normal; }
      th:first-child, td:first-child { text-align: center; }
      tr.sel td { background: #23303c; }
      td button { min-height: 20px; padding: 0 6px; }
      td .dnm { font-weight: 600; }
      td .dpx { color: var(--muted); font-size: 11px; }
      .visually-hidden { position: absolute; width: 1px; height: 1px; overflow: hidden; clip-path: inset(50%); }
      .between { padding: 4px 6px; border-left: 2px solid var(--accent-2); margin: 4px 0; }
      .toggle { display: inline-flex; gap: 2px; }
      .empty { color: var(--muted); padding: 12px 0; }
      details.typed { margin: 2px 0 6px; font-size: 12px; }
      details.typed summary { color: var(--muted); cursor: pointer; }
      details.typed input { width: 11em; }
    `,
  ];

  protected override willUpdate(changed: PropertyValues<this>): void {
    if (changed.has('image')) {
      const data = this.image?.data ?? null;
      if (data !== this.lastData) {
        this.lastData = data;
        this.resetResults();
      } else if (this.image) {
        // Same pixels, new calibration: the records keep pixels, so every value shown is
        // re-expressed with it (expressPeriod in render); nothing is measured again.
        this.savedProfile = '';
        this.savedSpectrum = '';
        this.sendShapes();
      }
    }
    // the labels on the image carry their ± at this k
    if (changed.has('coverageK') && changed.get('coverageK') !== undefined) this.sendShapes();
    if (changed.has('viewer') && this.viewer) {
      this.widthPx = this.viewer.lineWidthPx;
      this.activeTool = this.viewer.tool;
      this.viewer.addEventListener('tool-changed', this.onToolChanged);
    }
    if (changed.has('line') && this.line && this.image && this.line !== this.profileLine) {
      this.widthPx = this.line.widthPx;
      void this.runProfile(this.line);
    }
    if (changed.has('rect') && this.rect && this.image && this.rect !== this.spectrumRect) void this.runSpectrum(this.rect);
    if (changed.has('zoom')) void this.requestSpectrumPicture();
  }

  /**
   * Asks the compute worker for the spectrum's picture at the current zoom (the page stretches no
   * pixels); painted when it arrives if the spectrum and zoom are still those shown.
   */
  private async requestSpectrumPicture(): Promise<void> {
    const sp = this.spectrum;
    const zoom = this.zoom;
    if (!sp || sp.pictureId === undefined || !this.compute || !this.session || !this.workerSpectrumPictures) return;
    const have = this.spectrumBitmap;
    if (have && have.pictureId === sp.pictureId && have.zoom === zoom) return;
    try {
      const got = await this.compute.call('spectrumPicture', { sessionId: this.session, pictureId: sp.pictureId, zoom });
      if (this.spectrum?.pictureId !== got.pictureId || this.zoom !== got.zoom) {
        got.bitmap.close();
        return;
      }
      this.spectrumBitmap?.bitmap.close();
      this.spectrumBitmap = got;
    } catch {
      // the page makes the picture itself from now on
      this.workerSpectrumPictures = false;
    }
    this.requestUpdate();
  }

  private onToolChanged = (e: Event): void => {
    const tool = (e as CustomEvent<{ tool: 'pan' | 'line' | 'rect' }>).detail?.tool;
    if (tool) this.activeTool = tool;
  };

  private resetResults(): void {
    this.profileRun++;
    this.spectrumRun++;
    this.profile = null;
    this.profileLine = null;
    this.profileError = '';
    this.profileBusy = false;
    this.spectrum = null;
    this.spectrumRect = null;
    this.spots = [];
    this.selected = [];
    this.spectrumError = '';
    this.spectrumBusy = false;
    this.filtered = null;
    this.crosshair = null;
    this.savedProfile = '';
    this.savedSpectrum = '';
  }

  /** The panel's state for the undo history (plain JSON). */
  workState(): PeriodsState {
    const plain = <T>(v: T): T => (v === null ? v : JSON.parse(JSON.stringify(v)) as T);
    return {
      line: plain(this.profileLine), rect: plain(this.spectrumRect),
      spots: plain(this.spots.filter((t) => !t.budgeting)), selected: [...this.selected],
      windowKind: this.windowKind, alpha: this.alpha, estimator: this.estimator, coverageK: this.coverageK,
    };
  }

  /** Records a step of the image's undo history (the shell keeps it with the image). */
  private step(label: string): void {
    if (this.restoring > 0) return;
    this.dispatchEvent(new CustomEvent('history-step', { detail: { label, state: this.workState() }, bubbles: true, composed: true }));
  }

  /** Restores in progress (a result that arrives for one of them records no step). */
  private restoring = 0;

  /**
   * Shows a state from the undo history again: the settings, the profile along its line and the
   * region's spectrum with the spot table as it was (the region's transform is cached in the
   * worker; spots keep their numbers and budgets). Null clears the results.
   */
  async restoreState(state: unknown): Promise<void> {
    await this.updateComplete;
    const st = state as PeriodsState | null;
    this.restoring++;
    try {
      if (!st) {
        this.resetResults();
        this.sendShapes();
        return;
      }
      this.windowKind = st.windowKind;
      this.alpha = st.alpha;
      this.estimator = st.estimator;
      this.coverageK = st.coverageK;
      const same = (a: unknown, b: unknown) => JSON.stringify(a) === JSON.stringify(b);
      const jobs: Promise<void>[] = [];
      if (!st.line) {
        this.profileRun++;
        this.profile = null;
        this.profileLine = null;
        this.profileError = '';
      } else if (!same(st.line, this.profileLine) || !this.profile) {
        if (st.line.widthPx) this.widthPx = Math.round(st.line.widthPx);
        jobs.push(this.runProfile(st.line));
      }
      if (!st.rect) {
        this.spectrumRun++;
        this.spectrum = null;
        this.spectrumRect = null;
        this.spots = [];
        this.selected = [];
        this.filtered = null;
      } else if (!same(st.rect, this.spectrumRect) || !this.spectrum) {
        jobs.push(this.runSpectrum(st.rect, st));
      } else {
        this.spots = st.spots;
        this.selected = st.selected;
        this.nextSpot = Math.max(0, ...st.spots.map((t) => t.n)) + 1;
        this.filtered = null;
      }
      await Promise.all(jobs);
      this.sendShapes();
    } finally {
      this.restoring--;
    }
  }

  private say(text: string, kind: 'info' | 'error' = 'info'): void {
    this.dispatchEvent(new CustomEvent('status-message', { detail: { text, kind }, bubbles: true, composed: true }));
  }

  private sendShapes(): void {
    const shapes: OverlayShape[] = [];
    const cal = this.image?.calibration ?? null;
    // each tool's figure from the registry, with the calibration in force
    // each period in a label with its ± at the panel's k (withBudgetLabels)
    if (this.spectrum && this.spectrumRect) {
      const m = { ...this.spectrum.measurement, calibration: cal, periodicities: this.spots.map(spotPeriodicity) };
      shapes.push(...withBudgetLabels(m, toolOf('spectrum').figure(m), this.coverageK));
    } else if (this.spectrumRect) {
      shapes.push({ kind: 'rect', ...this.spectrumRect, label: 'FFT region', tone: 'info' });
    }
    if (this.profile) {
      const m = { ...this.profile.measurement, calibration: cal };
      shapes.push(...withBudgetLabels(m, toolOf('profile').figure(m), this.coverageK));
    }
    else if (this.profileLine) shapes.push({ kind: 'line', ...this.profileLine, label: 'profile', tone: 'accent' });
    this.dispatchEvent(new CustomEvent('overlay-shapes', { detail: { shapes }, bubbles: true, composed: true }));
  }

  /** A periodicity's budget at the chosen coverage factor, in nm when calibrated. */
  private budget(p: Periodicity): UncertaintyBudget {
    return expressPeriod(p, this.image?.calibration ?? null, this.coverageK);
  }

  /** "1.2503 ± 0.0082 nm" with a tooltip that says what the ± contains. */
  private budgetCell(p: Periodicity) {
    const b = this.budget(p);
    return html`<span title=${`± U = k·u, k = ${b.k}; contains ${budgetContents(b)}`}>${formatPlusMinus(b.value, b.expanded)} ${b.unit}</span>`;
  }

  private setTool(tool: 'pan' | 'line' | 'rect'): void {
    if (!this.viewer) return;
    this.viewer.tool = tool;
    this.activeTool = tool;
    if (tool === 'line') this.viewer.lineWidthPx = this.widthPx;
    this.say(tool === 'line'
      ? 'Drag across the fringes on the image to draw the profile line; [ and ] change its width.'
      : tool === 'rect' ? 'Drag on the image to draw the region for the power spectrum.' : 'Drag to move the image.');
  }

  private setWidth(e: Event): void {
    const v = Math.round(Number((e.target as HTMLInputElement).value));
    if (!(v >= 1 && v <= 512)) return;
    this.widthPx = v;
    if (this.viewer) this.viewer.lineWidthPx = v;
    if (this.profileLine) void this.runProfile({ ...this.profileLine, widthPx: v });
  }

  // ---------------------------------------------------------------- profile

  private async runProfile(line: LineDrawnDetail): Promise<void> {
    const image = this.image;
    if (!image || !this.compute) return;
    const run = ++this.profileRun;
    this.profileLine = line;
    this.lastDrawn = 'profile';
    this.profileError = '';
    this.savedProfile = '';
    const across = Math.max(1, Math.round(line.widthPx));
    const half = (across - 1) / 2;
    const len = Math.hypot(line.x1 - line.x0, line.y1 - line.y0);
    if (!(len >= 2)) {
      this.profileError = 'The line is shorter than 2 px: draw it across several fringes.';
      return;
    }
    const nx = -(line.y1 - line.y0) / len;
    const ny = (line.x1 - line.x0) / len;
    const xs: number[] = [];
    const ys: number[] = [];
    for (const [px, py] of [[line.x0, line.y0], [line.x1, line.y1]]) {
      for (const s of [-half, half]) {
        xs.push(px + nx * s);
        ys.push(py + ny * s);
      }
    }
    const outside = xs.some((x) => x < 0 || x > image.width - 1) || ys.some((y) => y < 0 || y > image.height - 1);
    if (outside) {
      this.profile = null;
      this.profileError = `The ${across} px wide band of this line leaves the image: move the line inward or make it narrower.`;
      this.sendShapes();
      return;
    }
    if (!this.session) return;
    this.profileBusy = true;
    try {
      const result = await this.compute.call('profile', {
        sessionId: this.session, line: { x0: line.x0, y0: line.y0, x1: line.x1, y1: line.y1, widthPx: across }, estimator: this.estimator,
      });
      if (run !== this.profileRun) return;
      this.profile = result;
      this.step(`profile line ${result.lengthPx.toFixed(0)} px`);
    } catch (e) {
      if (run !== this.profileRun) return;
      this.profile = null;
      this.profileError = `The profile could not be measured: ${(e as Error).message}`;
    } finally {
      if (run === this.profileRun) this.profileBusy = false;
    }
    this.sendShapes();
  }

  private async saveProfile(): Promise<void> {
    const p = this.profile;
    if (!p || !this.image) return;
    if (!this.db) {
      this.say('The local library is not open: the result cannot be kept.', 'error');
      return;
    }
    await this.save(this.forLibrary(p.measurement), (t) => (this.savedProfile = t));
  }

  /** A record as the library keeps it: a new id, this image, now, the calibration in force. */
  private forLibrary(m: Measurement): Measurement {
    return withIdentity(m, { imageId: this.record?.id ?? null, fileName: this.record?.fileName ?? '', calibration: this.image?.calibration ?? null });
  }

  /** The records on this tab now: the profile and the region's spectrum with the spots of the table. */
  private currentRecords(): Measurement[] {
    const out: Measurement[] = [];
    if (this.profile && (this.profile.spectral || this.profile.realSpace)) out.push(this.forLibrary(this.profile.measurement));
    if (this.spectrum) out.push(this.forLibrary(this.spectrumRecord(this.spectrum)));
    return out;
  }

  private async save(m: Measurement, done: (text: string) => void): Promise<void> {
    try {
      await putMeasurement(this.db as LibraryDb, m);
      const what = m.tool === 'profile' ? 'Profile periods' : 'Spectrum spots';
      done(`${what} saved to the library (${new Date(m.createdIso).toLocaleTimeString()}).`);
      this.say(`${what} of ${m.fileName || 'this image'} saved to the library.`);
      this.dispatchEvent(new CustomEvent('library-changed', { bubbles: true, composed: true }));
    } catch (e) {
      this.say(`Not saved: ${(e as Error).message}`, 'error');
    }
  }

  // ---------------------------------------------------------------- spectrum

  private settings(): SpectrumSettings {
    return { window: this.windowKind, tukeyAlpha: 0.5, alpha: this.alpha };
  }

  private async runSpectrum(rect: RectDrawnDetail, table: Pick<PeriodsState, 'spots' | 'selected'> | null = null): Promise<void> {
    const image = this.image;
    if (!image || !this.compute) return;
    const run = ++this.spectrumRun;
    this.spectrumRect = rect;
    this.lastDrawn = 'spectrum';
    this.spectrumError = '';
    this.savedSpectrum = '';
    this.filtered = null;
    if (rect.width < 16 || rect.height < 16) {
      this.spectrum = null;
      this.spots = [];
      this.spectrumError = `The region is ${rect.width} × ${rect.height} px: a power spectrum needs at least 16 × 16 px (a few periods across is better).`;
      this.sendShapes();
      return;
    }
    if (!this.session) return;
    this.spectrumBusy = true;
    try {
      const result = await this.compute.call('spectrum', {
        sessionId: this.session, rect: { x: rect.x, y: rect.y, width: rect.width, height: rect.height }, settings: this.settings(), displayPx: PICTURE_PX,
      });
      if (run !== this.spectrumRun) return;
      this.spectrum = result;
      this.nextSpot = 1;
      if (table) {
        // a state from the undo history: the spot table as it was
        this.spots = table.spots;
        this.selected = table.selected;
        this.nextSpot = Math.max(0, ...table.spots.map((t) => t.n)) + 1;
      } else {
        this.spots = result.spots.map((s) => ({ ...s, n: this.nextSpot++, added: false }));
        this.selected = this.spots.length ? [this.spots[0].n] : [];
      }
      this.crosshair = null;
      this.zoom = this.autoZoom();
      void this.requestSpectrumPicture();
      this.step(`region ${rect.width} × ${rect.height} px`);
    } catch (e) {
      if (run !== this.spectrumRun) return;
      this.spectrum = null;
      this.spots = [];
      this.spectrumError = `The power spectrum could not be computed: ${(e as Error).message}`;
    } finally {
      if (run === this.spectrumRun) this.spectrumBusy = false;
    }
    this.sendShapes();
  }

  /** Side of the spectrum figure, CSS px: as much of the figures column as fits (the whole figure without scrolling), at least 320. */
  private spectrumSidePx(): number {
    if (!this.wide) return SPECTRUM_CSS_PX;
    return Math.max(SPECTRUM_CSS_PX, Math.min(1024, Math.floor(this.stageWidthPx) - 4, Math.floor(this.stageHeightPx) - 64));
  }

  /** CSS px per picture pixel at zoom 1. */
  private pictureScale(): number {
    const p = (this.spectrum as SpectrumView).picture;
    return this.spectrumSidePx() / Math.max(p.width, p.height);
  }

  /** The visible frame (CSS px) and the zoomed picture's offset and scale inside it. */
  private frame() {
    const s = this.spectrum as SpectrumView;
    const base = this.pictureScale();
    const cw = Math.round(s.picture.width * base);
    const ch = Math.round(s.picture.height * base);
    const z = this.zoom;
    return { cw, ch, scale: base * z, left: -(cw * z - cw) / 2, top: -(ch * z - ch) / 2 };
  }

  /** Transform bin (signed, DC = 0) → CSS px in the visible frame. */
  private binToCss(su: number, sv: number): [number, number] {
    const s = this.spectrum as SpectrumView;
    const k = s.binsPerPicturePx;
    const f = this.frame();
    return [(((s.width >> 1) + su + 0.5) / k) * f.scale + f.left, (((s.height >> 1) + sv + 0.5) / k) * f.scale + f.top];
  }

  /** CSS px in the visible frame → transform bin (signed, DC = 0, fractional). */
  private cssToBin(x: number, y: number): [number, number] {
    const s = this.spectrum as SpectrumView;
    const k = s.binsPerPicturePx;
    const f = this.frame();
    return [((x - f.left) / f.scale) * k - 0.5 - (s.width >> 1), ((y - f.top) / f.scale) * k - 0.5 - (s.height >> 1)];
  }

  /** The largest zoom (×1, 2, 4, 8) that keeps every spot well inside the frame. */
  private autoZoom(): number {
    const s = this.spectrum;
    if (!s || !this.spots.length) return 1;
    let reach = 0;
    for (const t of this.spots) reach = Math.max(reach, Math.abs(t.fx) * 2, Math.abs(t.fy) * 2);
    // Zoom in while every spot stays within three quarters of the half-frame and 40 bins or more remain across.
    let z = 1;
    while (z < 8 && reach * 2 * z <= 0.75 && Math.min(s.width, s.height) / (2 * z) >= 40) z *= 2;
    return z;
  }

  private onSpectrumClick(e: MouseEvent): void {
    const s = this.spectrum;
    if (!s) return;
    const r = (e.currentTarget as Element).getBoundingClientRect();
    // The marks start one border pixel inside the drawing.
    const [u, v] = this.cssToBin(e.clientX - r.left - 1, e.clientY - r.top - 1);
    this.crosshair = { u: Math.round(u), v: Math.round(v) };
    void this.addSpot(u / s.width, v / s.height);
  }

  private onSpectrumKey(e: KeyboardEvent): void {
    const s = this.spectrum;
    if (!s) return;
    const step = e.shiftKey ? 10 : 1;
    const c = this.crosshair ?? { u: 0, v: 0 };
    let { u, v } = c;
    switch (e.key) {
      case 'ArrowLeft': u -= step; break;
      case 'ArrowRight': u += step; break;
      case 'ArrowUp': v -= step; break;
      case 'ArrowDown': v += step; break;
      case 'Enter': case ' ': e.preventDefault(); void this.addSpot(u / s.width, v / s.height); return;
      case 'Escape': this.crosshair = null; return;
      default: return;
    }
    e.preventDefault();
    const hu = s.width >> 1;
    const hv = s.height >> 1;
    this.crosshair = { u: Math.max(-hu, Math.min(s.width - 1 - hu, u)), v: Math.max(-hv, Math.min(s.height - 1 - hv, v)) };
  }

  private async addSpot(fx: number, fy: number): Promise<void> {
    const r = this.spectrumRect;
    if (!r || !this.spectrum || !this.compute || !this.session) return;
    performance.mark('strata-spot-click');
    fx = Math.max(-0.5, Math.min(0.5, fx));
    fy = Math.max(-0.5, Math.min(0.5, fy));
    const run = this.spectrumRun;
    const at = { sessionId: this.session, rect: { x: r.x, y: r.y, width: r.width, height: r.height }, settings: this.settings() };
    try {
      // 1: the spot from the region's cached spectrum (no transform), shown at once
      const { spot } = await this.compute.call('spotNear', { ...at, fx, fy, radiusBins: 3 });
      if (run !== this.spectrumRun) return;
      if (!spot) {
        this.say('No spot above the background near that point of the power spectrum.', 'error');
        return;
      }
      // A click on a spot already listed (or on its Friedel mate) selects it instead of adding it twice.
      const same = this.spots.find((t) => Math.min(Math.hypot((t.fx - spot.fx) * this.spectrum!.width, (t.fy - spot.fy) * this.spectrum!.height),
        Math.hypot((t.fx + spot.fx) * this.spectrum!.width, (t.fy + spot.fy) * this.spectrum!.height)) < 1.5);
      if (same) {
        if (!this.selected.includes(same.n)) this.selected = [...this.selected, same.n];
        this.say(`Spot #${same.n} is already in the table; it is now selected.`);
        return;
      }
      const t: TableSpot = { ...spot, n: this.nextSpot++, added: true, budgeting: true };
      this.spots = [...this.spots, t];
      this.selected = [...this.selected, t.n];
      this.savedSpectrum = '';
      this.timelineMark = ['strata-spot-numbers', 'strata-spot-click-to-numbers'];
      // 2: refined where its fringes are, with its full budget, like the automatic spots
      const { spot: full } = await this.compute.call('spotBudget', { ...at, spot });
      if (run !== this.spectrumRun || !this.spots.some((x) => x.n === t.n)) return;
      this.spots = this.spots.map((x) => (x.n === t.n ? { ...full, n: t.n, added: true } : x));
      this.timelineMark = ['strata-spot-budgeted', 'strata-spot-click-to-budget'];
      this.step(`spot #${t.n} added`);
      this.say(`Spot #${t.n} added: ${periodBudgetLabel(spotPeriodicity(full), this.image?.calibration ?? null, this.coverageK)}, ${full.angleDeg.toFixed(1)}°.`);
    } catch (e) {
      this.spots = this.spots.map((x) => (x.budgeting ? { ...x, budgeting: false } : x));
      this.say(`The spot could not be added: ${(e as Error).message}`, 'error');
    }
  }

  private toggleSpot(n: number): void {
    this.selected = this.selected.includes(n) ? this.selected.filter((k) => k !== n) : [...this.selected, n];
    this.filtered = null;
  }

  private removeSpot(n: number): void {
    this.spots = this.spots.filter((s) => s.n !== n);
    this.selected = this.selected.filter((k) => k !== n);
    this.filtered = null;
    this.savedSpectrum = '';
    this.step(`spot #${n} removed`);
  }

  /** Lays the Fourier-filtered region over the micrograph (or removes it) in the viewer. */
  private syncViewerOverlay(): void {
    const v = this.viewer;
    if (!v) return;
    const r = this.spectrumRect;
    const want = this.filterOverImage && this.filtered && r
      ? { picture: this.filtered.filtered, rect: { x: r.x, y: r.y, width: r.width, height: r.height }, opacity: 0.7 }
      : null;
    const have = v.overlayPicture;
    if (want === null && have === null) return;
    if (want && have && have.picture === want.picture && have.rect.x === want.rect.x && have.rect.y === want.rect.y) return;
    v.overlayPicture = want;
  }

  private async runFilter(): Promise<void> {
    const r = this.spectrumRect;
    if (!r || !this.compute || !this.session) return;
    const chosen = this.spots.filter((s) => this.selected.includes(s.n));
    if (!chosen.length) return;
    this.filterBusy = true;
    try {
      this.filtered = await this.compute.call('filter', {
        sessionId: this.session, rect: { x: r.x, y: r.y, width: r.width, height: r.height }, spots: chosen.map((s) => ({ fx: s.fx, fy: s.fy })), displayPx: PICTURE_PX,
      });
      this.showFiltered = true;
    } catch (e) {
      this.say(`The Fourier filter failed: ${(e as Error).message}`, 'error');
    } finally {
      this.filterBusy = false;
    }
  }

  /** The region's record with the spots of the table (some removed, some added by a click). */
  private spectrumRecord(s: SpectrumView): Measurement {
    return withTableSpots(s.measurement, this.spots.map((t) => ({ spot: t, number: t.n, addedByHand: t.added })), s.rings, this.selected);
  }

  private async saveSpectrum(): Promise<void> {
    const s = this.spectrum;
    if (!s || !this.image || !this.spectrumRect) return;
    if (!this.db) {
      this.say('The local library is not open: the result cannot be kept.', 'error');
      return;
    }
    await this.save(this.forLibrary(this.spectrumRecord(s)), (t) => (this.savedSpectrum = t));
  }

  // ---------------------------------------------------------------- rendering

  private renderCalibration() {
    const cal = this.image?.calibration;
    if (!this.image) return nothing;
    const k = html`<label title="Coverage factor k of every ± on this panel: U = k·u. k = 2 gives about 95 % coverage for a normal distribution (GUM §6.3.3).">k
      <select class="coverage-k" aria-label="Coverage factor k" @change=${(e: Event) => { this.coverageK = Number((e.target as HTMLSelectElement).value); }}>
        ${[1, 2, 3].map((v) => html`<option value=${String(v)} ?selected=${v === this.coverageK}>${v}</option>`)}</select></label>`;
    if (!cal) {
      return html`<p class="cal none" role="note"><b>Uncalibrated</b>: periods are given in px only. Calibrate the pixel size (scale bar, lattice standard or a typed value) to get nm. ${k}</p>`;
    }
    return html`<p class="cal num" title=${`${cal.detail}; ${calibrationPartsText(cal)}`}>Pixel size <b>${cal.nmPerPx.toPrecision(4)} nm/px</b>${cal.nmPerPxY ? html` × ${cal.nmPerPxY.toPrecision(4)} nm/px` : nothing}
      from ${CALIBRATION_SOURCE_WORDS[cal.source] ?? cal.source}, u = ${(cal.relUncertainty * 100).toPrecision(2)} % (k = 1), included in every ± in nm. ${k}</p>`;
  }

  /** What every ± above contains, in words. */
  private budgetNote(periods: readonly Periodicity[]) {
    if (!periods.length) return nothing;
    const contains = [...new Set(periods.map((p) => budgetContents(this.budget(p))))].join(' / ');
    return html`<p class="note budget-note">± is the expanded uncertainty U = k·u, k = ${this.coverageK}; it contains ${contains}.</p>`;
  }

  private renderTools() {
    const tools: ['line' | 'rect', string, string][] = [
      ['line', 'Draw profile line', 'Draw a line across the fringes on the image: grey values are averaged over the width and the period is measured along the line'],
      ['rect', 'Draw region', 'Draw a rectangle on the image: its 2D power spectrum (FFT) shows one spot pair per set of lattice fringes'],
    ];
    return html`<div class="row" role="group" aria-label="Drawing tools">
      ${tools.map(([t, label, hint]) => html`<button aria-pressed=${this.activeTool === t ? 'true' : 'false'} title=${hint} ?disabled=${!this.viewer} @click=${() => this.setTool(t)}>${label}</button>`)}
      <label title="Averaging width across the profile line, in pixels. Wider lines lower the noise but blur fringes that are not perpendicular to the line.">width
        <input class="width" type="number" min="1" max="512" step="1" .value=${String(this.widthPx)} @change=${this.setWidth} aria-label="Profile width in pixels"> px</label>
    </div>
    <details class="typed" @toggle=${(e: Event) => (this.typedOpen = (e.target as HTMLDetailsElement).open)}><summary>Type a region or a line (image px)</summary>
      ${this.typedOpen ? html`
      <div class="row"><label>region x, y, width, height
        <input class="typed-rect" placeholder="250, 250, 160, 160" aria-label="Region: left, top, width and height in image pixels"
          @keydown=${(e: KeyboardEvent) => { if (e.key === 'Enter') this.measureTyped('rect'); }}></label>
        <button @click=${() => this.measureTyped('rect')}>Measure region</button></div>
      <div class="row"><label>line x0, y0, x1, y1
        <input class="typed-line" placeholder="240, 380, 420, 280" aria-label="Profile line: start x, start y, end x, end y in image pixels (width as set above)"
          @keydown=${(e: KeyboardEvent) => { if (e.key === 'Enter') this.measureTyped('line'); }}></label>
        <button @click=${() => this.measureTyped('line')}>Measure line</button></div>` : nothing}
    </details>`;
  }

  /**
   * Measures a region or a line typed in image pixels (the keyboard's way to the two tools, and a
   * way to repeat a measurement exactly); a value outside the image is refused by name.
   */
  private measureTyped(kind: 'rect' | 'line'): void {
    const image = this.image;
    const input = this.renderRoot.querySelector<HTMLInputElement>(kind === 'rect' ? 'input.typed-rect' : 'input.typed-line');
    if (!image || !input) return;
    const v = input.value.split(/[\s,;]+/).filter(Boolean).map(Number);
    if (v.length !== 4 || v.some((n) => !Number.isFinite(n))) {
      this.say(`Type four numbers for the ${kind === 'rect' ? 'region (x, y, width, height)' : 'line (x0, y0, x1, y1)'}, got "${input.value}".`, 'error');
      return;
    }
    if (kind === 'rect') {
      const [x, y, width, height] = v.map(Math.round);
      if (x < 0 || y < 0 || width < 1 || height < 1 || x + width > image.width || y + height > image.height) {
        this.say(`The region ${x}, ${y}, ${width} × ${height} px does not lie inside the ${image.width} × ${image.height} px image.`, 'error');
        return;
      }
      void this.runSpectrum({ x, y, width, height });
    } else {
      const [x0, y0, x1, y1] = v;
      const bad = [['x0', x0, image.width], ['y0', y0, image.height], ['x1', x1, image.width], ['y1', y1, image.height]].find(([, n, max]) => (n as number) < 0 || (n as number) > (max as number) - 1);
      if (bad) {
        this.say(`${bad[0]} = ${bad[1]} lies outside the ${image.width} × ${image.height} px image.`, 'error');
        return;
      }
      void this.runProfile({ x0, y0, x1, y1, widthPx: this.widthPx });
    }
  }

  private renderSettings() {
    return html`<div class="row">
      <label title="Data window applied to the region before the FFT. ${WINDOW_HELP[this.windowKind]}">window
        <select aria-label="Window" @change=${(e: Event) => { this.windowKind = (e.target as HTMLSelectElement).value as WindowKind; if (this.spectrumRect) void this.runSpectrum(this.spectrumRect); }}>
          ${(['hann', 'tukey', 'none'] as WindowKind[]).map((w) => html`<option value=${w} ?selected=${w === this.windowKind} title=${WINDOW_HELP[w]}>${w === 'none' ? 'none' : w[0].toUpperCase() + w.slice(1)}</option>`)}
        </select></label>
      <label title="Significance of a spot or ring: the chance that pure noise (an amorphous region) shows at least one false spot anywhere in the power spectrum. Smaller finds fewer, surer spots.">false-alarm probability
        <select aria-label="False-alarm probability" @change=${(e: Event) => { this.alpha = Number((e.target as HTMLSelectElement).value); if (this.spectrumRect) void this.runSpectrum(this.spectrumRect); }}>
          ${ALPHAS.map((a) => html`<option value=${String(a)} ?selected=${a === this.alpha}>${a >= 0.001 ? a : a.toExponential(0)}</option>`)}
        </select></label>
    </div>`;
  }

  private periodCard(what: string, e: { fringes: number; method: string; snr: number } | null, per: Periodicity | undefined, how: string) {
    if (!e || !per) return html`<div class="card"><div class="what">${what}</div><div class="d">–</div><div class="how">not found</div></div>`;
    const b = this.budget(per);
    const px = expressPeriod(per, null, this.coverageK);
    return html`<div class="card">
      <div class="what">${what}</div>
      <div class="d num">${this.budgetCell(per)}</div>
      ${b.unit === 'nm' ? html`<div class="px num">${formatPlusMinus(px.value, px.expanded)} px</div>` : nothing}
      <div class="how">${how}</div>
    </div>`;
  }

  private renderProfile() {
    const p = this.profile;
    const body = [];
    if (this.profileBusy) body.push(html`<p class="busy" role="status">Measuring the profile…</p>`);
    if (this.profileError) body.push(html`<p class="error" role="alert">${this.profileError}</p>`);
    if (!p && !this.profileBusy && !this.profileError) {
      body.push(html`<p class="empty">Draw a profile line across the fringes (perpendicular to them) to measure their period.</p>`);
    }
    if (p) {
      const width = Math.max(1, Math.round(this.profileLine?.widthPx ?? 1));
      const hasBand = p.standardError.length > 0 && Number.isFinite(p.standardError[0]);
      const rs = p.realSpace;
      body.push(html`<p class="note">${p.lengthPx.toFixed(1)} px at ${p.angleDeg.toFixed(1)}°, averaged over ${width} px${hasBand ? '; band ± standard error' : ''}. ● maxima, ○ minima used by the real-space estimate.</p>`);
      const sp = p.spectral;
      const pers = p.measurement.periodicities;
      body.push(html`<div class="results">
        ${this.periodCard('spectral', sp, sp ? pers[0] : undefined, sp ? `${sp.method.replace(/^spectral \(|\)$/g, '')}; ${sp.fringes.toFixed(1)} periods along the line, SNR ${Number.isFinite(sp.snr) ? sp.snr.toPrecision(3) : '∞'}` : '')}
        ${this.periodCard('real space', rs, rs ? pers[sp ? 1 : 0] : undefined, rs ? `extrema and least-squares line; ${rs.extremaPx.length} extrema over ${rs.fringes.toFixed(1)} fringes` : '')}
      </div>`);
      body.push(this.budgetNote(pers));
      for (const n of p.measurement.notes) body.push(html`<p class="note">${n}</p>`);
      body.push(html`<div class="row">
        <button @click=${() => this.saveProfile()} ?disabled=${!this.db || !(p.spectral || p.realSpace)} title="Keep both estimates in the library with the line, its width, the estimator and the calibration">Save profile periods</button>
        ${this.savedProfile ? html`<span class="note" role="status">${this.savedProfile}</span>` : nothing}</div>`);
    }
    return html`<section aria-labelledby="h-profile">
      <h2 id="h-profile">Line profile</h2>
      <div class="row">
        <label title="How the spectral estimate locates the period between FFT bins. Hann + Grandke is robust; the no-window interpolators use every sample fully but suffer more from a trend or a partial fringe at the ends.">spectral estimator
          <select aria-label="Spectral estimator" @change=${(e: Event) => { this.estimator = (e.target as HTMLSelectElement).value as ProfileEstimator; if (this.profileLine) void this.runProfile(this.profileLine); }}>
            ${ESTIMATORS.map(([k, label]) => html`<option value=${k} ?selected=${k === this.estimator}>${label}</option>`)}
          </select></label>
      </div>
      ${body}
    </section>`;
  }

  private renderSpectrumFigure(s: SpectrumView) {
    const pic = s.picture;
    const { cw, ch, scale, left, top } = this.frame();
    const cal = this.image?.calibration ?? null;
    // Each spot in the upper half (y up), where its angle reads as drawn; its Friedel mate opposite.
    const at = this.spots.map((t) => {
      const flip = t.fy > 0 || (t.fy === 0 && t.fx < 0) ? -1 : 1;
      const su = flip * t.fx * s.width;
      const sv = flip * t.fy * s.height;
      const [x, y] = this.binToCss(su, sv);
      const [mx, my] = this.binToCss(-su, -sv);
      const visible = x >= -8 && y >= -8 && x <= cw + 8 && y <= ch + 8;
      return { t, x, y, mx, my, visible };
    });
    // Labels that never overlap each other or a spot: the selected and the strongest spot first,
    // with their d-spacing and angle; the others with their number; a label with no room is left out.
    const R = 7;
    const obstacles: Box[] = at.filter((a) => a.visible).flatMap((a) => [
      { x: a.x - R, y: a.y - R, width: 2 * R, height: 2 * R }, { x: a.mx - R, y: a.my - R, width: 2 * R, height: 2 * R }]);
    const order = [...at.filter((a) => a.visible)].sort((p, q) => Number(this.selected.includes(q.t.n)) - Number(this.selected.includes(p.t.n)) || (p.t === this.spots[0] ? -1 : q.t === this.spots[0] ? 1 : 0));
    // the selected and the strongest spot: d with its ± (the table's budget, k stated) and the angle;
    // where that has no room, the number alone (the table beside it has the d)
    const short = order.map((a) => `#${a.t.n}`);
    const texts = order.map((a, i) => (this.selected.includes(a.t.n) || a.t === this.spots[0]
      ? `${short[i]} ${periodBudgetLabel(spotPeriodicity(a.t), cal, this.coverageK)} · ${a.t.angleDeg.toFixed(0)}°`
      : short[i]));
    const LABEL_PX = 12;
    const bounds = { x: 0, y: 0, width: cw, height: ch };
    const request = (list: string[]) => order.map((a, i) => ({ x: a.x, y: a.y, width: textWidthEstimate(list[i], LABEL_PX), height: LABEL_PX + 3 }));
    const placed = placeLabels(request(texts), { bounds, obstacles, gap: R + 1 });
    if (placed.some((p, i) => !p.placed && texts[i] !== short[i])) {
      // the long labels that found a place keep it; the others try the short form, clear of them
      const kept = placed.filter((p) => p.placed).map((p) => p.box);
      const left = placed.map((p, i) => i).filter((i) => !placed[i].placed);
      const again = placeLabels(left.map((i) => request(short)[i]), { bounds, obstacles: [...obstacles, ...kept], gap: R + 1 });
      left.forEach((i, j) => {
        if (again[j].placed) {
          placed[i] = again[j];
          texts[i] = short[i];
        }
      });
    }
    const labels = order.map((a, i) => (placed[i].placed
      ? svg`<text x=${placed[i].box.x + 1} y=${placed[i].box.y + LABEL_PX}>${texts[i]}</text>`
      : nothing));
    const marks = at.map(({ t, x, y, mx, my, visible }) => {
      if (!visible) return nothing;
      const sel = this.selected.includes(t.n);
      return svg`<circle class="halo" cx=${x} cy=${y} r="6"></circle><circle class=${classMap({ spot: true, sel, added: t.added })} cx=${x} cy=${y} r="6"></circle>
        <circle class="halo" cx=${mx} cy=${my} r="6"></circle><circle class="mate" cx=${mx} cy=${my} r="6"></circle>`;
    });
    const c = this.crosshair;
    const cross = c ? (() => {
      const [x, y] = this.binToCss(c.u, c.v);
      return svg`<line class="cross" x1=${x - 8} x2=${x + 8} y1=${y} y2=${y}></line><line class="cross" x1=${x} x2=${x} y1=${y - 8} y2=${y + 8}></line>`;
    })() : nothing;
    const edge = 0.5 / this.zoom;
    const nyquist = cal
      ? `${(edge / cal.nmPerPx).toPrecision(3)} nm⁻¹ (d ${(cal.nmPerPx / edge).toPrecision(3)} nm)`
      : `${edge.toPrecision(3)} px⁻¹ (d ${(1 / edge).toPrecision(3)} px)`;
    return html`<div class="row">
        <span class="toggle" role="group" aria-label="Spectrum zoom">${[1, 2, 4, 8].map((z) => html`<button aria-pressed=${this.zoom === z ? 'true' : 'false'}
          title=${z === 1 ? 'The whole power spectrum, up to the Nyquist frequency' : `The central 1/${z} of the power spectrum (low spatial frequencies, large d-spacings)`}
          @click=${() => (this.zoom = z)}>×${z}</button>`)}</span>
        <span class="note num" title="Spatial frequency at the edge of the picture, and the d-spacing it corresponds to">edge ${nyquist}</span></div>
      <div class="figure" tabindex="0" role="application"
        aria-label="Power spectrum of the region, centre = zero frequency. Click a spot, or move the crosshair with the arrow keys (Shift: 10 bins) and press Enter, to add the spot nearest to it."
        data-w=${cw + 2} data-h=${ch + 2} @keydown=${this.onSpectrumKey}>
      <div class="clip" data-w=${cw} data-h=${ch}>
        <canvas class="spectrum" width=${pic.width} height=${pic.height}
          data-w=${pic.width * scale} data-h=${pic.height * scale} data-l=${left} data-t=${top}></canvas></div>
      <svg class="marks" width=${cw + 2} height=${ch + 2} viewBox="-1 -1 ${cw + 2} ${ch + 2}" @click=${this.onSpectrumClick}>${marks}${labels}${cross}</svg>
    </div>`;
  }

  private renderSpotTable(s: SpectrumView) {
    const cal = this.image?.calibration ?? null;
    if (!this.spots.length) {
      return html`<p class="note">No spot above the detection threshold (false-alarm probability ${this.alpha} over ${s.searchedBins} FFT bins): no significant lattice fringes in this region. Click the spectrum to measure a spot anyway.</p>`;
    }
    const rows = this.spots.map((t) => {
      const sel = this.selected.includes(t.n);
      return html`<tr class=${sel ? 'sel' : ''}>
        <td><input type="checkbox" .checked=${sel} @change=${() => this.toggleSpot(t.n)} aria-label=${`Select spot ${t.n}`}></td>
        <td>#${t.n}${t.added ? html`<span title="added by hand; not tested for significance">*</span>` : nothing}</td>
        <td class="num">${cal ? html`<div class="dnm">${this.budgetCell(t)}</div>` : nothing}
          <div class=${cal ? 'dpx' : 'dnm'}>${cal ? (() => { const b = expressPeriod(t, null, this.coverageK); return `${formatPlusMinus(b.value, b.expanded)} px`; })() : this.budgetCell(t)}</div>
          ${t.flags.length ? html`<div class="flag" title="A spot with a doubt is never ranked first">${t.flags.join(', ')}</div>` : nothing}
          ${t.budgeting ? html`<div class="note busy" role="status" title="Refining the spot where its fringes are; until then its ± holds the statistical part (and the calibration)">budgeting…</div>` : nothing}</td>
        <td class="num">${formatPlusMinus(t.angleDeg, this.coverageK * t.uAngleDeg, 2)}°</td>
        <td class="num">${t.normalisedPower >= 100 ? Math.round(t.normalisedPower) : t.normalisedPower.toPrecision(3)}</td>
        <td><button @click=${() => this.removeSpot(t.n)} aria-label=${`Remove spot ${t.n}`} title="Remove this spot from the table">×</button></td>
      </tr>`;
    });
    const pair = this.selected.length === 2 ? this.selected.map((n) => this.spots.find((t) => t.n === n)).filter((t) => t !== undefined) : [];
    return html`<p class="note">Spots, one of each Friedel pair, strongest first; angle of the fringe normal, counter-clockwise from +x. * added by hand.</p>
      <div class="table-wrap"><table>
        <thead><tr><th scope="col" title="Selected spots are used for the angle between two spots and for the Fourier filter">use</th><th scope="col">spot</th>
          <th scope="col">d-spacing</th><th scope="col">angle</th>
          <th scope="col" title="Spot power over the local background of the power spectrum">power</th><th scope="col"><span class="visually-hidden">remove</span></th></tr></thead>
        <tbody>${rows}</tbody></table></div>
      ${this.budgetNote(this.spots)}
      ${pair.length === 2
        ? html`<p class="between num" role="status">Angle between #${pair[0].n} and #${pair[1].n}: <b>${formatPlusMinus(angleBetweenDeg(pair[0], pair[1]), this.coverageK * Math.hypot(pair[0].uAngleDeg, pair[1].uAngleDeg))}°</b></p>`
        : html`<p class="note">Select two spots to see the angle between their fringe normals.</p>`}`;
  }

  /** The rings of the radial average, with their ± (side column). */
  private renderRings(s: SpectrumView) {
    return s.rings.length
      ? html`<p class="note num">Rings in the radial average: ${s.rings.slice(0, 6).map((r) => {
        const b = this.budget(ringPeriodicity(r));
        return `${formatPlusMinus(b.value, b.expanded)} ${b.unit}`;
      }).join(' · ')}</p>`
      : html`<p class="note">No significant ring in the radial average.</p>`;
  }

  /** The Fourier filter's button (side column). */
  private renderFilterControls() {
    const chosen = this.spots.filter((t) => this.selected.includes(t.n));
    return html`<h3>Fourier filter</h3>
      <div class="row"><button ?disabled=${!chosen.length || this.filterBusy} @click=${() => this.runFilter()}
        title="Keep only the selected spots and their Friedel mates (soft Gaussian masks) and transform back: shows where in the region these fringes are">
        ${this.filterBusy ? 'Filtering…' : `Filter to ${chosen.length ? chosen.map((t) => `#${t.n}`).join(', ') : 'selected spots'}`}</button></div>`;
  }

  /** The Fourier-filtered region (stage). */
  private renderFilterView() {
    const f = this.filtered;
    const pic: Picture | null = f ? (this.showFiltered ? f.filtered : f.original) : null;
    if (!pic) return nothing;
    const side = this.wide ? Math.min(this.spectrumSidePx(), 512) : SPECTRUM_CSS_PX;
    const scale = side / Math.max(pic.width, pic.height);
    return html`<div class="figure-block"><h3>Fourier-filtered region</h3><div class="row toggle" role="group" aria-label="Shown image">
        <button aria-pressed=${this.showFiltered ? 'false' : 'true'} @click=${() => (this.showFiltered = false)}>Original region</button>
        <button aria-pressed=${this.showFiltered ? 'true' : 'false'} @click=${() => (this.showFiltered = true)}>Fourier-filtered</button>
        <label title="Lay the filtered region over the micrograph in the viewer, at 70 % opacity"><input type="checkbox" .checked=${this.filterOverImage}
          @change=${(e: Event) => { this.filterOverImage = (e.target as HTMLInputElement).checked; }} /> over the micrograph</label>
      </div>
      <div class="figure"><canvas class="filtered" width=${pic.width} height=${pic.height} role="img"
        aria-label=${this.showFiltered ? 'The region Fourier-filtered to the selected spots' : 'The region as recorded'}
        data-w=${Math.round(pic.width * scale)} data-h=${Math.round(pic.height * scale)}></canvas></div></div>`;
  }

  private renderSpectrum() {
    const s = this.spectrum;
    const body = [];
    if (this.spectrumBusy) body.push(html`<p class="busy" role="status">Computing the power spectrum…</p>`);
    if (this.spectrumError) body.push(html`<p class="error" role="alert">${this.spectrumError}</p>`);
    if (!s && !this.spectrumBusy && !this.spectrumError) body.push(html`<p class="empty">Draw a region over the fringes to see its power spectrum and the d-spacing of each spot.</p>`);
    if (s) {
      const trimmed = s.width !== this.spectrumRect?.width || s.height !== this.spectrumRect?.height;
      body.push(this.renderSpotTable(s));
      body.push(html`<p class="note num">${s.width} × ${s.height} px transformed${trimmed ? ' (trimmed, centred, to a fast FFT size)' : ''}, ${this.windowKind === 'none' ? 'no window' : `${this.windowKind === 'hann' ? 'Hann' : 'Tukey'} window`}.</p>`);
      body.push(this.renderRings(s));
      body.push(this.renderFilterControls());
      body.push(html`<div class="row">
        <button @click=${() => this.saveSpectrum()} ?disabled=${!this.db} title="Keep the spots, rings, region, window, significance and calibration in the library">Save spectrum spots</button>
        ${this.savedSpectrum ? html`<span class="note" role="status">${this.savedSpectrum}</span>` : nothing}</div>`);
    }
    return html`<section aria-labelledby="h-spectrum"><h2 id="h-spectrum">Power spectrum of a region</h2>${this.renderSettings()}${body}</section>`;
  }

  /**
   * The figures (the main area when the panel is wide, below the controls otherwise): the power
   * spectrum, the Fourier-filtered region, the line profile and the radial average.
   */
  private renderStage() {
    const s = this.spectrum;
    const p = this.profile;
    const cal = this.image?.calibration ?? null;
    const spectrumParts = [];
    const profileParts = [];
    const parts = [];
    if (s) {
      spectrumParts.push(html`<div class="figure-block"><h3>Power spectrum of the region</h3>${this.renderSpectrumFigure(s)}
        <p class="note">Solid circles: spots; dashed: their Friedel mates. Click the spectrum (or focus it and use the arrow keys and Enter) to add a spot.</p></div>`);
      spectrumParts.push(this.renderFilterView());
    } else if (this.spectrumBusy) {
      spectrumParts.push(html`<p class="busy stage-wait" role="status">Computing the power spectrum…</p>`);
    }
    if (p && p.mean.length >= 2) {
      profileParts.push(html`<strata-plot class="profile-plot" .data=${profilePlot(p, cal, this.profileLine?.widthPx ?? 1)}
        height-px=${this.wide ? 260 : 190} file-stem=${this.fileStem()}></strata-plot>`);
    }
    if (s && s.radialFrequencyPerPx.length > 3 && this.secondaryFor === s) {
      spectrumParts.push(html`<strata-plot class="radial-plot" .data=${radialPlot(s, cal, 0.5 / this.zoom, this.coverageK)}
        height-px=${this.wide ? 240 : 170} file-stem=${this.fileStem()}></strata-plot>`);
    }
    parts.push(...(this.lastDrawn === 'profile' ? [...profileParts, ...spectrumParts] : [...spectrumParts, ...profileParts]));
    if (!parts.length) {
      parts.push(html`<div class="stage-empty"><p>The figures of a measurement appear here at full size.</p>
        <p><b>Draw region</b>: the power spectrum of a region over the fringes, with its spots and the radial average.</p>
        <p><b>Draw profile line</b>: the grey values along a line across the fringes, with the fringe extrema.</p></div>`);
    }
    return html`<div class="stage" aria-label="Figures">${parts}</div>`;
  }

  /** File-name stem of exports: the image's name without its extension. */
  private fileStem(): string {
    return (this.record?.fileName ?? 'periods').replace(/\.[^.]+$/, '').replace(/[^A-Za-z0-9._-]+/g, '_');
  }

  /** The plots of the tab's results, as the report draws them. */
  private currentPlots(): PlotData[] {
    const cal = this.image?.calibration ?? null;
    const out: PlotData[] = [];
    if (this.profile && this.profile.mean.length >= 2) out.push(profilePlot(this.profile, cal, this.profileLine?.widthPx ?? 1));
    if (this.spectrum && this.spectrum.radialFrequencyPerPx.length > 3) out.push(radialPlot(this.spectrum, cal, 0.5 / this.zoom, this.coverageK));
    return out;
  }

  /** Export of the tab's results (the profile and the region's spots) through the one export menu. */
  private renderExport() {
    const any = (this.profile && (this.profile.spectral || this.profile.realSpace)) || this.spectrum;
    if (!any || (this.spectrum && this.secondaryFor !== this.spectrum)) return nothing;
    return html`<section aria-labelledby="h-export"><h2 id="h-export">Export</h2>
      <strata-export-menu .records=${this.currentRecords()} .plots=${this.currentPlots()} .k=${this.coverageK}
        .fileName=${this.record?.fileName ?? ''} .compute=${this.compute} .session=${this.session}></strata-export-menu></section>`;
  }

  override disconnectedCallback(): void {
    super.disconnectedCallback();
    this.stageObserver?.disconnect();
    this.stageObserver = null;
  }

  /** Watches the figures column so the spectrum and the plots take its width. */
  private observeStage(): void {
    const stage = this.renderRoot.querySelector<HTMLElement>('.stage');
    if (!stage || (stage as unknown as { observed?: boolean }).observed) return;
    (stage as unknown as { observed?: boolean }).observed = true;
    this.stageObserver ??= new ResizeObserver((entries) => {
      for (const e of entries) {
        const w = Math.round(e.contentRect.width);
        const h = Math.round(e.contentRect.height);
        if (w > 0 && (Math.abs(w - this.stageWidthPx) > 1 || Math.abs(h - this.stageHeightPx) > 1)) {
          this.stageWidthPx = w;
          this.stageHeightPx = h;
        }
      }
    });
    this.stageObserver.observe(stage);
  }

  protected override updated(changed: PropertyValues<this>): void {
    this.observeStage();
    if (this.spectrum && this.secondaryFor !== this.spectrum && !this.secondaryPending) {
      // after the frame that shows the new spectrum's numbers, in a task of its own
      this.secondaryPending = true;
      requestAnimationFrame(() => setTimeout(() => {
        this.secondaryPending = false;
        this.secondaryFor = this.spectrum;
        this.requestUpdate();
      }, 0));
    }
    if (changed.has('lastDrawn') && changed.get('lastDrawn') !== undefined) {
      for (const el of this.renderRoot.querySelectorAll<HTMLElement>('.stage, .side')) el.scrollTop = 0;
    }
    this.syncViewerOverlay();
    if (this.timelineMark) {
      // the clicked spot's numbers (or its full budget) are in the table now: on the performance timeline
      const [mark, measure] = this.timelineMark;
      performance.mark(mark);
      performance.measure(measure, 'strata-spot-click', mark);
      this.timelineMark = null;
    }
    // Sizes and offsets go through the CSSOM (allowed by the page's content security policy, unlike style attributes).
    for (const el of this.renderRoot.querySelectorAll<HTMLElement>('[data-w]')) {
      const d = el.dataset;
      el.style.width = `${d.w}px`;
      el.style.height = `${d.h}px`;
      if (d.l !== undefined) el.style.left = `${d.l}px`;
      if (d.t !== undefined) el.style.top = `${d.t}px`;
    }
    const paint = (selector: string, pic: Picture | null | undefined) => {
      const canvas = this.renderRoot.querySelector<HTMLCanvasElement>(selector);
      if (!canvas || !pic) return;
      if ((canvas as unknown as { painted?: Uint8ClampedArray }).painted === pic.rgba) return;
      const ctx = canvas.getContext('2d');
      if (!ctx) return;
      ctx.putImageData(new ImageData(new Uint8ClampedArray(pic.rgba), pic.width, pic.height), 0, 0);
      (canvas as unknown as { painted?: Uint8ClampedArray }).painted = pic.rgba;
    };
    const sp = this.spectrum;
    const canvas = this.renderRoot.querySelector<HTMLCanvasElement>('canvas.spectrum');
    if (sp && canvas) {
      const key = `${this.zoom}`;
      const c = canvas as unknown as { painted?: Float32Array; paintedKey?: string };
      const b = this.spectrumBitmap;
      if (c.painted !== sp.picture.logPower || c.paintedKey !== key) {
        if (b && b.pictureId === sp.pictureId && b.zoom === this.zoom) {
          // the worker's picture: one draw, no pixel work on the page
          canvas.getContext('2d')?.drawImage(b.bitmap, 0, 0);
          c.painted = sp.picture.logPower;
          c.paintedKey = key;
        } else if (!this.workerSpectrumPictures || sp.pictureId === undefined) {
          const pic = spectrumPicture(sp.picture, this.zoom);
          canvas.getContext('2d')?.putImageData(new ImageData(new Uint8ClampedArray(pic.rgba), pic.width, pic.height), 0, 0);
          c.painted = sp.picture.logPower;
          c.paintedKey = key;
        }
      }
    }
    paint('canvas.filtered', this.filtered ? (this.showFiltered ? this.filtered.filtered : this.filtered.original) : null);
  }

  override render() {
    if (!this.image) {
      return html`<p class="empty">Open a micrograph to measure lattice-fringe and lamellar periods: a line profile across the fringes, or the power spectrum of a region.</p>`;
    }
    return html`<div class="side">${this.renderCalibration()}${this.renderTools()}${this.lastDrawn === 'profile' ? [this.renderProfile(), this.renderSpectrum()] : [this.renderSpectrum(), this.renderProfile()]}${this.renderExport()}</div>${this.renderStage()}`;
  }
}

customElements.define('strata-measure-panel', StrataMeasurePanel);

declare global {
  interface HTMLElementTagNameMap {
    'strata-measure-panel': StrataMeasurePanel;
  }
}
