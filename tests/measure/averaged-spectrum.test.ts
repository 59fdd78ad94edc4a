import { describe, expect, test } from 'vitest';
import { averagedPowerSpectrum, regionPowerSpectrum } from '../../src/measure/averaged-spectrum';
import { measureRegion } from '../../src/measure/measure-region';
import { combinedPx } from '../../src/measure/measurement';
import { fringeImage } from './synth';

describe('spectrum of a region too large to transform whole (Welch averaging)', () => {
  test('white noise: the averaged periodogram keeps the level σ²·Σw² and its scatter falls as 1/√M', async () => {
    // Welch, IEEE Trans. Audio Electroacoust. 15(2), 70 (1967): the mean of M periodograms of
    // windowed white noise has mean σ²·Σw² per bin; for disjoint tiles the relative SD is 1/√M.
    const img = fringeImage(512, 256, [], 1, 7);
    const s = await averagedPowerSpectrum(img, null, { tileSidePx: 128, overlap: 0 });
    expect(s.tiles).toEqual({ count: 8, widthPx: 128, heightPx: 128 });
    let sw2 = 0;
    for (const a of s.windowX) for (const b of s.windowY) sw2 += a * a * b * b;
    let sum = 0;
    let sum2 = 0;
    let n = 0;
    for (let v = 8; v < 56; v++) for (let u = 8; u < 56; u++) {
      const p = s.power[v * 128 + u] / sw2;
      sum += p;
      sum2 += p * p;
      n++;
    }
    const mean = sum / n;
    const sd = Math.sqrt(sum2 / n - mean * mean);
    expect(mean).toBeGreaterThan(0.9);
    expect(mean).toBeLessThan(1.1);
    expect(sd / mean).toBeGreaterThan(0.7 / Math.sqrt(8));
    expect(sd / mean).toBeLessThan(1.4 / Math.sqrt(8));
  });

  test('a region wider than 4096 px is averaged over tiles, measured, and says so', async () => {
    // fringes of 9.7 px in a 4500 × 300 strip; truth known (common practice: synthetic fringes)
    const img = fringeImage(4500, 300, [{ periodPx: 9.7, angleDeg: 30, amplitude: 4 }], 2, 3);
    const s = await regionPowerSpectrum(img, null);
    expect('tiles' in s && s.tiles.count).toBeGreaterThan(2);
    const m = await measureRegion(img, null);
    const p = m.periodicities[0];
    expect(Math.abs(p.periodPx - 9.7)).toBeLessThan(2 * combinedPx(p.u));
    expect(m.notes.join(' ')).toMatch(/averaged over \d+ overlapping tiles/);
  });

  test('bad arguments are named', async () => {
    const img = fringeImage(64, 64, [], 1);
    await expect(averagedPowerSpectrum(img, null, { tileSidePx: 8 })).rejects.toThrow(/tileSidePx/);
    await expect(averagedPowerSpectrum(img, null, { overlap: 1 })).rejects.toThrow(/overlap/);
    await expect(averagedPowerSpectrum(img, { x: 10, y: 10, width: 64, height: 64 })).rejects.toThrow(/outside/);
  });
});
