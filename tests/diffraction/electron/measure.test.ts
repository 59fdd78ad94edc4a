import { describe, expect, test } from 'vitest';
import { calibrateCameraConstant } from '../../../src/diffraction/electron/camera-constant';
import { distortionOf } from '../../../src/diffraction/electron/geometry';
import { electronDetailOf, electronDiffractionSet, measureElectronPattern, type CameraSetting } from '../../../src/diffraction/electron/measure';
import { ringStandard, standardRings } from '../../../src/diffraction/electron/standards';
import { diffractionSideOfSet } from '../../../src/diffraction/stored-set';
import { electronPattern, type PatternSpec } from '../../../testing/synthetic/electron-pattern';

// Target (issue 14): ring and spot d-spacings within 0.2 %. Patterns rendered with a known camera
// constant and distortion (testing/synthetic/electron-pattern.ts); the camera is calibrated first
// on a gold ring pattern of the same setting, as a user would.
const K = 0.055;
const EPS = 0.018;
const MAJOR = 120;

function setting(): CameraSetting {
  const intens = [1, 0.6, 0.45, 0.45, 0.15, 0.1, 0.2, 0.2];
  const spec: PatternSpec = {
    width: 560, height: 560, cx: 284.3, cy: 271.8, kInvNmPerPx: K, ellipticity: EPS, majorAxisDeg: MAJOR,
    rings: standardRings(ringStandard('au'), 8).map((r, i) => ({ gInvNm: r.gInvNm, intensity: intens[i] })),
    beamStop: { widthPx: 20, offsetPx: 9 }, counts: 250, seed: 41,
  };
  const c = calibrateCameraConstant(electronPattern(spec), ringStandard('au'), { voltageKv: 200 });
  return { kInvNmPerPx: c.kInvNmPerPx, relUncertainty: c.relUncertainty, distortion: c.distortion, detail: c.detail };
}

