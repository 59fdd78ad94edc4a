import { readFileSync } from 'node:fs';
import { describe, expect, test } from 'vitest';
import { CifError, dSpacingNm, parseCif, parseCifNumber, parseSymOp, powderReflections } from '../../src/diffraction/cif';
import { elementOf, scatteringFactor } from '../../src/diffraction/scattering';

const DIR = 'tests/fixtures/reference-data/';
const read = (f: string) => parseCif(readFileSync(DIR + f, 'utf8'));

describe('CIF reading', () => {
  test('numbers with su in parentheses', () => {
    expect(parseCifNumber('5.1963(4)')).toEqual({ value: 5.1963, su: expect.closeTo(0.0004, 12) });
    expect(parseCifNumber('29.97049(160)').su).toBeCloseTo(0.0016, 12);
    expect(parseCifNumber('-0.230(1)').value).toBe(-0.23);
    expect(Number.isNaN(parseCifNumber('?').value)).toBe(true);
  });
  test('symmetry operations with fractions in either order', () => {
    const op = parseSymOp('-y,x-y,1/3+z');
    expect(op.r).toEqual([0, -1, 0, 1, -1, 0, 0, 0, 1]);
    expect(op.t[2]).toBeCloseTo(1 / 3, 12);
    expect(parseSymOp('x+1/2,-y,z').t[0]).toBe(0.5);
    expect(() => parseSymOp('x,y')).toThrow(/three components/);
    expect(() => parseSymOp('x,y,w')).toThrow(/cannot read/);
  });
  test('muscovite-3T: P3₁12 (151), a = 5.1963(4) Å, c = 29.97049(160) Å, six operations, dummy H skipped (COD 1100015)', () => {
    const s = read('crystal_muscovite-3T_COD1100015.cif');
    expect(s.spaceGroupNumber).toBe(151);
    expect(s.cell.aNm.value).toBeCloseTo(0.51963, 10);
    expect(s.cell.aNm.su).toBeCloseTo(0.00004, 10);
    expect(s.cell.cNm.value).toBeCloseTo(2.997049, 10);
    expect(s.symops).toHaveLength(6);
    expect(s.atoms).toHaveLength(13);
    expect(s.notes.join()).toMatch(/dummy atom H1/);
  });
  test('element symbols from CIF type symbols', () => {
    expect(elementOf('Al3+')).toBe('Al');
    expect(elementOf('O2-')).toBe('O');
    expect(elementOf('C0')).toBe('C');
    expect(elementOf('FE')).toBe('Fe');
  });
});

describe('scattering factors (ITC C Table 6.1.1.4)', () => {
  test('f(0) = a1+a2+a3+a4+c is close to the atomic number Z (neutral atoms; physics of the form factor)', () => {
    for (const [el, z] of [['H', 1], ['C', 6], ['O', 8], ['Mg', 12], ['Al', 13], ['Si', 14], ['Cl', 17], ['K', 19], ['Fe', 26]] as const) {
      expect(Math.abs(scatteringFactor(el, 0) - z)).toBeLessThan(0.02); // the 9-parameter fit reproduces f(0) to ~0.01 e (from memory)
    }
  });
  test('f falls with s and unknown elements are named in the error', () => {
    expect(scatteringFactor('Si', 0.5)).toBeLessThan(scatteringFactor('Si', 0.1));
    expect(() => scatteringFactor('Xx', 0)).toThrow(/Xx/);
  });
});

