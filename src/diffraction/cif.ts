/**
 * A small CIF reader (cell, space group, symmetry operations, atom sites) and powder reflection
 * lists from it: d, hkl, multiplicity, systematic absences and relative intensities.
 */
import { elementOf, scatteringFactor } from './scattering';

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

/** Reads "5.1963(4)" as { value: 5.1963, su: 0.0004 }; "?" and "." give NaN. */
export function parseCifNumber(text: string): CifNumber {
  const m = /^([-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?)(\((\d+)\))?$/.exec(text.trim());
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

/** Splits CIF text into tokens (quoted strings and ;-text fields kept whole). */
function tokenize(text: string): string[] {
  const tokens: string[] = [];
  const lines = text.split(/\r\n|\r|\n/);
  for (let i = 0; i < lines.length; i++) {
    const line = lines[i];
    if (line.startsWith(';')) {
      const parts = [line.slice(1)];
      i++;
      while (i < lines.length && !lines[i].startsWith(';')) parts.push(lines[i++]);
      tokens.push(parts.join('\n').trim());
      continue;
    }
    let j = 0;
    while (j < line.length) {
      const ch = line[j];
      if (ch === ' ' || ch === '\t') {
        j++;
        continue;
      }
      if (ch === '#') break;
      if (ch === "'" || ch === '"') {
        let k = j + 1;
        while (k < line.length && !(line[k] === ch && (k + 1 === line.length || /\s/.test(line[k + 1])))) k++;
        tokens.push(line.slice(j + 1, k));
        j = k + 1;
        continue;
      }
      let k = j;
      while (k < line.length && !/\s/.test(line[k])) k++;
      tokens.push(line.slice(j, k));
      j = k;
    }
  }
  return tokens;
}

/** Parses one component of a symmetry operation such as '-y+1/2' or 'x-y' into coefficients and shift. */
function parseComponent(expr: string, op: string): { row: number[]; t: number } {
  const row = [0, 0, 0];
  let t = 0;
  const s = expr.replace(/\s+/g, '').toLowerCase();
  const re = /([-+]?)(\d*\.?\d*(?:\/\d+)?)\*?([xyz]?)/g;
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

/**
 * Reads the first data block of a CIF: cell, space group, symmetry operations
 * (`_space_group_symop_operation_xyz` or `_symmetry_equiv_pos_as_xyz`) and atom sites with
 * occupancy and Uiso/Biso; numbers keep their su from the parentheses.
 *
 * @param text the CIF text
 * @returns the structure; dummy atoms (calc flag 'dum') and atoms without an element with a
 *   scattering factor are skipped and noted
 * Reference: Hall, Allen & Brown, Acta Cryst. A47, 655 (1991) (the CIF format).
 */
export function parseCif(text: string): CifStructure {
  const tokens = tokenize(text);
  const items = new Map<string, string>();
  const loops: Array<{ names: string[]; rows: string[][] }> = [];
  let name = '';
  let i = 0;
  while (i < tokens.length) {
    const tk = tokens[i];
    if (/^data_/i.test(tk)) {
      if (name) break;
      name = tk.slice(5);
      i++;
    } else if (/^loop_$/i.test(tk)) {
      i++;
      const names: string[] = [];
      while (i < tokens.length && tokens[i].startsWith('_')) names.push(tokens[i++].toLowerCase());
      const values: string[] = [];
      while (i < tokens.length && !tokens[i].startsWith('_') && !/^(loop_|data_)/i.test(tokens[i])) values.push(tokens[i++]);
      if (names.length === 0 || values.length % names.length !== 0) {
        throw new SyntaxError(`CIF loop (${names.join(' ')}) has ${values.length} values, not a multiple of ${names.length}`);
      }
      const rows: string[][] = [];
      for (let k = 0; k < values.length; k += names.length) rows.push(values.slice(k, k + names.length));
      loops.push({ names, rows });
    } else if (tk.startsWith('_')) {
      items.set(tk.toLowerCase(), tokens[i + 1] ?? '');
      i += 2;
    } else i++;
  }
  const notes: string[] = [];
  const num = (key: string, required: boolean): CifNumber => {
    const v = items.get(key);
    const n = v === undefined ? { value: NaN, su: 0 } : parseCifNumber(v);
    if (required && !Number.isFinite(n.value)) throw new SyntaxError(`CIF: ${key} is missing or not a number`);
    return n;
  };
  const len = (key: string) => {
    const n = num(key, true);
    return { value: n.value / 10, su: n.su / 10 };
  };
  const cell = {
    aNm: len('_cell_length_a'),
    bNm: len('_cell_length_b'),
    cNm: len('_cell_length_c'),
    alphaDeg: num('_cell_angle_alpha', true),
    betaDeg: num('_cell_angle_beta', true),
    gammaDeg: num('_cell_angle_gamma', true),
  };
  const sgName = items.get('_space_group_name_h-m_alt') ?? items.get('_symmetry_space_group_name_h-m') ?? null;
  const sgNumRaw = items.get('_space_group_it_number') ?? items.get('_symmetry_int_tables_number');
  const sgNum = sgNumRaw !== undefined && /^\d+$/.test(sgNumRaw) ? Number(sgNumRaw) : null;
  const findLoop = (col: string) => loops.find((l) => l.names.includes(col));
  let symops: SymOp[] = [];
  for (const col of ['_space_group_symop_operation_xyz', '_symmetry_equiv_pos_as_xyz']) {
    const l = findLoop(col);
    if (l) {
      const k = l.names.indexOf(col);
      symops = l.rows.map((r) => parseSymOp(r[k]));
      break;
    }
  }
  if (symops.length === 0) {
    const single = items.get('_space_group_symop_operation_xyz') ?? items.get('_symmetry_equiv_pos_as_xyz');
    symops = [parseSymOp(single ?? 'x,y,z')];
    notes.push('no symmetry-operation loop: only the listed operation (or the identity) is used');
  }
  const atoms: AtomSite[] = [];
  const al = findLoop('_atom_site_fract_x');
  if (!al) throw new SyntaxError('CIF: no _atom_site_fract_x loop');
  const col = (n: string) => al.names.indexOf(n);
  const [cl, ct, cx, cy, cz, co, cu, cb, cf] = [
    '_atom_site_label', '_atom_site_type_symbol', '_atom_site_fract_x', '_atom_site_fract_y', '_atom_site_fract_z',
    '_atom_site_occupancy', '_atom_site_u_iso_or_equiv', '_atom_site_b_iso_or_equiv', '_atom_site_calc_flag',
  ].map(col);
  for (const row of al.rows) {
    const label = cl >= 0 ? row[cl] : `atom${atoms.length + 1}`;
    if (cf >= 0 && row[cf].toLowerCase() === 'dum') {
      notes.push(`dummy atom ${label} skipped`);
      continue;
    }
    const xyz: [number, number, number] = [parseCifNumber(row[cx]).value, parseCifNumber(row[cy]).value, parseCifNumber(row[cz]).value];
    if (!xyz.every(Number.isFinite)) {
      notes.push(`atom ${label} skipped: coordinates not given`);
      continue;
    }
    let element: string;
    try {
      element = elementOf(ct >= 0 ? row[ct] : label);
      scatteringFactor(element, 0);
    } catch (e) {
      notes.push(`atom ${label} skipped: ${(e as Error).message}`);
      continue;
    }
    const occ = co >= 0 ? parseCifNumber(row[co]).value : 1;
    let u = cu >= 0 ? parseCifNumber(row[cu]).value : NaN;
    if (!Number.isFinite(u) && cb >= 0) u = parseCifNumber(row[cb]).value / (8 * Math.PI * Math.PI);
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
          if (st > 1) continue;
          const th = Math.asin(st);
          twoTheta = (360 / Math.PI) * th;
          lp = (1 + Math.cos(2 * th) ** 2) / (st * st * Math.cos(th));
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
