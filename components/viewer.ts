import { LitElement, css, html, svg, nothing, type PropertyValues } from 'lit';
import type { GreyImage } from '../src/image/grey-image';
import { displayLimits, greyHistogram, stretchToGrey, type DisplayLimits, type GreyHistogram } from '../src/image/display';
import { lengthLabel, niceLengthAtMost } from '../src/figure/ticks';
import { controlStyles } from './styles';

/** The drawing tool the pointer is bound to. */
export type ViewerTool = 'pan' | 'line' | 'rect';

/** Detail of `line-drawn`: a line in image-pixel coordinates with its averaging width. */
export interface LineDrawnDetail {
  x0: number;
  y0: number;
  x1: number;
  y1: number;
  widthPx: number;
}

/** Detail of `rect-drawn`: a rectangle in image-pixel coordinates (whole pixels). */
export interface RectDrawnDetail {
  x: number;
  y: number;
  width: number;
  height: number;
}

/** A shape the overlay shows, in image-pixel coordinates. */
export type OverlayShape =
  | ({ kind: 'line'; label?: string; tone?: 'accent' | 'info' | 'warn' } & LineDrawnDetail)
  | ({ kind: 'rect'; label?: string; tone?: 'accent' | 'info' | 'warn' } & RectDrawnDetail)
  | { kind: 'point'; x: number; y: number; label?: string; tone?: 'accent' | 'info' | 'warn' }
  /** A closed outline (e.g. a sheet's); `id` makes it clickable: a click in pan mode emits `shape-click` {id}. */
  | { kind: 'polygon'; points: [number, number][]; id?: string; label?: string; tone?: 'accent' | 'info' | 'warn'; selected?: boolean };

/** Detail of `shape-click`: the id of the clicked polygon and the image point. */
export interface ShapeClickDetail {
  id: string;
  x: number;
  y: number;
}

/** Whether an image point lies inside a polygon (even–odd rule). */
function insidePolygon(points: [number, number][], x: number, y: number): boolean {
  let inside = false;
  for (let i = 0, j = points.length - 1; i < points.length; j = i++) {
    const [xi, yi] = points[i];
    const [xj, yj] = points[j];
    if (yi > y !== yj > y && x < ((xj - xi) * (y - yi)) / (yj - yi) + xi) inside = !inside;
  }
  return inside;
}

type Drag =
  | { mode: 'pan'; startX: number; startY: number; cx: number; cy: number }
  | { mode: 'line'; x0: number; y0: number }
  | { mode: 'rect'; x0: number; y0: number }
  | { mode: 'width' };

const ZOOM_STEP = 1.25;
function formatValue(v: number): string {
  if (!Number.isFinite(v)) return String(v);
  if (Number.isInteger(v)) return String(v);
  const a = Math.abs(v);
  if (a >= 1e6 || (a < 1e-3 && a > 0)) return v.toExponential(3);
  return String(+v.toPrecision(a >= 100 ? 6 : 4));
}

/** A display limit as typed into the black/white fields: whole numbers for integer images. */
function formatLimit(v: number, image: GreyImage | null): string {
  if (image && image.sampleKind !== 'float') return String(Math.round(v));
  return formatValue(v);
}

/**
 * `<strata-viewer>`: shows a GreyImage on a canvas with zoom, pan, contrast, histogram, cursor
 * readout, scale bar and an overlay for measurement shapes.
 *
 * Properties: `image`, `levels` (box-averaged pyramid below full resolution, optional),
 * `histogram` (optional; computed from the smallest level when absent), `limits` (optional: the
 * display limits at the default percentiles, computed off the page), `tool`, `shapes`,
 * `lineWidthPx`, `lowPercent`, `highPercent`, `invert`, `maxPicturePx` and `picture` (display-ready
 * pictures of the levels made elsewhere, e.g. by the compute worker: see below).
 * Events: `line-drawn` (LineDrawnDetail), `rect-drawn` (RectDrawnDetail), `tool-changed`,
 * `shape-click` (ShapeClickDetail: a click in pan mode on a polygon shape that has an id),
 * `picture-needed` (ViewPictureKey: the level and stretch the view needs; answer by setting `picture`).
 *
 * Drawing: with `maxPicturePx` > 0, a level of at most that many pixels is drawn from `picture`
 * with one drawImage (the page stretches no pixels; until the right picture comes, the last one is
 * drawn scaled); otherwise, and for larger levels, the viewer stretches the visible screen pixels
 * itself. `data-level` names the level drawn once the view shows the one it asked for.
 */
/** What a display-ready picture of the image shows: a pyramid level and its stretch. */
export interface ViewPictureKey {
  /** Pyramid level, 0 = full resolution. */
  level: number;
  black: number;
  white: number;
  invert: boolean;
}

/** A display-ready picture of a pyramid level (see StrataViewer.picture). */
export interface ViewPicture extends ViewPictureKey {
  bitmap: ImageBitmap;
}
/** A picture laid over part of the image (see StrataViewer.overlayPicture). */
export interface OverlayPicture {
  picture: { width: number; height: number; rgba: Uint8ClampedArray };
  /** Where it goes, in image pixels. */
  rect: { x: number; y: number; width: number; height: number };
  /** 0 (invisible) to 1 (opaque). */
  opacity: number;
}

