/**
 * A small CIF reader (cell, space group, symmetry operations, atom sites) and powder reflection
 * lists from it: d, hkl, multiplicity, systematic absences and relative intensities.
 */
import { elementOf, scatteringFactor } from './scattering';
import { lorentzPolarisation } from './bragg';

/** A number from a CIF with its standard uncertainty from the parentheses (0 when none). */
export interface CifNumber {
  value: number;
  su: number;
}

/** A symmetry operation x' = R x + t in fractional coordinates. */
export interface SymOp {
  /** Rotation part, row-major 3×3. */
  r: number[];
  /** Translation part. */
  t: number[];
  /** The operation as written. */
  text: string;
}

/** An atom site. */
export interface AtomSite {
  label: string;
  /** Element symbol for the scattering factor. */
  element: string;
  /** Fractional coordinates. */
  xyz: [number, number, number];
  occupancy: number;
  /** Isotropic displacement U in Å² (converted from B when B is given; 0 when absent). */
  uIsoA2: number;
}

/** A crystal structure read from a CIF. */
export interface CifStructure {
  /** Data block name. */
  name: string;
  /** Cell lengths in nm and angles in degrees, with su. */
  cell: { aNm: CifNumber; bNm: CifNumber; cNm: CifNumber; alphaDeg: CifNumber; betaDeg: CifNumber; gammaDeg: CifNumber };
  /** Space group Hermann–Mauguin name, or null. */
  spaceGroupName: string | null;
  /** International Tables number, or null. */
  spaceGroupNumber: number | null;
  /** Symmetry operations (identity alone when the file lists none; noted). */
  symops: SymOp[];
  atoms: AtomSite[];
  /** Notes for the user (skipped dummy atoms, missing symmetry...). */
  notes: string[];
}

/** Longest text read as a number (a CIF number with its su is a few dozen characters). */
const MAX_NUMBER_CHARS = 64;
/** Longest text read as a symmetry operation. */
const MAX_SYMOP_CHARS = 256;

/** Reads "5.1963(4)" as { value: 5.1963, su: 0.0004 }; "?" and "." give NaN. */
export function parseCifNumber(text: string): CifNumber {
  // No number of a structure file is this long; the pattern below has no nested optional digits, so it runs in linear time.
  if (text.length > MAX_NUMBER_CHARS) return { value: NaN, su: 0 };
  const m = /^([-+]?(\d+(?:\.\d*)?|\.\d+)([eE][-+]?\d+)?)(\((\d+)\))?$/.exec(text.trim());
  if (!m) return { value: NaN, su: 0 };
  const value = Number(m[1]);
  let su = 0;
  if (m[5]) {
    const mant = m[1].replace(/[eE].*/, '');
    const dot = mant.indexOf('.');
    const decimals = dot < 0 ? 0 : mant.length - dot - 1;
    const exp = m[3] ? Number(m[3].slice(1)) : 0;
    su = Number(m[5]) * 10 ** (exp - decimals);
  }
  return { value, su };
}

/** A structure file that cannot be read; the message is `"<fileName>: line N: <reason>"` (or without the line). */
export class CifError extends SyntaxError {
  override name = 'CifError';
  /** The file name as given to the reader. */
  readonly fileName: string;
  /** The line the problem is on (1-based), or null for the file as a whole. */
  readonly line: number | null;
  /** The reason alone. */
  readonly reason: string;
  constructor(fileName: string, line: number | null, reason: string) {
    super(`${fileName}: ${line !== null ? `line ${line}: ` : ''}${reason}`);
    this.fileName = fileName;
    this.line = line;
    this.reason = reason;
  }
}

/** A token with the line it starts on. */
type Token = CifValue;

/**
 * Characters that Unicode counts as white space but a CIF does not (CIF whitespace is only space,
 * tab and the line ends): outside quoted text they would silently join or split tokens.
 */
const NON_CIF_SPACE: Record<number, string> = {
  0x85: 'next line (U+0085)', 0xa0: 'no-break space (U+00A0)', 0x1680: 'Ogham space mark (U+1680)',
  0x2000: 'en quad (U+2000)', 0x2001: 'em quad (U+2001)', 0x2002: 'en space (U+2002)', 0x2003: 'em space (U+2003)',
  0x2004: 'three-per-em space (U+2004)', 0x2005: 'four-per-em space (U+2005)', 0x2006: 'six-per-em space (U+2006)',
  0x2007: 'figure space (U+2007)', 0x2008: 'punctuation space (U+2008)', 0x2009: 'thin space (U+2009)',
  0x200a: 'hair space (U+200A)', 0x200b: 'zero-width space (U+200B)', 0x2028: 'line separator (U+2028)',
  0x2029: 'paragraph separator (U+2029)', 0x202f: 'narrow no-break space (U+202F)', 0x205f: 'medium mathematical space (U+205F)',
  0x3000: 'ideographic space (U+3000)', 0xfeff: 'byte-order mark (U+FEFF)',
};

