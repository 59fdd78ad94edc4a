import { describe, expect, test } from 'vitest';
import { makeGreyImage } from '../../src/image/grey-image';
import { lineProfile } from '../../src/measure/profile';
import { complexPeakOffset, kernelRatioOffset, logParabolaOffset, magnitudeRatioOffset, type Complex } from '../../src/measure/interpolate';
import { windowSamples } from '../../src/measure/window';
import { realSpacePeriod, spectralPeriod } from '../../src/measure/period-profile';
import { fringeImage, gaussian, manualCalibration, rng } from './synth';

/** DFT bin k of a complex sequence, X_k = Σ x e^(−2πikn/N). */
function bin(x: Complex[], k: number): Complex {
  let re = 0;
  let im = 0;
  for (let n = 0; n < x.length; n++) {
    const a = (-2 * Math.PI * k * n) / x.length;
    re += x[n].re * Math.cos(a) - x[n].im * Math.sin(a);
    im += x[n].re * Math.sin(a) + x[n].im * Math.cos(a);
  }
  return { re, im };
}

/** Largest |error| in bins over f = 10.0025…10.5 bins, N = 64, one complex tone (reference-values §5 set-up). */
function maxBias(method: (xm: Complex, x0: Complex, xp: Complex) => number, hann: boolean): number {
  const n = 64;
  let worst = 0;
  for (let f = 10.0025; f <= 10.5 + 1e-9; f += 0.0025) {
    const x = Array.from({ length: n }, (_, i) => {
      const w = hann ? 0.5 - 0.5 * Math.cos((2 * Math.PI * i) / n) : 1;
      return { re: w * Math.cos((2 * Math.PI * f * i) / n), im: w * Math.sin((2 * Math.PI * f * i) / n) };
    });
    worst = Math.max(worst, Math.abs(10 + method(bin(x, 9), bin(x, 10), bin(x, 11)) - f));
  }
  return worst;
}

describe('peak interpolators (reference-values §5)', () => {
  const abs = (c: Complex) => Math.hypot(c.re, c.im);
  test('Jacobsen, Quinn, Candan on rectangular data reproduce the published bias levels', () => {
    // Jacobsen & Kootsookos 2007 form, rect, N 64: max bias 3.0e-4 bin (reference-values §5, C).
    expect(maxBias((a, b, c) => complexPeakOffset(a, b, c, 'jacobsen'), false)).toBeCloseTo(3.0e-4, 5);
    // Quinn 1994: 3.0e-4 bin (reference-values §5, C).
    expect(maxBias((a, b, c) => complexPeakOffset(a, b, c, 'quinn'), false)).toBeCloseTo(3.0e-4, 5);
    // Candan 2011 bias correction: 1.0e-4 bin (reference-values §5, C).
    expect(maxBias((a, b, c) => complexPeakOffset(a, b, c, 'candan', 64), false)).toBeCloseTo(1.0e-4, 5);
  });
  test('plain Jacobsen is biased by a quarter bin on Hann data; the Hann ratio form is not', () => {
    // reference-values §5: Jacobsen on Hann data 0.25 bin (C).
    expect(maxBias((a, b, c) => complexPeakOffset(a, b, c, 'jacobsen'), true)).toBeCloseTo(0.25, 2);
    // Grandke 1983 Hann form: exact up to O(1/N²) (its derivation); well under 1e-4 bin here.
    expect(maxBias((a, b, c) => magnitudeRatioOffset(abs(a), abs(b), abs(c), 'hann'), true)).toBeLessThan(1e-4);
  });
});

describe('window-kernel ratio interpolation', () => {
  /** Largest error in bins for a real-valued tone 40 + δ bins, N 256, window w, with method m. */
  function worst(w: Float64Array, m: (a: number, b: number, c: number) => number): number {
    const n = w.length;
    let e = 0;
    for (let d = 0; d <= 0.5; d += 0.025) {
      const f = 40 + d;
      const x = Array.from({ length: n }, (_, i) => ({ re: w[i] * Math.cos((2 * Math.PI * f * i) / n), im: 0 }));
      const mags = [39, 40, 41].map((k) => Math.hypot(bin(x, k).re, bin(x, k).im));
      e = Math.max(e, Math.abs(40 + m(mags[0], mags[1], mags[2]) - f));
    }
    return e;
  }
  test('exact for Tukey where the log-parabola is not, and equal to Grandke for Hann', () => {
    const tukey = windowSamples('tukey', 256, 0.5);
    // Gaussian (log-parabola) interpolation on a Tukey(0.5) kernel: biased by about 0.1 bin (our computation).
    expect(worst(tukey, (a, b, c) => logParabolaOffset(a * a, b * b, c * c))).toBeGreaterThan(0.05);
    // Kernel-ratio inversion: limited only by the negative-frequency image of a real tone.
    expect(worst(tukey, (a, b, c) => kernelRatioOffset(a, b, c, tukey))).toBeLessThan(2e-3);
    const hann = windowSamples('hann', 256);
    for (const [a, b, c] of [[0.2, 1, 0.6], [0.7, 1, 0.3], [0.5, 1, 0.5]]) {
      expect(kernelRatioOffset(a, b, c, hann)).toBeCloseTo(magnitudeRatioOffset(a, b, c, 'hann'), 4);
    }
  });
});

