/**
 * Reading a measured powder profile from a CIF (the powder dictionary's `_pd_` data names): the
 * intensities of a profile loop, their 2θ from the loop or from the scan's start, step and end,
 * their standard uncertainties when every point carries one, and the radiation from the
 * `_diffrn_radiation_` items.
 */
import { CifError, parseCifNumber, readCifBlocks, type CifBlock, type CifLoop, type CifValue } from './cif';
import { assemblePattern, type ParsePatternOptions, type Pattern } from './pattern';
import { PROFILE_INTENSITY_NAMES } from './profile-names';
import { RadiationError, radiationStatements, type RadiationStatement } from './radiation';

/** 2θ columns of a profile loop, best first (degrees). */
const TWO_THETA_NAMES = ['_pd_meas_2theta_scan', '_pd_proc_2theta_corrected', '_pd_meas_angle_2theta', '_pd_proc_2theta_scan'];

/** Scan ranges (start, end, step in degrees) for a loop without a 2θ column, best first. */
const RANGE_PREFIXES = ['_pd_meas_2theta_range', '_pd_proc_2theta_range'];

/** Abscissae of other kinds of powder data, which are not 2θ scans. */
const OTHER_AXES: Record<string, string> = {
  '_pd_meas_time_of_flight': 'a time-of-flight profile',
  '_pd_meas_position': 'a profile against detector position',
  '_pd_proc_energy_incident': 'an energy-dispersive profile',
  '_pd_proc_d_spacing': 'a profile against d-spacing',
  '_pd_proc_recip_len_q': 'a profile against q',
};

/**
 * Whether a text is a CIF: its first line that is neither blank nor a comment starts a data block
 * (`data_NAME`), as the CIF grammar requires, and lines start with data names or loops.
 */
export function isCifText(text: string): boolean {
  if (typeof text !== 'string') return false;
  const head = text.slice(0, 1 << 16).replace(/^\uFEFF/, '');
  for (const line of head.split(/\r\n|\r|\n/)) {
    const t = line.trim();
    if (t === '' || t.startsWith('#')) continue;
    // a CIF's data names and loops start their lines; a header word such as 'data_set' alone does not make one
    return /^data_\S/i.test(t) && /^\s*(?:loop_|_[A-Za-z])/im.test(head);
  }
  return false;
}

/**
 * DDLm names write the category with a dot (`_pd_meas.counts_total`,
 * `_diffrn_radiation_wavelength.value`): read as their DDL1 spelling.
 */
function ddl1(name: string): string {
  if (!name.includes('.')) return name;
  return name.replace('.', '_').replace(/^_diffrn_radiation_wavelength_value$/, '_diffrn_radiation_wavelength');
}

/** A block with every data name in its DDL1 spelling. */
function normalised(block: CifBlock): CifBlock {
  const items = new Map<string, CifValue>();
  for (const [k, v] of block.items) items.set(ddl1(k), v);
  const loops: CifLoop[] = block.loops.map((l) => ({ ...l, names: l.names.map(ddl1) }));
  const loopOf = new Map<string, number>();
  loops.forEach((l, i) => l.names.forEach((n) => loopOf.set(n, i)));
  return { ...block, items, loops, loopOf };
}