/** Name of a control character that a CIF may not hold anywhere, or null. */
function controlName(c: number): string | null {
  if (c === 0x0b) return 'vertical tab (U+000B)';
  if (c === 0x0c) return 'form feed (U+000C)';
  if (c < 0x20 && c !== 0x09 && c !== 0x0a && c !== 0x0d) return `control character U+${c.toString(16).toUpperCase().padStart(4, '0')}`;
  if (c === 0x7f || (c >= 0x80 && c <= 0x9f && c !== 0x85)) return `control character U+${c.toString(16).toUpperCase().padStart(4, '0')}`;
  if (c === 0xfffe || c === 0xffff) return `non-character U+${c.toString(16).toUpperCase()}`;
  return null;
}

/**
 * Splits CIF text into tokens by the grammar's own whitespace: space, tab and the line ends
 * (LF, CR, CR LF); comments from # to the end of a line; quoted strings ending at a matching
 * quote followed by whitespace; text fields between lines starting with a semicolon.
 *
 * @param text - the whole file.
 * @param fail - stops with a reason and a line.
 * @returns the tokens with their lines.
 * Notes: a byte-order mark at the very start is skipped (CIF 2.0 allows one there); control
 * characters (vertical tab, form feed, NUL...) are refused anywhere, and Unicode spaces that are
 * not CIF whitespace (no-break space, U+2028...) or a byte-order mark are refused outside quoted
 * text and text fields, each naming the line and column. Every step consumes at least one
 * character, so the tokenizer always ends.
 * Reference: CIF 1.1 syntax specification (IUCr), formal grammar <WhiteSpace> and <eol>;
 * CIF 2.0, Bernstein et al., J. Appl. Cryst. 49, 277 (2016) (character set, byte-order mark).
 */
function tokenize(text: string, fail: (line: number | null, reason: string) => never): Token[] {
  const tokens: Token[] = [];
  const body = text.charCodeAt(0) === 0xfeff ? text.slice(1) : text;
  const lines = body.split(/\r\n|\r|\n/);
  /** Refuses control characters anywhere on a line, and non-CIF spaces outside the quoted spans and before a comment. */
  const checkChars = (line: string, no: number, quoted: [number, number][], commentAt: number) => {
    for (let j = 0; j < line.length; j++) {
      const c = line.charCodeAt(j);
      if (c < 0x80 && c >= 0x20 && c !== 0x7f) continue;
      const control = controlName(c);
      if (control) fail(no, `column ${j + 1}: ${control} is not allowed in a CIF (whitespace is only space, tab and line ends)`);
      if (NON_CIF_SPACE[c] && j < commentAt && !quoted.some(([a, b]) => j >= a && j < b)) {
        fail(no, `column ${j + 1}: ${NON_CIF_SPACE[c]} is not whitespace in a CIF and may appear only inside quotes: replace it with an ordinary space`);
      }
    }
  };
  for (let i = 0; i < lines.length; i++) {
    const line = lines[i];
    if (line.startsWith(';')) {
      const start = i + 1;
      const parts = [line.slice(1)];
      checkChars(line, start, [[0, line.length]], line.length);
      i++;
      while (i < lines.length && !lines[i].startsWith(';')) {
        checkChars(lines[i], i + 1, [[0, lines[i].length]], lines[i].length);
        parts.push(lines[i++]);
      }
      if (i >= lines.length) fail(start, 'a text field opened with ";" at the start of this line is never closed');
      tokens.push({ text: parts.join('\n').trim(), line: start, quoted: true });
      // anything after the closing ';' on its line is read as ordinary tokens (CIF 1.1 grammar)
      const rest = lines[i].slice(1);
      if (rest.trim() !== '') {
        lines[i] = ' ' + rest;
        i--;
      }
      continue;
    }
    const no = i + 1;
    let j = 0;
    const quoted: [number, number][] = [];
    while (j < line.length) {
      const ch = line[j];
      if (ch === ' ' || ch === '\t') {
        j++;
        continue;
      }
      if (ch === '#') break;
      if (ch === "'" || ch === '"') {
        let k = j + 1;
        while (k < line.length && !(line[k] === ch && (k + 1 === line.length || line[k + 1] === ' ' || line[k + 1] === '\t'))) k++;
        if (k >= line.length) fail(no, `column ${j + 1}: the quoted text starting here is not closed on its line`);
        tokens.push({ text: line.slice(j + 1, k), line: no, quoted: true });
        quoted.push([j, k + 1]);
        j = k + 1;
        continue;
      }
      let k = j;
      while (k < line.length && line[k] !== ' ' && line[k] !== '\t') k++;
      tokens.push({ text: line.slice(j, k), line: no, quoted: false });
      j = k;
    }
    checkChars(line, no, quoted, j);
  }
  return tokens;
}

