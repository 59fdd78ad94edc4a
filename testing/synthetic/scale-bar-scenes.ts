/**
 * Micrographs with a burned-in scale bar and label of known truth, in the many styles
 * microscopes and figure tools use: the label in a stroke font (anti-aliased or with hard edges),
 * a hand-drawn pixel font at 1–2× or a system outline font from the label atlas; light or dark
 * ink; in an information strip, a filled box, a bordered box on a light ground or free on the
 * image; the label below, above, left or right of the bar; horizontal or vertical bars; on a
 * textured or a busy lattice-fringe background. Seeded; test-only code.
 */
import { readFileSync } from 'node:fs';
import { decode } from 'fast-png';
import { makeGreyImage, type GreyImage } from '../../src/image/grey-image';
import { drawText, fillRect, measureText, type StrokeFontName } from '../../src/figure/draw-text';
import { drawPixelText, measurePixelText, type PixelFontName } from '../pixel-fonts';
import { gaussian, rng } from '../random';

/** How the label's text is drawn. */
export type TextStyle =
  | { kind: 'stroke'; font: StrokeFontName; capPx: number; antiAliased: boolean; weight?: number }
  | { kind: 'pixel'; font: PixelFontName; scale: number }
  /** A label of the system-font atlas (tests/fixtures/labels): its text is the atlas entry's. */
  | { kind: 'atlas'; index: number };

/** Where the bar and label sit. */
export type Holder =
  /** A full-width information strip along the bottom of the image. */
  | 'strip'
  /** A filled box over the image. */
  | 'box'
  /** A light box with a dark one-to-two-pixel border, over the image (ink dark). */
  | 'bordered-box'
  /** Directly on the image, no ground of its own. */
  | 'free';

export interface BarSceneSpec {
  width: number;
  height: number;
  seed: number;
  background: 'texture' | 'lattice';
  holder: Holder;
  /** Where the label is, seen from the bar. */
  placement: 'below' | 'above' | 'left' | 'right';
  orientation: 'horizontal' | 'vertical';
  /** Bar length, px (fractional). */
  lengthPx: number;
  /** Bar thickness, whole px. */
  thicknessPx: number;
  /** Sub-pixel offset of the bar's start along its length, in [0, 1). */
  startFraction: number;
  /** Bar and text colour: 'light' (white ink) or 'dark'. */
  ink: 'light' | 'dark';
  /** The label text (ignored for atlas labels, which carry their own). */
  label: string;
  text: TextStyle;
  /** Full-scale value (255 or 65535). */
  full: number;
  /** Where the holder sits: near the bottom right (default) or the bottom left. */
  corner?: 'right' | 'left';
}

/** The truth of a scene. */
export interface BarSceneTruth {
  /** Bar end points along its centre line, px (x right, y down). */
  x0: number;
  y0: number;
  x1: number;
  y1: number;
  lengthPx: number;
  /** The label as drawn. */
  label: string;
  /** The label's ink box [x, y, w, h]. */
  labelBox: [number, number, number, number];
}

interface Coverage {
  width: number;
  height: number;
  /** Ink coverage 0–1. */
  data: Float32Array;
  /** Row of the baseline inside the bitmap. */
  baseline: number;
}

let atlasCache: { width: number; data: Uint8Array; entries: { text: string; box: [number, number, number, number]; baselinePx: number; font: string; sizePx: number; antiAliased: boolean; weight: string; italic: boolean }[] } | null = null;

/** The system-font label atlas (tests/fixtures/labels), read once. */
export function labelAtlas(): NonNullable<typeof atlasCache> {
  if (!atlasCache) {
    const dir = new URL('../../tests/fixtures/labels/', import.meta.url);
    const png = decode(readFileSync(new URL('atlas.png', dir)));
    const json = JSON.parse(readFileSync(new URL('atlas.json', dir), 'utf8'));
    atlasCache = { width: png.width, data: png.data as Uint8Array, entries: json.entries };
  }
  return atlasCache;
}

/** The label text a spec draws. */
export function sceneLabel(s: Pick<BarSceneSpec, 'label' | 'text'>): string {
  return s.text.kind === 'atlas' ? labelAtlas().entries[s.text.index].text : s.label;
}

