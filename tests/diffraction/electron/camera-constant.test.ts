import { describe, expect, test } from 'vitest';
import { calibrateCameraConstant, indexRings } from '../../../src/diffraction/electron/camera-constant';
import { distortionOf, ellipticity, findPatternCentre } from '../../../src/diffraction/electron/geometry';
import { ringStandard, standardRings, userRingStandard } from '../../../src/diffraction/electron/standards';
import { electronWavelengthForKv } from '../../../src/diffraction/electron/wavelength';
import { electronPattern, type PatternSpec } from '../../../testing/synthetic/electron-pattern';

// fcc ring sequence (111), (200), (220), (311), (222), (400), (331), (420): reference-values §6 (extinction rule)
test('fcc standards list the allowed rings in order, d = a/√(h²+k²+l²)', () => {
  const au = ringStandard('au');
  const rings = standardRings(au, 8);
  expect(rings.map((r) => r.hkl.join(''))).toEqual(['111', '200', '220', '311', '222', '400', '331', '420']);
  // Au (111) / (200) / (220) = 0.23546 / 0.20391 / 0.14419 nm from a = 0.40782 nm (reference-values §3, given to 5 digits)
  expect(Math.abs(rings[0].dNm - 0.23546)).toBeLessThan(1e-5);
  expect(Math.abs(rings[1].dNm - 0.20391)).toBeLessThan(1e-5);
  expect(Math.abs(rings[2].dNm - 0.14419)).toBeLessThan(1e-5);
  expect(au.status).toBe('from memory');
  expect(au.uANm / au.aNm).toBeCloseTo(0.001, 3);
  // bcc: h + k + l even; primitive: all
  expect(standardRings(userRingStandard(0.3, 0.0003, 'I'), 3).map((r) => r.n)).toEqual([2, 4, 6]);
  expect(standardRings(userRingStandard(0.3, 0.0003, 'P'), 3).map((r) => r.n)).toEqual([1, 2, 3]);
  expect(() => ringStandard('pt')).toThrow(/unknown ring standard 'pt'/);
  expect(() => userRingStandard(-1, 0)).toThrow(/lattice parameter/);
});

test('distortion parameters and ellipticity are inverse of each other', () => {
  for (const [eps, deg] of [[0.01, 30], [0.03, 135], [0.0, 0], [0.02, 90]]) {
    const e = ellipticity(distortionOf(eps, deg));
    expect(e.ellipticity).toBeCloseTo(eps, 12);
    if (eps > 0) expect(e.majorAxisDeg).toBeCloseTo(deg, 9);
  }
});

function goldPattern(over: Partial<PatternSpec>): PatternSpec {
  const intens = [1, 0.6, 0.45, 0.45, 0.15, 0.1, 0.2, 0.2, 0.15, 0.1];
  return {
    width: 640,
    height: 640,
    cx: 331.4,
    cy: 306.9,
    kInvNmPerPx: 0.06,
    ellipticity: 0.02,
    majorAxisDeg: 40,
    rings: standardRings(ringStandard('au'), 10).map((r, i) => ({ gInvNm: r.gInvNm, intensity: intens[i] })),
    beamStop: { widthPx: 22, offsetPx: 12 },
    counts: 250,
    seed: 3,
    ...over,
  };
}

describe('camera constant from synthetic gold ring patterns (task target: within 0.1 %, 0–3 % ellipticity, off-centre beam stop, noise)', () => {
  for (const [eps, deg, seed] of [[0, 0, 1], [0.012, 75, 2], [0.03, 160, 3]]) {
    test(`ellipticity ${100 * eps} % at ${deg}°`, () => {
      const spec = goldPattern({ ellipticity: eps, majorAxisDeg: deg, seed, kInvNmPerPx: 0.052 + 0.004 * seed });
      const c = calibrateCameraConstant(electronPattern(spec), ringStandard('au'), { voltageKv: 200, detectorPixelUm: 15 });
      expect(Math.abs(c.kInvNmPerPx / spec.kInvNmPerPx - 1)).toBeLessThan(0.001);
      expect(c.kInvNmPerPx).toBeCloseTo(spec.kInvNmPerPx, 5);
      expect(Math.abs(c.ellipticity - eps)).toBeLessThan(0.001);
      expect(Math.abs(c.analysis.geometry.cx - spec.cx)).toBeLessThan(0.1);
      expect(Math.abs(c.analysis.geometry.cy - spec.cy)).toBeLessThan(0.1);
      expect(c.rings.length).toBeGreaterThanOrEqual(8);
      expect(c.rings[0].hkl).toEqual([1, 1, 1]);
      // the uncertainty contains the gold lattice parameter's allowance (0.1 %, from memory)
      expect(c.relUncertainty).toBeGreaterThanOrEqual(0.001);
      expect(c.parts.map((p) => p.type)).toEqual(['A', 'B']);
      // camera equation R·d = λL (reference-values §4): λL = 1/K, L = λL/λ
      expect(c.lambdaLNmPx).toBeCloseTo(1 / c.kInvNmPerPx, 9);
      expect(c.cameraLengthPx!).toBeCloseTo(c.lambdaLNmPx / electronWavelengthForKv(200), 6);
      expect(c.cameraLengthMm!).toBeCloseTo((c.cameraLengthPx! * 15) / 1000, 6);
    });
  }
});

test('the pattern centre is found from Friedel symmetry under an off-centre beam stop', () => {
  const spec = goldPattern({ cx: 280.6, cy: 350.2, beamStop: { widthPx: 30, offsetPx: -14 } });
  const c = findPatternCentre(electronPattern(spec));
  expect(Math.hypot(c.cx - spec.cx, c.cy - spec.cy)).toBeLessThan(1);
});

test('bad input gets a message saying what is missing, and nothing is calibrated', () => {
  // rings of a bcc lattice (h + k + l even) cannot be indexed as fcc gold
  const bcc = standardRings(userRingStandard(0.33, 0.0003, 'I'), 8).map((r) => ({ gInvNm: r.gInvNm, intensity: 0.6 }));
  const img = electronPattern(goldPattern({ rings: bcc, kInvNmPerPx: 0.05 }));
  expect(() => calibrateCameraConstant(img, ringStandard('au'))).toThrow(/no camera constant makes three or more of them fit the gold \(fcc\) reflections.*every strong ring/);
  expect(() => indexRings([{ radiusPx: 80, uRadiusPx: 0.01, widthPx: 1.5, height: 100 }], ringStandard('au'))).not.toThrow();
  expect(indexRings([{ radiusPx: 80, uRadiusPx: 0.01, widthPx: 1.5, height: 100 }], ringStandard('au'))).toEqual({ error: '1 ring found: indexing against gold (fcc) needs at least three' });
  expect(() => calibrateCameraConstant(img, ringStandard('au'), { voltageKv: 5000 })).toThrow(/from 1 to 3000, got 5000/);
  // a pattern with nothing but noise
  const blank = electronPattern(goldPattern({ rings: [] }));
  expect(() => calibrateCameraConstant(blank, ringStandard('au'))).toThrow(/no ring stands out of the background|needs at least three/);
});