/** A value of a CIF with the line it starts on. */
export interface CifValue {
  text: string;
  line: number;
  /** True for quoted strings and text fields (never a data name or reserved word). */
  quoted: boolean;
}

/** A loop of a data block: its data names (lower case) and its rows of values. */
export interface CifLoop {
  names: string[];
  rows: CifValue[][];
  /** The line of its loop_. */
  line: number;
}

/** One data block of a CIF: its single items and its loops, data names in lower case. */
export interface CifBlock {
  /** The name after data_. */
  name: string;
  /** The line of its data_. */
  line: number;
  items: Map<string, CifValue>;
  loops: CifLoop[];
  /** The loop each looped data name belongs to (index into loops). */
  loopOf: Map<string, number>;
}

/**
 * Reads the data blocks of a CIF: each block's single items and loops, data names in lower case.
 *
 * @param text - the whole file.
 * @param fail - stops with a reason and a line.
 * @param maxBlocks - blocks to read; the rest of the file is not read.
 * @returns the blocks read, and whether another data block follows them.
 * Notes: a data name given twice in a block, a data name without a value, a loop without data
 * names or whose values do not fill its rows, a value without a data name, and save frames or
 * global blocks are refused through `fail`, naming the line.
 * Reference: CIF 1.1 syntax specification (IUCr); Hall, Allen & Brown, Acta Cryst. A47, 655 (1991).
 */
export function readCifBlocks(text: string, fail: (line: number | null, reason: string) => never, maxBlocks = Infinity): { blocks: CifBlock[]; more: boolean } {
  const tokens = tokenize(text, fail);
  const blocks: CifBlock[] = [];
  let block: CifBlock | null = null;
  let i = 0;
  const reserved = (t: Token) => !t.quoted && /^(data_|loop_$|save_|global_$|stop_$)/i.test(t.text);
  const isName = (t: Token) => !t.quoted && t.text.startsWith('_');
  const current = (t: Token): CifBlock => block ?? fail(t.line, `${t.text.slice(0, 40)} before the first data block (data_NAME)`);
  while (i < tokens.length) {
    const tk = tokens[i];
    if (!tk.quoted && /^data_/i.test(tk.text)) {
      if (blocks.length >= maxBlocks) return { blocks, more: true };
      block = { name: tk.text.slice(5), line: tk.line, items: new Map(), loops: [], loopOf: new Map() };
      blocks.push(block);
      i++;
    } else if (!tk.quoted && /^loop_$/i.test(tk.text)) {
      const b = current(tk);
      i++;
      const names: string[] = [];
      while (i < tokens.length && isName(tokens[i])) {
        const n = tokens[i].text.toLowerCase();
        if (b.items.has(n) || b.loopOf.has(n) || names.includes(n)) fail(tokens[i].line, `data name ${tokens[i].text} appears twice in the data block`);
        names.push(n);
        i++;
      }
      if (names.length === 0) fail(tk.line, 'a loop_ without data names');
      const values: Token[] = [];
      while (i < tokens.length && !isName(tokens[i]) && !reserved(tokens[i])) values.push(tokens[i++]);
      if (values.length === 0 || values.length % names.length !== 0) {
        fail(tk.line, `the loop (${names.join(' ')}) has ${values.length} values, not a multiple of its ${names.length} data names`);
      }
      const rows: Token[][] = [];
      for (let k = 0; k < values.length; k += names.length) rows.push(values.slice(k, k + names.length));
      for (const n of names) b.loopOf.set(n, b.loops.length);
      b.loops.push({ names, rows, line: tk.line });
    } else if (isName(tk)) {
      const b = current(tk);
      const n = tk.text.toLowerCase();
      if (b.items.has(n) || b.loopOf.has(n)) fail(tk.line, `data name ${tk.text} appears twice in the data block`);
      const v = tokens[i + 1];
      if (!v || isName(v) || reserved(v)) fail(tk.line, `data name ${tk.text} has no value`);
      b.items.set(n, v);
      i += 2;
    } else if (reserved(tk)) {
      fail(tk.line, `${tk.text} (save frames, global blocks) is not read`);
    } else {
      fail(tk.line, `value '${tk.text.slice(0, 40)}' without a data name before it`);
    }
  }
  return { blocks, more: false };
}

