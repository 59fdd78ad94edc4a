import { describe, expect, test } from 'vitest';
import { makeCalibration, SCALE_BAR_REPRESENTATION_REL } from '../../src/calibration/calibration';
import {
  budgetCsvCells,
  budgetCsvHeader,
  budgetJson,
  checkCalibration,
  expressLength,
  expressPeriod,
  formatBudget,
  nmPerPxAlong,
  type Periodicity,
} from '../../src/measure/measurement';
import { groupAndPoolPeriods, localSpread, poolPeriods, randomEffectsMean } from '../../src/measure/pool';
import { RecordVersionError, upgradeMeasurement } from '../../src/measure/record-version';

const cal = (nmPerPx: number, rel: number, extra: Record<string, number> = {}) => ({ nmPerPx, source: 'manual' as const, relUncertainty: rel, detail: '', ...extra });
const period = (periodPx: number, stat: number, local = 0, method = 0, angleDeg = 0): Periodicity => ({
  periodPx, angleDeg, geometry: 'normal', u: { statisticalPx: stat, localVariationPx: local, methodPx: method }, uAngleDeg: 0, strength: 1, flags: [],
});

describe('expressLength: the one place where a calibration is applied', () => {
  test('parts scale with the pixel size; calibration adds value × relative u; combined in quadrature', () => {
    // Real-space averaging, reference-values §5 (computed): 1 px at each end of a 100 px length is
    // √2 px, added in quadrature to a 2 % calibration (GUM JCGM 100:2008 §5.1.2).
    const b = expressLength(100, { statisticalPx: Math.SQRT2, localVariationPx: 0, methodPx: 0 }, cal(0.1, 0.02), { k: 2 });
    expect(b.unit).toBe('nm');
    expect(b.value).toBeCloseTo(10, 12);
    expect(b.parts.statistical).toBeCloseTo(Math.SQRT2 * 0.1, 12);
    expect(b.parts.calibration).toBeCloseTo(0.2, 12);
    expect(b.combined).toBeCloseTo(Math.hypot(Math.SQRT2 * 0.1, 0.2), 12);
    expect(b.expanded).toBeCloseTo(2 * b.combined, 12); // U = k·u_c, GUM §6.2.1
  });
  test('uncalibrated: px, no calibration part', () => {
    const b = expressLength(25, { statisticalPx: 0.01, localVariationPx: 0.02, methodPx: 0 }, null);
    expect(b.unit).toBe('px');
    expect(b.parts.calibration).toBe(0);
    expect(b.combined).toBeCloseTo(Math.hypot(0.01, 0.02), 12);
  });
  test('unequal axes: a fringe spacing uses the metric along its normal, a line length along the line', () => {
    // Fringes varying along y only: d_nm = d_px · s_y; along x: d_px · s_x (definition of the pixel size).
    const c = cal(0.01, 0, { nmPerPxY: 0.02 });
    expect(nmPerPxAlong(c, 'normal', 90)).toBeCloseTo(0.02, 12);
    expect(nmPerPxAlong(c, 'normal', 0)).toBeCloseTo(0.01, 12);
    // 45°: a line advances (1, −1)/√2 px per px: length √((0.01² + 0.02²)/2) nm per px (computed);
    // a fringe whose normal is at 45° has frequency f(1, −1)/√2 and spacing 1/√(fᵀG⁻¹f) (computed).
    expect(nmPerPxAlong(c, 'line', 45)).toBeCloseTo(Math.sqrt((0.01 ** 2 + 0.02 ** 2) / 2), 12);
    expect(nmPerPxAlong(c, 'normal', 45)).toBeCloseTo(1 / Math.sqrt((1 / 0.01 ** 2 + 1 / 0.02 ** 2) / 2), 12);
    expect(nmPerPxAlong(c, 'ring', 0)).toBeCloseTo(Math.sqrt(0.01 * 0.02), 12);
  });
  test('shear: a square lattice seen through a sheared grid gives equal spacings back (computed)', () => {
    // Pixel axes at 90° + 1°: the lattice vectors a₁ = (1, 0) nm, a₂ = (0, 1) nm are at pixel
    // positions P = M⁻¹ a with M = [[s, s·sin γ], [0, s·cos γ]] (x right, y down on the screen).
    const s = 0.05;
    const g = (1 * Math.PI) / 180;
    const c = cal(s, 0, { nmPerPxY: s, shearDeg: 1 });
    // A displacement v (px) has length √(vᵀGv): check the two axes and the diagonal against direct geometry.
    const len = (vx: number, vy: number) => Math.hypot(s * vx + s * Math.sin(g) * vy, s * Math.cos(g) * vy);
    expect(nmPerPxAlong(c, 'line', 0)).toBeCloseTo(len(1, 0), 12);
    expect(nmPerPxAlong(c, 'line', 90)).toBeCloseTo(len(0, -1), 12);
    expect(nmPerPxAlong(c, 'line', 45)).toBeCloseTo(len(Math.SQRT1_2, -Math.SQRT1_2), 12);
  });
  test('bad input is refused with the field named', () => {
    const u = { statisticalPx: 0, localVariationPx: 0, methodPx: 0 };
    expect(() => expressLength(1, u, cal(0.1, 0.02), { k: 0 })).toThrow(/coverage factor k must be a positive number, got 0/);
    expect(() => expressLength(1, u, cal(0.1, 0.02), { k: -1 })).toThrow(/coverage factor/);
    expect(() => expressLength(1, u, cal(0.1, -0.01))).toThrow(/calibration.relUncertainty must be a number in \[0, 1\), got -0.01/);
    expect(() => checkCalibration({ nmPerPx: 0.1, source: 'manual', detail: '' } as never)).toThrow(/relUncertainty is missing/);
    expect(() => expressLength(1, { ...u, methodPx: -1 }, null)).toThrow(/u.methodPx must be a non-negative number/);
  });
});