describe('reflections against the d-values computed from the cells in SOURCES.md', () => {
  test('graphite-2H: 002 at 3.395 Å, 100 2.139, 101 2.040, 004 1.698, 110 1.235; 001 absent (6₃ screw)', () => {
    const s = read('crystal_graphite-2H_COD1200017.cif');
    const r = powderReflections(s, { dMinNm: 0.12, wavelengthNm: 0.1540598, includeAbsent: true });
    const find = (h: number, k: number, l: number) => r.find((x) => x.hkl[0] === h && x.hkl[1] === k && x.hkl[2] === l)!;
    expect(find(0, 0, 2).dNm * 10).toBeCloseTo(3.395, 3);
    expect(find(0, 0, 2).twoThetaDeg!).toBeCloseTo(26.23, 2);
    expect(find(1, 0, 0).dNm * 10).toBeCloseTo(2.139, 3);
    expect(find(1, 0, 1).dNm * 10).toBeCloseTo(2.04, 3);
    expect(find(0, 0, 4).dNm * 10).toBeCloseTo(1.698, 3);
    expect(find(1, 1, 0).dNm * 10).toBeCloseTo(1.235, 3);
    expect(find(0, 0, 1).absent).toBe(true);
    expect(find(0, 0, 3).absent).toBe(true);
    // 002 is the strongest graphite line (common practice)
    expect(find(0, 0, 2).intensity).toBeCloseTo(100, 9);
    expect(find(1, 0, 0).multiplicity).toBe(6);
  });
  test('muscovite-3T: basal 003 at 9.990 Å (8.84°), 006 4.995, 009 3.330, 00 12 2.4975, 00 15 1.998; 00l with l ≠ 3n absent (3₁ screw)', () => {
    const s = read('crystal_muscovite-3T_COD1100015.cif');
    const r = powderReflections(s, { dMinNm: 0.19, wavelengthNm: 0.1540598, includeAbsent: true });
    const basal = r.filter((x) => x.hkl[0] === 0 && x.hkl[1] === 0);
    const present = basal.filter((x) => !x.absent).map((x) => x.hkl[2]);
    expect(present).toEqual([3, 6, 9, 12, 15]);
    expect(basal.filter((x) => x.absent).map((x) => x.hkl[2])).toEqual([1, 2, 4, 5, 7, 8, 10, 11, 13, 14]);
    const d = basal.filter((x) => !x.absent).map((x) => x.dNm * 10);
    [9.99, 4.995, 3.33, 2.4975, 1.998].forEach((v, i) => expect(d[i]).toBeCloseTo(v, 3));
    expect(basal[2].twoThetaDeg!).toBeCloseTo(8.84, 2);
  });
  test('brucite: 001 at 4.766 Å (18.60°), 100 2.721, 101 2.363, 102 1.793, 110 1.571', () => {
    const s = read('crystal_brucite_COD1000054.cif');
    const c = s.cell;
    expect(dSpacingNm(c, 0, 0, 1) * 10).toBeCloseTo(4.766, 3);
    expect(dSpacingNm(c, 1, 0, 0) * 10).toBeCloseTo(2.721, 3);
    expect(dSpacingNm(c, 1, 0, 1) * 10).toBeCloseTo(2.363, 3);
    expect(dSpacingNm(c, 1, 0, 2) * 10).toBeCloseTo(1.793, 3);
    expect(dSpacingNm(c, 1, 1, 0) * 10).toBeCloseTo(1.571, 3);
    const r = powderReflections(s, { dMinNm: 0.15, wavelengthNm: 0.1540598 });
    expect(r[0].hkl).toEqual([0, 0, 1]);
    expect(r[0].twoThetaDeg!).toBeCloseTo(18.6, 2);
    expect(r.every((x) => !x.absent)).toBe(true); // P-3m1 has no reflection conditions (ITC A)
  });
  test('centring is found from the operations: an I-centred cubic cell keeps only h+k+l even (ITC A reflection conditions)', () => {
    const cif = `data_test\n_cell_length_a 4\n_cell_length_b 4\n_cell_length_c 4\n_cell_angle_alpha 90\n_cell_angle_beta 90\n_cell_angle_gamma 90\nloop_\n_symmetry_equiv_pos_as_xyz\nx,y,z\nx+1/2,y+1/2,z+1/2\nloop_\n_atom_site_label\n_atom_site_type_symbol\n_atom_site_fract_x\n_atom_site_fract_y\n_atom_site_fract_z\nFe1 Fe 0.1 0.2 0.3\n`;
    const r = powderReflections(parseCif(cif), { dMinNm: 0.15, includeAbsent: true });
    for (const x of r) expect(x.absent).toBe((x.hkl[0] + x.hkl[1] + x.hkl[2]) % 2 !== 0);
    expect(() => powderReflections(parseCif(cif), { dMinNm: 0 })).toThrow(/dMinNm/);
  });
});

