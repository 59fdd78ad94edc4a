/**
 * One way to write a reflection's index in every table, label and listing: its integers separated
 * by spaces, "0 0 1", "2 1 1", "1 0" for a 2D hexagonal (hk) reflection, as `hkl.join(' ')` writes
 * an indexed line. Written closed up ("001"), an index of ten or more or a negative one is
 * ambiguous ("0010"); spaced, it never is.
 */
import type { SeriesKind } from '../diffraction/series';

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

/**
 * An indexed reflection's Miller indices as shown: "1 1 1", "2 2 0", "1 0 10", "-1 1 0" (the same
 * form as {@link spacedIndex} gives a series member, and as the tables' hkl columns have).
 * @param hkl the indices (h k l, or h k for a 2D lattice, or h k i l)
 * @returns the indices separated by single spaces
 * @throws TypeError naming a value that is not a list of two to four integers
 */
export function spacedHkl(hkl: readonly number[]): string {
  if (!Array.isArray(hkl) || hkl.length < 2 || hkl.length > 4 || !hkl.every((v) => Number.isInteger(v))) {
    throw new TypeError(`spacedHkl: hkl must be a list of two to four integers, got ${JSON.stringify(hkl) ?? String(hkl)}`);
  }
  return hkl.join(' ');
}

/** The series kinds whose members a line's label may name ("hexagonal 10"); a lamellar member is named by its index alone. */
const SERIES_KINDS: Record<SeriesKind, true> = { lamellar: true, hexagonal: true, Ia3d: true, Pn3m: true, Im3m: true, Fm3m: true };

/**
 * A diffraction line's label as shown: a series member's index spaced ("001" → "0 0 1",
 * "hexagonal 10" → "hexagonal 1 0"); any other label (an indexed line's "1 1 0", "2: 0 0 1", a
 * typed line's "typed 12", "peak 7.07°") as it is. The lines handed to the cross-check keep the
 * series' own form, which it reads (a lamellar 00l line is a basal line).
 * @param label the line's label
 * @returns the label to show
 * @throws TypeError naming a value that is not a string
 */
export function spacedLineLabel(label: string): string {
  if (typeof label !== 'string') throw new TypeError(`spacedLineLabel: the label must be a string, got ${Object.prototype.toString.call(label)}`);
  const m = /^(?:([A-Za-z0-9]+) )?([0-9]{2,4})$/.exec(label);
  if (!m || (m[1] !== undefined && !(m[1] in SERIES_KINDS))) return label;
  return `${m[1] ? `${m[1]} ` : ''}${spacedIndex(m[2])}`;
}
