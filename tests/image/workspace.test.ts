import { describe, expect, test } from 'vitest';
import { decodeImage } from '../../src/image/decode';
import { encodeTiff } from '../../testing/encode-tiff';
import { createWorkspace } from '../../src/image/workspace';
import { powerSpectrum } from '../../src/measure/spectrum';
import { rng } from '../../testing/random';

function tiff(seed: number, width = 96, height = 64): Uint8Array {
  const r = rng(seed);
  const data = new Uint16Array(width * height).map(() => Math.round(1000 + 30000 * r()));
  return encodeTiff({ width, height, data });
}

describe('createWorkspace', () => {
  test('lends arrays of exactly the length asked for, from one buffer per purpose', () => {
    const ws = createWorkspace();
    const a = ws.float32('decode-grey', 100);
    const b = ws.float32('decode-grey', 60);
    expect([a.length, b.length]).toEqual([100, 60]);
    expect(b.buffer).toBe(a.buffer);
    expect(b).not.toBe(a); // a new view each time, so caches keyed by the array never confuse two files
    expect(ws.bytes('file-bytes', 10).buffer).not.toBe(a.buffer);
    expect(ws.heldBytes()).toBe(400 + 10);
  });
  test('grows a buffer for a larger request, by at least a quarter', () => {
    const ws = createWorkspace();
    const first = ws.bytes('file-bytes', 1000);
    const grown = ws.bytes('file-bytes', 1001);
    expect(grown.buffer).not.toBe(first.buffer);
    expect(grown.buffer.byteLength).toBe(1250);
    expect(grown.byteOffset).toBe(0);
  });
  test('rejects a negative or fractional length, naming the purpose', () => {
    expect(() => createWorkspace().float32('spectrum-power', -1)).toThrow(/-4 bytes for spectrum-power/);
    expect(() => createWorkspace().bytes('file-bytes', 1.5)).toThrow(/1.5 bytes for file-bytes/);
  });
});

describe('decodeImage and powerSpectrum with a workspace', () => {
  test('give the same pixels and power as with fresh arrays', async () => {
    const ws = createWorkspace();
    for (const seed of [1, 2]) {
      const bytes = tiff(seed);
      const fresh = decodeImage(bytes, 'a.tif');
      const reused = decodeImage(bytes, 'a.tif', { workspace: ws });
      expect(Array.from(reused.data)).toEqual(Array.from(fresh.data));
      expect([reused.min, reused.max]).toEqual([fresh.min, fresh.max]);
      const p0 = await powerSpectrum(fresh);
      const p1 = await powerSpectrum(reused, null, { workspace: ws });
      expect(Array.from(p1.power)).toEqual(Array.from(p0.power));
    }
  });
  test('reuse the memory: the next decode overwrites the previous image (the documented contract)', () => {
    const ws = createWorkspace();
    const first = decodeImage(tiff(1), 'a.tif', { workspace: ws });
    const copy = Float32Array.from(first.data);
    const second = decodeImage(tiff(2), 'b.tif', { workspace: ws });
    expect(second.data.buffer).toBe(first.data.buffer);
    expect(Array.from(first.data)).not.toEqual(Array.from(copy));
  });
});
