import { readFileSync } from 'node:fs';
import { describe, expect, test } from 'vitest';
import { parsePattern } from '../../src/diffraction/pattern';
import { fitPattern } from '../../src/diffraction/peaks';
import { indexSeries } from '../../src/diffraction/series';

const FIXTURE = 'tests/fixtures/reference-data/xrd-powder_propylammonium-chloride_CuKa12_COD1516218_2theta-counts.xy';

describe('indexSeries on ideal ratio sets (Hamley, Small-Angle Scattering (Wiley 2021) Table 1.1)', () => {
  test('lamellar d 1 : 1/2 : 1/3 gives the period', () => {
    const s = indexSeries([5, 2.5, 5 / 3].map((d) => ({ dNm: d, intensity: 1 })), { kinds: ['lamellar'] });
    expect(s[0].kind).toBe('lamellar');
    expect(s[0].cellNm).toBeCloseTo(5, 10);
    expect(s[0].members.map((m) => m.index)).toEqual(['001', '002', '003']);
  });
  test('2D hexagonal q 1 : √3 : 2 : √7 : 3 gives a₀ = 2·d₁₀/√3 (relation computed from d_hk = (√3/2)a/√(h²+hk+k²))', () => {
    const d10 = 8;
    const ds = [1, 3, 4, 7, 9].map((n) => d10 / Math.sqrt(n));
    const s = indexSeries(ds.map((d) => ({ dNm: d, intensity: 1 })), { kinds: ['hexagonal'] });
    expect(s[0].members.map((m) => m.index)).toEqual(['10', '11', '20', '21', '30']);
    expect(s[0].cellNm).toBeCloseTo((2 * d10) / Math.sqrt(3), 10);
  });
  test.each([
    ['Ia3d', [6, 8, 14, 16, 20, 22, 24]],
    ['Pn3m', [2, 3, 4, 6, 8, 9]],
    ['Im3m', [2, 4, 6, 8, 10, 12]],
    ['Fm3m', [3, 4, 8, 11, 12, 16]],
  ] as const)('cubic %s with a = 12 nm (a = d·√N)', (kind, ns) => {
    const ds = ns.map((n) => 12 / Math.sqrt(n));
    const s = indexSeries(ds.map((d) => ({ dNm: d * (1 + 0.001), dUncNm: 0.01, intensity: 1 })), { kinds: [kind] });
    expect(s).toHaveLength(1);
    expect(s[0].cellNm).toBeCloseTo(12.012, 6);
    expect(s[0].missing).toEqual([]);
  });
  test('a random set is not called hexagonal, and bad input is rejected', () => {
    expect(indexSeries([{ dNm: 5 }, { dNm: 3.1 }, { dNm: 2.2 }], { kinds: ['hexagonal'] })).toEqual([]);
    expect(() => indexSeries([{ dNm: -1 }])).toThrow(/-1/);
    expect(() => indexSeries([{ dNm: 1 }], { tolerance: 0.5 })).toThrow(/0.5/);
  });
});

describe('the measured propylammonium chloride pattern (SOURCES.md §2)', () => {
  test('the (00l) series is recognised and gives c = 7.405 Å within 0.5 %', { timeout: 60000 }, () => {
    const fit = fitPattern(parsePattern(readFileSync(FIXTURE, 'utf8')));
    const s = indexSeries(fit.peaks);
    const lam = s.find((x) => x.kind === 'lamellar')!;
    expect(lam.members.slice(0, 3).map((m) => m.index)).toEqual(['001', '002', '003']);
    // c = 7.40545(18) Å from the published cell (Migliorati et al., J. Phys. Chem. B 115, 11805 (2011))
    expect(Math.abs(lam.cellNm - 0.740545) / 0.740545).toBeLessThan(0.005);
    // a crystalline pattern is not a cubic mesophase
    expect(s.filter((x) => x.kind !== 'lamellar')).toEqual([]);
  });
});
