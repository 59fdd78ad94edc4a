/**
 * The radiation of a diffraction pattern: which wavelength (or Kα1/Kα2 doublet) was used, how
 * sure we are of it, and where it came from. Reads every common way a file header or a user
 * states it (Å, nm, pm, a photon energy in keV or eV, a named anode, a synchrotron wavelength)
 * and refuses statements that contradict each other, quoting them.
 */

/** hc in keV·nm: CODATA 2018 exact value 1.239841984…×10⁻⁶ eV·m. */
export const HC_KEV_NM = 1.239841984;

/** One anode's Kα lines. */
export interface AnodeLines {
  /** Element symbol. */
  element: 'Cr' | 'Fe' | 'Co' | 'Cu' | 'Mo' | 'Ag';
  /** Kα1 wavelength in nm. */
  ka1Nm: number;
  /** Kα2 wavelength in nm. */
  ka2Nm: number;
  /** Relative standard uncertainty of the Kα1 value as used here (scale and transcription included). */
  ka1RelU: number;
  /** Where the two values come from. */
  source: string;
}

/**
 * Kα lines of the common anodes, on the SI ångström scale except Fe (Bearden's Å* scale, which
 * differs by about 2×10⁻⁵; that difference is carried in its uncertainty).
 * Cu, Mo Kα1: International Tables for Crystallography Vol. C (2006) Table 4.2.2.6, with their
 * printed uncertainties (45 and 41 in the last digits); Cu, Co, Cr Kα1/Kα2: Hölzer et al., Phys.
 * Rev. A 56, 4554 (1997); Mo, Ag Kα2 and Ag Kα1: NIST X-ray transition energies (Deslattes et
 * al., Rev. Mod. Phys. 75, 35 (2003)); Fe: Bearden, Rev. Mod. Phys. 39, 78 (1967). Values other
 * than Cu and Mo Kα1 were read in secondary transcriptions (reference-values §1), so their
 * uncertainty here is 1×10⁻⁶ (2×10⁻⁵ for Fe), well above the tables' own.
 */
export const ANODES: readonly AnodeLines[] = [
  { element: 'Cr', ka1Nm: 0.2289726, ka2Nm: 0.2293651, ka1RelU: 1e-6, source: 'Hölzer et al., Phys. Rev. A 56, 4554 (1997)' },
  { element: 'Fe', ka1Nm: 0.1936042, ka2Nm: 0.193998, ka1RelU: 2e-5, source: 'Bearden, Rev. Mod. Phys. 39, 78 (1967) (Å* scale)' },
  { element: 'Co', ka1Nm: 0.1788996, ka2Nm: 0.1792835, ka1RelU: 1e-6, source: 'Hölzer et al., Phys. Rev. A 56, 4554 (1997)' },
  { element: 'Cu', ka1Nm: 0.154059292, ka2Nm: 0.15444274, ka1RelU: 2.9e-7, source: 'ITC C (2006) Table 4.2.2.6; Kα2 Hölzer et al. (1997)' },
  { element: 'Mo', ka1Nm: 0.070931713, ka2Nm: 0.0713607, ka1RelU: 5.8e-7, source: 'ITC C (2006) Table 4.2.2.6; Kα2 NIST X-ray transition energies' },
  { element: 'Ag', ka1Nm: 0.055942178, ka2Nm: 0.05638131, ka1RelU: 1e-6, source: 'NIST X-ray transition energies (Deslattes et al. 2003)' },
];

/** Kα2 : Kα1 intensity ratio by convention (Rachinger 1948, noted in ITC C §2.3.3.2). */
export const DEFAULT_KA2_RATIO = 0.5;

/**
 * Relative tolerance within which a stated wavelength is taken as a given anode line: wide
 * enough for the Bearden/SI scale difference (2×10⁻⁵) and values rounded to five digits
 * (1.5406 Å), narrow enough to keep Kα1, the weighted mean and Kα2 apart (Cu: 8×10⁻⁴ between
 * Kα1 and the mean) (common practice).
 */
const LINE_MATCH_REL = 2.5e-4;
/** Statements of the same quantity that differ by more than this are a conflict (rounding to four digits allowed). */
const CONFLICT_REL = 4e-4;

