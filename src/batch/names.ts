/**
 * Output file names for a batch's input files: safe on every file system and unique, so that
 * files whose names differ only in characters that are replaced (`a b.tif`, `a_b.tif`,
 * `a+b.tif`) never share a figure or a record.
 */

/** Characters kept in an output name; every run of others becomes one underscore. */
const UNSAFE = /[^A-Za-z0-9._-]+/g;
/** Longest safe part kept (the end of the name, where the distinguishing part usually is). */
const MAX_SAFE_CHARS = 80;

/**
 * A short hash of a name: 32-bit FNV-1a over its UTF-16 code units, as 8 hex digits.
 * Reference: Fowler–Noll–Vo hash, FNV-1a variant (offset basis 2166136261, prime 16777619).
 * @param text - the name.
 * @returns 8 lower-case hex digits.
 */
export function nameHash(text: string): string {
  let h = 0x811c9dc5;
  for (let i = 0; i < text.length; i++) {
    h ^= text.charCodeAt(i);
    h = Math.imul(h, 0x01000193) >>> 0;
  }
  return h.toString(16).padStart(8, '0');
}

/**
 * The safe stem of an input file's outputs: the name itself when it is already safe and short,
 * else its safe form (last 80 characters) followed by `~` and the hash of the full name.
 * @param file - the input file's name (relative to the batch folder).
 * @returns a name of letters, digits, '.', '_', '-' and '~', unique for each input name (up to the 32-bit hash).
 */
export function outputStem(file: string): string {
  if (typeof file !== 'string' || file === '') throw new RangeError(`file must be a non-empty name, got ${JSON.stringify(file)}`);
  const safe = file.replace(UNSAFE, '_');
  if (safe === file && safe.length <= MAX_SAFE_CHARS && safe !== '.' && safe !== '..') return safe;
  return `${safe.slice(-MAX_SAFE_CHARS)}~${nameHash(file)}`;
}

/**
 * Figure names for every file of a batch, unique within it.
 * @param files - the batch's input file names.
 * @returns a map from input name to figure file name (`<stem>.png`); two stems that collide
 *   (two unsafe names with the same hash) get the input's position appended.
 */
export function figureNames(files: readonly string[]): Map<string, string> {
  const out = new Map<string, string>();
  const taken = new Set<string>();
  files.forEach((f, i) => {
    let name = `${outputStem(f)}.png`;
    if (taken.has(name.toLowerCase())) name = `${outputStem(f)}~${i}.png`;
    taken.add(name.toLowerCase());
    out.set(f, name);
  });
  return out;
}