describe('displacement parameters and quoted values', () => {
  const base = (extra: string, row: string) => `data_dw\n_cell_length_a 3\n_cell_length_b 3\n_cell_length_c 3\n_cell_angle_alpha 90\n_cell_angle_beta 90\n_cell_angle_gamma 90\n_symmetry_space_group_name_H-M 'P 1'\nloop_\n_space_group_symop_operation_xyz\n'x, y, z'\nloop_\n_atom_site_label\n_atom_site_type_symbol\n_atom_site_fract_x\n_atom_site_fract_y\n_atom_site_fract_z\n_atom_site_occupancy\n${extra}\n${row}\n`;
  test('Biso is read as U = B/(8π²) and damps |F|² by exp(−2B s²) (Debye–Waller, ITC C §6.1.1.3, from memory)', () => {
    const u = parseCif(base('_atom_site_U_iso_or_equiv', 'Si1 Si 0 0 0 1 0.01'));
    const b = parseCif(base('_atom_site_B_iso_or_equiv', `Si1 Si 0 0 0 1 ${8 * Math.PI * Math.PI * 0.01}`));
    expect(b.atoms[0].uIsoA2).toBeCloseTo(0.01, 12);
    expect(u.spaceGroupName).toBe('P 1');
    const r0 = powderReflections(parseCif(base('_atom_site_U_iso_or_equiv', 'Si1 Si 0 0 0 1 0')), { dMinNm: 0.1 });
    const r1 = powderReflections(u, { dMinNm: 0.1 });
    const h = r0.find((x) => x.hkl.join() === '1,0,0')!;
    const h1 = r1.find((x) => x.hkl.join() === '1,0,0')!;
    const s = 1 / (2 * h.dNm * 10);
    expect(h1.f2 / h.f2).toBeCloseTo(Math.exp(-2 * 8 * Math.PI * Math.PI * 0.01 * s * s), 10);
  });
  test('a loop with a missing value is an error naming the loop', () => {
    expect(() => parseCif(base('', 'Si1 Si 0 0 0'))).toThrow(/_atom_site_label/);
  });
});