export class StrataViewer extends LitElement {
  static override properties = {
    image: { attribute: false },
    levels: { attribute: false },
    histogram: { attribute: false },
    limits: { attribute: false },
    picture: { attribute: false },
    maxPicturePx: { type: Number, attribute: false },
    tool: { type: String },
    shapes: { attribute: false },
    overlayPicture: { attribute: false },
    lineWidthPx: { type: Number, attribute: 'line-width-px' },
    lowPercent: { type: Number, attribute: 'low-percent' },
    highPercent: { type: Number, attribute: 'high-percent' },
    invert: { type: Boolean },
    zoom: { state: true },
    cx: { state: true },
    cy: { state: true },
    black: { state: true },
    white: { state: true },
    manual: { state: true },
    cursor: { state: true },
    draft: { state: true },
    keyCursor: { state: true },
  };

  image: GreyImage | null = null;
  levels: GreyImage[] = [];
  histogram: GreyHistogram | null = null;
  /** Display limits at the default percentiles (0.5 and 99.5 %) of this image, when computed elsewhere. */
  limits: DisplayLimits | null = null;
  /** The latest display-ready picture of a level (answer to `picture-needed`); null for none. */
  picture: ViewPicture | null = null;
  /** Largest level (pixels) drawn from `picture`; 0: the viewer draws every level itself. */
  maxPicturePx = 0;
  /** The picture last asked for (so each is asked for once). */
  private askedPicture = '';
  tool: ViewerTool = 'pan';
  shapes: OverlayShape[] = [];
  /**
   * An RGBA picture drawn over the image region `rect` (image px) with the given opacity, e.g. a
   * Fourier-filtered region from the Periods panel; null for none.
   */
  overlayPicture: OverlayPicture | null = null;
  private overlayCanvas: { source: OverlayPicture['picture']; canvas: OffscreenCanvas | HTMLCanvasElement } | null = null;
  lineWidthPx = 5;
  lowPercent = 0.5;
  highPercent = 99.5;
  invert = false;

  /** Screen (CSS) pixels per image pixel. */
  zoom = 1;
  /** Image coordinates at the centre of the view. */
  cx = 0;
  cy = 0;
  /** Grey value shown black / white. */
  black = 0;
  white = 1;
  /** True when the user typed the limits (the percentiles no longer apply). */
  manual = false;
  cursor: { x: number; y: number; value: number } | null = null;
  draft: OverlayShape | null = null;

  private drag: Drag | null = null;
  private viewW = 0;
  private viewH = 0;
  private frame = 0;
  private resizer: ResizeObserver | null = null;
  /** True while the view is as Fit left it (the user has not zoomed or panned since): a resize fits again. */
  private fitted = true;
  private shownHistogram: GreyHistogram | null = null;
  /** What the histogram canvas last showed. */
  private histogramDrawn: { canvas: HTMLCanvasElement | null; h: GreyHistogram | null; black: number; white: number } = { canvas: null, h: null, black: NaN, white: NaN };
  private imageData: ImageData | null = null;
  private shownData: GreyImage['data'] | null = null;
  /** Keyboard drawing: the cross-hair and the start point set with Enter (image px). */
  private keyCursor: { x: number; y: number } | null = null;
  private keyStart: { x: number; y: number } | null = null;

  static override styles = [
    controlStyles,
    css`
      :host { display: flex; flex-direction: column; min-width: 0; min-height: 0; background: #0b0e11; }
      .bar { display: flex; flex-wrap: wrap; align-items: center; gap: 4px; padding: 4px 8px; background: var(--panel); border-bottom: 1px solid var(--line); }
      .group { display: inline-flex; gap: 2px; }
      .bar input[type='number'] { width: 5.4em; }
      .stage { position: relative; flex: 1; min-height: 120px; overflow: hidden; outline: none; cursor: grab; touch-action: none; }
      .stage.drawing { cursor: crosshair; }
      .stage:focus-visible { box-shadow: inset 0 0 0 2px var(--focus); }
      canvas.view { position: absolute; inset: 0; width: 100%; height: 100%; image-rendering: pixelated; }
      svg.overlay { position: absolute; inset: 0; width: 100%; height: 100%; pointer-events: none; }
      svg .handle { pointer-events: all; cursor: ew-resize; }
      svg text { paint-order: stroke; stroke: #000; stroke-width: 3px; stroke-opacity: 0.8; stroke-linejoin: round; }
      .empty { position: absolute; inset: 0; display: grid; place-items: center; color: var(--muted); }
      /* the status row wraps on a narrow window (the histogram goes under the readout) rather than being cut off */
      .foot { display: flex; flex-wrap: wrap; align-items: center; gap: 4px 12px; padding: 3px 8px; background: var(--panel); border-top: 1px solid var(--line); font-size: 12px; min-height: 66px; }
      .readout { flex: 1 1 240px; min-width: 0; display: flex; flex-wrap: wrap; gap: 2px 14px; }
      .readout span { white-space: nowrap; min-width: 6.5em; }
      .readout .wide { flex-basis: 100%; white-space: normal; }
      .readout b { color: var(--muted); font-weight: normal; margin-right: 4px; }
      canvas.hist { flex: 0 1 260px; width: 260px; max-width: 100%; height: 56px; background: #0b0e11; border: 1px solid var(--line); }
    `,
  ];

  /** Set once the first update has been given a task of its own. */
  private firstUpdateScheduled = false;

