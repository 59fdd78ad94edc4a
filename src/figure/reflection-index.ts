/**
 * One way to write a reflection's index in every table, label and listing: its integers separated
 * by spaces, "0 0 1", "2 1 1", "1 0" for a 2D hexagonal (hk) reflection, as `hkl.join(' ')` writes
 * an indexed line. Written closed up ("001"), an index of ten or more or a negative one is
 * ambiguous ("0010"); spaced, it never is.
 */

/**
 * A series member's index as the app and the command line print it: "001" → "0 0 1", "0012" →
 * "0 0 12" (a lamellar series' 00l), "211" → "2 1 1", "10" → "1 0"; an index already spaced, or
 * one of another form, is returned as it is.
 * @param index the index as the series search writes it (digits closed up; a lamellar 00l as "00" + l)
 * @returns the spaced index
 * @throws TypeError naming a value that is not a string
 * Notes: common practice in crystallography texts is to write indices closed up when every one is
 *   a single digit; the app writes them spaced everywhere so that one style serves every index.
 */
export function spacedIndex(index: string): string {
  if (typeof index !== 'string') throw new TypeError(`spacedIndex: the index must be a string, got ${Object.prototype.toString.call(index)}`);
  const lamellar = /^00([1-9][0-9]*)$/.exec(index);
  if (lamellar) return `0 0 ${lamellar[1]}`;
  if (/^[0-9]{2,3}$/.test(index)) return index.split('').join(' ');
  return index;
}
