// Measured powder profiles read from a CIF (the powder dictionary's _pd_ data names, IUCr
// cif_pd.dic; its names and their meaning checked against the dictionary's published entries).
// The real pattern is COD entry 1516218 (propylammonium chloride, public domain; see
// tests/fixtures/reference-data/SOURCES.md §2): its counts and its scan range written back into
// the CIF layout they were taken from, and read again.
import { readFileSync } from 'node:fs';
import { describe, expect, test } from 'vitest';
import { parsePattern } from '../../src/diffraction/pattern';
import { isCifText, parsePowderCif } from '../../src/diffraction/powder-cif';
import { namesPowderProfile } from '../../src/diffraction/profile-names';
import { PatternReadError, readPatternFile } from '../../src/diffraction/read-pattern';

const FIXTURE = 'tests/fixtures/reference-data/xrd-powder_propylammonium-chloride_CuKa12_COD1516218_2theta-counts.xy';

/** The measured counts of COD 1516218 as a CIF would hold them: scan range items and one loop of counts. */
function propylammoniumCif(): string {
  const rows = readFileSync(FIXTURE, 'utf8')
    .split('\n')
    .filter((l) => l.trim() !== '' && !l.startsWith('#'))
    .map((l) => l.trim().split(/\s+/)[1]);
  const counts: string[] = [];
  for (let i = 0; i < rows.length; i += 8) counts.push(rows.slice(i, i + 8).join(' '));
  return [
    '#\\#CIF_1.1',
    'data_1516218',
    "_chemical_name_systematic 'propylammonium chloride'",
    '_cell_length_a 6.26428(7)',
    '_cell_length_c 7.40545(18)',
    "_diffrn_radiation_type 'Cu K\\a'",
    'loop_',
    '_diffrn_radiation_wavelength',
    '_diffrn_radiation_wavelength_id',
    '_diffrn_radiation_wavelength_wt',
    '1.540598 1 1.0',
    '1.544390 2 0.5',
    '_pd_meas_2theta_range_min 3.000',
    '_pd_meas_2theta_range_max 89.988',
    '_pd_meas_2theta_range_inc 0.022',
    'loop_',
    '_pd_meas_counts_total',
    ...counts,
    '',
  ].join('\n');
}

