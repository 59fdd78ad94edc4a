import { describe, expect, test } from 'vitest';
import { encode as encodePng } from 'fast-png';
import { Image, encode as encodeRaster } from 'image-js';
import { encodeTiff } from '../../testing/encode-tiff';
import { encodeMrc } from '../../testing/encode-mrc';
import { decodeImage, ImageReadError } from '../../src/image/decode';
import { lcg } from './fixtures';

// Damaged files (random bytes overwritten, random cuts) must either decode to a consistent image
// or fail with ImageReadError: never another exception type. Deterministic seeds, 200 per format.
const rnd = lcg(2024);
const u16 = Uint16Array.from({ length: 40 * 30 }, () => Math.floor(rnd() * 65536));
const grey = new Image(40, 30, { colorModel: 'GREY' });
const files: [string, Uint8Array][] = [
  ['a.tif', encodeTiff({ width: 40, height: 30, data: u16, rowsPerStrip: 7, resolution: { x: 3e7, unit: 'cm' } })],
  ['b.tif', encodeTiff({ width: 40, height: 30, data: u16, compression: 'lzw', rowsPerStrip: 7 })],
  ['c.tif', encodeTiff({ width: 40, height: 30, data: u16, compression: 'deflate', rowsPerStrip: 7 })],
  ['a.png', encodePng({ width: 40, height: 30, data: u16, depth: 16, channels: 1 })],
  ['a.jpg', encodeRaster(grey, { format: 'jpeg' })],
  ['a.mrc', encodeMrc({ width: 40, height: 30, mode: 1, data: Int16Array.from(u16, (v) => v - 32768), pixelSpacingAngstrom: 1.2 })],
];

describe('damaged files', () => {
  for (const [name, original] of files) {
    test(`${name}: decodes consistently or throws ImageReadError`, () => {
      const r = lcg(name.length * 7919 + original.length);
      let readErrors = 0;
      for (let i = 0; i < 200; i++) {
        const m = original.slice();
        const edits = 1 + Math.floor(r() * 6);
        for (let j = 0; j < edits; j++) {
          // Half the edits hit the headers (first 300 bytes), where damage matters most.
          const at = Math.floor(r() * (r() < 0.5 ? Math.min(300, m.length) : m.length));
          m[at] = Math.floor(r() * 256);
        }
        const input = r() < 0.25 ? m.subarray(0, Math.floor(r() * m.length)) : m;
        try {
          const img = decodeImage(input, name);
          expect(img.data.length).toBe(img.width * img.height);
          expect(Number.isFinite(img.min) && Number.isFinite(img.max)).toBe(true);
        } catch (e) {
          if (!(e instanceof ImageReadError)) throw e;
          expect(e.message.startsWith(`${name}: `)).toBe(true);
          readErrors++;
        }
      }
      expect(readErrors).toBeGreaterThan(0); // the damage was noticed at least sometimes
    });
  }
});