  /**
   * The viewer's first render (its stage, canvases and controls, and the first measurement of its
   * size) waits for a task of its own instead of running in the one where the shell renders the
   * newly opened image (together about 45 ms on an idle machine); later updates are lit's usual
   * microtask. This is lit's hook for scheduling updates differently.
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
    this.resizer = new ResizeObserver(() => this.measure());
  }

  override disconnectedCallback(): void {
    super.disconnectedCallback();
    this.resizer?.disconnect();
    cancelAnimationFrame(this.frame);
  }

  protected override firstUpdated(): void {
    const stage = this.stage();
    if (stage) this.resizer?.observe(stage);
    stage?.addEventListener('wheel', (e) => this.onWheel(e), { passive: false });
    this.measure();
  }

  protected override willUpdate(changed: PropertyValues<this>): void {
    if (changed.has('image') || changed.has('levels') || changed.has('histogram') || changed.has('limits')) {
      this.shownHistogram = this.histogram ?? (this.image ? greyHistogram(this.statsLevel()) : null);
      // A new image (new pixels) resets the view; the same pixels with a new calibration do not.
      if (changed.has('image') && this.image?.data !== this.shownData) {
        this.shownData = this.image?.data ?? null;
        this.overlayPicture = null;
        this.picture = null;
        this.askedPicture = '';
        this.manual = false;
        this.draft = null;
        this.cursor = null;
        this.fitToWindow();
      }
      if (!this.manual) this.autoLimits();
    }
    if ((changed.has('lowPercent') || changed.has('highPercent')) && !this.manual) this.autoLimits();
  }

  protected override updated(): void {
    this.scheduleDraw();
    this.drawHistogram();
  }

  /** Largest zoom-out level (smallest image) available. */
  private smallestLevel(): GreyImage {
    return this.levels.length ? this.levels[this.levels.length - 1] : (this.image as GreyImage);
  }

  private stage(): HTMLElement | null {
    return this.renderRoot.querySelector('.stage');
  }

  private measure(): void {
    const stage = this.stage();
    if (!stage) return;
    const w = stage.clientWidth;
    const h = stage.clientHeight;
    const first = this.viewW === 0;
    const resized = w !== this.viewW || h !== this.viewH;
    this.viewW = w;
    this.viewH = h;
    // the first size, or a new window size while the user has not zoomed or panned: fit again
    // (a zoom or pan the user chose is kept)
    if (this.image && (first || (resized && this.fitted))) this.fitToWindow();
    this.requestUpdate();
  }

  /** The level percentiles and the histogram are taken from: about a million pixels at most. */
  private statsLevel(): GreyImage {
    return [this.image as GreyImage, ...this.levels].find((l) => l.width * l.height <= 1 << 20) ?? this.smallestLevel();
  }

  /** Sets black and white from the percentiles of the grey values. */
  autoLimits(): void {
    if (!this.image) return;
    this.manual = false;
    const { black, white } = this.limits && this.lowPercent === 0.5 && this.highPercent === 99.5
      ? this.limits
      : displayLimits(this.statsLevel().data, { lowPercent: this.lowPercent, highPercent: this.highPercent, step: 1 });
    this.black = black;
    this.white = white;
  }

  /** Zooms so the whole image fits the view, centred. */
  fitToWindow(): void {
    if (!this.image) return;
    this.fitted = true;
    this.cx = this.image.width / 2;
    this.cy = this.image.height / 2;
    if (this.viewW > 0 && this.viewH > 0) this.zoom = Math.min(this.viewW / this.image.width, this.viewH / this.image.height) * 0.98;
  }

  /** One image pixel per screen pixel. */
  actualSize(): void {
    this.fitted = false;
    this.zoom = 1 / (globalThis.devicePixelRatio || 1);
  }

  /** Multiplies the zoom by `factor`, keeping the image point under (sx, sy) in place. */
  zoomBy(factor: number, sx = this.viewW / 2, sy = this.viewH / 2): void {
    if (!this.image) return;
    const next = Math.min(64, Math.max(1 / 256, this.zoom * factor));
    const [ix, iy] = this.toImage(sx, sy);
    this.fitted = false;
    this.zoom = next;
    this.cx = ix - (sx - this.viewW / 2) / next;
    this.cy = iy - (sy - this.viewH / 2) / next;
  }

  /** Screen (CSS px within the stage) → image pixel coordinates. */
  toImage(sx: number, sy: number): [number, number] {
    return [this.cx + (sx - this.viewW / 2) / this.zoom, this.cy + (sy - this.viewH / 2) / this.zoom];
  }

  /** Image pixel coordinates → screen (CSS px within the stage). */
  toScreen(ix: number, iy: number): [number, number] {
    return [(ix - this.cx) * this.zoom + this.viewW / 2, (iy - this.cy) * this.zoom + this.viewH / 2];
  }

  private scheduleDraw(): void {
    cancelAnimationFrame(this.frame);
    this.frame = requestAnimationFrame(() => this.draw());
  }

