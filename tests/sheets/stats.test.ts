import { describe, expect, it } from 'vitest';
import {
  histogram,
  incompleteBeta,
  pooledSummary,
  quantile,
  studentTCdf,
  studentTQuantile,
  summarize,
  normalUpperQuantile,
  chiSquareUpperQuantile,
} from '../../src/measure/stats';

describe('normal and chi-square upper quantiles', () => {
  // Standard normal table (NIST/SEMATECH e-Handbook §1.3.6.7.1; from memory): upper tails.
  for (const [p, z] of [[0.025, 1.959964], [0.05, 1.644854], [0.01, 2.326348], [0.001, 3.090232], [0.5, 0]] as const) {
    it(`z with P(Z > z) = ${p} is ${z}`, () => expect(normalUpperQuantile(p)).toBeCloseTo(z, 5));
  }
  // Critical values of the chi-square distribution, upper tail, NIST/SEMATECH e-Handbook
  // §1.3.6.7.4 and every textbook table (3 decimals; from memory). Wilson–Hilferty is within 2.5 %.
  const table: [number, number, number][] = [
    [0.05, 1, 3.841],
    [0.05, 2, 5.991],
    [0.05, 4, 9.488],
    [0.05, 10, 18.307],
    [0.01, 2, 9.21],
    [0.01, 7, 18.475],
    [0.01, 10, 23.209],
    [0.01, 20, 37.566],
    [0.001, 10, 29.588],
  ];
  for (const [p, dof, x] of table) {
    it(`chi-square(${dof}) upper ${p} quantile ${x}, within 2.5 %`, () => {
      expect(Math.abs(chiSquareUpperQuantile(p, dof) / x - 1)).toBeLessThan(0.025);
    });
  }
  it('the tail probability at the quantile is within 3 % of p for p = 0.05 and 0.01 (even ν, closed form)', () => {
    // P(χ²_2m > x) = e^(−x/2) Σ_{k<m} (x/2)^k / k! (Poisson sum, closed form for even degrees of freedom)
    const survival = (x: number, m: number) => {
      let term = 1;
      let sum = 1;
      for (let k = 1; k < m; k++) sum += (term *= x / 2 / k);
      return Math.exp(-x / 2) * sum;
    };
    for (const p of [0.05, 0.01]) {
      for (const dof of [2, 4, 8, 16, 40]) expect(Math.abs(survival(chiSquareUpperQuantile(p, dof), dof / 2) / p - 1)).toBeLessThan(0.03);
    }
  });
  it('rejects bad arguments by name', () => {
    expect(() => chiSquareUpperQuantile(0, 3)).toThrow(/p must be in \(0, 1\), got 0/);
    expect(() => chiSquareUpperQuantile(0.1, -1)).toThrow(/dof must be a positive number, got -1/);
  });
});

describe('Student t quantile', () => {
  // Critical values of Student's t, as printed in the NIST/SEMATECH e-Handbook of Statistical
  // Methods §1.3.6.7.2 and every textbook t table (3 decimals; from memory).
  const table: [number, number, number][] = [
    [0.975, 1, 12.706],
    [0.95, 1, 6.314],
    [0.995, 1, 63.657],
    [0.975, 5, 2.571],
    [0.95, 5, 2.015],
    [0.975, 9, 2.262],
    [0.975, 10, 2.228],
    [0.995, 10, 3.169],
    [0.975, 20, 2.086],
    [0.975, 30, 2.042],
    [0.975, 100, 1.984],
  ];
  for (const [p, df, t] of table) {
    it(`t(${p}, ${df}) = ${t}`, () => {
      expect(studentTQuantile(p, df)).toBeCloseTo(t, 3);
    });
  }
  it('tends to the normal quantile 1.960 for large df', () => {
    // z(0.975) = 1.959964 (standard normal table, NIST/SEMATECH §1.3.6.7.1; from memory)
    expect(studentTQuantile(0.975, 1e7)).toBeCloseTo(1.959964, 4);
  });
  it('is antisymmetric and inverts the CDF', () => {
    expect(studentTQuantile(0.025, 9)).toBeCloseTo(-2.262, 3);
    expect(studentTCdf(studentTQuantile(0.9, 3.5), 3.5)).toBeCloseTo(0.9, 10);
  });
  it('t with 1 degree of freedom is the Cauchy distribution: F(1) = 3/4', () => {
    // Cauchy CDF 1/2 + atan(t)/π (closed form)
    expect(studentTCdf(1, 1)).toBeCloseTo(0.75, 12);
    expect(studentTCdf(-3, 1)).toBeCloseTo(0.5 + Math.atan(-3) / Math.PI, 12);
  });
  it('incomplete beta: I_x(1, 1) = x and I_x(a, 1) = x^a', () => {
    // closed forms of the regularized incomplete beta function
    expect(incompleteBeta(0.3, 1, 1)).toBeCloseTo(0.3, 12);
    expect(incompleteBeta(0.3, 2.5, 1)).toBeCloseTo(0.3 ** 2.5, 12);
  });
  it('rejects bad arguments by name', () => {
    expect(() => studentTQuantile(1, 3)).toThrow(/p must be/);
    expect(() => studentTQuantile(0.9, 0)).toThrow(/df must be/);
  });
});