/** Parses one component of a symmetry operation such as '-y+1/2' or 'x-y' into coefficients and shift. */
function parseComponent(expr: string, op: string): { row: number[]; t: number } {
  const row = [0, 0, 0];
  let t = 0;
  const s = expr.replace(/\s+/g, '').toLowerCase();
  const re = /([-+]?)((?:\d+(?:\.\d*)?|\.\d+)?(?:\/\d+)?)\*?([xyz]?)/g;
  let m: RegExpExecArray | null;
  let consumed = 0;
  while ((m = re.exec(s)) !== null) {
    if (m[0] === '') {
      re.lastIndex++;
      continue;
    }
    consumed += m[0].length;
    const sign = m[1] === '-' ? -1 : 1;
    let num = 1;
    if (m[2]) {
      const [a, b] = m[2].split('/');
      num = b ? Number(a) / Number(b) : Number(a);
      if (!Number.isFinite(num)) throw new SyntaxError(`symmetry operation '${op}': cannot read '${m[0]}'`);
    }
    if (m[3]) row['xyz'.indexOf(m[3])] += sign * num;
    else if (m[2]) t += sign * num;
    else throw new SyntaxError(`symmetry operation '${op}': stray sign`);
  }
  if (consumed !== s.length) throw new SyntaxError(`symmetry operation '${op}': cannot read '${expr}'`);
  return { row, t };
}

/** Parses a symmetry operation 'x,y,z' style. */
export function parseSymOp(text: string): SymOp {
  if (text.length > MAX_SYMOP_CHARS) throw new SyntaxError(`symmetry operation '${text.slice(0, 40)}...' is ${text.length} characters long; an operation is a few dozen`);
  const parts = text.split(',');
  if (parts.length !== 3) throw new SyntaxError(`symmetry operation '${text}' does not have three components`);
  const r: number[] = [];
  const t: number[] = [];
  for (const p of parts) {
    const c = parseComponent(p, text);
    r.push(...c.row);
    t.push(c.t);
  }
  return { r, t, text };
}

/** Most symmetry operations a space group has: 48 point operations × 4 centring translations (Fm-3m), ITC A. */
export const MAX_SYMMETRY_OPERATIONS = 192;
/** Most atom sites read from one structure (far more than any inorganic structure lists; bounds the reflection work). */
export const MAX_ATOM_SITES = 2000;
/**
 * Plausible cell lengths in Å: from 0.5 Å (below any interatomic distance) to 10 000 Å (1 µm,
 * beyond the largest virus crystals) (common practice).
 */
const CELL_LENGTH_RANGE_A: [number, number] = [0.5, 1e4];

/** Options of {@link parseCif}. */
export interface ParseCifOptions {
  /** The file's name, put at the start of every error message (default "CIF"). */
  fileName?: string;
}

/**
 * Reads the first data block of a CIF: cell, space group, symmetry operations
 * (`_space_group_symop_operation_xyz` or `_symmetry_equiv_pos_as_xyz`) and atom sites with
 * occupancy and Uiso/Biso; numbers keep their su from the parentheses.
 *
 * @param text the CIF text
 * @param options the file name for messages
 * @returns the structure; dummy atoms (calc flag 'dum') and atoms without an element with a
 *   scattering factor are skipped and noted
 * @throws CifError naming the file and the line: characters a CIF may not hold, unclosed quotes
 *   or text fields, a data name without a value or given twice, a loop whose values do not fill
 *   its rows, a missing or implausible cell (lengths 0.5–10 000 Å, angles strictly between 0° and
 *   180°, a positive volume), more than 192 symmetry operations or one that is not a lattice
 *   rotation, an atom-site loop without x, y or z columns, more than 2000 atom sites
 * Reference: Hall, Allen & Brown, Acta Cryst. A47, 655 (1991) (the CIF format); CIF 1.1 syntax
 * specification (IUCr); International Tables for Crystallography Vol. A (at most 192 operations).
 */