/** The statements the radiation items of a block make, each naming its line. */
function radiationOf(block: CifBlock, notes: string[]): RadiationStatement[] {
  const out: RadiationStatement[] = [];
  const where = (v: CifValue) => `line ${v.line}`;
  const wl = block.loopOf.get('_diffrn_radiation_wavelength');
  const waves: Array<{ value: CifValue; weight: number }> = [];
  if (wl !== undefined) {
    const loop = block.loops[wl];
    const kv = loop.names.indexOf('_diffrn_radiation_wavelength');
    const kw = loop.names.indexOf('_diffrn_radiation_wavelength_wt');
    for (const row of loop.rows) waves.push({ value: row[kv], weight: kw >= 0 ? parseCifNumber(row[kw].text).value : NaN });
  } else {
    const single = block.items.get('_diffrn_radiation_wavelength') ?? block.items.get('_pd_proc_wavelength');
    if (single) waves.push({ value: single, weight: NaN });
  }
  const usable = waves.filter((w) => Number.isFinite(parseCifNumber(w.value.text).value));
  // a wavelength in a CIF is in Å (core dictionary); each becomes a statement with its index
  const statement = (w: { value: CifValue }, index: '' | '1' | '2') =>
    radiationStatements(`lambda${index} = ${w.value.text} A`, where(w.value)).map((s) => ({ ...s, text: `_diffrn_radiation_wavelength ${w.value.text}` }));
  if (usable.length === 1) out.push(...statement(usable[0], ''));
  else if (usable.length >= 2) {
    const byWeight = [...usable].sort((a, b) => (Number.isFinite(b.weight) ? b.weight : 0) - (Number.isFinite(a.weight) ? a.weight : 0));
    const [first, second] = Number.isFinite(byWeight[0].weight) ? byWeight : usable;
    out.push(...statement(first, '1'), ...statement(second, '2'));
    if (Number.isFinite(first.weight) && Number.isFinite(second.weight) && first.weight > 0) {
      out.push({ kind: 'ratio', value: second.weight / first.weight, relU: 0, text: `_diffrn_radiation_wavelength_wt ${second.weight} / ${first.weight}`, where: where(second.value) });
    }
    if (usable.length > 2) notes.push(`${usable.length} wavelengths listed: the two of largest weight are read as Kα1 and Kα2`);
  }
  // the radiation's kind, the source and the monochromator, in words the header rules read
  const type = block.items.get('_diffrn_radiation_type') ?? block.items.get('_diffrn_radiation_xray_symbol');
  if (type) {
    const words = type.text.replace(/\\a/g, 'α').replace(/~/g, '');
    out.push(...radiationStatements(`radiation ${words}`, where(type)).filter((s) => s.kind === 'anode' || s.kind === 'synchrotron'));
  }
  for (const key of ['_diffrn_source', '_diffrn_source_type', '_diffrn_radiation_source']) {
    const v = block.items.get(key);
    if (v) out.push(...radiationStatements(v.text, where(v)).filter((s) => s.kind === 'synchrotron'));
  }
  const target = block.items.get('_diffrn_source_target');
  if (target) out.push(...radiationStatements(`target ${target.text}`, where(target)).filter((s) => s.kind === 'anode'));
  const mono = block.items.get('_diffrn_radiation_monochromator');
  if (mono) out.push(...radiationStatements(/monochromator/i.test(mono.text) ? mono.text : `${mono.text} monochromator`, where(mono)).filter((s) => s.kind === 'mono' || s.kind === 'doublet'));
  const probe = block.items.get('_diffrn_radiation_probe');
  if (probe && /neutron|electron/i.test(probe.text)) {
    out.push({ kind: 'mono', value: NaN, relU: 0, text: `_diffrn_radiation_probe ${probe.text} (a single wavelength)`, where: where(probe) });
  }
  return out;
}

/**
 * Reads the measured powder profile of a CIF.
 *
 * @param text the CIF's contents
 * @param fileName its name, for messages
 * @param options axis and wavelength overriding the file (as for parsePattern)
 * @returns the pattern, with what was read and from where listed in its notes
 * @throws CifError naming the file and the line: no profile loop, a profile against time of
 *   flight, d or q, a loop without 2θ and no scan range, a scan range whose number of points is
 *   not the loop's, intensities that are not numbers; and the reading rules of assemblePattern
 *
 * Notes — the rules:
 * - the first data block holding a profile loop is read (other blocks with a profile are noted);
 * - intensities from `_pd_meas_counts_total`, else `_pd_meas_intensity_total`, else
 *   `_pd_proc_intensity_total`, else `_pd_proc_intensity_net`; calculated intensities never;
 * - 2θ from the loop (`_pd_meas_2theta_scan`, `_pd_proc_2theta_corrected`...), else from
 *   `_pd_meas_2theta_range_min`, `_max` and `_inc` (or the `_pd_proc_` range): the number of
 *   points must match the loop's, within one;
 * - the su in parentheses becomes the intensity's uncertainty when every point has one; a point
 *   whose intensity is '.' or '?' (excluded or unknown) is left out, noted;
 * - wavelengths in Å from `_diffrn_radiation_wavelength` (a loop of two with their weights `_wt`
 *   is Kα1, Kα2 and their ratio), the anode from `_diffrn_radiation_type` or
 *   `_diffrn_source_target`, a synchrotron from `_diffrn_source`, Kα1 only from a primary
 *   monochromator; they are resolved with the rules of resolveRadiation;
 * - DDLm names (`_pd_meas.counts_total`) are read as their DDL1 spelling.
 * Reference: the powder CIF dictionary (cif_pd.dic, IUCr), Toby, International Tables for
 * Crystallography Vol. G (2006), the pdCIF chapter (from memory); CIF 1.1 syntax (IUCr).
 */