describe('lineProfile', () => {
  test('samples every pixel, averages across the width, reports direction as shown', () => {
    // A horizontal ramp: value = x. Synthetic truth.
    const w = 40;
    const h = 30;
    const data = new Float32Array(w * h).map((_, i) => i % w);
    const img = makeGreyImage(w, h, data, { calibration: manualCalibration(0.05) });
    const p = lineProfile(img, 5, 20, 25, 10, { widthPx: 5 });
    expect(p.lengthPx).toBeCloseTo(Math.hypot(20, 10), 12);
    expect(p.mean.length).toBe(Math.floor(Math.hypot(20, 10)) + 1);
    // Line goes right and up on screen (row decreases): atan(10/20) = 26.565°.
    expect(p.angleDeg).toBeCloseTo((Math.atan2(10, 20) * 180) / Math.PI, 10);
    // Along the line x = 5 + i·cos θ; across-width offsets are symmetric so the mean is the centre value.
    const c = 20 / p.lengthPx;
    expect(p.mean[7]).toBeCloseTo(5 + 7 * c, 4);
    // Across the width x varies by ±2·sin θ: SD of {−2..2}·s, so SE = s·√(2.5)/√5.
    const s = 10 / p.lengthPx;
    expect(p.standardError[3]).toBeCloseTo((s * Math.sqrt(2.5)) / Math.sqrt(5), 4);
  });
  test('rejects a line that leaves the image and a width below one', () => {
    const img = makeGreyImage(10, 10, new Float32Array(100));
    expect(() => lineProfile(img, 0, 0, 12, 0)).toThrow(/leaves the 10 × 10 image/);
    expect(() => lineProfile(img, 0, 0, 5, 0, { widthPx: 0.5 })).toThrow(/widthPx/);
  });
});

describe('period of a profile', () => {
  // Si(111) d = 0.31356 nm from a = 0.5431021 nm (CODATA 2018, reference-values §3), rendered at
  // 0.0425 nm/px: 7.3779 px per fringe.
  const dSi111 = 0.5431021 / Math.sqrt(3);
  const nmPerPx = 0.0425;
  const truthPx = dSi111 / nmPerPx;

  test('both estimators recover Si(111) across a 5 px wide line', () => {
    const img = fringeImage(400, 200, [{ periodPx: truthPx, angleDeg: 20, amplitude: 10 }], 20, 3, manualCalibration(nmPerPx));
    const a = (20 * Math.PI) / 180;
    const p = lineProfile(img, 10, 180, 10 + 360 * Math.cos(a), 180 - 360 * Math.sin(a), { widthPx: 5 });
    const s = spectralPeriod(p.mean)!;
    const r = realSpacePeriod(p.mean)!;
    for (const e of [s, r]) {
      expect(Math.abs(e.periodPx - truthPx)).toBeLessThan(4 * e.uStatisticalPx);
      expect(Math.abs(e.periodPx * nmPerPx - dSi111) / dSi111).toBeLessThan(0.002);
    }
    expect(r.fringes).toBeGreaterThan(45);
  });

  test('reported uncertainties match the scatter over noise realisations', () => {
    // Synthetic truth: 60 seeds, graphite (002) 0.3354 nm (IUPAC Gold Book) at 0.05 nm/px = 6.708 px.
    const truth = 0.3354 / 0.05;
    for (const est of ['spectral', 'real'] as const) {
      const errs: number[] = [];
      const us: number[] = [];
      for (let seed = 1; seed <= 60; seed++) {
        const g = gaussian(rng(seed));
        const x = Array.from({ length: 300 }, (_, i) => Math.cos((2 * Math.PI * i) / truth + seed) + 0.7 * g());
        const e = est === 'spectral' ? spectralPeriod(x)! : realSpacePeriod(x)!;
        errs.push(e.periodPx - truth);
        us.push(e.uStatisticalPx);
      }
      const rms = Math.sqrt(errs.reduce((a, b) => a + b * b, 0) / errs.length);
      const meanU = us.reduce((a, b) => a + b, 0) / us.length;
      // An honest k = 1 uncertainty: the observed scatter within a factor 1.5 either way.
      expect(rms / meanU).toBeGreaterThan(1 / 1.5);
      expect(rms / meanU).toBeLessThan(1.5);
    }
  });

  test('rejects short or non-finite profiles', () => {
    expect(() => spectralPeriod([1, 2, 3])).toThrow(/at least 8 samples/);
    expect(() => spectralPeriod([1, 2, 3, 4, 5, NaN, 7, 8, 9])).toThrow(/sample 5/);
  });
});
