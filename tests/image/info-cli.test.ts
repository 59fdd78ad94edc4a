import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, test } from 'vitest';
import { main } from '../../src/cli/main';
import { encodeTiff } from '../../testing/encode-tiff';
import { encodeMrc } from '../../testing/encode-mrc';

const dir = mkdtempSync(join(tmpdir(), 'stratameter-info-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function capture() {
  const out: string[] = [];
  const err: string[] = [];
  return { io: { out: (t: string) => out.push(t), err: (t: string) => err.push(t) }, out: () => out.join(''), err: () => err.join('') };
}

const calibrated = join(dir, 'tactoids.tif');
// 4e7 pixels per cm = 0.25 nm per pixel (1 cm = 1e7 nm).
writeFileSync(calibrated, encodeTiff({ width: 40, height: 30, data: Uint16Array.from({ length: 1200 }, (_, i) => 100 + i), resolution: { x: 4e7, unit: 'cm' } }));
const dpi72 = join(dir, 'screenshot.tif');
writeFileSync(dpi72, encodeTiff({ width: 8, height: 8, data: new Uint8Array(64).fill(3), resolution: { x: 72, unit: 'inch' } }));

describe('stratameter info', () => {
  test('prints size, pixel type, range and calibration as text', async () => {
    const c = capture();
    expect(await main(['info', calibrated], c.io)).toBe(0);
    expect(c.out()).toMatch(/size\s+40 × 30 pixels/);
    expect(c.out()).toMatch(/pixel type\s+16-bit unsigned integer/);
    expect(c.out()).toMatch(/values\s+100 to 1299/);
    expect(c.out()).toMatch(/calibration\s+0.25 nm per pixel, ±5 % \(source: metadata\)/);
    expect(c.out()).toMatch(/XResolution/);
  });

  test('--json gives the documented object', async () => {
    const c = capture();
    expect(await main(['info', calibrated, '--json'], c.io)).toBe(0);
    const r = JSON.parse(c.out());
    expect(r).toMatchObject({ file: calibrated, widthPx: 40, heightPx: 30, bitDepth: 16, sampleKind: 'uint', min: 100, max: 1299, warnings: [] });
    expect(r.calibration).toMatchObject({ nmPerPx: 0.25, source: 'metadata', relUncertainty: 0.05 });
    expect(Object.keys(r.calibration).sort()).toEqual(['detail', 'nmPerPx', 'relUncertainty', 'source']);
  });

  test('a 72 dpi file reports no calibration and the warning', async () => {
    const c = capture();
    expect(await main(['info', dpi72, '--json'], c.io)).toBe(0);
    const r = JSON.parse(c.out());
    expect(r.calibration).toBeNull();
    expect(r.warnings[0]).toMatch(/^not a calibration: .*72 dpi/);
    const t = capture();
    await main(['info', dpi72], t.io);
    expect(t.out()).toMatch(/calibration\s+none in the file/);
    expect(t.out()).toMatch(/warnings\n {2}- not a calibration/);
  });

  test('non-square MRC pixels show both sizes', async () => {
    const f = join(dir, 'map.mrc');
    writeFileSync(f, encodeMrc({ width: 4, height: 4, mode: 2, data: new Float32Array(16).fill(1), pixelSpacingAngstrom: 2, pixelSpacingYAngstrom: 4 }));
    const c = capture();
    expect(await main(['info', f], c.io)).toBe(0);
    expect(c.out()).toMatch(/0.2 × 0.4 nm per pixel \(x × y\)/);
  });

  test('errors go to stderr with a non-zero exit code', async () => {
    const missing = capture();
    expect(await main(['info', join(dir, 'nope.tif')], missing.io)).toBe(1);
    expect(missing.err()).toMatch(/nope.tif: no such file/);
    expect(missing.out()).toBe('');
    const bad = join(dir, 'bad.png');
    writeFileSync(bad, new Uint8Array(100).fill(1));
    const b = capture();
    expect(await main(['info', bad], b.io)).toBe(1);
    expect(b.err()).toMatch(/bad.png: not a PNG file/);
    const u = capture();
    expect(await main(['info'], u.io)).toBe(2);
    expect(u.err()).toMatch(/expected one IMAGE file/);
    const m = capture();
    expect(await main(['info', calibrated, '--max-pixels', '100'], m.io)).toBe(1);
    expect(m.err()).toMatch(/over the memory budget of 100 pixels/);
  });

  test('the installed bin runs the command', () => {
    const bin = new URL('../../bin/stratameter.mjs', import.meta.url).pathname;
    const ok = spawnSync(process.execPath, [bin, 'info', calibrated, '--json'], { encoding: 'utf8' });
    expect(ok.status).toBe(0);
    expect(JSON.parse(ok.stdout).widthPx).toBe(40);
    const fail = spawnSync(process.execPath, [bin, 'info', join(dir, 'nope.tif')], { encoding: 'utf8' });
    expect(fail.status).toBe(1);
    expect(fail.stderr).toMatch(/no such file/);
  });
});
