import { describe, expect, test } from 'vitest';
import { decode as decodeTiff } from 'tiff';
import { compressLzw, encodeTiff } from '../../testing/encode-tiff';
import { decompressLzw } from '../../src/image/lzw';
import { lcg } from './fixtures';

const r = lcg(99);
const inputs: [string, Uint8Array][] = [
  ['empty', new Uint8Array(0)],
  ['one byte', Uint8Array.from([42])],
  // A run of one byte exercises the KwKwK case (a code equal to the next free code), Welch 1984.
  ['a long run', new Uint8Array(20000).fill(7)],
  ['noise past several table resets', Uint8Array.from({ length: 60000 }, () => Math.floor(r() * 256))],
  ['smooth ramp', Uint8Array.from({ length: 30000 }, (_, i) => (i >> 6) & 255)],
];

describe('decompressLzw', () => {
  for (const [name, data] of inputs) {
    test(`round trip: ${name}`, () => {
      expect(Array.from(decompressLzw(compressLzw(data), data.length))).toEqual(Array.from(data));
    });
  }
  test('agrees with the tiff package on the same LZW strip', () => {
    const data = inputs[3][1];
    const bytes = encodeTiff({ width: 300, height: 200, data, compression: 'lzw', rowsPerStrip: 200 });
    const [ifd] = decodeTiff(bytes);
    expect(Array.from(decompressLzw(compressLzw(data), data.length))).toEqual(Array.from(ifd.data));
  });
  test('stops at the expected length and returns fewer bytes for a cut stream', () => {
    const data = inputs[4][1];
    const z = compressLzw(data);
    expect(decompressLzw(z, 100).length).toBe(100);
    const cut = decompressLzw(z.subarray(0, z.length >> 1), data.length);
    expect(cut.length).toBeLessThan(data.length);
    expect(Array.from(cut)).toEqual(Array.from(data.subarray(0, cut.length)));
  });
  test('a code beyond the table is an error', () => {
    // Clear (256), 65, then code 300 while the next free code is 258 (9-bit codes, MSB first).
    const bits = [256, 65, 300].map((c) => c.toString(2).padStart(9, '0')).join('').padEnd(32, '0');
    const bytes = Uint8Array.from({ length: 4 }, (_, i) => parseInt(bits.slice(i * 8, i * 8 + 8), 2));
    expect(() => decompressLzw(bytes, 10)).toThrow(/code 300 is beyond the table \(next 258\)/);
    expect(() => decompressLzw(bytes, -1)).toThrow(/got -1/);
  });
});
