import { afterAll, beforeAll, expect, test } from 'vitest';
import { LABEL_CHARACTERS } from '../../src/calibration/label';
import { readScaleBar } from '../../src/calibration/label-read';
import { createTextReader, type TextReader } from '../../src/calibration/ocr';
import { parseScaleLabel } from '../../src/calibration/label';
import { scene, type SceneSpec } from './scenes';

// OCR runs offline from node_modules (tesseract.js, LSTM eng 4.0.0_best_int).
let reader: TextReader;
beforeAll(async () => {
  reader = await createTextReader({ whitelist: LABEL_CHARACTERS });
});
afterAll(async () => {
  await reader?.close();
});

// Labels in two stroke fonts at several sizes, in every layout; truth is the text drawn.
const CASES: SceneSpec[] = [
  { layout: 'strip-bottom', width: 640, height: 480, lengthPx: 150.37, x0: 40.6, thicknessPx: 8, label: '200 nm', font: 'sans', sizePx: 20, full: 255, seed: 1 },
  { layout: 'strip-bottom', width: 1024, height: 1024, lengthPx: 256.81, x0: 700.12, thicknessPx: 12, label: '50 nm', font: 'block', sizePx: 28, full: 65535, seed: 11, dark: true },
  { layout: 'corner-overlay', width: 640, height: 480, lengthPx: 123.8, x0: 30.25, thicknessPx: 6, label: '5 µm', font: 'block', sizePx: 16, full: 65535, seed: 2 },
  { layout: 'corner-overlay', width: 1024, height: 1024, lengthPx: 207.45, x0: 10.5, thicknessPx: 10, label: '10 nm', font: 'sans', sizePx: 32, full: 255, seed: 12 },
  { layout: 'border', width: 800, height: 600, lengthPx: 212.15, x0: 20.9, thicknessPx: 10, label: '20 Å', font: 'sans', sizePx: 22, full: 255, seed: 3 },
  { layout: 'border', width: 512, height: 512, lengthPx: 100.02, x0: 60.77, thicknessPx: 4, label: '500 pm', font: 'block', sizePx: 14, full: 65535, seed: 13 },
  { layout: 'ticks', width: 1024, height: 768, lengthPx: 301.5, x0: 600.33, thicknessPx: 5, label: '0,5 µm', font: 'block', sizePx: 26, full: 65535, seed: 4 },
  { layout: 'ticks', width: 900, height: 700, lengthPx: 180.66, x0: 33.4, thicknessPx: 7, label: '100 nm', font: 'sans', sizePx: 18, full: 255, seed: 14, dark: true },
  { layout: 'strip-bottom', width: 640, height: 480, lengthPx: 140.2, x0: 300.3, thicknessPx: 6, label: '2 µm', font: 'sans', sizePx: 16, full: 255, seed: 21 },
  { layout: 'corner-overlay', width: 640, height: 480, lengthPx: 160.7, x0: 8.8, thicknessPx: 6, label: '1 µm', font: 'sans', sizePx: 24, full: 255, seed: 22 },
];

for (const s of CASES) {
  test(`reads '${s.label}' (${s.font}, ${s.sizePx} px, ${s.layout}) and calibrates`, async () => {
    const reading = await readScaleBar(scene(s), reader);
    const truth = parseScaleLabel(s.label)!;
    expect(reading.label, `OCR read ${JSON.stringify(reading.ocrText)}`).not.toBeNull();
    expect(reading.label!.value).toBeCloseTo(truth.value, 12);
    expect(reading.label!.unit).toBe(truth.unit);
    expect(reading.label!.confidence).toBeGreaterThan(0.5);
    const cal = reading.calibration!;
    expect(cal.source).toBe('scale-bar');
    expect(Math.abs(cal.nmPerPx / (truth.nm / s.lengthPx) - 1)).toBeLessThan(0.005); // task target, bars ≥ 100 px
  });
}

test('labels survive JPEG compression (quality 75)', async () => {
  const { Image, encodeJpeg } = await import('image-js');
  const { decodeImage } = await import('../../src/image/decode');
  for (const s of [CASES[4], CASES[7], { ...CASES[8], font: 'block' as const }]) {
    const img = scene(s);
    const grey = new Image(img.width, img.height, { colorModel: 'GREY', data: Uint8Array.from(img.data) });
    const reading = await readScaleBar(decodeImage(encodeJpeg(grey, { quality: 75 }), 'bar.jpg'), reader);
    const truth = parseScaleLabel(s.label)!;
    expect(reading.label, `OCR read ${JSON.stringify(reading.ocrText)}`).not.toBeNull();
    expect(reading.label!.nm).toBeCloseTo(truth.nm, 12);
    expect(Math.abs(reading.bar!.lengthPx - s.lengthPx)).toBeLessThan(0.5);
  }
});
