import { describe, expect, test } from 'vitest';
import { reconcile } from '../../src/diffraction/reconcile';
import type { IndexedSeries } from '../../src/diffraction/series';

describe('reconcile', () => {
  test('fringes pair with the lines they can be, with z from the combined uncertainty', () => {
    // graphite (002) 0.3354 nm: IUPAC Gold Book; muscovite-3T basal 0.9990 nm: computed from COD 1100015 (SOURCES.md §4)
    const r = reconcile(
      { periods: [{ periodNm: 0.34, uncertaintyNm: 0.004, label: 'fringe A' }, { periodNm: 1.01, uncertaintyNm: 0.02 }, { periodNm: 0.62, uncertaintyNm: 0.005 }] },
      { lines: [{ dNm: 0.3354, dUncNm: 0.0001, label: 'graphite 002' }, { dNm: 0.999, dUncNm: 0.0005, label: 'mica 003' }, { dNm: 0.2139, dUncNm: 0.0001, label: 'graphite 100' }] },
    );
    expect(r.best[0]!.label).toBe('graphite 002');
    expect(r.best[0]!.z).toBeCloseTo((0.34 - 0.3354) / Math.hypot(0.004, 0.0001), 10);
    expect(r.best[0]!.relDiff).toBeCloseTo(0.34 / 0.3354 - 1, 12);
    expect(r.best[1]!.label).toBe('mica 003');
    expect(r.unmatchedPeriods).toEqual([2]);
    expect(r.unmatchedLines).toEqual(['graphite 100']);
  });
  test('a fringe showing d₁₁ of a recognised hexagonal phase pairs with the series member (d₁₁ = a₀/2, from d_hk = (√3/2)a/√(h²+hk+k²), Hamley Table 1.1)', () => {
    const a0 = 10;
    const series: IndexedSeries[] = [{ kind: 'hexagonal', members: [
      { index: '10', peak: 0, dNm: (a0 * Math.sqrt(3)) / 2, dCalcNm: (a0 * Math.sqrt(3)) / 2, residual: 0 },
      { index: '20', peak: 1, dNm: (a0 * Math.sqrt(3)) / 4, dCalcNm: (a0 * Math.sqrt(3)) / 4, residual: 0 },
    ], cellNm: a0, cellUncNm: 0.02, rmsResidual: 0, missing: ['11'] }];
    const r = reconcile({ periods: [{ periodNm: 5.02, uncertaintyNm: 0.05 }] }, { lines: [{ dNm: (a0 * Math.sqrt(3)) / 2, dUncNm: 0.01, label: 'peak 1' }], series });
    expect(r.best[0]!.source).toBe('series');
    expect(r.best[0]!.label).toBe('hexagonal 11');
    expect(r.best[0]!.dNm).toBeCloseTo(5, 12);
  });
  test('a common 5 % offset is proposed as a calibration factor, not applied (synthetic: pixel size 5 % too large)', () => {
    // brucite 001 0.4766 nm and muscovite basal 0.9990 nm (SOURCES.md §4–5, computed from the cells)
    const f = 1.05;
    const periods = [0.4766 * f, 0.999 * f].map((d) => ({ periodNm: d, uncertaintyNm: Math.hypot(0.002 * d, 0.05 * d) }));
    const r = reconcile({ periods, calibrationRelUncertainty: 0.05 }, { lines: [{ dNm: 0.4766, dUncNm: 0.0002, label: 'brucite 001' }, { dNm: 0.999, dUncNm: 0.0005, label: 'mica 003' }] });
    expect(r.best.map((b) => b!.label)).toEqual(['brucite 001', 'mica 003']);
    expect(r.calibration).not.toBeNull();
    expect(r.calibration!.factor).toBeCloseTo(1 / f, 3);
    expect(r.calibration!.reason).toMatch(/not applied/);
    expect(periods[0].periodNm).toBeCloseTo(0.4766 * f, 12);
    // consistent data: no proposal
    const ok = reconcile({ periods: [{ periodNm: 0.4767, uncertaintyNm: 0.01 }], calibrationRelUncertainty: 0.02 }, { lines: [{ dNm: 0.4766, dUncNm: 0.0002, label: 'brucite 001' }] });
    expect(ok.calibration).toBeNull();
  });
  test('sheet thickness against the 00l crystallite size gives both layer counts', () => {
    const series: IndexedSeries[] = [{ kind: 'lamellar', members: [{ index: '001', peak: 0, dNm: 0.74, dCalcNm: 0.74, residual: 0 }, { index: '002', peak: 1, dNm: 0.37, dCalcNm: 0.37, residual: 0 }], cellNm: 0.74, cellUncNm: 0.001, rmsResidual: 0, missing: [] }];
    const r = reconcile(
      { periods: [{ periodNm: 0.75, uncertaintyNm: 0.02 }], sheets: { n: 40, meanNm: 7.4, sdNm: 1.5 } },
      { lines: [{ dNm: 0.74, dUncNm: 0.001, label: '001', crystalliteNm: 14.8 }, { dNm: 0.37, dUncNm: 0.001, label: '002', crystalliteNm: 14.8 }], series },
    );
    expect(r.thickness!.layersFromSheets).toBeCloseTo(10, 10);
    expect(r.thickness!.layersFromCrystallite).toBeCloseTo(20, 10);
  });
  test('a lamellar phase\'s size pooled over its 00l orders is taken before the mean of the lines\' own sizes, with its ± and where it came from', () => {
    const r = reconcile(
      { periods: [{ periodNm: 0.75, uncertaintyNm: 0.02 }], sheets: { n: 40, meanNm: 7.4, sdNm: 1.5 } },
      { lines: [{ dNm: 0.74, dUncNm: 0.001, label: '001', crystalliteNm: 14.8 }, { dNm: 0.37, dUncNm: 0.001, label: '002', crystalliteNm: 12 }], basalSize: { sizeNm: 11.1, sizeUncNm: 0.4, periodNm: 0.74, label: 'lamellar phase 1, 2 resolved 00l lines' } },
    );
    expect(r.thickness!.crystalliteNm).toBe(11.1);
    expect(r.thickness!.crystalliteUncNm).toBe(0.4);
    expect(r.thickness!.layersFromCrystallite).toBeCloseTo(15, 10);
    expect(r.thickness!.crystalliteFrom).toMatch(/lamellar phase 1/);
    const plain = reconcile({ periods: [{ periodNm: 0.75, uncertaintyNm: 0.02 }], sheets: { n: 40, meanNm: 7.4, sdNm: 1.5 } }, { lines: [{ dNm: 0.74, dUncNm: 0.001, label: '001', crystalliteNm: 14.8 }] });
    expect(plain.thickness!.crystalliteUncNm).toBeNull();
    expect(plain.thickness!.crystalliteFrom).toMatch(/mean of 1 basal line/);
  });
  test('bad input is rejected with the value', () => {
    expect(() => reconcile({ periods: [{ periodNm: -1, uncertaintyNm: 0 }] }, { lines: [] })).toThrow(/-1/);
    expect(() => reconcile({ periods: [] }, { lines: [] }, { zMax: 0 })).toThrow(/zMax/);
  });
});