/** The radiation a pattern was measured with, as resolved from the file and the user. */
export interface Radiation {
  /** Wavelength used for d-spacings in nm (Kα1 when a doublet is modelled). */
  wavelengthNm: number;
  /** Kα2 wavelength in nm when a doublet is modelled, else null (single line). */
  ka2Nm: number | null;
  /** Kα2 : Kα1 intensity ratio when a doublet is modelled (0 for a single line). */
  ka2Ratio: number;
  /** Relative standard uncertainty of wavelengthNm (table, stated su, or the rounding of a stated value). */
  relUncertainty: number;
  /** What kind of source: a laboratory tube's Kα lines, a synchrotron, another single wavelength. */
  kind: 'tube' | 'synchrotron' | 'single';
  /** The anode, when known. */
  anode: AnodeLines['element'] | null;
  /** One line for every result: the wavelength and its doublet in words, e.g. "Cu Kα1 0.154059 nm + Kα2 0.154443 nm (ratio 0.5)". */
  label: string;
  /** Where it came from, quoting the file's line or the option, e.g. "header line 2: 'lambda1 = 1.540593 A'". */
  source: string;
  /** What was inferred (a unit, a Kα2 from the table...), for the user. */
  notes: string[];
}

/** Something a header line or an option says about the radiation. */
export interface RadiationStatement {
  /** 'ka1', 'ka2': an indexed line; 'primary': a wavelength without index; 'ratio': Kα2/Kα1; 'anode'; 'mono': Kα1 only; 'doublet': Kα2 present; 'synchrotron'. */
  kind: 'ka1' | 'ka2' | 'primary' | 'ratio' | 'anode' | 'mono' | 'doublet' | 'synchrotron';
  /** A wavelength in nm (ka1, ka2, primary), a ratio, or NaN. */
  value: number;
  /** Relative standard uncertainty of value (stated su, else the rounding of the digits given). */
  relU: number;
  /** The anode for 'anode'. */
  anode?: AnodeLines['element'];
  /** The words as written, for messages. */
  text: string;
  /** Where: "header line 3" or "option". */
  where: string;
  /** How the unit was decided, when it was not written. */
  unitNote?: string;
}

/** A radiation statement that cannot be used or that contradicts another; the message quotes them. */
export class RadiationError extends RangeError {
  override name = 'RadiationError';
}

const NUM = String.raw`(\d+(?:[.,]\d+)?(?:[eE][-+]?\d+)?)`;
const SU = String.raw`(?:\((\d{1,3})\)|\s*(?:±|\+/-|\+-)\s*(\d+(?:[.,]\d+)?(?:[eE][-+]?\d+)?))?`;
const UNIT = String.raw`(Å|Å|angstroms?|ångströms?|ang|A|nm|pm|keV|eV)?(?![A-Za-z])`;
const ANODE_NAMES = 'Cr|Fe|Co|Cu|Mo|Ag';

/** Relative rounding uncertainty of a number as written: half a unit of its last digit, rectangular. */
function roundingRelU(text: string, value: number): number {
  const mant = text.replace(/[eE].*$/, '').replace(',', '.');
  const dot = mant.indexOf('.');
  const decimals = dot < 0 ? 0 : mant.length - dot - 1;
  const exp = /[eE]([-+]?\d+)/.exec(text);
  const unit = 10 ** (-decimals + (exp ? Number(exp[1]) : 0));
  return value > 0 ? (0.5 * unit) / Math.sqrt(3) / value : 0;
}

/** The standard uncertainty written with a number: "(12)" in the last digits or "± 0.0002". */
function statedSu(numText: string, paren: string | undefined, pm: string | undefined): number | null {
  if (pm) return Number(pm.replace(',', '.'));
  if (paren) {
    const mant = numText.replace(/[eE].*$/, '').replace(',', '.');
    const dot = mant.indexOf('.');
    const decimals = dot < 0 ? 0 : mant.length - dot - 1;
    return Number(paren) * 10 ** -decimals;
  }
  return null;
}

/** The tube line a wavelength in nm is, if any: Kα1, Kα2 or the weighted mean (2Kα1 + Kα2)/3. */
export function identifyLine(nm: number): { anode: AnodeLines; line: 'ka1' | 'ka2' | 'mean' } | null {
  for (const a of ANODES) {
    if (Math.abs(nm / a.ka1Nm - 1) <= LINE_MATCH_REL) return { anode: a, line: 'ka1' };
    if (Math.abs(nm / a.ka2Nm - 1) <= LINE_MATCH_REL) return { anode: a, line: 'ka2' };
    if (Math.abs(nm / ((2 * a.ka1Nm + a.ka2Nm) / 3) - 1) <= LINE_MATCH_REL) return { anode: a, line: 'mean' };
  }
  return null;
}

/**
 * A value with a unit (or none) as a wavelength in nm. Energies become λ = hc/E. A number without
 * unit is read as Å when it lies in (0.3, 5) — the X-ray habit — or as nm when it is a tube line
 * in nm; any other bare number is refused, naming it, rather than risking a factor of ten.
 */
