import { describe, expect, it } from 'vitest';
import { profilePeriod, sheetsAlongProfile } from '../../src/sheets/profile';
import { rng, gauss, syntheticProfile } from '../../testing/synthetic/stacks';

// Synthetic stacks with known truth (algorithm tests): dark Gaussian layer lines, period 8 samples.
const truth = [
  { layers: 1, periodPx: 8, firstPx: 30 },
  { layers: 5, periodPx: 8, firstPx: 80 },
  { layers: 2, periodPx: 8, firstPx: 160 },
  { layers: 12, periodPx: 8, firstPx: 210 },
];

describe('sheetsAlongProfile', () => {
  it('counts layers exactly and measures thickness within half a period (noise-free)', () => {
    const r = sheetsAlongProfile(syntheticProfile(400, truth), { minLayers: 1, nmPerSample: 0.125 });
    expect(r.periodSource).toBe('estimated');
    expect(r.periodPx).toBeCloseTo(8, 0);
    expect(r.sheets.map((s) => s.layers)).toEqual([1, 5, 2, 12]);
    r.sheets.forEach((s, k) => {
      const t = truth[k];
      // thickness definition: layers × period = (last − first centre) + period
      expect(Math.abs(s.thicknessPx - t.layers * t.periodPx)).toBeLessThan(t.periodPx / 2);
      expect(s.thicknessNm).toBeCloseTo(s.thicknessPx * 0.125, 12);
      expect(Math.abs(s.centerPx - (t.firstPx + ((t.layers - 1) * t.periodPx) / 2))).toBeLessThan(0.5);
    });
    // edge-to-edge of the 5- and 12-layer sheets ≈ layers × period (half-maximum of the envelope)
    expect(Math.abs(r.sheets[1].edgeToEdgePx - 40)).toBeLessThan(4);
    expect(Math.abs(r.sheets[3].edgeToEdgePx - 96)).toBeLessThan(4);
    // gap between the 5- and 2-layer sheets: 156 − 116 = 40 samples edge to edge
    expect(Math.abs(r.gapsPx[1] - 40)).toBeLessThan(4);
    expect(r.gapsNm![1]).toBeCloseTo(r.gapsPx[1] * 0.125, 12);
    // layer centres within 0.3 sample of the truth in the 12-layer sheet
    r.sheets[3].layerPositionsPx.forEach((x, k) => expect(Math.abs(x - (210 + 8 * k))).toBeLessThan(0.3));
  });

  it('finds the sheets of two or more layers at moderate noise', () => {
    for (const seed of [3, 4, 5]) {
      const r = sheetsAlongProfile(syntheticProfile(400, truth, { noise: 0.03, seed }));
      expect(r.sheets.map((s) => s.layers)).toEqual([5, 2, 12]);
    }
  });

  it('splits a stack at a missing layer and at a spacing break', () => {
    // 4 layers, one layer missing, 4 layers: two sheets of 4
    const missing = syntheticProfile(200, [
      { layers: 4, periodPx: 8, firstPx: 40 },
      { layers: 4, periodPx: 8, firstPx: 40 + 5 * 8 },
    ]);
    expect(sheetsAlongProfile(missing, { periodPx: 8 }).sheets.map((s) => s.layers)).toEqual([4, 4]);
    // 5 layers, then 5 more after a half-period slip (spacing 12 instead of 8)
    const slip = syntheticProfile(200, [
      { layers: 5, periodPx: 8, firstPx: 40 },
      { layers: 5, periodPx: 8, firstPx: 40 + 4 * 8 + 12 },
    ]);
    const r = sheetsAlongProfile(slip, { periodPx: 8 });
    expect(r.sheets.map((s) => s.layers)).toEqual([5, 5]);
  });

  it('rarely reports sheets in amorphous noise (false-alarm rate at the default threshold)', () => {
    // 100 seeds each: white noise, and white noise smoothed over 3 samples (a coloured, amorphous
    // background); measured rates at the default 3 × noise rms are about 0–1 % and 7–8 %
    let white = 0;
    let coloured = 0;
    for (let seed = 1; seed <= 100; seed++) {
      const r0 = rng(seed);
      const w = Array.from({ length: 402 }, () => gauss(r0));
      const v = Array.from({ length: 400 }, (_, i) => 1 + 0.05 * (w[i] + w[i + 1] + w[i + 2]));
      if (sheetsAlongProfile(v, { periodPx: 8 }).sheets.length) coloured++;
      if (sheetsAlongProfile(w.slice(0, 400), { periodPx: 8 }).sheets.length) white++;
    }
    expect(white).toBeLessThanOrEqual(3);
    expect(coloured).toBeLessThanOrEqual(12);
    // a stricter threshold removes nearly all of them
    let strict = 0;
    for (let seed = 1; seed <= 100; seed++) {
      const r0 = rng(seed);
      const w = Array.from({ length: 402 }, () => gauss(r0));
      const v = Array.from({ length: 400 }, (_, i) => 1 + 0.05 * (w[i] + w[i + 1] + w[i + 2]));
      if (sheetsAlongProfile(v, { periodPx: 8, snrThreshold: 4 }).sheets.length) strict++;
    }
    expect(strict).toBeLessThanOrEqual(1);
  });

  it('estimates the noise envelope of white noise without bias (band-passed white noise, common practice)', () => {
    // Expected: σ² Σ|g|² / N for the analytic Gaussian band-pass g = 2 exp(−(f − f0)²/2(0.3 f0)²),
    // i.e. rms = σ √(4 · 0.3 √π / period) (computed). The median over 40 profiles of 300 samples
    // must lie within 5 %, and of the measured envelope itself within 5 %.
    for (const periodPx of [6, 10, 14]) {
      const ratios: number[] = [];
      const measured: number[] = [];
      for (let seed = 1; seed <= 40; seed++) {
        const r0 = rng(100 + seed);
        const v = Array.from({ length: 300 }, () => 1 + 0.03 * gauss(r0));
        const res = sheetsAlongProfile(v, { periodPx });
        ratios.push(res.noiseRms / (0.03 * Math.sqrt((4 * 0.3 * Math.sqrt(Math.PI)) / periodPx)));
        measured.push(Math.sqrt(res.envelope.reduce((q, e) => q + e * e, 0) / res.envelope.length) / res.noiseRms);
      }
      const median = (x: number[]) => x.sort((a, b) => a - b)[x.length >> 1];
      expect(Math.abs(median(ratios) - 1)).toBeLessThan(0.05);
      expect(Math.abs(median(measured) - 1)).toBeLessThan(0.05);
    }
  });

  it('finds a faint blurred stack beside a strong one when the two leave little background (a bench:sheets case)', () => {
    // 3 and 7 layers, period 8.15, gap 3.8 periods, blur 0.15 period, noise 0.03: the side bands
    // (raised by the stacks' sidelobes) read the noise 2.5 times high; the background between the
    // stacks, consistent with the white level, brings it back. Measured: 39 of 40 noise
    // realisations (31 of 40 with the side-band estimate alone).
    const p = 8.15;
    const first = 4 * p;
    const clean = syntheticProfile(178, [
      { layers: 3, periodPx: p, firstPx: first },
      { layers: 7, periodPx: p, firstPx: first + 2 * p + 3.8 * p + p },
    ]);
    const sigma = 0.15 * p;
    const blurred = clean.map((_, i) => {
      let sum = 0;
      let wsum = 0;
      for (let k = -4; k <= 4; k++) {
        const j = Math.min(177, Math.max(0, i + k));
        const g = Math.exp(-0.5 * (k / sigma) ** 2);
        sum += g * clean[j];
        wsum += g;
      }
      return sum / wsum;
    });
    let found = 0;
    for (let seed = 1; seed <= 40; seed++) {
      const r0 = rng(500 + seed);
      const res = sheetsAlongProfile(blurred.map((v) => v + 0.03 * gauss(r0)), { periodPx: p });
      if (res.sheets.some((s) => s.layers === 3 && Math.abs(s.centerPx - (first + p)) < p)) found++;
    }
    expect(found).toBeGreaterThanOrEqual(36);
  });

  it('bright layers with polarity "bright"', () => {
    const p = syntheticProfile(300, [{ layers: 6, periodPx: 10, firstPx: 100 }]).map((v) => 2 - v);
    const r = sheetsAlongProfile(p, { polarity: 'bright' });
    expect(r.sheets.map((s) => s.layers)).toEqual([6]);
    expect(Math.abs(r.sheets[0].periodPx - 10)).toBeLessThan(0.15);
    expect(r.sheets[0].periodNm).toBeNull();
  });

  it('rejects bad arguments by name', () => {
    const p = syntheticProfile(100, truth.slice(0, 1));
    expect(() => sheetsAlongProfile(p.slice(0, 5))).toThrow(/at least 8/);
    expect(() => sheetsAlongProfile(p, { periodPx: 1 })).toThrow(/periodPx/);
    expect(() => sheetsAlongProfile(p, { minLayers: 0 })).toThrow(/minLayers/);
    expect(() => sheetsAlongProfile(p, { nmPerSample: -1 })).toThrow(/nmPerSample/);
    expect(() => sheetsAlongProfile(p, { minBackgroundSamples: 0.5 })).toThrow(/minBackgroundSamples must be a number ≥ 1, got 0.5/);
    expect(() => sheetsAlongProfile([...p.slice(0, 20), NaN])).toThrow(/values\[20\]/);
  });
});

describe('profilePeriod', () => {
  it('recovers the period of a long stack to 0.5 %', () => {
    const p = syntheticProfile(512, [{ layers: 50, periodPx: 9.3, firstPx: 20 }], { noise: 0.05, seed: 9 });
    expect(Math.abs(profilePeriod(p).periodPx - 9.3) / 9.3).toBeLessThan(0.005);
  });

  it('measures the period of short stacks without the outer layers\' bias, also near 2.5 samples per period', () => {
    // synthetic truth (noise-free); the band-pass pulls the two outer layers outward by about
    // 3 % of a period, so a slope over all six layers read 6.058 px; a three-point parabola reads
    // positions poorly at 2.5 samples per period
    for (const [periodPx, layers] of [[6, 6], [2.5, 8], [9, 4]]) {
      const prof = syntheticProfile(Math.ceil(40.3 + layers * periodPx + 40), [{ layers, periodPx, firstPx: 40.3 }], { noise: 0 });
      const s = sheetsAlongProfile(prof, { periodPx }).sheets;
      expect(s.map((q) => q.layers)).toEqual([layers]);
      expect(Math.abs(s[0].periodPx - periodPx) / periodPx).toBeLessThan(0.003);
    }
  });
});
