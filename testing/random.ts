/**
 * Seeded random numbers for synthetic data (demo files, benchmarks, tests): the same seed gives
 * the same numbers on every machine, so generated files and benchmark cases are reproducible.
 */

/**
 * A uniform generator on [0, 1), seeded.
 * Mulberry32 (a public-domain 32-bit generator by T. Ettinger; common practice for reproducible test data).
 * @param seed any integer; only its low 32 bits are used
 * @returns a function giving the next number of the sequence
 */
export function rng(seed: number): () => number {
  if (!Number.isFinite(seed)) throw new RangeError(`seed must be a finite number, got ${seed}`);
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/**
 * Standard normal deviates (mean 0, standard deviation 1) from a uniform generator.
 * Box–Muller transform (Box & Muller, Ann. Math. Stat. 29, 610, 1958), both deviates of a pair used.
 * @param uniform a generator on [0, 1), e.g. from {@link rng}
 * @returns a function giving the next deviate
 */
export function gaussian(uniform: () => number): () => number {
  let spare: number | null = null;
  return () => {
    if (spare !== null) {
      const s = spare;
      spare = null;
      return s;
    }
    const u = 1 - uniform();
    const v = uniform();
    const m = Math.sqrt(-2 * Math.log(u));
    spare = m * Math.sin(2 * Math.PI * v);
    return m * Math.cos(2 * Math.PI * v);
  };
}
