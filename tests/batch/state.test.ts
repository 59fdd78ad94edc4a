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
  expect(n).toMatch(/^records\/[A-Za-z0-9._-]+\.json$/);
  expect(n).not.toBe(recordFileName('../a b/c.tif', B, B));
  expect(n).not.toBe(recordFileName('../a b/c.tif', A, A));
});