function textCoverage(label: string, style: TextStyle): Coverage {
  if (style.kind === 'atlas') {
    const a = labelAtlas();
    const e = a.entries[style.index];
    const [bx, by, bw, bh] = e.box;
    const data = new Float32Array(bw * bh);
    for (let j = 0; j < bh; j++) for (let i = 0; i < bw; i++) data[j * bw + i] = a.data[(by + j) * a.width + bx + i] / 255;
    return { width: bw, height: bh, data, baseline: e.baselinePx - by };
  }
  if (style.kind === 'pixel') {
    const m = measurePixelText(label, style.font, style.scale);
    const w = m.widthPx + 2;
    const h = m.ascentPx + m.descentPx + 2;
    const r = { width: w, height: h, data: new Float32Array(w * h) };
    drawPixelText(r, label, 1, 1 + m.ascentPx, style.font, style.scale, 1);
    return { ...r, baseline: 1 + m.ascentPx };
  }
  const opts = { sizePx: style.capPx, value: 1, font: style.font, weight: style.weight };
  const m = measureText(label, opts);
  const w = Math.ceil(m.widthPx) + 4;
  const h = Math.ceil(m.ascentPx + m.descentPx) + 4;
  const r = { width: w, height: h, data: new Float32Array(w * h) };
  const baseline = 2 + Math.ceil(m.ascentPx);
  drawText(r, label, 2, baseline, opts);
  if (!style.antiAliased) for (let i = 0; i < r.data.length; i++) r.data[i] = r.data[i] >= 0.5 ? 1 : 0;
  return { ...r, baseline };
}

/** Tight ink box of a coverage bitmap. */
function inkBox(c: Coverage): [number, number, number, number] {
  let x0 = c.width;
  let y0 = c.height;
  let x1 = -1;
  let y1 = -1;
  for (let y = 0; y < c.height; y++) {
    for (let x = 0; x < c.width; x++) {
      if (c.data[y * c.width + x] > 0.25) {
        if (x < x0) x0 = x;
        if (x > x1) x1 = x;
        if (y < y0) y0 = y;
        if (y > y1) y1 = y;
      }
    }
  }
  return [x0, y0, x1 - x0 + 1, y1 - y0 + 1];
}

/**
 * Renders a scene.
 * @param s the scene's description
 * @returns the image and the truth (bar end points, label text and box)
 */
