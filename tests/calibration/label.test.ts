import { expect, test } from 'vitest';
import { checkMicroPrefix, parseScaleLabel, scaleBarCalibration } from '../../src/calibration/label';
import { otsuThreshold } from '../../src/image/otsu';
import { drawText } from '../../src/figure/draw-text';

// Unit factors: SI brochure (BIPM, 9th ed., 2019): 1 pm = 1e-3 nm, 1 µm = 1e3 nm; 1 Å = 0.1 nm (ibid., Table 8, non-SI).
test.each([
  ['200 nm', 200, 'nm', 200],
  ['200nm', 200, 'nm', 200],
  ['0,5 µm', 0.5, 'µm', 500],
  ['0.5 um', 0.5, 'µm', 500],
  ['5 μm', 5, 'µm', 5000], // Greek mu U+03BC
  ['20 Å', 20, 'Å', 2],
  ['20 A', 20, 'Å', 2],
  ['20 \u212b', 20, 'Å', 2], // ANGSTROM SIGN, NFC-normalised to Å
  ['500 pm', 500, 'pm', 0.5],
  ['  2.5   nm ', 2.5, 'nm', 2.5],
  ['1 mm', 1, 'mm', 1e6],
])('parseScaleLabel(%j)', (text, value, unit, nm) => {
  const p = parseScaleLabel(text)!;
  expect(p).not.toBeNull();
  expect(p.value).toBeCloseTo(value, 12);
  expect(p.unit).toBe(unit);
  expect(p.nm).toBeCloseTo(nm, 12);
  expect(p.confidence).toBe(1);
});

test('a number and unit among other characters is read with lower confidence', () => {
  expect(parseScaleLabel('| 100 nm |')!.confidence).toBeLessThan(1);
});

test.each(['', 'nm', '200', '2 cm', '5 pum', '20 nm 50 nm', '0 nm', 'S00 nm', '1O nm'])('unreadable label %j gives null, never a guess', (t) => {
  expect(parseScaleLabel(t)).toBeNull();
});

test("Otsu's threshold splits a two-level histogram between the levels (Otsu 1979)", () => {
  const d = new Uint8Array(1000);
  for (let i = 0; i < 1000; i++) d[i] = i < 700 ? 40 : 200;
  const t = otsuThreshold(d);
  expect(t).toBeGreaterThanOrEqual(40);
  expect(t).toBeLessThan(200);
});

function binarised(text: string, font: 'sans' | 'block') {
  const w = 300;
  const h = 90;
  const r = { width: w, height: h, data: new Float32Array(w * h).fill(255) };
  drawText(r, text, 15, 60, { sizePx: 40, value: 0, font });
  return { width: w, height: h, data: Uint8Array.from(r.data, (v) => (v < 128 ? 0 : 255)) };
}

test('checkMicroPrefix: a p encloses a bowl, a µ does not (glyph topology)', () => {
  for (const font of ['sans', 'block'] as const) {
    expect(checkMicroPrefix(binarised('5 µm', font), '5 pm')).toBe('5 µm');
    expect(checkMicroPrefix(binarised('5 pm', font), '5 pm')).toBe('5 pm');
    expect(checkMicroPrefix(binarised('500 pm', font), '500 um')).toBe('500 pm');
    expect(checkMicroPrefix(binarised('200 nm', font), '200 nm')).toBe('200 nm');
  }
});

test('checkMicroPrefix: when the glyph count does not match, the prefix is left unread', () => {
  expect(checkMicroPrefix(binarised('5 µm', 'sans'), '55 pm')).toBe('55 ?m');
  expect(parseScaleLabel(checkMicroPrefix(binarised('5 µm', 'sans'), '55 pm'))).toBeNull();
});

test('scale-bar calibration: nm/px and its combined uncertainty (GUM §5.1.6)', () => {
  const c = scaleBarCalibration({ lengthPx: 200, uncertaintyPx: 0.2 }, 100);
  expect(c.nmPerPx).toBeCloseTo(0.5, 12);
  expect(c.source).toBe('scale-bar');
  // parts: end location 0.2/200; whole-pixel drawing ±0.5 px rectangular, 0.5/(√3·200) (GUM §4.3.7);
  // bar representation 5 %/√3 (EMSA abstract, ±5 % magnification, rectangular)
  const round = 0.5 / Math.sqrt(3) / 200;
  expect(c.relUncertainty).toBeCloseTo(Math.hypot(0.001, round, 0.05 / Math.sqrt(3)), 12);
  expect(c.parts!.map((p) => [p.name, p.type])).toEqual([['bar end location', 'A'], ['bar drawn to whole pixels', 'B'], ['bar representation of the true pixel size', 'B']]);
  expect(scaleBarCalibration({ lengthPx: 200, uncertaintyPx: 0.2 }, 100, { representationRelUncertainty: 0 }).relUncertainty).toBeCloseTo(Math.hypot(0.001, round), 12);
  expect(() => scaleBarCalibration({ lengthPx: -1, uncertaintyPx: 0 }, 100)).toThrow(/lengthPx/);
  expect(() => scaleBarCalibration({ lengthPx: 10, uncertaintyPx: 0 }, 0)).toThrow(/labelNm/);
});

test('checkMicroPrefix uses the OCR engine\'s character boxes when given', () => {
  const r = binarised('5 µm', 'block');
  const cols: [number, number][] = [];
  // find the ink columns of each glyph
  const inkCol = (x: number) => { for (let y = 0; y < r.height; y++) if (r.data[y * r.width + x] === 0) return true; return false; };
  let x = 0;
  while (x < r.width) { if (inkCol(x)) { const s0 = x; while (x < r.width && inkCol(x)) x++; cols.push([s0, x - 1]); } else x++; }
  expect(cols.length).toBe(3);
  const sym = cols.map(([a, b], i) => ({ text: ['5', 'p', 'm'][i], x0: a, y0: 0, x1: b, y1: r.height - 1 }));
  expect(checkMicroPrefix(r, '5 pm', sym)).toBe('5 µm');
  const rp = binarised('5 pm', 'block');
  expect(checkMicroPrefix(rp, '5 um', sym.map((c) => ({ ...c, text: c.text === 'p' ? 'u' : c.text })))).toBe('5 pm');
});
