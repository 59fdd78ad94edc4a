/**
 * Reading a diffraction pattern file: `parsePattern` with every error put as "FILE: reason", so
 * the user learns which file (and which line) is wrong.
 */
import { CifError } from './cif';
import { parsePattern, type ParsePatternOptions, type Pattern } from './pattern';
import { isCifText, parsePowderCif } from './powder-cif';

/** A pattern file that cannot be read; the message is `"<fileName>: <reason>"`. */
export class PatternReadError extends Error {
  override name = 'PatternReadError';
  /** The file name as given. */
  readonly fileName: string;
  /** The reason alone (it starts with "line N:" when the fault is on a line). */
  readonly reason: string;
  constructor(fileName: string, reason: string) {
    super(`${fileName}: ${reason}`);
    this.fileName = fileName;
    this.reason = reason;
  }
}

/**
 * Reads a pattern file's text: columns of numbers (parsePattern), or a CIF with a measured powder
 * profile (parsePowderCif) when the file starts with a data block.
 * @param text - the file's contents.
 * @param fileName - its name, put at the start of every error message.
 * @param options - axis and wavelength, as for parsePattern.
 * @returns the pattern.
 * @throws PatternReadError for a file the reading rules of parsePattern or parsePowderCif refuse
 *   (their SyntaxError, RangeError or CifError, which names the line), or a wavelength option
 *   that cannot be read.
 */
export function readPatternFile(text: string, fileName: string, options: ParsePatternOptions = {}): Pattern {
  if (typeof fileName !== 'string') throw new TypeError(`fileName must be a string, got ${typeof fileName}`);
  try {
    return isCifText(text) ? parsePowderCif(text, fileName, options) : parsePattern(text, options);
  } catch (e) {
    if (e instanceof CifError) throw new PatternReadError(fileName, `${e.line !== null ? `line ${e.line}: ` : ''}${e.reason}`);
    if (e instanceof SyntaxError || e instanceof RangeError) throw new PatternReadError(fileName, e.message);
    throw e;
  }
}
