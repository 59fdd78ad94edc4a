import { describe, expect, test } from 'vitest';
import { parsePattern } from '../../src/diffraction/pattern';
import { readPatternFile } from '../../src/diffraction/read-pattern';
import { ANODES, HC_KEV_NM, identifyLine, radiationStatements, resolveRadiation } from '../../src/diffraction/radiation';

const rows = '10 100\n10.02 110\n10.04 105\n';
const read = (header: string, opts = {}) => parsePattern(`${header}\n${rows}`, opts);

describe('wavelength from every common header style', () => {
  // Cu Kα1 1.54059292 Å and Kα2 1.5444274 Å: ITC C Table 4.2.2.6 / Hölzer et al. 1997 (reference-values §1)
  test("'lambda1 = 1.540593 A, lambda2 = 1.544414 A' is Kα1 and Kα2, not 0.1 nm (the issue's header)", () => {
    const p = read('# lambda1 = 1.540593 A, lambda2 = 1.544414 A');
    expect(p.wavelengthNm).toBeCloseTo(0.1540593, 10);
    expect(p.ka2Nm).toBeCloseTo(0.1544414, 10);
    expect(p.radiation!.source).toMatch(/header line 1: 'lambda1 = 1.540593 A'/);
  });
  // Cu Kα1/Kα2 as above. A digit glued to a word is an index, never the value (the misread, in other spellings)
  test.each([
    ['# Cu K-alpha1', 0.154059292, 0.15444274],
    ['# lambda_1 = 1.5406, lambda_2 = 1.5444', 0.15406, 0.15444],
    ['# Alpha1: 1.54060\n# Alpha2: 1.54443', 0.15406, 0.154443],
    ['# Anode material: Cu\n# K-Alpha1 [Å]: 1.540598\n# K-Alpha2 [Å]: 1.544426', 0.1540598, 0.1544426],
  ])('%s: Kα1 %f nm and Kα2 %f nm, no index read as a wavelength', (h, ka1, ka2) => {
    const p = read(h);
    expect(p.wavelengthNm).toBeCloseTo(ka1, 10);
    expect(p.ka2Nm).toBeCloseTo(ka2, 10);
  });
  test("a cell's 'alpha=90' and a sample's 'Cu2O' are not radiation statements; 'lam = 0.41328' is a wavelength in Å", () => {
    expect(read('# cell a=5.43 alpha=90 beta=90 gamma=90\n# wavelength 1.5406 A').wavelengthNm).toBeCloseTo(0.15406, 10);
    expect(read('# sample: Cu2O powder\n# wavelength 0.7093 A').wavelengthNm).toBeCloseTo(0.07093, 10);
    const p = read('# synchrotron; lam = 0.41328');
    expect(p.wavelengthNm).toBeCloseTo(0.041328, 10);
    expect(p.ka2Nm).toBeNull();
  });
  test.each([
    ['# wavelength: 1.5406 A', 0.15406, 'Å'],
    ['# Wavelength [nm]: 0.154059', 0.154059, 'unit in brackets before the value'],
    ['# lambda = 154.06 pm', 0.15406, 'pm'],
    ['# λ = 0.15406 nm', 0.15406, 'nm'],
    ['# K-Alpha1 wavelength (Å): 1.540598', 0.1540598, 'Kα1 with the unit in parentheses'],
    ['# Kα1 = 1.5405929 Å', 0.15405929, 'Kα1 with Å'],
    ['# WL1 1.540598', 0.1540598, 'no unit: Å'],
  ])('%s → %f nm (%s)', (h, nm) => {
    const p = read(h);
    expect(p.wavelengthNm).toBeCloseTo(nm, 10);
    // each of these is Cu Kα1: the doublet is implied (the tube gives Kα2 too)
    expect(p.ka2Nm).not.toBeNull();
  });
  test('a photon energy in keV or eV: λ = hc/E (CODATA 2018 hc = 1.239841984 keV·nm); a synchrotron is a single line', () => {
    const p = read('# Synchrotron beamline, energy = 17.000 keV');
    expect(p.wavelengthNm).toBeCloseTo(HC_KEV_NM / 17, 12);
    expect(p.ka2Nm).toBeNull();
    expect(p.radiation!.kind).toBe('synchrotron');
    expect(read('# E: 30000 eV').wavelengthNm).toBeCloseTo(HC_KEV_NM / 30, 12);
  });
  test('one line holding Kα1, Kα2 and their ratio, and an anode named as the wavelength (Cu Kα2 1.544390 Å as in COD 1516218, SOURCES.md §2)', () => {
    const p = read('# Wavelength = 1.540560 1.544390 0.5');
    expect(p.wavelengthNm).toBeCloseTo(0.154056, 10);
    expect(p.ka2Nm).toBeCloseTo(0.154439, 10);
    expect(p.radiation!.ka2Ratio).toBe(0.5);
    expect(read('# Wavelength = 1.540560 1.544390 0.42').radiation!.ka2Ratio).toBe(0.42);
    // a second number that is no Kα2 is not read, and the note says so
    const q = read('# wavelength 1.5406 0.02');
    expect(q.wavelengthNm).toBeCloseTo(0.15406, 10);
    expect(q.notes.join('\n')).toMatch(/the number after it on header line 1 \('0\.02'\) is not read as a wavelength/);
    const cu = read('# XRAY WAVELENGTH: Cu');
    expect(cu.radiation!.anode).toBe('Cu');
    expect(cu.ka2Nm).not.toBeNull();
  });
  test('a wavelength written with an energy unit is the photon energy, said in a note (the unit decides; λ = hc/E)', () => {
    const p = read('# synchrotron, wavelength: 12.4 keV');
    expect(p.wavelengthNm).toBeCloseTo(HC_KEV_NM / 12.4, 12);
    expect(p.notes.join('\n')).toMatch(/12\.4 keV is an energy .* read as the photon energy/);
    expect(read('# lambda = 17479 eV').wavelengthNm).toBeCloseTo(HC_KEV_NM / 17.479, 12);
    // a tube voltage after the keyword is not a wavelength
    expect(read('# Cu tube 40 kV, wavelength step 2 keV').wavelengthNm).toBe(read('# Anode: Cu').wavelengthNm);
  });
  test('a synchrotron wavelength with its su in parentheses gives its relative uncertainty', () => {
    const p = read('# synchrotron, wavelength: 0.72932(2) Å');
    expect(p.wavelengthNm).toBeCloseTo(0.072932, 12);
    expect(p.radiation!.relUncertainty).toBeCloseTo(0.00002 / 0.72932, 12);
    expect(p.ka2Nm).toBeNull();
  });
  test.each(ANODES.map((a) => [a.element, a] as const))('anode %s named alone: Kα1 and Kα2 from the cited table', (el, a) => {
    for (const h of [`# Anode: ${el}`, `# ${el} K-alpha radiation`, `# target = ${el}`]) {
      const p = read(h);
      expect(p.wavelengthNm).toBe(a.ka1Nm);
      expect(p.ka2Nm).toBe(a.ka2Nm);
      expect(p.radiation!.source).toMatch(/table/);
    }
  });
  test('Fe Kα1/Kα2 1.936042/1.939980 Å (Bearden 1967, Å* scale)', () => {
    const fe = ANODES.find((a) => a.element === 'Fe')!;
    expect(fe.ka1Nm * 10).toBeCloseTo(1.936042, 6);
    expect(fe.ka2Nm * 10).toBeCloseTo(1.93998, 6);
  });
  test('the weighted mean Cu Kα 1.5418 Å means the doublet from the table', () => {
    const p = read('# Cu K-alpha 1.5418 A');
    expect(p.wavelengthNm).toBe(0.154059292);
    expect(p.ka2Nm).toBe(0.15444274);
    expect(p.notes.join()).toMatch(/weighted mean/);
  });
  test('Kα1 only when the file says so: monochromatic, Kα2 stripped, a Johansson primary monochromator, ratio 0', () => {
    for (const h of ['# Cu Ka1 1.540598 A, monochromatic', '# Kα2 stripped; wavelength 1.5406 A', '# Johansson Ge(111) primary monochromator, Cu anode', '# Cu anode, Ka2/Ka1 ratio = 0']) {
      const p = read(h);
      expect(p.wavelengthNm).toBeCloseTo(0.15406, 5);
      expect(p.ka2Nm).toBeNull();
    }
    // a secondary (graphite) monochromator passes Kα2 (common practice)
    expect(read('# Cu anode, secondary graphite monochromator').ka2Nm).toBe(0.15444274);
  });
  test('a stated ratio is used', () => {
    expect(read('# Cu anode; K-alpha2/K-alpha1 ratio: 0.52').radiation!.ka2Ratio).toBe(0.52);
  });
  test('the option wins over the header, and says so', () => {
    const p = read('# lambda = 0.15406 nm', { wavelength: 'MoKa1' });
    expect(p.wavelengthNm).toBe(0.070931713);
    expect(p.notes.join()).toMatch(/replaced by the option 'MoKa1'/);
    expect(read('# wavelength 1.5406 A', { ka2: 'none' }).ka2Nm).toBeNull();
    expect(read('', { wavelength: '17.479 keV' }).wavelengthNm).toBeCloseTo(HC_KEV_NM / 17.479, 12);
  });
});

