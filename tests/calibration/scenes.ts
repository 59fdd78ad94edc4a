/**
 * Synthetic micrographs with burned-in scale bars of known length, for the calibration tests.
 * Seeded: the same arguments give the same pixels.
 */
import { makeGreyImage, type GreyImage } from '../../src/image/grey-image';
import { drawText, fillRect, measureText, strokeRectOutside, type StrokeFontName } from '../../src/figure/draw-text';
import { rng } from '../../testing/random';
export { rng };


export type Layout = 'strip-bottom' | 'corner-overlay' | 'border' | 'ticks';

export interface SceneSpec {
  layout: Layout;
  width: number;
  height: number;
  /** Bar length in px (fractional). */
  lengthPx: number;
  /** Left end of the bar in px (fractional). */
  x0: number;
  thicknessPx: number;
  label: string;
  font: StrokeFontName;
  sizePx: number;
  /** Full-scale value (255 for 8-bit, 65535 for 16-bit). */
  full: number;
  seed: number;
  /** Strip layouts: dark bar and text on a bright strip instead of bright on dark. */
  dark?: boolean;
}

/** A noisy textured "micrograph" with the bar and label burned in as the layout says. */
export function scene(s: SceneSpec): GreyImage {
  const { width, height, full } = s;
  const r = rng(s.seed);
  const data = new Float32Array(width * height);
  const fx = 2 * Math.PI * (0.01 + 0.02 * r());
  const fy = 2 * Math.PI * (0.01 + 0.02 * r());
  for (let y = 0; y < height; y++) {
    for (let x = 0; x < width; x++) {
      const texture = 0.45 + 0.15 * Math.sin(fx * x) * Math.cos(fy * y);
      data[y * width + x] = Math.min(full, Math.max(0, full * (texture + 0.12 * (r() - 0.5))));
    }
  }
  const img = { width, height, data };
  const barY = (stripTop: number, stripH: number) => Math.round(stripTop + stripH * 0.3);
  const text = { sizePx: s.sizePx, font: s.font } as const;
  const m = measureText(s.label, { ...text, value: 0 });
  const cx = s.x0 + s.lengthPx / 2;
  if (s.layout === 'strip-bottom' || s.layout === 'ticks') {
    const stripH = Math.round(s.thicknessPx + m.ascentPx + m.descentPx + 40);
    const top = height - stripH;
    const ink = s.dark ? 0 : full;
    fillRect(img, 0, top, width, stripH, full - ink);
    const y = s.layout === 'ticks' ? top + Math.round(m.ascentPx + m.descentPx) + 18 : barY(top, stripH) - 4;
    fillRect(img, s.x0, y, s.lengthPx, s.thicknessPx, ink);
    if (s.layout === 'ticks') {
      // ticks flush with the ends, drawn above and below the bar (not over it)
      for (const tx of [s.x0, s.x0 + s.lengthPx - 3]) {
        fillRect(img, tx, y - 6, 3, 6, ink);
        fillRect(img, tx, y + s.thicknessPx, 3, 6, ink);
      }
      drawText(img, s.label, cx - m.widthPx / 2, y - 10 - m.descentPx, { ...text, value: ink });
    } else {
      drawText(img, s.label, cx - m.widthPx / 2, y + s.thicknessPx + 8 + m.ascentPx, { ...text, value: ink });
    }
  } else if (s.layout === 'corner-overlay') {
    const boxW = Math.ceil(Math.max(s.lengthPx, m.widthPx) + 30);
    const boxH = Math.ceil(s.thicknessPx + m.ascentPx + m.descentPx + 30);
    const bx = width - boxW - 12;
    const by = height - boxH - 12;
    fillRect(img, bx, by, boxW, boxH, full);
    const x0 = bx + 15 + (s.x0 % 1);
    const y = by + boxH - 12 - s.thicknessPx;
    fillRect(img, x0, y, s.lengthPx, s.thicknessPx, 0);
    drawText(img, s.label, x0 + s.lengthPx / 2 - m.widthPx / 2, y - 6 - m.descentPx, { ...text, value: 0 });
  } else {
    const stripH = Math.round(Math.max(s.thicknessPx, m.ascentPx + m.descentPx) + 30);
    fillRect(img, 0, 0, width, stripH, Math.round(full / 2));
    const y = Math.round((stripH - s.thicknessPx) / 2);
    // the border first, the bar over it, as drawing software does
    strokeRectOutside(img, s.x0, y, s.lengthPx, s.thicknessPx, 2, 0);
    fillRect(img, s.x0 - 1, y, 2, s.thicknessPx, 0);
    fillRect(img, s.x0 + s.lengthPx - 1, y, 2, s.thicknessPx, 0);
    fillRect(img, s.x0, y, s.lengthPx, s.thicknessPx, full);
    drawText(img, s.label, s.x0 + s.lengthPx + 14, y + s.thicknessPx / 2 + m.ascentPx / 2 - 1, { ...text, value: full });
  }
  for (let i = 0; i < data.length; i++) data[i] = Math.round(data[i]);
  return makeGreyImage(width, height, data, { bitDepth: full > 255 ? 16 : 8, sampleKind: 'uint' });
}

/** Where the bar's left end really is (the corner overlay keeps only the fraction of x0). */
export function trueX0(s: SceneSpec): number {
  if (s.layout !== 'corner-overlay') return s.x0;
  const m = measureText(s.label, { sizePx: s.sizePx, font: s.font, value: 0 });
  const boxW = Math.ceil(Math.max(s.lengthPx, m.widthPx) + 30);
  return s.width - boxW - 12 + 15 + (s.x0 % 1);
}
