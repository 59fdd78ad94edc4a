import { LitElement, css, html, nothing, type PropertyValues } from 'lit';
import { panels, type PanelEntry } from 'virtual:strata-panels';
import type { Calibration, GreyImage } from '../src/image/grey-image';
import {
  findImagesBySha256,
  getImage,
  openLibrary,
  putImage,
  requestPersistence,
  setImageCalibration,
  storageEstimate,
  type StorageEstimate,
} from '../src/store/library';
import type { ImageRecord } from '../src/store/records';
import { canRedo, canUndo, currentState, getHistory, newHistory, pushStep, putHistory, redoStep, undoStep, type ImageHistory, type WorkState } from '../src/store/history';
import './undo-control';
import type { LibraryDb } from '../src/store/schema';
import { ComputeClient } from './compute-client';
import type { DisplayLimits, GreyHistogram } from '../src/image/display';
import { VIEW_PICTURE_MAX_PX } from './compute-protocol';
import { controlStyles } from './styles';
import { registerServiceWorker } from './sw-update';
import { watchErrors, type ErrorLog } from './diagnostics-panel';
import './library';
import './viewer';
import type { LineDrawnDetail, OverlayShape, RectDrawnDetail, StrataViewer, ViewPicture, ViewPictureKey } from './viewer';
import { namesPowderProfile } from '../src/diffraction/profile-names';

/** One demo file as listed in demo/index.json. */
interface DemoEntry {
  file: string;
  title: string;
  description: string;
  kind: 'micrograph' | 'pattern';
}

/** A file a multi-file open could not read, and why. */
interface RefusedFile {
  fileName: string;
  reason: string;
}

interface Message {
  text: string;
  kind: 'info' | 'error' | 'busy';
}

/** A side-panel tab: the library, or a panel element loaded from its own module. */
interface Tab {
  id: string;
  label: string;
  /** The panel's custom element (defined once its module is loaded); none for the library. */
  tag?: string;
  /** The panel shows its figures in the main area beside the image (module export `panelWide`). */
  wide?: boolean;
}

/** Narrowest window, CSS px, in which a wide panel gets the main area beside the image. */
const WIDE_LAYOUT_MIN_PX = 1100;

/**
 * The text sizes (CSS px) and weights the shell and its panels draw with: in boxes, in SVG text
 * (the viewer's labels, the power spectrum's spot labels) and on a plot's canvas. Keep it in step
 * with the styles when a size is added.
 */
const TEXT_STRIKES: readonly { px: number; weight: 400 | 600; kind: 'box' | 'svg' | 'canvas' }[] = [
  ...[10, 11, 11.5, 12, 13].map((px) => ({ px, weight: 400 as const, kind: 'box' as const })),
  ...[11, 11.5, 12, 13, 14, 15, 16].map((px) => ({ px, weight: 600 as const, kind: 'box' as const })),
  { px: 12, weight: 400, kind: 'svg' }, { px: 12, weight: 400, kind: 'canvas' },
];

const ACCEPT = '.tif,.tiff,.png,.jpg,.jpeg,.mrc,.mrcs,image/tiff,image/png,image/jpeg,.cif,.xy,.xye,.dat,.asc';

/** Files that go to the diffraction panel rather than the viewer: structure files and powder patterns (by name, and a CIF by its content). */
function diffractionFileKind(fileName: string, text?: string): 'structure' | 'pattern' | null {
  const ext = fileName.toLowerCase().split('.').pop() ?? '';
  // a CIF that names a measured powder profile is a pattern, not a structure
  if (ext === 'cif') return text !== undefined && namesPowderProfile(text) ? 'pattern' : 'structure';
  if (ext === 'xy' || ext === 'xye' || ext === 'dat' || ext === 'asc') return 'pattern';
  return null;
}

function formatBytes(n: number): string {
  if (n < 1048576) return `${(n / 1024).toFixed(0)} kB`;
  if (n < 1073741824) return `${(n / 1048576).toFixed(1)} MB`;
  return `${(n / 1073741824).toFixed(1)} GB`;
}

function mimeFor(fileName: string): string {
  const ext = fileName.toLowerCase().split('.').pop() ?? '';
  return ({ tif: 'image/tiff', tiff: 'image/tiff', png: 'image/png', jpg: 'image/jpeg', jpeg: 'image/jpeg' } as Record<string, string>)[ext] ?? '';
}

/**
 * `<strata-app>`: the application shell. Header with file opening and storage use, a message
 * line, the viewer in the centre and tabbed side panels (the library and every measurement
 * panel present in the build).
 *
 * Side panels are the modules `components/*-panel.ts`, found at build time. Each is given the
 * properties `image` (GreyImage | null), `record` (ImageRecord | null), `db` (LibraryDb | null),
 * `compute` (ComputeClient), `session` (the id of the image's session in the compute worker, which
 * holds the image: send it with a region or a line, never pixels), `viewer` (the StrataViewer),
 * `line` (LineDrawnDetail | null) and `rect` (RectDrawnDetail | null), and may send the events `status-message` {text, kind},
 * `overlay-shapes` {shapes}, `calibration-changed` {calibration} and `library-changed`.
 * The diffraction panel (id `diffraction`) also receives an `open-pattern` event {fileName, text,
 * accepted} on its element when the user opens a pattern (a demo card, or an .xy/.xye/.dat/.asc
 * file), and `open-structure` {fileName, text, accepted} for a .cif structure file; it sets
 * `accepted` to true when it takes the file. A panel with `panelWide` exported gets the main area
 * beside the image (attribute `wide`); a panel may send `history-step` {label, state} and offer
 * `restoreState(state)` to take part in undo and redo.
 */