describe('conflicting statements are refused, quoting them', () => {
  test.each([
    ['# wavelength 1.5406 A\n# wavelength 0.7093 A', /conflicting wavelengths: 'wavelength 1.5406 A' \(header line 1\) and 'wavelength 0.7093 A' \(header line 2\)/],
    ['# Anode: Cu\n# lambda = 0.70932 A', /conflicting statements: 'Anode: Cu' \(header line 1\) and 'lambda = 0.70932 A' \(header line 2\)/],
    ['# Anode: Cu\n# Target: Mo', /conflicting anodes/],
    ['# Ka1 1.5406 A, Ka2 1.5444 A, monochromatic', /Kα1 only, yet a Kα2 wavelength/],
    ['# lambda = 0.2', /no unit and could be Å or nm/],
  ])('%s', (h, msg) => {
    expect(() => read(h)).toThrow(msg);
    expect(() => readPatternFile(`${h}\n${rows}`, 'scan.xy')).toThrow(/^scan\.xy: /);
  });
  test('a synchrotron named without a wavelength is refused', () => {
    expect(() => read('# measured at a synchrotron beamline')).toThrow(/no wavelength or energy/);
  });
  test('numbers that are not wavelengths are not taken for one (voltage, cell angle, a ratio)', () => {
    const p = read('# Generator 40 kV 40 mA\n# cell alpha = 90\n# wavelength: 1.5406 A');
    expect(p.wavelengthNm).toBeCloseTo(0.15406, 10);
  });
});

