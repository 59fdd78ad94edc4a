import { decode as decodePng } from 'fast-png';
import { mkdtemp, readdir, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, expect, test } from 'vitest';
import { encodeTiff } from '../../testing/encode-tiff';
import { main } from '../../src/cli/main';
import { parseCsv } from './csv';

// The batch command end to end: real TIFF files (encodeTiff), the project's decoder and spectrum
// tool, two worker threads.
let dir = '';

/** 16-bit lattice fringes of a known period along a known direction, plus seeded noise. */
function fringes(size: number, periodPx: number, angleDeg: number, seed: number): Uint16Array {
  const out = new Uint16Array(size * size);
  const a = (angleDeg * Math.PI) / 180;
  // the angle is counter-clockwise from +x with y up on the screen (row index grows downwards)
  const fx = Math.cos(a) / periodPx;
  const fy = -Math.sin(a) / periodPx;
  let s = seed >>> 0;
  for (let y = 0; y < size; y++) {
    for (let x = 0; x < size; x++) {
      s = (s * 1664525 + 1013904223) >>> 0;
      const noise = (s / 2 ** 32 - 0.5) * 4000;
      out[y * size + x] = Math.round(30000 + 8000 * Math.cos(2 * Math.PI * (fx * x + fy * y)) + noise);
    }
  }
  return out;
}

function capture() {
  const out: string[] = [];
  const err: string[] = [];
  return { io: { out: (t: string) => out.push(t), err: (t: string) => err.push(t) }, out, err };
}

beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'batch-cli-'));
  const nmPerPx = 0.0625;
  const pxPerCm = 1e7 / nmPerPx; // 1 cm = 10⁷ nm
  // periods 16 px and 20 px → 1.0 nm and 1.25 nm at 0.0625 nm/px
  await writeFile(join(dir, 'film-01.tif'), encodeTiff({ width: 256, height: 256, data: fringes(256, 16, 30, 1), resolution: { x: pxPerCm, unit: 'cm' } }));
  await writeFile(join(dir, 'film-02.tif'), encodeTiff({ width: 256, height: 256, data: fringes(256, 20, 100, 2), resolution: { x: pxPerCm, unit: 'cm' } }));
  await writeFile(join(dir, 'film-03.tif'), encodeTiff({ width: 256, height: 256, data: fringes(256, 16, 45, 3) })); // no calibration
  await writeFile(join(dir, 'film-04.tif'), new Uint8Array([0x49, 0x49, 42, 0, 8, 0, 0, 0, 1, 2, 3])); // corrupt TIFF
  await writeFile(join(dir, 'recipe.json'), JSON.stringify({ schemaVersion: 1, name: 'fringes', area: { kind: 'whole', infoStripPx: 0 }, measurements: [{ tool: 'spectrum', topK: 2 }] }));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

test('batch: counts, CSV rows in nm, figures, exit code 1 for the bad files; a second run skips all', async () => {
  const args = ['batch', dir, '--recipe', join(dir, 'recipe.json'), '--out', join(dir, 'out', 'results.csv'), '--json-out', join(dir, 'out', 'all.json'), '--figures', join(dir, 'out', 'fig'), '--jobs', '2'];
  const c = capture();
  expect(await main(args, c.io)).toBe(1);
  expect(c.out.join('')).toMatch(/4 images: 4 processed, 0 skipped \(finished earlier\); 2 ok, 2 failed/);
  const err = c.err.join('');
  expect(err).toMatch(/failed: film-03.tif: no pixel size in the file metadata/);
  expect(err).toMatch(/failed: film-04.tif: cannot read the file/);

  const rows = parseCsv(await readFile(join(dir, 'out', 'results.csv'), 'utf8'));
  const h = rows[0];
  const ok = rows.slice(1).filter((r) => r[h.indexOf('status')] === 'ok');
  const first = (file: string) => ok.find((r) => r[h.indexOf('file')] === file && r[h.indexOf('rank')] === '1')!;
  // d = period in px × nm per px (definition of the pixel size): 16 × 0.0625 = 1.0 nm, 20 × 0.0625 = 1.25 nm
  expect(Number(first('film-01.tif')[h.indexOf('periodNm')])).toBeCloseTo(1.0, 2);
  expect(Number(first('film-02.tif')[h.indexOf('periodNm')])).toBeCloseTo(1.25, 2);
  expect(Number(first('film-01.tif')[h.indexOf('angleDeg')])).toBeCloseTo(30, 0);
  expect(first('film-01.tif')[h.indexOf('calibrationSource')]).toBe('metadata');
  expect(rows.slice(1).filter((r) => r[h.indexOf('status')] === 'failed')).toHaveLength(2);

  const json = JSON.parse(await readFile(join(dir, 'out', 'all.json'), 'utf8'));
  expect(json.pooled.files).toEqual({ total: 4, ok: 2, failed: 2 });
  const figs = (await readdir(join(dir, 'out', 'fig'))).sort();
  // two measured images: their figures, and no histogram of 2 values (common practice: no
  // distribution from fewer than 3; the values are in the summary CSV); the histogram PNG itself
  // is checked in tests/batch/figure.test.ts
  expect(figs).toEqual(['film-01.tif.png', 'film-02.tif.png']);
  const png = decodePng(await readFile(join(dir, 'out', 'fig', 'film-01.tif.png')));
  expect([png.width, png.height]).toEqual([256, 256]);

  const again = capture();
  expect(await main(args, again.io)).toBe(1);
  expect(again.out.join('')).toMatch(/4 images: 0 processed, 4 skipped/);
}, 180_000);

test('batch: a bad recipe is a usage error naming the key', async () => {
  await writeFile(join(dir, 'bad.json'), JSON.stringify({ schemaVersion: 1, acceptance: { periodRangeNm: ['10 px', '20 px'] } }));
  const c = capture();
  expect(await main(['batch', dir, '--recipe', join(dir, 'bad.json'), '--out', join(dir, 'o2', 'r.csv')], c.io)).toBe(2);
  expect(c.err.join('')).toMatch(/acceptance.periodRangeNm\[0\]: is in pixels/);
});