describe('a budget says what its ± contains', () => {
  test('formatBudget names the parts present and k', () => {
    const b = expressPeriod(period(25, 0.01, 0.02), cal(0.05, 0.03));
    expect(formatBudget(b)).toMatch(/^1\.250 ± 0\.075 nm \(k = 2; statistical, local variation, calibration\)$/);
  });
  test('CSV and JSON carry each part in its own column, units in the names', () => {
    const b = expressPeriod(period(25, 0.01, 0, 0.005), cal(0.05, 0.03));
    const head = budgetCsvHeader('period', 'nm');
    expect(head).toEqual(['periodNm', 'uStatisticalNm', 'uLocalVariationNm', 'uBetweenImagesNm', 'uMethodNm', 'uCalibrationNm', 'uCombinedNm', 'coverageFactorK', 'expandedUncertaintyNm']);
    const cells = budgetCsvCells(b);
    expect(cells).toHaveLength(head.length);
    expect(cells[head.indexOf('uCalibrationNm')]).toBeCloseTo(0.0375, 12);
    const j = budgetJson(b, 'period');
    expect(j.uMethodNm).toBeCloseTo(0.00025, 12);
    expect(j.uncertaintyContains).toBe('statistical, method, calibration');
  });
});

describe('makeCalibration', () => {
  test('relUncertainty is the root-sum-square of its parts', () => {
    const c = makeCalibration(0.25, 'scale-bar', 'bar', [
      { name: 'bar end location', rel: 0.001, type: 'A' },
      { name: 'bar representation', rel: SCALE_BAR_REPRESENTATION_REL, type: 'B' },
    ]);
    // 5 %/√3 (rectangular bound, GUM §4.3.7) = 2.887 %
    expect(SCALE_BAR_REPRESENTATION_REL).toBeCloseTo(0.05 / Math.sqrt(3), 12);
    expect(c.relUncertainty).toBeCloseTo(Math.hypot(0.001, 0.05 / Math.sqrt(3)), 12);
    expect(() => makeCalibration(0.25, 'manual', '', [{ name: 'x', rel: -1, type: 'B' }])).toThrow(/'x' must be a non-negative number, got -1/);
    expect(() => makeCalibration(0, 'manual', '', [])).toThrow(/nmPerPx must be a positive number, got 0/);
  });
});

