import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { zlibSync } from 'fflate';
import { expect, test } from 'vitest';
import { checkSpectrumRegion, MAX_SPECTRUM_PIXELS, RegionTooLargeError } from '../../src/image/size-limits';
import { main } from '../../src/cli/main';
import { ihdr, writePng } from '../../testing/png';

// opencv.js's heap stops at 1 GiB (toolchain notes; measured: 8192² fits, 10240² runs out), so a
// larger spectrum region is refused before the engine is asked, with a crop that fits.
test('regions up to 8192 × 8192 px pass; a larger one is refused with the crop to measure', () => {
  expect(() => checkSpectrumRegion(8192, 8192)).not.toThrow();
  expect(() => checkSpectrumRegion(16384, 4096)).not.toThrow();
  expect(() => checkSpectrumRegion(16384, 16384)).toThrow(RegionTooLargeError);
  expect(() => checkSpectrumRegion(16384, 16384)).toThrow('the region of 16384 × 16384 px (268435456 px) is larger than a spectrum can hold (at most 67108864 px, e.g. 8192 × 8192): measure a crop, e.g. the centre with --region 4096,4096,8192,8192');
  expect(() => checkSpectrumRegion(20000, 9000, { x: 0, y: 0 }, 'recipe')).toThrow(/set the recipe's area to \{"kind": "centre", "sizePx": 8192\} or to \{"kind": "tiles", "rows": 2, "columns": 2\}/);
  expect(() => checkSpectrumRegion(9000, 9000, { x: 0, y: 0 }, 'app')).toThrow(/draw a smaller rectangle, at most 8192 × 8192 px/);
  expect(MAX_SPECTRUM_PIXELS).toBe(8192 * 8192);
});

test("'measure' on a valid image larger than a spectrum can hold says how to crop", { timeout: 120_000 }, async () => {
  const dir = mkdtempSync(join(tmpdir(), 'big-'));
  try {
    const side = 8200;
    const file = join(dir, 'big.png');
    writeFileSync(file, writePng([{ type: 'IHDR', data: ihdr(side, side, 8, 0) }, { type: 'IDAT', data: zlibSync(new Uint8Array(side * (side + 1)), { level: 9 }) }, { type: 'IEND', data: new Uint8Array(0) }]));
    let err = '';
    const code = await main(['measure', file], { out: () => {}, err: (t) => (err += t) });
    expect(code).toBe(1);
    expect(err).toContain(`stratameter measure: ${file}: the region of 8200 × 8200 px (67240000 px) is larger than a spectrum can hold`);
    expect(err).toContain('--region 4,4,8192,8192');
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
});