export function barScene(s: BarSceneSpec): { image: GreyImage; truth: BarSceneTruth } {
  const { width, height, full } = s;
  const r = rng(s.seed);
  const gauss = gaussian(r);
  const data = new Float32Array(width * height);
  if (s.background === 'lattice') {
    // two crossed fringe sets with a slow amplitude change: a busy lattice image reaching near white
    const a1 = r() * Math.PI;
    const a2 = a1 + Math.PI / 3 + 0.3 * r();
    const p1 = 5 + 6 * r();
    const p2 = 5 + 6 * r();
    for (let y = 0; y < height; y++) {
      for (let x = 0; x < width; x++) {
        const f = Math.cos((2 * Math.PI * (x * Math.cos(a1) + y * Math.sin(a1))) / p1) + Math.cos((2 * Math.PI * (x * Math.cos(a2) + y * Math.sin(a2))) / p2);
        const env = 0.7 + 0.3 * Math.sin(x / 97) * Math.cos(y / 83);
        data[y * width + x] = full * Math.min(0.97, Math.max(0.03, 0.5 + 0.21 * env * f + 0.04 * gauss()));
      }
    }
  } else {
    const fx = 2 * Math.PI * (0.01 + 0.02 * r());
    const fy = 2 * Math.PI * (0.01 + 0.02 * r());
    for (let y = 0; y < height; y++) {
      for (let x = 0; x < width; x++) {
        const texture = 0.45 + 0.15 * Math.sin(fx * x) * Math.cos(fy * y);
        data[y * width + x] = Math.min(full, Math.max(0, full * (texture + 0.12 * (r() - 0.5))));
      }
    }
  }
  const img = { width, height, data };
  const label = sceneLabel(s);
  const cov = textCoverage(label, s.text);
  const ink = inkBox(cov);
  const inkValue = s.ink === 'light' ? full : 0;
  const groundValue = s.holder === 'bordered-box' ? Math.round(0.94 * full) : s.ink === 'light' ? 0 : full;
  const vertical = s.orientation === 'vertical';
  const L = s.lengthPx;
  const t = s.thicknessPx;
  // the bar's and label's extent in a frame with the bar at the origin
  const barW = vertical ? t : L;
  const barH = vertical ? L : t;
  const gap = Math.max(4, Math.round(0.5 * ink[3]));
  const lw = ink[2];
  const lh = ink[3];
  let lx: number;
  let ly: number;
  if (s.placement === 'below' || s.placement === 'above') {
    lx = barW / 2 - lw / 2;
    ly = s.placement === 'below' ? barH + gap : -gap - lh;
  } else {
    ly = barH / 2 - lh / 2;
    lx = s.placement === 'right' ? barW + gap : -gap - lw;
  }
  const minX = Math.min(0, lx);
  const minY = Math.min(0, ly);
  const maxX = Math.max(barW, lx + lw);
  const maxY = Math.max(barH, ly + lh);
  const margin = 14;
  const groupW = maxX - minX;
  const groupH = maxY - minY;
  // where the group goes
  let ox: number;
  let oy: number;
  const right = (s.corner ?? 'right') === 'right';
  if (s.holder === 'strip') {
    const stripH = Math.ceil(groupH + 2 * margin);
    fillRect(img, 0, height - stripH, width, stripH, groundValue);
    ox = right ? width - groupW - 3 * margin : 3 * margin;
    oy = height - stripH + margin;
  } else {
    const boxW = Math.ceil(groupW + 2 * margin);
    const boxH = Math.ceil(groupH + 2 * margin);
    const bx = right ? width - boxW - 20 : 20;
    const by = height - boxH - 20;
    if (s.holder === 'box') fillRect(img, bx, by, boxW, boxH, groundValue);
    if (s.holder === 'bordered-box') {
      fillRect(img, bx, by, boxW, boxH, groundValue);
      const bw = 1 + (s.seed % 2);
      fillRect(img, bx, by, boxW, bw, 0);
      fillRect(img, bx, by + boxH - bw, boxW, bw, 0);
      fillRect(img, bx, by, bw, boxH, 0);
      fillRect(img, bx + boxW - bw, by, bw, boxH, 0);
    }
    ox = bx + margin;
    oy = by + margin;
  }
  // integer-align the group, then give the bar its sub-pixel start along its length
  const gx = Math.round(ox - minX);
  const gy = Math.round(oy - minY);
  const f = s.startFraction;
  let truth: Omit<BarSceneTruth, 'label' | 'labelBox'>;
  if (vertical) {
    fillRect(img, gx, gy + f, t, L, inkValue);
    truth = { x0: gx + t / 2, y0: gy + f, x1: gx + t / 2, y1: gy + f + L, lengthPx: L };
  } else {
    fillRect(img, gx + f, gy, L, t, inkValue);
    truth = { x0: gx + f, y0: gy + t / 2, x1: gx + f + L, y1: gy + t / 2, lengthPx: L };
  }
  const tx = Math.round(gx + lx - ink[0]);
  const ty = Math.round(gy + ly - ink[1]);
  for (let j = 0; j < cov.height; j++) {
    for (let i = 0; i < cov.width; i++) {
      const c = cov.data[j * cov.width + i];
      const x = tx + i;
      const y = ty + j;
      if (c > 0 && x >= 0 && y >= 0 && x < width && y < height) data[y * width + x] = data[y * width + x] * (1 - c) + inkValue * c;
    }
  }
  for (let i = 0; i < data.length; i++) data[i] = Math.round(Math.min(full, Math.max(0, data[i])));
  const image = makeGreyImage(width, height, data, { bitDepth: full > 255 ? 16 : 8, sampleKind: 'uint' });
  return { image, truth: { ...truth, label, labelBox: [tx + ink[0], ty + ink[1], ink[2], ink[3]] } };
}
