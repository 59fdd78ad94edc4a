import { readFileSync } from 'node:fs';
import { describe, expect, test } from 'vitest';
import { parsePattern, parsePeakList } from '../../src/diffraction/pattern';
import { PatternReadError, readPatternFile } from '../../src/diffraction/read-pattern';

const FIXTURE = 'tests/fixtures/reference-data/xrd-powder_propylammonium-chloride_CuKa12_COD1516218_2theta-counts.xy';

describe('parsePattern', () => {
  test('the measured propylammonium chloride pattern: 3955 points, 3.000–89.988°, Cu Kα1 + Kα2 from the header (SOURCES.md §2)', () => {
    const p = parsePattern(readFileSync(FIXTURE, 'utf8'));
    expect(p.x.length).toBe(3955);
    expect(p.x[0]).toBe(3);
    expect(p.x[p.x.length - 1]).toBeCloseTo(89.988, 6);
    expect(p.wavelengthNm).toBeCloseTo(0.1540598, 9);
    expect(p.ka2Nm).toBeCloseTo(0.154439, 9);
    expect(p.wavelengthFrom).toBe('header');
  });
  test('decimal comma with semicolons, and with whitespace', () => {
    const a = parsePattern('2theta;counts\n12,5;340\n12,6;350\n12,7;360\n');
    expect(Array.from(a.x)).toEqual([12.5, 12.6, 12.7]);
    expect(Array.from(a.y)).toEqual([340, 350, 360]);
    const b = parsePattern('12,5 340\n12,6 350\n12,7 360');
    expect(Array.from(b.x)).toEqual([12.5, 12.6, 12.7]);
  });
  test('comma-separated and tab-separated with a third σ column', () => {
    const a = parsePattern('10.0,5,1.5\n10.1,6,1.6\n10.2,7,1.7');
    expect(Array.from(a.sigma!)).toEqual([1.5, 1.6, 1.7]);
    const b = parsePattern('10.0\t5\n10.1\t6\n10.2\t7');
    expect(Array.from(b.y)).toEqual([5, 6, 7]);
  });
  test('every comment style is skipped', () => {
    const p = parsePattern('# a\n; b\n! c\n// d\n10 1\n11 2\n12 3\n');
    expect(p.x.length).toBe(3);
  });
  test('wavelength from header lines in nm, Å and as an anode name', () => {
    expect(parsePattern('# wavelength: 1.5406 A\n10 1\n11 2\n12 3').wavelengthNm).toBeCloseTo(0.15406, 9);
    expect(parsePattern('# lambda = 0.15406 nm\n10 1\n11 2\n12 3').wavelengthNm).toBeCloseTo(0.15406, 9);
    const mo = parsePattern('# Mo K-alpha radiation\n10 1\n11 2\n12 3');
    expect(mo.wavelengthNm).toBe(0.070931713);
    const opt = parsePattern('# lambda = 0.15406 nm\n10 1\n11 2\n12 3', { wavelength: 'CoKa1' });
    expect(opt.wavelengthNm).toBeCloseTo(0.1788996, 9);
    expect(opt.notes.join()).toMatch(/replaced by the option 'CoKa1'/);
  });
  test('q in Å⁻¹ from the header is converted to nm⁻¹', () => {
    const p = parsePattern('# q (A^-1)  I\n0.10 5\n0.11 6\n0.12 7');
    expect(p.axis).toBe('q');
    expect(p.x[0]).toBeCloseTo(1.0, 12);
    const n = parsePattern('# q (nm^-1) I\n1.0 5\n1.1 6\n1.2 7');
    expect(n.x[0]).toBe(1);
  });
  test('decreasing x is reversed and reported', () => {
    const p = parsePattern('12 3\n11 2\n10 1');
    expect(Array.from(p.x)).toEqual([10, 11, 12]);
    expect(p.notes.join()).toMatch(/reversed/);
  });
  test('bad rows are errors with the line number; nothing is dropped silently', () => {
    expect(() => parsePattern('10 1\n11\n12 3\n13 4')).toThrow(/line 2: only one column/);
    expect(() => parsePattern('10 1\n11 2\n11 3\n13 4')).toThrow(/line 3: .*strictly monotonic/);
    expect(() => parsePattern('10 1\n11 2\nNaN 3\n13 4')).toThrow(/line 3/);
    expect(() => parsePattern('10 1\n11 2\n12 x\n13 4')).toThrow(/line 3: not a data row/);
    // text after the last row is a footer, left out with a note (common practice of instrument exports);
    // text between rows is not
    const footer = parsePattern('10 1\n11 2\n12 3\nEnd of data\nchecksum ok\n');
    expect(Array.from(footer.x)).toEqual([10, 11, 12]);
    expect(footer.notes.join()).toMatch(/2 line\(s\) of text after the data left out, from line 4: 'End of data'/);
    expect(() => parsePattern('10 1\n11 2\nEnd of scan 1\n13 4\n14 5')).toThrow(/line 3: not a data row/);
    expect(() => parsePattern('10 1 1\n11 2 0\n12 3 1')).toThrow(/line 2: uncertainty 0/);
    expect(() => parsePattern('10 1\n11 2 5\n12 3')).toThrow(/line 2: 3 columns/);
    expect(() => parsePattern('10 1\n')).toThrow(/at least 3/);
  });
});

