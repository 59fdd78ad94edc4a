import { expect, test } from 'vitest';
import { createBatchDeps, ringsMeasurement } from '../../src/batch/deps';
import { parseRecipe } from '../../src/batch/recipe';
import { processOne } from '../../src/batch/run';
import { encodeTiff } from '../../src/image/encode-tiff';
import { makeGreyImage } from '../../src/image/grey-image';
import { scene } from '../calibration/scenes';

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
  const m = await ringsMeasurement(makeGreyImage(size, size, data, { calibration: cal }), { kind: 'rect', x: 0, y: 0, width: size, height: size });
  expect(m.tool).toBe('rings');
  // 12 px × 0.1 nm/px = 1.2 nm (definition of the pixel size); ring bins are 1/256 cycles/px wide
  expect(m.periodicities[0].periodPx).toBeCloseTo(12, 0);
  expect(m.periodicities[0].periodNm!).toBeCloseTo(1.2, 1);
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
