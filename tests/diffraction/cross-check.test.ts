import { describe, expect, test } from 'vitest';
import { batchPeriodGroups, compareBatchWithDiffraction, comparisonCsv, diffractionOverlaySvg } from '../../src/diffraction/cross-check';
import type { FileResult } from '../../src/batch/run';
import { diffractionSetRecord, diffractionSideOfSet } from '../../src/diffraction/stored-set';
import type { DiffractionSide } from '../../src/diffraction/reconcile';
import { parseCsv } from '../batch/csv';

/** A finished file with the given periods (nm, combined u nm), pixel size known to relCal. */
function file(name: string, periods: [number, number][], relCal = 0.02, sheetsNm: number[] = []): FileResult {
  return {
    file: name,
    status: 'ok',
    image: { widthPx: 512, heightPx: 512, bitDepth: 16 },
    calibration: { nmPerPx: 0.05, source: 'profile', relUncertainty: relCal, detail: 'test' },
    measurements: [],
    summary: {
      // back to pixels at 0.05 nm/px: the statistical part is what remains of u without the calibration's
      topPeriods: periods.map(([p, u]) => ({
        periodPx: p / 0.05, angleDeg: 0, geometry: 'normal' as const,
        u: { statisticalPx: Math.sqrt(Math.max(0, u * u - (relCal * p) ** 2)) / 0.05, localVariationPx: 0, methodPx: 0 },
        uAngleDeg: 0, strength: 10, flags: [], tool: 'spectrum' as const,
      })),
      sheetCount: sheetsNm.length,
      meanThicknessNm: null,
      sdThicknessNm: null,
      sheetThicknessNm: sheetsNm,
    },
    notes: [],
  };
}

// The published layer period of propylammonium chloride: c = 7.40545(18) Å, so d001 = 0.740545 nm
// and d002 = 0.3702725 nm (Migliorati et al., J. Phys. Chem. B 115, 11805 (2011); the open
// pattern of tests/fixtures/reference-data, SOURCES.md §2).
const published: DiffractionSide = {
  lines: [
    { dNm: 0.740545, dUncNm: 0.000018, label: '001' },
    { dNm: 0.3702725, dUncNm: 0.000009, label: '002' },
    { dNm: 0.47827, dUncNm: 0.00001, label: '101' },
  ],
  series: [],
};

describe('batchPeriodGroups', () => {
  test('groups nearby periods; the calibration part does not average down', () => {
    const results = [
      file('a.tif', [[0.7400, Math.hypot(0.002, 0.02 * 0.74)], [0.3705, Math.hypot(0.001, 0.02 * 0.3705)]]),
      file('b.tif', [[0.7420, Math.hypot(0.002, 0.02 * 0.742)]]),
      file('c.tif', [[0.7380, Math.hypot(0.002, 0.02 * 0.738)]]),
      { ...file('bad.tif', [[0.5, 0.01]]), status: 'failed' as const },
    ];
    const g = batchPeriodGroups(results);
    expect(g.map((x) => x.n)).toEqual([1, 3]);
    const basal = g[1];
    expect(basal.budget.value).toBeCloseTo(0.74, 10);
    expect(basal.sources).toEqual(['c.tif', 'a.tif', 'b.tif']);
    // 0.738, 0.740, 0.742 each ± 0.002: χ² = 2 = n − 1, so no between-image term (DerSimonian–Laird
    // τ² = 0) and the inverse-variance mean has u = 0.002/√3 (computed)
    expect(basal.sd).toBeCloseTo(0.002, 10);
    expect(basal.birgeRatio).toBeCloseTo(1, 6);
    expect(basal.budget.parts.statistical).toBeCloseTo(0.002 / Math.sqrt(3), 6);
    expect(basal.budget.parts.betweenImages).toBeCloseTo(0, 8);
    expect(basal.budget.parts.calibration).toBeCloseTo(0.02 * 0.74, 8);
    expect(basal.budget.combined).toBeCloseTo(Math.hypot(0.002 / Math.sqrt(3), 0.0148), 6);
  });
  test('rejects a bad gap by name', () => {
    expect(() => batchPeriodGroups([], { relGap: 0 })).toThrow(/relGap must be in \(0, 1\), got 0/);
  });
});

describe('compareBatchWithDiffraction', () => {
  test('fringe periods near the published c are matched to 001 and 002 with |z| < 1', () => {
    const results = [
      file('a.tif', [[0.7441, 0.0150], [0.3711, 0.0075]]),
      file('b.tif', [[0.7372, 0.0148]]),
    ];
    const c = compareBatchWithDiffraction(results, published);
    expect(c.groups.length).toBe(2);
    expect(c.reconciliation.best.map((b) => b?.label)).toEqual(['002', '001']);
    for (const b of c.reconciliation.best) expect(Math.abs(b!.z)).toBeLessThan(1);
    const rows = parseCsv(comparisonCsv(c, 'propylammonium chloride'));
    expect(rows[0]).toContain('periodNm');
    expect(rows[0]).toContain('uBetweenImagesNm');
    expect(rows.length).toBe(3);
    expect(rows[2][rows[0].indexOf('line')]).toBe('001');
    const svg = diffractionOverlaySvg(c, published, 'propylammonium chloride');
    expect(svg.match(/class="line"/g)?.length).toBe(3);
    expect(svg.match(/class="period"/g)?.length).toBe(2);
  });
});

describe('stored diffraction sets', () => {
  test('a set keeps its lines; an older set without them gives d from 2θ by Bragg\'s law', () => {
    const rec = diffractionSetRecord({
      id: 'x', name: 'pattern.xy', createdIso: '2026-12-02T00:00:00Z', patternText: null, fileName: 'pattern.xy',
      wavelengthNm: 0.1540598, ka2Nm: 0.154439, peaks: [{ twoThetaDeg: 11.941, intensity: 100 }, { twoThetaDeg: null, intensity: null }],
      lines: published.lines, series: [],
    });
    expect(rec.peaks).toEqual([{ twoThetaDeg: 11.941, intensity: 100 }]);
    expect(diffractionSideOfSet(rec).lines).toEqual(published.lines);
    // 001 at 11.941° 2θ with Cu Kα1 1.540598 Å is d = 7.4055 Å (SOURCES.md §2, computed from the published cell)
    const old = diffractionSideOfSet({ ...rec, results: null });
    expect(old.lines.length).toBe(1);
    expect(Math.abs(old.lines[0].dNm - 0.74055)).toBeLessThan(0.00005);
  });
  test('rejects a missing wavelength and a bad line by name', () => {
    const base = { id: 'x', name: 'n', createdIso: '', patternText: null, fileName: null, ka2Nm: null, peaks: [], series: [] };
    expect(() => diffractionSetRecord({ ...base, wavelengthNm: 0, lines: [] })).toThrow(/wavelengthNm must be a positive number, got 0/);
    expect(() => diffractionSetRecord({ ...base, wavelengthNm: 0.154, lines: [{ dNm: -1, dUncNm: 0, label: 'a' }] })).toThrow(/lines\[0\].dNm/);
  });
});