  /** Draws the visible part of the image from the pyramid level that matches the zoom. */
  private draw(): void {
    const canvas = this.renderRoot.querySelector<HTMLCanvasElement>('canvas.view');
    if (!canvas || !this.image || this.viewW === 0) return;
    const dpr = globalThis.devicePixelRatio || 1;
    const W = Math.max(1, Math.round(this.viewW * dpr));
    const H = Math.max(1, Math.round(this.viewH * dpr));
    if (canvas.width !== W || canvas.height !== H) {
      canvas.width = W;
      canvas.height = H;
      this.imageData = null;
    }
    const ctx = canvas.getContext('2d');
    if (!ctx) return;
    if (this.drawPicture(canvas, ctx, dpr)) return;
    if (!this.imageData || this.imageData.width !== W || this.imageData.height !== H) this.imageData = ctx.createImageData(W, H);
    const devicePerImagePx = this.zoom * dpr;
    let k = Math.floor(Math.log2(1 / devicePerImagePx));
    k = Math.max(0, Math.min(this.levels.length, k));
    const level = k === 0 ? this.image : this.levels[k - 1];
    const f = this.image.width / level.width;
    const lw = level.width;
    const lh = level.height;
    const cols = new Int32Array(W);
    for (let sx = 0; sx < W; sx++) {
      const ix = this.cx + (sx / dpr + 0.5 / dpr - this.viewW / 2) / this.zoom;
      const lx = Math.floor(ix / f);
      cols[sx] = ix < 0 || lx >= lw ? -1 : lx;
    }
    const out = new Uint32Array(this.imageData.data.buffer);
    const bg = 0xff110e0b; // ABGR of #0b0e11
    // the app's one display stretch (src/image/display.ts), a screen row at a time
    const limits = { black: this.black, white: this.white > this.black ? this.white : this.black + 1 };
    const stretch = { invert: this.invert };
    const rowValues = new Float32Array(W);
    const rowGrey = new Uint8ClampedArray(W);
    const data = level.data;
    for (let sy = 0; sy < H; sy++) {
      const iy = this.cy + (sy / dpr + 0.5 / dpr - this.viewH / 2) / this.zoom;
      const ly = Math.floor(iy / f);
      const o = sy * W;
      if (iy < 0 || ly >= lh) {
        out.fill(bg, o, o + W);
        continue;
      }
      const row = ly * lw;
      for (let sx = 0; sx < W; sx++) {
        const c = cols[sx];
        rowValues[sx] = c < 0 ? 0 : data[row + c];
      }
      stretchToGrey(rowValues, limits, rowGrey, stretch);
      for (let sx = 0; sx < W; sx++) {
        const g = rowGrey[sx];
        out[o + sx] = cols[sx] < 0 ? bg : 0xff000000 | (g << 16) | (g << 8) | g;
      }
    }
    ctx.putImageData(this.imageData, 0, 0);
    this.drawOverlayPicture(ctx, dpr);
    this.dataset.level = String(k);
  }

  /** The pyramid level (0 = full resolution) that matches the zoom. */
  private levelForZoom(dpr: number): number {
    const k = Math.floor(Math.log2(1 / (this.zoom * dpr)));
    return Math.max(0, Math.min(this.levels.length, k));
  }

  /**
   * Draws the view from display-ready pictures (one drawImage), asking for the one it needs.
   *
   * @returns false when the level is to be drawn here instead (no pictures, or a level above maxPicturePx)
   */
  private drawPicture(canvas: HTMLCanvasElement, ctx: CanvasRenderingContext2D, dpr: number): boolean {
    const image = this.image as GreyImage;
    const k = this.levelForZoom(dpr);
    const level = k === 0 ? image : this.levels[k - 1];
    if (!(this.maxPicturePx > 0) || level.width * level.height > this.maxPicturePx) return false;
    const want: ViewPictureKey = { level: k, black: this.black, white: this.white > this.black ? this.white : this.black + 1, invert: this.invert };
    const p = this.picture;
    const exact = !!p && p.level === want.level && p.black === want.black && p.white === want.white && p.invert === want.invert;
    const key = JSON.stringify(want);
    if (!exact && key !== this.askedPicture) {
      this.askedPicture = key;
      this.dispatchEvent(new CustomEvent<ViewPictureKey>('picture-needed', { detail: want, bubbles: true, composed: true }));
    }
    ctx.fillStyle = '#0b0e11';
    ctx.fillRect(0, 0, canvas.width, canvas.height);
    const shown = p ? (p.level === 0 ? image : this.levels[p.level - 1]) : undefined;
    if (p && shown && p.bitmap.width === shown.width && p.bitmap.height === shown.height) {
      const f = image.width / shown.width;
      ctx.save();
      ctx.imageSmoothingEnabled = false;
      ctx.drawImage(p.bitmap, ((0 - this.cx) * this.zoom + this.viewW / 2) * dpr, ((0 - this.cy) * this.zoom + this.viewH / 2) * dpr,
        shown.width * f * this.zoom * dpr, shown.height * f * this.zoom * dpr);
      ctx.restore();
      this.drawOverlayPicture(ctx, dpr);
    }
    if (exact) this.dataset.level = String(k);
    else delete this.dataset.level;
    return true;
  }

  /** Draws `overlayPicture` stretched over its image rectangle, at its opacity. */
  private drawOverlayPicture(ctx: CanvasRenderingContext2D, dpr: number): void {
    const o = this.overlayPicture;
    if (!o) return;
    if (!this.overlayCanvas || this.overlayCanvas.source !== o.picture) {
      const c = document.createElement('canvas');
      c.width = o.picture.width;
      c.height = o.picture.height;
      c.getContext('2d')?.putImageData(new ImageData(new Uint8ClampedArray(o.picture.rgba), o.picture.width, o.picture.height), 0, 0);
      this.overlayCanvas = { source: o.picture, canvas: c };
    }
    const toScreenX = (ix: number) => ((ix - this.cx) * this.zoom + this.viewW / 2) * dpr;
    const toScreenY = (iy: number) => ((iy - this.cy) * this.zoom + this.viewH / 2) * dpr;
    ctx.save();
    ctx.globalAlpha = Math.min(1, Math.max(0, o.opacity));
    ctx.imageSmoothingEnabled = true;
    const x0 = toScreenX(o.rect.x);
    const y0 = toScreenY(o.rect.y);
    ctx.drawImage(this.overlayCanvas.canvas as CanvasImageSource, x0, y0, toScreenX(o.rect.x + o.rect.width) - x0, toScreenY(o.rect.y + o.rect.height) - y0);
    ctx.restore();
  }

