// The Periods tools' plots as data: distances in nm through the calibration, fringe maxima and
// minima told apart, ring rules at the ring frequencies. The profile is a pure cosine of known
// period (common practice for a test signal); the rings are given.
import { expect, test } from 'vitest';
import { profilePlot, radialPlot } from '../../src/figure/period-plots';
import { makeCalibration } from '../../src/calibration/calibration';

const N = 200;
const P = 20; // px per fringe
const mean = Float64Array.from({ length: N }, (_, i) => 100 + 10 * Math.cos((2 * Math.PI * i) / P));
const profile = {
  distancePx: Float64Array.from({ length: N }, (_, i) => i),
  mean,
  standardError: new Float64Array(N).fill(1),
  lengthPx: N - 1,
  angleDeg: 0,
  // the cosine's extrema: maxima at 0, 20, 40…, minima at 10, 30, 50…
  realSpace: { periodPx: P, extremaPx: [20, 30, 40, 50, 60], fringes: 2, method: 'real space', snr: 10 } as never,
};

test('the profile plot is in nm when calibrated, with a ± band and the maxima and minima marked as such', () => {
  const cal = makeCalibration(0.05, 'metadata', 'test', [{ name: 'pixel size', rel: 0.01, type: 'B' }]);
  const p = profilePlot(profile, cal, 5);
  expect(p.xLabel).toBe('distance along the line (nm)');
  expect(p.x[N - 1]).toBeCloseTo((N - 1) * 0.05, 10);
  expect(p.band?.hi[0]).toBeCloseTo(mean[0] + 1, 10);
  expect(p.marks?.map((m) => m.kind)).toEqual(['max', 'min', 'max', 'min', 'max']);
  expect(p.marks?.[1].x).toBeCloseTo(30 * 0.05, 10);
  expect(p.description).toMatch(/averaged over 5 px/);
  expect(profilePlot(profile, null).xLabel).toBe('distance along the line (px)');
});

test('a profile of one sample is refused by name', () => {
  expect(() => profilePlot({ ...profile, mean: new Float64Array(1), distancePx: new Float64Array(1) }, null)).toThrow(/at least 2 samples/);
});

test('the radial plot puts each ring at its frequency in nm⁻¹, labelled with its d-spacing and ±', () => {
  const f = Float64Array.from({ length: 65 }, (_, i) => i / 128);
  const power = Float64Array.from(f, (v) => 1 / (1 + v * v) + (Math.abs(v - 0.08) < 0.004 ? 5 : 0));
  const cal = makeCalibration(0.1, 'metadata', 'test', [{ name: 'pixel size', rel: 0.01, type: 'B' }]);
  const ring = { frequencyPerPx: 0.08, periodPx: 12.5, uStatisticalPx: 0.1, strength: 5 } as never;
  const p = radialPlot({ radialFrequencyPerPx: f, radialPower: power, rings: [ring] }, cal);
  expect(p.xLabel).toBe('spatial frequency (nm⁻¹)');
  // 0.08 cycles/px at 0.1 nm/px is 0.8 nm⁻¹: d = 1.25 nm
  expect(p.rules?.[0].x).toBeCloseTo(0.8, 10);
  // worked by hand (GUM: parts in quadrature, U = k·u_c): u_stat = 0.1 px × 0.1 nm/px = 0.010 nm,
  // u_cal = 1 % of 1.25 nm = 0.0125 nm, u_c = 0.01601 nm, U = 2 u_c = 0.0320 nm
  expect(p.rules?.[0].label).toBe('d 1.250 ± 0.032 nm (k = 2)');
  expect(p.description).toContain('rings at d 1.250 ± 0.032 nm (k = 2)');
  // k = 3: U = 0.0480 nm
  expect(radialPlot({ radialFrequencyPerPx: f, radialPower: power, rings: [ring] }, cal, 0.5, 3).rules?.[0].label).toBe('d 1.250 ± 0.048 nm (k = 3)');
  // uncalibrated: px, the statistical part alone (U = 0.20 px)
  expect(radialPlot({ radialFrequencyPerPx: f, radialPower: power, rings: [ring] }, null).rules?.[0].label).toBe('d 12.50 ± 0.20 px (k = 2)');
  expect(p.x[0]).toBeCloseTo((2 / 128) / 0.1, 10);
  expect(() => radialPlot({ radialFrequencyPerPx: f, radialPower: power, rings: [] }, null, 0)).toThrow(/must be positive/);
});