function toNm(numText: string, unitRaw: string | undefined, context: string): { nm: number; unitNote?: string } {
  const v = Number(numText.replace(',', '.'));
  const unit = (unitRaw ?? '').toLowerCase();
  if (!(v > 0) || !Number.isFinite(v)) throw new RadiationError(`${context}: wavelength ${numText} is not a positive number`);
  if (unit === 'nm') return { nm: v };
  if (unit === 'pm') return { nm: v / 1000 };
  if (unit === 'kev') return { nm: HC_KEV_NM / v };
  if (unit === 'ev') return { nm: HC_KEV_NM / (v / 1000) };
  if (unit !== '') return { nm: v / 10 };
  if (v > 0.3 && v < 5) return { nm: v / 10, unitNote: `${numText} has no unit: read as Å (the X-ray habit for values between 0.3 and 5)` };
  if (identifyLine(v)) return { nm: v, unitNote: `${numText} has no unit: read as nm (it is the ${identifyLine(v)!.anode.element} ${identifyLine(v)!.line === 'mean' ? 'Kα mean' : identifyLine(v)!.line === 'ka1' ? 'Kα1' : 'Kα2'} line in nm)` };
  throw new RadiationError(`${context}: wavelength ${numText} has no unit and could be Å or nm; write the unit (e.g. ${numText} Å or ${numText} nm) or give the wavelength as an option`);
}

/**
 * Reads what one header line says about the radiation.
 *
 * @param line the line's text (comment markers are ignored)
 * @param where how to name it in messages, e.g. "header line 3"
 * @returns the statements found (none when the line says nothing about the radiation)
 * @throws RadiationError for a wavelength without a usable unit
 *
 * Notes — what is recognised:
 * - indexed lines: `lambda1 = 1.540593 A, lambda2 = 1.544414 A`, `lambda_1`, `Alpha1: 1.54060`, `K-alpha1 1.540598 A`,
 *   `Kα2 wavelength (Å): 1.544390`, `WL1 1.5406`; a unit may stand in brackets before the value;
 * - a wavelength without index: `wavelength: 0.72932(2) Å`, `λ = 0.15406 nm`, `lambda 154.06 pm`,
 *   `lam = 0.41328`; a number glued to a word (`K-alpha1`, `Cu2O`) is never a value;
 * - an energy: `energy = 17.479 keV`, `E: 12398 eV` (λ = hc/E, CODATA 2018 hc); a wavelength
 *   written in keV or eV (`wavelength: 12.4 keV`) is read as the energy, with a note;
 * - a Kα2/Kα1 intensity ratio (`Ka2/Ka1 ratio 0.5`);
 * - an anode: `Anode: Cu`, `target = Mo`, `Cu K-alpha radiation`, `CuKa1`, `tube Co`, `wavelength: Cu`;
 * - a wavelength followed by a second number just above it (within 1 %) and a third between 0
 *   and 1: Kα1, Kα2 and their ratio (`Wavelength = 1.540560 1.544390 0.5`);
 * - Kα1 only: `monochromatic`, `Kα2 stripped/removed`, `Kα1 only`, `Johansson`, `primary
 *   (incident-beam) monochromator`, `Ge(111)`; a secondary or graphite monochromator passes Kα2;
 * - a synchrotron: `synchrotron`, `beamline`, `undulator`.
 * Reference: the header styles are common practice of diffractometer and beamline exports.
 */