export class StrataApp extends LitElement {
  static override properties = {
    image: { state: true },
    record: { state: true },
    levels: { state: true },
    session: { state: true },
    histogram: { state: true },
    viewLimits: { state: true },
    viewPicture: { state: true },
    message: { state: true },
    storage: { state: true },
    demos: { state: true },
    tabs: { state: true },
    activeTab: { state: true },
    libraryRevision: { state: true },
    dragging: { state: true },
    shapes: { state: true },
    line: { state: true },
    rect: { state: true },
    roomy: { state: true },
    refused: { state: true },
    history: { state: true },
  };

  image: GreyImage | null = null;
  record: ImageRecord | null = null;
  levels: GreyImage[] = [];
  histogram: GreyHistogram | null = null;
  /** The viewer's default display limits, computed in the worker with the pyramid. */
  viewLimits: DisplayLimits | null = null;
  /** The viewer's latest display-ready picture from the worker (so the page stretches no pixels). */
  viewPicture: ViewPicture | null = null;
  /** False once the worker could not make a picture: the viewer then draws itself. */
  private workerPictures = true;
  /** The id of the open image's session in the compute worker (it holds the pixels panels measure on). */
  session: string | null = null;
  message: Message | null = null;
  storage: StorageEstimate | null = null;
  demos: DemoEntry[] = [];
  /** Every panel's tab is known from the build (virtual:strata-panels), before its module is loaded. */
  tabs: Tab[] = [...(panels as PanelEntry[]).map((p) => ({ id: p.id, label: p.label, tag: p.tag, wide: p.wide })), { id: 'library', label: 'Library' }];
  activeTab = 'library';
  libraryRevision = 0;
  dragging = false;
  /** Overlay shapes by the panel (tab id) that sent them; the viewer shows the active tab's. */
  shapes: Map<string, OverlayShape[]> = new Map();
  line: LineDrawnDetail | null = null;
  rect: RectDrawnDetail | null = null;
  /** Undo history of the image on screen (kept in the library with the image). */
  history: ImageHistory | null = null;
  /** True while a state from the history is being restored (no new steps are recorded). */
  private restoring = false;
  /** Files refused by the last open of several files, each with its reason (shown until dismissed). */
  refused: RefusedFile[] = [];
  private lastOpenError = '';
  /** The window is wide enough for a panel's figures beside the image. */
  roomy = globalThis.innerWidth >= WIDE_LAYOUT_MIN_PX;
  private readonly onResize = (): void => {
    this.roomy = globalThis.innerWidth >= WIDE_LAYOUT_MIN_PX;
    requestAnimationFrame(this.markTabOverflow);
  };

  private db: LibraryDb | null = null;
  private readonly compute = new ComputeClient();
  private warming: Promise<void> | null = null;

  static override styles = [
    controlStyles,
    css`
      :host { display: flex; flex-direction: column; height: 100vh; }
      header { display: flex; align-items: center; gap: 10px; padding: 6px 12px; background: var(--panel); border-bottom: 1px solid var(--line); }
      h1 { font-size: 15px; margin: 0; letter-spacing: 0.04em; font-weight: 600; }
      .tagline { color: var(--muted); font-size: 12px; }
      .spacer { flex: 1; }
      .storage { font-size: 12px; color: var(--muted); }
      /* one line, always the same height: a long message never moves the page (the whole text in its title) */
      .message { margin: 0; padding: 4px 12px; font-size: 13px; line-height: 20px; height: 29px; box-sizing: border-box; border-bottom: 1px solid var(--line); background: #141a20;
        white-space: nowrap; overflow: hidden; text-overflow: ellipsis; }
      .refused { display: flex; align-items: flex-start; gap: 10px; padding: 4px 12px; background: #2a1717; color: #ffd0d0; border-bottom: 1px solid var(--line); font-size: 13px; max-height: 30vh; overflow-y: auto; }
      .refused ul { margin: 0; padding-left: 18px; flex: 1; }
      .refused li + li { margin-top: 3px; }
      .message.error { color: #ffb4b4; background: #2a1717; }
      .message.busy { color: var(--accent-2); }
      .work { flex: 1; display: grid; grid-template-columns: minmax(0, 1fr) minmax(360px, 28%); min-height: 0; overflow: hidden; }
      /* a wide panel: its figures and its controls share the room beside the image */
      .work.wide { grid-template-columns: minmax(0, 1fr) max(960px, 58%); }
      /* a narrow window (a phone, a split screen): the image above, the panels under it, each the full width */
      @media (max-width: 760px) {
        .work, .work.wide { grid-template-columns: minmax(0, 1fr); grid-template-rows: minmax(320px, 55%) minmax(0, 1fr); }
        aside { border-left: 0; border-top: 1px solid var(--line); }
      }
      strata-viewer { min-height: 0; }
      .start { overflow-y: auto; padding: 28px 36px; border-right: 1px solid var(--line); }
      .start h2 { font-size: 16px; font-weight: 600; margin: 0 0 6px; }
      .start h2.later { margin-top: 24px; }
      .start p { color: var(--muted); margin: 0 0 16px; max-width: 60em; line-height: 1.5; }
      .drop { border: 1px dashed var(--line); border-radius: 4px; padding: 22px; text-align: center; color: var(--muted); margin-bottom: 24px; }
      .drop.on, :host(.dragging) .drop { border-color: var(--accent); color: var(--text); }
      .demos { display: grid; grid-template-columns: repeat(auto-fill, minmax(250px, 1fr)); gap: 10px; }
      .demo { text-align: left; padding: 10px 12px; display: flex; flex-direction: column; gap: 4px; min-height: 76px; }
      .demo b { font-size: 13px; }
      .demo span { color: var(--muted); font-size: 12px; line-height: 1.4; }
      .demo .kind { color: var(--accent-2); font-size: 11px; text-transform: uppercase; letter-spacing: 0.06em; }
      aside { display: flex; flex-direction: column; min-height: 0; min-width: 0; background: var(--panel); border-left: 1px solid var(--line); }
      /* one row at any width: in the narrow column the tabs scroll sideways (the selected one is kept in view) */
      [role='tablist'] { display: flex; flex-wrap: nowrap; overflow-x: auto; overflow-y: hidden; scrollbar-width: thin; border-bottom: 1px solid var(--line); flex: none; }
      /* more tabs past an edge: that edge fades out */
      [role='tablist'].more-right { mask-image: linear-gradient(to right, #000 calc(100% - 28px), transparent); }
      [role='tablist'].more-left { mask-image: linear-gradient(to left, #000 calc(100% - 28px), transparent); }
      [role='tablist'].more-left.more-right { mask-image: linear-gradient(to right, transparent, #000 28px, #000 calc(100% - 28px), transparent); }
      [role='tab'] { flex: none; white-space: nowrap; border: 0; border-radius: 0; background: transparent; padding: 6px 9px; border-bottom: 2px solid transparent; color: var(--muted); }
      [role='tab'][aria-selected='true'] { color: var(--text); border-bottom-color: var(--accent); }
      [role='tabpanel'] { flex: 1; min-height: 0; display: flex; flex-direction: column; overflow-y: auto; }
      [role='tabpanel'][hidden] { display: none; }
      input[type='file'] { display: none; }
      .text-warmup { position: absolute; left: -10000px; top: 0; width: 1px; height: 1px; overflow: hidden; visibility: hidden; white-space: nowrap; contain: strict; }
    `,
  ];