  private drawHistogram(): void {
    const canvas = this.renderRoot.querySelector<HTMLCanvasElement>('canvas.hist');
    const h = this.shownHistogram;
    if (!canvas || !h) return;
    // redrawn only when what it shows changed (not on every cursor move)
    if (this.histogramDrawn.canvas === canvas && this.histogramDrawn.h === h && this.histogramDrawn.black === this.black && this.histogramDrawn.white === this.white) return;
    this.histogramDrawn = { canvas, h, black: this.black, white: this.white };
    const W = 260;
    const H = 56;
    canvas.width = W;
    canvas.height = H;
    const ctx = canvas.getContext('2d');
    if (!ctx) return;
    ctx.clearRect(0, 0, W, H);
    const per = h.counts.length / W;
    const col = new Float64Array(W);
    let peak = 0;
    for (let x = 0; x < W; x++) {
      let s = 0;
      const i0 = Math.floor(x * per);
      const i1 = Math.min(h.counts.length, Math.max(i0 + 1, Math.floor((x + 1) * per)));
      for (let i = i0; i < i1; i++) s += h.counts[i];
      col[x] = Math.log1p(s);
      if (col[x] > peak) peak = col[x];
    }
    ctx.fillStyle = '#6c8796';
    for (let x = 0; x < W; x++) {
      const bh = peak ? (col[x] / peak) * (H - 4) : 0;
      ctx.fillRect(x, H - bh, 1, bh);
    }
    const toX = (v: number) => ((v - h.min) / (h.max - h.min || 1)) * W;
    ctx.fillStyle = '#e8c872';
    ctx.fillRect(Math.round(toX(this.black)), 0, 1, H);
    ctx.fillRect(Math.round(toX(this.white)), 0, 1, H);
  }

  private stagePoint(e: PointerEvent | WheelEvent): [number, number] {
    const r = (e.currentTarget as HTMLElement).getBoundingClientRect();
    return [e.clientX - r.left, e.clientY - r.top];
  }

  private onWheel(e: WheelEvent): void {
    if (!this.image) return;
    e.preventDefault();
    const [sx, sy] = this.stagePoint(e);
    const steps = Math.max(-5, Math.min(5, -e.deltaY / 100));
    this.zoomBy(Math.pow(ZOOM_STEP, steps), sx, sy);
  }

  private onPointerDown(e: PointerEvent): void {
    if (!this.image) return;
    const stage = e.currentTarget as HTMLElement;
    stage.focus();
    const [sx, sy] = this.stagePoint(e);
    const [ix, iy] = this.toImage(sx, sy);
    if ((e.target as Element).classList?.contains('handle')) {
      this.drag = { mode: 'width' };
    } else if (this.tool === 'pan' || e.button === 1) {
      this.drag = { mode: 'pan', startX: sx, startY: sy, cx: this.cx, cy: this.cy };
    } else if (this.tool === 'line') {
      this.drag = { mode: 'line', x0: ix, y0: iy };
      this.draft = { kind: 'line', x0: ix, y0: iy, x1: ix, y1: iy, widthPx: this.lineWidthPx };
    } else {
      this.drag = { mode: 'rect', x0: ix, y0: iy };
      this.draft = { kind: 'rect', x: ix, y: iy, width: 0, height: 0 };
    }
    stage.setPointerCapture(e.pointerId);
  }

  private onPointerMove(e: PointerEvent): void {
    if (!this.image) return;
    const [sx, sy] = this.stagePoint(e);
    const [ix, iy] = this.toImage(sx, sy);
    const px = Math.floor(ix);
    const py = Math.floor(iy);
    this.cursor = px >= 0 && py >= 0 && px < this.image.width && py < this.image.height
      ? { x: px, y: py, value: this.image.data[py * this.image.width + px] }
      : null;
    const d = this.drag;
    if (!d) return;
    if (d.mode === 'pan') {
      this.fitted = false;
      this.cx = d.cx - (sx - d.startX) / this.zoom;
      this.cy = d.cy - (sy - d.startY) / this.zoom;
    } else if (d.mode === 'line') {
      this.draft = { kind: 'line', x0: d.x0, y0: d.y0, x1: ix, y1: iy, widthPx: this.lineWidthPx };
    } else if (d.mode === 'rect') {
      this.draft = { kind: 'rect', ...this.normalRect(d.x0, d.y0, ix, iy) };
    } else if (d.mode === 'width' && this.draft?.kind === 'line') {
      const l = this.draft;
      const len = Math.hypot(l.x1 - l.x0, l.y1 - l.y0) || 1;
      const dist = Math.abs((ix - l.x0) * (l.y1 - l.y0) - (iy - l.y0) * (l.x1 - l.x0)) / len;
      this.lineWidthPx = Math.max(1, Math.round(2 * dist));
      this.draft = { ...l, widthPx: this.lineWidthPx };
    }
  }

  private onPointerUp(e: PointerEvent): void {
    const d = this.drag;
    this.drag = null;
    (e.currentTarget as HTMLElement).releasePointerCapture?.(e.pointerId);
    if (d?.mode === 'pan') {
      // a click (no drag) on a clickable outline selects it
      const [sx, sy] = this.stagePoint(e);
      if (Math.hypot(sx - d.startX, sy - d.startY) < 4) {
        const [ix, iy] = this.toImage(sx, sy);
        const hit = [...this.shapes].reverse().find((q) => q.kind === 'polygon' && q.id && insidePolygon(q.points, ix, iy));
        if (hit && hit.kind === 'polygon' && hit.id) this.dispatchEvent(new CustomEvent<ShapeClickDetail>('shape-click', { detail: { id: hit.id, x: ix, y: iy }, bubbles: true, composed: true }));
      }
    }
    if (!d || !this.draft) return;
    if (d.mode === 'line' || d.mode === 'width') {
      const l = this.draft as Extract<OverlayShape, { kind: 'line' }>;
      if (Math.hypot(l.x1 - l.x0, l.y1 - l.y0) < 2) {
        this.draft = null;
        return;
      }
      this.emitLine();
    } else if (d.mode === 'rect') {
      const r = this.draft as Extract<OverlayShape, { kind: 'rect' }>;
      if (r.width < 2 || r.height < 2) {
        this.draft = null;
        return;
      }
      this.emitRect();
    }
  }

