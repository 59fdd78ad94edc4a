import { expect, test } from 'vitest';
import { gaussian, rng } from '../../testing/random';

test('rng is reproducible, uniform on [0, 1) and differs between seeds', () => {
  const a = rng(42);
  const b = rng(42);
  const first = Array.from({ length: 5 }, () => a());
  expect(Array.from({ length: 5 }, () => b())).toEqual(first);
  expect(rng(43)()).not.toBe(first[0]);
  const r = rng(7);
  let sum = 0;
  const n = 100_000;
  for (let i = 0; i < n; i++) {
    const x = r();
    expect(x >= 0 && x < 1).toBe(true);
    sum += x;
  }
  // mean of U(0, 1) is 1/2 with standard error 1/√(12 n) ≈ 0.0009 (common practice: 5 standard errors)
  expect(Math.abs(sum / n - 0.5)).toBeLessThan(5 / Math.sqrt(12 * n));
});

test('gaussian gives mean 0 and variance 1', () => {
  const g = gaussian(rng(11));
  const n = 100_000;
  let s = 0;
  let s2 = 0;
  for (let i = 0; i < n; i++) {
    const x = g();
    s += x;
    s2 += x * x;
  }
  const mean = s / n;
  const variance = s2 / n - mean * mean;
  // standard errors: 1/√n for the mean, √(2/n) for the variance of a normal sample (common practice)
  expect(Math.abs(mean)).toBeLessThan(5 / Math.sqrt(n));
  expect(Math.abs(variance - 1)).toBeLessThan(5 * Math.sqrt(2 / n));
});

test('a non-finite seed is refused', () => {
  expect(() => rng(Number.NaN)).toThrow(/seed must be a finite number, got NaN/);
});