describe('reconcile: matching by sorted windows, and null inputs', () => {
  /** The matching as it was first written: every period against every candidate (the reference). */
  function bruteForce(periods: { periodNm: number; uncertaintyNm: number }[], lines: { dNm: number; dUncNm: number; label: string }[], zMax: number, relTol: number) {
    return periods.map((p) => {
      const mine: { label: string; z: number }[] = [];
      for (const c of lines) {
        const comb = Math.hypot(p.uncertaintyNm, Math.max(0, c.dUncNm));
        const diff = p.periodNm - c.dNm;
        const z = comb > 0 ? diff / comb : diff === 0 ? 0 : Infinity * Math.sign(diff);
        if (Math.abs(z) <= zMax || Math.abs(p.periodNm / c.dNm - 1) <= relTol) mine.push({ label: c.label, z });
      }
      return mine.sort((a, b) => Math.abs(a.z) - Math.abs(b.z));
    });
  }
  test('gives exactly the pairs, in the order, of the all-against-all comparison (random sets, seeded; common practice)', () => {
    let seed = 12345;
    const r = () => ((seed = (seed * 1103515245 + 12345) % 2 ** 31) / 2 ** 31);
    for (let trial = 0; trial < 30; trial++) {
      const scale = 10 ** (Math.floor(r() * 6) - 3);
      const periods = Array.from({ length: 40 }, () => ({ periodNm: 0.2 + 3 * r(), uncertaintyNm: r() < 0.1 ? 0 : r() * scale }));
      const lines = Array.from({ length: 60 }, (_, k) => ({ dNm: r() < 0.1 ? periods[k % 40].periodNm : 0.2 + 3 * r(), dUncNm: r() < 0.1 ? 0 : r() < 0.1 ? -0.01 : r() * scale * (r() < 0.2 ? 100 : 1), label: `L${k}` }));
      const zMax = 0.5 + 3 * r();
      const relTol = r() < 0.5 ? 0 : r() * 0.05;
      const got = reconcile({ periods }, { lines }, { zMax, relTolerance: relTol });
      const want = bruteForce(periods, lines, zMax, relTol);
      periods.forEach((_, i) => {
        const mine = got.pairs.filter((p) => p.period === i).map((p) => ({ label: p.label, z: p.z }));
        expect(mine).toEqual(want[i]);
        expect(got.best[i]?.label ?? null).toBe(want[i][0]?.label ?? null);
      });
    }
  });
  test('a null period or line is refused by its index, not a TypeError', () => {
    const lines = [{ dNm: 1, dUncNm: 0.01, label: 'a' }];
    expect(() => reconcile({ periods: [{ periodNm: 1, uncertaintyNm: 0.1 }, null as never] }, { lines })).toThrow(/^period 1 is null, not a period/);
    expect(() => reconcile({ periods: [{ periodNm: null as never, uncertaintyNm: 0.1 }] }, { lines })).toThrow(/period 0: periodNm must be positive, got null/);
    expect(() => reconcile({ periods: [] }, { lines: [null as never] })).toThrow(/^line 0 is null/);
    expect(() => reconcile({ periods: null as never }, { lines })).toThrow(/micrograph\.periods must be a list, got null/);
  });
  test('10 000 periods against 10 000 lines give every period its nearest pair (the time is in bench/hardening.ts)', () => {
    const periods = Array.from({ length: 10000 }, (_, i) => ({ periodNm: 0.3 + i * 1e-4, uncertaintyNm: 1e-5 }));
    const lines = Array.from({ length: 10000 }, (_, i) => ({ dNm: 0.3 + i * 1e-4 + 2e-6, dUncNm: 1e-5, label: `l${i}` }));
    const r = reconcile({ periods }, { lines });
    expect(r.best.every((b, i) => b!.label === `l${i}`)).toBe(true);
  });
});
