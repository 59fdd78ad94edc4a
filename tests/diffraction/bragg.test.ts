import { describe, expect, test } from 'vitest';
import {
  dToQ,
  dToTwoTheta,
  electronWavelengthNm,
  ka2Position,
  parseWavelength,
  qToD,
  twoThetaToD,
  twoThetaToQ,
  XRAY_LINES,
} from '../../src/diffraction/bragg';

// Cu Kα1 as used for the SRM tables of reference-values §2: 1.5405929 Å (ITC C Table 4.2.2.6).
const CU = 0.15405929;

describe('Bragg conversions against NIST SRM line positions', () => {
  // SRM 640f silicon, a = 0.5431144 nm: Black et al., Powder Diffr. 35 (2020); d and 2θ computed
  // from that cell with Bragg's law for Cu Kα1 (reference-values §2).
  const aSi = 0.5431144;
  const si: Array<[number, number, number, number]> = [
    [1, 1, 1, 28.441],
    [2, 2, 0, 47.301],
    [3, 1, 1, 56.12],
    [4, 0, 0, 69.127],
    [3, 3, 1, 76.373],
  ];
  test.each(si)('Si 640f %i%i%i', (h, k, l, twoTheta) => {
    const d = aSi / Math.hypot(h, k, l);
    // the table prints 3 decimals: allow half a unit of the last digit plus rounding
    expect(Math.abs(dToTwoTheta(d, CU) - twoTheta)).toBeLessThan(0.0006);
    expect(twoThetaToD(twoTheta, CU)).toBeCloseTo(d, 5);
  });
  test('Si 640f 111 d = 3.13567 Å (Black et al. 2020 cell, reference-values §2)', () => {
    expect(aSi / Math.sqrt(3)).toBeCloseTo(0.313567, 6);
  });
  // SRM 660c LaB6, a = 0.4156826 nm: SRM 660c certificate / Black et al., Powder Diffr. 35 (2020).
  const aLaB6 = 0.4156826;
  const lab6: Array<[number, number, number, number]> = [
    [1, 0, 0, 21.358],
    [1, 1, 0, 30.385],
    [1, 1, 1, 37.443],
    [2, 0, 0, 43.507],
    [2, 1, 0, 48.958],
  ];
  test.each(lab6)('LaB6 660c %i%i%i', (h, k, l, twoTheta) => {
    expect(Math.abs(dToTwoTheta(aLaB6 / Math.hypot(h, k, l), CU) - twoTheta)).toBeLessThan(0.0006);
  });
  test('q = 2π/d = 4π sin θ / λ (definition)', () => {
    const d = aSi / Math.sqrt(3);
    expect(twoThetaToQ(28.441, CU)).toBeCloseTo(dToQ(d), 3);
    expect(qToD(dToQ(0.7405))).toBeCloseTo(0.7405, 12);
  });
  test('no reflection when d < λ/2, and bad angles are rejected with the value', () => {
    expect(() => dToTwoTheta(0.07, CU)).toThrow(/below λ\/2/);
    expect(() => twoThetaToD(190, CU)).toThrow(/190/);
    expect(() => twoThetaToD(20, -1)).toThrow(/-1/);
  });
});

describe('wavelength presets', () => {
  test('Cu Kα1 and Mo Kα1 are the ITC C Table 4.2.2.6 values (SI scale)', () => {
    expect(parseWavelength('CuKa1').wavelengthNm).toBe(0.154059292); // 1.54059292(45) Å
    expect(parseWavelength('MoKa1').wavelengthNm).toBe(0.070931713); // 0.70931713(41) Å
  });
  test('Cu Kα weighted (2Kα1+Kα2)/3 = 1.541871 Å on the Hölzer scale (reference-values §1, computed); typed, it means the doublet', () => {
    expect(XRAY_LINES.find((l) => l.key === 'CuKa')!.wavelengthNm * 10).toBeCloseTo(1.541871, 5);
    const w = parseWavelength('CuKa');
    expect(w.wavelengthNm).toBe(0.154059292);
    expect(w.ka2Nm).toBe(0.15444274);
  });
  test('Co, Cr, Ag Kα1 from Hölzer et al. 1997 / NIST XRTE (reference-values §1)', () => {
    expect(parseWavelength('CoKa1').wavelengthNm * 10).toBeCloseTo(1.788996, 6);
    expect(parseWavelength('CrKa1').wavelengthNm * 10).toBeCloseTo(2.289726, 6);
    expect(parseWavelength('AgKa1').wavelengthNm * 10).toBeCloseTo(0.55942178, 7);
  });
  test('numbers with units; a bare small number that is no tube line is refused', () => {
    expect(parseWavelength('1.5406A').wavelengthNm).toBeCloseTo(0.15406, 8);
    expect(parseWavelength('0.15406nm').wavelengthNm).toBeCloseTo(0.15406, 8);
    expect(parseWavelength('1.5406').wavelengthNm).toBeCloseTo(0.15406, 8);
    // 0.15406 without unit is Cu Kα1 in nm (reference-values §1): read so, with a note
    expect(parseWavelength('0.15406').wavelengthNm).toBeCloseTo(0.15406, 8);
    expect(() => parseWavelength('0.2')).toThrow(/no unit/);
    expect(() => parseWavelength('FeKz')).toThrow(/FeKz/);
    expect(XRAY_LINES.map((l) => l.key)).toEqual(['CuKa1', 'CuKa', 'CrKa1', 'FeKa1', 'CoKa1', 'MoKa1', 'AgKa1']);
  });
});

describe('Kα1–Kα2 splitting (ITC C §2.3.3.2: 0.05° at 20° and 1.08° at 150° 2θ, Cu)', () => {
  const cu = parseWavelength('CuKa1');
  test('0.05° at 20°', () => {
    expect(ka2Position(20, cu.wavelengthNm, cu.ka2Nm!) - 20).toBeCloseTo(0.05, 2);
  });
  test('1.08° at 150°', () => {
    expect(ka2Position(150, cu.wavelengthNm, cu.ka2Nm!) - 150).toBeCloseTo(1.08, 2);
  });
});

describe('electron wavelength (relativistic; reference-values §4, computed with CODATA 2018 constants)', () => {
  test.each([
    [80e3, 4.1757],
    [100e3, 3.7014],
    [200e3, 2.5079],
    [300e3, 1.9687],
  ])('%d V → %f pm', (u, pm) => {
    expect(electronWavelengthNm(u) * 1000).toBeCloseTo(pm, 3);
  });
  test('rejects a non-positive voltage', () => {
    expect(() => electronWavelengthNm(0)).toThrow(/0/);
  });
});
