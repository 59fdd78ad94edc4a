// The image session the compute worker keeps: a region's spectrum is computed once and reused,
// a clicked spot costs no transform of the region, recalibrating measures nothing again, and the
// records are those of the same core functions the command line and the batch call.
// Synthetic fringes with known truth (tests/measure/synth.ts): a plane wave of a non-integer
// period is a spectrum spot at 1/period cycles/px (DFT definition, reference-values §4).
import { describe, expect, test } from 'vitest';
import { cropImage } from '../../src/image/crop';
import { analyseProfile } from '../../src/measure/profile-measurement';
import { measureRegion } from '../../src/measure/measure-region';
import { expressPeriod } from '../../src/measure/measurement';
import {
  createImageSession,
  prepareRegionSpots,
  profileIn,
  recalibrateSession,
  regionAnalysis,
  spectrumView,
  spotBudgetIn,
  spotNearIn,
  withTableSpots,
} from '../../src/measure/session';
import { fringeImage } from './synth';

const CAL = { nmPerPx: 0.05, source: 'manual' as const, relUncertainty: 0.02, detail: 'test' };
const SETTINGS = { window: 'hann' as const, tukeyAlpha: 0.5, alpha: 0.001 };
const PERIOD = 11.37;
const ANGLE = 28;

/** Drops what differs between two runs of the same measurement (its id and time). */
const sameMeasurement = (m: object) => ({ ...m, id: '', createdIso: '' });