  /** Set once the first update has been given a task of its own. */
  private firstUpdateScheduled = false;
  /**
   * False until the task after the first render: the side column's tab row and library are drawn
   * then, so the first render (header, message line, start screen) and theirs are two tasks, not
   * one of 35–70 ms on a busy machine.
   */
  private sideReady = false;

  /**
   * The first render waits for a task of its own instead of running in the one that evaluated the
   * app's modules (together 50–65 ms on a busy machine); later updates are lit's usual microtask.
   * This is lit's hook for scheduling updates differently.
   */
  protected override async scheduleUpdate(): Promise<void> {
    if (!this.firstUpdateScheduled) {
      this.firstUpdateScheduled = true;
      await new Promise((r) => setTimeout(r, 0));
    }
    super.scheduleUpdate();
  }

  override connectedCallback(): void {
    super.connectedCallback();
    void registerServiceWorker('sw.js');
    globalThis.addEventListener('resize', this.onResize);
    document.addEventListener('keydown', this.onKeyDown);
    this.errorLog ??= watchErrors(() => this.db);
    this.addEventListener('dragover', this.onDragOver);
    this.addEventListener('dragleave', this.onDragLeave);
    this.addEventListener('drop', this.onDrop);
    void this.start();
  }

  override disconnectedCallback(): void {
    super.disconnectedCallback();
    globalThis.removeEventListener('resize', this.onResize);
    document.removeEventListener('keydown', this.onKeyDown);
  }

  /** True when the active panel shows its figures beside the image now. */
  private wideLayout(): boolean {
    return this.roomy && !!this.image && !!this.tabs.find((t) => t.id === this.activeTab)?.wide;
  }

  private async start(): Promise<void> {
    try {
      this.db = await openLibrary({ onVersionChange: () => this.say('A newer Stratameter was opened in another tab: reload this page.', 'error') });
      this.libraryRevision++;
    } catch (e) {
      this.say(`The local library cannot be opened (${(e as Error).message}); images will not be kept.`, 'error');
    }
    void requestPersistence().then(() => this.refreshStorage()).catch(() => undefined);
    void this.loadDemos();
    this.preloadPanels();
    this.warmTextStrikes();
  }

  /**
   * Lays out a word at each text size and weight the panels use, one size per idle period, while
   * nobody is waiting. The first use of a font size costs Chromium a synchronous round trip to its
   * browser process for the size's rendering settings (2–26 ms each, measured in a performance
   * trace on Linux); paid in the first layout of a panel, a dozen of them made one task of 40–60 ms
   * when an image was opened or a spectrum first shown.
   */
  private warmTextStrikes(): void {
    const idle = (f: () => void) => ('requestIdleCallback' in globalThis ? requestIdleCallback(() => f(), { timeout: 2000 }) : setTimeout(f, 50));
    const probe = document.createElement('div');
    probe.className = 'text-warmup';
    probe.setAttribute('aria-hidden', 'true');
    let i = 0;
    const next = (): void => {
      const strike = TEXT_STRIKES[i++];
      if (!strike) {
        probe.remove();
        return;
      }
      if (!probe.isConnected) this.renderRoot.appendChild(probe);
      const word = 'd 0.1234 ± 5678 nm · 2θ°';
      if (strike.kind === 'canvas') {
        const ctx = document.createElement('canvas').getContext('2d');
        if (ctx) {
          ctx.font = `${strike.px}px system-ui, sans-serif`;
          ctx.fillText(word, 0, 10);
        }
      } else {
        const el = strike.kind === 'svg' ? document.createElementNS('http://www.w3.org/2000/svg', 'svg') : document.createElement('span');
        if (strike.kind === 'svg') {
          const text = document.createElementNS('http://www.w3.org/2000/svg', 'text');
          text.setAttribute('font-size', String(strike.px));
          text.setAttribute('y', '12');
          text.textContent = word;
          el.appendChild(text);
        } else {
          el.textContent = word;
          (el as HTMLElement).style.fontSize = `${strike.px}px`;
          (el as HTMLElement).style.fontWeight = String(strike.weight);
        }
        probe.appendChild(el);
        void probe.offsetWidth; // lay it out now, inside this idle period
      }
      idle(next);
    };
    idle(next);
  }

  private async loadDemos(): Promise<void> {
    try {
      const res = await fetch('demo/index.json');
      if (!res.ok) return;
      const list = (await res.json()) as DemoEntry[];
      this.demos = Array.isArray(list) ? list.filter((d) => d && typeof d.file === 'string') : [];
    } catch {
      this.demos = [];
    }
  }

  /** Panels whose module is loaded (their element is made when first rendered). */
  private readonly loadedPanels = new Set<string>();
  private readonly panelLoads = new Map<string, Promise<boolean>>();