  private emitLine(): void {
    if (this.draft?.kind !== 'line') return;
    const { x0, y0, x1, y1, widthPx } = this.draft;
    this.dispatchEvent(new CustomEvent<LineDrawnDetail>('line-drawn', { detail: { x0, y0, x1, y1, widthPx }, bubbles: true, composed: true }));
  }

  /** A rectangle in whole pixels, clipped to the image. */
  private normalRect(ax: number, ay: number, bx: number, by: number): RectDrawnDetail {
    const w = this.image?.width ?? 0;
    const h = this.image?.height ?? 0;
    const x0 = Math.max(0, Math.min(w, Math.round(Math.min(ax, bx))));
    const y0 = Math.max(0, Math.min(h, Math.round(Math.min(ay, by))));
    const x1 = Math.max(0, Math.min(w, Math.round(Math.max(ax, bx))));
    const y1 = Math.max(0, Math.min(h, Math.round(Math.max(ay, by))));
    return { x: x0, y: y0, width: x1 - x0, height: y1 - y0 };
  }

  private onKey(e: KeyboardEvent): void {
    if (!this.image) return;
    if (this.tool !== 'pan' && this.onDrawKey(e)) {
      e.preventDefault();
      return;
    }
    const panStep = (e.shiftKey ? 0.5 : 0.1) * Math.min(this.viewW, this.viewH) / this.zoom;
    let handled = true;
    switch (e.key) {
      case '+': case '=': this.zoomBy(ZOOM_STEP); break;
      case '-': case '_': this.zoomBy(1 / ZOOM_STEP); break;
      case 'ArrowLeft': this.cx -= panStep; this.fitted = false; break;
      case 'ArrowRight': this.cx += panStep; this.fitted = false; break;
      case 'ArrowUp': this.cy -= panStep; this.fitted = false; break;
      case 'ArrowDown': this.cy += panStep; this.fitted = false; break;
      case 'f': case '0': this.fitToWindow(); break;
      case '1': this.actualSize(); break;
      case 'i': this.invert = !this.invert; break;
      case '[': this.changeWidth(-1); break;
      case ']': this.changeWidth(1); break;
      case 'Escape': this.draft = null; this.keyStart = null; break;
      default: handled = false;
    }
    if (handled) e.preventDefault();
  }

  /**
   * Drawing from the keyboard (line and region tools): arrows move a cross-hair (Shift: 10×),
   * Enter sets the start and then the end; Escape cancels. Returns true when the key was used.
   */
  private onDrawKey(e: KeyboardEvent): boolean {
    const im = this.image as GreyImage;
    const moves: Record<string, [number, number]> = { ArrowLeft: [-1, 0], ArrowRight: [1, 0], ArrowUp: [0, -1], ArrowDown: [0, 1] };
    if (!this.keyCursor && (e.key in moves || e.key === 'Enter')) {
      this.keyCursor = { x: Math.round(Math.min(im.width - 1, Math.max(0, this.cx))), y: Math.round(Math.min(im.height - 1, Math.max(0, this.cy))) };
      if (e.key !== 'Enter') return true;
    }
    const k = this.keyCursor;
    if (!k) return false;
    if (e.key in moves) {
      const step = Math.max(1, Math.round(1 / this.zoom)) * (e.shiftKey ? 10 : 1);
      const [dx, dy] = moves[e.key];
      k.x = Math.min(im.width, Math.max(0, k.x + dx * step));
      k.y = Math.min(im.height, Math.max(0, k.y + dy * step));
      this.keyCursor = { ...k };
      const v = k.x < im.width && k.y < im.height ? im.data[k.y * im.width + k.x] : NaN;
      this.cursor = { x: k.x, y: k.y, value: v };
      // Keep the cross-hair in view.
      const [sx, sy] = this.toScreen(k.x, k.y);
      if (sx < 0 || sx > this.viewW) { this.cx = k.x; this.fitted = false; }
      if (sy < 0 || sy > this.viewH) { this.cy = k.y; this.fitted = false; }
      if (this.keyStart) this.draft = this.shapeBetween(this.keyStart, k);
      return true;
    }
    if (e.key === 'Enter') {
      if (!this.keyStart) {
        this.keyStart = { ...k };
        this.draft = this.shapeBetween(k, k);
      } else {
        this.draft = this.shapeBetween(this.keyStart, k);
        this.keyStart = null;
        if (this.draft.kind === 'line') {
          if (Math.hypot(this.draft.x1 - this.draft.x0, this.draft.y1 - this.draft.y0) >= 2) this.emitLine();
          else this.draft = null;
        } else if (this.draft.kind === 'rect') {
          if (this.draft.width >= 2 && this.draft.height >= 2) this.emitRect();
          else this.draft = null;
        }
      }
      return true;
    }
    if (e.key === 'Escape') {
      this.keyStart = null;
      this.keyCursor = null;
      this.draft = null;
      return true;
    }
    return false;
  }

  private shapeBetween(a: { x: number; y: number }, b: { x: number; y: number }): OverlayShape {
    return this.tool === 'line'
      ? { kind: 'line', x0: a.x, y0: a.y, x1: b.x, y1: b.y, widthPx: this.lineWidthPx }
      : { kind: 'rect', ...this.normalRect(a.x, a.y, b.x, b.y) };
  }

  private emitRect(): void {
    if (this.draft?.kind !== 'rect') return;
    const { x, y, width, height } = this.draft;
    this.dispatchEvent(new CustomEvent<RectDrawnDetail>('rect-drawn', { detail: { x, y, width, height }, bubbles: true, composed: true }));
  }

