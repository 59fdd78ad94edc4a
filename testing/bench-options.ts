/**
 * Command-line options of the benchmarks (bench/*.ts): one reader, so they all refuse bad values alike.
 */

/**
 * A positive integer option `--NAME N` of this process.
 * @param name the option's name without the dashes
 * @param fallback its value when absent
 * @param least the smallest value accepted (default 1)
 * @returns the value
 * @throws Error naming the option and the value given
 */
export function integerOption(name: string, fallback: number, least = 1): number {
  const i = process.argv.indexOf(`--${name}`);
  if (i < 0) return fallback;
  const v = Number(process.argv[i + 1]);
  if (!(Number.isInteger(v) && v >= least)) throw new Error(`--${name} needs an integer ≥ ${least}, got ${process.argv[i + 1]}`);
  return v;
}