describe('parsePowderCif', () => {
  test('the real COD 1516218 profile: the same 3955 points and the same Cu Kα1 + Kα2 (ratio 0.5) as the two-column file (SOURCES.md §2)', () => {
    const fromXy = parsePattern(readFileSync(FIXTURE, 'utf8'));
    const text = propylammoniumCif();
    expect(isCifText(text)).toBe(true);
    const p = readPatternFile(text, '1516218.cif');
    expect(p.x.length).toBe(3955);
    expect(Array.from(p.y)).toEqual(Array.from(fromXy.y));
    for (let i = 0; i < p.x.length; i += 97) expect(p.x[i]).toBeCloseTo(fromXy.x[i], 9);
    expect(p.x[p.x.length - 1]).toBeCloseTo(89.988, 9);
    expect(p.wavelengthNm).toBeCloseTo(0.1540598, 10);
    expect(p.ka2Nm).toBeCloseTo(0.154439, 10);
    expect(p.radiation!.ka2Ratio).toBeCloseTo(0.5, 12);
    expect(p.radiation!.anode).toBe('Cu');
    expect(p.sigma).toBeNull();
    expect(p.notes.join('\n')).toMatch(/2θ from _pd_meas_2theta_range_min 3\.000° and _inc 0\.022°, intensities from _pd_meas_counts_total \(3955 points\)/);
    // the Kα1 row of the wavelength loop
    expect(p.radiation!.source).toMatch(/line 11: '_diffrn_radiation_wavelength 1\.540598'/);
  });

  test('a loop of 2θ and intensities with su in parentheses (DDLm names too); excluded points left out', () => {
    const ddl1 = [
      'data_film',
      '_diffrn_radiation_wavelength 0.72932',
      "_diffrn_source 'synchrotron'",
      'loop_',
      '_pd_meas_2theta_scan',
      '_pd_meas_intensity_total',
      '_pd_calc_intensity_total',
      '5.00 1200(35) 1190',
      '5.01 1300(36) 1310',
      '5.02 . 1400',
      '5.03 1250(35) 1240',
      '',
    ].join('\n');
    const p = parsePowderCif(ddl1, 'film.cif');
    expect(Array.from(p.x)).toEqual([5, 5.01, 5.03]);
    // the measured intensities, never the calculated column beside them
    expect(Array.from(p.y)).toEqual([1200, 1300, 1250]);
    expect(Array.from(p.sigma!)).toEqual([35, 36, 35]);
    expect(p.wavelengthNm).toBeCloseTo(0.072932, 10);
    expect(p.ka2Nm).toBeNull();
    expect(p.radiation!.kind).toBe('synchrotron');
    expect(p.notes.join('\n')).toMatch(/1 point\(s\) without an intensity/);
    const ddlm = ddl1.replace('_diffrn_radiation_wavelength ', '_diffrn_radiation_wavelength.value ').replace('_pd_meas_2theta_scan', '_pd_meas.2theta_scan').replace('_pd_meas_intensity_total', '_pd_meas.intensity_total').replace('_diffrn_source ', '_diffrn_source.source ');
    const q = parsePowderCif(ddlm, 'film.cif');
    expect(Array.from(q.y)).toEqual([1200, 1300, 1250]);
    expect(q.wavelengthNm).toBeCloseTo(0.072932, 10);
  });

  test('what is not a 2θ profile is refused, naming the file and the line', () => {
    const graphite = readFileSync('tests/fixtures/reference-data/crystal_graphite-2H_COD1200017.cif', 'utf8');
    expect(() => readPatternFile(graphite, 'graphite.cif')).toThrow(PatternReadError);
    expect(() => readPatternFile(graphite, 'graphite.cif')).toThrow(/^graphite\.cif: no measured powder profile .* a structure file is given as a structure/);
    const tof = 'data_t\nloop_\n_pd_meas_time_of_flight\n_pd_meas_intensity_total\n1000 5\n1010 6\n1020 7\n';
    expect(() => readPatternFile(tof, 'tof.cif')).toThrow(/^tof\.cif: line 2: a time-of-flight profile/);
    const short = 'data_s\n_pd_meas_2theta_range_min 10\n_pd_meas_2theta_range_max 20\n_pd_meas_2theta_range_inc 0.01\nloop_\n_pd_meas_counts_total\n5 6 7 8\n';
    expect(() => readPatternFile(short, 's.cif')).toThrow(/^s\.cif: line 5: the scan 10° to 20° in steps of 0\.01° has 1001 points, the profile loop 4/);
    const noAxis = 'data_n\nloop_\n_pd_meas_counts_total\n5 6 7 8\n';
    expect(() => readPatternFile(noAxis, 'n.cif')).toThrow(/^n\.cif: line 2: the profile loop has no 2θ column/);
    const bad = 'data_b\nloop_\n_pd_meas_2theta_scan\n_pd_meas_counts_total\n10 5\n10.1 abc\n10.2 7\n';
    expect(() => readPatternFile(bad, 'b.cif')).toThrow(/^b\.cif: line 6: _pd_meas_counts_total 'abc' is not a number/);
    const unsorted = 'data_u\nloop_\n_pd_meas_2theta_scan\n_pd_meas_counts_total\n10 5\n10.2 6\n10.1 7\n';
    expect(() => readPatternFile(unsorted, 'u.cif')).toThrow(/^u\.cif: line 7: x = 10\.1 is not above/);
  });

  test('a wavelength the user gives replaces the file\'s, whose Kα1-only flag still holds', () => {
    const text = "data_m\n_diffrn_radiation_wavelength 1.5406\n_diffrn_radiation_monochromator 'Ge(111) primary'\nloop_\n_pd_meas_2theta_scan\n_pd_meas_counts_total\n10 5\n10.1 6\n10.2 7\n";
    const fromFile = readPatternFile(text, 'm.cif');
    expect(fromFile.wavelengthNm).toBeCloseTo(0.15406, 8);
    expect(fromFile.ka2Nm).toBeNull();
    const given = readPatternFile(text, 'm.cif', { wavelength: 'CuKa1' });
    expect(given.wavelengthFrom).toBe('option');
    expect(given.ka2Nm).toBeNull();
  });

  test('a profile is told from a structure file by its data names (what the app uses to route a dropped CIF)', () => {
    expect(namesPowderProfile(propylammoniumCif())).toBe(true);
    expect(namesPowderProfile('data_x\nloop_\n_pd_meas.intensity_total\n1\n')).toBe(true);
    expect(namesPowderProfile(readFileSync('tests/fixtures/reference-data/crystal_graphite-2H_COD1200017.cif', 'utf8'))).toBe(false);
    // a calculated profile alone is no measurement, and a name inside a longer one does not count
    expect(namesPowderProfile('data_x\nloop_\n_pd_calc_intensity_total\n1\n')).toBe(false);
    expect(namesPowderProfile('data_x\n_pd_meas_counts_total_note 1\n')).toBe(false);
    // the columns option has nothing to choose in a CIF, and says so
    expect(parsePowderCif(propylammoniumCif(), 'p.cif', { columns: '1,3' }).notes.join('\n')).toMatch(/the columns '1,3' do not apply/);
  });

  test('a file of columns is not taken for a CIF', () => {
    expect(isCifText('# data_ in a comment\n10 1\n11 2\n')).toBe(false);
    expect(isCifText('\n# comment\ndata_x\n_cell_length_a 5\n')).toBe(true);
    // a header word that merely starts with data_ does not make a two-column file a CIF
    expect(isCifText('data_set 7, Cu K-alpha\n10 1\n11 2\n12 3\n')).toBe(false);
    expect(readPatternFile('data_set 7, Cu K-alpha\n10 1\n11 2\n12 3\n', 'set7.xy').x.length).toBe(3);
  });
});
