import { describe, expect, it } from 'vitest';
import { fitSinusoidTrend } from '../../src/sheets/signal';

describe('fitSinusoidTrend', () => {
  it('recovers a constant, a trend and a sinusoid of the given period on the samples asked for (linear least squares, common practice)', () => {
    // 2 + 0.5·x + 0.3·cos(2πi/7) − 0.2·sin(2πi/7), x = (i − from)/n − 0.5, on samples 10–69 of 80
    const from = 10;
    const to = 70;
    const n = to - from;
    const v = Array.from({ length: 80 }, (_, i) => 2 + 0.5 * ((i - from) / n - 0.5) + 0.3 * Math.cos((2 * Math.PI * i) / 7) - 0.2 * Math.sin((2 * Math.PI * i) / 7));
    // samples outside the range are ignored
    v[0] = 1e6;
    v[79] = -1e6;
    const fit = fitSinusoidTrend(v, 7, from, to)!;
    const want = [2, 0.5, 0.3, -0.2];
    fit.coef.forEach((c, k) => expect(Math.abs(c - want[k])).toBeLessThan(1e-9));
    expect(fit.rss).toBeLessThan(1e-18);
  });
  it('rejects bad arguments by name', () => {
    const v = [1, 2, 3, 4, 5, 6];
    expect(() => fitSinusoidTrend(v, 0)).toThrow(/periodSamples/);
    expect(() => fitSinusoidTrend(v, 3, 4, 6)).toThrow(/at least 4/);
    expect(() => fitSinusoidTrend(v, 3, 0, 7)).toThrow(/at least 4/);
  });
});
