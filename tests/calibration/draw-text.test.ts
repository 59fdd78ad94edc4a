import { expect, test } from 'vitest';
import { DRAWABLE_CHARACTERS, drawLine, drawText, fillRect, measureText, strokeRectOutside } from '../../src/figure/draw-text';

const blank = (w: number, h: number) => ({ width: w, height: h, data: new Float32Array(w * h) });
const sum = (a: Float32Array) => a.reduce((s, v) => s + v, 0);

test('fillRect covers exactly its area at fractional edges (box-filter coverage)', () => {
  const r = blank(50, 20);
  fillRect(r, 3.3, 4.75, 20.45, 6.5, 1);
  expect(sum(r.data)).toBeCloseTo(20.45 * 6.5, 4);
  // the end pixel holds the fraction of it that is covered
  expect(r.data[6 * 50 + 3]).toBeCloseTo(0.7, 6);
  expect(r.data[6 * 50 + 23]).toBeCloseTo(0.75, 6); // 3.3 + 20.45 = 23.75
});

test('strokeRectOutside leaves the inside untouched and has the band area', () => {
  const r = blank(40, 40);
  strokeRectOutside(r, 10, 10, 15, 8, 2, 1);
  expect(sum(r.data)).toBeCloseTo((15 + 4) * (8 + 4) - 15 * 8, 4);
  expect(r.data[14 * 40 + 15]).toBe(0);
});

test('a thick line has about width × length of ink (plus round caps)', () => {
  const r = blank(100, 40);
  drawLine(r, 10.5, 20.5, 90.5, 20.5, 4, 1);
  const expected = 4 * 80 + Math.PI * 2 * 2;
  expect(Math.abs(sum(r.data) / expected - 1)).toBeLessThan(0.03);
});

test('text: every drawable character leaves ink inside the measured box, both fonts', () => {
  for (const font of ['sans', 'block'] as const) {
    const text = DRAWABLE_CHARACTERS.replace(' ', '');
    const m = measureText(text, { sizePx: 20, value: 1, font });
    const r = blank(Math.ceil(m.widthPx) + 20, 60);
    drawText(r, text, 10, 40, { sizePx: 20, value: 1, font });
    let outside = 0;
    for (let y = 0; y < r.height; y++) {
      for (let x = 0; x < r.width; x++) {
        const inside = x >= 9 && x <= 11 + m.widthPx && y >= 40 - m.ascentPx - 1 && y <= 40 + m.descentPx + 1;
        if (!inside) outside += r.data[y * r.width + x];
      }
    }
    expect(outside).toBe(0);
    expect(sum(r.data)).toBeGreaterThan(text.length * 10);
  }
  expect(measureText('200 nm', { sizePx: 20, value: 1, font: 'block' }).widthPx).toBeGreaterThan(measureText('200 nm', { sizePx: 20, value: 1, font: 'sans' }).widthPx);
});

test('label glyphs: every lowercase letter, every capital and the signs of axis labels are drawable', () => {
  // the characters of figure labels such as "strongest period per image (nm)" and "d = 1.40 ± 0.02 nm" (common practice)
  const wanted = 'abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ()%±+·×°';
  for (const ch of wanted) expect(DRAWABLE_CHARACTERS).toContain(ch);
  expect(new Set(DRAWABLE_CHARACTERS).size).toBe([...DRAWABLE_CHARACTERS].length);
});

test('each glyph alone draws ink, all of it inside its own measured box, both fonts', () => {
  const sizePx = 16;
  for (const font of ['sans', 'block'] as const) {
    for (const ch of DRAWABLE_CHARACTERS.replace(' ', '')) {
      const m = measureText(ch, { sizePx, value: 1, font });
      const r = blank(Math.ceil(m.widthPx) + 20, 50);
      drawText(r, ch, 10, 32, { sizePx, value: 1, font });
      let inside = 0;
      let outside = 0;
      for (let y = 0; y < r.height; y++) {
        for (let x = 0; x < r.width; x++) {
          const v = r.data[y * r.width + x];
          // one pixel of slack for the anti-aliasing ramp
          if (x >= 9 && x <= 11 + m.widthPx && y >= 32 - m.ascentPx - 1 && y <= 32 + m.descentPx + 1) inside += v;
          else outside += v;
        }
      }
      expect(outside, `${font} '${ch}' outside its box`).toBe(0);
      // at least a dot's worth of ink: a round dot of the stroke width has area π·(w/2)²
      const w = (font === 'sans' ? 0.1 : 0.17) * sizePx;
      expect(inside, `${font} '${ch}' ink`).toBeGreaterThan(0.5 * Math.PI * (w / 2) ** 2);
    }
  }
});

test('a lowercase letter sits on the baseline at the x-height, a capital reaches the cap height', () => {
  // x-height about 0.62 of the cap height, as the existing n, u, m (common practice for sans faces: 0.5–0.7)
  const inkRows = (ch: string) => {
    const r = blank(40, 60);
    drawText(r, ch, 10, 40, { sizePx: 20, value: 1 });
    const rows: number[] = [];
    for (let y = 0; y < r.height; y++) {
      let s = 0;
      for (let x = 0; x < r.width; x++) s += r.data[y * r.width + x];
      if (s > 0.5) rows.push(y);
    }
    return { top: Math.min(...rows), bottom: Math.max(...rows) };
  };
  for (const ch of 'acemnorsuvwxz') {
    const { top, bottom } = inkRows(ch);
    expect(Math.abs(40 - 0.62 * 20 - top), `'${ch}' top`).toBeLessThanOrEqual(2);
    expect(Math.abs(40 - bottom), `'${ch}' bottom`).toBeLessThanOrEqual(2);
  }
  for (const ch of 'BEHLTbdhkl') {
    const { top } = inkRows(ch);
    expect(Math.abs(40 - 20 - top), `'${ch}' top`).toBeLessThanOrEqual(2);
  }
  for (const ch of 'gjpqy') expect(inkRows(ch).bottom, `'${ch}' descender`).toBeGreaterThan(40 + 4);
});

test('bad arguments are rejected by name', () => {
  const r = blank(10, 10);
  expect(() => drawText(r, '§', 0, 5, { sizePx: 5, value: 1 })).toThrow(/§/);
  expect(() => drawText(r, '1', 0, 5, { sizePx: -5, value: 1 })).toThrow(/sizePx/);
  expect(() => fillRect(r, 0, 0, 0, 5, 1)).toThrow(/size/);
  expect(() => drawLine(r, 0, 0, 5, 5, 0, 1)).toThrow(/widthPx/);
  expect(() => drawText({ width: 3, height: 3, data: new Float32Array(4) }, '1', 0, 0, { sizePx: 5, value: 1 })).toThrow(/raster/);
});
