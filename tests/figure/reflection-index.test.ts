// One index style for every line: spaced Miller indices ("0 0 1"), as an indexed line's hkl.join(' ')
// writes them. Cases: a lamellar series' 001–0012, cubic 211, 2D hexagonal 10 (the series search's
// own index lists, src/diffraction/series.ts).
import { expect, test } from 'vitest';
import { spacedHkl, spacedIndex, spacedLineLabel } from '../../src/figure/reflection-index';

test('series indices are written spaced, an index of ten or more stays whole', () => {
  expect(spacedIndex('001')).toBe('0 0 1');
  expect(spacedIndex('003')).toBe('0 0 3');
  expect(spacedIndex('0010')).toBe('0 0 10');
  expect(spacedIndex('0012')).toBe('0 0 12');
  expect(spacedIndex('211')).toBe('2 1 1');
  expect(spacedIndex('10')).toBe('1 0');
  // already spaced, or not an index: as it is
  expect(spacedIndex('0 0 1')).toBe('0 0 1');
  expect(spacedIndex('typed 1')).toBe('typed 1');
  expect(() => spacedIndex(1 as never)).toThrow(/must be a string/);
});

test('a line label shows a series member spaced and leaves every other label as it is', () => {
  expect(spacedLineLabel('001')).toBe('0 0 1');
  expect(spacedLineLabel('0012')).toBe('0 0 12');
  expect(spacedLineLabel('hexagonal 10')).toBe('hexagonal 1 0');
  expect(spacedLineLabel('Ia3d 211')).toBe('Ia3d 2 1 1');
  expect(spacedLineLabel('1 1 0')).toBe('1 1 0');
  expect(spacedLineLabel('2: 0 0 1')).toBe('2: 0 0 1');
  expect(spacedLineLabel('typed 12')).toBe('typed 12');
  expect(spacedLineLabel('peak 7.0659°')).toBe('peak 7.0659°');
  expect(() => spacedLineLabel(null as never)).toThrow(/must be a string/);
});

test('an indexed reflection is written as a series member is: spaced, whole past nine, with its sign', () => {
  // Au rings 111, 200, 220 (fcc, reference-values.md); 1 0 10 and -1 1 0 would be ambiguous closed up
  expect([[1, 1, 1], [2, 0, 0], [2, 2, 0]].map(spacedHkl)).toEqual(['1 1 1', '2 0 0', '2 2 0']);
  expect(spacedHkl([1, 0, 10])).toBe('1 0 10');
  expect(spacedHkl([-1, 1, 0])).toBe('-1 1 0');
  expect(spacedHkl([1, 0])).toBe(spacedIndex('10'));
  expect(spacedHkl([0, 0, 12])).toBe(spacedIndex('0012'));
  expect(() => spacedHkl([1.5, 0, 0])).toThrow(/two to four integers, got \[1.5,0,0\]/);
  expect(() => spacedHkl([1] as never)).toThrow(/two to four integers/);
});
