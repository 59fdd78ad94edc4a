import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, test } from 'vitest';
import { main } from '../../src/cli/main';

const FIXTURE = 'tests/fixtures/reference-data/xrd-powder_propylammonium-chloride_CuKa12_COD1516218_2theta-counts.xy';

function capture() {
  const out: string[] = [];
  const err: string[] = [];
  return { io: { out: (t: string) => out.push(t), err: (t: string) => err.push(t) }, out, err };
}

describe('stratameter xrd', () => {
  test('--json on the measured pattern: the 001 peak near 11.96° and the lamellar series (SOURCES.md §2)', { timeout: 60000 }, async () => {
    const c = capture();
    expect(await main(['xrd', FIXTURE, '--json'], c.io)).toBe(0);
    const j = JSON.parse(c.out.join(''));
    expect(j.wavelengthNm).toBeCloseTo(0.1540598, 9);
    const p001 = j.peaks.find((p: any) => Math.abs(p.twoThetaDeg - 11.96) < 0.05);
    expect(p001.dNm).toBeCloseTo(0.7392, 3);
    for (const key of ['twoThetaDeg', 'dNm', 'qInvNm', 'fwhmDeg', 'intensity', 'area', 'crystalliteNm', 'dUncNm', 'fwhmUncDeg']) expect(typeof p001[key]).toBe('number');
    const lam = j.series.find((s: any) => s.kind === 'lamellar');
    // c = 7.40545 Å (published cell, SOURCES.md §2)
    expect(Math.abs(lam.cellNm - 0.740545) / 0.740545).toBeLessThan(0.005);
    expect(lam.members[0]).toEqual({ index: '001', dNm: expect.any(Number), residual: expect.any(Number) });
  });
  test('errors: no wavelength, a bad wavelength, a missing file', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'strata-xrd-'));
    const f = join(dir, 'p.xy');
    writeFileSync(f, '10 1\n11 2\n12 3\n');
    let c = capture();
    expect(await main(['xrd', f], c.io)).toBe(2);
    expect(c.err.join('')).toMatch(/--wavelength/);
    c = capture();
    expect(await main(['xrd', f, '--wavelength', 'XKa'], c.io)).toBe(2);
    expect(c.err.join('')).toMatch(/XKa/);
    c = capture();
    expect(await main(['xrd', join(dir, 'none.xy')], c.io)).toBe(2);
    expect(c.err.join('')).toMatch(/cannot read/);
  });
});

describe('stratameter match', () => {
  test('a measure report and a sheets report against the measured pattern', { timeout: 60000 }, async () => {
    const dir = mkdtempSync(join(tmpdir(), 'strata-match-'));
    // a fringe at the 001 spacing and one at the 110 spacing (4.4295 Å, SOURCES.md §2); a 2 nm period matching nothing
    const measure = {
      file: 'tactoid-a.tif', width: 1024, height: 1024,
      calibration: { nmPerPx: 0.05, source: 'manual', relUncertainty: 0.02 },
      periodicities: [
        { periodPx: 14.81, periodNm: 0.7405, angleDeg: 30, uncertaintyPx: 0.1, uncertaintyNm: 0.0159, strength: 20 },
        { periodPx: 8.859, periodNm: 0.44295, angleDeg: 120, uncertaintyPx: 0.05, uncertaintyNm: 0.0095, strength: 8 },
        { periodPx: 40, periodNm: 2.0, angleDeg: 10, uncertaintyPx: 0.2, uncertaintyNm: 0.041, strength: 5 },
      ],
    };
    const sheets = {
      file: 'tactoid-b.tif',
      calibration: { nmPerPx: 0.05, source: 'manual', relUncertainty: 0.02 },
      sheets: [
        { layers: 10, thicknessPx: 148, thicknessNm: 7.4, edgeToEdgeNm: 7.0, periodPx: 14.8, periodNm: 0.74, angleDeg: 0, centerPx: [100, 100] },
        { layers: 12, thicknessPx: 178, thicknessNm: 8.9, edgeToEdgeNm: 8.5, periodPx: 14.85, periodNm: 0.7425, angleDeg: 0, centerPx: [300, 100] },
      ],
      stats: { n: 2, thicknessNm: { mean: 8.15, sd: 1.06, median: 8.15, q1: 7.4, q3: 8.9, min: 7.4, max: 8.9, ci95: [0, 0] }, layers: null },
    };
    const m = join(dir, 'm.json');
    const s = join(dir, 's.json');
    writeFileSync(m, JSON.stringify(measure));
    writeFileSync(s, JSON.stringify(sheets));
    const c = capture();
    expect(await main(['match', '--pattern', FIXTURE, m, s, '--json'], c.io)).toBe(0);
    const j = JSON.parse(c.out.join(''));
    expect(j.periods).toHaveLength(4);
    expect(j.best[0].label).toBe('001');
    expect(j.best[1].dNm).toBeCloseTo(0.4422, 3);
    expect(j.best[2]).toBeNull();
    expect(j.unmatchedPeriods[0].periodNm).toBe(2);
    expect(j.best[3].label).toBe('001');
    expect(j.thickness.layersFromSheets).toBeCloseTo(8.15 / 0.7398, 1);
    const t = capture();
    expect(await main(['match', '--pattern', FIXTURE, m], t.io)).toBe(0);
    expect(t.out.join('')).toMatch(/best match/);
  });
  test('errors: no --pattern, a report of another kind', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'strata-match-'));
    const bad = join(dir, 'bad.json');
    writeFileSync(bad, JSON.stringify({ hello: 1 }));
    let c = capture();
    expect(await main(['match', bad], c.io)).toBe(2);
    expect(c.err.join('')).toMatch(/--pattern/);
    c = capture();
    expect(await main(['match', '--pattern', FIXTURE, bad], c.io)).toBe(2);
    expect(c.err.join('')).toMatch(/neither/);
  }, 60000);
});