describe('summary statistics', () => {
  // Student (1908) / Cushny & Peebles (1905) sleep data: extra hours of sleep, drug 2 minus
  // drug 1, ten patients. Paired t-test worked example: mean 1.58, t = 4.0621 on 9 df,
  // 95 % CI of the mean 0.7001142 to 2.4598858 (the classic example in R's t.test help; from memory).
  const diff = [1.2, 2.4, 1.3, 1.3, 0.0, 1.0, 1.8, 0.8, 4.6, 1.4];
  it('mean, sd, CI of the sleep-data worked example', () => {
    const s = summarize(diff)!;
    expect(s.n).toBe(10);
    expect(s.mean).toBeCloseTo(1.58, 12);
    expect(s.mean / (s.sd / Math.sqrt(s.n))).toBeCloseTo(4.0621, 4);
    expect(s.ci95![0]).toBeCloseTo(0.7001142, 6);
    expect(s.ci95![1]).toBeCloseTo(2.4598858, 6);
    expect(s.min).toBe(0);
    expect(s.max).toBe(4.6);
  });
  it('type 7 quartiles', () => {
    // Hyndman & Fan (1996) definition 7 by hand: sorted 0,0.8,1,1.2,1.3,1.3,1.4,1.8,2.4,4.6;
    // h = 9p: q1 = x[2] + 0.25(x[3] − x[2]) = 1.05; median 1.3; q3 = x[6] + 0.75(x[7] − x[6]) = 1.7
    const s = summarize(diff)!;
    expect(s.q1).toBeCloseTo(1.05, 12);
    expect(s.median).toBeCloseTo(1.3, 12);
    expect(s.q3).toBeCloseTo(1.7, 12);
    // quantile(1:10) in type 7 = 1, 3.25, 5.5, 7.75, 10 (definition 7, computed by hand)
    const x = [10, 9, 8, 7, 6, 5, 4, 3, 2, 1];
    expect([0, 0.25, 0.5, 0.75, 1].map((p) => quantile(x, p))).toEqual([1, 3.25, 5.5, 7.75, 10]);
  });
  it('pools groups and handles edge cases', () => {
    const a = pooledSummary([diff.slice(0, 4), diff.slice(4)])!;
    expect(a.mean).toBeCloseTo(1.58, 12);
    expect(summarize([])).toBeNull();
    const one = summarize([3])!;
    expect(one.sd).toBe(0);
    expect(one.ci95).toBeNull();
    expect(() => summarize([1, NaN])).toThrow(/values\[1\]/);
  });
});

describe('histogram', () => {
  it('Freedman–Diaconis bin width 2·IQR·n^(-1/3)', () => {
    // Freedman & Diaconis (1981): IQR of the sleep differences is 1.7 − 1.05 = 0.65, n = 10
    const diff = [1.2, 2.4, 1.3, 1.3, 0.0, 1.0, 1.8, 0.8, 4.6, 1.4];
    const h = histogram(diff);
    expect(h.rule).toBe('freedman-diaconis');
    expect(h.binWidth).toBeCloseTo(2 * 0.65 * 10 ** (-1 / 3), 12);
    expect(h.counts.reduce((a, b) => a + b, 0)).toBe(10);
    expect(h.edges[0]).toBe(0);
    expect(h.edges[h.edges.length - 1]).toBeGreaterThanOrEqual(4.6);
  });
  it('integer data get bins centred on integers', () => {
    const layers = [3, 3, 4, 4, 4, 5, 7];
    const h = histogram(layers, { integer: true, binWidth: 1 });
    expect(Array.from(h.edges)).toEqual([2.5, 3.5, 4.5, 5.5, 6.5, 7.5]);
    expect(Array.from(h.counts)).toEqual([2, 3, 1, 0, 1]);
  });
  it('rejects bad bin widths', () => {
    expect(() => histogram([1, 2], { binWidth: -1 })).toThrow(/binWidth/);
    expect(() => histogram([])).toThrow(/at least one/);
  });
});
