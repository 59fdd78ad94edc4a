import { expect, test } from 'vitest';
import { createBatchDeps } from '../../src/batch/deps';
import { toolOf } from '../../src/measure/tools';
import { sheetsInRegion } from '../../src/sheets/regions';
import { parseRecipe } from '../../src/batch/recipe';
import { processOne } from '../../src/batch/run';
import { encodeTiff } from '../../testing/encode-tiff';
import { makeGreyImage } from '../../src/image/grey-image';
import { detectSheets } from '../../src/sheets/detect';
import { expressSheet, sheetFromAuto } from '../../src/sheets/record';
import { scene } from '../calibration/scenes';
import { syntheticImage } from '../../testing/synthetic/stacks';
import { expressPeriod } from '../../src/measure/measurement';

test('rings: randomly oriented fringes of one period give a ring at that period', async () => {
  // 36 fringe patches at 5° steps, all 12 px: the powder-like case the radial average is for
  const size = 256;
  const data = new Float32Array(size * size);
  for (let y = 0; y < size; y++) {
    for (let x = 0; x < size; x++) {
      const k = Math.floor(x / 32) + 8 * Math.floor(y / 32);
      const a = ((k * 5) % 180) * (Math.PI / 180);
      data[y * size + x] = 100 + 40 * Math.cos((2 * Math.PI * (x * Math.cos(a) - y * Math.sin(a))) / 12) + ((k * 7919 + x * 31 + y * 17) % 13);
    }
  }
  const cal = { nmPerPx: 0.1, source: 'manual' as const, relUncertainty: 0.02, detail: '' };
  const m = await toolOf('rings').run(makeGreyImage(size, size, data, { calibration: cal }), { kind: 'rect', x: 0, y: 0, width: size, height: size });
  expect(m.tool).toBe('rings');
  // 12 px × 0.1 nm/px = 1.2 nm (definition of the pixel size); ring bins are 1/256 cycles/px wide
  expect(m.periodicities[0].periodPx).toBeCloseTo(12, 0);
  expect(expressPeriod(m.periodicities[0], m.calibration).value).toBeCloseTo(1.2, 1);
}, 60_000);

test('scale-bar route with the information strip: the bar calibrates, the strip is left out', async () => {
  // 100 px bar labelled "5 nm" → 0.05 nm/px (definition of the scale bar)
  const img = scene({ layout: 'strip-bottom', width: 640, height: 560, lengthPx: 100, x0: 40, thicknessPx: 6, label: '5 nm', font: 'sans', sizePx: 22, full: 65535, seed: 7 });
  const tiff = encodeTiff({ width: img.width, height: img.height, data: Uint16Array.from(img.data, (v) => Math.round(v)) });
  const deps = await createBatchDeps();
  const recipe = parseRecipe({ schemaVersion: 1, calibration: { route: 'scale-bar' }, area: { kind: 'whole' }, measurements: [{ tool: 'spectrum', topK: 1 }] });
  const { result } = await processOne(tiff, 'bar.tif', recipe, deps);
  expect(result.status).toBe('ok');
  expect(result.calibration?.source).toBe('scale-bar');
  expect(result.calibration!.nmPerPx).toBeCloseTo(0.05, 3);
  const strip = Number(/information strip of (\d+) px/.exec(result.notes.join(' '))?.[1]);
  expect(strip).toBeGreaterThan(0);
  expect(result.measurements[0].region).toEqual({ kind: 'rect', x: 0, y: 0, width: 640, height: 560 - strip });
}, 120_000);

test('sheets: the automatic sheets of a region, thickness in nm, positions in image pixels', async () => {
  // synthetic tactoids with known truth (tests/sheets/synthetic.ts), 8 px period, as in the sheet tool's own tests
  const truth = [
    { layers: 5, periodPx: 8, cx: 100, cy: 100, angleDeg: 90, lengthPx: 120 },
    { layers: 2, periodPx: 8, cx: 300, cy: 120, angleDeg: 30, lengthPx: 100 },
    { layers: 9, periodPx: 8, cx: 150, cy: 300, angleDeg: 150, lengthPx: 140, curvature: 0.004 },
    { layers: 3, periodPx: 8, cx: 320, cy: 320, angleDeg: 0, lengthPx: 100 },
  ];
  const img = syntheticImage(420, 420, truth, { noise: 0.05, amorphous: 0.05, seed: 2 });
  img.calibration = { nmPerPx: 0.125, source: 'manual', relUncertainty: 0.02, detail: 'test' };
  // the whole image: exactly what the sheet tool finds, with every thickness in nm
  const direct = detectSheets(img);
  const all = await sheetsInRegion(img, { x: 0, y: 0, width: 420, height: 420 });
  expect(all.thicknessNm).toEqual(direct.sheets.map((t) => expressSheet(sheetFromAuto(t), img.calibration).thickness.value));
  expect(all.thicknessNm.length).toBeGreaterThan(0);
  expect(all.measurement.tool).toBe('sheets-auto');
  // a region: the tool run on that crop, positions moved back into image pixels
  const crop = makeGreyImage(210, 210, Float32Array.from({ length: 210 * 210 }, (_, i) => img.data[(210 + Math.floor(i / 210)) * 420 + 210 + (i % 210)]), { calibration: img.calibration });
  const inCrop = detectSheets(crop).sheets;
  expect(inCrop.length).toBeGreaterThan(0);
  const half = await sheetsInRegion(img, { x: 210, y: 210, width: 210, height: 210 });
  const sheets = half.measurement.detail!.sheets as { layers: number; centerPx: [number, number] }[];
  expect(sheets.map((t) => t.layers)).toEqual(inCrop.map((t) => t.layers));
  sheets.forEach((t, i) => expect(t.centerPx).toEqual([inCrop[i].centerPx[0] + 210, inCrop[i].centerPx[1] + 210]));
  expect(half.measurement.region).toEqual({ kind: 'rect', x: 210, y: 210, width: 210, height: 210 });
}, 60_000);

test('domains: two halves of different fringe direction are two domains, centres in image pixels', async () => {
  // left half: normal at 0°, right half: at 90°, both 10 px (synthetic, known truth)
  const w = 512;
  const h = 256;
  const data = new Float32Array(w * h);
  for (let y = 0; y < h; y++) for (let x = 0; x < w; x++) data[y * w + x] = 100 + 50 * Math.cos((2 * Math.PI * (x < 256 ? x : y)) / 10);
  const img = makeGreyImage(w, h, data, { calibration: { nmPerPx: 0.1, source: 'manual', relUncertainty: 0.02, detail: '' } });
  const m = await toolOf('domains').run(img, { kind: 'rect', x: 0, y: 0, width: w, height: h });
  expect(m.tool).toBe('domains');
  const big = (m.detail!.domains as { tiles: number; periodPx: number; angleDeg: number; centerPx: [number, number] }[]).filter((d) => d.tiles >= 10);
  expect(big).toHaveLength(2);
  // 10 px × 0.1 nm/px = 1 nm (definition of the pixel size)
  for (const d of big) expect(d.periodPx).toBeCloseTo(10, 0);
  const left = big.find((d) => d.centerPx[0] < 256)!;
  const right = big.find((d) => d.centerPx[0] >= 256)!;
  expect(Math.min(left.angleDeg, 180 - left.angleDeg)).toBeLessThan(3);
  expect(Math.abs(right.angleDeg - 90)).toBeLessThan(3);
  expect(expressPeriod(m.periodicities[0], m.calibration).value).toBeCloseTo(1.0, 1);
}, 60_000);
