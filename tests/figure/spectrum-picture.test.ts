// The power spectrum's display picture (src/figure/spectrum-picture.ts): black and white are taken
// from the part shown at the zoom, the central 1/zoom (common practice for power spectra: the
// strong low-frequency centre would otherwise leave the outer spots black or the centre white).
import { describe, expect, test } from 'vitest';
import { spectrumPicture } from '../../src/figure/spectrum-picture';

/** A 64 × 64 centred log power: 10 in the central 32 × 32, 0 outside, with a gentle ramp in both. */
function centredPower(): { width: number; height: number; logPower: Float32Array } {
  const w = 64;
  const logPower = new Float32Array(w * w);
  for (let y = 0; y < w; y++) for (let x = 0; x < w; x++) {
    const central = x >= 16 && x < 48 && y >= 16 && y < 48;
    logPower[y * w + x] = (central ? 10 : 0) + x / 64;
  }
  return { width: w, height: w, logPower };
}

const grey = (p: { rgba: Uint8ClampedArray; width: number }, x: number, y: number) => p.rgba[4 * (y * p.width + x)];

describe('spectrumPicture', () => {
  test('at zoom 1 the centre is white and the outside black; at zoom 2 the centre spans black to white', () => {
    const p = centredPower();
    const whole = spectrumPicture(p, 1);
    expect([whole.width, whole.height]).toEqual([64, 64]);
    expect(grey(whole, 40, 32)).toBeGreaterThan(240);
    expect(grey(whole, 2, 2)).toBeLessThan(15);
    const centre = spectrumPicture(p, 2);
    // limits from the central 32 × 32 only: its ramp from 10.25 to 10.73 now spans the grey scale
    expect(grey(centre, 17, 32)).toBeLessThan(30);
    expect(grey(centre, 46, 32)).toBeGreaterThan(225);
  });

  test('a zoom that is not a positive number is refused, naming it', () => {
    expect(() => spectrumPicture(centredPower(), 0)).toThrow(/zoom must be a positive number, got 0/);
    expect(() => spectrumPicture(centredPower(), Number.NaN)).toThrow(/got NaN/);
  });
});
