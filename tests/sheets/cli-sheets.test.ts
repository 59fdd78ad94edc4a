import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { main } from '../../src/cli/main';
import { summariseReasons } from '../../src/cli/sheets';
import { encodeTiff } from '../../testing/encode-tiff';
import { syntheticImage } from '../../testing/synthetic/stacks';

function capture() {
  const out: string[] = [];
  const err: string[] = [];
  return { io: { out: (t: string) => out.push(t), err: (t: string) => err.push(t) }, out, err };
}

// A synthetic 32-bit float TIFF: a 6-layer and a 3-layer stack, period 8 px (known truth).
const dir = mkdtempSync(join(tmpdir(), 'sheets-cli-'));
const file = join(dir, 'tactoids.tif');
const img = syntheticImage(256, 256, [
  { layers: 6, periodPx: 8, cx: 80, cy: 128, angleDeg: 0, lengthPx: 120 },
  { layers: 3, periodPx: 8, cx: 190, cy: 128, angleDeg: 0, lengthPx: 120 },
], { noise: 0.03, seed: 7 });
writeFileSync(file, encodeTiff({ width: 256, height: 256, data: img.data as Float32Array }));

describe('stratameter sheets', () => {
  it('--line --json gives the documented shape with nm values', async () => {
    const c = capture();
    const code = await main(['sheets', file, '--nm-per-px', '0.125', '--line', '20,128,240,128,15', '--json'], c.io);
    expect(code).toBe(0);
    const r = JSON.parse(c.out.join(''));
    expect(r.file).toBe(file);
    expect(r.calibration).toMatchObject({ nmPerPx: 0.125, source: 'manual', relUncertainty: 0.05 });
    expect(r.sheets.map((s: { layers: number }) => s.layers)).toEqual([6, 3]);
    const s = r.sheets[0];
    for (const k of ['layers', 'thicknessPx', 'uThicknessPx', 'edgeToEdgePx', 'periodPx', 'angleDeg', 'centerPx', 'thickness', 'period']) expect(s).toHaveProperty(k);
    // 6 layers × 8 px × 0.125 nm/px = 6 nm, within half a period (0.5 nm); nm only in the expressed blocks
    expect(Math.abs(s.thickness.thicknessNm - 6)).toBeLessThan(0.5);
    expect(s.thickness.coverageFactorK).toBe(2);
    expect(s.thickness.uncertaintyContains).toMatch(/calibration/);
    expect(r.stats.n).toBe(2);
    expect(r.stats.layers.mean).toBeCloseTo(4.5, 12);
    for (const k of ['mean', 'sd', 'median', 'q1', 'q3', 'min', 'max', 'ci95']) expect(r.stats.thickness).toHaveProperty(k);
    expect(r.stats.unit).toBe('nm');
  });
  it('automatic detection over the image prints a table', async () => {
    const c = capture();
    expect(await main(['sheets', file], c.io)).toBe(0);
    const text = c.out.join('');
    expect(text).toMatch(/layers/);
    expect(text).toMatch(/sheets\s+2/);
    // the search's period is a starting value, not a measurement: it says it has no ± (common practice: every number says what its ± holds)
    expect(text).toMatch(/period\s+[0-9., px]*8\.\d{3} px \(layer periods? where the search found layers; no ±/);
  });
  it('a period given is printed as given', async () => {
    const c = capture();
    expect(await main(['sheets', file, '--period-px', '8'], c.io)).toBe(0);
    expect(c.out.join('')).toMatch(/period\s+8\.000 px \(given\)/);
  });
  it('rejects a malformed --line', async () => {
    const c = capture();
    expect(await main(['sheets', file, '--line', '1,2,3'], c.io)).toBe(2);
    expect(c.err.join('')).toMatch(/--line must be/);
  });
  it('--xrd: the demo overview beside the demo pattern takes the clay phase\'s size pooled over its 00l orders (demo truth 10 nm); the pattern options belong to --xrd', async () => {
    const c = capture();
    const code = await main(['sheets', 'demo-data/tactoid-film_overview.tif', '--xrd', 'demo-data/tactoid-film_CuKa.xy', '--columns', '1,2', '--json'], c.io);
    expect(code, c.err.join('')).toBe(0);
    const r = JSON.parse(c.out.join(''));
    expect(r.xrd.xrd.source).toMatch(/lamellar phase 1, \d+ resolved 00l lines/);
    expect(Math.abs(r.xrd.xrd.sizeNm / 10 - 1)).toBeLessThan(0.15);
    expect(r.xrd.xrd.uSizeNm).toBeGreaterThan(0);
    const bad = capture();
    expect(await main(['sheets', file, '--nm-per-px', '0.125', '--columns', '1,2'], bad.io)).toBe(2);
    expect(bad.err.join('')).toMatch(/--columns belongs to --xrd PATTERN/);
  }, 120000);
});

describe('summariseReasons', () => {
  // a reason is printed with its numbers (a '#' in their place told the user nothing); common practice
  it('writes each kind of reason once, with its count and the range of each of its numbers', () => {
    expect(summariseReasons([
      'too faint: evidence 8.1 below 12',
      '56 px long: shorter than 60 px',
      'too faint: evidence 4.1 below 12',
      'a two-dimensional lattice, not a stack.',
    ])).toEqual([
      '2 × too faint: evidence 4.1–8.1 below 12',
      '1 × 56 px long: shorter than 60 px',
      '1 × a two-dimensional lattice, not a stack.',
    ]);
    expect(summariseReasons([])).toEqual([]);
  });
});