  /**
   * Loads a panel's module (a chunk of its own) once; its element is then made and handed the
   * current state and, with an image open, its state from the undo history.
   * @returns false when the module could not be loaded (its tab is then removed)
   */
  private ensurePanel(id: string): Promise<boolean> {
    const entry = (panels as PanelEntry[]).find((p) => p.id === id);
    if (!entry) return Promise.resolve(id === 'library');
    let loading = this.panelLoads.get(id);
    if (!loading) {
      loading = entry.load().then(
        async () => {
          this.loadedPanels.add(id);
          this.requestUpdate();
          await this.updateComplete;
          const el = this.panelElements.get(id) as (HTMLElement & { restoreState?: (s: unknown) => void }) | undefined;
          if (this.history && typeof el?.restoreState === 'function') el.restoreState(currentState(this.history).panels[id] ?? null);
          return true;
        },
        (e: unknown) => {
          console.warn(`panel ${id} not loaded`, e);
          this.tabs = this.tabs.filter((t) => t.id !== id);
          if (this.activeTab === id) {
            this.activeTab = 'library';
            this.say(`The ${entry.label} panel could not be loaded (${(e as Error).message}).`, 'error');
          }
          return false;
        },
      );
      this.panelLoads.set(id, loading);
    }
    return loading;
  }

  /**
   * Loads the panels' modules after start-up, one per idle period (the shared plot module first,
   * as a step of its own), so that starting the app evaluates only the shell, the viewer and the
   * library, and no module graph of a panel adds to that task; a tab opened before its turn loads
   * its panel at once. Sets the attribute `data-panels-loaded` on the shell when all are loaded.
   */
  private preloadPanels(): void {
    const idle = (f: () => void) => ('requestIdleCallback' in globalThis ? requestIdleCallback(() => f(), { timeout: 1000 }) : setTimeout(f, 50));
    const steps: (() => Promise<unknown>)[] = [() => import('./plot'), ...(panels as PanelEntry[]).map((p) => () => this.ensurePanel(p.id))];
    const next = (): void => {
      const step = steps.shift();
      if (!step) {
        this.dataset.panelsLoaded = '';
        return;
      }
      void step().catch(() => undefined).then(() => idle(next));
    };
    idle(next);
  }

  private async refreshStorage(): Promise<void> {
    this.storage = await storageEstimate().catch(() => null);
  }

  /** Errors of the page and error messages shown, logged in the local diagnostics store. */
  private errorLog: ErrorLog | null = null;

  /** Shows a message on the message line (errors stay until the next message). */
  say(text: string, kind: Message['kind'] = 'info'): void {
    this.message = { text, kind };
    if (kind === 'error') this.errorLog?.log({ kind: 'status', message: text, context: this.record?.fileName ?? '' });
  }

  private onDragOver = (e: DragEvent): void => {
    if (!e.dataTransfer?.types.includes('Files')) return;
    e.preventDefault();
    this.dragging = true;
  };

  private onDragLeave = (e: DragEvent): void => {
    if (e.target === this) this.dragging = false;
  };

  private onDrop = (e: DragEvent): void => {
    e.preventDefault();
    this.dragging = false;
    const files = [...(e.dataTransfer?.files ?? [])];
    void this.openFiles(files);
  };

  private async openFiles(files: File[]): Promise<void> {
    let last: ImageRecord | null = null;
    const refused: RefusedFile[] = [];
    for (const f of files) {
      this.lastOpenError = '';
      if (diffractionFileKind(f.name)) {
        const text = await f.text();
        const reason = await this.handToDiffraction(diffractionFileKind(f.name, text)!, f.name, text);
        if (reason) refused.push({ fileName: f.name, reason });
        continue;
      }
      // the File itself goes to the worker (structured-cloned, not read here)
      const rec = await this.openFile(f, f.name, f.type || mimeFor(f.name));
      if (rec) last = rec;
      else if (this.lastOpenError) refused.push({ fileName: f.name, reason: this.lastOpenError });
    }
    this.refused = files.length > 1 ? refused : [];
    if (files.length > 1) {
      const opened = files.length - refused.length;
      const shown = last ? ` showing ${last.fileName}; all opened are in the library.` : '';
      this.say(`Opened ${opened} of ${files.length} files;${shown}${refused.length ? ` ${refused.length} refused: see the list below.` : ''}`, refused.length ? 'error' : 'info');
    }
  }

  private async openDemo(d: DemoEntry): Promise<void> {
    try {
      this.say(`Reading ${d.title}…`, 'busy');
      const res = await fetch(`demo/${d.file}`);
      if (!res.ok) throw new Error(`demo file ${d.file} is missing (${res.status})`);
      await this.openFile(await res.blob(), d.file, mimeFor(d.file));
    } catch (e) {
      this.say(`Could not open the demo ${d.title}: ${(e as Error).message}`, 'error');
    }
  }

  /**
   * Hands a structure file (`open-structure`) or a powder pattern (`open-pattern`) to the
   * diffraction panel as an event {fileName, text, accepted: false} on its element and shows that
   * panel; the panel sets `accepted` to true when it takes the file.
   * @returns null when taken, else why not (for the list of refused files)
   */
  private async handToDiffraction(kind: 'structure' | 'pattern', fileName: string, text: string): Promise<string | null> {
    const tab = this.tabs.find((t) => t.id === 'diffraction');
    if (!tab) return 'no diffraction panel in this build';
    this.activeTab = 'diffraction';
    if (!(await this.ensurePanel('diffraction'))) return 'the diffraction panel could not be loaded';
    await this.updateComplete;
    const detail = { fileName, text, accepted: false };
    this.panelElements.get('diffraction')?.dispatchEvent(new CustomEvent(kind === 'structure' ? 'open-structure' : 'open-pattern', { detail }));
    if (!detail.accepted) {
      const why = kind === 'structure' ? 'the diffraction panel of this version does not take structure files yet (the command line does)' : 'the diffraction panel did not take the pattern';
      this.say(`${fileName}: ${why}.`, 'error');
      return why;
    }
    this.say(`${fileName}: handed to the ${tab.label} panel as a ${kind === 'structure' ? 'structure file' : 'powder pattern'}.`);
    return null;
  }

