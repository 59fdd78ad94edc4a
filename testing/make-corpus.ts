/**
 * Writes the regression corpus (tests/fuzz/corpus/): the smallest reproducers of every corrupt
 * class of testing/corrupt.ts, a few variants each, with an index of what each must give.
 * Run with `npx tsx testing/make-corpus.ts`; deterministic, so re-running changes nothing.
 */
import { mkdirSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { createHash } from 'node:crypto';
import { rng } from './random';
import { CORRUPT_CLASSES, type Expectation } from './corrupt';

const EXT: Record<string, string> = { tiff: 'tif', png: 'png', jpeg: 'jpg', mrc: 'mrc', pattern: 'xy', structure: 'cif', recipe: 'json', measurement: 'json', library: 'json', state: 'json' };
/** Variants per class (distinct inputs only). */
const VARIANTS = 4;
/** Largest corpus file kept (a variant above it is left out: the smaller ones show the class). */
const MAX_BYTES = 1_000_000;

/** One corpus entry. */
export interface CorpusEntry {
  /** Path below tests/fuzz/corpus/. */
  file: string;
  /** The name the reader is given (the class's messages name it). */
  name: string;
  reader: string;
  cls: string;
  classId: string;
  expect: Expectation;
}

const dir = new URL('../tests/fuzz/corpus/', import.meta.url);
rmSync(dir, { recursive: true, force: true });
mkdirSync(dir, { recursive: true });
const index: (Omit<CorpusEntry, 'expect'> & { expect: Record<string, unknown> })[] = [];
for (const c of CORRUPT_CLASSES) {
  const seen = new Set<string>();
  for (let k = 1; k <= VARIANTS * 3 && seen.size < VARIANTS; k++) {
    const made = c.make(rng(k * 7919 + c.id.length));
    const hash = createHash('sha256').update(made.bytes).digest('hex');
    if (seen.has(hash) || made.bytes.length > MAX_BYTES) continue;
    seen.add(hash);
    const file = `${c.reader}/${c.id}-${seen.size}.${EXT[c.reader]}`;
    mkdirSync(new URL(`${c.reader}/`, dir), { recursive: true });
    writeFileSync(new URL(file, dir), made.bytes);
    const x = made.expect;
    const expect = x.kind === 'refuse' ? { kind: x.kind, message: x.message?.source } : x.kind === 'warn' ? { kind: x.kind, warning: x.warning.source } : { ...x };
    index.push({ file, name: made.name, reader: c.reader, cls: made.cls, classId: c.id, expect });
  }
}
writeFileSync(new URL('index.json', dir), `${JSON.stringify(index, null, 1)}\n`);
console.log(`${index.length} corpus files in ${readdirSync(dir).length - 1} readers`);