describe('pooling (the one rule)', () => {
  test('equal uncertainties: τ² = s² − u² and the random-effects mean has u = s/√n (computed closed form)', () => {
    const xs = [1.0, 1.3, 0.8, 1.1, 0.9];
    const n = xs.length;
    const mean = xs.reduce((a, b) => a + b, 0) / n;
    const s2 = xs.reduce((a, b) => a + (b - mean) ** 2, 0) / (n - 1);
    const u = 0.05;
    const r = randomEffectsMean(xs.map((value) => ({ value, u })));
    expect(r.mean).toBeCloseTo(mean, 12);
    expect(r.tau).toBeCloseTo(Math.sqrt(s2 - u * u), 12);
    expect(r.u).toBeCloseTo(Math.sqrt(s2 / n), 12);
    expect(r.uWithin).toBeCloseTo(u / Math.sqrt(n), 12);
    expect(r.birgeRatio).toBeCloseTo(Math.sqrt(s2) / u, 12); // Birge ratio √(χ²/(n − 1))
  });
  test('agreeing values: no between-image term, the inverse-variance mean', () => {
    const r = randomEffectsMean([{ value: 10, u: 1 }, { value: 10.5, u: 1 }, { value: 9.6, u: 0.5 }]);
    expect(r.tau).toBe(0);
    expect(r.uBetween).toBe(0);
    const w = [1, 1, 4];
    expect(r.mean).toBeCloseTo((10 + 10.5 + 4 * 9.6) / 6, 12);
    expect(r.uWithin).toBeCloseTo(1 / Math.sqrt(w.reduce((a, b) => a + b, 0)), 12);
  });
  test('the shared calibration part is added once and does not average down', () => {
    const c = cal(0.05, 0.03);
    const items = [25, 25.02, 24.98, 25.01].map((p) => ({ periodicity: period(p, 0.02), calibration: c }));
    const one = poolPeriods(items.slice(0, 1));
    const four = poolPeriods(items);
    expect(four.budget.parts.calibration).toBeCloseTo(four.budget.value * 0.03, 12);
    expect(one.budget.parts.calibration / one.budget.value).toBeCloseTo(four.budget.parts.calibration / four.budget.value, 12);
    expect(four.budget.parts.statistical).toBeCloseTo(one.budget.parts.statistical / 2, 3);
  });
  test('the method part is systematic: it is carried, not divided by √n', () => {
    const items = [10, 10, 10].map((p) => ({ periodicity: period(p, 0.01, 0, 0.05), calibration: null }));
    const r = poolPeriods(items);
    expect(r.budget.unit).toBe('px');
    expect(r.budget.parts.method).toBeCloseTo(0.05, 12);
  });
  test('mixing calibrated and uncalibrated periods is refused; an empty list is refused', () => {
    expect(() => poolPeriods([{ periodicity: period(10, 0.1), calibration: null }, { periodicity: period(10, 0.1), calibration: cal(0.1, 0.02) }])).toThrow(/have no calibration/);
    expect(() => poolPeriods([])).toThrow(/at least one/);
  });
  test('groups: nearby values pooled together, distinct ones apart', () => {
    const c = cal(0.05, 0.02);
    const g = groupAndPoolPeriods([
      { periodicity: period(25, 0.01), calibration: c, source: 'a' },
      { periodicity: period(25.05, 0.01), calibration: c, source: 'b' },
      { periodicity: period(78, 0.05), calibration: c, source: 'a' },
    ]);
    expect(g.map((x) => x.n)).toEqual([2, 1]);
    expect(g[0].sources).toEqual(['a', 'b']);
  });
  test('localSpread: no spread unless the local values differ beyond their uncertainties (Cochran Q at 1 %)', () => {
    expect(localSpread([{ value: 10, u: 0.1 }, { value: 10.05, u: 0.1 }, { value: 9.98, u: 0.1 }]).spread).toBe(0);
    const s = localSpread([{ value: 10, u: 0.01 }, { value: 10.5, u: 0.01 }, { value: 9.5, u: 0.01 }]);
    expect(s.significant).toBe(true);
    expect(s.spread).toBeCloseTo(Math.sqrt(0.25 - 0.0001), 6); // τ² = s² − u², equal weights (computed)
  });
});

describe('record versions', () => {
  const v1 = {
    id: 'm1', imageId: null, fileName: 'a.tif', createdIso: '2026-01-01T00:00:00Z', tool: 'spectrum',
    region: null, calibration: cal(0.05, 0.02), settings: {},
    periodicities: [{ periodPx: 25, periodNm: 1.25, angleDeg: 30, uncertaintyPx: 0.01, uncertaintyNm: 0.025, strength: 9 }],
    notes: [],
  };
  test('version 1 is upgraded: pixels kept, its uncertainty as the statistical part, a note says so', () => {
    const m = upgradeMeasurement(v1);
    expect(m.recordVersion).toBe(2);
    expect(m.periodicities[0]).toEqual({ periodPx: 25, angleDeg: 30, geometry: 'normal', u: { statisticalPx: 0.01, localVariationPx: 0, methodPx: 0 }, uAngleDeg: 0, strength: 9, flags: [] });
    expect(m.notes.join(' ')).toMatch(/statistical part only/);
    expect(expressPeriod(m.periodicities[0], m.calibration).value).toBeCloseTo(1.25, 12);
    expect(upgradeMeasurement({ ...v1, tool: 'profile' }).periodicities[0].geometry).toBe('line');
  });
  test('a newer version, a bad version and a bad calibration are refused, naming the field', () => {
    expect(() => upgradeMeasurement({ ...v1, recordVersion: 3 })).toThrow(RecordVersionError);
    expect(() => upgradeMeasurement({ ...v1, recordVersion: 3 })).toThrow(/recordVersion is 3, newer than this program reads \(2\)/);
    expect(() => upgradeMeasurement({ ...v1, recordVersion: 0 })).toThrow(/recordVersion must be a positive integer, got 0/);
    expect(() => upgradeMeasurement({ ...v1, calibration: { ...cal(0.05, 0.02), relUncertainty: 5 } })).toThrow(/calibration.relUncertainty must be a number in \[0, 1\), got 5/);
    expect(() => upgradeMeasurement({ ...upgradeMeasurement(v1), periodicities: [{ ...period(5, 0.1), u: { statisticalPx: -1, localVariationPx: 0, methodPx: 0 } }] })).toThrow(/u.statisticalPx must be a non-negative number/);
  });
});