export function radiationStatements(line: string, where: string): RadiationStatement[] {
  const out: RadiationStatement[] = [];
  const text = line.replace(/^\s*(#|;|!|\/\/|\*)+\s*/, '').trim();
  if (text === '') return out;
  const quoted = text.length > 80 ? `${text.slice(0, 77)}...` : text;
  const ctx = `${where} ('${quoted}')`;
  // ratios first: their "1" and "2" are not wavelengths. The value is the first number after the
  // ratio's words once the line indices (alpha1, Kα2) are skipped.
  let rest = text;
  const pair = /(?:k[\s_-]*)?(?:alpha|α|a)\s*2\s*(?:\/|:|to)\s*(?:k[\s_-]*)?(?:alpha|α|a)\s*1/i.exec(text);
  const word = /\bratio\b/i.exec(text);
  const marker = pair ?? word;
  if (marker && (pair || /(alpha|α|k\s*a)\s*2|k[\s_-]*(alpha|α|a)\s*2/i.test(text))) {
    const after = text.slice(marker.index + marker[0].length).replace(/(?:k[\s_-]*)?(?:alpha|α)\s*[12](?![0-9.,])|\bk[\s_-]*a\s*[12](?![0-9.,])/gi, ' ');
    const num = new RegExp(`^[^0-9\n]{0,30}?${NUM}`).exec(after);
    if (num) {
      const v = Number(num[1].replace(',', '.'));
      if (!(v >= 0 && v <= 1)) throw new RadiationError(`${ctx}: a Kα2/Kα1 ratio of ${v} is not between 0 and 1`);
      const spanEnd = marker.index + marker[0].length + num.index + num[0].length;
      out.push({ kind: 'ratio', value: v, relU: 0, text: text.slice(marker.index, Math.min(text.length, spanEnd)).trim(), where });
      rest = text.slice(0, marker.index) + ' ; ' + text.slice(Math.min(text.length, spanEnd));
    }
  }
  // indexed or plain wavelengths and energies
  const key = new RegExp(
    // a keyword ends where a letter does not follow: the 'a' of 'Kα' is not the start of 'alpha'
    String.raw`(k[\s_-]*(?:alpha|α|a)(?![a-zα])|\balpha(?=[\s_-]*[12](?![0-9.,]))|lambda|λ|\blam(?![a-z])|wave[\s_-]*length|\bwl|energy|\bE)[\s_-]*([12])?(?![0-9.,])([^0-9\n;,]{0,30}?)${NUM}${SU}\s*${UNIT}`,
    'gi',
  );
  let m: RegExpExecArray | null;
  while ((m = key.exec(rest)) !== null) {
    const [whole, k, idx, filler, num, paren, pm, unitAfter] = m;
    const kw = k.toLowerCase();
    // "Kα2 stripped; wavelength 1.5406": the number belongs to the later keyword
    const inner = /k[\s_-]*(?:alpha|α|a)\s*[12]|lambda|λ|energy/i.exec(filler);
    if (inner) {
      key.lastIndex = m.index + k.length + (idx?.length ?? 0);
      continue;
    }
    // a number glued to a word is part of it ('alpha1', 'Cu2O'), never a value
    if (/[a-zα_]$/i.test(filler)) {
      key.lastIndex = m.index + k.length + (idx?.length ?? 0);
      continue;
    }
    // a unit written in brackets before the value: "Kα1 wavelength (Å): 1.5406"
    const bracket = /[[(]\s*(Å|Å|angstroms?|ångströms?|ang|A|nm|pm|keV|eV)\s*[\])]/i.exec(filler);
    const unit = unitAfter ?? bracket?.[1];
    const isEnergy = /^(energy|e)$/.test(kw);
    if (isEnergy && !(unit && /^(kev|ev)$/i.test(unit))) continue; // "E" without an energy unit is not a radiation statement
    // a 'wavelength' stated in keV or eV is the photon energy: the unit says what it is
    const energyAsWavelength = !isEnergy && !!unit && /^(kev|ev)$/i.test(unit) && !/energy/i.test(filler);
    if (energyAsWavelength && !/^(lambda|λ|lam|wave[\s_-]*length|wl)$/i.test(kw.replace(/[\s_-]+/g, ''))) continue;
    // other numbers after a wavelength keyword: a voltage, a count, a step ("Wavelength 1 of 2")
    if (/\b(kv|ma|step|range|deg|°|time|count)/i.test(filler)) continue;
    const converted = toNm(num, unit, ctx);
    const nm = converted.nm;
    const unitNote = energyAsWavelength ? `${whole.trim()} is an energy (its unit is ${unit}): read as the photon energy, λ = hc/E = ${Number(nm.toPrecision(7))} nm` : converted.unitNote;
    const su = statedSu(num, paren, pm);
    const value = Number(num.replace(',', '.'));
    const relU = su !== null ? su / value : roundingRelU(num, value);
    const kind: RadiationStatement['kind'] = idx === '1' ? 'ka1' : idx === '2' ? 'ka2' : 'primary';
    // "Wavelength = 1.540560 1.544390 0.5": a second number just above the first (within 1 %, the
    // Kα doublet's spacing) is its Kα2, and a third between 0 and 1 their ratio; a second number
    // of any other size is not read, and a note says so
    const after = new RegExp(String.raw`^\s*[,;/]?\s*${NUM}(?:\s*[,;/]?\s*${NUM})?(?![0-9.,]*\s*[A-Za-zÅ°])`).exec(rest.slice(key.lastIndex));
    if (kind === 'primary' && after && !isEnergy && !energyAsWavelength) {
      let second = NaN;
      try {
        second = toNm(after[1], unit, ctx).nm;
      } catch {
        // not a wavelength at all: said in the note below
      }
      const ratio = after[2] !== undefined ? Number(after[2].replace(',', '.')) : NaN;
      if (second > nm * 1.0005 && second < nm * 1.01) {
        out.push({ kind: 'ka1', value: nm, relU, text: whole.trim(), where, unitNote });
        out.push({ kind: 'ka2', value: second, relU: roundingRelU(after[1], Number(after[1].replace(',', '.'))), text: `${whole.trim()} ${after[1]}`, where });
        if (ratio >= 0 && ratio <= 1) out.push({ kind: 'ratio', value: ratio, relU: 0, text: `${whole.trim()} ${after[1]} ${after[2]}`, where });
        key.lastIndex += after[0].length;
        continue;
      }
    }
    const unread = after && kind === 'primary' && !isEnergy ? `${unitNote ? `${unitNote}; ` : ''}the number after it on ${where} ('${after[0].trim()}') is not read as a wavelength` : unitNote;
    out.push({ kind, value: nm, relU, text: whole.trim(), where, unitNote: unread });
  }
  const anode = new RegExp(
    String.raw`(?:anode|target|tube|radiation|source|wave[\s_-]*length)\s*(?:material|type)?\s*[:=]?\s*(${ANODE_NAMES})\b|\b(${ANODE_NAMES})\s*[-_]?\s*(?:k[\s_-]*(?:alpha|α|a)|anode|tube|target|radiation)`,
    'i',
  ).exec(text);
  if (anode) {
    const sym = (anode[1] ?? anode[2]).toLowerCase();
    const el = ANODES.find((a) => a.element.toLowerCase() === sym)!;
    out.push({ kind: 'anode', value: NaN, relU: 0, anode: el.element, text: anode[0], where });
  }
  if (/synchrotron|beam\s*line|undulator|wiggler|bending\s+magnet/i.test(text)) out.push({ kind: 'synchrotron', value: NaN, relU: 0, text: quoted, where });
  if (/(secondary|diffracted[-\s]beam|graphite|curved\s+crystal)\s+monochromator/i.test(text)) {
    out.push({ kind: 'doublet', value: NaN, relU: 0, text: quoted, where });
  } else if (/monochromatic|k[\s_-]*(?:alpha|α|a)\s*2\s*(stripped|removed|subtracted)|(alpha|α|a)\s*1\s*only|johann?s+on|(primary|incident[-\s]beam)\s+monochromator|ge\s*\(\s*111\s*\)/i.test(text)) {
    out.push({ kind: 'mono', value: NaN, relU: 0, text: quoted, where });
  }
  return out;
}

/** What the user or caller says about the radiation, overriding the file. */
export interface RadiationOptions {
  /** Wavelength as typed: a preset ('CuKa1', 'Cu', 'MoKa', 'FeKa1'...), a value with unit ('1.5406A', '0.15406nm', '154.06pm', '17.479keV'). */
  wavelength?: string;
  /** Kα2 wavelength in nm to pair with `wavelength`. */
  ka2Nm?: number;
  /** 'none': the beam was Kα1 only (monochromatic); 'doublet': model Kα2. Default: from the file, else a tube's Kα1 implies the doublet. */
  ka2?: 'doublet' | 'none';
  /** Relative standard uncertainty of the wavelength, when known better or worse than the default. */
  relUncertainty?: number;
}

/**
 * A single number on a line of its own before the data (a common three-column export starts so):
 * read as the wavelength when it is plausible as one.
 *
 * @param token the number as written
 * @param where e.g. "line 1"
 * @returns the statement, or null when the number cannot be a wavelength (then the line is not one)
 * @throws RadiationError for a number that could be Å or nm
 */
export function bareWavelengthStatement(token: string, where: string): RadiationStatement | null {
  const v = Number(token.replace(',', '.'));
  if (!(v > 0.01 && v < 5)) return null;
  const { nm, unitNote } = toNm(token, undefined, `${where} ('${token}', a single number before the data)`);
  return { kind: 'primary', value: nm, relU: roundingRelU(token, v), text: token, where, unitNote: `${unitNote} — a single number before the data, taken as the wavelength` };
}

/**
 * Reads a wavelength typed by a user: a preset key, an anode name, or a value with its unit.
 *
 * @param text e.g. 'CuKa1', 'Cu', 'MoKa', '1.5406A', '0.15406 nm', '154.06pm', '17.479 keV', '0.72932(2)A'
 * @returns the statements it amounts to (a preset gives its anode and lines)
 * @throws RadiationError naming the text when it is none of these, or a bare number that could be Å or nm
 */
export function optionStatements(text: string): RadiationStatement[] {
  if (typeof text !== 'string') throw new RadiationError(`wavelength must be text, got ${typeof text}`);
  const t = text.trim();
  const compact = t.replace(/[\s_-]/g, '').replace(/α/g, 'a').toLowerCase();
  const preset = new RegExp(`^(${ANODE_NAMES})(ka1|ka2|ka|kalpha1|kalpha)?$`, 'i').exec(compact);
  if (preset) {
    const el = ANODES.find((a) => a.element.toLowerCase() === preset[1].toLowerCase())!;
    const which = preset[2]?.toLowerCase() ?? '';
    const s: RadiationStatement[] = [{ kind: 'anode', value: NaN, relU: 0, anode: el.element, text: t, where: 'option' }];
    if (which === 'ka2') throw new RadiationError(`wavelength '${text}': a pattern is measured with Kα1 (and Kα2), give ${el.element}Ka1`);
    if (which === 'ka' || which === 'kalpha') s.push({ kind: 'primary', value: (2 * el.ka1Nm + el.ka2Nm) / 3, relU: el.ka1RelU, text: t, where: 'option' });
    return s;
  }
  const m = new RegExp(`^${NUM}${SU}\\s*${UNIT}$`, 'i').exec(t.replace(/\s+/g, ' '));
  if (!m) throw new RadiationError(`wavelength '${text}' is neither a preset (${ANODES.map((a) => `${a.element}Ka1`).join(', ')}, or an anode name) nor a value with its unit (Å, nm, pm, keV or eV)`);
  const { nm, unitNote } = toNm(m[1], m[4], `wavelength '${text}'`);
  const su = statedSu(m[1], m[2], m[3]);
  const value = Number(m[1].replace(',', '.'));
  if (!(nm > 0 && nm <= 10)) throw new RadiationError(`wavelength '${text}' is ${nm} nm, outside (0, 10] nm`);
  return [{ kind: 'primary', value: nm, relU: su !== null ? su / value : roundingRelU(m[1], value), text: t, where: 'option', unitNote }];
}

const fmtNm = (nm: number) => `${Number(nm.toPrecision(7))} nm`;

/**
 * Resolves the radiation from everything the header and the user say.
 *
 * @param header statements from the header lines (radiationStatements of each)
 * @param options the user's wavelength, Kα2 choice and uncertainty (they win over the header)
 * @returns the radiation, or null when nothing names a wavelength
 * @throws RadiationError when statements contradict each other (two Kα1 values, an anode and a
 *   wavelength that is none of its lines, a stated Kα1 only with a Kα2 value...), quoting them
 *
 * Notes — the rules, in order:
 * - the option, when given, replaces every header wavelength (a differing header is noted);
 * - statements of one kind must agree within 4×10⁻⁴ (four-digit rounding); an anode must agree
 *   with every stated wavelength (its Kα1, Kα2 or weighted mean);
 * - a wavelength that is a tube's Kα1 (or its weighted mean, or an anode alone) means a Kα1/Kα2
 *   doublet with the table's Kα2 unless a Kα2 value is given, or the file or user says Kα1 only
 *   (monochromatic, Kα2 stripped, Johansson primary monochromator), or the ratio is 0; a
 *   synchrotron or any other wavelength is a single line;
 * - the Kα2 : Kα1 ratio is 0.5 unless stated (Rachinger convention);
 * - the uncertainty is the stated su, else the rounding of the digits given (half a unit of the
 *   last digit, rectangular), never below the table's own for a tube line.
 * Reference: Kα doublet and ratio: ITC C §2.3.3.2; wavelengths: see ANODES.
 */
export function resolveRadiation(header: RadiationStatement[], options: RadiationOptions = {}): Radiation | null {
  const notes: string[] = [];
  let statements = header;
  if (options.wavelength !== undefined) {
    const opt = optionStatements(options.wavelength);
    const hdrWave = header.filter((s) => s.kind === 'ka1' || s.kind === 'primary' || s.kind === 'anode');
    if (hdrWave.length) notes.push(`the header's ${hdrWave.map((s) => `'${s.text}' (${s.where})`).join(', ')} replaced by the option '${options.wavelength.trim()}'`);
    // the header's flags (monochromatic, ratio) still apply unless the option decides
    statements = [...opt, ...header.filter((s) => s.kind === 'mono' || s.kind === 'ratio' || s.kind === 'synchrotron' || s.kind === 'doublet')];
    if (options.ka2Nm !== undefined) statements.push({ kind: 'ka2', value: options.ka2Nm, relU: 0, text: `${options.ka2Nm} nm`, where: 'option' });
  }
  const of = (k: RadiationStatement['kind']) => statements.filter((s) => s.kind === k);
  const quote = (ss: RadiationStatement[]) => ss.map((s) => `'${s.text}' (${s.where})`).join(' and ');
  const agree = (ss: RadiationStatement[], what: string) => {
    for (const s of ss.slice(1)) {
      if (Math.abs(s.value / ss[0].value - 1) > CONFLICT_REL) throw new RadiationError(`conflicting ${what}: ${quote([ss[0], s])} (${fmtNm(ss[0].value)} against ${fmtNm(s.value)}); give the wavelength as an option to choose`);
    }
  };
  const anodes = of('anode');
  for (const a of anodes.slice(1)) if (a.anode !== anodes[0].anode) throw new RadiationError(`conflicting anodes: ${quote([anodes[0], a])}`);
  let ka1 = of('ka1');
  let ka2 = of('ka2');
  const primary = of('primary');
  agree(ka1, 'Kα1 wavelengths');
  agree(ka2, 'Kα2 wavelengths');
  // a wavelength without index is the Kα1, the weighted mean or a single line
  const means: RadiationStatement[] = [];
  const singles: RadiationStatement[] = [];
  for (const p of primary) {
    const id = identifyLine(p.value);
    if (id?.line === 'mean') means.push(p);
    else if (id?.line === 'ka2' && !ka2.length && ka1.length) ka2 = [...ka2, p];
    else singles.push(p);
  }
  agree(singles, 'wavelengths');
  agree(means, 'wavelengths');
  if (ka1.length && singles.length) {
    if (Math.abs(singles[0].value / ka1[0].value - 1) > CONFLICT_REL) throw new RadiationError(`conflicting wavelengths: ${quote([ka1[0], singles[0]])} (${fmtNm(ka1[0].value)} against ${fmtNm(singles[0].value)})`);
  }
  if (!ka1.length && singles.length) ka1 = singles;
  const anode = anodes.length ? ANODES.find((a) => a.element === anodes[0].anode)! : null;
  if (anode) {
    for (const s of [...ka1, ...means]) {
      const id = identifyLine(s.value);
      if (!id || id.anode.element !== anode.element) throw new RadiationError(`conflicting statements: ${quote([anodes[0], s])}: ${fmtNm(s.value)} is not a ${anode.element} Kα line (Kα1 ${fmtNm(anode.ka1Nm)})`);
    }
    for (const s of ka2) if (Math.abs(s.value / anode.ka2Nm - 1) > CONFLICT_REL) throw new RadiationError(`conflicting statements: ${quote([anodes[0], s])}: ${fmtNm(s.value)} is not ${anode.element} Kα2 (${fmtNm(anode.ka2Nm)})`);
  }
  const meanAnode = means.length ? identifyLine(means[0].value)!.anode : null;
  if (meanAnode && ka1.length) {
    const id = identifyLine(ka1[0].value);
    if (!id || id.anode.element !== meanAnode.element) throw new RadiationError(`conflicting wavelengths: ${quote([means[0], ka1[0]])}`);
  }
  const tube = anode ?? meanAnode ?? (ka1.length ? (identifyLine(ka1[0].value)?.line === 'ka1' ? identifyLine(ka1[0].value)!.anode : null) : null);
  if (!ka1.length && !tube) {
    if (ka2.length) throw new RadiationError(`a Kα2 wavelength ${quote(ka2)} without a Kα1 wavelength or an anode`);
    if (of('synchrotron').length) throw new RadiationError(`a synchrotron is named (${quote(of('synchrotron'))}) but no wavelength or energy is stated: give the wavelength as an option`);
    return null;
  }
  // single line or doublet
  const ratios = of('ratio');
  for (const r of ratios.slice(1)) if (Math.abs(r.value - ratios[0].value) > 0.02) throw new RadiationError(`conflicting Kα2/Kα1 ratios: ${quote([ratios[0], r])}`);
  const monoSaid = of('mono');
  const synchrotron = of('synchrotron');
  if (monoSaid.length && ka2.length) throw new RadiationError(`conflicting statements: ${quote([monoSaid[0], ka2[0]])}: Kα1 only, yet a Kα2 wavelength is given`);
  if (ratios.length && ratios[0].value > 0 && monoSaid.length) throw new RadiationError(`conflicting statements: ${quote([monoSaid[0], ratios[0]])}: Kα1 only, yet a Kα2 ratio is given`);
  let doublet: boolean;
  let why: string;
  if (options.ka2 === 'none') {
    doublet = false;
    why = 'Kα1 only (option)';
  } else if (options.ka2 === 'doublet') {
    doublet = true;
    why = 'Kα2 modelled (option)';
  } else if (monoSaid.length) {
    doublet = false;
    why = `Kα1 only: ${quote(monoSaid)}`;
  } else if (ratios.length && ratios[0].value === 0) {
    doublet = false;
    why = `Kα1 only: ${quote(ratios)}`;
  } else if (ka2.length) {
    doublet = true;
    why = `Kα2 stated: ${quote(ka2)}`;
  } else if (tube && !synchrotron.length) {
    doublet = true;
    why = `a ${tube.element} tube gives Kα1 and Kα2: Kα2 ${fmtNm(tube.ka2Nm)} from ${tube.source} (say Kα1 only or monochromatic if the beam was)`;
  } else {
    doublet = false;
    why = synchrotron.length ? `synchrotron: a single wavelength (${quote(synchrotron)})` : 'a single wavelength (not a tube line)';
  }
  let wavelengthNm: number;
  let relU: number;
  let src: RadiationStatement[];
  if (ka1.length) {
    wavelengthNm = ka1[0].value;
    relU = Math.max(...ka1.map((s) => s.relU));
    src = ka1;
    const id = identifyLine(wavelengthNm);
    if (id?.line === 'ka1') relU = Math.max(relU, id.anode.ka1RelU);
  } else if (tube && (means.length || anodes.length)) {
    // an anode alone, or the weighted mean: the doublet's Kα1 comes from the table
    src = means.length ? [...means, ...anodes] : anodes;
    if (means.length && !doublet) {
      // an unresolved doublet described by its weighted mean, fitted as one line
      wavelengthNm = means[0].value;
      relU = Math.max(means[0].relU, tube.ka1RelU);
      notes.push(`${quote(means)} is the weighted mean of the ${tube.element} Kα doublet, used as one line (no Kα2 modelled)`);
    } else {
      wavelengthNm = tube.ka1Nm;
      relU = tube.ka1RelU;
      if (means.length) notes.push(`${quote(means)} is the weighted mean of the ${tube.element} Kα doublet: Kα1 ${fmtNm(tube.ka1Nm)} and Kα2 ${fmtNm(tube.ka2Nm)} from ${tube.source} are used`);
      else notes.push(`${tube.element} Kα1 ${fmtNm(tube.ka1Nm)} from ${tube.source}`);
    }
  } else {
    throw new RadiationError('no wavelength could be resolved');
  }
  let ka2Nm: number | null = null;
  if (doublet) {
    ka2Nm = ka2.length ? ka2[0].value : tube ? tube.ka2Nm : null;
    if (ka2Nm === null) throw new RadiationError(`Kα2 is to be modelled but ${fmtNm(wavelengthNm)} is not a known tube's Kα1: give the Kα2 wavelength`);
    if (!(ka2Nm > wavelengthNm && ka2Nm < wavelengthNm * 1.01)) throw new RadiationError(`Kα2 ${fmtNm(ka2Nm)} must lie just above Kα1 ${fmtNm(wavelengthNm)} (within 1 %)`);
  }
  if (options.relUncertainty !== undefined) {
    if (!(options.relUncertainty >= 0 && options.relUncertainty < 0.1)) throw new RadiationError(`the wavelength's relative uncertainty must be in [0, 0.1), got ${options.relUncertainty}`);
    relU = options.relUncertainty;
  } else if (synchrotron.length && !src.some((s) => /\(|±|\+\//.test(s.text))) {
    notes.push('a synchrotron wavelength without a stated uncertainty: only the rounding of its digits is in the budget (give the beamline calibration\'s uncertainty as an option)');
  }
  for (const s of statements) if (s.unitNote) notes.push(`${s.where}: ${s.unitNote}`);
  const ratio = doublet ? (ratios.length ? ratios[0].value : DEFAULT_KA2_RATIO) : 0;
  const tubeLine = identifyLine(wavelengthNm);
  const name = tubeLine?.line === 'ka1' ? `${tubeLine.anode.element} Kα1 ` : synchrotron.length ? 'synchrotron ' : '';
  const label = `${name}${fmtNm(wavelengthNm)}${doublet ? ` + Kα2 ${fmtNm(ka2Nm!)} (ratio ${ratio})` : ' (single line)'}`;
  const origin = src.map((s) => (s.where === 'option' ? `option '${s.text}'` : `${s.where}: '${s.text}'`));
  if (!src.some((s) => s.where === 'option') && !ka1.length && tube) origin.push(`table: ${tube.source}`);
  notes.push(why);
  return {
    wavelengthNm,
    ka2Nm,
    ka2Ratio: ratio,
    relUncertainty: relU,
    kind: synchrotron.length ? 'synchrotron' : tube ? 'tube' : 'single',
    anode: tube?.element ?? null,
    label,
    source: origin.join('; '),
    notes,
  };
}