describe('parsePeakList', () => {
  test('d in Å, q in nm⁻¹ and 2θ with a wavelength give the same d', () => {
    const d = parsePeakList('7.405, 3.7025', 'dA');
    expect(d[0].dNm).toBeCloseTo(0.7405, 10);
    const q = parsePeakList(`${(2 * Math.PI) / 0.7405}`, 'qInvNm');
    expect(q[0].dNm).toBeCloseTo(0.7405, 10);
    // 001 of propylammonium chloride at 11.941° 2θ, Cu Kα1 1.540598 Å (SOURCES.md §2, computed)
    const t = parsePeakList('11.941', 'twoThetaDeg', 0.1540598);
    expect(t[0].dNm).toBeCloseTo(0.74055, 4);
    expect(() => parsePeakList('11.9', 'twoThetaDeg')).toThrow(/wavelength/);
    expect(() => parsePeakList('3, -1', 'dA')).toThrow(/peak 2/);
  });
});

describe('an equal-step scan written as its range and its intensities (common practice of diffractometer exports)', () => {
  // the first 40 points of the real COD 1516218 pattern (SOURCES.md §2: 3.000° in steps of 0.022°)
  const real = readFileSync(FIXTURE, 'utf8').split('\n').filter((l) => l.trim() !== '' && !l.startsWith('#')).slice(0, 40);
  const counts = real.map((l) => l.trim().split(/\s+/)[1]);
  const rowsOf = (perLine: number) => {
    const out: string[] = [];
    for (let i = 0; i < counts.length; i += perLine) out.push(counts.slice(i, i + perLine).join(' '));
    return out.join('\n');
  };
  const end = (3 + 39 * 0.022).toFixed(3);
  test.each([
    [`3.000 0.022 ${end}`, 8, 'start, step, end'],
    [`3.000 ${end} 0.022`, 10, 'start, end, step'],
    ['3.000 0.022 40', 1, 'start, step, count'],
  ])('%s then the counts %i to a line (%s): the same points as the two-column file', (head, perLine, words) => {
    const p = parsePattern(`# Cu K-alpha1 1.540598 A\n${head}\n${rowsOf(perLine)}\nEnd of scan\n`);
    expect(p.x.length).toBe(40);
    expect(Array.from(p.y)).toEqual(counts.map(Number));
    real.forEach((l, i) => expect(p.x[i]).toBeCloseTo(Number(l.trim().split(/\s+/)[0]), 9));
    expect(p.notes.join('\n')).toMatch(new RegExp(`equal-step scan: line 2 read as ${words.split(', ').map((w) => (w === 'count' ? '40 points' : w)).join('.*')}`));
    expect(p.notes.join('\n')).toMatch(/left out: 'End of scan'/);
    expect(p.wavelengthNm).toBeCloseTo(0.1540598, 10);
  });
  test('three numbers that fit no order, or two orders that give different scans, are refused naming the line', () => {
    expect(() => parsePattern(`3.000 0.022 5.000\n${rowsOf(8)}\n`)).toThrow(/^line 1: three numbers '3\.000 0\.022 5\.000' followed by 40 intensities: no reading/);
    // start 1, step 1, end 10 and start 1, step 1, 10 points are the same scan: read
    expect(parsePattern(`1 1 10\n${'5 '.repeat(10)}\n`).x[9]).toBe(10);
    // start 10, end 16, step 3 (10, 13, 16) and start 10, step 16, 3 points (10, 26, 42): two scans, refused
    expect(() => parsePattern('10 16 3\n5\n6\n7\n')).toThrow(/^line 1: three numbers '10 16 3' followed by 3 intensities can be read as start 10, end 16, step 3 or as start 10, step 16, 3 points; write the file as two columns/);
  });
});