export function parseCif(text: string, options: ParseCifOptions = {}): CifStructure {
  const fileName = options.fileName ?? 'CIF';
  if (typeof text !== 'string') throw new TypeError(`parseCif: text must be a string, got ${typeof text}`);
  const fail = (line: number | null, reason: string): never => {
    throw new CifError(fileName, line, reason);
  };
  const { blocks, more } = readCifBlocks(text, fail, 1);
  if (blocks.length === 0) fail(null, 'no data block (a CIF structure starts with data_NAME)');
  const { name, items, loops, loopOf } = blocks[0];
  const notes: string[] = [];
  if (more) notes.push('only the first data block was read');
  const num = (key: string, required: boolean): CifNumber & { line: number | null; text: string } => {
    const v = items.get(key);
    const n = v === undefined ? { value: NaN, su: 0 } : parseCifNumber(v.text);
    if (required && !Number.isFinite(n.value)) {
      fail(v?.line ?? null, v === undefined ? `${key} is missing` : `${key} '${v.text.slice(0, 40)}' is not a number`);
    }
    if (!(n.su >= 0 && Number.isFinite(n.su))) fail(v?.line ?? null, `${key} has an invalid standard uncertainty`);
    return { ...n, line: v?.line ?? null, text: v?.text ?? '' };
  };
  const len = (key: string) => {
    const n = num(key, true);
    if (!(n.value >= CELL_LENGTH_RANGE_A[0] && n.value <= CELL_LENGTH_RANGE_A[1])) {
      fail(n.line, `${key} ${n.text} Å is not a plausible cell length (${CELL_LENGTH_RANGE_A[0]} to ${CELL_LENGTH_RANGE_A[1]} Å)`);
    }
    return { value: n.value / 10, su: n.su / 10 };
  };
  const angle = (key: string) => {
    const n = num(key, true);
    if (!(n.value > 0 && n.value < 180)) fail(n.line, `${key} ${n.text}° is not a cell angle (strictly between 0° and 180°)`);
    return { value: n.value, su: n.su };
  };
  const cell = {
    aNm: len('_cell_length_a'),
    bNm: len('_cell_length_b'),
    cNm: len('_cell_length_c'),
    alphaDeg: angle('_cell_angle_alpha'),
    betaDeg: angle('_cell_angle_beta'),
    gammaDeg: angle('_cell_angle_gamma'),
  };
  try {
    reciprocalMetric(cell);
  } catch {
    fail(items.get('_cell_angle_alpha')?.line ?? null, `the cell angles ${cell.alphaDeg.value}°, ${cell.betaDeg.value}°, ${cell.gammaDeg.value}° do not make a cell of positive volume`);
  }
  const sgName = items.get('_space_group_name_h-m_alt')?.text ?? items.get('_symmetry_space_group_name_h-m')?.text ?? null;
  const sgNumRaw = (items.get('_space_group_it_number') ?? items.get('_symmetry_int_tables_number'))?.text;
  const sgNum = sgNumRaw !== undefined && /^\d+$/.test(sgNumRaw) && Number(sgNumRaw) >= 1 && Number(sgNumRaw) <= 230 ? Number(sgNumRaw) : null;
  const findLoop = (col: string) => {
    const k = loopOf.get(col);
    return k === undefined ? undefined : loops[k];
  };
  const symop = (t: Token): SymOp => {
    let op: SymOp;
    try {
      op = parseSymOp(t.text);
    } catch (e) {
      return fail(t.line, (e as Error).message);
    }
    const r = op.r;
    const det = r[0] * (r[4] * r[8] - r[5] * r[7]) - r[1] * (r[3] * r[8] - r[5] * r[6]) + r[2] * (r[3] * r[7] - r[4] * r[6]);
    if (!r.every(Number.isInteger) || Math.abs(det) !== 1) {
      fail(t.line, `symmetry operation '${t.text}' is not a crystallographic operation (its rotation part must be an integer matrix of determinant ±1)`);
    }
    if (!op.t.every((v) => Number.isFinite(v) && Math.abs(v) <= 1e3)) fail(t.line, `symmetry operation '${t.text}' has an implausible translation`);
    return op;
  };
  let symops: SymOp[] = [];
  for (const col of ['_space_group_symop_operation_xyz', '_symmetry_equiv_pos_as_xyz']) {
    const l = findLoop(col);
    if (l) {
      if (l.rows.length > MAX_SYMMETRY_OPERATIONS) {
        fail(l.line, `the loop lists ${l.rows.length} symmetry operations; a space group has at most ${MAX_SYMMETRY_OPERATIONS}`);
      }
      const k = l.names.indexOf(col);
      symops = l.rows.map((row) => symop(row[k]));
      break;
    }
  }
  if (symops.length === 0) {
    const single = items.get('_space_group_symop_operation_xyz') ?? items.get('_symmetry_equiv_pos_as_xyz');
    symops = [single ? symop(single) : parseSymOp('x,y,z')];
    notes.push('no symmetry-operation loop: only the listed operation (or the identity) is used');
  }
  const atoms: AtomSite[] = [];
  const al = findLoop('_atom_site_fract_x') ?? findLoop('_atom_site_fract_y') ?? findLoop('_atom_site_fract_z');
  if (!al) return fail(null, 'no atom-site loop with fractional coordinates (_atom_site_fract_x, _y, _z)');
  const col = (n: string) => al.names.indexOf(n);
  const [cl, ct, cx, cy, cz, co, cu, cb, cf] = [
    '_atom_site_label', '_atom_site_type_symbol', '_atom_site_fract_x', '_atom_site_fract_y', '_atom_site_fract_z',
    '_atom_site_occupancy', '_atom_site_u_iso_or_equiv', '_atom_site_b_iso_or_equiv', '_atom_site_calc_flag',
  ].map(col);
  const missing = [['x', cx], ['y', cy], ['z', cz]].filter(([, c]) => c === -1).map(([a]) => `_atom_site_fract_${a}`);
  if (missing.length) fail(al.line, `the atom-site loop has no ${missing.join(' or ')} column: every atom needs x, y and z`);
  if (al.rows.length > MAX_ATOM_SITES) fail(al.line, `the atom-site loop lists ${al.rows.length} sites; at most ${MAX_ATOM_SITES} are read`);
  for (const row of al.rows) {
    const label = cl >= 0 ? row[cl].text : `atom${atoms.length + 1}`;
    if (cf >= 0 && row[cf].text.toLowerCase() === 'dum') {
      notes.push(`dummy atom ${label} skipped`);
      continue;
    }
    const xyz: [number, number, number] = [parseCifNumber(row[cx].text).value, parseCifNumber(row[cy].text).value, parseCifNumber(row[cz].text).value];
    if (!xyz.every(Number.isFinite)) {
      notes.push(`atom ${label} (line ${row[cx].line}) skipped: coordinates not given`);
      continue;
    }
    if (!xyz.every((v) => Math.abs(v) <= 1e3)) fail(row[cx].line, `atom ${label} has implausible fractional coordinates ${xyz.join(', ')}`);
    let element: string;
    try {
      element = elementOf(ct >= 0 ? row[ct].text : label);
      scatteringFactor(element, 0);
    } catch (e) {
      notes.push(`atom ${label} skipped: ${(e as Error).message}`);
      continue;
    }
    const occ = co >= 0 ? parseCifNumber(row[co].text).value : 1;
    if (Number.isFinite(occ) && !(occ >= 0 && occ <= 1.5)) fail(row[co].line, `atom ${label} has occupancy ${occ} (0 to 1 expected)`);
    let u = cu >= 0 ? parseCifNumber(row[cu].text).value : NaN;
    if (!Number.isFinite(u) && cb >= 0) u = parseCifNumber(row[cb].text).value / (8 * Math.PI * Math.PI);
    if (Number.isFinite(u) && !(u >= 0 && u <= 10)) fail(row[cx].line, `atom ${label} has a displacement parameter U = ${u} Å² (0 to 10 Å² expected)`);
    atoms.push({ label, element, xyz, occupancy: Number.isFinite(occ) ? occ : 1, uIsoA2: Number.isFinite(u) ? u : 0 });
  }
  if (atoms.every((a) => a.uIsoA2 === 0)) notes.push('no displacement parameters: intensities without a Debye–Waller factor');
  return { name, cell, spaceGroupName: sgName, spaceGroupNumber: sgNum, symops, atoms, notes };
}