describe('d-spacings of a sample pattern with a calibrated camera', () => {
  const camera = setting();

  test('rings of a clay seen along its layers\' normal (the hk bands) within 0.2 %, stated uncertainty containing the error', () => {
    // in-plane bands of a dioctahedral clay, d(02,11) 0.449, (13,20) 0.258, (15,24,31) 0.170, (06,33) 0.1497,
    // (26,40) 0.129 nm (from memory; test values, the check is against the rendered truth)
    const ds = [0.449, 0.258, 0.17, 0.1497, 0.129];
    const spec: PatternSpec = {
      width: 560, height: 560, cx: 271.2, cy: 290.6, kInvNmPerPx: K, ellipticity: EPS, majorAxisDeg: MAJOR,
      rings: ds.map((d, i) => ({ gInvNm: 1 / d, intensity: [1, 0.8, 0.4, 0.5, 0.3][i] })),
      beamStop: { widthPx: 24, offsetPx: -10 }, counts: 250, seed: 7,
    };
    const m = measureElectronPattern(electronPattern(spec), camera, { what: 'rings' });
    for (const d of ds) {
      const got = m.rings.find((r) => Math.abs(r.dNm / d - 1) < 0.01);
      expect(got, `ring d = ${d} nm`).toBeDefined();
      expect(Math.abs(got!.dNm / d - 1)).toBeLessThan(0.002);
      // the stated uncertainty contains the error (k = 2)
      expect(Math.abs(got!.dNm - d)).toBeLessThan(2 * got!.uDNm);
      expect(got!.uCameraPartNm).toBeCloseTo(got!.dNm * camera.relUncertainty, 9);
    }
  });

  test('spots of a [001] zone of a cubic crystal, under a direct beam 200× brighter, within 0.2 %; angles 90° and 45°', () => {
    // a = 0.52 nm, cubic F [001] zone: 200, 020, 220, 2-20, 400 (common practice: kinematic zone-axis pattern)
    const a = 0.52;
    const g = (h: number, k: number): [number, number] => [h / a, k / a];
    const spec: PatternSpec = {
      width: 512, height: 512, cx: 250.7, cy: 262.4, kInvNmPerPx: K, ellipticity: EPS, majorAxisDeg: MAJOR,
      spots: [
        { g: g(2, 0), intensity: 1 }, { g: g(0, 2), intensity: 0.9 }, { g: g(2, 2), intensity: 0.5 },
        { g: g(2, -2), intensity: 0.5 }, { g: g(4, 0), intensity: 0.2 }, { g: g(0, 4), intensity: 0.2 },
      ],
      directBeam: 60000, halo: 1500, counts: 300, beamStop: null, seed: 11,
    };
    const m = measureElectronPattern(electronPattern(spec), camera, { what: 'spots' });
    const d200 = a / 2;
    const d220 = a / Math.sqrt(8);
    const near = (d: number) => m.spots.filter((s) => Math.abs(s.dNm / d - 1) < 0.01);
    expect(near(d200).length).toBe(2);
    expect(near(d220).length).toBe(2);
    expect(near(a / 4).length).toBe(2);
    for (const s of [...near(d200), ...near(d220), ...near(a / 4)]) {
      const d = [d200, d220, a / 4].find((x) => Math.abs(s.dNm / x - 1) < 0.01)!;
      expect(Math.abs(s.dNm / d - 1)).toBeLessThan(0.002);
      expect(s.fromPair).toBe(true);
    }
    expect(Math.hypot(m.geometry.cx - spec.cx, m.geometry.cy - spec.cy)).toBeLessThan(0.2);
    const [p, q] = near(d200);
    const ang = m.angles.find((x) => (m.spots[x.i] === p && m.spots[x.j] === q) || (m.spots[x.i] === q && m.spots[x.j] === p))!;
    expect(Math.abs(ang.angleDeg - 90)).toBeLessThan(0.2);
    const r = near(d220)[0];
    const ang45 = m.angles.find((x) => (m.spots[x.i] === p && m.spots[x.j] === r) || (m.spots[x.i] === r && m.spots[x.j] === p))!;
    expect(Math.min(Math.abs(ang45.angleDeg - 45), Math.abs(ang45.angleDeg - 135))).toBeLessThan(0.2);
  });

  test('the library record carries the d-spacings as diffraction lines for the cross-check', () => {
    const spec: PatternSpec = {
      width: 400, height: 400, cx: 201, cy: 198, kInvNmPerPx: K, ellipticity: EPS, majorAxisDeg: MAJOR,
      rings: [{ gInvNm: 1 / 0.449, intensity: 1 }, { gInvNm: 1 / 0.258, intensity: 0.7 }, { gInvNm: 1 / 0.1497, intensity: 0.5 }],
      beamStop: null, counts: 250, seed: 5,
    };
    const m = measureElectronPattern(electronPattern(spec), camera, { what: 'rings' });
    const set = electronDiffractionSet(m, { id: 'e1', name: 'rings', createdIso: '2026-01-01T00:00:00Z', fileName: null, voltageKv: 200 });
    const side = diffractionSideOfSet(set);
    expect(side.lines.map((l) => Number(l.dNm.toFixed(3)))).toEqual([0.449, 0.258, 0.150]);
    expect(side.lines.every((l) => l.dUncNm > 0)).toBe(true);
    expect(set.wavelengthNm).toBeCloseTo(0.0025079, 7); // 200 kV (reference-values §4)
    expect(electronDetailOf(set)?.camera.kInvNmPerPx).toBe(camera.kInvNmPerPx);
  });

  test('bad camera settings are refused naming the value', () => {
    const img = electronPattern({ width: 64, height: 64, cx: 32, cy: 32, kInvNmPerPx: K, ellipticity: 0, majorAxisDeg: 0, seed: 1 });
    expect(() => measureElectronPattern(img, { ...camera, kInvNmPerPx: -1 })).toThrow(/camera constant must be a positive number.*got -1/);
    expect(() => measureElectronPattern(img, { ...camera, distortion: distortionOf(0.9, 0) })).toThrow(/distortion must be/);
    expect(() => measureElectronPattern(img, camera, { what: 'lines' as never })).toThrow(/what must be/);
  });
});

test('spots under a saturated direct beam (clipped at the detector\'s maximum) are still found and paired', async () => {
  const { makeGreyImage } = await import('../../../src/image/grey-image');
  const a = 0.48;
  const spec: PatternSpec = {
    width: 448, height: 448, cx: 221.6, cy: 230.3, kInvNmPerPx: K, ellipticity: 0, majorAxisDeg: 0,
    spots: [{ g: [2 / a, 0], intensity: 1 }, { g: [0, 2 / a], intensity: 0.8 }, { g: [2 / a, 2 / a], intensity: 0.4 }],
    directBeam: 200000, halo: 3000, counts: 400, beamStop: null, seed: 19,
  };
  const raw = electronPattern(spec);
  // a detector that saturates at 16 383 counts: the direct beam's core is flat-topped
  const clipped = makeGreyImage(raw.width, raw.height, Float32Array.from(raw.data, (v) => Math.min(v, 16383)), { bitDepth: 32, sampleKind: 'float' });
  const m = measureElectronPattern(clipped, { kInvNmPerPx: K, relUncertainty: 0.001, distortion: { e1: 0, e2: 0 }, detail: 'exact' }, { what: 'spots' });
  const truths = [a / 2, a / 2, a / Math.sqrt(8)];
  expect(m.spots.filter((s) => s.fromPair)).toHaveLength(3);
  for (const t of new Set(truths)) expect(m.spots.filter((s) => Math.abs(s.dNm / t - 1) < 0.002).length).toBe(truths.filter((x) => x === t).length);
  expect(Math.hypot(m.geometry.cx - spec.cx, m.geometry.cy - spec.cy)).toBeLessThan(0.2);
});