  /**
   * Hands a demo pattern to the diffraction panel as an `open-pattern` event {fileName, text}
   * dispatched on the panel's element, and shows that panel.
   */
  private async openDemoPattern(d: DemoEntry): Promise<void> {
    try {
      const res = await fetch(`demo/${d.file}`);
      if (!res.ok) throw new Error(`demo file ${d.file} is missing (${res.status})`);
      const why = await this.handToDiffraction('pattern', d.file, await res.text());
      if (why) throw new Error(why);
    } catch (e) {
      this.say(`Could not open the demo ${d.title}: ${(e as Error).message}`, 'error');
    }
  }

  /**
   * Decodes in the worker, shows the image and keeps it in the library (once per file content).
   * A Blob (a File, the library's stored copy, a fetched demo) goes to the worker as it is, which
   * reads a TIFF from it a strip at a time; the page reads the file's bytes only to keep a new
   * image in the library (its SHA-256 and stored copy), after the worker has decoded it.
   */
  private async openFile(file: Blob | Uint8Array, fileName: string, mimeType: string, existing?: ImageRecord): Promise<ImageRecord | null> {
    const size = file instanceof Blob ? file.size : file.byteLength;
    this.say(`Reading ${fileName} (${formatBytes(size)})…`, 'busy');
    try {
      let sent: Blob | Uint8Array = file;
      let transfer: Transferable[] = [];
      if (file instanceof Uint8Array) {
        const copy = file.slice();
        sent = copy;
        transfer = [copy.buffer];
      }
      const { sessionId, image, levels, histogram, limits, thumbnail, sha256Hex } = await this.compute.call('openImage', { file: sent, fileName }, transfer);
      let record = existing ?? null;
      let notKept = '';
      if (!record && this.db) {
        try {
          // the worker hashed the file; a Blob is stored as it is, never read on the page
          const [same] = await findImagesBySha256(this.db, sha256Hex);
          const kept = file instanceof Blob ? { file, sha256Hex } : { bytes: file, sha256Hex };
          record = same ?? (await putImage(this.db, { ...kept, fileName, image, mimeType, thumbnail }));
          this.libraryRevision++;
        } catch (e) {
          // The image is still shown; only keeping it failed (e.g. StorageFullError).
          notKept = ` Not kept in the library: ${(e as Error).message}`;
        }
        void this.refreshStorage();
      }
      // the library keeps the calibration last set for this image (the file's own, or one set since):
      // the page's copy and the worker's session both take it
      const stored = record?.calibration ?? null;
      const takeStored = stored !== null && JSON.stringify(stored) !== JSON.stringify(image.calibration);
      if (takeStored) image.calibration = stored;
      // From the start screen, go straight to measuring: the first panel after the library.
      if (!this.image && this.activeTab === 'library' && this.tabs.length > 1) this.activeTab = this.tabs[0].id;
      this.levels = levels;
      this.histogram = histogram;
      this.viewLimits = limits;
      this.dropViewPicture(null);
      this.closeSession();
      this.session = sessionId;
      if (takeStored) await this.compute.call('recalibrate', { sessionId, calibration: stored });
      this.image = image;
      this.record = record;
      this.shapes = new Map();
      this.line = null;
      this.rect = null;
      this.history = null;
      void this.startHistory(record, image.calibration);
      // The measuring engine (opencv.js, about 11 MB) starts in the worker while the user looks.
      this.warming ??= this.compute.call('warmUp', {}).then(
        (r) => { this.dataset.engine = r.opencvVersion; },
        (e) => { this.warming = null; console.warn('measuring engine not loaded', e); },
      );
      const notes = image.warnings.length ? ` Note: ${image.warnings.join(' ')}` : '';
      const cal = image.calibration ? `${image.calibration.nmPerPx.toPrecision(4)} nm/px (${image.calibration.source})` : 'no pixel size: lengths are in pixels until you calibrate';
      this.say(`${fileName}: ${image.width} × ${image.height} px, ${image.bitDepth}-bit, ${cal}.${record && !existing ? ' Kept in the library.' : ''}${notes}${notKept}`,
        notKept ? 'error' : 'info');
      return record;
    } catch (e) {
      this.lastOpenError = (e as Error).message || `Could not read ${fileName}.`;
      this.say(this.lastOpenError, 'error');
      return null;
    }
  }

  private async openStored(id: string): Promise<void> {
    if (!this.db) return;
    const rec = await getImage(this.db, id);
    if (!rec) {
      this.say('That image is no longer in the library.', 'error');
      this.libraryRevision++;
      return;
    }
    // the library keeps the original file as a Blob: the worker reads it where it lies
    await this.openFile(rec.file, rec.fileName, rec.mimeType, rec);
  }

  /** Ends the worker's session of the image on screen (its pixels and cached spectra are freed). */
  /** Answers the viewer's `picture-needed`: the level stretched in the worker, as an ImageBitmap. */
  private async onPictureNeeded(key: ViewPictureKey): Promise<void> {
    const sessionId = this.session;
    if (!sessionId) return;
    try {
      const picture = await this.compute.call('viewPicture', { sessionId, ...key });
      if (this.session !== sessionId) picture.bitmap.close();
      else this.dropViewPicture(picture);
    } catch (e) {
      if (this.session !== sessionId) return;
      // the viewer draws the image itself from now on (slower, but it shows)
      this.workerPictures = false;
      this.requestUpdate();
      console.warn('the compute worker made no view picture', e);
    }
  }

  /** Replaces the viewer's picture, closing the previous bitmap once the viewer no longer holds it. */
  private dropViewPicture(next: ViewPicture | null): void {
    const old = this.viewPicture;
    this.viewPicture = next;
    if (old) void this.updateComplete.then(() => old.bitmap.close());
  }

