/**
 * What the benchmarks (bench/*.ts) share: one reader of their command-line options, so they all
 * refuse bad values alike, and one printer of their tables.
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

/**
 * Prints a Markdown table: the first column left-aligned, the others right-aligned, a blank line after.
 * @param head the column titles
 * @param rows the cells, one array per row
 */
export function printTable(head: string[], rows: (string | number)[][]): void {
  const cells = rows.map((r) => r.map(String));
  const w = head.map((h, k) => Math.max(h.length, ...cells.map((r) => r[k].length)));
  console.log(`| ${head.map((h, k) => h.padEnd(w[k])).join(' | ')} |`);
  console.log(`|${w.map((x, k) => (k === 0 ? '-'.repeat(x + 2) : `${'-'.repeat(x + 1)}:`)).join('|')}|`);
  for (const r of cells) console.log(`| ${r.map((c, k) => (k === 0 ? c.padEnd(w[k]) : c.padStart(w[k]))).join(' | ')} |`);
  console.log('');
}