  private changeWidth(delta: number): void {
    this.lineWidthPx = Math.max(1, this.lineWidthPx + delta);
    if (this.draft?.kind === 'line') {
      this.draft = { ...this.draft, widthPx: this.lineWidthPx };
      this.emitLine();
    }
  }

  private setTool(tool: ViewerTool): void {
    this.tool = tool;
    this.draft = null;
    this.keyStart = null;
    this.keyCursor = null;
    this.dispatchEvent(new CustomEvent('tool-changed', { detail: { tool }, bubbles: true, composed: true }));
  }

  private setLimit(which: 'black' | 'white', e: Event): void {
    const v = Number((e.target as HTMLInputElement).value);
    if (!Number.isFinite(v)) return;
    this.manual = true;
    this[which] = v;
    if (!(this.white > this.black)) {
      if (which === 'black') this.white = v + 1;
      else this.black = v - 1;
    }
  }

  private setPercent(which: 'lowPercent' | 'highPercent', e: Event): void {
    const v = Number((e.target as HTMLInputElement).value);
    if (!(v >= 0 && v <= 100)) return;
    this[which] = v;
    if (this.lowPercent >= this.highPercent) return;
    this.autoLimits();
  }

  private renderShape(s: OverlayShape, draft: boolean) {
    const tone = draft ? '#ffd84d' : s.tone === 'info' ? '#9fd3e6' : s.tone === 'warn' ? '#f0a35e' : '#e8c872';
    if (s.kind === 'line') {
      const [ax, ay] = this.toScreen(s.x0, s.y0);
      const [bx, by] = this.toScreen(s.x1, s.y1);
      const len = Math.hypot(bx - ax, by - ay) || 1;
      const nx = (-(by - ay) / len) * (s.widthPx / 2) * this.zoom;
      const ny = ((bx - ax) / len) * (s.widthPx / 2) * this.zoom;
      const band = `${ax + nx},${ay + ny} ${bx + nx},${by + ny} ${bx - nx},${by - ny} ${ax - nx},${ay - ny}`;
      const mx = (ax + bx) / 2 + nx;
      const my = (ay + by) / 2 + ny;
      return svg`
        <polygon points=${band} fill=${tone} fill-opacity="0.12" stroke=${tone} stroke-opacity="0.5" stroke-dasharray="3 3"></polygon>
        <line x1=${ax} y1=${ay} x2=${bx} y2=${by} stroke=${tone} stroke-width="1.5"></line>
        <circle cx=${ax} cy=${ay} r="3" fill=${tone}></circle><circle cx=${bx} cy=${by} r="3" fill=${tone}></circle>
        ${draft ? svg`<circle class="handle" cx=${mx} cy=${my} r="6" fill="#101418" stroke=${tone} stroke-width="2"><title>Drag to set the averaging width</title></circle>` : nothing}
        ${s.label ? svg`<text x=${bx + 6} y=${by - 6} fill=${tone} font-size="12">${s.label}</text>` : nothing}`;
    }
    if (s.kind === 'polygon') {
      if (s.points.length < 2) return nothing;
      const pts = s.points.map(([x, y]) => this.toScreen(x, y));
      let lx = pts[0][0];
      let ly = pts[0][1];
      for (const [x, y] of pts) if (y < ly) { lx = x; ly = y; }
      return svg`
        <polygon points=${pts.map(([x, y]) => `${x},${y}`).join(' ')} fill=${tone} fill-opacity=${s.selected ? 0.25 : 0.08} stroke=${tone} stroke-width=${s.selected ? 2.5 : 1.2}></polygon>
        ${s.label ? svg`<text x=${lx + 4} y=${ly - 4} fill=${tone} font-size="12">${s.label}</text>` : nothing}`;
    }
    if (s.kind === 'rect') {
      const [ax, ay] = this.toScreen(s.x, s.y);
      return svg`
        <rect x=${ax} y=${ay} width=${s.width * this.zoom} height=${s.height * this.zoom} fill="none" stroke=${tone} stroke-width="1.5"></rect>
        ${s.label ? svg`<text x=${ax + 4} y=${ay - 5} fill=${tone} font-size="12">${s.label}</text>` : nothing}`;
    }
    const [px, py] = this.toScreen(s.x, s.y);
    return svg`<circle cx=${px} cy=${py} r="4" fill="none" stroke=${tone} stroke-width="1.5"></circle>
      ${s.label ? svg`<text x=${px + 6} y=${py - 6} fill=${tone} font-size="12">${s.label}</text>` : nothing}`;
  }

  private renderCrosshair(k: { x: number; y: number }) {
    const [x, y] = this.toScreen(k.x + 0.5, k.y + 0.5);
    return svg`<g class="crosshair" stroke="#ffd84d" stroke-width="1.5">
      <line x1=${x - 12} y1=${y} x2=${x - 3} y2=${y}></line><line x1=${x + 3} y1=${y} x2=${x + 12} y2=${y}></line>
      <line x1=${x} y1=${y - 12} x2=${x} y2=${y - 3}></line><line x1=${x} y1=${y + 3} x2=${x} y2=${y + 12}></line></g>`;
  }

