import { describe, expect, test } from 'vitest';
import { readFileSync } from 'node:fs';
import { decode } from 'fast-png';
import { findScaleBar } from '../../src/calibration/scale-bar';
import { scaleBarCalibration, parseScaleLabel } from '../../src/calibration/label';
import { makeGreyImage } from '../../src/image/grey-image';
import { scene, trueX0, rng, type SceneSpec } from './scenes';

// Synthetic micrographs with bars of known fractional length (algorithm tests with known truth).
const SPECS: SceneSpec[] = [
  { layout: 'strip-bottom', width: 640, height: 480, lengthPx: 150.37, x0: 40.6, thicknessPx: 8, label: '200 nm', font: 'sans', sizePx: 20, full: 255, seed: 1 },
  { layout: 'strip-bottom', width: 1024, height: 1024, lengthPx: 256.81, x0: 700.12, thicknessPx: 12, label: '50 nm', font: 'block', sizePx: 28, full: 65535, seed: 11, dark: true },
  { layout: 'corner-overlay', width: 640, height: 480, lengthPx: 123.8, x0: 30.25, thicknessPx: 6, label: '5 µm', font: 'block', sizePx: 16, full: 65535, seed: 2 },
  { layout: 'corner-overlay', width: 2048, height: 2048, lengthPx: 407.45, x0: 10.5, thicknessPx: 16, label: '10 nm', font: 'sans', sizePx: 40, full: 255, seed: 12 },
  { layout: 'border', width: 800, height: 600, lengthPx: 212.15, x0: 20.9, thicknessPx: 10, label: '20 Å', font: 'sans', sizePx: 22, full: 255, seed: 3 },
  { layout: 'border', width: 512, height: 512, lengthPx: 100.02, x0: 60.77, thicknessPx: 4, label: '500 pm', font: 'block', sizePx: 14, full: 65535, seed: 13 },
  { layout: 'ticks', width: 1024, height: 768, lengthPx: 301.5, x0: 600.33, thicknessPx: 5, label: '0,5 um', font: 'block', sizePx: 26, full: 65535, seed: 4 },
  { layout: 'ticks', width: 900, height: 700, lengthPx: 180.66, x0: 33.4, thicknessPx: 7, label: '100 nm', font: 'sans', sizePx: 18, full: 255, seed: 14, dark: true },
];

describe('findScaleBar on bars of known length', () => {
  for (const s of SPECS) {
    test(`${s.layout}${s.dark ? ' (dark)' : ''}, ${s.lengthPx} px, ${s.font} ${s.sizePx} px`, () => {
      const img = scene(s);
      const bar = findScaleBar(img);
      expect(bar).not.toBeNull();
      // target of the task: bar length within 0.5 px
      expect(Math.abs(bar!.lengthPx - s.lengthPx)).toBeLessThan(0.5);
      expect(Math.abs(bar!.x0 - trueX0(s))).toBeLessThan(0.5);
      // the stated uncertainty covers the error (k = 2) and is not absurdly large
      expect(Math.abs(bar!.lengthPx - s.lengthPx)).toBeLessThan(2 * bar!.uncertaintyPx + 0.02);
      expect(bar!.uncertaintyPx).toBeLessThan(0.5);
      const bright = s.layout === 'corner-overlay' ? false : !s.dark;
      expect(bar!.polarity).toBe(bright ? 'bright' : 'dark');
      expect(bar!.thicknessPx).toBe(s.thicknessPx);
      expect(bar!.labelBox).not.toBeNull();
      if (s.layout === 'corner-overlay') {
        expect(bar!.stripBox).toBeNull();
        expect(bar!.panelBox).not.toBeNull();
      } else {
        expect(bar!.stripBox).not.toBeNull();
        const [x, , w] = bar!.stripBox!;
        expect(x).toBe(0);
        expect(w).toBe(s.width);
      }
      // nm/px within 0.5 % for bars of 100 px and more (task target)
      const cal = scaleBarCalibration(bar!, parseScaleLabel(s.label)!.nm);
      const truth = parseScaleLabel(s.label)!.nm / s.lengthPx;
      expect(Math.abs(cal.nmPerPx / truth - 1)).toBeLessThan(0.005);
    });
  }
});

test('the label box lies beside the bar and holds the label (bottom strip)', () => {
  const s = SPECS[0];
  const bar = findScaleBar(scene(s))!;
  const [x, y, w, h] = bar.labelBox!;
  expect(y).toBeGreaterThan(bar.y0); // drawn below the bar
  expect(x + w / 2).toBeCloseTo(s.x0 + s.lengthPx / 2, -1); // centred on it
  expect(h).toBeGreaterThan(s.sizePx * 0.9);
  expect(h).toBeLessThan(s.sizePx * 2);
});

test('a bar with hard (not anti-aliased) ends reports the 1/√12 px end uncertainty', () => {
  const s = { ...SPECS[0], lengthPx: 150, x0: 40 };
  const bar = findScaleBar(scene(s))!;
  expect(bar.lengthPx).toBeCloseTo(150, 6);
  expect(bar.uncertaintyPx).toBeCloseTo(Math.SQRT2 / Math.sqrt(12), 6); // uniform over a pixel, GUM §4.3.7
});

test('no bar in plain noise', () => {
  const r = rng(5);
  const data = new Float32Array(400 * 300).map(() => Math.round(255 * r()));
  expect(findScaleBar(makeGreyImage(400, 300, data))).toBeNull();
});

test('no bar in a real HAADF-STEM image that has none (open reference data, SOURCES.md §1)', () => {
  const png = decode(readFileSync('tests/fixtures/reference-data/stem-haadf_AlMgSi-alloy_Al-001-matrix_thumbnail256.png'));
  const ch = png.channels;
  const data = new Float32Array(png.width * png.height);
  for (let i = 0; i < data.length; i++) data[i] = (png.data as Uint8Array)[i * ch];
  expect(findScaleBar(makeGreyImage(png.width, png.height, data))).toBeNull();
});

test('bad options are rejected by name', () => {
  const img = scene(SPECS[0]);
  expect(() => findScaleBar(img, { minLengthPx: 1 })).toThrow(/minLengthPx/);
  expect(() => findScaleBar(img, { valueTolerance: 0.7 })).toThrow(/valueTolerance/);
  expect(() => findScaleBar(img, { minContrast: 0 })).toThrow(/minContrast/);
});

test('bars in JPEG files (quality 85): found, length within 0.5 px', async () => {
  const { Image, encodeJpeg } = await import('image-js');
  const { decodeImage } = await import('../../src/image/decode');
  for (const s of SPECS.filter((x) => x.full === 255)) {
    const img = scene(s);
    const grey = new Image(img.width, img.height, { colorModel: 'GREY', data: Uint8Array.from(img.data) });
    const jpeg = decodeImage(encodeJpeg(grey, { quality: 85 }), 'bar.jpg');
    const bar = findScaleBar(jpeg);
    expect(bar, s.layout).not.toBeNull();
    expect(Math.abs(bar!.lengthPx - s.lengthPx)).toBeLessThan(0.5);
  }
});
