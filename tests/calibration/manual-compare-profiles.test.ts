import { expect, test } from 'vitest';
import { MANUAL_POINTS_UNCERTAINTY_PX, manualCalibration, typedCalibration } from '../../src/calibration/manual';
import { compareCalibrations } from '../../src/calibration/compare';
import { makeProfile, matchProfile, profileCalibration, scaleForBinning } from '../../src/calibration/profiles';
import type { Calibration } from '../../src/image/grey-image';

test('two points on a known length: nm/px and end-point uncertainty over the length', () => {
  // a 2160 lines/mm grating: 10 spaces = 4629.6 nm spanning 1000 px (worked example, supplier notes: count many spaces)
  const c = manualCalibration({ lengthPx: 1000, knownLengthNm: 4629.6 });
  expect(c.nmPerPx).toBeCloseTo(4.6296, 10);
  expect(c.source).toBe('manual');
  // default: each end ±0.5 px rectangular → 0.5/√3 (GUM §4.3.7), two ends → ×√2
  expect(MANUAL_POINTS_UNCERTAINTY_PX).toBeCloseTo(0.40825, 5);
  expect(c.relUncertainty).toBeCloseTo(0.40825 / 1000, 7);
  const d = manualCalibration({ lengthPx: 100, uncertaintyPx: 1, knownLengthNm: 50, knownUncertaintyNm: 0.5 });
  expect(d.relUncertainty).toBeCloseTo(Math.hypot(0.01, 0.01), 12);
  expect(() => manualCalibration({ lengthPx: 0, knownLengthNm: 5 })).toThrow(/lengthPx/);
  expect(() => manualCalibration({ lengthPx: 10, knownLengthNm: NaN })).toThrow(/knownLengthNm/);
});

test('a typed pixel size keeps the stated uncertainty', () => {
  const c = typedCalibration(0.25, 0.05);
  expect(c).toMatchObject({ nmPerPx: 0.25, relUncertainty: 0.05, source: 'manual' });
  expect(() => typedCalibration(-1, 0.05)).toThrow(/nmPerPx/);
  expect(() => typedCalibration(1, 2)).toThrow(/relUncertainty/);
});

const cal = (nmPerPx: number, relUncertainty: number, source: Calibration['source']): Calibration => ({ nmPerPx, relUncertainty, source, detail: '' });

test('compareCalibrations: agreement within k = 2 combined uncertainty, a warning showing both beyond it', () => {
  // metadata ±5 % vs scale bar ±2.9 %: combined 5.78 %, limit 11.6 % at k = 2 (GUM §6.3.3)
  const ok = compareCalibrations(cal(0.5, 0.05, 'metadata'), cal(0.54, 0.029, 'scale-bar'));
  expect(ok.agree).toBe(true);
  expect(ok.warning).toBeNull();
  expect(ok.combinedRelUncertainty).toBeCloseTo(Math.hypot(0.05, 0.029), 12);
  const bad = compareCalibrations(cal(0.5, 0.01, 'metadata'), cal(0.6, 0.01, 'scale-bar'));
  expect(bad.agree).toBe(false);
  expect(bad.relDifference).toBeCloseTo(0.2, 12);
  expect(bad.warning).toMatch(/metadata 0\.5 nm\/px/);
  expect(bad.warning).toMatch(/scale-bar 0\.6 nm\/px/);
  expect(compareCalibrations(cal(0.5, 0.01, 'metadata'), cal(0.6, 0.01, 'scale-bar'), { k: 20 }).agree).toBe(true);
  expect(() => compareCalibrations(cal(0, 0.01, 'metadata'), cal(1, 0.01, 'manual'))).toThrow(/calibration a/);
});

test('binning b multiplies the pixel size by b (common practice)', () => {
  expect(scaleForBinning(0.1, 1, 2)).toBeCloseTo(0.2, 12);
  expect(scaleForBinning(0.4, 4, 1)).toBeCloseTo(0.1, 12);
  expect(() => scaleForBinning(0.1, 0, 2)).toThrow(/fromBinning/);
  expect(() => scaleForBinning(0.1, 1, 1.5)).toThrow(/toBinning/);
});

const base = { instrument: 'TEM 1', camera: 'CMOS A' } as const;
const p1 = makeProfile({ id: 'a', setting: { ...base, magnification: 40000, binning: 1 }, calibration: cal(0.25, 0.01, 'standard'), createdIso: '2026-01-10T09:00:00Z' });
const p2 = makeProfile({ id: 'b', setting: { ...base, magnification: 40000, binning: 2 }, calibration: cal(0.51, 0.012, 'standard'), createdIso: '2026-02-10T09:00:00Z' });
const p3 = makeProfile({ id: 'c', setting: { ...base, magnification: 40000, binning: 1 }, calibration: cal(0.252, 0.008, 'manual'), createdIso: '2026-03-01T09:00:00Z' });
const p4 = makeProfile({ id: 'd', setting: { ...base, magnification: 100000, binning: 1 }, calibration: cal(0.1, 0.01, 'standard'), createdIso: '2026-03-01T09:00:00Z' });

test('makeProfile records when and how the calibration was made', () => {
  expect(p1).toMatchObject({ instrument: 'TEM 1', magnification: 40000, camera: 'CMOS A', binning: 1, nmPerPx: 0.25, method: 'standard', createdIso: '2026-01-10T09:00:00Z' });
  expect(p1.name).toBe('TEM 1, 40000×, CMOS A, bin 1');
  expect(() => makeProfile({ id: 'x', setting: { ...base, magnification: 1 }, calibration: cal(1, 0, 'metadata'), createdIso: 'yesterday' })).toThrow(/createdIso/);
  expect(() => makeProfile({ id: '', setting: { ...base, magnification: 1 }, calibration: cal(1, 0, 'metadata'), createdIso: '2026-01-01' })).toThrow(/id/);
});

test('matchProfile: same instrument, camera and magnification; same binning first, then the newest', () => {
  const all = [p1, p2, p3, p4];
  const m = matchProfile(all, { instrument: ' tem  1 ', camera: 'cmos a', magnification: 40000, binning: 1 })!;
  expect(m.profile.id).toBe('c'); // newest at binning 1
  expect(m.calibration.source).toBe('profile');
  expect(m.scaledForBinning).toBe(false);
  const b2 = matchProfile(all, { ...base, magnification: 40000, binning: 2 })!;
  expect(b2.profile.id).toBe('b');
  const b4 = matchProfile(all, { ...base, magnification: 40000, binning: 4 })!;
  expect(b4.profile.id).toBe('c'); // none at 4: newest, scaled
  expect(b4.scaledForBinning).toBe(true);
  expect(b4.calibration.nmPerPx).toBeCloseTo(0.252 * 4, 12);
  expect(matchProfile(all, { ...base, magnification: 60000 })).toBeNull(); // never extrapolated
  expect(matchProfile(all, { instrument: 'TEM 2', magnification: 40000 })).toBeNull();
  expect(matchProfile(all, { ...base, magnification: 40100 })!.profile.id).toBe('c'); // 0.25 %: within the default 0.5 %
  expect(matchProfile(all, { ...base, magnification: 40400 })).toBeNull(); // 1 %: another setting
});
