import { expect, test } from 'vitest';
import { emptyState, isFinished, parseState, recordFileName, withEntry } from '../../src/batch/state';

const A = 'a'.repeat(64);
const B = 'b'.repeat(64);
const entry = { sha256: A, recipeHash: B, status: 'ok' as const, recordFile: 'records/x.json', finishedIso: '2026-01-01T00:00:00Z' };

test('a file is finished only for the same bytes and the same recipe', () => {
  const s = withEntry(emptyState(), 'x.tif', entry);
  expect(isFinished(s, 'x.tif', A, B)).toBe(true);
  expect(isFinished(s, 'x.tif', B, B)).toBe(false); // the file changed
  expect(isFinished(s, 'x.tif', A, A)).toBe(false); // the recipe changed
  expect(isFinished(s, 'y.tif', A, B)).toBe(false);
});

test('a new entry replaces the old one of the same file, never duplicates it', () => {
  const s = withEntry(withEntry(emptyState(), 'x.tif', entry), 'x.tif', { ...entry, sha256: B });
  expect(Object.keys(s.entries)).toEqual(['x.tif']);
  expect(isFinished(s, 'x.tif', B, B)).toBe(true);
});

test('the state survives its JSON round trip', () => {
  const s = withEntry(emptyState(), 'dir/x,1.tif', entry);
  expect(parseState(JSON.stringify(s))).toEqual(s);
});

test('an unreadable state is an error, not an empty state', () => {
  expect(() => parseState('{')).toThrow(/not valid JSON/);
  expect(() => parseState('{"schemaVersion":2,"entries":{}}')).toThrow(/schemaVersion 2/);
  expect(() => parseState(JSON.stringify({ schemaVersion: 1, entries: { 'x.tif': { ...entry, sha256: 'abc' } } }))).toThrow(/"x.tif" is malformed/);
  expect(() => withEntry(emptyState(), 'x', { ...entry, recipeHash: 'XYZ' })).toThrow(/recipeHash must be 64/);
});

test('record names are safe file names and differ by bytes and recipe', () => {
  const n = recordFileName('../a b/c.tif', A, B);
  expect(n).toMatch(/^records\/[A-Za-z0-9._~-]+\.json$/); // letters, digits and . _ - ~ are safe on every common file system (common practice)
  expect(n).not.toBe(recordFileName('../a b/c.tif', B, B));
  expect(n).not.toBe(recordFileName('../a b/c.tif', A, A));
});

test('names that differ only in replaced characters give distinct output names (FNV-1a of the full name)', async () => {
  const { figureNames, outputStem, nameHash } = await import('../../src/batch/names');
  // FNV-1a 32-bit test vectors (Fowler–Noll–Vo reference: "" → 811c9dc5, "a" → e40c292c)
  expect(nameHash('')).toBe('811c9dc5');
  expect(nameHash('a')).toBe('e40c292c');
  const names = figureNames(['a b.tif', 'a_b.tif', 'a+b.tif', 'A_B.TIF']);
  expect(names.get('a_b.tif')).toBe('a_b.tif.png');
  expect(new Set([...names.values()].map((n) => n.toLowerCase())).size).toBe(4);
  for (const n of names.values()) expect(n).toMatch(/^[A-Za-z0-9._~-]+\.png$/);
  expect(outputStem('../x/y.tif')).toMatch(/^\.\._x_y\.tif~[0-9a-f]{8}$/);
  expect(recordFileName('a b.tif', A, B)).not.toBe(recordFileName('a+b.tif', A, B));
  expect(recordFileName('a.tif', A, B)).toBe(`records/a.tif.${A.slice(0, 16)}.${B.slice(0, 8)}.json`);
});

test('a lost state is rebuilt from the records of this recipe, newest first', async () => {
  const { stateFromRecords } = await import('../../src/batch/state');
  const rec = (file: string, sha: string, recipe: string, iso: string, status = 'ok') => ({ recordFile: recordFileName(file, sha, recipe), result: { file, sha256: sha, status }, writtenIso: iso });
  const s = stateFromRecords([rec('x.tif', A, B, '2026-01-02T00:00:00Z'), rec('x.tif', B, B, '2026-01-01T00:00:00Z'), rec('y.tif', A, A, '2026-01-03T00:00:00Z'), { recordFile: 'records/junk.json', result: null, writtenIso: '' }], B);
  expect(Object.keys(s.entries)).toEqual(['x.tif']);
  expect(s.entries['x.tif'].sha256).toBe(A);
});
