/**
 * Renders scale-bar label texts in the system's outline fonts (DejaVu and Liberation families)
 * through Chromium's canvas and packs them into one grey atlas with an index: outside fonts the
 * label readers were never built from, for the held-out part of the label tests and bench:labels.
 *
 * Usage: npx tsx testing/make-label-atlas.ts [OUT_DIR]   (default tests/fixtures/labels)
 * Writes atlas.png (ink coverage 0–255, 255 = full ink) and atlas.json (one entry per label: its
 * text, font, pixel size, whether anti-aliased, and its box in the atlas). Seeded: the list of
 * labels is fixed, so re-running gives the same entries (pixels depend on the fonts installed).
 * Needs playwright-core and a Chromium (CHROMIUM_PATH, default /usr/bin/chromium).
 */
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { encode } from 'fast-png';
import { chromium } from 'playwright-core';
import { rng } from './random';

/** One rendered label as atlas.json lists it. */
export interface AtlasEntry {
  text: string;
  font: string;
  weight: 'normal' | 'bold';
  italic: boolean;
  /** CSS pixel size of the font (em size). */
  sizePx: number;
  /** False: thresholded to two levels (no anti-aliasing), as small-font annotation renderers draw. */
  antiAliased: boolean;
  /** Box in the atlas [x, y, w, h]; the baseline is at y + baselinePx. */
  box: [number, number, number, number];
  baselinePx: number;
}

const FONTS: { family: string; weight: 'normal' | 'bold'; italic: boolean }[] = [
  { family: 'DejaVu Sans', weight: 'normal', italic: false },
  { family: 'DejaVu Sans', weight: 'bold', italic: false },
  { family: 'DejaVu Sans Mono', weight: 'normal', italic: false },
  { family: 'DejaVu Serif', weight: 'normal', italic: false },
  { family: 'DejaVu Sans Condensed', weight: 'bold', italic: false },
  { family: 'Liberation Sans', weight: 'normal', italic: false },
  { family: 'Liberation Sans', weight: 'bold', italic: false },
  { family: 'Liberation Sans Narrow', weight: 'normal', italic: false },
  { family: 'Liberation Serif', weight: 'normal', italic: false },
  { family: 'Liberation Mono', weight: 'bold', italic: false },
  { family: 'Liberation Sans', weight: 'normal', italic: true },
];

/** Round scale-bar values (common practice: 1, 2, 2.5, 3, 5 × 10ⁿ) in the units microscopes write. */
const ROUND = ['1 nm', '2 nm', '5 nm', '10 nm', '20 nm', '50 nm', '100 nm', '200 nm', '500 nm', '250 nm', '2.5 nm', '30 nm',
  '1 µm', '2 µm', '5 µm', '0.5 µm', '0,5 µm', '0.2 µm', '2 um', '10 µm', '500 pm', '200 pm', '5 Å', '10 Å', '20 Å', '50 Å',
  '1 mm', '0.1 µm', '300 nm', '3 nm', '2,5 µm'];

export function atlasLabels(): { text: string; font: (typeof FONTS)[number]; sizePx: number; antiAliased: boolean }[] {
  const r = rng(1404);
  const out: { text: string; font: (typeof FONTS)[number]; sizePx: number; antiAliased: boolean }[] = [];
  for (const font of FONTS) {
    for (let i = 0; i < 8; i++) {
      const antiAliased = i % 2 === 0;
      // small sizes for the two-level renderings (pixel-font heights 7–16 px), larger for anti-aliased text
      const sizePx = antiAliased ? 12 + Math.floor(r() * 22) : 11 + Math.floor(r() * 12);
      out.push({ text: ROUND[Math.floor(r() * ROUND.length)], font, sizePx, antiAliased });
    }
  }
  return out;
}

async function main(): Promise<void> {
  const outDir = process.argv[2] ?? 'tests/fixtures/labels';
  const labels = atlasLabels();
  const browser = await chromium.launch({ executablePath: process.env.CHROMIUM_PATH ?? '/usr/bin/chromium', args: ['--font-render-hinting=none'] });
  try {
    const page = await browser.newPage();
    await page.setContent('<html><body></body></html>');
    const rendered = await page.evaluate((items) => {
      const res: { w: number; h: number; baseline: number; data: number[] }[] = [];
      for (const it of items) {
        const c = document.createElement('canvas');
        const ctx = c.getContext('2d')!;
        const font = `${it.font.italic ? 'italic ' : ''}${it.font.weight} ${it.sizePx}px "${it.font.family}"`;
        ctx.font = font;
        const m = ctx.measureText(it.text);
        const asc = Math.ceil(Math.max(m.actualBoundingBoxAscent, m.fontBoundingBoxAscent * 0.8));
        const desc = Math.ceil(Math.max(m.actualBoundingBoxDescent, 1));
        const w = Math.ceil(m.actualBoundingBoxRight + Math.max(0, m.actualBoundingBoxLeft)) + 4;
        const h = asc + desc + 4;
        c.width = w;
        c.height = h;
        ctx.font = font;
        ctx.fillStyle = '#fff';
        ctx.fillRect(0, 0, w, h);
        ctx.fillStyle = '#000';
        ctx.textBaseline = 'alphabetic';
        ctx.fillText(it.text, 2 + Math.max(0, m.actualBoundingBoxLeft), 2 + asc);
        const px = ctx.getImageData(0, 0, w, h).data;
        const data: number[] = [];
        for (let i = 0; i < w * h; i++) {
          const cov = 255 - px[4 * i];
          data.push(it.antiAliased ? cov : cov >= 100 ? 255 : 0);
        }
        res.push({ w, h, baseline: 2 + asc, data });
      }
      return res;
    }, labels);
    // pack in rows of at most 1024 px
    const entries: AtlasEntry[] = [];
    let x = 0;
    let y = 0;
    let rowH = 0;
    const W = 1024;
    const placed: { x: number; y: number; r: (typeof rendered)[number] }[] = [];
    for (const r of rendered) {
      if (x + r.w > W) {
        x = 0;
        y += rowH + 1;
        rowH = 0;
      }
      placed.push({ x, y, r });
      x += r.w + 1;
      rowH = Math.max(rowH, r.h);
    }
    const H = y + rowH;
    const atlas = new Uint8Array(W * H);
    placed.forEach(({ x: px, y: py, r }, i) => {
      for (let j = 0; j < r.h; j++) for (let k = 0; k < r.w; k++) atlas[(py + j) * W + px + k] = r.data[j * r.w + k];
      const l = labels[i];
      entries.push({ text: l.text, font: l.font.family, weight: l.font.weight, italic: l.font.italic, sizePx: l.sizePx, antiAliased: l.antiAliased, box: [px, py, r.w, r.h], baselinePx: r.baseline });
    });
    mkdirSync(outDir, { recursive: true });
    writeFileSync(join(outDir, 'atlas.png'), encode({ width: W, height: H, data: atlas, channels: 1, depth: 8 }));
    writeFileSync(join(outDir, 'atlas.json'), JSON.stringify({ note: 'Scale-bar labels rendered in system outline fonts by testing/make-label-atlas.ts (Chromium canvas); ink coverage, 255 = full ink.', entries }, null, 1) + '\n');
    console.log(`${entries.length} labels, atlas ${W} × ${H} px, in ${outDir}`);
  } finally {
    await browser.close();
  }
}

if (import.meta.url === `file://${process.argv[1]}`) void main();
