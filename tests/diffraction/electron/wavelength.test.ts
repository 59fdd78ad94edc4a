import { expect, test } from 'vitest';
import { electronWavelengthForKv } from '../../../src/diffraction/electron/wavelength';

// Relativistic electron wavelengths, checked against a published table: JEOL's glossary of
// electron-microscopy terms, entry "wavelength of electron", Table 1 (1 kV 38.764 pm … 200 kV
// 2.5079 pm … 1000 kV 0.87192 pm); the same values are computed in reference-values §4 with the
// CODATA 2018 constants, and the ubermag mag2exp documentation's example gives 300 kV → 1.96875e-12 m.
test.each([
  [1, 38.764, 3],
  [10, 12.205, 3],
  [80, 4.1757, 4],
  [100, 3.7014, 4],
  [120, 3.3492, 4],
  [200, 2.5079, 4],
  [300, 1.9687, 4],
  [1000, 0.87192, 5],
])('%d kV → %f pm', (kv, pm, digits) => {
  expect(electronWavelengthForKv(kv) * 1000).toBeCloseTo(pm, digits);
});

test('the relativistic correction matters: 200 kV without it would be 2.74 pm (λ = h/√(2m₀eU), common practice)', () => {
  const h = 6.62607015e-34;
  const m0 = 9.1093837015e-31;
  const e = 1.602176634e-19;
  const classical = (h / Math.sqrt(2 * m0 * e * 200e3)) * 1e12;
  expect(classical).toBeCloseTo(2.742, 3);
  expect(electronWavelengthForKv(200) * 1000).toBeLessThan(classical - 0.2);
});

test.each([0.5, 0, -200, 3001, Number.NaN, Number.POSITIVE_INFINITY])('a voltage of %s kV is refused with the range', (kv) => {
  expect(() => electronWavelengthForKv(kv)).toThrow(/accelerating voltage must be a number of kV from 1 to 3000/);
});
