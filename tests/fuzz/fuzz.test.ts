import 'fake-indexeddb/auto';
import { describe, expect, test } from 'vitest';
import { TARGETS, fuzzTarget, mutateBytes, rng, table } from './harness';
import { CORRUPT_CLASSES } from '../../testing/corrupt';
import { importLibrary, ImportError, openLibrary } from '../../src/store';
import { decodeImage, ImageReadError } from '../../src/image/decode';
import { encodeTiff } from '../../testing/encode-tiff';

// A short seeded run of the fuzz suite (the long one is `npm run test:fuzz -- --long`): every
// damaged input gives a result or the reader's own error naming the file or line (common
// practice for robust file readers: fail early, say where), and every input of a corrupt class
// (testing/corrupt.ts) is refused, warned about or skipped as its class says.
const INPUTS_PER_READER = 120;

describe('seeded fuzz run', () => {
  for (const target of TARGETS) {
    test(`${target.id}: ${INPUTS_PER_READER} damaged inputs, each a result or a clear error`, async () => {
      const tally = await fuzzTarget(target, 20260101, INPUTS_PER_READER);
      expect(tally.failures, JSON.stringify(tally.failures, null, 1)).toEqual([]);
      expect(tally.counts.ok + tally.counts.clear).toBe(INPUTS_PER_READER);
      // The damage is noticed: a run where nothing was refused did not test the checks.
      expect(tally.counts.clear).toBeGreaterThan(INPUTS_PER_READER / 8);
      console.log(table([tally]));
    });
  }
  test('every reader has corrupt classes, and every class is drawn', () => {
    for (const t of TARGETS) expect(CORRUPT_CLASSES.some((c) => c.reader === t.id), t.id).toBe(true);
    expect(new Set(CORRUPT_CLASSES.map((c) => c.reader))).toEqual(new Set(TARGETS.map((t) => t.id)));
  });
});

describe('the harness itself', () => {
  test('mutations are deterministic in the seed and change the input', () => {
    const seed = Uint8Array.from({ length: 500 }, (_, i) => i & 255);
    const a = mutateBytes(seed, rng(5));
    const b = mutateBytes(seed, rng(5));
    expect(a.mutation).toBe(b.mutation);
    expect(Array.from(a.bytes)).toEqual(Array.from(b.bytes));
    expect(a.mutation.length).toBeGreaterThan(0);
  });

  test('a declared size beyond the budget is refused from the header, before allocation', () => {
    // 100000 × 100000 pixels declared, but only 100 bytes of strip: TIFF 6.0 §8 (ImageWidth, ImageLength).
    const t = encodeTiff({ width: 10, height: 10, data: new Uint8Array(100) });
    const v = new DataView(t.buffer);
    const ifd = v.getUint32(4, true);
    const n = v.getUint16(ifd, true);
    for (let i = 0; i < n; i++) {
      const e = ifd + 2 + i * 12;
      const tag = v.getUint16(e, true);
      if (tag === 256 || tag === 257) {
        v.setUint16(e + 2, 4, true); // LONG
        v.setUint32(e + 8, 100000, true);
      }
    }
    const before = process.memoryUsage().arrayBuffers;
    expect(() => decodeImage(t, 'huge.tif', { maxPixels: 1 << 22 })).toThrow(ImageReadError);
    expect(process.memoryUsage().arrayBuffers - before).toBeLessThan(64 * 1024 * 1024);
  });
});

describe('bugs the fuzzing found', () => {
  test('a deeply nested formatVersion in a library file is an ImportError, not a stack overflow', async () => {
    const db = await openLibrary({ name: `fuzz-nested-${process.pid}` });
    const nested = '['.repeat(20000) + ']'.repeat(20000);
    const text = `{"format":"stratameter-library","formatVersion":${nested},"images":[]}`;
    await expect(importLibrary(db, text)).rejects.toThrow(ImportError);
    await expect(importLibrary(db, text)).rejects.toThrow(/formatVersion a list is newer/);
    db.close();
  });
});

describe('bugs the fuzzing found (storage)', () => {
  test('a measurement nested 20000 levels deep is refused by name before anything is stored', async () => {
    const db = await openLibrary({ name: `fuzz-deep-${process.pid}` });
    const deep = '{"a":'.repeat(20000) + '1' + '}'.repeat(20000);
    const text = `{"format":"stratameter-library","formatVersion":1,"images":[],"measurements":[{"id":"m","imageId":null,"tool":"spectrum","createdIso":"2026-01-01T00:00:00Z","periodicities":[],"detail":${deep}}]}`;
    await expect(importLibrary(db, text)).rejects.toThrow(/measurements\[0\] is nested more than 64 levels deep/);
    expect(await db.count('measurements')).toBe(0);
    db.close();
  });
});