  private closeSession(): void {
    if (this.session) void this.compute.call('closeImage', { sessionId: this.session }).catch(() => undefined);
    this.session = null;
  }

  private async onCalibrationChanged(calibration: Calibration | null): Promise<void> {
    if (!this.image) return;
    this.image = { ...this.image, calibration };
    if (!this.restoring) {
      this.recordStep(calibration ? `calibration ${calibration.nmPerPx.toPrecision(4)} nm/px (${calibration.source})` : 'calibration removed', (st) => ({ ...st, calibration }));
    }
    // the worker's records take the new calibration too; nothing is measured again
    if (this.session) void this.compute.call('recalibrate', { sessionId: this.session, calibration }).catch((e) => this.say((e as Error).message, 'error'));
    if (this.db && this.record) {
      try {
        const { reexpressed, ...record } = await setImageCalibration(this.db, this.record.id, calibration);
        this.record = record;
        this.libraryRevision++;
        if (reexpressed > 0) this.say(`${reexpressed} stored measurement${reexpressed === 1 ? '' : 's'} of this image re-expressed with the new calibration (nothing measured again; each record notes the change)`, 'info');
      } catch (e) {
        this.say((e as Error).message, 'error');
      }
    }
  }

  private onPanelEvent = (e: Event): void => {
    const detail = (e as CustomEvent).detail;
    switch (e.type) {
      case 'status-message': this.say(String(detail?.text ?? ''), detail?.kind === 'error' ? 'error' : 'info'); break;
      case 'overlay-shapes': {
        // each panel keeps its own overlay, so a panel working in the background (the Periods
        // panel analysing a line drawn for the Sheets panel) never replaces what the user looks at
        const tab = (e.target as HTMLElement | null)?.closest?.('[role="tabpanel"]')?.id.replace(/^panel-/, '') ?? this.activeTab;
        this.shapes = new Map(this.shapes).set(tab, Array.isArray(detail?.shapes) ? detail.shapes : []);
        break;
      }
      case 'calibration-changed': void this.onCalibrationChanged(detail?.calibration ?? null); break;
      case 'library-changed': this.libraryRevision++; void this.refreshStorage(); break;
      case 'open-image': void this.openStored(String(detail?.id)); break;
      case 'history-step': {
        const id = (e.target as HTMLElement | null)?.dataset?.panel;
        if (id && !this.restoring) this.recordStep(String(detail?.label ?? 'change'), (st) => ({ ...st, panels: { ...st.panels, [id]: detail?.state ?? null } }));
        break;
      }
    }
  };

  // ---------------------------------------------------------------- undo and redo

  /** Starts the image's history: the stored one (its current state restored), or a new one. */
  private async startHistory(record: ImageRecord | null, calibration: Calibration | null): Promise<void> {
    const fresh = (id: string) => newHistory(id, { calibration, panels: {} });
    if (!record || !this.db) {
      this.history = fresh('unsaved');
      return;
    }
    let h: ImageHistory | null = null;
    try {
      h = await getHistory(this.db, record.id);
    } catch {
      h = null;
    }
    if (this.record?.id !== record.id) return; // another image was opened meanwhile
    if (!h) {
      this.history = fresh(record.id);
      this.saveHistory();
      return;
    }
    this.history = h;
    await this.updateComplete;
    this.restorePanels(currentState(h));
  }

  /** Records a step: the state after it is `change` of the current one. */
  private recordStep(label: string, change: (state: WorkState) => WorkState): void {
    const h = this.history;
    if (!h) return;
    this.history = pushStep(h, label, change(currentState(h)));
    this.saveHistory();
  }

  /**
   * Keeps the history in the library, in a task of its own after the change is drawn (storing
   * clones every step on this thread: 29 ms after a sheet search in a trace); steps of one task
   * are kept together.
   */
  private saveHistory(): void {
    const h = this.history;
    if (!h || !this.db || h.imageId === 'unsaved') return;
    const db = this.db;
    const pending = this.historyToSave;
    this.historyToSave = h;
    // a step of another image waiting to be kept is kept first
    if (pending && pending.imageId !== h.imageId) void this.putHistoryNow(db, pending);
    if (pending) return;
    setTimeout(() => {
      const last = this.historyToSave;
      this.historyToSave = null;
      if (last) void this.putHistoryNow(db, last);
    }, 0);
  }

  private historyToSave: ImageHistory | null = null;

  private async putHistoryNow(db: NonNullable<StrataApp['db']>, h: ImageHistory): Promise<void> {
    await putHistory(db, h).catch((e) => this.say(`The undo history could not be kept: ${(e as Error).message}`, 'error'));
  }

  /** Hands each panel that keeps a state its state from the history (null: none recorded). */
  private restorePanels(state: WorkState): void {
    for (const [id, el] of this.panelElements) {
      const p = el as HTMLElement & { restoreState?: (s: unknown) => void };
      if (typeof p.restoreState === 'function') p.restoreState(state.panels[id] ?? null);
    }
  }

  /** Undo (-1) or redo (+1): moves along the history and restores the state there. */
  private async moveInHistory(direction: -1 | 1): Promise<void> {
    const h = this.history;
    if (!h) return;
    const moved = direction < 0 ? undoStep(h) : redoStep(h);
    if (!moved) return;
    const label = 'undone' in moved ? `Undone: ${moved.undone}.` : `Redone: ${moved.redone}.`;
    this.history = moved.history;
    this.saveHistory();
    const state = currentState(moved.history);
    this.restoring = true;
    try {
      if (JSON.stringify(state.calibration) !== JSON.stringify(this.image?.calibration ?? null)) await this.onCalibrationChanged(state.calibration);
      await this.updateComplete;
      this.restorePanels(state);
    } finally {
      this.restoring = false;
    }
    this.say(label);
  }