export function parsePowderCif(text: string, fileName: string, options: ParsePatternOptions = {}): Pattern {
  if (typeof text !== 'string') throw new TypeError(`parsePowderCif: text must be a string, got ${typeof text}`);
  if (typeof fileName !== 'string') throw new TypeError(`parsePowderCif: fileName must be a string, got ${typeof fileName}`);
  const fail = (line: number | null, reason: string): never => {
    throw new CifError(fileName, line, reason);
  };
  const { blocks } = readCifBlocks(text, fail);
  if (blocks.length === 0) fail(null, 'no data block (a CIF starts with data_NAME)');
  const withProfile = blocks.map(normalised).filter((b) => PROFILE_INTENSITY_NAMES.some((n) => b.loopOf.has(n)));
  if (withProfile.length === 0) {
    for (const b of blocks.map(normalised)) {
      for (const [name, what] of Object.entries(OTHER_AXES)) {
        if (b.loopOf.has(name)) fail(b.loops[b.loopOf.get(name)!].line, `${what} (${name}): only 2θ scans are read`);
      }
    }
    fail(null, `no measured powder profile (a loop of ${PROFILE_INTENSITY_NAMES.join(', ')}); a structure file is given as a structure, not as a pattern`);
  }
  const block = withProfile[0];
  const notes: string[] = [`CIF data block '${block.name}' (line ${block.line})`];
  if (options.columns !== undefined) notes.push(`the columns '${options.columns}' do not apply: a CIF names its columns`);
  if (withProfile.length > 1) notes.push(`${withProfile.length - 1} more data block(s) with a profile not read: ${withProfile.slice(1).map((b) => `'${b.name}'`).join(', ')}`);
  const intensityName = PROFILE_INTENSITY_NAMES.find((n) => block.loopOf.has(n))!;
  const loop = block.loops[block.loopOf.get(intensityName)!];
  for (const [name, what] of Object.entries(OTHER_AXES)) {
    if (loop.names.includes(name) && !TWO_THETA_NAMES.some((n) => loop.names.includes(n))) fail(loop.line, `${what} (${name}): only 2θ scans are read`);
  }
  const ky = loop.names.indexOf(intensityName);
  const suName = `${intensityName}_su`;
  const ks = loop.names.indexOf(suName);
  const xName = TWO_THETA_NAMES.find((n) => loop.names.includes(n));
  let xAt: (row: number) => number;
  if (xName) {
    const kx = loop.names.indexOf(xName);
    xAt = (r) => parseCifNumber(loop.rows[r][kx].text).value;
    notes.push(`2θ from ${xName}, intensities from ${intensityName} (${loop.rows.length} points)`);
  } else {
    const prefix = RANGE_PREFIXES.find((p) => block.items.has(`${p}_min`) && block.items.has(`${p}_inc`));
    if (!prefix) return fail(loop.line, `the profile loop has no 2θ column (${TWO_THETA_NAMES.join(', ')}) and the block no scan range (_pd_meas_2theta_range_min, _max, _inc)`);
    const item = (suffix: string) => {
      const v = block.items.get(`${prefix}_${suffix}`);
      const n = v ? parseCifNumber(v.text).value : NaN;
      return { v, n };
    };
    const min = item('min');
    const inc = item('inc');
    const max = item('max');
    if (!Number.isFinite(min.n)) return fail(min.v!.line, `${prefix}_min '${min.v!.text.slice(0, 40)}' is not a number`);
    if (!(inc.n > 0)) return fail(inc.v!.line, `${prefix}_inc '${inc.v!.text.slice(0, 40)}' must be a positive step`);
    if (max.v && Number.isFinite(max.n)) {
      const expected = Math.round((max.n - min.n) / inc.n) + 1;
      if (Math.abs(expected - loop.rows.length) > 1) {
        fail(loop.line, `the scan ${min.v!.text}° to ${max.v.text}° in steps of ${inc.v!.text}° has ${expected} points, the profile loop ${loop.rows.length}`);
      }
    }
    xAt = (r) => min.n + r * inc.n;
    notes.push(`2θ from ${prefix}_min ${min.v!.text}° and _inc ${inc.v!.text}°, intensities from ${intensityName} (${loop.rows.length} points)`);
  }
  const x: number[] = [];
  const y: number[] = [];
  const sigma: number[] = [];
  const lineNo: number[] = [];
  let skipped = 0;
  let withSu = 0;
  for (let r = 0; r < loop.rows.length; r++) {
    const row = loop.rows[r];
    const cell = row[ky];
    if (!cell.quoted && (cell.text === '.' || cell.text === '?')) {
      skipped++;
      continue;
    }
    const v = parseCifNumber(cell.text);
    if (!Number.isFinite(v.value)) fail(cell.line, `${intensityName} '${cell.text.slice(0, 40)}' is not a number`);
    const xv = xAt(r);
    if (!Number.isFinite(xv)) fail(cell.line, `the 2θ of this point ('${xName ? row[loop.names.indexOf(xName)].text.slice(0, 40) : ''}') is not a number`);
    const su = ks >= 0 ? parseCifNumber(row[ks].text).value : v.su;
    if (su > 0) withSu++;
    x.push(xv);
    y.push(v.value);
    sigma.push(su);
    lineNo.push(cell.line);
  }
  if (skipped) notes.push(`${skipped} point(s) without an intensity ('.' or '?') left out`);
  const allSu = withSu === x.length && x.length > 0;
  if (withSu > 0 && !allSu) notes.push(`${withSu} of ${x.length} points carry an su: none is used (uncertainties from the counts)`);
  let statements: RadiationStatement[] = [];
  try {
    statements = radiationOf(block, notes);
  } catch (e) {
    // items the user's wavelength overrides need not be readable
    if (!(e instanceof RadiationError) || options.wavelength === undefined) throw e;
    notes.push(`${e.message} (ignored: the wavelength was given as an option)`);
  }
  return assemblePattern({ x, y, sigma: allSu ? sigma : null, lineNo, axis: 'twoThetaDeg', statements, notes }, options);
}
