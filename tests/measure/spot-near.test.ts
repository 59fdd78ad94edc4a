import { describe, expect, test } from 'vitest';
import { makeGreyImage } from '../../src/image/grey-image';
import { powerSpectrum } from '../../src/measure/spectrum';
import { spotNear, spotPeriodicity } from '../../src/measure/spot-near';
import { expressPeriod } from '../../src/measure/measurement';

// Synthetic fringes with a known, non-integer period; truth by construction (DFT definition:
// a spot at frequency f cycles/px is a period of 1/f px, reference-values §4).
function fringes(size: number, periodPx: number, angleDeg: number): Float32Array {
  const a = (angleDeg * Math.PI) / 180;
  const kx = Math.cos(a) / periodPx;
  const ky = -Math.sin(a) / periodPx; // y up on the screen: row index runs downwards
  const data = new Float32Array(size * size);
  for (let y = 0; y < size; y++) for (let x = 0; x < size; x++) data[y * size + x] = 100 + 10 * Math.cos(2 * Math.PI * (kx * x + ky * y));
  return data;
}

describe('spotNear', () => {
  test('refines a click near a fringe spot to the true period and direction', async () => {
    const size = 256;
    const periodPx = 9.37;
    const image = makeGreyImage(size, size, fringes(size, periodPx, 33));
    const spectrum = await powerSpectrum(image, null);
    // A click a little off the spot, in cycles/px with fy along the row index (downwards): the
    // true spot is at (cos 33°, −sin 33°)/9.37.
    const fx = Math.cos((33 * Math.PI) / 180) / periodPx + 0.004;
    const fy = -Math.sin((33 * Math.PI) / 180) / periodPx - 0.003;
    const spot = spotNear(spectrum, fx, fy);
    expect(spot).not.toBeNull();
    const p = spotPeriodicity(spot!);
    const b = expressPeriod(p, { nmPerPx: 0.05, source: 'manual', relUncertainty: 0.02, detail: '' });
    expect(Math.abs(p.periodPx - periodPx) / periodPx).toBeLessThan(2e-3);
    expect(Math.abs(p.angleDeg - 33)).toBeLessThan(0.3);
    expect(b.value).toBeCloseTo(p.periodPx * 0.05, 12);
    expect(b.combined).toBeGreaterThanOrEqual(b.value * 0.02);
  });
});
