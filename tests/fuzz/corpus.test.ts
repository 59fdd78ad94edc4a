import 'fake-indexeddb/auto';
import { readFileSync } from 'node:fs';
import { describe, expect, test } from 'vitest';
import { TARGETS, runOne } from './harness';
import type { Expectation } from '../../testing/corrupt';

// The regression corpus (tests/fuzz/corpus/, made by testing/make-corpus.ts): the smallest
// reproducers of every class of damaged, hostile or oversized input found for issue "Hardening",
// each read by its reader. Every one must be refused with an error naming the file, read with the
// warning its class names, or have its bad record skipped — never read silently, never crash.
interface Entry {
  file: string;
  name: string;
  reader: string;
  cls: string;
  classId: string;
  expect: { kind: string; message?: string; warning?: string; store?: string; id?: string };
}
const dir = new URL('./corpus/', import.meta.url);
const index = JSON.parse(readFileSync(new URL('index.json', dir), 'utf8')) as Entry[];

function expectation(e: Entry['expect']): Expectation {
  if (e.kind === 'refuse') return { kind: 'refuse', message: e.message ? new RegExp(e.message) : undefined };
  if (e.kind === 'warn') return { kind: 'warn', warning: new RegExp(e.warning!) };
  if (e.kind === 'skip') return { kind: 'skip', store: e.store!, id: e.id! };
  if (e.kind === 'any') return { kind: 'any' };
  return { kind: 'accept' };
}

describe('regression corpus', () => {
  test('covers every reader', () => {
    expect(new Set(index.map((e) => e.reader))).toEqual(new Set(TARGETS.map((t) => t.id)));
  });
  for (const e of index) {
    test(`${e.file}: ${e.cls}`, async () => {
      const target = TARGETS.find((t) => t.id === e.reader)!;
      const x = expectation(e.expect);
      const res = await runOne(target, { name: e.name, mutation: `corpus ${e.file}`, bytes: new Uint8Array(readFileSync(new URL(e.file, dir))), expect: x });
      if (x.kind === 'any') expect(['ok', 'clear'], res.detail).toContain(res.outcome);
      else expect(res.outcome, res.detail).toBe(x.kind === 'refuse' ? 'clear' : 'ok');
      // refused for the class's own reason, not another one
      if (x.kind === 'refuse' && x.message) expect(res.detail).toBe('');
    });
  }
});