  private readonly onKeyDown = (e: KeyboardEvent): void => {
    if (!(e.ctrlKey || e.metaKey) || e.altKey) return;
    const key = e.key.toLowerCase();
    if (key !== 'z' && key !== 'y') return;
    const target = e.composedPath()[0] as HTMLElement | undefined;
    // text fields keep their own undo
    if (target && (target.tagName === 'INPUT' || target.tagName === 'TEXTAREA' || target.isContentEditable)) return;
    if (!this.image) return;
    e.preventDefault();
    void this.moveInHistory(key === 'y' || e.shiftKey ? 1 : -1);
  };

  protected override firstUpdated(): void {
    setTimeout(() => {
      this.sideReady = true;
      this.requestUpdate();
      void this.updateComplete.then(() => this.keepSelectedTabInView());
    }, 0);
    const aside = this.renderRoot.querySelector('aside');
    for (const t of ['status-message', 'overlay-shapes', 'calibration-changed', 'library-changed', 'open-image', 'history-step']) {
      aside?.addEventListener(t, this.onPanelEvent);
      if (t === 'status-message') this.renderRoot.querySelector('.work')?.addEventListener(t, this.onPanelEvent);
    }
  }

  private viewer(): StrataViewer | null {
    return this.renderRoot.querySelector('strata-viewer');
  }

  /** Hidden panels still waiting for the current state (handed over one per task, after the visible one). */
  private readonly staleHidden = new Set<HTMLElement>();
  private handoffTimer: ReturnType<typeof setTimeout> | null = null;

  /** Hands one panel the app's current state. */
  private handOver(el: HTMLElement): void {
    Object.assign(el, { image: this.image, record: this.record, db: this.db, compute: this.compute, session: this.session, viewer: this.viewer(), line: this.line, rect: this.rect });
    // a wide panel lays its figures out beside the image only while the layout gives it the room
    if (this.tabs.find((t) => t.id === el.dataset.panel)?.wide) el.toggleAttribute('wide', this.wideLayout() && el.dataset.panel === this.activeTab);
  }

  /** Hands the next hidden panel the current state, each in a task of its own, until none is left. */
  private readonly handOverNextHidden = (): void => {
    this.handoffTimer = null;
    const el = this.staleHidden.values().next().value;
    if (!el) return;
    this.staleHidden.delete(el);
    this.handOver(el);
    if (this.staleHidden.size) this.handoffTimer = setTimeout(this.handOverNextHidden, 0);
  };

  protected override updated(changed: PropertyValues<this>): void {
    if (changed.has('activeTab') || changed.has('tabs') || changed.has('image') || changed.has('roomy')) this.keepSelectedTabInView();
    // a tab opened before its panel's turn to load while idle loads it now
    if (changed.has('activeTab')) void this.ensurePanel(this.activeTab);
    // Panels are plain custom elements of other modules: hand them the current state. The visible
    // panel gets it now; each hidden panel re-renders later in a task of its own, so opening an
    // image does not render every panel in one long task (a panel shown gets the state at once).
    for (const el of this.renderRoot.querySelectorAll<HTMLElement>('[data-panel]')) {
      if (el.dataset.panel === this.activeTab) {
        this.staleHidden.delete(el);
        this.handOver(el);
      } else this.staleHidden.add(el);
    }
    if (this.staleHidden.size && this.handoffTimer === null) this.handoffTimer = setTimeout(this.handOverNextHidden, 0);
  }

  /** Scrolls the tab row (one row; it scrolls sideways in the narrow column) so the selected tab is whole on screen. */
  private keepSelectedTabInView(): void {
    const list = this.renderRoot.querySelector<HTMLElement>("[role='tablist']");
    const tab = list?.querySelector<HTMLElement>("[role='tab'][aria-selected='true']");
    if (!list || !tab) return;
    if (list.scrollWidth > list.clientWidth) {
      const left = tab.offsetLeft - list.offsetLeft;
      if (left < list.scrollLeft + 28) list.scrollLeft = left - 28;
      else if (left + tab.offsetWidth > list.scrollLeft + list.clientWidth - 28) list.scrollLeft = left + tab.offsetWidth - list.clientWidth + 28;
    }
    this.markTabOverflow();
  }

  /** Marks the edges of the tab row past which more tabs lie (they fade out there). */
  private readonly markTabOverflow = (): void => {
    const list = this.renderRoot.querySelector<HTMLElement>("[role='tablist']");
    if (!list) return;
    list.classList.toggle('more-left', list.scrollLeft > 1);
    list.classList.toggle('more-right', list.scrollLeft + list.clientWidth < list.scrollWidth - 1);
  };

  private onTabKey(e: KeyboardEvent): void {
    const i = this.tabs.findIndex((t) => t.id === this.activeTab);
    let next = i;
    if (e.key === 'ArrowRight') next = (i + 1) % this.tabs.length;
    else if (e.key === 'ArrowLeft') next = (i - 1 + this.tabs.length) % this.tabs.length;
    else return;
    e.preventDefault();
    this.activeTab = this.tabs[next].id;
    void this.updateComplete.then(() => this.renderRoot.querySelector<HTMLElement>(`[role='tab'][aria-selected='true']`)?.focus());
  }