describe('image session', () => {
  const image = fringeImage(320, 300, [{ periodPx: PERIOD, angleDeg: ANGLE, amplitude: 8 }], 4, 7, CAL);
  const rect = { x: 20, y: 30, width: 256, height: 256 };

  test('a region is analysed once: the same request again is answered from the cache, with the core\'s own record', async () => {
    const s = createImageSession('s1', image);
    const a = await regionAnalysis(s, rect, SETTINGS);
    expect(s.stats.regionTransforms).toBe(1);
    const b = await regionAnalysis(s, rect, SETTINGS);
    expect(b).toBe(a);
    expect(s.stats).toEqual({ regionTransforms: 1, cacheHits: 1 });
    // the record is exactly the one measureRegion gives the command line and the batch
    expect(sameMeasurement(a.measurement)).toEqual(sameMeasurement(await measureRegion(image, rect, { alpha: SETTINGS.alpha, window: 'hann', tukeyAlpha: 0.5 })));
    expect(a.measurement.region).toEqual({ kind: 'rect', ...rect });
    const top = a.measurement.periodicities[0];
    expect(Math.abs(top.periodPx - PERIOD) / PERIOD).toBeLessThan(1e-3);
    expect(Math.abs(top.angleDeg - ANGLE)).toBeLessThan(0.2);
    // another false-alarm probability is another search: analysed again
    await regionAnalysis(s, rect, { ...SETTINGS, alpha: 0.01 });
    expect(s.stats.regionTransforms).toBe(2);
  }, 60_000);

  test('a click runs no transform of the region; its budget comes from the cached spectra', async () => {
    const s = createImageSession('s2', image);
    const a = await regionAnalysis(s, rect, SETTINGS);
    await prepareRegionSpots(s, rect, SETTINGS);
    await prepareRegionSpots(s, rect, SETTINGS); // idempotent: one complex transform
    const prepared = s.stats.regionTransforms;
    expect(prepared).toBe(2);
    const t = a.spots[0];
    // click one bin off the Friedel mate
    const spot = spotNearIn(s, rect, SETTINGS, -t.fx + 1 / 256, -t.fy);
    expect(spot).not.toBeNull();
    expect(Math.abs(spot!.periodPx - PERIOD) / PERIOD).toBeLessThan(2e-3);
    const full = await spotBudgetIn(s, rect, SETTINGS, spot!);
    expect(s.stats.regionTransforms).toBe(prepared);
    expect(Math.abs(full.periodPx - t.periodPx)).toBeLessThan(Math.max(1e-3, 3 * t.u.statisticalPx));
    // the clicked spot is budgeted like an automatic one: the same parts
    expect(full.u.statisticalPx).toBeGreaterThan(0);
  }, 60_000);

  test('a click on a region not analysed in this session is refused by name', () => {
    const s = createImageSession('s3', image);
    expect(() => spotNearIn(s, rect, SETTINGS, 0.05, 0)).toThrow(/no spectrum of region x 20, y 30, 256 × 256/);
  });

  test('recalibrating re-expresses the same pixel values and measures nothing again', async () => {
    const s = createImageSession('s4', image);
    const a = await regionAnalysis(s, rect, SETTINGS);
    const before = expressPeriod(a.measurement.periodicities[0], a.measurement.calibration);
    const cal2 = { ...CAL, nmPerPx: 0.1 };
    recalibrateSession(s, cal2);
    const b = await regionAnalysis(s, rect, SETTINGS);
    expect(s.stats.regionTransforms).toBe(1);
    expect(b.measurement.calibration).toEqual(cal2);
    expect(b.measurement.periodicities).toEqual(a.measurement.periodicities);
    // d = period × pixel size (definition): twice the pixel size, twice the d
    expect(expressPeriod(b.measurement.periodicities[0], b.measurement.calibration).value).toBeCloseTo(2 * before.value, 10);
    expect(s.image.calibration).toEqual(cal2);
  }, 60_000);

  test('the oldest region leaves the cache beyond maxRegions', async () => {
    const s = createImageSession('s5', image, { maxRegions: 2 });
    const r = (x: number) => ({ x, y: 0, width: 64, height: 64 });
    await regionAnalysis(s, r(0), SETTINGS);
    await regionAnalysis(s, r(10), SETTINGS);
    await regionAnalysis(s, r(20), SETTINGS);
    expect(s.regions.length).toBe(2);
    await regionAnalysis(s, r(0), SETTINGS);
    expect(s.stats.regionTransforms).toBe(4);
  }, 60_000);

  test('the spectrum view pools the picture and finds rings; the table\'s spots make the saved record', async () => {
    const s = createImageSession('s6', image);
    const a = await regionAnalysis(s, rect, SETTINGS);
    const v = spectrumView(a, 64, SETTINGS.alpha);
    expect(v.binsPerPicturePx).toBe(4);
    expect([v.picture.width, v.picture.height]).toEqual([64, 64]);
    const m = withTableSpots(a.measurement, a.spots.map((spot, i) => ({ spot, number: i + 1, addedByHand: false })), v.rings, [1]);
    expect(m.periodicities.length).toBe(a.spots.length);
    expect((m.detail!.selectedSpots as number[])).toEqual([1]);
    expect(() => withTableSpots({ ...a.measurement, tool: 'profile' }, [], [], [])).toThrow(/spectrum record, got tool 'profile'/);
  }, 60_000);

  test('a region of the session\'s image gives the numbers of a copy of that region alone (the Calibration panel\'s former crop call)', async () => {
    // The Calibration panel once sent a crop of the region; it now names the region of the
    // session's image. Spots, periods and picture must be the same numbers (area offsets aside).
    const settings = { window: 'hann' as const, tukeyAlpha: 0.3, alpha: 0.001 };
    const s = createImageSession('s9', image);
    for (const r of [rect, { x: 33, y: 41, width: 201, height: 77 }]) {
      const copy = createImageSession('copy', cropImage(image, r));
      const fromCopy = spectrumView(await regionAnalysis(copy, { x: 0, y: 0, width: r.width, height: r.height }, settings), 64, settings.alpha);
      const inSession = spectrumView(await regionAnalysis(s, r, settings), 64, settings.alpha);
      expect(inSession.spots.length).toBeGreaterThan(0);
      expect(inSession.spots).toEqual(fromCopy.spots);
      expect(inSession.measurement.periodicities).toEqual(fromCopy.measurement.periodicities);
      expect(inSession.picture).toEqual(fromCopy.picture);
      expect(inSession.measurement.region).toEqual({ kind: 'rect', ...r });
    }
  }, 60_000);

  test('a profile in the session is the core\'s profile, with its samples in the record', () => {
    const s = createImageSession('s7', image);
    const line = { x0: 40, y0: 200, x1: 260, y1: 80, widthPx: 5 };
    const v = profileIn(s, line, 'hann');
    const direct = analyseProfile(image, line, { estimator: 'hann' });
    expect(v.spectral).toEqual(direct.spectral);
    expect(v.measurement.periodicities).toEqual(direct.measurement.periodicities);
    const samples = v.measurement.detail!.samples as { mean: (number | null)[] };
    expect(samples.mean.length).toBe(direct.profile.mean.length);
  });

  test('bad arguments are refused by name', async () => {
    expect(() => createImageSession('', image)).toThrow(/session id/);
    expect(() => createImageSession('x', image, { maxRegions: 0 })).toThrow(/maxRegions .* got 0/);
    const s = createImageSession('s8', image);
    await expect(regionAnalysis(s, { x: 0, y: 0, width: 8, height: 8 }, SETTINGS)).rejects.toThrow(/at least 16 × 16/);
  });
});