/** Reciprocal metric tensor G* (row-major 3×3, in nm⁻²) of a cell. */
export function reciprocalMetric(cell: CifStructure['cell']): number[] {
  const a = cell.aNm.value;
  const b = cell.bNm.value;
  const c = cell.cNm.value;
  const rad = Math.PI / 180;
  const ca = Math.cos(cell.alphaDeg.value * rad);
  const cb = Math.cos(cell.betaDeg.value * rad);
  const cg = Math.cos(cell.gammaDeg.value * rad);
  const g = [a * a, a * b * cg, a * c * cb, a * b * cg, b * b, b * c * ca, a * c * cb, b * c * ca, c * c];
  const det = g[0] * (g[4] * g[8] - g[5] * g[7]) - g[1] * (g[3] * g[8] - g[5] * g[6]) + g[2] * (g[3] * g[7] - g[4] * g[6]);
  if (!(det > 0)) throw new RangeError('cell metric is not positive definite (check the cell angles)');
  return [
    (g[4] * g[8] - g[5] * g[7]) / det, (g[2] * g[7] - g[1] * g[8]) / det, (g[1] * g[5] - g[2] * g[4]) / det,
    (g[5] * g[6] - g[3] * g[8]) / det, (g[0] * g[8] - g[2] * g[6]) / det, (g[2] * g[3] - g[0] * g[5]) / det,
    (g[3] * g[7] - g[4] * g[6]) / det, (g[1] * g[6] - g[0] * g[7]) / det, (g[0] * g[4] - g[1] * g[3]) / det,
  ];
}