describe('which columns hold the pattern: the names on the header line, or the user\'s choice', () => {
  // 30 rows of the real COD 1516218 counts (SOURCES.md §2) beside columns a refinement program or a
  // detector adds (their values made up: only which column is read is checked)
  const real = readFileSync(FIXTURE, 'utf8').split('\n').filter((l) => l.trim() !== '' && !l.startsWith('#')).slice(0, 30).map((l) => l.trim().split(/\s+/).map(Number));
  const table = (names: string, row: (x: number, y: number) => number[]) => `${names}\n${real.map(([x, y]) => row(x, y).join(' ')).join('\n')}\n`;
  const counts = real.map(([, y]) => y);
  test('five named columns: the measured one is read and the others are named in a note', () => {
    const p = parsePattern(table('# 2theta Yobs Ycalc Ybkg Diff', (x, y) => [x, y, y + 3, 100, -3]));
    expect(Array.from(p.y)).toEqual(counts);
    expect(p.sigma).toBeNull();
    expect(p.notes.join('\n')).toMatch(/columns read by their names: position 1 \('2theta'\), intensity 2 \('Yobs'\); not read: 3 \('Ycalc'\), 4 \('Ybkg'\), 5 \('Diff'\)/);
    const q = parsePattern(table('2theta\tI_calc\tI_obs\tesd', (x, y) => [x, y + 3, y, Math.sqrt(y)]).replace(/ /g, '\t'));
    expect(Array.from(q.y)).toEqual(counts);
    expect(q.sigma![0]).toBeCloseTo(Math.sqrt(counts[0]), 12);
  });
  test('a third column named as a model is not read as the uncertainty (it was, silently)', () => {
    const p = parsePattern(table('# 2theta Yobs Ycalc', (x, y) => [x, y, y + 3]));
    expect(p.sigma).toBeNull();
    expect(p.notes.join('\n')).toMatch(/column 3 \('Ycalc'\) is not an uncertainty by its name: not read/);
    expect(parsePattern(table('# 2theta counts sigma', (x, y) => [x, y, 5])).sigma![0]).toBe(5);
  });
  test('columns that cannot be told apart are refused with what to give; the user\'s choice reads any of them', () => {
    expect(() => parsePattern(table('', (x, y) => [x, y, 1, 2]))).toThrow(/^line 2: 4 columns and no names for them; give the columns to read/);
    expect(() => parsePattern(table('# 2theta counts_a counts_b norm', (x, y) => [x, y, y, 1]))).toThrow(/more than one is named as the measured intensity/);
    const p = parsePattern(table('# 2theta counts_a counts_b norm', (x, y) => [x, 2 * y, y, 1]), { columns: '1,3' });
    expect(Array.from(p.y)).toEqual(counts);
    expect(p.notes.join('\n')).toMatch(/columns read as given: position 1 \('2theta'\), intensity 3 \('counts_b'\)/);
    expect(() => parsePattern(table('', (x, y) => [x, y]), { columns: '1,3' })).toThrow(/^line 2: column 3 was asked for, but the rows have 2 columns/);
    for (const bad of ['1', '1,1', '0,2', '1,2,3,4', 'a,b']) expect(() => parsePattern('10 1\n11 2\n12 3\n', { columns: bad })).toThrow(/give two or three distinct column numbers counted from 1/);
  });
});

describe('absurd values and file names in pattern errors', () => {
  test('an intensity, uncertainty or position far beyond any measurement is refused by line (common practice: no detector counts 10¹² in a step)', () => {
    const rows = (y: string) => `10 100\n10.1 ${y}\n10.2 120\n10.3 90\n`;
    expect(() => parsePattern(rows('1e300'))).toThrow(/^line 2: intensity 1e300 is not a plausible count/);
    expect(() => parsePattern(rows('-5e13'))).toThrow(/^line 2: intensity -5e13 is not a plausible count/);
    expect(() => parsePattern(rows('1e309'))).toThrow(/^line 2: non-finite value/);
    expect(() => parsePattern('# q (1/nm) intensity\n1 5\n2 6\n3e7 7\n')).toThrow(/^line 4: position 3e7 is not a plausible 2θ or q/);
    expect(parsePattern(rows('1e11')).y[1]).toBe(1e11);
  });
  test('repeated or unsorted 2θ is refused naming the line; a wholly decreasing file is reversed with a note', () => {
    expect(() => parsePattern('10 1\n10.1 2\n10.1 3\n10.2 4\n')).toThrow(/^line 3: x = 10\.1 is not above/);
    expect(() => parsePattern('10 1\n10.2 2\n10.1 3\n10.3 4\n')).toThrow(/^line 3: x = 10\.1 is not above/);
    expect(parsePattern('10.3 1\n10.2 2\n10.1 3\n').notes.join()).toMatch(/decreasing order; reversed/);
  });
  test('readPatternFile puts the file name before every reading error', () => {
    expect(() => readPatternFile('10 1\n10.1 abc\n', 'film.xy')).toThrow(/^film\.xy: line 2: not a data row/);
    expect(() => readPatternFile('10 1\n', 'film.xy')).toThrow(/^film\.xy: pattern has 1 data rows/);
    expect(() => readPatternFile('190 1\n191 2\n192 3\n', 'film.xy')).toThrow(PatternReadError);
  });
});
