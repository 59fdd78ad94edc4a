/**
 * Reading a measured diffraction pattern (powder XRD in 2θ, or small-angle data in q) from text,
 * and typed peak lists.
 */
import { dToQ, qToD, twoThetaToD } from './bragg';
import { bareWavelengthStatement, RadiationError, radiationStatements, resolveRadiation, type Radiation, type RadiationStatement } from './radiation';

/** Axis of the first column as the user or the header declares it. */
export type AxisUnit = 'twoThetaDeg' | 'qInvNm' | 'qInvA';

/** A pattern on one axis: 2θ in degrees, or q in nm⁻¹ (Å⁻¹ input is converted on reading). */
export interface Pattern {
  /** 'twoTheta': x is 2θ in degrees; 'q': x is q = 4π sin θ / λ in nm⁻¹. */
  axis: 'twoTheta' | 'q';
  /** Abscissae, strictly increasing. */
  x: Float64Array;
  /** Intensities (counts or arbitrary units). */
  y: Float64Array;
  /** Standard uncertainties of y from a third column, or null. */
  sigma: Float64Array | null;
  /** Wavelength in nm (Kα1 when a doublet), or null when neither header nor user gave one. */
  wavelengthNm: number | null;
  /** Kα2 wavelength in nm when the radiation is a Kα doublet, else null. */
  ka2Nm: number | null;
  /** Where the wavelength came from: 'header', 'option' or 'none'. */
  wavelengthFrom: 'header' | 'option' | 'none';
  /** The radiation in full (doublet, ratio, uncertainty, label and the line it was read from), or null without a wavelength. */
  radiation?: Radiation | null;
  /** Every rule applied while reading (skipped headers, reversed order...), for the user. */
  notes: string[];
}

export interface ParsePatternOptions {
  /** Unit of the first column; overrides the header. Default: from the header, else 2θ in degrees. */
  axis?: AxisUnit;
  /** Wavelength as typed (preset key or number with unit, see parseWavelength); overrides the header. */
  wavelength?: string;
  /** Kα2 wavelength in nm to use with `wavelength` (a preset Kα1 brings its own). */
  ka2Nm?: number;
  /** 'none': the beam was Kα1 only; 'doublet': model Kα2 (default: from the header, else a tube's Kα1 implies the doublet). */
  ka2?: 'doublet' | 'none';
  /** Relative standard uncertainty of the wavelength (default: the table's, a stated su, or the rounding of the digits). */
  wavelengthRelU?: number;
  /** The columns to read, 1-based, as typed: 'X,Y' or 'X,Y,S' (position, intensity, its uncertainty). Default: from the column names, else 1, 2 (and 3). */
  columns?: string;
}

/**
 * Largest intensity (or its uncertainty) accepted, in magnitude: 10¹² counts is beyond any
 * detector's count in one step, so a larger value is a damaged number, not data (common practice).
 */
export const MAX_ABS_INTENSITY = 1e12;
/** Largest position accepted, in magnitude: no 2θ exceeds 180° and no measured q reaches 10⁵ nm⁻¹ (d = 0.06 pm) (common practice). */
export const MAX_ABS_POSITION = 1e5;