  private renderScaleBar() {
    const cal = this.image?.calibration;
    if (!cal || this.viewW === 0) return nothing;
    const nmPerScreenPx = cal.nmPerPx / this.zoom;
    const lengthNm = niceLengthAtMost(nmPerScreenPx * Math.min(160, this.viewW / 4));
    const barPx = lengthNm / nmPerScreenPx;
    const x = 16;
    const y = this.viewH - 22;
    return svg`<g class="scalebar">
      <rect x=${x - 6} y=${y - 20} width=${barPx + 12} height="32" fill="#000" fill-opacity="0.85" rx="3"></rect>
      <rect x=${x} y=${y} width=${barPx} height="5" fill="#fff"></rect>
      <text x=${x + barPx / 2} y=${y - 6} fill="#fff" font-size="12" text-anchor="middle">${lengthLabel(lengthNm)}</text></g>`;
  }

  private renderReadout() {
    const im = this.image;
    if (!im) return nothing;
    const c = this.cursor;
    const cal = im.calibration;
    const pct = `${(this.zoom * (globalThis.devicePixelRatio || 1) * 100).toPrecision(3)} %`;
    return html`<div class="readout num" aria-live="off">
      <span><b>x</b>${c ? c.x : '–'}</span><span><b>y</b>${c ? c.y : '–'}</span><span><b>value</b>${c ? formatValue(c.value) : '–'}</span>
      <span><b>x nm</b>${c && cal ? (c.x * cal.nmPerPx).toFixed(2) : '–'}</span><span><b>y nm</b>${c && cal ? (c.y * (cal.nmPerPxY ?? cal.nmPerPx)).toFixed(2) : '–'}</span>
      <span><b>zoom</b>${pct}</span>
      <span class="muted wide">${im.width} × ${im.height} px, ${im.bitDepth}-bit · ${cal ? `${cal.nmPerPx.toPrecision(4)} nm/px (${cal.source}, ±${(cal.relUncertainty * 100).toFixed(1)} %)` : 'uncalibrated: lengths in px'}</span>
    </div>`;
  }

  override render() {
    const im = this.image;
    const tools: [ViewerTool, string, string][] = [
      ['pan', 'Pan', 'Drag to move the image'],
      ['line', 'Line profile', 'Drag to draw a line; drag its round handle (or press [ and ]) to set the averaging width'],
      ['rect', 'Region', 'Drag to draw a rectangle'],
    ];
    return html`
      <div class="bar" role="toolbar" aria-label="Viewer">
        <span class="group" role="group" aria-label="Tool">
          ${tools.map(([t, label, hint]) => html`<button aria-pressed=${this.tool === t ? 'true' : 'false'} title=${hint} @click=${() => this.setTool(t)}>${label}</button>`)}
        </span>
        <span class="sep"></span>
        <span class="group" role="group" aria-label="Zoom">
          <button title="Zoom out (−)" aria-label="Zoom out" ?disabled=${!im} @click=${() => this.zoomBy(1 / ZOOM_STEP)}>−</button>
          <button title="Zoom in (+)" aria-label="Zoom in" ?disabled=${!im} @click=${() => this.zoomBy(ZOOM_STEP)}>+</button>
          <button title="Fit the image to the window (F)" ?disabled=${!im} @click=${() => this.fitToWindow()}>Fit</button>
          <button title="One image pixel per screen pixel (1)" ?disabled=${!im} @click=${() => this.actualSize()}>1:1</button>
        </span>
        <span class="sep"></span>
        <label>low % <input type="number" min="0" max="100" step="0.1" .value=${String(this.lowPercent)} ?disabled=${!im} @change=${(e: Event) => this.setPercent('lowPercent', e)}></label>
        <label>high % <input type="number" min="0" max="100" step="0.1" .value=${String(this.highPercent)} ?disabled=${!im} @change=${(e: Event) => this.setPercent('highPercent', e)}></label>
        <label>black <input type="number" step="any" .value=${formatLimit(this.black, im)} ?disabled=${!im} @change=${(e: Event) => this.setLimit('black', e)}></label>
        <label>white <input type="number" step="any" .value=${formatLimit(this.white, im)} ?disabled=${!im} @change=${(e: Event) => this.setLimit('white', e)}></label>
        <button class=${this.manual ? '' : 'on'} title="Limits from the percentiles" ?disabled=${!im} @click=${() => this.autoLimits()}>Auto</button>
        <label><input type="checkbox" .checked=${this.invert} ?disabled=${!im} @change=${(e: Event) => (this.invert = (e.target as HTMLInputElement).checked)}> invert</label>
      </div>
      <div class="stage ${this.tool === 'pan' ? '' : 'drawing'}" tabindex="0" role="application" aria-roledescription="image viewer"
        aria-label=${im ? `Image ${im.width} by ${im.height} pixels. Plus and minus zoom, arrow keys pan, F fits, 1 shows actual size. With the line or region tool, arrow keys move a cross-hair and Enter sets the start and the end.` : 'No image open'}
        @pointerdown=${this.onPointerDown} @pointermove=${this.onPointerMove} @pointerup=${this.onPointerUp}
        @pointerleave=${() => (this.cursor = null)} @keydown=${this.onKey}>
        <canvas class="view"></canvas>
        ${im ? html`<svg class="overlay" viewBox="0 0 ${this.viewW} ${this.viewH}">
          ${this.shapes.map((s) => this.renderShape(s, false))}
          ${this.draft ? this.renderShape(this.draft, true) : nothing}
          ${this.keyCursor && this.tool !== 'pan' ? this.renderCrosshair(this.keyCursor) : nothing}
          ${this.renderScaleBar()}</svg>` : html`<div class="empty">No image open</div>`}
      </div>
      <div class="foot">${this.renderReadout()}${im ? html`<canvas class="hist" role="img" aria-label="Intensity histogram (log counts) with the black and white limits"></canvas>` : nothing}</div>
    `;
  }
}

customElements.define('strata-viewer', StrataViewer);

declare global {
  interface HTMLElementTagNameMap {
    'strata-viewer': StrataViewer;
  }
}