describe('strict structure-file reading: every error names the file and the line', () => {
  const cell = `_cell_length_a 4\n_cell_length_b 4\n_cell_length_c 4\n_cell_angle_alpha 90\n_cell_angle_beta 90\n_cell_angle_gamma 90\n`;
  const atoms = `loop_\n_atom_site_label\n_atom_site_type_symbol\n_atom_site_fract_x\n_atom_site_fract_y\n_atom_site_fract_z\nFe1 Fe 0.1 0.2 0.3\n`;
  const cif = (body: string) => `data_t\n${body}`;
  const fails = (text: string, re: RegExp) => {
    let err: unknown;
    try {
      parseCif(text, { fileName: 'phase.cif' });
    } catch (e) {
      err = e;
    }
    expect(err).toBeInstanceOf(CifError);
    expect((err as Error).message.startsWith('phase.cif: ')).toBe(true);
    expect((err as Error).message).toMatch(re);
  };

  // CIF 1.1 grammar: whitespace is space, tab and the line ends only; CIF 2.0 (Bernstein et al. 2016) allows a leading BOM.
  test('a byte-order mark at the start is skipped; elsewhere, and every other Unicode space, is refused by line and column', () => {
    expect(parseCif(`\uFEFF${cif(cell + atoms)}`).atoms).toHaveLength(1);
    for (const [ch, name] of [['\u00A0', 'no-break space'], ['\u2028', 'line separator'], ['\uFEFF', 'byte-order mark'], ['\u3000', 'ideographic space'], ['\u2009', 'thin space'], ['\u0085', 'next line']]) {
      fails(cif(`_cell_length_a${ch}4\n` + cell.split('\n').slice(1).join('\n') + atoms), new RegExp(`line 2: column 15: ${name} \\(U\\+[0-9A-F]{4}\\) is not whitespace in a CIF`));
    }
    // inside quotes a no-break space is text
    expect(parseCif(cif(`_chemical_name_common 'clay\u00A0film'\n` + cell + atoms)).atoms).toHaveLength(1);
  });
  test('vertical tab, form feed and other control characters are refused anywhere', () => {
    fails(cif(cell + atoms.replace('Fe1 Fe', 'Fe1\u000BFe')), /line 14: column 4: vertical tab \(U\+000B\) is not allowed in a CIF/);
    fails(cif(cell + '\u000C' + atoms), /line 8: column 1: form feed \(U\+000C\)/);
    fails(cif(`_title 'a\u0000b'\n` + cell + atoms), /line 2: column 10: control character U\+0000/);
  });
  test('unclosed quotes and text fields, values without names, names without values', () => {
    fails(cif(`_title 'open\n` + cell + atoms), /line 2: column 8: the quoted text starting here is not closed/);
    fails(cif(`_title\n;never closed\n` + cell + atoms), /line 3: a text field opened with ";" at the start of this line is never closed/);
    fails(cif(cell + 'stray\n' + atoms), /line 8: value 'stray' without a data name/);
    fails(cif('_cell_length_a\n' + cell.split('\n').slice(1).join('\n') + atoms), /line 2: data name _cell_length_a has no value/);
    fails(cif(cell + '_cell_length_a 5\n' + atoms), /line 8: data name _cell_length_a appears twice/);
  });
  test('cells must be positive, finite and plausible (0.5–10 000 Å, angles strictly between 0° and 180°)', () => {
    fails(cif(cell.replace('_cell_length_a 4', '_cell_length_a 1e16') + atoms), /line 2: _cell_length_a 1e16 Å is not a plausible cell length/);
    fails(cif(cell.replace('_cell_length_b 4', '_cell_length_b -4') + atoms), /line 3: _cell_length_b -4 Å is not a plausible cell length/);
    fails(cif(cell.replace('_cell_angle_beta 90', '_cell_angle_beta 180') + atoms), /_cell_angle_beta 180° is not a cell angle/);
    fails(cif(cell.replace('_cell_angle_gamma 90', '_cell_angle_gamma 179').replace('_cell_angle_alpha 90', '_cell_angle_alpha 1') + atoms), /do not make a cell of positive volume/);
    fails(cif(cell.replace('_cell_length_c 4', '_cell_length_c ?') + atoms), /line 4: _cell_length_c '\?' is not a number/);
  });
  test('symmetry lists are bounded (a space group has at most 192 operations, ITC A) and each must be a lattice rotation', () => {
    const ops = (n: number) => `loop_\n_symmetry_equiv_pos_as_xyz\n${Array.from({ length: n }, () => 'x,y,z').join('\n')}\n`;
    expect(parseCif(cif(cell + ops(192) + atoms)).symops).toHaveLength(192);
    fails(cif(cell + ops(100000) + atoms), /line 8: the loop lists 100000 symmetry operations; a space group has at most 192/);
    fails(cif(cell + `loop_\n_symmetry_equiv_pos_as_xyz\nx,x,z\n` + atoms), /line 10: symmetry operation 'x,x,z' is not a crystallographic operation/);
    fails(cif(cell + `loop_\n_symmetry_equiv_pos_as_xyz\nx,y,w\n` + atoms), /line 10: symmetry operation 'x,y,w': cannot read/);
  });
  test('an atom loop without y or z is a clear error, not a TypeError', () => {
    fails(cif(cell + `loop_\n_atom_site_label\n_atom_site_fract_x\nFe1 0.1\n`), /line 8: the atom-site loop has no _atom_site_fract_y or _atom_site_fract_z column/);
    fails(cif(cell + `loop_\n_atom_site_label\n_atom_site_fract_z\nFe1 0.1\n`), /has no _atom_site_fract_x or _atom_site_fract_y column/);
  });
  test('a structure that would need too much reflection work is refused with what to change', () => {
    const s = parseCif(cif(cell.replace(/ 4\n/g, ' 5000\n') + atoms));
    expect(() => powderReflections(s, { dMinNm: 0.1 })).toThrow(/too many reflections for this cell|too much to compute .* raise dMinNm/);
  });
});