const COMMENT = /^\s*(#|;|!|\/\/)/;
const NUMBER = /^[-+]?(\d+([.,]\d*)?|[.,]\d+)([eE][-+]?\d+)?$/;

/** Splits a data line into number tokens by the separator rules documented on parsePattern. */
function splitLine(line: string): string[] {
  const s = line.trim();
  if (s.includes(';')) return s.split(/\s*;\s*/).filter((t) => t !== '').map((t) => t.replace(',', '.'));
  if (s.includes('\t')) return s.split(/\s*\t\s*/).filter((t) => t !== '').map((t) => t.replace(',', '.'));
  const ws = s.split(/\s+/);
  if (ws.length >= 2) {
    return ws.map((t) => t.replace(/,$/, '')).filter((t) => t !== '').map((t) => t.replace(',', '.'));
  }
  return s.split(',');
}

function headerAxis(lines: string[]): AxisUnit | null {
  const text = lines.join('\n');
  if (/\bq\b[^\n]*?(å|a)\s*(\^?-1|⁻¹)|\bq\b[^\n]*?1\s*\/\s*(å|a)\b|inverse\s+(å|angstrom)/i.test(text)) return 'qInvA';
  if (/\bq\b[^\n]*?nm\s*(\^?-1|⁻¹)|\bq\b[^\n]*?1\s*\/\s*nm\b|inverse\s+nm/i.test(text)) return 'qInvNm';
  if (/2\s*-?\s*theta|2θ|two[-\s]?theta/i.test(text)) return 'twoThetaDeg';
  return null;
}

/** A scan of equal steps read from its start, step and end (or count) and a run of intensities. */
interface EqualStepScan {
  x: number[];
  y: number[];
  lineNo: number[];
  note: string;
}

/**
 * Reads a scan written as three numbers on one line (start, step and end; start, end and step; or
 * start, step and the number of points) followed by the intensities, one or several to a line.
 * The reading must give exactly as many points as there are intensities; when no order does, or
 * two orders give different scans, the file is refused naming the line rather than guessed.
 *
 * @param lines the file's lines
 * @param at index of the line with the three numbers
 * @returns the scan, or null when the lines after it are not a run of intensities
 * @throws SyntaxError naming the line when the three numbers cannot describe the intensities
 * Reference: an equal-step scan stored as its range and the counts is common practice of
 * diffractometer exports.
 */
function equalStepScan(lines: string[], at: number): EqualStepScan | null {
  const head = splitLine(lines[at]).map((t) => Number(t.trim().replace(',', '.')));
  const y: number[] = [];
  const lineNo: number[] = [];
  let footer = -1;
  for (let i = at + 1; i < lines.length; i++) {
    const raw = lines[i];
    if (raw.trim() === '' || COMMENT.test(raw)) continue;
    const tokens = splitLine(raw);
    if (!tokens.every((t) => NUMBER.test(t.trim()))) {
      footer = i;
      break;
    }
    for (const t of tokens) {
      y.push(Number(t.trim().replace(',', '.')));
      lineNo.push(i + 1);
    }
  }
  if (footer >= 0 && lines.slice(footer + 1).some((l) => l.trim() !== '' && !COMMENT.test(l) && NUMBER.test((splitLine(l)[0] ?? '').trim()))) return null;
  const n = y.length;
  if (n < 3) return null;
  const [a, b, c] = head;
  const fits = (start: number, step: number, count: number) => step > 0 && Number.isFinite(start) && Math.abs(count - n) < 1e-6;
  const readings: Array<{ start: number; step: number; words: string }> = [];
  if (c > a && fits(a, b, Math.round((c - a) / b) + 1) && Math.abs((c - a) / b - Math.round((c - a) / b)) < 0.01) readings.push({ start: a, step: b, words: `start ${a}, step ${b}, end ${c}` });
  if (b > a && fits(a, c, Math.round((b - a) / c) + 1) && Math.abs((b - a) / c - Math.round((b - a) / c)) < 0.01) readings.push({ start: a, step: c, words: `start ${a}, end ${b}, step ${c}` });
  if (Number.isInteger(c) && fits(a, b, c)) readings.push({ start: a, step: b, words: `start ${a}, step ${b}, ${c} points` });
  const distinct = readings.filter((r, k) => readings.findIndex((q) => Math.abs(q.start - r.start) < 1e-9 && Math.abs(q.step - r.step) < 1e-9 * Math.max(1, r.step)) === k);
  const shown = `'${lines[at].trim().slice(0, 60)}'`;
  if (distinct.length === 0) {
    throw new SyntaxError(`line ${at + 1}: three numbers ${shown} followed by ${n} intensities: no reading as start, step and end (or end and step, or step and count) gives ${n} points`);
  }
  if (distinct.length > 1) {
    throw new SyntaxError(`line ${at + 1}: three numbers ${shown} followed by ${n} intensities can be read as ${distinct.map((r) => r.words).join(' or as ')}; write the file as two columns (2θ, intensity)`);
  }
  const { start, step, words } = distinct[0];
  const x = y.map((_, i) => start + i * step);
  let note = `an equal-step scan: line ${at + 1} read as ${words} (${n} intensities on lines ${lineNo[0]}–${lineNo[n - 1]})`;
  if (footer >= 0) note += `; text from line ${footer + 1} on left out: '${lines[footer].trim().slice(0, 60)}'`;
  return { x, y, lineNo, note };
}

/** Which columns of a row hold the position, the intensity and its uncertainty (0-based). */
interface ColumnChoice {
  x: number;
  y: number;
  sigma: number | null;
}

/** What a refusal of the columns asks for. */
const ASK_COLUMNS = 'give the columns to read (position, intensity and optionally its uncertainty, counted from 1, e.g. 1,2 or 1,2,3)';

/** Names of a measured intensity column (common practice of pattern exports). */
const MEASURED_NAME = /obs|meas|count|intens|cps|signal|^i$|^y$|^int$/i;
/** Names of columns that are not the measurement: a model, a background, a difference. */
const DERIVED_NAME = /calc|bkg|back|bgr|diff|fit|model|sim|delta|resid|peak/i;
/** Names of an uncertainty column. */
const SIGMA_NAME = /sigma|esd|err|σ|uncert|^s$|^e$|^su$|^dy$|^di$|^u$/i;

/**
 * Reads the user's column choice ('X,Y' or 'X,Y,S', 1-based).
 * @param text as typed
 * @returns the 0-based choice
 * @throws RangeError naming the text when it is not two or three distinct column numbers
 */
export function parseColumnChoice(text: string): ColumnChoice {
  if (typeof text !== 'string') throw new RangeError(`columns must be text such as '1,2' or '1,2,3', got ${typeof text}`);
  const parts = text.split(/[\s,;]+/).filter((t) => t !== '');
  const n = parts.map((t) => (/^\d{1,3}$/.test(t) ? Number(t) : NaN));
  if ((n.length !== 2 && n.length !== 3) || !n.every((v) => v >= 1) || new Set(n).size !== n.length) {
    throw new RangeError(`columns '${text}': give two or three distinct column numbers counted from 1 (position, intensity and optionally its uncertainty), e.g. '1,2' or '1,2,3'`);
  }
  return { x: n[0] - 1, y: n[1] - 1, sigma: n.length === 3 ? n[2] - 1 : null };
}

/**
 * Decides which columns a row of `count` values holds, from the user's choice or from the names
 * on the last header line.
 *
 * @param count the number of values on the first data row
 * @param names the last header line's names, when their number is `count`, else null
 * @param given the user's choice, or undefined
 * @param line the first data row's line, for messages
 * @returns the choice and a note when it is not the plain two or three columns
 * @throws SyntaxError naming the line when more than three columns have no readable names
 */
function chooseColumns(count: number, names: string[] | null, given: ColumnChoice | undefined, line: number): { choice: ColumnChoice; note: string | null } {
  const named = (k: number) => (names ? `${k + 1} ('${names[k]}')` : `${k + 1}`);
  if (given) {
    const top = Math.max(given.x, given.y, given.sigma ?? 0);
    if (top >= count) throw new SyntaxError(`line ${line}: column ${top + 1} was asked for, but the rows have ${count} columns`);
    return { choice: given, note: `columns read as given: position ${named(given.x)}, intensity ${named(given.y)}${given.sigma !== null ? `, uncertainty ${named(given.sigma)}` : ''}` };
  }
  if (names === null || count < 3) {
    if (count > 3) {
      throw new SyntaxError(`line ${line}: ${count} columns and no names for them; ${ASK_COLUMNS}`);
    }
    return { choice: { x: 0, y: 1, sigma: count === 3 ? 2 : null }, note: null };
  }
  const others = names.map((_, k) => k).filter((k) => k !== 0);
  const measured = others.filter((k) => MEASURED_NAME.test(names[k]) && !DERIVED_NAME.test(names[k]) && !SIGMA_NAME.test(names[k]));
  const sigmas = others.filter((k) => SIGMA_NAME.test(names[k]) && !DERIVED_NAME.test(names[k]));
  if (count === 3 && measured.length <= 1 && (measured.length === 0 || measured[0] === 1)) {
    // the plain layout unless the third column is named as something other than an uncertainty
    if (sigmas.length === 1 && sigmas[0] === 2) return { choice: { x: 0, y: 1, sigma: 2 }, note: null };
    if (DERIVED_NAME.test(names[2])) return { choice: { x: 0, y: 1, sigma: null }, note: `column ${named(2)} is not an uncertainty by its name: not read` };
    return { choice: { x: 0, y: 1, sigma: 2 }, note: null };
  }
  if (measured.length !== 1 || sigmas.length > 1) {
    throw new SyntaxError(`line ${line}: ${count} columns named ${names.map((n) => `'${n}'`).join(', ')}: ${measured.length === 0 ? 'none is' : 'more than one is'} named as the measured intensity; ${ASK_COLUMNS}`);
  }
  const choice = { x: 0, y: measured[0], sigma: sigmas.length === 1 ? sigmas[0] : null };
  const unread = names.map((_, k) => k).filter((k) => k !== choice.x && k !== choice.y && k !== choice.sigma);
  return {
    choice,
    note: `columns read by their names: position ${named(0)}, intensity ${named(choice.y)}${choice.sigma !== null ? `, uncertainty ${named(choice.sigma)}` : ''}${unread.length ? `; not read: ${unread.map(named).join(', ')}` : ''}`,
  };
}

/** The names on a header line when there are `count` of them (comment markers removed), else null. */
function columnNames(line: string | undefined, count: number): string[] | null {
  if (line === undefined) return null;
  const text = line.replace(/^\s*(#|;|!|\/\/)+\s*/, '').trim();
  if (text === '') return null;
  const split = text.includes('\t') ? text.split(/\t+/) : text.includes(';') ? text.split(/\s*;\s*/) : text.includes(',') ? text.split(/\s*,\s*/) : text.split(/\s+/);
  const names = split.map((t) => t.trim()).filter((t) => t !== '');
  if (names.length !== count || names.some((n) => NUMBER.test(n))) return null;
  return names;
}

/**
 * Reads a diffraction pattern from text: two columns (position, intensity) and an optional third
 * (standard uncertainty of the intensity).
 *
 * @param text the file's contents
 * @param options axis unit and wavelength overriding the header
 * @returns the pattern, with every reading rule that was applied listed in `notes`
 *
 * Notes — the reading rules, all explicit:
 * - lines starting with #, ;, !, // are comments; blank lines are skipped;
 * - non-numeric lines before the first data line are header lines; a non-numeric line after it
 *   is an error naming the line;
 * - separators: `;` or tab when present (a comma is then a decimal comma), else whitespace
 *   (a comma inside a number is a decimal comma, a trailing comma is a separator), else comma;
 * - a data row with one column, a non-finite value, σ ≤ 0, an intensity or σ beyond 10¹² in
 *   magnitude or a position beyond 10⁵ is an error;
 * - columns: the option `columns` ('1,2' or '1,2,4', counted from 1), else the names on the last
 *   header line: with more than three columns exactly one must be named as the measured
 *   intensity (obs, meas, counts, intensity; never calc, background, difference) and at most one
 *   as its uncertainty (sigma, esd, error), the first column being the position; a third column
 *   named as a model or background is not read as σ; more than three unnamed columns are refused;
 * - x must be strictly monotonic; a file in decreasing order is reversed (noted), repeated or
 *   unsorted x is an error with the line number;
 * - the wavelength comes from the option, else from the header lines by the rules of
 *   `radiationStatements` and `resolveRadiation` (units Å, nm, pm, energies in keV, anode names,
 *   synchrotrons; contradicting statements are refused, quoting them); a single number alone on
 *   the first line before two- or three-column data is read as the wavelength;
 * - three numbers on the first data line followed by intensities one or several to a line are an
 *   equal-step scan (start, step, end; start, end, step; or start, step, count), read only when
 *   exactly one of these orders gives as many points as there are intensities (else refused);
 * - q in Å⁻¹ is converted to nm⁻¹ (× 10).
 * Reference: file layout is common practice for two-column powder data.
 */
export function parsePattern(text: string, options: ParsePatternOptions = {}): Pattern {
  if (typeof text !== 'string') throw new TypeError('parsePattern: text must be a string');
  const lines = text.split(/\r\n|\r|\n/);
  const header: string[] = [];
  const headerAt: number[] = [];
  let bare: RadiationStatement | null = null;
  const xs: number[] = [];
  const ys: number[] = [];
  const ss: number[] = [];
  const lineNo: number[] = [];
  const notes: string[] = [];
  let columns = 0;
  let choice: ColumnChoice | null = null;
  const given = options.columns !== undefined ? parseColumnChoice(options.columns) : undefined;
  let headerCount = 0;
  for (let i = 0; i < lines.length; i++) {
    const raw = lines[i];
    if (raw.trim() === '') continue;
    if (COMMENT.test(raw)) {
      header.push(raw);
      headerAt.push(i + 1);
      continue;
    }
    const tokens = splitLine(raw);
    const numeric = tokens.every((t) => NUMBER.test(t.trim()));
    if (!numeric) {
      if (xs.length === 0) {
        header.push(raw);
        headerAt.push(i + 1);
        headerCount++;
        continue;
      }
      // text after the last data row ('End of data', a checksum line) is a footer, said in a note;
      // a damaged row (it starts with a number), or text with rows after it, is an error: a row in
      // the middle of the data would otherwise be lost
      const after = lines.slice(i + 1).filter((l) => l.trim() !== '' && !COMMENT.test(l));
      const looksLikeRow = (l: string) => NUMBER.test((splitLine(l)[0] ?? '').trim());
      if (looksLikeRow(raw) || after.some(looksLikeRow)) {
        throw new SyntaxError(`line ${i + 1}: not a data row: '${raw.trim().slice(0, 60)}'`);
      }
      notes.push(`${after.length + 1} line(s) of text after the data left out, from line ${i + 1}: '${raw.trim().slice(0, 60)}'`);
      break;
    }
    if (tokens.length < 2 && xs.length === 0 && bare === null && tokens.length === 1) {
      // a common three-column export starts with the wavelength alone on its first line
      const next = lines.slice(i + 1).find((l) => l.trim() !== '' && !COMMENT.test(l));
      const nextCols = next ? splitLine(next).filter((t) => NUMBER.test(t.trim())).length : 0;
      if (nextCols >= 2 && nextCols <= 3) {
        try {
          bare = bareWavelengthStatement(tokens[0].trim(), `line ${i + 1}`);
        } catch (e) {
          if (e instanceof RadiationError && options.wavelength === undefined) throw e;
        }
        if (bare) continue;
      }
    }
    if (xs.length === 0 && tokens.length === 3) {
      // three numbers, then a run of intensities one or several to a line: an equal-step scan
      const next = lines.slice(i + 1).find((l) => l.trim() !== '' && !COMMENT.test(l));
      const nextCount = next ? splitLine(next).length : 0;
      if (nextCount === 1 || nextCount > 3) {
        const scan = equalStepScan(lines, i);
        if (scan) {
          for (let k = 0; k < scan.y.length; k++) {
            if (!Number.isFinite(scan.y[k])) throw new SyntaxError(`line ${scan.lineNo[k]}: non-finite value`);
            if (Math.abs(scan.y[k]) > MAX_ABS_INTENSITY) throw new SyntaxError(`line ${scan.lineNo[k]}: intensity ${scan.y[k]} is not a plausible count (at most ${MAX_ABS_INTENSITY} in magnitude)`);
          }
          xs.push(...scan.x);
          ys.push(...scan.y);
          lineNo.push(...scan.lineNo);
          notes.push(scan.note);
          break;
        }
      }
    }
    if (tokens.length < 2) throw new SyntaxError(`line ${i + 1}: only one column ('${raw.trim()}'); expected position and intensity`);
    if (columns === 0) {
      columns = tokens.length;
      const chosen = chooseColumns(columns, columnNames(header[header.length - 1], columns), given, i + 1);
      choice = chosen.choice;
      if (chosen.note) notes.push(chosen.note);
    } else if (tokens.length !== columns) throw new SyntaxError(`line ${i + 1}: ${tokens.length} columns where earlier rows have ${columns}`);
    const all = tokens.map((t) => Number(t.trim().replace(',', '.')));
    if (!all.every(Number.isFinite)) throw new SyntaxError(`line ${i + 1}: non-finite value in '${raw.trim().slice(0, 60)}'`);
    const { x: cx, y: cy, sigma: cs } = choice!;
    if (Math.abs(all[cx]) > MAX_ABS_POSITION) throw new SyntaxError(`line ${i + 1}: position ${tokens[cx].trim()} is not a plausible 2θ or q (at most ${MAX_ABS_POSITION} in magnitude)`);
    if (Math.abs(all[cy]) > MAX_ABS_INTENSITY) throw new SyntaxError(`line ${i + 1}: intensity ${tokens[cy].trim()} is not a plausible count (at most ${MAX_ABS_INTENSITY} in magnitude)`);
    if (cs !== null && !(all[cs] > 0)) throw new SyntaxError(`line ${i + 1}: uncertainty ${all[cs]} must be positive`);
    if (cs !== null && all[cs] > MAX_ABS_INTENSITY) throw new SyntaxError(`line ${i + 1}: uncertainty ${tokens[cs].trim()} is not plausible (at most ${MAX_ABS_INTENSITY})`);
    xs.push(all[cx]);
    ys.push(all[cy]);
    if (cs !== null) ss.push(all[cs]);
    lineNo.push(i + 1);
  }
  if (headerCount > 0) notes.push(`${headerCount} header line(s) read before the data`);
  const statements: RadiationStatement[] = [];
  header.forEach((h, k) => {
    try {
      statements.push(...radiationStatements(h, `header line ${headerAt[k]}`));
    } catch (e) {
      // a header the user overrides need not be readable
      if (!(e instanceof RadiationError) || options.wavelength === undefined) throw e;
      notes.push(`${e.message} (ignored: the wavelength was given as an option)`);
    }
  });
  if (bare) statements.push(bare);
  return assemblePattern({ x: xs, y: ys, sigma: choice?.sigma != null ? ss : null, lineNo, axis: headerAxis(header), statements, notes }, options);
}

/** Rows read from a file, before the reading rules common to every layout are applied. */
export interface PatternRows {
  /** Positions as written (2θ in degrees, or q), in file order. */
  x: number[];
  /** Intensities, in file order. */
  y: number[];
  /** Standard uncertainties of the intensities, or null. */
  sigma: number[] | null;
  /** The file's line of each row, for messages. */
  lineNo: number[];
  /** The axis the file declares, or null when it does not. */
  axis: AxisUnit | null;
  /** What the file says about the radiation. */
  statements: RadiationStatement[];
  /** Notes so far; the rules applied here are added. */
  notes: string[];
}

/**
 * Applies the reading rules every pattern layout shares: at least three rows, a decreasing axis
 * reversed (noted), repeated or unsorted positions refused by line, the axis unit (Å⁻¹ converted
 * to nm⁻¹), a 2θ range inside (0, 180)°, and the radiation resolved from the file's statements
 * and the options (see resolveRadiation).
 *
 * @param rows the rows and statements read from the file
 * @param options axis unit and wavelength overriding the file
 * @returns the pattern
 * @throws SyntaxError or RangeError naming the line or the value
 */
export function assemblePattern(rows: PatternRows, options: ParsePatternOptions = {}): Pattern {
  const xs = [...rows.x];
  const ys = [...rows.y];
  const ss = rows.sigma ? [...rows.sigma] : [];
  const lineNo = [...rows.lineNo];
  const notes = rows.notes;
  if (xs.length !== ys.length || xs.length !== lineNo.length || (rows.sigma && rows.sigma.length !== xs.length)) {
    throw new RangeError(`assemblePattern: ${xs.length} positions, ${ys.length} intensities${rows.sigma ? `, ${rows.sigma.length} uncertainties` : ''} and ${lineNo.length} line numbers differ in length`);
  }
  if (xs.length < 3) throw new SyntaxError(`pattern has ${xs.length} data rows; at least 3 are needed`);
  let reversed = false;
  if (xs[1] < xs[0]) {
    reversed = true;
    xs.reverse();
    ys.reverse();
    ss.reverse();
    lineNo.reverse();
    notes.push('x was in decreasing order; reversed');
  }
  for (let k = 1; k < xs.length; k++) {
    if (!(xs[k] > xs[k - 1])) {
      throw new SyntaxError(`line ${lineNo[k]}: x = ${xs[k]} is not ${reversed ? 'below' : 'above'} the previous row's ${xs[k - 1]} (x must be strictly monotonic)`);
    }
  }
  const axisUnit: AxisUnit = options.axis ?? rows.axis ?? 'twoThetaDeg';
  if (!options.axis && !rows.axis) notes.push('axis not stated: first column read as 2θ in degrees');
  let x = Float64Array.from(xs);
  if (axisUnit === 'qInvA') {
    x = x.map((v) => v * 10);
    notes.push('q converted from Å⁻¹ to nm⁻¹');
  }
  if (axisUnit === 'twoThetaDeg' && (x[0] <= 0 || x[x.length - 1] >= 180)) {
    throw new RangeError(`2θ range ${x[0]}–${x[x.length - 1]}° is outside (0, 180); is the first column q? (set the axis)`);
  }
  if (axisUnit !== 'twoThetaDeg' && x[0] <= 0) notes.push('q ≤ 0 rows present: d is undefined there');
  const statements = rows.statements;
  const radiation = resolveRadiation(statements, { wavelength: options.wavelength, ka2Nm: options.ka2Nm, ka2: options.ka2, relUncertainty: options.wavelengthRelU });
  const wavelengthNm = radiation?.wavelengthNm ?? null;
  const ka2Nm = radiation?.ka2Nm ?? null;
  const wavelengthFrom: Pattern['wavelengthFrom'] = radiation === null ? 'none' : options.wavelength !== undefined ? 'option' : 'header';
  if (radiation) notes.push(`wavelength ${radiation.label}, from ${radiation.source}`, ...radiation.notes);
  if (wavelengthNm !== null && !(wavelengthNm > 0 && wavelengthNm < 10)) throw new RangeError(`wavelength ${wavelengthNm} nm is not plausible`);
  return {
    axis: axisUnit === 'twoThetaDeg' ? 'twoTheta' : 'q',
    x,
    y: Float64Array.from(ys),
    sigma: rows.sigma ? Float64Array.from(ss) : null,
    wavelengthNm,
    ka2Nm,
    wavelengthFrom,
    radiation,
    notes,
  };
}

/** How a typed peak list is given. */
export type PeakListUnit = 'twoThetaDeg' | 'dNm' | 'dA' | 'qInvNm' | 'qInvA';

/** A peak typed by the user, converted to every axis that the wavelength allows. */
export interface ManualPeak {
  /** 2θ in degrees, or null without a wavelength (or beyond 180°). */
  twoThetaDeg: number | null;
  /** d-spacing in nm. */
  dNm: number;
  /** q = 2π/d in nm⁻¹. */
  qInvNm: number;
}

/**
 * Reads a typed list of peak positions ("3.35, 1.68; 1.12" or one a line).
 * @param text numbers separated by commas, semicolons, whitespace or new lines (decimal point)
 * @param unit what the numbers are
 * @param wavelengthNm wavelength in nm; needed for 2θ input, optional otherwise
 * @returns the peaks in input order
 */
export function parsePeakList(text: string, unit: PeakListUnit, wavelengthNm?: number): ManualPeak[] {
  const tokens = text.split(/[\s,;]+/).filter((t) => t !== '');
  if (tokens.length === 0) throw new RangeError('peak list is empty');
  if (unit === 'twoThetaDeg' && wavelengthNm === undefined) throw new RangeError('a 2θ peak list needs a wavelength');
  return tokens.map((t, i) => {
    const v = Number(t);
    if (!Number.isFinite(v) || v <= 0) throw new RangeError(`peak ${i + 1}: '${t}' is not a positive number`);
    let dNm: number;
    if (unit === 'twoThetaDeg') dNm = twoThetaToD(v, wavelengthNm!);
    else if (unit === 'dNm') dNm = v;
    else if (unit === 'dA') dNm = v / 10;
    else if (unit === 'qInvNm') dNm = qToD(v);
    else dNm = qToD(v * 10);
    let twoThetaDeg: number | null = null;
    if (wavelengthNm !== undefined && wavelengthNm / (2 * dNm) <= 1) twoThetaDeg = (360 / Math.PI) * Math.asin(wavelengthNm / (2 * dNm));
    return { twoThetaDeg, dNm, qInvNm: dToQ(dNm) };
  });
}