describe('a bare wavelength on the first line of a three-column export', () => {
  test('was refused ("line 1: only one column"); now read as the wavelength (Å), with a note', () => {
    const p = parsePattern('1.540598\n10.00 100 10\n10.02 110 10.5\n10.04 105 10.2\n');
    expect(p.wavelengthNm).toBeCloseTo(0.1540598, 10);
    expect(p.sigma).not.toBeNull();
    expect(p.notes.join()).toMatch(/single number before the data/);
    expect(p.radiation!.source).toMatch(/line 1/);
  });
  test('a single number that cannot be a wavelength is still a bad row', () => {
    expect(() => parsePattern('3955\n10 1\n11 2\n12 3\n')).toThrow(/line 1: only one column/);
  });
});

describe('identifyLine', () => {
  test('Kα1, Kα2 and the weighted mean of Cu are told apart (reference-values §1)', () => {
    expect(identifyLine(0.1540598)!.line).toBe('ka1');
    expect(identifyLine(0.154439)!.line).toBe('ka2');
    expect(identifyLine(0.1541871)!.line).toBe('mean');
    expect(identifyLine(0.1)).toBeNull();
  });
  test('statements of a header line', () => {
    const s = radiationStatements('# lambda1 = 1.540593 A, lambda2 = 1.544414 A', 'header line 1');
    expect(s.map((x) => x.kind)).toEqual(['ka1', 'ka2']);
    expect(resolveRadiation([])).toBeNull();
  });
});