/** d-spacing of (hkl) in nm from the cell. */
export function dSpacingNm(cell: CifStructure['cell'], h: number, k: number, l: number): number {
  const gs = reciprocalMetric(cell);
  const v = [h, k, l];
  let s = 0;
  for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) s += v[i] * gs[i * 3 + j] * v[j];
  return 1 / Math.sqrt(s);
}

/** Options of powderReflections. */
export interface ReflectionOptions {
  /** Smallest d in nm (default 0.1). */
  dMinNm?: number;
  /** Largest d in nm (default ∞). */
  dMaxNm?: number;
  /** Wavelength in nm: gives 2θ and the Lorentz–polarisation factor (without it, I = m|F|²). */
  wavelengthNm?: number;
  /** Keep systematically absent reflections in the list, flagged (default false). */
  includeAbsent?: boolean;
}

/** One powder reflection (a set of symmetry-equivalent hkl). */
export interface PowderReflection {
  /** Representative Miller indices. */
  hkl: [number, number, number];
  dNm: number;
  /** 2θ in degrees, or null without a wavelength. */
  twoThetaDeg: number | null;
  /** Number of distinct equivalent hkl (Friedel pairs included). */
  multiplicity: number;
  /** |F|² in electrons². */
  f2: number;
  /** Relative intensity, strongest present reflection = 100. */
  intensity: number;
  /** True when the symmetry operations extinguish it. */
  absent: boolean;
}

/** Most structure-factor terms (reflections × atom positions) powderReflections computes: about a second (real structures need far fewer: muscovite-3T to 0.1 nm about 2 × 10⁴). */
const MAX_STRUCTURE_FACTOR_TERMS = 5e7;

/** Determinant of a row-major 3×3 matrix. */
function det3(m: number[]): number {
  return m[0] * (m[4] * m[8] - m[5] * m[7]) - m[1] * (m[3] * m[8] - m[5] * m[6]) + m[2] * (m[3] * m[7] - m[4] * m[6]);
}

/** Symmetry-generated positions of an atom (duplicates within 1e-3 merged). */
function orbit(xyz: number[], ops: SymOp[]): number[][] {
  const out: number[][] = [];
  for (const op of ops) {
    const p = [0, 1, 2].map((i) => {
      const v = op.r[i * 3] * xyz[0] + op.r[i * 3 + 1] * xyz[1] + op.r[i * 3 + 2] * xyz[2] + op.t[i];
      return v - Math.floor(v);
    });
    const dup = out.some((q) => q.every((v, i) => {
      const d = Math.abs(v - p[i]);
      return Math.min(d, 1 - d) < 2e-3;
    }));
    if (!dup) out.push(p);
  }
  return out;
}

/**
 * Lists the powder reflections of a structure in a d range: d from the cell, equivalent hkl and
 * multiplicity from the rotation parts of the symmetry operations (plus Friedel's law), systematic
 * absences, |F|² from the symmetry-generated atoms with tabulated scattering factors, occupancy and
 * isotropic Debye–Waller factor exp(−8π²U s²), and I = m |F|² Lp with
 * Lp = (1 + cos² 2θ)/(sin² θ cos θ) (unpolarised beam, no monochromator).
 *
 * @param structure a structure from parseCif
 * @param options d range, wavelength, whether to keep absent reflections
 * @returns reflections by decreasing d
 *
 * Notes: a reflection h is systematically absent when some operation (R, t) has hR = h and
 * h·t not an integer: then F(h) = 0 for any atom arrangement. This general test covers lattice
 * centring, glide planes and screw axes alike, provided the CIF lists the full set of operations
 * (centring translations included). No absorption, preferred orientation or anomalous scattering.
 * Reference: International Tables for Crystallography Vol. A, §1.6 (reflection conditions), and
 * Vol. C Table 6.1.1.4 (scattering factors).
 */