describe('stratameter xrd --standard and match --cif', () => {
  const toText = (x: Float64Array, y: Float64Array) => ['# radiation: Cu K-alpha1 1.54059292 A, K-alpha2 1.5444274 A', ...Array.from(x, (v, i) => `${v.toFixed(3)} ${y[i]}`)].join('\n');
  test('the instrumental breadth measured on a standard is removed (Gaussian rule; synthetic truth)', { timeout: 60000 }, async () => {
    const { syntheticPattern } = await import('../../testing/synthetic/diffraction-pattern');
    const { scherrerSize } = await import('../../src/diffraction/scherrer');
    const dir = mkdtempSync(join(tmpdir(), 'strata-std-'));
    // standard: instrument-only lines 0.08° wide; sample: Gaussian lines √(0.08² + 0.25²) wide
    const pos = [20, 35, 50, 65];
    const inst = 0.08;
    const obs = Math.hypot(inst, 0.25);
    const std = syntheticPattern(pos.map((t) => ({ twoThetaDeg: t, area: 200, fwhmDeg: inst, eta: 0 })), { rangeDeg: [15, 70], stepDeg: 0.01, seed: 2, background: { a: 100, b: 0, c: 1 } });
    const smp = syntheticPattern([{ twoThetaDeg: 30, area: 300, fwhmDeg: obs, eta: 0 }], { rangeDeg: [25, 36], stepDeg: 0.01, seed: 3, background: { a: 100, b: 0, c: 1 } });
    writeFileSync(join(dir, 'std.xy'), toText(std.x, std.y));
    writeFileSync(join(dir, 'smp.xy'), toText(smp.x, smp.y));
    const c = capture();
    expect(await main(['xrd', join(dir, 'smp.xy'), '--standard', join(dir, 'std.xy'), '--json'], c.io)).toBe(0);
    const j = JSON.parse(c.out.join(''));
    const want = scherrerSize(0.25, 30, 0.154059292).sizeNm!;
    expect(Math.abs(j.peaks[0].crystalliteNm - want) / want).toBeLessThan(0.1);
    expect(j.sizeMethod).toMatch(/standard/);
  });
  test('--cif adds a reference phase: a 0.999 nm fringe pairs with muscovite-3T 003 (SOURCES.md §4)', { timeout: 60000 }, async () => {
    const dir = mkdtempSync(join(tmpdir(), 'strata-cif-'));
    const m = join(dir, 'm.json');
    writeFileSync(m, JSON.stringify({ file: 'mica.tif', width: 512, height: 512, calibration: { nmPerPx: 0.1, source: 'manual', relUncertainty: 0.03 },
      periodicities: [{ periodPx: 9.99, periodNm: 0.999, angleDeg: 45, uncertaintyPx: 0.05, uncertaintyNm: 0.031, strength: 10 }] }));
    const c = capture();
    expect(await main(['match', '--pattern', FIXTURE, '--cif', 'tests/fixtures/reference-data/crystal_muscovite-3T_COD1100015.cif', m, '--json'], c.io)).toBe(0);
    const j = JSON.parse(c.out.join(''));
    const mica = j.pairs.filter((p: any) => /1100015/.test(p.label));
    expect(mica.map((p: any) => p.label)).toContain('1100015 0 0 3');
  });
});
