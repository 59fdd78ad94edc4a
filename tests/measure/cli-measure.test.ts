import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, test } from 'vitest';
import { main } from '../../src/cli/main';
import { encodeTiff } from '../../testing/encode-tiff';
import { colouredNoiseImage } from './synth';
import { parseRegion } from '../../src/cli/measure';
import { formatPlusMinus } from '../../src/measure/measurement';

const STEM = 'tests/fixtures/reference-data/stem-haadf_AlMgSi-alloy_Al-001-matrix_thumbnail256.png';

function capture() {
  const out: string[] = [];
  const err: string[] = [];
  return { io: { out: (t: string) => out.push(t), err: (t: string) => err.push(t) }, out, err };
}

describe('stratameter measure', () => {
  test('--tool runs any tool of the registry on a region or a line; a wrong target is refused by name', async () => {
    // Al {200} = a/2 = 0.20248 nm at 0.0743 nm/px (SOURCES.md §1): rings of the powder-like average and a profile
    const rings = capture();
    expect(await main(['measure', STEM, '--tool', 'rings', '--nm-per-px', '0.0743', '--json'], rings.io)).toBe(0);
    const r = JSON.parse(rings.out.join(''));
    expect(r.measurement.tool).toBe('rings');
    expect(r.periodicities[0].geometry).toBe('ring');
    const line = capture();
    expect(await main(['measure', STEM, '--tool', 'profile', '--line', '20,128,236,128,9', '--json'], line.io)).toBe(0);
    const p = JSON.parse(line.out.join(''));
    expect(p.measurement.tool).toBe('profile');
    expect(p.measurement.region).toEqual({ kind: 'line', x0: 20, y0: 128, x1: 236, y1: 128, widthPx: 9 });
    const bad = capture();
    expect(await main(['measure', STEM, '--tool', 'profile'], bad.io)).toBe(2);
    expect(bad.err.join('')).toMatch(/the profile tool measures along a line: give --line/);
    const unknown = capture();
    expect(await main(['measure', STEM, '--tool', 'nothing'], unknown.io)).toBe(2);
    expect(unknown.err.join('')).toMatch(/no measurement tool 'nothing': the tools are profile, spectrum/);
  }, 60_000);

  test('--csv prints the one CSV table of every export; --json and --csv together are refused', async () => {
    const c = capture();
    // 0.0743 nm/px: SOURCES.md §1 (d200 = 0.20248 nm, a = 0.40495 nm from memory).
    expect(await main(['measure', STEM, '--nm-per-px', '0.0743', '--csv'], c.io)).toBe(0);
    const [head, ...rows] = c.out.join('').trimEnd().split('\r\n');
    const cols = head.split(',');
    expect(cols.slice(0, 2)).toEqual(['file', 'calibrationSource']);
    expect(cols).toEqual(expect.arrayContaining(['periodPx', 'uStatisticalPx', 'periodNm', 'expandedUncertaintyNm', 'fxPerPx']));
    expect(rows.length).toBeGreaterThan(0);
    // Al {200} = a/2 = 0.20248 nm (SOURCES.md §1): the strongest row within 1 %
    const d = Number(rows[0].split(',')[cols.indexOf('periodNm')]);
    expect(Math.abs(d - 0.20248) / 0.20248).toBeLessThan(0.01);
    const bad = capture();
    expect(await main(['measure', STEM, '--json', '--csv'], bad.io)).toBe(2);
    expect(bad.err.join('')).toMatch(/choose one of --json and --csv/);
  }, 60_000);

  test('--json prints exactly one object with the documented fields, strongest first', async () => {
    const c = capture();
    // 0.0743 nm/px: SOURCES.md §1 (d200 = 0.20248 nm, a = 0.40495 nm from memory).
    expect(await main(['measure', STEM, '--nm-per-px', '0.0743', '--rel-uncertainty', '0.01', '--json'], c.io)).toBe(0);
    const text = c.out.join('');
    expect(text.trim().split('\n').length).toBe(1);
    const r = JSON.parse(text);
    expect(Object.keys(r)).toEqual(['file', 'widthPx', 'heightPx', 'calibration', 'coverageFactorK', 'periodicities', 'measurement']);
    expect(r.calibration).toMatchObject({ nmPerPx: 0.0743, source: 'manual', relUncertainty: 0.01 });
    expect(r.calibration.parts).toEqual([{ name: 'stated by the user', rel: 0.01, type: 'B' }]);
    expect([r.widthPx, r.heightPx]).toEqual([256, 256]);
    expect(r.coverageFactorK).toBe(2);
    expect(r.measurement.recordVersion).toBe(2);
    const first = r.periodicities[0];
    expect(Object.keys(first)).toEqual(['periodPx', 'angleDeg', 'geometry', 'u', 'uAngleDeg', 'strength', 'flags', 'budget']);
    // every part in its own field, units in the names (issue: "CSV and JSON carry each part")
    expect(Object.keys(first.budget)).toEqual(['periodNm', 'uStatisticalNm', 'uLocalVariationNm', 'uBetweenImagesNm', 'uMethodNm', 'uCalibrationNm', 'uCombinedNm', 'coverageFactorK', 'expandedUncertaintyNm', 'uncertaintyContains']);
    // Al {200} = a/2 = 0.20248 nm (SOURCES.md §1): within 1 % at this calibration.
    expect(Math.abs(first.budget.periodNm - 0.20248) / 0.20248).toBeLessThan(0.01);
    for (let i = 1; i < r.periodicities.length; i++) {
      expect(r.periodicities[i].strength).toBeLessThanOrEqual(r.periodicities[i - 1].strength);
    }
    // The stated 1 % is the calibration part (GUM quadrature: value × relative u).
    expect(first.budget.uCalibrationNm / first.budget.periodNm).toBeCloseTo(0.01, 10);
    expect(first.budget.expandedUncertaintyNm).toBeCloseTo(2 * first.budget.uCombinedNm, 12);
  });

  test('a table with d ± u by default, and the 5 % manual default', async () => {
    const c = capture();
    expect(await main(['measure', STEM, '--nm-per-px', '0.0743', '--region', '0,0,128,128'], c.io)).toBe(0);
    const text = c.out.join('');
    expect(text).toMatch(/u = 5 % \(source: manual; indicated magnification \(no uncertainty given\) 5 % \(type B\)\)/);
    expect(text).toMatch(/± is the expanded uncertainty U = k·u with k = 2; it contains: statistical.*calibration/);
    expect(text).toMatch(/do not replace an accredited calibration/);
    expect(text).toMatch(/d \(px\)\s+d \(nm\)\s+angle/);
    expect(text).toMatch(/\d\.\d+ ± \d\.\d+/);
  });

  test('an amorphous image reports an empty list, not noise', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'measure-'));
    try {
      const img = colouredNoiseImage(256, 256, 5);
      const file = join(dir, 'amorphous.tif');
      writeFileSync(file, encodeTiff({ width: 256, height: 256, data: img.data as Float32Array }));
      const c = capture();
      expect(await main(['measure', file, '--json'], c.io)).toBe(0);
      const r = JSON.parse(c.out.join(''));
      expect(r.periodicities).toEqual([]);
      expect(r.calibration).toBeNull();
      const t = capture();
      expect(await main(['measure', file], t.io)).toBe(0);
      expect(t.out.join('')).toMatch(/no significant periodicity/);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });

  test('errors go to stderr with a non-zero exit code', async () => {
    let c = capture();
    expect(await main(['measure', 'no-such-file.png'], c.io)).toBe(1);
    expect(c.err.join('')).toMatch(/cannot read no-such-file.png/);
    c = capture();
    expect(await main(['measure', STEM, '--region', '0,0,300,10'], c.io)).toBe(2);
    expect(c.err.join('')).toMatch(/outside the 256 × 256 image/);
    c = capture();
    expect(await main(['measure', STEM, '--nm-per-px', '-1'], c.io)).toBe(2);
    expect(c.err.join('')).toMatch(/--nm-per-px must be a positive number, got '-1'/);
    c = capture();
    expect(await main(['measure', 'tests/fixtures/reference-data/SOURCES.md'], c.io)).toBe(1);
    expect(c.out.join('')).toBe('');
  });

  test('region parsing and rounding of d ± u', () => {
    expect(parseRegion('1,2,30,40')).toEqual({ x: 1, y: 2, width: 30, height: 40 });
    expect(() => parseRegion('1,2,3')).toThrow(/four non-negative integers/);
    // Rounding to two significant digits of u (GUM 7.2.6 practice).
    expect(formatPlusMinus(0.313564, 0.0012345)).toBe('0.3136 ± 0.0012');
    expect(formatPlusMinus(12.345, 0.26)).toBe('12.35 ± 0.26');
    // no stated uncertainty, or rounding dust: four digits and said so (a monolayer's thickness printed '6.4542208273 ± 0.0000000000')
    expect(formatPlusMinus(6.4542208273, 0)).toBe('6.454 (no ±)');
    expect(formatPlusMinus(6.4542208273, 3e-15)).toBe('6.454 (no ±)');
    expect(formatPlusMinus(6.4542208273, Number.NaN)).toBe('6.454 (no ±)');
  });
});