  private renderStart() {
    const micrographs = this.demos.filter((d) => d.kind !== 'pattern');
    const diffractionTab = this.tabs.find((t) => t.id === 'diffraction');
    const patterns = diffractionTab ? this.demos.filter((d) => d.kind === 'pattern') : [];
    return html`<section class="start" aria-label="Start">
      <h2>Open a micrograph</h2>
      <p>TEM and STEM images as TIFF (8, 16 or 32-bit), PNG, JPEG or MRC. The pixel size is read from the file where it is stored;
        otherwise calibrate from the scale bar, a lattice spacing of a known standard, or an instrument profile.
        Powder patterns (.xy, .xye, .dat, .asc, or a .cif holding a measured profile) and structure files (.cif) open in the diffraction panel.
        Everything stays in this browser and works without a network.</p>
      <div class=${this.dragging ? 'drop on' : 'drop'}>
        Drop image files here, or <button @click=${() => this.renderRoot.querySelector<HTMLInputElement>('input.open')?.click()}>choose files…</button>
      </div>
      ${micrographs.length
        ? html`<h2>Demo images</h2>
            <p>Synthetic micrographs of layered materials with known periods, to try the tools on.</p>
            <div class="demos">${micrographs.map((d) => html`<button class="demo" @click=${() => this.openDemo(d)}>
              <span class="kind">${d.kind}</span><b>${d.title}</b><span>${d.description}</span></button>`)}</div>`
        : nothing}
      ${patterns.length
        ? html`<h2 class="later">Demo diffraction patterns</h2>
            <p>Open in the ${diffractionTab!.label} panel, to set against the periods measured in the micrographs.</p>
            <div class="demos">${patterns.map((d) => html`<button class="demo" @click=${() => this.openDemoPattern(d)}>
              <span class="kind">${d.kind}</span><b>${d.title}</b><span>${d.description}</span></button>`)}</div>`
        : nothing}
    </section>`;
  }

  private renderStorage() {
    const s = this.storage;
    if (!s) return nothing;
    const used = formatBytes(s.usageBytes);
    const quota = s.quotaBytes ? formatBytes(s.quotaBytes) : '?';
    return html`<span class="storage num" title=${s.persisted ? 'The browser keeps this data under storage pressure' : 'The browser may clear this data when the disk is short of space; export the library to keep a copy'}>
      Local storage ${used} of ${quota}${s.persisted ? ' · kept' : ' · may be cleared'}</span>`;
  }

  override render() {
    const m = this.message;
    return html`
      <header>
        <h1>Stratameter</h1>
        <span class="tagline">lattice fringes · sheet thickness · diffraction</span>
        <button @click=${() => this.renderRoot.querySelector<HTMLInputElement>('input.open')?.click()} title="Open TEM/STEM images (TIFF, PNG, JPEG, MRC)">Open images…</button>
        <input class="open" type="file" multiple accept=${ACCEPT}
          @change=${(e: Event) => { const i = e.target as HTMLInputElement; const files = [...(i.files ?? [])]; i.value = ''; void this.openFiles(files); }}>
        ${this.image ? html`<button @click=${() => { this.closeSession(); this.image = null; this.record = null; this.message = null; }} title="Back to the start screen">Close image</button>` : nothing}
        ${this.image ? html`<strata-undo-control .undoLabel=${canUndo(this.history) ? this.history!.steps[this.history!.index].label : ''}
          .redoLabel=${canRedo(this.history) ? this.history!.steps[this.history!.index + 1].label : ''}
          @undo=${() => void this.moveInHistory(-1)} @redo=${() => void this.moveInHistory(1)}></strata-undo-control>` : nothing}
        <span class="spacer"></span>
        ${this.renderStorage()}
      </header>
      <p class="message ${m?.kind ?? ''}" role=${m?.kind === 'error' ? 'alert' : 'status'} title=${m?.text ?? ''}>${m?.text ?? ''}</p>
      ${this.refused.length
        ? html`<div class="refused" role="region" aria-label="Files not opened">
            <ul>${this.refused.map((r) => html`<li><b>${r.fileName}</b>: ${r.reason}</li>`)}</ul>
            <button @click=${() => (this.refused = [])} aria-label="Dismiss the list of files not opened">Dismiss</button></div>`
        : nothing}
      <div class=${this.wideLayout() ? 'work wide' : 'work'}>
        ${this.image
          ? html`<strata-viewer .image=${this.image} .levels=${this.levels} .histogram=${this.histogram} .limits=${this.viewLimits}
              .picture=${this.viewPicture} .maxPicturePx=${this.workerPictures ? VIEW_PICTURE_MAX_PX : 0} .shapes=${this.shapes.get(this.activeTab) ?? []}
              @picture-needed=${(e: CustomEvent<ViewPictureKey>) => void this.onPictureNeeded(e.detail)}
              @line-drawn=${(e: CustomEvent<LineDrawnDetail>) => (this.line = e.detail)}
              @rect-drawn=${(e: CustomEvent<RectDrawnDetail>) => (this.rect = e.detail)}></strata-viewer>`
          : this.renderStart()}
        <aside>${this.sideReady ? this.renderSide() : nothing}</aside>
      </div>
    `;
  }

  /** The side column: the tab row and the tab panels (the library and every panel whose module is loaded). */
  private renderSide() {
    return html`
      <div role="tablist" aria-label="Panels" @keydown=${this.onTabKey} @scroll=${this.markTabOverflow}>
        ${this.tabs.map((t) => html`<button role="tab" id=${`tab-${t.id}`} aria-controls=${`panel-${t.id}`}
          aria-selected=${t.id === this.activeTab ? 'true' : 'false'} tabindex=${t.id === this.activeTab ? '0' : '-1'}
          @click=${() => (this.activeTab = t.id)}>${t.label}</button>`)}
      </div>
      ${this.tabs.map((t) => html`<div role="tabpanel" id=${`panel-${t.id}`} aria-labelledby=${`tab-${t.id}`} ?hidden=${t.id !== this.activeTab}>
        ${t.id === 'library'
          ? html`<strata-library .db=${this.db} .currentId=${this.record?.id ?? null} .revision=${this.libraryRevision}></strata-library>`
          : this.renderPanel(t)}
      </div>`)}`;
  }

  private readonly panelElements = new Map<string, HTMLElement>();

  private renderPanel(t: Tab) {
    let el = this.panelElements.get(t.id);
    if (!el && t.tag && this.loadedPanels.has(t.id)) {
      el = document.createElement(t.tag);
      el.dataset.panel = t.id;
      this.panelElements.set(t.id, el);
    }
    return el ?? nothing;
  }
}

customElements.define('strata-app', StrataApp);