export function powderReflections(structure: CifStructure, options: ReflectionOptions = {}): PowderReflection[] {
  const dMin = options.dMinNm ?? 0.1;
  const dMax = options.dMaxNm ?? Infinity;
  const lambda = options.wavelengthNm;
  if (!(dMin > 0)) throw new RangeError(`dMinNm must be positive, got ${dMin}`);
  if (!(dMax > dMin)) throw new RangeError(`dMaxNm ${dMax} must exceed dMinNm ${dMin}`);
  if (lambda !== undefined && !(lambda > 0)) throw new RangeError(`wavelengthNm must be positive, got ${lambda}`);
  const { cell, symops } = structure;
  const gs = reciprocalMetric(cell);
  const hmax = Math.floor(cell.aNm.value / dMin);
  const kmax = Math.floor(cell.bNm.value / dMin);
  const lmax = Math.floor(cell.cNm.value / dMin);
  if ((2 * hmax + 1) * (2 * kmax + 1) * (2 * lmax + 1) > 4e6) throw new RangeError(`dMinNm ${dMin} gives too many reflections for this cell`);
  const sites = structure.atoms.map((a) => ({ atom: a, pos: orbit(a.xyz, symops) }));
  // Work bound: about (4/3)π(1/dMin)³·V reciprocal-lattice points lie within 1/dMin, about one in
  // 2·(operations) is computed, each summing over every symmetry-generated atom position.
  const volumeNm3 = 1 / Math.sqrt(Math.max(1e-300, det3(gs)));
  const points = ((4 / 3) * Math.PI * volumeNm3) / dMin ** 3;
  const positions = sites.reduce((n, s) => n + s.pos.length, 0);
  const terms = (points / (2 * symops.length)) * positions;
  if (terms > MAX_STRUCTURE_FACTOR_TERMS) {
    throw new RangeError(`dMinNm ${dMin} gives about ${Math.round(points)} reflections over ${positions} atom positions, too much to compute (${terms.toExponential(1)} terms, at most ${MAX_STRUCTURE_FACTOR_TERMS.toExponential(0)}): raise dMinNm`);
  }
  const seen = new Set<string>();
  const out: PowderReflection[] = [];
  const key = (h: number[]) => h.join(',');
  for (let h = -hmax; h <= hmax; h++) {
    for (let k = -kmax; k <= kmax; k++) {
      for (let l = -lmax; l <= lmax; l++) {
        if (h === 0 && k === 0 && l === 0) continue;
        const v = [h, k, l];
        if (seen.has(key(v))) continue;
        let q2 = 0;
        for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) q2 += v[i] * gs[i * 3 + j] * v[j];
        const d = 1 / Math.sqrt(q2);
        if (d < dMin || d > dMax) continue;
        // equivalents h' = h R (row vector), with Friedel mates
        const eq = new Map<string, number[]>();
        let absent = false;
        for (const op of symops) {
          const hr = [0, 1, 2].map((j) => Math.round(v[0] * op.r[j] + v[1] * op.r[3 + j] + v[2] * op.r[6 + j]) || 0);
          eq.set(key(hr), hr);
          const neg = hr.map((x) => -x || 0);
          eq.set(key(neg), neg);
          if (hr[0] === h && hr[1] === k && hr[2] === l) {
            const phase = h * op.t[0] + k * op.t[1] + l * op.t[2];
            if (Math.abs(phase - Math.round(phase)) > 1e-6) absent = true;
          }
        }
        for (const kk of eq.keys()) seen.add(kk);
        const members = [...eq.values()];
        // representative: most non-negative indices, then largest lexicographically
        members.sort((a, b) => {
          const na = a.filter((x) => x >= 0).length;
          const nb = b.filter((x) => x >= 0).length;
          if (na !== nb) return nb - na;
          for (let i = 0; i < 3; i++) if (a[i] !== b[i]) return b[i] - a[i];
          return 0;
        });
        const rep = members[0] as [number, number, number];
        const sA = 1 / (2 * d * 10); // sin θ / λ in Å⁻¹
        let re = 0;
        let im = 0;
        for (const s of sites) {
          const f = scatteringFactor(s.atom.element, Math.min(sA, 6)) * s.atom.occupancy * Math.exp(-8 * Math.PI * Math.PI * s.atom.uIsoA2 * sA * sA);
          for (const p of s.pos) {
            const ph = 2 * Math.PI * (rep[0] * p[0] + rep[1] * p[1] + rep[2] * p[2]);
            re += f * Math.cos(ph);
            im += f * Math.sin(ph);
          }
        }
        const f2 = absent ? 0 : re * re + im * im;
        let twoTheta: number | null = null;
        let lp = 1;
        if (lambda !== undefined) {
          const st = lambda / (2 * d);
          if (st >= 1) continue;
          const th = Math.asin(st);
          twoTheta = (360 / Math.PI) * th;
          lp = lorentzPolarisation(twoTheta);
        }
        if (absent && !options.includeAbsent) continue;
        out.push({ hkl: rep, dNm: d, twoThetaDeg: twoTheta, multiplicity: members.length, f2, intensity: members.length * f2 * lp, absent });
      }
    }
  }
  const top = Math.max(0, ...out.filter((r) => !r.absent).map((r) => r.intensity));
  for (const r of out) r.intensity = top > 0 ? (100 * r.intensity) / top : 0;
  out.sort((a, b) => b.dNm - a.dNm || b.intensity - a.intensity);
  return out;
}
